"""The ngspice reference harness (tests/spice.py) checked against closed forms.

Nothing here uses Railwright's own solver: the harness must stand on its own before it can judge
that solver. Every circuit is an invented test case. Closed forms come from
/work/shared/REFERENCES.md and are quoted in its words beside each check value; their algebra is
done here, in the test, independently of the harness.
"""

from __future__ import annotations

import json
import math

import numpy as np
import pytest
from scipy.optimize import brentq

import spice
from conftest import REQUIRE_TOOLS_VARIABLE, require_tool

OMEGA = 2 * math.pi * 50.0  # [rad/s] line angular frequency of the 50 Hz mains of spice.design_dict
# kT/q at SPICE's default 27 degC, from the exact SI 2019 constants k and q.
THERMAL_VOLTAGE = 1.380649e-23 * 300.15 / 1.602176634e-19  # [V]

# Invented test case: a realistic small silicon rectifier diode (Shockley parameters).
SILICON = {"saturation_current": "5 nA", "emission_coefficient": 1.8, "series_resistance": "0.03 ohm"}
SILICON_IS, SILICON_N, SILICON_RS = 5e-9, 1.8, 0.03
# Invented test case: a near-ideal diode, forward drop ~27 mV at 1 A, reverse current 1 nA.
NEAR_IDEAL = {"saturation_current": "1 nA", "emission_coefficient": 0.05, "series_resistance": "0 ohm"}
NEAR_IDEAL_IS, NEAR_IDEAL_N = 1e-9, 0.05


def design(topology, secondary_voltage, secondary_resistance, nodes, *, diode=SILICON, perveance=None, leakage=None):
    """An invented test design in Railwright's design-file format (fresh dicts every call)."""
    return spice.design_dict(topology, secondary_voltage, secondary_resistance, nodes, diode=diode,
                             perveance=perveance, leakage=leakage)


def shockley_drop(current, saturation_current, emission_coefficient, series_resistance=0.0):
    """Forward voltage of a diode at ``current``.

    Source: Shockley equation with series resistance, SPICE-style parameters IS, N, RS
    [published model] (REFERENCES.md, "Silicon diode").
    """
    return emission_coefficient * THERMAL_VOLTAGE * math.log1p(current / saturation_current) + current * series_resistance


def child_langmuir_drop(current, perveance):
    """Plate voltage of a vacuum diode at ``current``.

    Source: Child-Langmuir law: I = K·V^{3/2} per plate, K the perveance [published law]
    (REFERENCES.md, "Vacuum diode").
    """
    return (current / perveance) ** (2.0 / 3.0)


# ----------------------------------------------------------------------------------------------
# Without ngspice: reading designs, writing netlists, the tool requirement


def test_netlist_holds_the_diode_model_and_the_ladder():
    text = spice.netlist(
        design(
            "bridge",
            "300 V",
            "50 ohm",
            [
                {"name": "plates", "capacitance": "100 uF", "esr": "0.2 ohm", "load": {"current": "200 mA"}},
                {"name": "screens", "feed": {"resistance": "470 ohm"}, "capacitance": "47 uF", "load": {"current": "15 mA"}},
            ],
        )
    )
    assert ".model dsil D(IS=5e-09 N=1.8 RS=0.03" in text
    assert "SIN(0 424.264068712 50)" in text  # 300 V RMS open circuit
    assert "RS1 w1 ac1 50" in text
    assert len([line for line in text.splitlines() if line.startswith("DE")]) == 4
    assert "RC1 d1 0 0.2" in text and "IL1 n1 0 DC 0.2" in text
    assert "RF2 f2 n2 470" in text and "IL2 n2 0 DC 0.015" in text
    assert "uic" in text and "reltol=1e-06" in text


