"""The order sheet is complete enough to rebuild the supply from it."""

import re
from pathlib import Path

import pytest
import yaml

from optimiser import evaluate
from optimiser.cli import main
from optimiser.inputs.design import load_design
from optimiser.outputs.ordersheet import order_sheet
from optimiser.formats.units import parse_quantity

DEMO = Path(__file__).parents[1] / "specs" / "demo-design-build.yaml"


def _first_quantity(text, dimension):
    number, unit = re.match(r"\s*([0-9.]+)(?:-0-[0-9.]+)?\s*([A-Za-zΩµ]+)", text).groups()
    return parse_quantity(f"{number} {unit}", dimension)


def test_order_sheet_reproduces_b_plus_within_one_percent():
    # Source: the acceptance test — a winder building to the sheet delivers a
    # transformer the supply simulation cannot tell from the designer's (within 1 %).
    design = load_design(DEMO)
    sheet = order_sheet(design.transformer_design)
    hv = next(w for w in sheet["secondaries"] if w["name"] == "hv")
    ref = sheet["design_reference"]
    raw = yaml.safe_load(DEMO.read_text())
    raw["transformer"] = {
        "secondary_voltage": f"{_first_quantity(hv['voltage_open_circuit_heaters_loaded'], 'voltage')} V",
        "secondary_resistance": ref["hv_series_resistance_per_path_hot"],
        "leakage_inductance": ref["hv_leakage_inductance_per_path"],
    }
    rebuilt = evaluate(raw)
    original = evaluate(design)
    for a, b in zip(rebuilt.nodes, original.nodes):
        assert a.dc_voltage == pytest.approx(b.dc_voltage, rel=0.01)


def test_cli_order_sheet(tmp_path, capsys):
    out = tmp_path / "sheet.md"
    assert main(["transformer", str(DEMO), "--markdown", str(out)]) == 0
    text = out.read_text()
    assert "maximum dc resistance" in text.lower() and "wiring codes" in text.lower()
    assert capsys.readouterr().out.strip() == text.strip()


def test_cli_order_sheet_needs_a_build(capsys):
    demo = DEMO.with_name("demo-design-valve.yaml")
    assert main(["transformer", str(demo)]) == 2
    assert "no build block" in capsys.readouterr().err


def test_a_design_brings_its_own_core(tmp_path):
    # Invented user core: the bundled cores file copied, with one core of the user's own added
    from optimiser.physics.transformer import use_user_folder

    bundled = (Path(__file__).parents[1] / "optimiser" / "parts" / "data" / "cores.yaml").read_text()
    mine = tmp_path / "my-data"
    mine.mkdir()
    raw = yaml.safe_load(DEMO.read_text())
    core = raw["transformer"]["build"]["core"]  # the demo's own core, copied under a new name
    entry = re.search(rf"(?ms)^  - name: {core}\n.*?(?=^  - name:)", bundled).group(0)
    (mine / "cores.yaml").write_text(bundled.replace(
        entry, entry + entry.replace(core, "EI-my35").replace(
            "provenance: \"", "provenance: \"invented test core; was: "), 1))
    raw["transformer"]["build"]["core"] = "EI-my35"
    raw["transformer_data"] = "my-data"
    path = tmp_path / "design.yaml"
    path.write_text(yaml.safe_dump(raw))
    try:
        design = load_design(path)
        assert design.transformer_design.core_name == "EI-my35"
        # the same geometry as the bundled core it was copied from
        assert design.transformer.secondary_resistance == pytest.approx(
            load_design(DEMO).transformer.secondary_resistance, rel=1e-9)
    finally:
        use_user_folder(None)
