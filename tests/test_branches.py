"""A front per rectifier branch, the union front, the life objective, and branches that cannot
meet the spec (issue #11)."""

import numpy as np
import pytest

from optimiser.codesign import branches, nsga, optimise
from optimiser.codesign.problem import CoDesign
from optimiser.inputs.spec import load_spec


@pytest.fixture(scope="module")
def valve_life():
    # the demo's own settings, objectives cost, sag error and life (about 6 s)
    spec = load_spec("specs/demo-valve.yaml")
    return optimise(spec.model_copy(update={"objectives": ["cost", "sag_error", "life"]}))


def test_each_branch_front_is_non_dominated_within_its_branch(valve_life):
    opt = valve_life
    keys = opt.scored.frame["branch"].to_numpy(object)
    for key, rows in opt.branch_fronts.items():
        assert np.all(keys[rows] == key) and np.all(opt.scored.G[rows] <= 0)
        F = opt.scored.F[rows]
        for i in range(len(F)):
            others = np.delete(F, i, axis=0)
            assert not np.any(np.all(others <= F[i], axis=1) & np.any(others < F[i], axis=1))


def test_union_front_is_the_non_dominated_set_of_the_branch_fronts(valve_life):
    opt = valve_life
    union = np.unique(np.concatenate(list(opt.branch_fronts.values())))
    expected = union[nsga.non_dominated(opt.scored.F[union])]
    assert set(opt.front) == set(expected)
    # acceptance: silicon beside valve, at least 5 designs, life over a factor 1.5
    kinds = {branches.kind_of(k) for k in opt.scored.frame["branch"].iloc[opt.front]}
    assert {"silicon", "valve"} <= kinds
    life = opt.scored.frame["life"].iloc[opt.front].to_numpy(float)
    assert len(opt.front) >= 5 and life.max() / life.min() >= 1.5


def test_life_objective_is_the_assessments_life_figure(valve_life):
    opt = valve_life
    j = list(opt.binding.objective_names).index("life")
    for r in opt.front:
        a = opt.scored.table.assessments[r]
        hours = a.life["shortest_hours"]
        assert opt.scored.frame["life"].iloc[r] == pytest.approx(hours, rel=1e-12)
        assert opt.scored.F[r, j] == pytest.approx(-np.log10(hours), rel=1e-12)
        parts = [c["life_hours"] for c in a.life["capacitors"]]
        if a.life["rectifier_valve"]:
            parts.append(a.life["rectifier_valve"]["life_hours"])
        assert hours == pytest.approx(min(parts))


def test_a_branch_that_cannot_meet_the_spec_is_reported_with_what_binds(valve_life):
    opt = valve_life
    rows = branches.branch_rows(opt, {})
    assert [r["branch"] for r in rows] == [b.key for b in branches.branches_of(opt.spec)]
    failing = [r for r in rows if not r["feasible"]]
    assert failing, "the demo has a valve that cannot meet it (5Y3GT)"
    for r in failing:
        assert "within" in r["binding_constraints"] or "at least" in r["binding_constraints"] \
            or "at most" in r["binding_constraints"]


def test_regulation_is_the_static_drop_and_sag_error_its_distance_from_target():
    spec = load_spec("specs/demo-valve.yaml")
    binding = CoDesign(spec)
    assert binding.objective_names == ("cost", "sag_error", "rectifier_stress")
    drop = np.array([[0.05], [0.09]])
    figs = binding.objective_figures(np.ones(2), drop, np.ones(2), np.ones(2))
    np.testing.assert_allclose(figs["regulation"], [0.05, 0.09])
    np.testing.assert_allclose(figs["sag_error"], np.abs(np.array([0.05, 0.09]) - spec.sag.target))


def test_derated_capacitor_voltage_margin_of_the_recommended_design():
    # acceptance: >= 10 % voltage margin on every electrolytic at high mains
    opt = optimise(load_spec("specs/demo-valve.yaml"))
    a = opt.scored.table.assessments[opt.knee]
    volts = [c for c in a.checks if c.name.endswith(".voltage") and c.name.startswith("capacitor")]
    assert volts and all(c.rating_ratio <= 0.90 + 1e-12 for c in volts)


def test_refinement_is_reproducible_and_keeps_each_design_in_its_branch():
    from optimiser.codesign import refine
    from optimiser.codesign.encoding import CURRENT_COLUMN

    binding = CoDesign(load_spec("specs/demo-valve.yaml"))
    X = nsga.random_population(binding.variables, 40, seed=3)
    runs = [refine.refine(binding, X, binding.niche, CURRENT_COLUMN, rounds=2)
            for _ in range(2)]
    np.testing.assert_array_equal(runs[0], runs[1])
    # every branch the start held is still there, and a move never changes the rectifier
    assert set(binding.niche(runs[0])) == set(binding.niche(X))
    assert set(runs[0][:, 4]) <= set(X[:, 4])
