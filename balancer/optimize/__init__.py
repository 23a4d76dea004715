"""Model, solve and verify: the balancing engine (``balance``), its integer programs (``model``),
engines and statuses (``solve``), independent checks (``verify``), goals as data (``goals``) and
the line-level searches (``search``).
"""

from balancer.optimize.balance import balance

__all__ = ["balance"]