def test_netlist_of_a_valve_centre_tap_uses_child_langmuir_sources_in_antiphase():
    text = spice.netlist(
        design("centre-tap", "330 V", "90 ohm", [{"capacitance": "32 uF", "load": {"current": "110 mA"}}],
               diode=None, perveance=7.07e-4)
    )
    assert "VS1 w1 0 SIN(0 466.690475583 50)" in text
    assert "VS2 w2 0 SIN(0 -466.690475583 50)" in text
    assert "BE1 e1 rect I=0.000707*pow(max(v(e1,rect),0),1.5)" in text
    assert "BE2 e2 rect I=0.000707*pow(max(v(e2,rect),0),1.5)" in text
    assert ".model" not in text


def test_netlist_of_a_hybrid_bridge_has_valve_plates_up_and_diodes_down():
    text = spice.netlist(
        design("hybrid-bridge", "350 V", "60 ohm", [{"capacitance": "47 uF", "load": {"current": "140 mA"}}],
               perveance="1.0e-3")
    )
    assert "BE1 e1 rect" in text and "BE2 e2 rect" in text
    assert "DE3 e3 ac1 dsil" in text and "DE4 e4 ac2 dsil" in text


def test_netlist_of_choke_input_puts_the_choke_before_the_reservoir():
    text = spice.netlist(
        design("bridge", "380 V", "40 ohm",
               [{"feed": {"inductance": "10 H", "resistance": "150 ohm"}, "capacitance": "47 uF",
                 "load": {"current": "150 mA"}}],
               leakage="20 mH")
    )
    assert "VF1 rect f1 0" in text and "RF1 f1 t1 150" in text
    assert "LF1 t1 n1 10 IC=" in text
    assert "LS1 x1 ac1 0.02 IC=" in text


def test_part_names_bleeders_and_idle_full_loads_are_read_like_the_solver_reads_them():
    from optimiser.parts import catalogue as parts

    case = design("bridge", "300 V", "50 ohm", [
        {"name": "plates", "capacitance": "100 uF", "bleeder": "100 kohm",
         "load": {"idle_current": "80 mA", "full_power_current": "200 mA"}},
    ], diode=None)
    case["rectifier"]["diode"] = "1N4007"
    diode = parts.find_part("diode", "1N4007")
    full = spice.netlist(case)
    assert f"IS={diode.saturation_current:.12g} N={diode.emission_coefficient:.12g}" in full
    assert "IL1 n1 0 DC 0.2" in full and "RL1 n1 0 100000" in full
    assert "IL1 n1 0 DC 0.08" in spice.netlist(case, loads="idle")
    valve_case = design("centre-tap", "300 V", "100 ohm", [{"capacitance": "32 uF", "load": {"current": "70 mA"}}],
                        diode=None)
    valve_case["rectifier"]["valve"] = "5AR4"
    perveance = parts.find_part("valve", "5AR4").perveance
    assert f"I={perveance:.12g}*pow(" in spice.netlist(valve_case)
    valve_case["rectifier"]["valve"] = "no-such-valve"
    with pytest.raises(spice.DesignError, match="rectifier.valve"):
        spice.netlist(valve_case)


@pytest.mark.parametrize(
    ("change", "message"),
    [
        (lambda d: d["rectifier"].update(topology="full-wave"), "rectifier.topology must be one of"),
        (lambda d: d["rectifier"].update(topology="hybrid-bridge"), r"rectifier.valve.perveance is required"),
        (lambda d: d["nodes"].append({"capacitance": "10 uF"}), r"nodes\[1\].feed is required"),
        (lambda d: d["nodes"][0].update(load={"current": "1 mA", "resistance": "1 kohm"}), "exactly one of"),
        (lambda d: d["nodes"][0].update(capacitance="10 mF"), "millifarad"),
        (lambda d: d["transformer"].update(secondary_resistance="0 ohm"), "must be >= 10 mohm"),
        (lambda d: d["rectifier"]["diode"].update(emission_coefficient=0), "emission_coefficient must be > 0"),
        (lambda d: d.pop("mains"), "mains is required"),
        (lambda d: d["rectifier"].update(topology="switchable"), "each position of a switchable"),
        (lambda d: d["transformer"].update(build={"core": "EI-96"}), "transformer.build"),
        (lambda d: d["nodes"][0].update(load={"idle_current": "1 mA"}), "go together"),
    ],
)
def test_bad_designs_are_refused_with_the_field_named(change, message):
    bad = design("bridge", "300 V", "50 ohm", [{"capacitance": "100 uF", "load": {"current": "100 mA"}}])
    change(bad)
    with pytest.raises(spice.DesignError, match=message):
        spice.netlist(bad)


