"""Model, solve and verify: the balancing engine (``balance``, its stages in ``engine``), its
integer programs (``model``), engines and statuses (``solve``), independent checks
(``verify``), goals as data (``goals``) and the line-level searches (``search``).

``balance`` loads the solver on first use, so the goal registry can be read (by the trade-off
table, a report) without starting PuLP and HiGHS.
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

if TYPE_CHECKING:
    from balancer.optimize.engine import balance

__all__ = ["balance"]


def __getattr__(name: str) -> Any:
    if name == "balance":
        from balancer.optimize.engine import balance

        globals()["balance"] = balance  # found directly from now on
        return balance
    raise AttributeError(f"module 'balancer.optimize' has no attribute {name!r}")
