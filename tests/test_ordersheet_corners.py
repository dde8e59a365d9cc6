"""The transformer at its operating corners, the one rating definition and the winder's sheet
(issue #12)."""

import csv
import math
import re
from pathlib import Path

import numpy as np
import pytest

from optimiser.assessment.full import assess
from optimiser.cli import main
from optimiser.formats.units import parse_quantity
from optimiser.inputs.design import load_design
from optimiser.outputs.ordersheet import order_sheet_for
from optimiser.outputs.winder import awg_equivalent, hipot_table
from optimiser.physics.transformer import awg_diameter, resistance_per_length, turns_for_voltage
from optimiser.physics.transformer.corners import operating_corners
from optimiser.physics.transformer.rating import va_rating, winding_ratings

BUILD = "specs/demo-design-build.yaml"


def _design(tmp_path, flux="1.25 T", primaries="[230 V]", arrangement=None, without=()):
    text = Path(BUILD).read_text(encoding="utf-8").replace("max_flux_density: 1.25 T",
                                                       f"max_flux_density: {flux}")
    for line in without:
        text = text.replace(line + "\n", "")
    text = text.replace("primaries: [230 V]", f"primaries: {primaries}"
                        + (f"\n    primary_arrangement: {arrangement}" if arrangement else ""))
    path = tmp_path / "design.yaml"
    path.write_text(text, encoding="utf-8")
    return load_design(path)


def test_nominal_corner_of_the_lowest_tap_is_the_design_itself():
    design = load_design(BUILD)
    t = design.transformer_design
    c = operating_corners(t, 0.1, 0.1)
    assert c.flux_density[0, 1, 0] == pytest.approx(t.flux_density, rel=1e-9)
    assert c.temperature_rise[0, 1, 0] == pytest.approx(t.temperature_rise, rel=1e-6)
    assert c.magnetising_current[0, 1, 0] == pytest.approx(t.magnetising_current, rel=1e-9)
    for s, w in enumerate(t.windings[1:]):
        assert c.loaded_voltage[s, 0, 1, 0] == pytest.approx(w.loaded_voltage, rel=1e-6)
        assert c.no_load_voltage[s, 0, 1, 0] == pytest.approx(w.no_load_voltage, rel=1e-6)
    # Source: REFERENCES.md, B scales with the applied volts per turn (+10 % mains: 1.1 x B)
    assert c.flux_density[0, 2, 0] == pytest.approx(1.1 * t.flux_density, rel=1e-12)
    assert c.magnetising_current[0, 2, 0] > c.magnetising_current[0, 1, 0]


def test_high_mains_flux_check_fails_a_design_that_passes_at_nominal(tmp_path):
    # one heater only (the 5 V winding's whole turns beside the 6.3 V one's would pull the flux
    # down to about 1.13 T at any design flux): 1.35 T asked, about 1.32 T with the 6.3 V
    # winding's turns rounded up, under the steel's 1.4 T at nominal mains, over it at +10 %
    design = _design(tmp_path, flux="1.35 T", without=(
        "      - {name: rectifier-heater, voltage: 5 V, current: 1.9 A}",))
    t = design.transformer_design
    assert t.flux_ok and t.flux_density <= t.flux_density_limit  # passes at nominal mains
    check = next(c for c in assess(design, detail=False).checks
                 if c.name == "transformer.flux_density")
    assert check.value == pytest.approx(1.1 * t.flux_density, rel=1e-9)
    assert not check.passed and check.value > check.limit and "high mains" in check.source
    sheet = order_sheet_for(design)
    assert any("above the steel" in w for w in sheet["warnings"])


def test_each_tap_and_dual_connection_has_its_corners(tmp_path):
    taps = _design(tmp_path, primaries="[220 V, 230 V, 240 V]").transformer_design
    c = operating_corners(taps, 0.1, 0.1)
    assert c.flux_density.shape == (3, 3, 1) and len(c.connections) == 3
    # every tap near its own design flux at its own voltage
    assert np.allclose(c.flux_density[:, 1, 0], taps.flux_density, rtol=0.01)
    dual = _design(tmp_path, primaries="[115 V, 230 V]", arrangement="dual").transformer_design
    d = operating_corners(dual, 0.1, 0.1)
    assert d.flux_density[0, 1, 0] == pytest.approx(d.flux_density[1, 1, 0], rel=1e-12)
    assert np.allclose(d.loaded_voltage[:, 0], d.loaded_voltage[:, 1], rtol=1e-9)