def test_settling_estimate_of_a_clean_geometric_decay():
    # Source: geometric series [derived]: changes shrinking by r per cycle leave last·r/(1 - r)
    # still to come; the distance to steady state counted from the last cycle mean is last/(1 - r).
    ratio = 0.8
    steps = 1e-3 * ratio ** np.arange(3.0)[:, None] * np.array([[1.0, -0.5]])
    measured, settle = spice._settling(steps, expected_ratio=0.5)
    assert measured == pytest.approx(ratio, rel=1e-12)
    assert settle == pytest.approx(1e-3 * ratio**2 / (1 - ratio), rel=1e-12)


def test_settling_estimate_without_a_clean_decay_is_conservative():
    steps = np.array([[1e-4], [-2e-4], [1.5e-4]])  # ringing: no single geometric ratio
    measured, settle = spice._settling(steps, expected_ratio=0.9)
    assert measured == 0.0
    assert settle == pytest.approx(2e-4 / (1 - 0.9))


def test_missing_tool_skips_with_a_clear_reason(monkeypatch):
    monkeypatch.delenv(REQUIRE_TOOLS_VARIABLE, raising=False)
    monkeypatch.setattr("shutil.which", lambda name: None)
    with pytest.raises(pytest.skip.Exception, match="ngspice not found on PATH; install Debian package ngspice"):
        require_tool("ngspice")


def test_missing_tool_fails_when_tools_are_required(monkeypatch):
    monkeypatch.setenv(REQUIRE_TOOLS_VARIABLE, "1")
    monkeypatch.setattr("shutil.which", lambda name: None)
    with pytest.raises(pytest.fail.Exception, match="ngspice not found on PATH"):
        require_tool("ngspice")
    with pytest.raises(pytest.fail.Exception, match="chromium not found on PATH; install Debian package chromium"):
        require_tool("chromium", executables=("chromium", "chromium-browser"))


def test_present_tool_gives_its_path(monkeypatch):
    monkeypatch.setattr("shutil.which", lambda name: f"/opt/bin/{name}" if name == "chromium-browser" else None)
    assert require_tool("chromium", executables=("chromium", "chromium-browser")) == "/opt/bin/chromium-browser"


# ----------------------------------------------------------------------------------------------
# With ngspice: limiting cases and closed forms


@pytest.mark.ngspice
def test_huge_reservoir_and_tiny_winding_resistance_sit_two_diode_drops_below_the_crest():
    # Invented test case: 100 V bridge, 50 mohm winding, 22 000 uF, 20 mA.
    result = spice.simulate(
        design("bridge", "100 V", "0.05 ohm", [{"capacitance": "22000 uF", "load": {"current": "20 mA"}}])
    )
    node = result["nodes"][0]
    peak = result["rectifier_peak_current"]
    crest = 100.0 * math.sqrt(2)
    # With the output held still by the huge C, the element current is a rising function of the
    # source voltage and peaks at the crest, where crest = v_out + 2 V_D(I_pk) + I_pk R_s [derived].
    # Source: Shockley equation with series resistance, SPICE-style parameters IS, N, RS [published model].
    expected = crest - 2 * shockley_drop(peak, SILICON_IS, SILICON_N, SILICON_RS) - peak * 0.05
    assert node["ripple_pp"] < 0.02
    assert abs(node["dc_voltage"] - expected) <= node["ripple_pp"] / 2
    # Two silicon drops of a small rectifier at about 1 A: 1.4-2.4 V (common practice, no source).
    assert 1.4 < crest - node["dc_voltage"] < 2.4
    # Each bridge element blocks the output plus the forward drop of its partner: PIV between
    # V_dc and the crest [derived, Kirchhoff's voltage law].
    assert node["dc_voltage"] < result["piv"] < crest
    assert result["steady_state"]["settle_error"] <= 2e-6


