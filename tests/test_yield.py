"""Yield over sampled builds (optimiser.assessment.builds) checked against the outside world:
the corners it must agree with, first-order propagation of the tolerances through the
simulator's own sensitivities, and ngspice on a handful of sampled builds."""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest
from scipy import stats

from optimiser.assessment.builds import _build, _copy, assess_yield, sample_builds
from optimiser.assessment.full import assess, assess_many
from optimiser.assessment.steady_state import evaluate_many
from optimiser.cli import main
from optimiser.inputs.design import load_design
from optimiser.inputs.tolerances import Spread, Tolerances

SPECS = Path(__file__).resolve().parents[1] / "specs"
VALVE = SPECS / "demo-design-valve.yaml"
DEMO_DESIGNS = sorted(SPECS.glob("demo-design-*.yaml"))

#: Only the quantities the corners vary, each inside its corner band: mains and the winder's
#: tolerance (the EMF), and the capacitors; nothing the corners hold at nominal.
INSIDE_CORNERS = Tolerances(
    winding_resistance=Spread(minus=0, plus=0), perveance=Spread(minus=0, plus=0),
    resistors=Spread(minus=0, plus=0))

#: Checks whose figure rises with the EMF and with the capacitance, so that the corner taking
#: both high (high mains, +winder's tolerance, +capacitor tolerance) is their worst build:
#: - voltages (capacitor working voltage, PIV, RMS plate voltage, heater-cathode, bleeder
#:   dissipation V^2/R): the crest and the DC at idle or no load rise with the EMF; a larger C
#:   holds the crest better;
#: - currents at full power (peak plate and diode current, DC and average current, HV winding
#:   RMS, capacitor ripple current, dropping-resistor and choke current): higher EMF means more
#:   current into the resistive and bleeder loads and taller, narrower charging pulses; a larger
#:   reservoir narrows the pulses further (higher peak and RMS for the same charge);
#: - discharge time: RC ln(V0 / V_safe) rises with C and with the starting voltage;
#: - the reservoir against a valve's largest input capacitor rises with C.
#: Left out: the switch-on overshoot and surge (an LC ring whose peak need not be monotone in
#: C), the plate-supply impedance and the transformer's build checks (not toleranced here).
MONOTONE = ("capacitor.*.voltage", "valve.piv", "diode.piv", "valve.plate_voltage_rms",
            "valve.heater_cathode_voltage", "bleeder.*.dissipation", "valve.peak_plate_current",
            "valve.dc_current", "diode.average_current", "transformer.hv_rms_current",
            "capacitor.*.ripple_current", "resistor.*.dissipation", "choke.*.current",
            "bleeder.*.discharge_time", "valve.reservoir_capacitance")


def _monotone(name: str) -> bool:
    import fnmatch

    base = name.split("/", 1)[-1]
    return any(fnmatch.fnmatch(base, pattern) for pattern in MONOTONE)


def test_same_seed_same_builds_and_a_new_seed_new_ones():
    a = assess_yield(VALVE, 40, seed=3)
    b = assess_yield(VALVE, 40, seed=3)
    c = assess_yield(VALVE, 40, seed=4)
    assert a.to_dict() == b.to_dict()
    assert a.to_dict() != c.to_dict()


def test_a_builds_copy_is_pydantics_model_copy():
    d = load_design(SPECS / "demo-design-switchable.yaml")
    cases = [(d.transformer, {"secondary_voltage": 250.0}), (d.nodes[0], {"capacitance": 1e-6}),
             (d.nodes[1].feed, {"resistance": 900.0}), (d.conditions, {"mains_low": 0.0}),
             (d, {"nodes": d.nodes[:2]})]
    for model, update in cases:
        # Source: pydantic's own model_copy(update=...), which _copy repeats step by step
        mine, theirs = _copy(model, update), model.model_copy(update=update)
        assert mine == theirs and mine.__dict__ == theirs.__dict__
        assert mine.__pydantic_fields_set__ == theirs.__pydantic_fields_set__
        assert mine.__pydantic_private__ == theirs.__pydantic_private__
        assert mine.model_dump_json() == theirs.model_dump_json()


