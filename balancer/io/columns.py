"""The schedule's input columns as data: one table drives the reader, its messages and the
format reference in docs/format.md (``python -m balancer.cli.format_doc`` prints that table)."""

from __future__ import annotations

import re
from dataclasses import dataclass
from typing import Literal

Kind = Literal["space", "text", "poles", "number", "flag"]


@dataclass(frozen=True, slots=True)
class ColumnSpec:
    key: str
    header: str  # the spelling balancer writes
    spellings: tuple[str, ...]  # accepted, compared after normalise()
    kind: Kind
    unit: str
    description: str
    required: bool = False
    scale: float = 1.0  # multiply the cell value (kVA → VA)


COLUMNS: tuple[ColumnSpec, ...] = (
    ColumnSpec(
        "space",
        "Space",
        (
            "space",
            "circuit",
            "ckt",
            "circuitno",
            "circuitnumber",
            "cktno",
            "ckt#",
            "circuit#",
            "#",
            "slot",
            "spaceno",
            "no",
        ),
        "space",
        "",
        "first space of the breaker (odd left, even right); a list such as 1,3,5 is "
        "accepted for a multi-pole breaker; blank for a circuit not yet placed",
    ),
    ColumnSpec(
        "description",
        "Description",
        ("description", "loaddescription", "name", "circuitdescription", "serving", "loadname"),
        "text",
        "",
        "what the circuit serves",
        required=True,
    ),
    ColumnSpec(
        "poles",
        "Poles",
        ("poles", "pole", "p", "nopoles", "numberofpoles"),
        "poles",
        "",
        "1, 2 or 3 (text such as 2P is accepted); blank means 1",
    ),
    ColumnSpec(
        "load_va",
        "Load (VA)",
        ("load", "loadva", "va", "connectedva", "connectedload", "connected"),
        "number",
        "VA",
        "connected load of the whole circuit; a unit of kVA in the header scales by 1000",
        required=True,
    ),
    ColumnSpec(
        "load_kva",
        "Load (kVA)",
        ("kva", "loadkva", "connectedkva"),
        "number",
        "kVA",
        "connected load in kVA (instead of a VA column)",
        scale=1000.0,
    ),
    ColumnSpec(
        "phase_a",
        "A",
        ("a", "phasea", "aphase", "lineava", "vaa"),
        "number",
        "VA",
        "VA under line A (instead of one load column)",
    ),
    ColumnSpec(
        "phase_b",
        "B",
        ("b", "phaseb", "bphase", "linebva", "vab"),
        "number",
        "VA",
        "VA under line B",
    ),
    ColumnSpec(
        "phase_c",
        "C",
        ("c", "phasec", "cphase", "linecva", "vac"),
        "number",
        "VA",
        "VA under line C",
    ),
    ColumnSpec(
        "phase",
        "Phase",
        ("phase", "line", "phases", "lines"),
        "text",
        "",
        "line letters as the schedule shows them; informative only (the space decides)",
    ),
    ColumnSpec(
        "trip_a",
        "Trip (A)",
        ("trip", "breaker", "tripa", "ocp", "ocpd", "breakersize", "breakera", "rating"),
        "number",
        "A",
        "breaker trip rating",
    ),
    ColumnSpec(
        "load_class",
        "Type",
        ("type", "class", "loadtype", "loadclass", "category", "kind"),
        "text",
        "",
        "load class, e.g. lighting, receptacle, motor, heating, kitchen, spare",
    ),
    ColumnSpec(
        "power_factor",
        "PF",
        ("pf", "powerfactor"),
        "number",
        "",
        "power factor; positive lagging, negative leading; blank means 1",
    ),
    ColumnSpec(
        "locked",
        "Locked",
        ("locked", "fixed", "lock", "donotmove", "nomove", "keep"),
        "flag",
        "",
        "yes: the breaker must stay in its space",
    ),
    ColumnSpec(
        "group",
        "MWBC",
        ("mwbc", "group", "multiwire", "multiwiregroup", "sharedneutral", "neutralgroup"),
        "text",
        "",
        "same mark on circuits that share a neutral (a multiwire branch circuit)",
    ),
    ColumnSpec(
        "measured_a",
        "Measured (A)",
        ("measured", "measureda", "measuredamps", "measuredcurrent", "clamp", "clampreading"),
        "number",
        "A",
        "clamp-meter reading of the circuit current",
    ),
    *(
        ColumnSpec(
            f"measured_line_{line.lower()}",
            f"Measured line {line} (A)",
            tuple(
                f"measured{word}{line.lower()}{unit}"
                for word in ("line", "phase", "leg")
                for unit in ("", "a", "amp", "amps")
            ),
            "number",
            "A",
            f"clamp-meter reading on line {line} of a multi-pole circuit (the words phase or leg "
            "are accepted for line); the readings' average stands for the circuit's current",
        )
        for line in "ABC"
    ),
    ColumnSpec(
        "balance_va",
        "Balanced on (VA)",
        ("balancedon", "balancedonva", "balanceva", "balancedva", "basisva"),
        "number",
        "VA",
        "written by balancer: the load a circuit was balanced on when a reading replaced its "
        "schedule load (--basis measured or larger); ignored when read, as each run chooses "
        "its basis again",
    ),
    ColumnSpec(
        "voltage_v",
        "Voltage",
        ("voltage", "volts", "v", "circuitvoltage"),
        "number",
        "V",
        "circuit voltage when it differs from what the poles imply",
    ),
    ColumnSpec(
        "neutral_va",
        "Neutral (VA)",
        ("neutral", "neutralva", "neutralshare", "lnva", "neutralload"),
        "number",
        "VA",
        "part of a 2-pole load that is line-to-neutral (e.g. a dryer's 120 V controls and motor)",
    ),
    ColumnSpec(
        "continuous",
        "Continuous",
        ("continuous", "cont", "continuousload"),
        "flag",
        "",
        "yes: the load runs three hours or more (counted at 125 %)",
    ),
    ColumnSpec(
        "critical",
        "Critical",
        (
            "critical",
            "criticalload",
            "mustnotlosepower",
            "keepenergised",
            "keepenergized",
            "essential",
        ),
        "flag",
        "",
        "yes: the load must not lose power (life safety, fire alarm, medical refrigeration, "
        "server/IT …); its work-order step asks for temporary power or an outage scheduled "
        "with the owner first. Blank: judged from the description and notes; no: never",
    ),
    ColumnSpec(
        "yokes",
        "Receptacles",
        ("receptacles", "yokes", "receptaclecount", "devices", "outlets"),
        "number",
        "",
        "number of receptacle yokes on the circuit",
    ),
    ColumnSpec(
        "harmonic_profile",
        "Harmonics",
        ("harmonics", "harmonicprofile", "harmonic", "profile"),
        "text",
        "",
        "harmonic profile of the load, by name or alias (docs/electrical.md), e.g. computers, "
        "led, vfd, none; blank: "
        "the profile the load class implies",
    ),
    ColumnSpec(
        "conductor",
        "Wire",
        ("wire", "conductor", "conductors", "wiresize", "conductorsize", "cond"),
        "text",
        "",
        "branch-circuit conductor size, e.g. 12 AWG Cu, #10, 3/0 AL, 250 kcmil (copper unless "
        "it says AL); checked against the breaker (docs/demand.md)",
    ),
    ColumnSpec(
        "notes",
        "Notes",
        ("notes", "note", "remarks", "comments", "comment"),
        "text",
        "",
        "free text, kept and written back",
    ),
)