@pytest.mark.ngspice
def test_valve_centre_tap_sits_a_child_langmuir_drop_below_the_crest():
    # Invented test case: 2 x 100 V, 50 mohm per half-winding, perveance 7.07e-4, 2200 uF, 20 mA.
    result = spice.simulate(
        design("centre-tap", "100 V", "0.05 ohm", [{"capacitance": "2200 uF", "load": {"current": "20 mA"}}],
               diode=None, perveance=7.07e-4)
    )
    node = result["nodes"][0]
    peak = result["rectifier_peak_current"]
    crest = 100.0 * math.sqrt(2)
    # Source: Child-Langmuir law: I = K·V^{3/2} per plate, K the perveance [published law];
    # peak current at the crest as above [derived].
    expected = crest - child_langmuir_drop(peak, 7.07e-4) - peak * 0.05
    assert abs(node["dc_voltage"] - expected) <= node["ripple_pp"] / 2
    # The idle plate sees its own crest plus the output: PIV = V_pk + v_out [derived, Kirchhoff's
    # voltage law; the trade's "2 V_pk" for a centre-tap rectifier, common practice].
    assert abs(result["piv"] - (crest + node["dc_voltage"])) <= node["ripple_pp"]


@pytest.mark.ngspice
def test_hybrid_bridge_drops_one_plate_and_one_diode_below_the_crest():
    # Invented test case: 100 V hybrid bridge, perveance 1.0e-3 per plate, 2200 uF, 20 mA.
    result = spice.simulate(
        design("hybrid-bridge", "100 V", "0.05 ohm", [{"capacitance": "2200 uF", "load": {"current": "20 mA"}}],
               perveance=1.0e-3)
    )
    node = result["nodes"][0]
    peak = result["rectifier_peak_current"]
    # Source: Child-Langmuir law [published law] plus Shockley equation with series resistance
    # [published model]; peak current at the crest [derived].
    expected = (
        100.0 * math.sqrt(2)
        - child_langmuir_drop(peak, 1.0e-3)
        - shockley_drop(peak, SILICON_IS, SILICON_N, SILICON_RS)
        - peak * 0.05
    )
    assert abs(node["dc_voltage"] - expected) <= node["ripple_pp"] / 2
    kinds = {element["element"]: element["kind"] for element in result["elements"]}
    assert kinds == {"1": "valve", "2": "valve", "3": "silicon", "4": "silicon"}


