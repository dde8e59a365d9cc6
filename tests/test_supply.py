"""The periodic steady state against closed-form limits, itself, and conservation of energy.

Every design here is an invented test case.
"""

import copy

import numpy as np
import pytest

from optimiser.assessment import steady_state as evaluation
from optimiser.physics import rectifier
from optimiser.assessment.steady_state import evaluate, evaluate_many

# a near-ideal silicon diode: N*Vt ~ 0.26 mV, so its drop is a few millivolts
IDEAL = {"saturation_current": "1 pA", "emission_coefficient": 0.01, "series_resistance": "0 ohm"}
GENERIC = {"saturation_current": "5 nA", "emission_coefficient": 1.8,
           "series_resistance": "0.03 ohm"}


def design(topology="bridge", vrms="300 V", rs="50 ohm", ls="0 H", c="100 uF", load=None,
           diode=IDEAL, valve=None, nodes=None):
    rect = {"topology": topology}
    if diode is not None and topology != "centre-tap" or valve is None:
        rect["diode"] = diode
    if valve is not None:
        rect["valve"] = {"perveance": valve}
    return {
        "mains": {"voltage": "230 V", "frequency": "50 Hz"},
        "transformer": {"secondary_voltage": vrms, "secondary_resistance": rs,
                        "leakage_inductance": ls},
        "rectifier": rect,
        "nodes": nodes or [{"name": "reservoir", "capacitance": c,
                            "load": load or {"resistance": "2 kohm"}}],
    }


def vdc(result, k=0):
    return result.nodes[k].dc_voltage


@pytest.mark.parametrize("wcr", [10.0, 30.0, 100.0])
def test_ideal_diodes_zero_resistance(wcr):
    # Source: R_s = 0 ideal-diode closed form, REFERENCES.md "Capacitor-input rectifier" (derived)
    r_load = 2000.0
    c = wcr / (2 * np.pi * 50 * r_load)
    res = evaluate(design(rs="0 ohm", c=f"{c * 1e6:.9f} uF"))
    vm = 300 * np.sqrt(2)
    expected = vm * rectifier.ideal_diode_output(wcr)
    assert vdc(res) == pytest.approx(expected, rel=2e-3)


@pytest.mark.parametrize("ratio", [0.02, 0.05, 0.2])
def test_infinite_capacitance_with_series_resistance(ratio):
    # Source: infinite C with series resistance: tan(phi) - phi = pi*R_s/(n*R_L),
    # V_dc = V_m cos(phi), I_pk/I_av = pi(1 - cos phi)/(sin phi - phi cos phi)
    # (REFERENCES.md, derived; classic textbook result). wCR_L = 6000 stands in for infinite C.
    r_load = 2000.0
    res = evaluate(design(rs=f"{ratio * r_load} ohm", c="10000 uF"))
    vm = 300 * np.sqrt(2)
    phi = rectifier.conduction_half_angle(ratio, pulses=2)
    assert vdc(res) == pytest.approx(vm * np.cos(phi), rel=3e-3)
    pk_over_av = np.pi * (1 - np.cos(phi)) / (np.sin(phi) - phi * np.cos(phi))
    assert res.rectifier_peak_current / res.rectifier_average_current == pytest.approx(
        pk_over_av, rel=0.02)
    assert res.conduction_angle == pytest.approx(np.degrees(2 * phi), abs=1.5)


def test_huge_c_tiny_resistance_gives_peak_minus_diode_drops():
    # Source: a silicon rectifier drops 0.6-1 V per junction at its working current
    # (common practice, no source); a bridge conducts through two junctions.
    res = evaluate(design(rs="0.05 ohm", c="20000 uF", load={"current": "20 mA"},
                          diode=GENERIC))
    vm = 300 * np.sqrt(2)
    assert 2 * 0.6 < vm - vdc(res) < 2 * 1.0 + 0.5


def test_ripple_below_linear_discharge_estimate():
    # Source: V_pp ~ I_dc/(2fC) overestimates the true ripple (~16 % at wCR_L = 30)
    # (REFERENCES.md, published standard texts) — a bound, not a tight oracle.
    r_load = 2000.0
    c = 30 / (2 * np.pi * 50 * r_load)
    res = evaluate(design(rs="5 ohm", c=f"{c * 1e6:.6f} uF"))
    estimate = vdc(res) / r_load / (2 * 50 * c)
    assert 0.7 * estimate < res.nodes[0].ripple_pp < estimate