def test_builds_stay_inside_their_bands():
    d = load_design(VALVE)
    f = sample_builds(d, 2000, seed=1).factors
    # Source: the design's own corners (conditions: mains 10 %, winder 5 %) and the capacitor
    # series' +/-20 % (parts/data/capacitors.yaml, generic-105C-radial)
    assert np.all(np.abs(f["mains"] - 1) <= 0.10 + 1e-12)
    assert np.all(np.abs(f["secondary_voltage"] - 1) <= 0.05 + 1e-12)
    assert np.all(np.abs(f["capacitors"] - 1) <= 0.20 + 1e-12)
    # truncated normal at 3 sigma: its standard deviation is 0.986 sigma (scipy's truncnorm)
    sigma = 0.10 / 3
    assert np.std(f["mains"]) == pytest.approx(stats.truncnorm(-3, 3).std() * sigma, rel=0.06)


@pytest.mark.parametrize("path", [p for p in DEMO_DESIGNS if assess(p, detail=False).passed],
                         ids=lambda p: p.stem)
def test_a_design_passing_every_corner_has_yield_one_on_the_monotone_checks(path):
    y = assess_yield(path, 300, seed=2, tolerances=INSIDE_CORNERS)
    monotone = [c for c in y.checks() if _monotone(c["name"])]
    assert monotone, "no monotone check applies"
    failing = [c for c in monotone if c["yield"] < 1.0]
    assert not failing, failing


def _sensitivities(design, step=1e-3):
    """d(idle B+ at each node) / d(each sampled factor), by central differences of the
    simulator itself, and the factors' standard deviations."""
    f0 = sample_builds(design, 1, seed=0).factors
    ones = {k: np.ones_like(v) if k != "ambient" else v for k, v in f0.items()}
    keys = [(k, None) for k in ("mains", "secondary_voltage", "winding_resistance", "perveance")]
    keys += [(k, n) for k in ("capacitors", "feeds", "bleeders") for n in range(len(design.nodes))]
    designs = []
    for key, n in keys:
        for sign in (+1, -1):
            f = {k: v.copy() for k, v in ones.items()}
            if n is None:
                f[key][0] += sign * step
            else:
                f[key][0, n] += sign * step
            designs.append(_build(design, f, 0))
    table = assess_many(designs, dynamics=False).frame
    names = [n.name for n in design.nodes]
    v = table[[f"{n}.idle_voltage" for n in names]].to_numpy(float)
    grads = (v[0::2] - v[1::2]) / (2 * step)
    return keys, grads


def test_idle_bplus_spread_agrees_with_first_order_propagation():
    design = load_design(VALVE)
    n = 1500
    builds = sample_builds(design, n, seed=5)
    table = assess_many(builds.designs, dynamics=False).frame
    names = [node.name for node in design.nodes]
    sampled = table[[f"{x}.idle_voltage" for x in names]].to_numpy(float)
    keys, grads = _sensitivities(design)
    f = builds.factors
    columns = [f[k] if m is None else f[k][:, m] for k, m in keys]
    # the factors' own spread from the draws; first order: var(V) = sum (dV/dx)^2 var(x)
    # (independent factors; the sampled covariances are near zero)
    std_x = np.array([np.std(c) for c in columns])
    predicted_std = np.sqrt(((grads * std_x[:, None]) ** 2).sum(axis=0))
    nominal = assess(design, detail=False).nodes
    for k, name in enumerate(names):
        # Source: sampling error of a standard deviation, s / sqrt(2 (N - 1)); of a mean,
        # s / sqrt(N); 4 of them, plus 3 % (std) and 0.2 % of B+ (mean) for the second-order
        # terms a first-order propagation leaves out
        s = sampled[:, k].std(ddof=1)
        assert s == pytest.approx(predicted_std[k], rel=4 / np.sqrt(2 * (n - 1)) + 0.03), name
        mean_error = 4 * s / np.sqrt(n) + 0.002 * nominal[k]["idle_voltage"]
        assert abs(sampled[:, k].mean() - nominal[k]["idle_voltage"]) <= mean_error, name