@pytest.mark.ngspice
@pytest.mark.parametrize(("topology", "elements_per_path"), [("centre-tap", 1), ("bridge", 2)])
def test_very_large_reservoir_with_series_resistance_meets_the_infinite_c_closed_form(topology, elements_per_path):
    # Invented test case: 100 V (per half-winding), R_s = 20 ohm, 10 000 uF, R_L = 1 kohm
    # (omega C R_L = 3142), near-ideal diodes.
    rs, rl = 20.0, 1000.0
    result = spice.simulate(
        design(topology, "100 V", "20 ohm", [{"capacitance": "10000 uF", "load": {"resistance": "1 kohm"}}],
               diode=NEAR_IDEAL)
    )
    # Source: Infinite C with series resistance [derived; classic textbook result]: half conduction
    # angle phi from tan phi - phi = pi·R_s/(n·R_L) (n = 2 full wave); V_dc = V_m cos phi;
    # I_pk/I_av(per diode) = pi(1 - cos phi)/(sin phi - phi cos phi).
    phi = brentq(lambda p: math.tan(p) - p - math.pi * rs / (2 * rl), 1e-9, 1.5)
    peak_over_average = math.pi * (1 - math.cos(phi)) / (math.sin(phi) - phi * math.cos(phi))
    # The near-ideal diodes' drop (Shockley [published model]) comes off the crest.
    peak_guess = 100 * math.sqrt(2) * math.cos(phi) / rl / 2 * peak_over_average
    vm = 100 * math.sqrt(2) - elements_per_path * shockley_drop(peak_guess, NEAR_IDEAL_IS, NEAR_IDEAL_N)
    dc = vm * math.cos(phi)
    node = result["nodes"][0]
    assert node["dc_voltage"] == pytest.approx(dc, rel=2e-4)
    assert result["rectifier_peak_current"] == pytest.approx(dc / rl / 2 * peak_over_average, rel=2e-3)
    assert result["conduction_angle"] == pytest.approx(math.degrees(2 * phi), rel=1e-2)
    # Each of the full wave's two paths carries half the DC [derived, Kirchhoff's current law].
    assert result["rectifier_average_current"] == pytest.approx(node["dc_voltage"] / rl / 2, rel=1e-4)
    # Energy balance [derived, conservation of energy]: the EMF's power goes to the load, to the
    # winding resistance (I_rms^2 R_s per winding or half-winding) and to the diodes' small drops.
    windings = 2 if topology == "centre-tap" else 1
    winding_loss = windings * result["secondary_rms_current"] ** 2 * rs
    diode_loss = result["input_power"] - result["load_power"] - winding_loss
    drop = elements_per_path * shockley_drop(result["rectifier_peak_current"], NEAR_IDEAL_IS, NEAR_IDEAL_N)
    assert 0.0 < diode_loss < drop * node["dc_voltage"] / rl


def ideal_capacitor_input(omega_c_rl):
    """Turn-on and cut-off angles and V_dc/V_m of the ideal full-wave capacitor-input rectifier.

    Source: Ideal diodes, R_s = 0, full wave, normalised V_m = 1, θ = ωt (ω = line angular
    frequency) [derived]: cut-off tan θ₂ = −ωCR_L; turn-on θ₁ from
    sin θ₂·exp(−(θ₁+π−θ₂)/(ωCR_L)) = sin θ₁;
    V_dc = (1/π)[cos θ₁ − cos θ₂ + sin θ₂·ωCR_L·(1 − e^{−(θ₁+π−θ₂)/(ωCR_L)})].
    """
    w = omega_c_rl
    theta2 = math.pi - math.atan(w)
    theta1 = brentq(lambda a: math.sin(theta2) * math.exp(-(a + math.pi - theta2) / w) - math.sin(a), 1e-12, math.pi / 2)
    decay = math.exp(-(theta1 + math.pi - theta2) / w)
    dc = (math.cos(theta1) - math.cos(theta2) + math.sin(theta2) * w * (1 - decay)) / math.pi
    return theta1, theta2, dc