BY_KEY = {spec.key: spec for spec in COLUMNS}

_UNIT = re.compile(r"[\(\[]\s*([^)\]]*?)\s*[\)\]]")


def normalise(header: str) -> tuple[str, str]:
    """``'Load (kVA)'`` → ``('load', 'kva')``: case, spaces and punctuation dropped, unit apart."""
    text = str(header).strip()
    unit = ""
    found = _UNIT.search(text)
    if found:
        unit = re.sub(r"[^a-z%]", "", found.group(1).lower())
        text = _UNIT.sub(" ", text)
    name = re.sub(r"[^a-z0-9#]", "", text.lower())
    return name, unit


def match(header: str) -> tuple[ColumnSpec, float] | None:
    """The column a header means and the scale its unit implies; None when not recognised."""
    name, unit = normalise(header)
    if not name:
        return None
    for spec in COLUMNS:
        if name in spec.spellings:
            scale = spec.scale
            if spec.key == "load_va" and unit == "kva":
                scale = 1000.0
            return spec, scale
    return None


def all_spellings() -> dict[str, ColumnSpec]:
    return {spelling: spec for spec in COLUMNS for spelling in spec.spellings}


def format_table_markdown() -> str:
    lines = ["| column | also accepted | unit | required | meaning |", "|---|---|---|---|---|"]
    for spec in COLUMNS:
        also = ", ".join(f"`{s}`" for s in spec.spellings)
        lines.append(
            f"| {spec.header} | {also} | {spec.unit} | {'yes' if spec.required else ''} "
            f"| {spec.description} |"
        )
    return "\n".join(lines)


PanelKind = Literal[
    "text", "count", "amps", "system", "main", "ka", "mounting", "nema", "pct", "flag"
]


@dataclass(frozen=True, slots=True)
class PanelKeySpec:
    """One panel attribute: read from a Panel sheet ('Name | LP-1') or a title row above the
    circuit table ('System: 208Y/120'), and written back under ``label``."""

    key: str
    label: str  # the spelling balancer writes on the Panel sheet
    spellings: tuple[str, ...]  # accepted, compared after normalise()
    kind: PanelKind
    example: str
    description: str