def test_choke_input_gives_average_of_rectified_sine():
    # Source: choke-input output ~ 0.637 V_pk = 0.90 V_rms less resistive drops
    # (N. H. Crowhurst, Basic Audio, vol. 3); L = 20 H >> L_crit = R_L/(3w) = 2.1 H.
    nodes = [{"name": "after-choke", "feed": {"inductance": "20 H", "resistance": "100 ohm"},
              "capacitance": "50 uF", "load": {"resistance": "2 kohm"}}]
    res = evaluate(design(rs="20 ohm", nodes=nodes))
    vm = 300 * np.sqrt(2)
    current = vdc(res) / 2000.0
    expected = 2 * vm / np.pi - current * (20 + 100)
    assert vdc(res) == pytest.approx(expected, rel=5e-3)
    assert res.conduction_angle == pytest.approx(180.0, abs=1.0)  # continuous conduction


@pytest.mark.parametrize("kind", ["bridge", "valve", "leakage", "choke", "ladder", "hybrid"])
def test_energy_balance(kind):
    # Source: conservation of energy (input power = losses + load power) — common practice
    d = design(diode=GENERIC, load={"current": "150 mA"})
    if kind == "valve":
        d = design("centre-tap", diode=None, valve=1.5e-3, load={"current": "100 mA"})
    if kind == "hybrid":
        d = design("hybrid-bridge", diode=GENERIC, valve=1.5e-3, load={"current": "100 mA"})
    if kind == "leakage":
        d = design(diode=GENERIC, ls="30 mH", load={"current": "150 mA"})
    if kind in ("choke", "ladder"):
        d["nodes"] = [
            {"name": "a", "capacitance": "47 uF", "esr": "0.5 ohm", "load": {"current": "100 mA"},
             **({"feed": {"inductance": "10 H", "resistance": "120 ohm"}} if kind == "choke"
                else {})},
            {"name": "b", "feed": {"inductance": "3 H", "resistance": "80 ohm"},
             "capacitance": "22 uF", "esr": "1 ohm", "load": {"current": "20 mA"}},
            {"name": "c", "feed": {"resistance": "4.7 kohm"}, "capacitance": "22 uF",
             "load": {"resistance": "100 kohm"}},
        ]
    r = evaluate(d)
    assert r.converged
    losses = r.rectifier_loss + r.winding_loss + r.load_power + r.ladder_loss
    assert r.input_power == pytest.approx(losses, rel=2e-4)


def test_vector_call_equals_scalar_calls():
    base = design(diode=GENERIC, load={"current": "150 mA"})
    variants = []
    for rs, c in [("20 ohm", "47 uF"), ("60 ohm", "220 uF"), ("5 ohm", "22 uF")]:
        d = copy.deepcopy(base)
        d["transformer"]["secondary_resistance"] = rs
        d["nodes"][0]["capacitance"] = c
        variants.append(d)
    variants.append(design("centre-tap", diode=None, valve=1.5e-3, load={"current": "90 mA"}))
    frame = evaluate_many(variants)
    for row, d in zip(frame.itertuples(), variants):
        single = evaluate(d)
        assert getattr(row, "rectifier_peak_current") == pytest.approx(
            single.rectifier_peak_current, rel=1e-7)
        assert frame.loc[row.Index, "reservoir.dc_voltage"] == pytest.approx(vdc(single),
                                                                               rel=1e-9)


def test_step_size_against_a_fine_reference(monkeypatch):
    # Regression of the numerical method against itself at 8x finer steps: the default step
    # must already sit within the accuracy the ngspice cross-checks ask for (0.3 % DC, 3 %
    # peak and RMS).
    d = evaluation.load_design(design(diode=GENERIC, rs="8 ohm", ls="5 mH",
                                      load={"current": "200 mA"}))
    batch = evaluation.Batch.from_designs([d])
    coarse = evaluation.figures(batch, *evaluation.solve_batch(batch))
    fine = evaluation.figures(batch, *evaluation.solve_batch(
        batch, steps=8 * evaluation.STEPS_PER_HALF_CYCLE))
    assert coarse["dc_voltage"][0, 0] == pytest.approx(fine["dc_voltage"][0, 0], rel=3e-4)
    for key in ("rectifier_peak_current", "rectifier_rms_current", "ripple_pp"):
        assert np.ravel(coarse[key])[0] == pytest.approx(np.ravel(fine[key])[0], rel=5e-3)
