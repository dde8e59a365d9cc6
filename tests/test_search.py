"""The co-design search: the pymoo machinery on toy problems with known fronts, the spec loader,
and `railwright optimise` end to end on a small invented spec.

Optimiser tests check properties (feasibility, non-dominance, recovery of a known front, same
seed same front, beating random sampling), not exact floating-point fronts. Every spec and design
here is an invented test case, not a known commercial amplifier.
"""

import csv
import textwrap

import numpy as np
import pytest
from pymoo.indicators.hv import HV

from optimiser import evaluate
from optimiser.codesign import nsga as search
from optimiser.cli import main
from optimiser.codesign.problem import CoDesign
from optimiser.codesign.run import optimise
from optimiser.inputs.design import DesignError, load_design
from optimiser.inputs.spec import load_spec

SMALL = """\
# Invented test case; not a known commercial amplifier.
name: small
mains: {voltage: 230 V, frequency: 50 Hz, tolerance: 10 %}
ambient: 35 degC
nodes:
  - name: plates
    dc_voltage: 300 V
    window: 30 V
    idle_current: 50 mA
    full_power_current: 70 mA
    ripple: 30 V
  - name: preamp
    dc_voltage: 250 V
    window: 40 V
    idle_current: 5 mA
    full_power_current: 5 mA
    hum: 60 dB
heaters:
  - {name: heaters, voltage: 6.3 V, current: 1.5 A}
choices:
  secondary_voltage: {min: 220 V, max: 300 V, step: 1 V}
  rectifiers:
    - {topology: bridge, diode: 1N4007}
    - {topology: centre-tap, valve: 5AR4}
  reservoir: {series: generic-105C-radial, min: 22 uF, max: 100 uF}
  filter: {series: generic-105C-radial, min: 10 uF, max: 47 uF}
  feeds:
    preamp:
      resistance: {min: 1 kohm, max: 22 kohm, series: E6}
transformer:
  cores: [EI-a28, EI-a32, EI-a35]
  steel: NO-M27-like
  max_flux_density: 1.25 T
  current_density: {min: 2 A/mm^2, max: 4 A/mm^2, step: 0.5 A/mm^2}
search: {population: 30, generations: 10, seed: 3}
"""

# Fixed hypervolume bounds for SMALL (cost units, fraction, ratio), chosen once by hand to
# enclose any sensible design; the same for every run so the comparison is fair.
IDEAL = np.array([50.0, 0.0, 0.0])
NADIR = np.array([250.0, 0.15, 1.5])


def write(path, text):
    path.write_text(textwrap.dedent(text), encoding="utf-8")
    return path


@pytest.fixture(scope="module")
def small(tmp_path_factory):
    """The CLI run on SMALL, and the same search through the library."""
    folder = tmp_path_factory.mktemp("small")
    spec_path = write(folder / "small.yaml", SMALL)
    out = folder / "results"
    code = main(["optimise", str(spec_path), "--out", str(out), "--quiet"])
    opt = optimise(load_spec(spec_path))
    return {"code": code, "out": out, "spec_path": spec_path, "opt": opt}


def read_rows(path):
    with open(path, newline="", encoding="utf-8") as fh:
        return list(csv.DictReader(fh))


# --------------------------------------------------------------------------------------------
# toy problems through search.py


class Zdt1:
    """ZDT1 with 5 variables: the front is f2 = 1 - sqrt(f1), f1 in [0, 1], where x2.. = 0.

    Source: E. Zitzler, K. Deb, L. Thiele, "Comparison of Multiobjective Evolutionary Algorithms:
    Empirical Results," Evolutionary Computation 8(2), 2000 (test function T1).
    """

    objective_names = ("f1", "f2")
    constraint_names = ()

    def __init__(self, n=5):
        self.variables = [search.Variable(f"x{i}", 0.0, 1.0) for i in range(n)]

    def evaluate(self, X):
        f1 = X[:, 0]
        g = 1.0 + 9.0 * X[:, 1:].mean(axis=1)
        return np.column_stack([f1, g * (1.0 - np.sqrt(f1 / g))]), np.zeros((len(X), 0))