def test_faraday_turns():
    # Source: EMF equation V = 4.44 f N B A_c (REFERENCES.md: published, any transformer text);
    # 230 V, 50 Hz, 1.2 T on 10 cm^2: N = 230 / (4.443 x 50 x 1.2 x 1e-3) = 862.8 turns with
    # 4.443 = pi sqrt 2 (863.3 with the rounded 4.44); worked by hand from the equation (a
    # textbook's worked example: tests/test_transformer.py::
    # test_faraday_against_a_textbook_worked_example).
    assert turns_for_voltage(230.0, 50.0, 1.2, 10e-4) == pytest.approx(862.8, abs=0.1)


def test_wire_resistance_against_the_wire_table():
    # Source: REFERENCES.md, AWG 30: 0.2546 mm, about 338.6 ohm/km at 20 degC (ASTM B258
    # diameter with IEC 60028 resistivity)
    assert awg_diameter(30) == pytest.approx(0.2546e-3, rel=1e-3)
    assert resistance_per_length(awg_diameter(30)) == pytest.approx(0.3386, rel=2e-3)
    assert awg_equivalent(0.2546e-3) == "AWG 30"


def test_hipot_figure():
    # Source: 2 U + 1000 V RMS for basic insulation, REFERENCES.md — from memory — verify
    rows = hipot_table({"primary": 250.0, "hv": 350.0})
    assert rows[0]["suggested_test"].startswith("1500 V")
    assert rows[1]["suggested_test"].startswith(f"{2 * 600 + 1000:.0f} V")


def _number(text):
    return float(re.match(r"[0-9.]+", text.strip()).group())


def test_round_trip_of_the_sheets_own_turns_wire_and_build():
    """The sheet's turns and resistances, through the resistive-drop model, give its voltages."""
    design = load_design(BUILD)
    sheet = order_sheet_for(design)
    t = design.transformer_design
    rows = {r["winding"]: r for r in sheet["design_reference"]["windings"]}
    primary = sheet["primary"]
    n_p = _number(rows["primary"]["turns"])
    v = parse_quantity(primary["voltages"].split(" / ")[0], "voltage")
    hot = 1 + 0.00393 * (t.winding_temperature - 20)  # Source: IEC 60028 alpha_20
    r_p = parse_quantity(primary["maximum_dc_resistance_at_20C"], "resistance") * hot
    sec = sheet["secondaries"]
    n_s, i_s, r_s = [], [], []
    for s in sec:
        n_s.append(_number(rows[s["name"]]["turns"]))
        i_s.append(parse_quantity(s["rms_current_rating"].split(" per")[0], "current"))
        r_s.append(parse_quantity(s["maximum_dc_resistance_at_20C"].split(" per")[0], "resistance") * hot)
    i_core = t.core_loss / v
    e = v - r_p * (i_core + sum(n / n_p * i for n, i in zip(n_s, i_s)))
    for s, n, i, r in zip(sec, n_s, i_s, r_s):
        stated = _number(s["voltage_at_rated_load"])
        assert n / n_p * e - i * r == pytest.approx(stated, rel=0.01), s["name"]


def test_sheet_states_the_winders_items():
    sheet = order_sheet_for(load_design(BUILD))
    for key in ("working_voltages", "hipot_test", "primary_fuse", "operating_corners",
                "model_limits", "lead_colours_and_terminal_markings"):
        assert sheet[key], key
    assert "time-lag" in sheet["primary_fuse"][0]
    assert "enamel" in sheet["insulation"] and "between_windings" in sheet["insulation"]
    assert "AWG" in sheet["design_reference"]["windings"][0]["wire"]
    assert "to be agreed" not in str(sheet["lead_colours_and_terminal_markings"])


def test_one_va_figure_across_a_results_folder(tmp_path):
    from tests.test_search import SMALL

    spec = tmp_path / "small.yaml"
    spec.write_text(SMALL, encoding="utf-8")
    out = tmp_path / "results"
    assert main(["optimise", str(spec), "--out", str(out), "--quiet"]) == 0
    with open(out / "pareto.csv", newline="", encoding="utf-8") as fh:
        rows = list(csv.DictReader(fh))
    row = next(r for r in rows if r["recommended"] == "True")
    design = load_design(out / "designs" / f"{row['id']}.yaml")
    va = va_rating(design.transformer_design)
    assert float(row["transformer.va_rating"]) == pytest.approx(va, rel=1e-9)
    assert "transformer.secondary_va" not in row
    shown = f"{va:.3g}"
    summary = (out / "summary.md").read_text(encoding="utf-8")
    assert f"VA rating: {shown} VA" in summary  # the order sheet in the summary
    assert f"| {shown} VA |" in summary  # the parts list
    figures = set(re.findall(r"([0-9.]+) VA rating|VA rating: ([0-9.]+) VA", summary))
    assert figures == {("", shown)}
    assert math.isclose(sum(r.va for r in winding_ratings(design.transformer_design)), va)
