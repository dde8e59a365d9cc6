"""The parts list and its cost roll-up."""

from pathlib import Path

import numpy as np
import pytest

from optimiser.parts import catalogue as parts
from optimiser.assessment.bill import cost_breakdown, parts_list, price_of
from optimiser.inputs.design import load_design

SPECS = Path(__file__).parents[1] / "specs"


def test_every_catalogue_rectifier_has_a_price():
    for kind, group in (("valve", "valves"), ("diode", "diodes")):
        for name in parts.load_catalogue(kind):
            cost, provenance = price_of(group, name)
            assert np.isfinite(cost) and "estimate" in provenance


def test_lines_add_up_to_the_total():
    d = load_design(SPECS / "demo-design-build.yaml")
    lines = parts_list(d)
    assert {l.group for l in lines} >= {"transformer", "rectifier", "capacitor", "resistor"}
    total = cost_breakdown(d)["total"]
    assert total == pytest.approx(sum(l.cost for l in lines))
    assert lines[0].cost == pytest.approx(float(d.transformer_design.cost))


def test_bridge_lists_four_diodes_and_switchable_both_branches():
    bridge = parts_list(load_design(SPECS / "demo-design-bridge.yaml"))
    assert next(l for l in bridge if l.group == "rectifier").quantity == 4
    pair = parts_list(load_design(SPECS / "demo-design-switchable.yaml"))
    refs = [l.reference for l in pair]
    assert "silicon rectifier" in refs and "valve rectifier" in refs
    assert any(l.group == "hardware" for l in pair)
    # no physical build: the transformer is listed, its price unknown rather than guessed
    assert np.isnan(pair[0].cost)