PANEL_KEYS: tuple[PanelKeySpec, ...] = (
    PanelKeySpec(
        "name",
        "Name",
        ("name", "panel", "panelname", "designation", "panelboard"),
        "text",
        "L3A",
        "the panel's designation",
    ),
    PanelKeySpec(
        "system",
        "System",
        ("system", "voltage", "service", "volts", "supply"),
        "system",
        "208Y/120, 480Y/277, 400Y/230, 120/240, 240/120, 480 delta",
        "the voltage system",
    ),
    PanelKeySpec(
        "spaces",
        "Spaces",
        ("spaces", "spacecount", "circuits", "numberofspaces", "poles", "size"),
        "count",
        "42",
        "number of breaker spaces",
    ),
    PanelKeySpec(
        "bus",
        "Bus",
        ("bus", "busrating", "busa", "busamps", "bussing"),
        "amps",
        "225",
        "bus rating in A",
    ),
    PanelKeySpec(
        "main",
        "Main",
        ("main", "mainbreaker", "maina", "mains", "mainrating", "mainocpd"),
        "main",
        "200, or MLO",
        "main breaker in A, or MLO for main lugs only",
    ),
    PanelKeySpec(
        "location",
        "Location",
        ("location", "loc", "room", "panellocation", "mountedin"),
        "text",
        "Electrical room 3.01",
        "where the panel is",
    ),
    PanelKeySpec(
        "fed_from",
        "Fed from",
        ("fedfrom", "source", "suppliedfrom", "feedfrom", "fed"),
        "text",
        "MDP-1, circuit 4",
        "the panel or switchboard that feeds it",
    ),
    PanelKeySpec(
        "feeder",
        "Feeder",
        ("feeder", "feeders", "feederconductors", "feedersize", "feedercable"),
        "text",
        '4 #4/0 AWG Cu + #4 AWG Cu G in 2" EMT',
        "feeder conductors and their size",
    ),
    PanelKeySpec(
        "mounting",
        "Mounting",
        ("mounting", "mount", "mounted", "installation"),
        "mounting",
        "surface, flush, semi-flush",
        "how the enclosure is mounted",
    ),
    PanelKeySpec(
        "enclosure",
        "Enclosure",
        ("enclosure", "enclosuretype", "nema", "nematype", "nemaenclosure", "nemarating"),
        "nema",
        "NEMA 1, 3R, 4X, 12",
        "the enclosure's NEMA type (NEMA 250)",
    ),
    PanelKeySpec(
        "sccr_ka",
        "SCCR (kA)",
        (
            "sccr",
            "aic",
            "kaic",
            "shortcircuitrating",
            "shortcircuitcurrentrating",
            "interruptingrating",
            "aicrating",
            "withstandrating",
            "scr",
            "faultrating",
        ),
        "ka",
        "22 kA, 10,000 AIC, 65",
        "short-circuit current rating in kA (a figure of 1,000 or more is read as amperes)",
    ),
    PanelKeySpec(
        "neutral_pct",
        "Neutral bus (%)",
        ("neutralbus", "neutral", "neutralrating", "neutralbusrating", "neutralpct"),
        "pct",
        "100 %, 200 %",
        "neutral bus rating as a percentage of the phase bus",
    ),
    PanelKeySpec(
        "ground_bus",
        "Ground bus",
        ("groundbus", "ground", "groundbar", "egcbus", "grounding"),
        "text",
        "yes, bonded to enclosure",
        "the equipment grounding bus",
    ),
    PanelKeySpec(
        "isolated_ground",
        "Isolated ground bar",
        ("isolatedgroundbar", "isolatedground", "igbar", "igbus", "isolatedgroundbus", "ig"),
        "flag",
        "yes / no",
        "an isolated ground bar is fitted",
    ),
    PanelKeySpec(
        "project",
        "Project",
        ("project", "projectname", "job", "jobname", "site"),
        "text",
        "Harbourview Offices fit-out",
        "the project",
    ),
    PanelKeySpec(
        "date",
        "Date",
        ("date", "issued", "issuedate", "dateissued", "scheduledate"),
        "text",
        "2026-11-20",
        "the date of the schedule (a date cell is written as YYYY-MM-DD)",
    ),
    PanelKeySpec(
        "revision",
        "Revision",
        ("revision", "rev", "revno", "issue"),
        "text",
        "2",
        "the schedule's revision; a revised schedule keeps it and adds a Balanced line",
    ),
    PanelKeySpec(
        "balanced",
        "Balanced",
        ("balanced", "balancedon", "rebalanced"),
        "text",
        "2026-12-02 by balancer",
        "written by balancer: the date a revised schedule was balanced; kept when read",
    ),
)

PANEL_BY_KEY = {spec.key: spec for spec in PANEL_KEYS}


def panel_key(text: str) -> PanelKeySpec | None:
    """The panel attribute a label means ('Fed from:', 'SCCR (kA)'); None when not one."""
    name = normalise(text)[0]
    return next((spec for spec in PANEL_KEYS if name in spec.spellings), None)


def format_panel_table_markdown() -> str:
    lines = ["| key | also accepted | example | meaning |", "|---|---|---|---|"]
    for spec in PANEL_KEYS:
        also = ", ".join(f"`{s}`" for s in spec.spellings)
        lines.append(f"| {spec.label} | {also} | {spec.example} | {spec.description} |")
    return "\n".join(lines)
