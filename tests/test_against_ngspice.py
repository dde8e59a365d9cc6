"""Railwright's periodic-steady-state solver checked against ngspice transients of the same circuits.

The reference is tests/spice.py, itself checked against closed forms in test_spice_harness.py.
Every design is an invented test case (see ``spice.invented_designs``). Agreement targets:
0.3 % on each node's DC voltage; 3 % on ripple peak-to-peak, rectifier peak and RMS current,
capacitor RMS current and secondary RMS current. The targets are the project's requirement for
the fast solver, not a property of a source.
"""

from __future__ import annotations

import functools
from pathlib import Path

import pytest
import yaml

from optimiser.inputs.design import load_design

import optimiser
import spice

DC_TOLERANCE = 0.003  # [-] relative, each node's DC voltage
WAVEFORM_TOLERANCE = 0.03  # [-] relative, ripple, peak and RMS currents

NODE_QUANTITIES = {
    "dc_voltage": DC_TOLERANCE,
    "ripple_pp": WAVEFORM_TOLERANCE,
    "capacitor_rms_current": WAVEFORM_TOLERANCE,
}
CIRCUIT_QUANTITIES = {
    "rectifier_peak_current": WAVEFORM_TOLERANCE,
    "rectifier_rms_current": WAVEFORM_TOLERANCE,
    "secondary_rms_current": WAVEFORM_TOLERANCE,
    # both sides count conduction where the element current exceeds 1e-4 of its peak; the
    # solver resolves the angle to one step (0.7 degrees), hence the same 3 %
    "conduction_angle": WAVEFORM_TOLERANCE,
}
CASES = sorted(spice.invented_designs())
DEMO_DESIGNS = sorted((Path(__file__).resolve().parents[1] / "specs").glob("demo-design-*.yaml"))


@functools.lru_cache(maxsize=None)
def reference(case: str) -> dict:
    """ngspice's steady state of an invented case (computed once per test session)."""
    return spice.simulate(spice.invented_designs()[case])


def solver(case: str) -> dict:
    return optimiser.evaluate(spice.invented_designs()[case]).to_dict()


def discrepancies(solved: dict, expected: dict) -> list[str]:
    """Every compared quantity outside its target, as readable lines (empty when all agree)."""
    lines = []

    def compare(label, got, want, tolerance):
        if got is None or abs(got - want) > tolerance * abs(want):
            error = "missing" if got is None else f"{(got - want) / want:+.2%}"
            lines.append(f"{label}: solver {got!r} vs ngspice {want:.6g} ({error}; target {tolerance:.1%})")

    if len(solved.get("nodes", [])) != len(expected["nodes"]):
        return [f"solver gives {len(solved.get('nodes', []))} nodes, the design has {len(expected['nodes'])}"]
    for got, want in zip(solved["nodes"], expected["nodes"]):
        for key, tolerance in NODE_QUANTITIES.items():
            compare(f"nodes[{want['name']}].{key}", got.get(key), want[key], tolerance)
    for key, tolerance in CIRCUIT_QUANTITIES.items():
        compare(key, solved.get(key), expected[key], tolerance)
    return lines


@pytest.mark.ngspice
@pytest.mark.parametrize("case", CASES)
def test_solver_agrees_with_ngspice(case):
    expected = reference(case)
    assert expected["steady_state"]["settle_error"] <= 2e-6
    problems = discrepancies(solver(case), expected)
    assert not problems, f"invented test case {case!r}:\n  " + "\n  ".join(problems)


@pytest.mark.ngspice
@pytest.mark.parametrize("path", DEMO_DESIGNS, ids=lambda path: path.stem)
def test_solver_agrees_with_ngspice_on_the_demo_designs(path):
    design = load_design(path)
    for position_name, position in design.positions():
        label = path.name + (f" position {position_name}" if position_name else "")
        expected = spice.simulate(_as_file_dict(path, position, position_name))
        problems = discrepancies(optimiser.evaluate(position).to_dict(), expected)
        assert not problems, f"{label} (full-power loads):\n  " + "\n  ".join(problems)


def _as_file_dict(path, position, position_name):
    """The design file as the harness reads it, with a physical transformer replaced by the
    equivalent the solver derives from it, and a switchable pair set to one position."""
    raw = yaml.safe_load(path.read_text())
    t = position.transformer
    raw["transformer"] = {"secondary_voltage": f"{t.secondary_voltage!r} V",
                          "secondary_resistance": f"{t.secondary_resistance!r} ohm",
                          "leakage_inductance": f"{t.leakage_inductance!r} H"}
    if position_name is not None:
        chosen = dict(raw["rectifier"]["positions"][position_name])
        raw["nodes"][0].update(chosen.pop("reservoir", None) or {})
        raw["rectifier"] = chosen
    return raw


def test_population_call_gives_one_row_per_design():
    designs = [spice.invented_designs()[case] for case in CASES]
    frame = optimiser.evaluate_many(designs)
    assert len(frame) == len(designs)
