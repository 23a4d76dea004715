"""The cautions balancer shows, in one place so every output says the same thing in the same
words: ``CAUTION`` once at the end of a terminal report or a summary, ``CAUTIONS`` in full
wherever a person may act on the output (the workbook, the PDF, the work order)."""

from __future__ import annotations

CAUTION = (
    "An engineering aid, not a design approval. Moving breakers or re-landing conductors is work "
    "for qualified persons: de-energise and lock out, and verify the absence of voltage with a "
    "meter before touching any conductor; for loads that must not lose power, arrange temporary "
    "power or a scheduled outage first. The adopted code, its local amendments, the authority "
    "having jurisdiction and licensed practice govern."
)

CAUTIONS: tuple[str, ...] = (
    "Work inside a panelboard is for qualified persons only, with the PPE and procedures the "
    "workplace's electrical safety program requires.",
    "De-energise the panel (or at the least every circuit being moved) and lock it out before "
    "removing any breaker or conductor. Loads that must not lose power (life safety, fire "
    "alarm, medical refrigeration and the like) need temporary power or a scheduled outage "
    "agreed with their owner first.",
    "Verify absence of voltage with a meter tested on a known live source before and after, on "
    "every conductor you will touch, line to line and line to ground.",
    "Multiwire branch circuits: re-identify each one before moving it; its shared neutral stays "
    "with its circuits, the ungrounded conductors stay on different lines, and the multipole "
    "breaker or listed handle tie must open them all together (NEC 210.4).",
    "Keep conductor order when re-landing 3-pole circuits and check motor rotation afterwards; "
    "on a high-leg delta panel the high leg stays on phase B, marked orange (NEC 110.15, "
    "408.3(E)).",
    "Check each breaker is listed for the panelboard and each conductor reaches its new space "
    "without splices that the adopted code does not allow.",
    "Update the circuit directory at the panel to the new layout (NEC 408.4) and record the "
    "change in the building's drawings.",
    "The figures are computed from the schedule as given, not measured: measure per-line and "
    "neutral currents under typical operation after the work and compare them with the "
    "expected figures.",
    "The adopted electrical code, its local amendments, the authority having jurisdiction and "
    "licensed professional practice govern over anything this tool reports.",
)

# For a circuit whose load must not lose power (balancer.field.critical): its work-order step,
# and the caution line a work order carries when it has one. Never a plain "de-energise".
MUST_STAY_ON_STEP = (
    "MUST NOT LOSE POWER ({why}): arrange temporary power for this load, or schedule the outage "
    "with its owner, before the circuit is switched off; only then de-energise, lock out and "
    "verify with a meter."
)
MUST_STAY_ON_CAUTION = (
    "Loads that must not lose power are moved here ({circuits}): arrange temporary power or "
    "an outage scheduled with their owner before their steps; never simply switch them off."
)