def test_evaluate_yield_json_and_text(capsys):
    assert main(["evaluate", str(VALVE), "--yield", "30", "--seed", "1", "--json"]) == 0
    out = json.loads(capsys.readouterr().out)
    y = out["yield"]
    assert y["samples"] == 30 and 0 <= y["fraction"] <= 1
    assert {"name", "yield", "p1", "p50", "p99"} <= set(y["checks"][0])
    assert any(n["name"] == "plates.idle_voltage" for n in y["nodes"])
    assert main(["evaluate", str(VALVE), "--yield", "30"]) == 0
    text = capsys.readouterr().out
    assert "most likely to fail" in text and "sampled builds" in text


def test_design_report_shows_the_yield_of_its_sampled_builds(tmp_path, capsys):
    y = assess_yield(VALVE, 30, seed=2)
    out = tmp_path / "r.html"
    assert main(["report", str(VALVE), "--yield", "30", "--seed", "2", "--out", str(out)]) == 0
    page = out.read_text(encoding="utf-8")
    assert "Yield over sampled builds" in page
    assert f"30 sampled builds (seed 2) from the design's tolerances: {100 * y.fraction:.1f} %" \
        in page
    plain = tmp_path / "plain.html"
    assert main(["evaluate", str(VALVE), "--report", str(plain)]) == 0
    assert "Yield over sampled builds" not in plain.read_text(encoding="utf-8")
    capsys.readouterr()


def test_evaluate_yield_refuses_zero_builds(capsys):
    assert main(["evaluate", str(VALVE), "--yield", "0"]) == 2
    assert "--yield" in capsys.readouterr().err


@pytest.mark.ngspice
def test_sampled_builds_agree_with_ngspice():
    import spice
    from optimiser.outputs.results import design_document

    from test_against_ngspice import discrepancies

    design = load_design(VALVE)
    builds = sample_builds(design, 3, seed=7)
    solved = evaluate_many(builds.designs)
    for j, build in enumerate(builds.designs):
        doc = design_document(build)
        perveance = build.rectifier.valve
        from optimiser.parts import catalogue as parts

        doc["rectifier"]["valve"] = {"perveance": repr(
            parts.find_part("valve", perveance).perveance * build._perveance_factor)}
        expected = spice.simulate(doc)
        row = solved.iloc[j]
        got = {k: row[k] for k in solved.columns if "." not in k}
        got["nodes"] = [{key: row[f"{n.name}.{key}"] for key in
                         ("dc_voltage", "ripple_pp", "capacitor_rms_current")}
                        for n in build.nodes]
        problems = discrepancies(got, expected)
        assert not problems, f"build {j}:\n  " + "\n  ".join(problems)


def test_a_search_with_robustness_reports_each_listed_designs_yield(tmp_path):
    # demo-valve asks robustness: {samples: 200, min_yield: 0.9} (issue 14's acceptance)
    import pandas as pd

    from optimiser.cli import main

    out = tmp_path / "run"
    assert main(["optimise", "specs/demo-valve.yaml", "--out", str(out), "--quiet"]) == 0
    pareto = pd.read_csv(out / "pareto.csv")
    column = [c for c in pareto.columns if c.split(" ")[0] == "yield"]
    assert column and pareto[column[0]].between(0, 1).all()
    branches = pd.read_csv(out / "branches.csv")
    met = branches[branches["feasible"]]
    assert len(met) and met["yield"].between(0, 1).all()
    summary = (out / "summary.md").read_text(encoding="utf-8")
    assert "sampled builds meet every constraint" in summary