class QuarterCircle:
    """Minimise (x, y) outside the unit circle: the front is the quarter circle x^2 + y^2 = 1.

    Derived: any point with x^2 + y^2 > 1 is dominated by its radial projection onto the circle,
    and no two points of the circle dominate each other. The third variable is an integer index
    that only the value 0 keeps off a penalty, to exercise the integer repair.
    """

    objective_names = ("x", "y")
    constraint_names = ("outside the circle",)

    def __init__(self):
        self.variables = [search.Variable("x", 0.0, 1.5), search.Variable("y", 0.0, 1.5),
                          search.Variable("k", 0, 4, integer=True)]

    def evaluate(self, X):
        F = np.column_stack([X[:, 0] + 0.1 * X[:, 2], X[:, 1] + 0.1 * X[:, 2]])
        G = (1.0 - X[:, 0] ** 2 - X[:, 1] ** 2)[:, None]
        return F, G


def test_zdt1_front_is_recovered():
    res = search.run(Zdt1(), population=40, generations=80, seed=2)
    F = res.F[res.front]
    # Source: Zitzler, Deb, Thiele 2000 — the true front of T1 is f2 = 1 - sqrt(f1)
    assert np.max(np.abs(F[:, 1] - (1.0 - np.sqrt(F[:, 0])))) < 0.05
    assert F[:, 0].min() < 0.05 and F[:, 0].max() > 0.9  # spread along the whole front


def test_constrained_front_and_integer_repair():
    res = search.run(QuarterCircle(), population=40, generations=150, seed=5)
    X, F = res.X[res.front], res.F[res.front]
    assert np.all(res.G[res.front] <= 0)
    assert np.all(X[:, 2] == np.rint(X[:, 2]))  # integer column rounded
    assert np.all(X[:, 2] == 0)  # the penalised indices are dominated away
    assert X[:, 0].dtype == float and not np.all(X[:, 0] == np.rint(X[:, 0]))  # floats stay
    radius = np.hypot(F[:, 0], F[:, 1])
    # derived: the front is the unit quarter circle (its end points may sit a little off it:
    # a point on a bound, e.g. x = 0, is only weakly dominated by the circle's nearest points)
    off = np.abs(radius - 1.0)
    assert np.quantile(off, 0.9) < 0.02 and np.mean(off) < 0.01 and np.max(off) < 0.1
    assert len(F) >= 10


def test_integer_repair_rounds_only_integer_columns():
    variables = [search.Variable("a", 0.0, 1.0), search.Variable("i", 0, 3, integer=True)]
    repair = search.IntegerRepair(variables)
    X = np.array([[0.37, 1.6], [0.5, -0.49], [0.2, 3.49]])
    out = repair._do(None, X)
    np.testing.assert_array_equal(out[:, 0], X[:, 0])
    np.testing.assert_array_equal(out[:, 1], [2.0, 0.0, 3.0])


class CappedZdt1(Zdt1):
    """ZDT1 with a repair that caps x0 at 0.5 and counts the designs it is given."""

    def __init__(self):
        super().__init__()
        self.repaired = 0

    def repair(self, X):
        self.repaired += len(X)
        X = X.copy()
        X[:, 0] = np.minimum(X[:, 0], 0.5)
        return X


def test_the_definitions_repair_is_applied_once_to_each_design_evaluated():
    toy = CappedZdt1()
    res = search.run(toy, population=20, generations=10, seed=3)
    assert np.all(res.X[:, 0] <= 0.5) and np.all(res.archive[:, 0] <= 0.5)
    # what was evaluated is the repaired row the population holds ...
    np.testing.assert_array_equal(Zdt1.evaluate(toy, res.X)[0], res.F)
    # ... and each design once: not every batch mating tried while removing duplicates
    assert toy.repaired == res.evaluations


def test_same_seed_same_front_toy_and_workers():
    a = search.run(Zdt1(), population=20, generations=10, seed=7)
    b = search.run(Zdt1(), population=20, generations=10, seed=7, workers=2)
    c = search.run(Zdt1(), population=20, generations=10, seed=8)
    np.testing.assert_array_equal(a.F, b.F)
    assert not np.array_equal(a.F, c.F)


def test_knee_of_an_l_shaped_front():
    # points along two legs of an L: the corner is the knee (derived: farthest from the line
    # through the two extremes)
    F = np.array([[0.0, 1.0], [0.02, 0.5], [0.05, 0.1], [0.5, 0.03], [1.0, 0.0]])
    assert search.knee(F) == 2


