"""Cross-check against power-grid-model, a general-purpose load-flow library from PyPI: its
asymmetric power flow of a wye load with neutral, fed by a near-ideal source, gives the same
per-phase currents and, from its own voltages and powers, the same neutral current."""

from __future__ import annotations

import cmath
import math

import numpy as np
import pytest

from balancer.domain.panel import Circuit, Panel
from balancer.domain.systems import get_system
from balancer.physics.analysis import analyze

pgm = pytest.importorskip("power_grid_model")

# (space, VA, PF) on 208Y/120: invented demo loads, lagging and leading.
DEMO_LOADS = [(1, 2400.0, 0.9), (2, 600.0, -0.8), (3, 1500.0, 0.75), (5, 3300.0, 1.0)]
SOURCE_SK_VA = 1e20  # short-circuit power so large that the source holds nominal voltage


def per_phase_power() -> tuple[list[float], list[float]]:
    p_w, q_var = [0.0, 0.0, 0.0], [0.0, 0.0, 0.0]
    for space, load_va, pf in DEMO_LOADS:
        phase = ((space - 1) // 2) % 3
        angle = math.acos(abs(pf)) * (1 if pf > 0 else -1)
        p_w[phase] += load_va * math.cos(angle)
        q_var[phase] += load_va * math.sin(angle)
    return p_w, q_var


def test_wye_load_with_neutral_matches_power_grid_model() -> None:
    from power_grid_model import (
        CalculationMethod,
        ComponentType,
        DatasetType,
        LoadGenType,
        PowerGridModel,
        initialize_array,
    )

    # u_rated is line to line: 120·√3 puts exactly 120 V on each phase.
    node = initialize_array(DatasetType.input, ComponentType.node, 1)
    node["id"] = [1]
    node["u_rated"] = [120.0 * math.sqrt(3)]
    source = initialize_array(DatasetType.input, ComponentType.source, 1)
    source["id"] = [2]
    source["node"] = [1]
    source["status"] = [1]
    source["u_ref"] = [1.0]
    source["sk"] = [SOURCE_SK_VA]
    p_w, q_var = per_phase_power()
    load = initialize_array(DatasetType.input, ComponentType.asym_load, 1)
    load["id"] = [3]
    load["node"] = [1]
    load["status"] = [1]
    load["type"] = [LoadGenType.const_power]
    load["p_specified"] = [p_w]
    load["q_specified"] = [q_var]
    model = PowerGridModel(
        {ComponentType.node: node, ComponentType.source: source, ComponentType.asym_load: load}
    )
    result = model.calculate_power_flow(
        symmetric=False,
        error_tolerance=1e-12,
        max_iterations=50,
        calculation_method=CalculationMethod.newton_raphson,
    )
    magnitude_a = result[ComponentType.asym_load]["i"][0]
    u_v = result[ComponentType.node]["u"][0]
    u_angle = result[ComponentType.node]["u_angle"][0]
    # Phase currents from the library's own voltages and powers: I = conj(S / V).
    currents = [
        (complex(p, q) / cmath.rect(v, a)).conjugate()
        for p, q, v, a in zip(p_w, q_var, u_v, u_angle, strict=True)
    ]
    assert np.allclose(np.abs(currents), magnitude_a, rtol=1e-9)

    system = get_system("208Y/120")
    circuits = [
        Circuit(str(space), "demo load (invented)", 1, va, spaces=(space,), power_factor=pf)
        for space, va, pf in DEMO_LOADS
    ]
    loads = analyze(Panel("demo panel (invented data)", system, 12, tuple(circuits)))
    for index, line in enumerate("ABC"):
        assert loads.line_a[line] == pytest.approx(magnitude_a[index], rel=1e-8)
    assert loads.neutral_a == pytest.approx(abs(sum(currents)), rel=1e-8)
    assert [loads.phase_kw[line] * 1000 for line in "ABC"] == pytest.approx(p_w, rel=1e-9)