@pytest.mark.ngspice
@pytest.mark.parametrize("omega_c_rl", [10.0, 30.0])
@pytest.mark.parametrize(
    ("topology", "load_resistance", "elements_per_path"), [("centre-tap", 1000.0, 1), ("bridge", 10000.0, 2)]
)
def test_negligible_series_resistance_meets_the_ideal_diode_closed_form(
    omega_c_rl, topology, load_resistance, elements_per_path
):
    # Invented test case: 100 V, 20 mohm winding (R_s/R_L <= 2e-5), near-ideal diodes,
    # C chosen for the given omega C R_L.
    capacitance = omega_c_rl / (OMEGA * load_resistance)
    result = spice.simulate(
        design(topology, "100 V", "0.02 ohm",
               [{"capacitance": f"{capacitance * 1e6:.9g} uF", "load": {"resistance": f"{load_resistance:g} ohm"}}],
               diode=NEAR_IDEAL)
    )
    theta1, theta2, dc_over_vm = ideal_capacitor_input(omega_c_rl)
    # During conduction the output follows the source, i = C dv/dt + v/R_L, largest at turn-on θ₁;
    # the output swings from sin θ₁ up to the crest [derived, same model]. The near-ideal diodes'
    # drop (Shockley [published model]) comes off the crest.
    vm0 = 100 * math.sqrt(2)
    peak0 = vm0 * (OMEGA * capacitance * math.cos(theta1) + math.sin(theta1) / load_resistance)
    vm = vm0 - elements_per_path * shockley_drop(peak0, NEAR_IDEAL_IS, NEAR_IDEAL_N)
    node = result["nodes"][0]
    assert node["dc_voltage"] == pytest.approx(vm * dc_over_vm, rel=3e-4)
    assert node["ripple_pp"] == pytest.approx(vm * (1 - math.sin(theta1)), rel=2e-3)
    assert result["rectifier_peak_current"] == pytest.approx(peak0 * vm / vm0, rel=1e-2)
    assert result["conduction_angle"] == pytest.approx(math.degrees(theta2 - theta1), rel=3e-2)


@pytest.mark.ngspice
def test_choke_input_meets_the_rectified_sine_and_its_lc_filtered_ripple():
    # Invented test case: 100 V bridge, 10 ohm winding, 10 H / 100 ohm choke into 100 uF, 100 mA
    # (critical inductance ~0.8 H, so conduction is continuous), near-ideal diodes.
    current, rs, choke, resistance, capacitance = 0.1, 10.0, 10.0, 100.0, 100e-6
    result = spice.simulate(
        design("bridge", "100 V", "10 ohm",
               [{"feed": {"inductance": "10 H", "resistance": "100 ohm"}, "capacitance": "100 uF",
                 "load": {"current": "100 mA"}}],
               diode=NEAR_IDEAL)
    )
    vm = 100 * math.sqrt(2)
    # Source: Choke-input output ≈ 0.637·V_pk = 0.90·V_rms minus resistive drops [published:
    # N. H. Crowhurst, Basic Audio, vol. 3]; Rectified wave 2V_m/π − (4V_m/3π)·cos 2ωt − …
    # [derived, Fourier series]. The drops: I·(R_s + R_choke) and two near-ideal diodes.
    dc = 2 * vm / math.pi - current * (rs + resistance) - 2 * shockley_drop(current, NEAR_IDEAL_IS, NEAR_IDEAL_N)
    node = result["nodes"][0]
    assert node["dc_voltage"] == pytest.approx(dc, rel=2e-4)
    assert node["dc_voltage"] == pytest.approx(0.90 * 100 - current * (rs + resistance), rel=2e-3)
    # Harmonic 2k of the rectified wave has amplitude 4V_m/(π(4k²−1)) [derived, Fourier series];
    # the LC section passes 1/|1 − ω_r²LC + jω_rC(R_s + R_choke)| of it into the current-sink load
    # (Source: LC section: attenuation ≈ 1/(ω_r²LC − 1), ω_r = 2ω for full wave [derived]; here
    # with the series resistance kept).
    amplitudes = []
    for k in (1, 2, 3):
        w = 2 * k * OMEGA
        gain = 1 / abs(complex(1 - w * w * choke * capacitance, w * capacitance * (rs + resistance)))
        amplitudes.append(4 * vm / (math.pi * (4 * k * k - 1)) * gain)
    assert node["ripple_rms"] == pytest.approx(math.sqrt(sum(a * a for a in amplitudes) / 2), rel=2e-3)
    # Continuous conduction: each element conducts half the cycle [derived].
    assert result["conduction_angle"] == pytest.approx(180.0, abs=3.0)


