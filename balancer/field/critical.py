"""Circuits whose load must not lose power: a ``Critical`` column answer, else words in the
circuit's description or notes (life safety, fire alarm, medical refrigeration, IT …). Their
work-order steps ask for temporary power or a scheduled outage first (see
:mod:`balancer.report.safety`).

The words are common practice for loads an owner expects to keep running, not a code list;
the column decides whenever it is filled in.
"""

from __future__ import annotations

import re

from balancer.domain.panel import Circuit

# (pattern, the words a step quotes); matched whole-word, case-insensitive
CRITICAL_WORDS: tuple[tuple[str, str], ...] = (
    (r"life[ -]?safety", "life safety"),
    (r"fire[ -]?alarm|facp", "fire alarm"),
    (r"emergency", "emergency"),
    (r"egress|exit (sign|light)s?", "egress lighting"),
    (r"(medical|medication|vaccine|pharmacy|lab(oratory)?|blood) (refrigerat\w*|fridge|freezer)s?",
     "medical refrigeration"),
    (r"vaccines?", "vaccine storage"),
    (r"freezers?", "freezer"),
    (r"sump( pump)?s?|ejector pumps?|sewage pumps?", "sump pump"),
    (r"servers?|it rack|network rack|data (closet|rack|room)", "server / IT"),
    (r"security|alarm panel|access control|cctv", "security"),
    (r"fire pump|smoke (control|damper|evacuation)", "fire protection"),
    (r"medical gas|oxygen|nurse call|life support|ventilator", "medical equipment"),
    (r"elevator|lift", "elevator"),
)  # fmt: skip
_PATTERNS = tuple((re.compile(rf"\b(?:{p})\b", re.IGNORECASE), why) for p, why in CRITICAL_WORDS)


def critical_reason(circuit: Circuit) -> str | None:
    """Why ``circuit`` must not lose power (``"marked critical"`` or the words found), or None.

    A ``Critical`` answer of no overrides the words: whoever filled the column knows the load.
    """
    if circuit.critical is not None:
        return "marked critical" if circuit.critical else None
    text = f"{circuit.description} {circuit.notes}"
    for pattern, why in _PATTERNS:
        if pattern.search(text):
            return why
    return None
