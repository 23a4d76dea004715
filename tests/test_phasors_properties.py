"""Properties that hold for any arrangement: the fundamental of the harmonic engine equals the
plain phasor function the optimiser uses, Kirchhoff's current law, power sums, RMS ≥ fundamental."""

from __future__ import annotations

import math

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from balancer.domain.panel import Circuit, Panel
from balancer.domain.systems import get_system
from balancer.physics.analysis import analyze
from balancer.physics.harmonics import builtin_profiles
from balancer.physics.phasors import circuit_harmonic_currents, circuit_line_currents, sum_currents

DESIGNATIONS = ["208Y/120", "480Y/277", "400Y/230", "120/240", "240/120", "480 delta"]
CLASSES = ["", "computers", "led lighting", "vfd", "ev charger", "heating"]


@st.composite
def panels(draw: st.DrawFn) -> Panel:
    system = get_system(draw(st.sampled_from(DESIGNATIONS)))
    spaces = 42
    free = set(range(1, spaces + 1))
    circuits = []
    for index in range(draw(st.integers(1, 12))):
        poles = draw(st.integers(1, system.max_poles))
        first = draw(st.integers(1, spaces))
        span = tuple(first + 2 * k for k in range(poles))
        if span[-1] > spaces or not set(span) <= free:
            continue
        lines = [Panel("", system, spaces, ()).geometry.line_of(s) for s in span]
        if poles == 1 and not system.serves_line_to_neutral(lines[0]):
            continue
        free -= set(span)
        circuits.append(
            Circuit(
                str(index),
                "demo",
                poles,
                draw(st.floats(0.0, 20000.0)),
                spaces=span,
                power_factor=draw(st.sampled_from([1.0, 0.9, 0.75, -0.85])),
                load_class=draw(st.sampled_from(CLASSES)),
            )
        )
    return Panel("demo panel (invented data)", system, spaces, tuple(circuits))


@settings(max_examples=150, deadline=None)
@given(panels())
def test_arrangement_invariants(panel: Panel) -> None:
    loads = analyze(panel)
    system = panel.system
    scale = 1e-9 * (1.0 + sum(c.load_va for c in panel.circuits))
    # Linear view: the engine's fundamental, without spectra, equals circuit_line_currents.
    plain = sum_currents(
        (
            circuit_line_currents(system, panel.lines_of(c), c.load_va, c.power_factor)
            for c in panel.circuits
        ),
        system.lines,
    )
    for c in panel.circuits:
        engine = circuit_harmonic_currents(system, panel.lines_of(c), c.load_va, c.power_factor)
        reference = circuit_line_currents(system, panel.lines_of(c), c.load_va, c.power_factor)
        for line, value in reference.items():
            assert engine[1].lines[line] == pytest.approx(value, abs=scale)
    assert loads.neutral_without_harmonics_a == pytest.approx(
        abs(sum(plain.values())) if system.neutral else 0.0, abs=scale
    )
    for line in system.lines:
        assert loads.line_rms_a[line] >= loads.line_a[line] - scale
    assert loads.neutral_rms_a >= loads.neutral_a - scale
    # Real power: each circuit's VA × PF, lowered by its distortion factor (C).
    expected_kw = 0.0
    for c in panel.circuits:
        found = [
            p
            for p in builtin_profiles().values()
            if c.load_class and c.load_class in {*p.aliases, p.name}
        ]
        thd = found[0].thd_pct / 100 if found else 0.0
        expected_kw += c.load_va * abs(c.power_factor) / math.sqrt(1 + thd * thd) / 1000
    assert sum(loads.phase_kw.values()) == pytest.approx(expected_kw, abs=scale)
    assert loads.total_va == pytest.approx(sum(c.load_va for c in panel.circuits), abs=scale)
    if not system.neutral:
        assert loads.neutral_rms_a == 0.0
        assert not loads.neutral_exceeds_phase
