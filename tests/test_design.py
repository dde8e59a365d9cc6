"""The design loader: every bad input gets a message naming file, line and field; exit 2."""

import textwrap

import pytest

from optimiser.cli import main
from optimiser.inputs.design import DesignError, load_design

GOOD = """\
mains: {voltage: 230 V, frequency: 50 Hz}
transformer:
  secondary_voltage: 300 V
  secondary_resistance: 50 ohm
rectifier:
  topology: bridge
  diode: {saturation_current: 5 nA, emission_coefficient: 1.8, series_resistance: 0.03 ohm}
nodes:
  - name: plates
    capacitance: 100 uF
    load: {current: 200 mA}
  - name: screens
    feed: {resistance: 470 ohm}
    capacitance: 47 uF
    load: {current: 15 mA}
"""


def write(tmp_path, text):
    path = tmp_path / "d.yaml"
    path.write_text(textwrap.dedent(text))
    return path


def test_good_design_loads(tmp_path):
    d = load_design(write(tmp_path, GOOD))
    assert d.nodes[1].feed.resistance == 470.0
    assert d.transformer.leakage_inductance == 0.0


@pytest.mark.parametrize("old, new, field, reason", [
    ("    capacitance: 100 uF", "    capacitance: 100 uF\n    colour: blue", "nodes.0.colour",
     "unknown key"),
    ("capacitance: 100 uF", "capacitance: 100", "nodes.0.capacitance", "needs a unit"),
    ("capacitance: 100 uF", "capacitance: 100 V", "nodes.0.capacitance", "not a capacitance"),
    ("capacitance: 100 uF", "capacitance: -100 uF", "nodes.0.capacitance", "outside 10 nF..100 mF"),
    ("capacitance: 100 uF", "capacitance: 0 uF", "nodes.0.capacitance", "outside 10 nF..100 mF"),
    ("secondary_voltage: 300 V", "secondary_voltage: nan V", "transformer.secondary_voltage",
     "number"),
    ("topology: bridge", "topology: hybrid-bridge", "rectifier.valve", "needs a valve"),
    ("topology: bridge", "topology: voltage-doubler", "rectifier.topology", "bridge"),
    ("    feed: {resistance: 470 ohm}\n", "", "nodes.1.feed", "needs a feed"),
    ("secondary_resistance: 50 ohm", "secondary_resistance: 50 ohm\n  secondary_voltage: 310 V",
     "transformer.secondary_voltage", "duplicate key"),
])
def test_bad_input_names_field_and_line(tmp_path, old, new, field, reason):
    assert old in GOOD
    path = write(tmp_path, GOOD.replace(old, new, 1))
    with pytest.raises(DesignError) as info:
        load_design(path)
    text = str(info.value)
    assert field in text and reason in text
    assert f"{path}:" in text  # file and line:col


def test_unreadable_yaml(tmp_path):
    path = write(tmp_path, "mains: {voltage: 230 V\nnodes: [")
    with pytest.raises(DesignError, match="not readable as YAML"):
        load_design(path)


def test_cli_bad_input_exits_2_without_traceback(tmp_path, capsys):
    path = write(tmp_path, GOOD.replace("capacitance: 100 uF", "capacitance: 100"))
    assert main(["evaluate", str(path)]) == 2
    err = capsys.readouterr().err
    assert "nodes.0.capacitance" in err and "Traceback" not in err


def test_cli_json_has_the_fixed_keys(tmp_path, capsys):
    import json

    status = main(["evaluate", str(write(tmp_path, GOOD)), "--json"])
    out = json.loads(capsys.readouterr().out)
    assert status == (0 if out["passed"] else 1)  # 1: evaluated, but a check fails
    for key in ("nodes", "rectifier_peak_current", "rectifier_rms_current", "conduction_angle",
                "piv", "secondary_rms_current"):
        assert key in out
    assert [n["name"] for n in out["nodes"]] == ["plates", "screens"]
    assert set(out["nodes"][0]) >= {"name", "dc_voltage", "ripple_pp", "ripple_rms",
                                    "capacitor_rms_current"}