def test_non_dominated():
    F = np.array([[1, 2], [2, 1], [2, 2], [1, 2]])
    np.testing.assert_array_equal(search.non_dominated(F), [0, 1])
    np.testing.assert_array_equal(search.non_dominated(F, [False, True, True, True]), [1, 3])


# --------------------------------------------------------------------------------------------
# the spec file


@pytest.mark.parametrize("old, new, field, reason", [
    ("    ripple: 30 V", "    ripple: 30 V\n    colour: red", "nodes.0.colour", "unknown key"),
    ("window: 30 V", "window: 30", "nodes.0.window", "needs a unit"),
    ("window: 30 V", "window: 300 V", "nodes.0", "smaller than dc_voltage"),
    ("hum: 60 dB", "hum: 60", "nodes.1.hum", "decibels"),
    ("valve: 5AR4", "valve: 5XX9", "choices.rectifiers.1.valve", "no valve named"),
    ("topology: bridge, diode: 1N4007", "topology: bridge, valve: 5AR4",
     "choices.rectifiers.0", "four silicon diodes"),
    ("    preamp:\n      resistance", "    screens:\n      resistance", "choices.feeds.screens",
     "no node is named"),
    ("cores: [EI-a28, EI-a32, EI-a35]", "cores: [EI-a28, EI-q99]", "transformer.cores",
     "unknown core"),
    ("series: generic-105C-radial, min: 22 uF", "series: generic-105C-radial, min: 220 uF",
     "choices.reservoir", "max must be at least min"),
    ("ambient: 35 degC", "ambient: 35 degC\nconditions: {ambient: 30 degC}",
     "conditions.ambient", "set this through ambient"),
    ("  window: 40 V", "  window: 40 V\n    window: 45 V", "nodes.1.window", "duplicate key"),
    ("  max_flux_density: 1.25 T\n", "", "transformer.max_flux_density", "required key is missing"),
])
def test_spec_loader_names_field_and_line(tmp_path, old, new, field, reason):
    assert old in SMALL
    path = write(tmp_path / "s.yaml", SMALL.replace(old, new, 1))
    with pytest.raises(DesignError) as info:
        load_spec(path)
    text = str(info.value)
    assert f"{path}:" in text and f"{field}:" in text, text
    assert reason in text, text
    line = text.split(f"{path}:", 1)[1].split(":", 1)[0]
    assert line.isdigit() and int(line) > 1, text


def test_spec_defaults_and_values(tmp_path):
    spec = load_spec(write(tmp_path / "s.yaml", SMALL))
    assert spec.nodes[1].hum == 60.0
    assert spec.choices.rectifiers[1].centre_tapped
    assert spec.sag is None and spec.sag_node == 0
    assert spec.mains.tolerance == pytest.approx(0.10)
    # 60 dB below 250 V RMS is 0.25 V RMS, 0.707 V p-p for a sine (derived from the definition)
    assert spec.nodes[1].ripple_pp_limit(250.0) == pytest.approx(2 * np.sqrt(2) * 0.25)


# --------------------------------------------------------------------------------------------
# the search on a real spec


def test_cli_writes_the_results(small):
    assert small["code"] == 0
    out = small["out"]
    for name in ("pareto.csv", "summary.md", "front.png", "bplus.png", "spec.yaml"):
        assert (out / name).is_file(), name
    rows = read_rows(out / "pareto.csv")
    assert rows and {"cost [cost units]", "regulation [%]", "sag_error [pp]",
                     "rectifier_stress [-]", "life [h]", "sag.attack_time [s]",
                     "sag.recovery_time [s]", "id", "branch", "on_front"} <= set(rows[0])
    assert (out / "branches.csv").is_file() and (out / "sag_life.png").is_file()
    assert sorted(p.stem for p in (out / "designs").iterdir()) == [r["id"] for r in rows]
    assert sum(r["recommended"] == "True" for r in rows) == 1
    text = (out / "summary.md").read_text(encoding="utf-8")
    for heading in ("## The spec", "## The front's range", "## Recommended", "### Check table",
                    "### Parts list", "### Order sheet", "## Cautions"):
        assert heading in text, heading
    assert "local codes" in text and "lethal" in text
    assert not [p for p in out.parent.iterdir() if p.name.startswith(".")]