@pytest.mark.ngspice
def test_ladder_dc_voltages_obey_ohms_law_on_the_averages():
    # Invented test case: a three-node CRC ladder with current and resistive loads.
    result = spice.simulate(
        design("bridge", "300 V", "50 ohm", [
            {"name": "plates", "capacitance": "47 uF", "load": {"current": "150 mA"}},
            {"name": "screens", "feed": {"resistance": "1 kohm"}, "capacitance": "22 uF", "load": {"current": "20 mA"}},
            {"name": "input", "feed": {"resistance": "10 kohm"}, "capacitance": "22 uF", "load": {"resistance": "100 kohm"}},
        ])
    )
    v1, v2, v3 = (node["dc_voltage"] for node in result["nodes"])
    # A capacitor's average current is zero in periodic steady state, so each feed carries the
    # DC of every load below it [derived, Kirchhoff's current law and Ohm's law].
    # Tolerance: the harness's settling tolerance, 2e-6 of the 424 V crest.
    i3 = v3 / 100e3
    assert v3 == pytest.approx(v2 - 10e3 * i3, abs=1e-3)
    assert v2 == pytest.approx(v1 - 1e3 * (0.020 + i3), abs=1e-3)
    # RC sections attenuate the ripple (Source: RC section ≈ 1/√(1+(ω_rRC)²) [derived]).
    ripples = [node["ripple_pp"] for node in result["nodes"]]
    assert ripples[0] > ripples[1] > ripples[2]
    assert result["rectifier_average_current"] == pytest.approx((0.150 + 0.020 + i3) / 2, rel=1e-4)


@pytest.mark.ngspice
def test_steady_state_does_not_depend_on_the_start_or_the_numerics():
    # Regression of the harness against itself (no external source): the steady-state loop, a
    # plain 160-cycle transient, and a run with half the step and a tenth of the tolerance agree.
    case = design("bridge", "300 V", "15 ohm", [{"capacitance": "220 uF", "load": {"resistance": "2.2 kohm"}}],
                  leakage="30 mH")
    settled = spice.simulate(case)
    long_run = spice.simulate(case, cycles=160)
    finer = spice.simulate(case, step=1e-5 / 2, reltol=1e-7)
    assert settled["steady_state"]["settle_error"] <= 2e-6
    assert long_run["steady_state"]["runs"] == 4
    for other in (long_run, finer):
        assert other["nodes"][0]["dc_voltage"] == pytest.approx(settled["nodes"][0]["dc_voltage"], rel=2e-6)
        for key in ("rectifier_peak_current", "rectifier_rms_current", "secondary_rms_current"):
            assert other[key] == pytest.approx(settled[key], rel=2e-4)
        assert other["nodes"][0]["ripple_pp"] == pytest.approx(settled["nodes"][0]["ripple_pp"], rel=2e-4)


@pytest.mark.ngspice
def test_command_line_prints_the_reference_as_json(tmp_path, capsys):
    path = tmp_path / "design.yaml"
    # Invented test case.
    path.write_text(
        "mains: {voltage: 230 V, frequency: 50 Hz}\n"
        "transformer: {secondary_voltage: 250 V, secondary_resistance: 40 ohm}\n"
        "rectifier:\n"
        "  topology: centre-tap\n"
        "  diode: {saturation_current: 5 nA, emission_coefficient: 1.8, series_resistance: 0.03 ohm}\n"
        "nodes:\n"
        "  - {name: b, capacitance: 68 uF, load: {current: 90 mA}}\n",
        encoding="utf-8",
    )
    assert spice.main([str(path)]) == 0
    result = json.loads(capsys.readouterr().out)
    assert result["nodes"][0]["name"] == "b"
    assert 250 * math.sqrt(2) * 0.8 < result["nodes"][0]["dc_voltage"] < 250 * math.sqrt(2)
    assert spice.main([str(path), "--netlist"]) == 0
    assert "VS2 w2 0 SIN(" in capsys.readouterr().out
    assert spice.main([str(tmp_path / "missing.yaml")]) == 1
