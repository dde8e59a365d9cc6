"""Switch-on surge and the sag step checked against ngspice transients of the same circuits.

Invented test cases. Targets: 3 % on the surge peak, 0.3 % on the B+ levels before and after
the step, 3 % on the sag depth and 10 % on the 63 % attack and recovery times (a time read off a
cycle-averaged curve, resolved to a half mains cycle: 10 ms of ~30-100 ms).
"""

import numpy as np
import pytest

import spice
from optimiser.physics import transients
from optimiser.inputs.design import load_design
from optimiser.assessment.steady_state import Batch, figures, solve_batch
from optimiser.physics.ladder import state_space

pytestmark = pytest.mark.ngspice

SURGE_CASES = {
    # bridge with leakage inductance, capacitors empty, switched on at the crest
    "bridge": {
        "mains": {"voltage": "230 V", "frequency": "50 Hz"},
        "transformer": {"secondary_voltage": "300 V", "secondary_resistance": "20 ohm",
                        "leakage_inductance": "2 mH"},
        "rectifier": {"topology": "bridge", "diode": "1N4007"},
        "nodes": [{"name": "b1", "capacitance": "100 uF", "esr": "0.5 ohm",
                   "bleeder": "100 kohm", "load": {"current": "100 mA"}}],
    },
    # hot-switched valve rectifier into an empty reservoir
    "valve": {
        "mains": {"voltage": "230 V", "frequency": "50 Hz"},
        "transformer": {"secondary_voltage": "320 V", "secondary_resistance": "90 ohm",
                        "leakage_inductance": "10 mH"},
        "rectifier": {"topology": "centre-tap", "valve": "5AR4"},
        "nodes": [{"name": "b1", "capacitance": "40 uF", "esr": "1 ohm", "bleeder": "220 kohm",
                   "load": {"current": "80 mA"}}],
    },
}


@pytest.mark.parametrize("case", sorted(SURGE_CASES))
def test_switch_on_surge(case):
    design = SURGE_CASES[case]
    batch = Batch.from_designs([load_design(design)], 1.0, 1.0, "none")
    model = state_space(batch.structure, batch.values)
    ours = transients.surge_peak(model, batch.elements, batch.peak, batch.frequency,
                                 batch.values.load_current)[0]
    run = spice.transient(design, duration=0.03, phase=90.0, empty=True, loads="none", step=2e-6)
    theirs = max(run["i(ve1)"].max(), run["i(ve2)"].max())
    assert ours == pytest.approx(theirs, rel=0.03)


SAG_CASE = {
    "mains": {"voltage": "230 V", "frequency": "50 Hz"},
    "transformer": {"secondary_voltage": "300 V", "secondary_resistance": "60 ohm",
                    "leakage_inductance": "5 mH"},
    "rectifier": {"topology": "centre-tap", "valve": "5AR4"},
    "nodes": [
        {"name": "plates", "capacitance": "47 uF", "esr": "1 ohm", "bleeder": "220 kohm",
         "load": {"idle_current": "60 mA", "full_power_current": "120 mA"}},
    ],
}


def _half_cycle_means(time, values, period, start, count):
    edges = start + 0.5 * period * np.arange(count + 1)
    out = []
    for a, b in zip(edges[:-1], edges[1:]):
        keep = (time >= a) & (time <= b)
        out.append(np.trapezoid(values[keep], time[keep]) / (time[keep][-1] - time[keep][0]))
    return np.array(out)


def test_sag_step():
    design = load_design(SAG_CASE)
    idle = Batch.from_designs([design], 1.0, 1.0, "idle")
    full = Batch.from_designs([design], 1.0, 1.0, "full")
    model, waves = solve_batch(idle)
    sag = transients.sag_step(model, idle.elements, idle.peak, idle.frequency,
                              idle.values.load_current, full.values.load_current, waves,
                              hold=0.4, release=0.4)
    # ngspice: settle at idle, then double the plate load (60 -> 120 mA) at t_on for 0.4 s
    t_on, period = 1.5, 0.02
    spice_design = {**SAG_CASE, "nodes": [{**SAG_CASE["nodes"][0], "load": {"current": "60 mA"}}]}
    run = spice.transient(spice_design, duration=t_on + 0.8, load_step=(t_on, t_on + 0.4, 2.0),
                          loads="full")
    n = sag.voltage.shape[1]
    theirs = _half_cycle_means(run["time"], run["v(n1)"], period, t_on, n)
    ours = sag.voltage[0, :, 0]
    before = _half_cycle_means(run["time"], run["v(n1)"], period, t_on - 0.1, 10).mean()
    idle_ours = figures(idle, model, waves)["dc_voltage"][0, 0]
    assert idle_ours == pytest.approx(before, rel=3e-3)
    hold = int(0.4 / (period / 2))
    assert ours[hold - 1] == pytest.approx(theirs[hold - 1], rel=3e-3)
    depth_theirs = before - theirs[hold - 1]
    assert sag.depth[0, 0] == pytest.approx(depth_theirs, rel=0.03)
    t = sag.time
    attack = transients.crossing_time(t[:hold], theirs[None, :hold, None],
                                      np.array([[before - 0.632 * depth_theirs]]), rising=False)
    assert sag.attack_time[0, 0] == pytest.approx(attack[0, 0], rel=0.10)
    recovery = transients.crossing_time(t[hold:] - t[hold] + t[0], theirs[None, hold:, None],
                                        np.array([[theirs[hold - 1] + 0.632 * depth_theirs]]),
                                        rising=True)
    assert sag.recovery_time[0, 0] == pytest.approx(recovery[0, 0], rel=0.10)