def test_every_pareto_design_reevaluated_meets_every_constraint_and_reproduces_its_row(small):
    out = small["out"]
    binding = CoDesign(load_spec(small["spec_path"]))
    rows = read_rows(out / "pareto.csv")
    designs = [load_design(out / "designs" / f"{r['id']}.yaml") for r in rows]
    scored = binding.score(designs)
    assert np.all(scored.G <= 0), [binding.constraint_names[j] for j in
                                   np.flatnonzero((scored.G > 0).any(axis=0))]
    np.testing.assert_allclose(scored.F, _csv_F(out, binding.objective_names), rtol=1e-6,
                               atol=1e-9)
    for r in rows:
        result = evaluate(out / "designs" / f"{r['id']}.yaml")
        assert result.rectifier_peak_current == pytest.approx(
            float(r["rectifier_peak_current"]), rel=1e-6)
        assert result.secondary_rms_current == pytest.approx(
            float(r["secondary_rms_current"]), rel=1e-6)
        for node in result.nodes:
            assert node.dc_voltage == pytest.approx(float(r[f"{node.name}.full_power_voltage"]),
                                                    rel=1e-6)
            assert node.ripple_pp == pytest.approx(float(r[f"{node.name}.ripple_pp"]), rel=1e-5)


def test_front_is_feasible_and_non_dominated(small):
    opt = small["opt"]
    F = opt.scored.F[opt.front]
    assert opt.found and np.all(opt.scored.G[opt.front] <= 0)
    for i in range(len(F)):
        others = np.delete(F, i, axis=0)
        assert not np.any(np.all(others <= F[i], axis=1) & np.any(others < F[i], axis=1))
    assert opt.knee in opt.front


def _csv_F(out, names, front_only=False):
    """The search values of the objectives of pareto.csv's rows, read back from its unit
    headers (one definition: objective_table)."""
    import pandas as pd

    from optimiser.codesign import objective_table

    frame = objective_table.from_csv_frame(pd.read_csv(out / "pareto.csv"))
    if front_only:
        frame = frame[frame["on_front"]]
    return objective_table.search_values(names, {n: frame[n].to_numpy(float) for n in names})


def test_same_seed_same_front(small):
    opt = small["opt"]
    cli_front = _csv_F(small["out"], opt.binding.objective_names, front_only=True)
    np.testing.assert_allclose(opt.scored.F[opt.front], cli_front, rtol=1e-9)


def test_front_beats_random_sampling_by_hypervolume(small):
    opt = small["opt"]
    binding = opt.binding
    count = opt.search.evaluations
    X = search.random_population(binding.variables, count, seed=11)
    F, G = binding.evaluate_full(X)  # the same full assessment the front gets
    feasible = np.all(G <= 0, axis=1)
    indicator = HV(ref_point=NADIR, ideal=IDEAL, nadir=NADIR, zero_to_one=True)

    def volume(points):
        inside = points[np.all(points < NADIR, axis=1)]
        return float(indicator(inside)) if len(inside) else 0.0

    searched = volume(opt.scored.F[opt.front])
    sampled = volume(F[search.non_dominated(F, feasible)]) if feasible.any() else 0.0
    assert searched > 0 and searched > sampled, (searched, sampled)


IMPOSSIBLE = SMALL.replace("dc_voltage: 300 V\n    window: 30 V",
                           "dc_voltage: 600 V\n    window: 30 V")


def test_impossible_spec_exits_1_with_the_report_and_writes_nothing(tmp_path, capsys):
    spec = write(tmp_path / "impossible.yaml",
                 IMPOSSIBLE.replace("population: 30, generations: 10",
                                    "population: 12, generations: 3"))
    out = tmp_path / "out"
    assert main(["optimise", str(spec), "--out", str(out), "--quiet"]) == 1
    err = capsys.readouterr().err
    assert "No design met every constraint" in err
    assert "plates DC at idle at least 570 V" in err and "outside" in err
    nearest = [line for line in err.splitlines() if line[:5].strip().rstrip(".").isdigit()]
    assert nearest and len(set(nearest)) == len(nearest), nearest  # distinct nearest designs
    assert not out.exists() and [p.name for p in tmp_path.iterdir()] == ["impossible.yaml"]


def test_bad_spec_exits_2_and_writes_nothing(tmp_path, capsys):
    spec = write(tmp_path / "bad.yaml", SMALL.replace("window: 30 V", "window: 30"))
    out = tmp_path / "out"
    assert main(["optimise", str(spec), "--out", str(out), "--quiet"]) == 2
    assert "nodes.0.window" in capsys.readouterr().err
    assert not out.exists()
    assert main(["optimise", str(spec), "--population", "0", "--quiet"]) == 2


def test_a_failure_while_writing_leaves_nothing_half_done(tmp_path, monkeypatch, small):
    from optimiser.outputs import results as outputs

    def broken(*args, **kwargs):
        raise RuntimeError("disk full (simulated)")

    monkeypatch.setattr(outputs, "plot_bplus", broken)
    target = tmp_path / "results"
    with pytest.raises(RuntimeError, match="simulated"):
        outputs.write_results(small["opt"], target, SMALL)
    assert list(tmp_path.iterdir()) == []
    # an earlier results folder of the same name survives a failed rewrite untouched
    monkeypatch.undo()
    outputs.write_results(small["opt"], target, SMALL)
    before = sorted(p.name for p in target.rglob("*"))
    monkeypatch.setattr(outputs, "plot_bplus", broken)
    with pytest.raises(RuntimeError):
        outputs.write_results(small["opt"], target, SMALL)
    assert sorted(p.name for p in target.rglob("*")) == before
    assert [p.name for p in tmp_path.iterdir()] == ["results"]


def test_decode_encode_round_trip(small):
    binding = small["opt"].binding
    X = search.random_population(binding.variables, 10, seed=4)
    candidates = binding.decode(X)
    again = binding.decode(np.array([binding.encode(c) for c in candidates]))
    assert again == candidates


def test_worker_processes_give_the_same_front(small):
    opt = small["opt"]
    two = optimise(load_spec(small["spec_path"]), workers=2)
    np.testing.assert_array_equal(two.scored.F[two.front], opt.scored.F[opt.front])


def test_switchable_pair_is_scored_and_round_trips_through_its_design_file(tmp_path):
    from optimiser.outputs.results import design_yaml

    text = SMALL.replace(
        "    - {topology: centre-tap, valve: 5AR4}\n",
        "    - {topology: centre-tap, valve: 5AR4}\n"
        "    - {topology: switchable, positions: {silicon: {topology: centre-tap, diode: UF4007},"
        " valve: {topology: centre-tap, valve: 5AR4}}}\n")
    binding = CoDesign(load_spec(write(tmp_path / "s.yaml", text)))
    assert any(name.startswith("valve/") for name in binding.check_names)
    X = search.random_population(binding.variables, 4, seed=1)
    X[:, 4] = 2  # the switchable option
    scored = binding.score(binding.designs(binding.decode(X)))
    assert (scored.frame["cost.hardware"] > 0).all()  # the changeover switch is priced
    # the search's screen prices the pair alike and names its checks per position
    F_screen, _ = binding.screen.evaluate(X)
    np.testing.assert_allclose(F_screen[:, 0], scored.F[:, 0], rtol=1e-9)
    assert any(n.startswith("valve/") for n in binding.screen.check_ratio_names(X))
    files = []
    for i, design in enumerate(scored.designs):
        files.append(write(tmp_path / f"d{i}.yaml", design_yaml(design)))
    again = binding.score([load_design(p) for p in files])
    np.testing.assert_allclose(again.F, scored.F, rtol=1e-9)
    np.testing.assert_allclose(again.G, scored.G, rtol=1e-6, atol=1e-9)


def test_a_spec_of_one_node_searches(tmp_path):
    # no feeds at all: the encoding and the screen have nothing after the reservoir
    text = SMALL.replace("""  - name: preamp
    dc_voltage: 250 V
    window: 40 V
    idle_current: 5 mA
    full_power_current: 5 mA
    hum: 60 dB
""", "").replace("""  feeds:
    preamp:
      resistance: {min: 1 kohm, max: 22 kohm, series: E6}
""", "")
    opt = optimise(load_spec(write(tmp_path / "one.yaml", text)))
    assert opt.found and np.all(opt.scored.G[opt.front] <= 0)
