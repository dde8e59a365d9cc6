"""Command line: ``railwright evaluate | transformer | optimise | report``.

Only parses arguments, calls the library and prints. Exit statuses (README, "Exit statuses"):
0 every check passes (or a front was found), 1 evaluated but a check fails (or nothing meets the
spec), 2 bad input with one line per problem, 3 an internal error (a bug; one line, no traceback
unless RAILWRIGHT_DEBUG=1), 130 interrupted.
"""

from __future__ import annotations

import argparse
import json
import math
import sys

from optimiser.codesign.objective_table import OBJECTIVES
from optimiser.inputs.design import DesignError
from optimiser.formats.units import format_quantity
from optimiser.formats.writing import CAUTION, write_text_atomic

EXIT_PASSED = 0
#: ``evaluate``: the design was evaluated but a check fails; ``optimise``: no design meets the spec
EXIT_CHECK_FAILS = 1
EXIT_NOTHING_FOUND = 1
#: bad input: a file, an option, or a design with no working steady state
EXIT_BAD_INPUT = 2
#: a bug in Railwright (reported in one line; RAILWRIGHT_DEBUG=1 shows the traceback)
EXIT_INTERNAL = 3
EXIT_INTERRUPTED = 130



def _parser() -> argparse.ArgumentParser:
    p = argparse.ArgumentParser(
        prog="railwright",
        description="Co-design a valve amplifier's power transformer and HV supply.")
    sub = p.add_subparsers(dest="command", required=True)
    op = sub.add_parser("optimise", help="search a spec for the Pareto front of its "
                        "objectives (default cost, regulation or sag error, rectifier stress), "
                        "a front per rectifier branch")
    op.add_argument("spec", help="spec file (YAML)")
    op.add_argument("--out", metavar="DIR", help="results folder (default: results/<spec name>)")
    op.add_argument("--seed", type=int, help="random seed (default: the spec's)")
    op.add_argument("--generations", type=int, help="generations (default: the spec's)")
    op.add_argument("--population", type=int, help="designs per generation (default: the spec's)")
    op.add_argument("--workers", type=int, help="worker processes for searches that need "
                    "them (the co-design screen runs in one process and uses the machine's "
                    "cores itself; default: the spec's)")
    op.add_argument("--quiet", action="store_true", help="no progress bar")
    op.add_argument("--report", action="store_true",
                    help="also write report.html, one self-contained page, into the results folder")
    ev = sub.add_parser("evaluate", help="steady state and checks of one concrete supply")
    ev.add_argument("design", help="design file (YAML)")
    ev.add_argument("--json", action="store_true", help="print one JSON object instead of tables")
    ev.add_argument("--report", metavar="FILE",
                    help="also write a self-contained HTML report of the design to FILE")
    ev.add_argument("--yield", dest="builds", type=int, metavar="N", help="also sample N "
                    "builds from the design's tolerances and report the fraction passing")
    ev.add_argument("--seed", type=int, default=0, help="seed of the sampled builds (default 0)")
    tr = sub.add_parser("transformer", help="the order sheet of a design's physical transformer")
    tr.add_argument("design", help="design file (YAML) whose transformer has a build block")
    tr.add_argument("--json", action="store_true", help="print the order sheet as JSON")
    tr.add_argument("--markdown", metavar="FILE", help="also write the order sheet as Markdown")
    rp = sub.add_parser("report", help="one self-contained HTML page for a search run or a "
                        "design")
    rp.add_argument("path", help="a results folder written by railwright optimise, or a design "
                    "file (YAML)")
    rp.add_argument("--out", metavar="FILE",
                    help="where to write the page (default: report.html inside the results "
                         "folder; for a design file, <design stem>.report.html in the current "
                         "folder)")
    rp.add_argument("--yield", dest="builds", type=int, metavar="N", help="for a design file: "
                    "also sample N builds from its tolerances and show their yield")
    rp.add_argument("--seed", type=int, default=0, help="seed of the sampled builds (default 0)")
    return p


def _report(args) -> int:
    from pathlib import Path

    from optimiser.outputs.report import ResultsError, design_report, results_report, write_report

    source = Path(args.path)
    try:
        if source.is_dir():
            out = Path(args.out) if args.out else source / "report.html"
            page = results_report(source, link_base=out.parent)
        else:
            out = Path(args.out) if args.out else Path.cwd() / f"{source.stem}.report.html"
            args.design = source
            page = design_report(source, builds=_sampled_yield(args))
    except ResultsError as exc:
        print(f"error: {exc}", file=sys.stderr)
        return EXIT_BAD_INPUT
    try:
        write_report(page, out)
    except OSError as exc:
        print(f"error: cannot write {out}: {exc.strerror or exc}", file=sys.stderr)
        return EXIT_BAD_INPUT
    print(f"report written to {out}")
    return 0


def _transformer(args) -> int:
    from optimiser.inputs.design import load_design
    from optimiser.outputs.ordersheet import order_sheet_for, order_sheet_markdown

    design = load_design(args.design)
    if design.transformer_design is None:
        raise DesignError([f"{args.design}: transformer: no build block; the order sheet needs a "
                           "physical transformer (see specs/demo-design-build.yaml)"])
    sheet = order_sheet_for(design)
    text = order_sheet_markdown(sheet)
    if args.markdown:
        write_text_atomic(args.markdown, text)
    print(json.dumps(json_ready(sheet), indent=2, allow_nan=False) if args.json else text)
    return 0


def _evaluate(args) -> int:
    from optimiser.assessment.full import assess

    result = assess(args.design, detail=False)
    sampled = _sampled_yield(args)
    if args.json:
        out = dict(result.to_dict(), **({"yield": sampled.to_dict()} if sampled else {}))
        print(json.dumps(json_ready(out), indent=2, allow_nan=False))
    elif hasattr(result, "positions"):
        print(render_pair(result))
    else:
        print(render_assessment(result))
    if sampled is not None and not args.json:
        from optimiser.outputs.yield_figures import yield_text

        print("\n" + yield_text(sampled))
    if args.report:
        from optimiser.outputs.report import design_report, write_report

        path = write_report(design_report(args.design, builds=sampled), args.report)
        # stderr, so that --json output stays one JSON object
        print(f"report written to {path}", file=sys.stderr)
    return EXIT_PASSED if result.passed else EXIT_CHECK_FAILS


def _sampled_yield(args):
    """The yield over ``--yield N`` sampled builds (None without the option)."""
    if args.builds is None:
        return None
    if args.builds < 1:
        raise DesignError([f"--yield: the number of builds must be at least 1, got {args.builds}"])
    from optimiser.assessment.builds import assess_yield

    return assess_yield(args.design, args.builds, seed=args.seed)


def render_pair(pair) -> str:
    """Both positions of a switchable pair: what the switch changes, then each in full."""
    names = list(pair.positions)
    a, b = (pair.positions[n] for n in names)
    f = format_quantity
    lines = [f"Switchable pair: '{names[0]}' and '{names[1]}' side by side", ""]
    header = f"  {'':<34}{names[0]:>16}{names[1]:>16}"
    lines += [header, "  " + "-" * (len(header) - 2)]
    for na, nb in zip(a.nodes, b.nodes):
        for label, key, unit in (("B+ idle", "idle_voltage", "V"),
                                 ("B+ full power", "full_power_voltage", "V"),
                                 ("sag depth", "depth", "V"),
                                 ("switch-on peak", "switch_on_peak", "V")):
            lines.append(f"  {na['name'] + ' ' + label:<34}{f(na[key], unit, 4):>16}"
                         f"{f(nb[key], unit, 4):>16}")
    for label, fa, fb in (
            ("rectifier peak current", a.steady.rectifier_peak_current,
             b.steady.rectifier_peak_current),
            ("winding RMS current", a.steady.secondary_rms_current,
             b.steady.secondary_rms_current)):
        lines.append(f"  {label:<34}{f(fa, 'A'):>16}{f(fb, 'A'):>16}")
    lines.append(f"  {'rectifier stress':<34}{a.rectifier_stress:>16.2f}{b.rectifier_stress:>16.2f}")
    lines.append(f"  {'all checks pass':<34}{str(a.passed):>16}{str(b.passed):>16}")
    for name in names:
        lines += ["", "=" * 30 + f" position '{name}' " + "=" * 30,
                  render_assessment(pair.positions[name]).rsplit("\n\n", 1)[0]]
    lines += ["", CAUTION]
    return "\n".join(lines)


def json_ready(value):
    """Strict JSON: NaN and infinities (a figure that does not apply, a node that never
    discharges) become null."""
    if isinstance(value, dict):
        return {k: json_ready(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [json_ready(v) for v in value]
    if isinstance(value, float) and not math.isfinite(value):
        return None
    return value


def render_assessment(a) -> str:
    """Plain-text view of an :class:`~optimiser.assessment.Assessment`: figures, then verdicts."""
    f = format_quantity
    lines = [render_supply(a.steady, caution=False), "", "B+ at idle and full power, sag, "
             "switch-on and switch-off", ""]
    header = (f"  {'node':<12}{'idle':>9}{'full':>9}{'drop':>7}{'window (corners)':>21}"
              f"{'attack':>9}{'recover':>9}{'switch-on':>11}{'to safe':>9}")
    lines += [header, "  " + "-" * (len(header) - 2)]

    def secs(x):
        return "-" if x is None else f"{1e3 * x:.0f} ms" if x < 1 else f"{x:.1f} s"

    for n in a.nodes:
        window = f"{n['window_min']:.0f}-{n['window_max']:.0f} V"
        t_safe = "never" if not math.isfinite(n["discharge_time"]) else secs(n["discharge_time"])
        lines.append(f"  {n['name']:<12}{n['idle_voltage']:>7.1f} V{n['full_power_voltage']:>7.1f} V"
                     f"{n['static_drop_percent']:>6.1f}%{window:>21}{secs(n['attack_time']):>9}"
                     f"{secs(n['recovery_time']):>9}{n['switch_on_peak']:>9.0f} V{t_safe:>9}")
    so = a.switch_on
    lines += ["", f"  switch-on surge at the mains crest: {f(so['surge_current'], 'A')}; "
              f"rectifier conducts after {so['rectifier_start']:.0f} s, output valves after "
              f"{so['load_start']:.0f} s"]
    lines += ["", "Checks (worst corner; ratio <= 1 is inside the rating)", ""]
    header = f"  {'':4}{'check':<34}{'worst':>11}{'limit':>11}{'ratio':>7}  source"
    lines += [header, "  " + "-" * 100]
    for c in a.checks:
        mark = "ok" if c.passed else "FAIL"
        lines.append(f"  {mark:<4}{c.name:<34}{f(c.value, c.unit):>11}{f(c.limit, c.unit):>11}"
                     f"{c.ratio:>7.2f}  {c.source[:60]}")
    stress = a.rectifier_stress
    lines += ["", f"  rectifier stress: {stress:.2f}" if math.isfinite(stress) else
              "  rectifier stress: no rectifier ratings known (part given by parameters)"]
    failed = [c.name for c in a.checks if not c.passed]
    lines.append(f"  verdict: {'all checks pass' if not failed else 'FAILS ' + ', '.join(failed)}")
    life = a.life
    lines += ["", "Life (estimates)"]
    for cap in life["capacitors"]:
        if cap["life_hours"] is not None:
            lines.append(f"  {cap['name']:<12} capacitor core {cap['core_temperature']:.0f} degC, "
                         f"about {cap['life_hours']:,.0f} h ({cap['series']})")
    if life["rectifier_valve"]:
        v = life["rectifier_valve"]
        lines.append(f"  {v['name']} cathode loading {100 * v['cathode_loading']:.0f} % of its "
                     f"rating; relative life index {v['relative_life']:.1f}")
    lines += ["", CAUTION]
    return "\n".join(lines)


def render_supply(result, caution=True) -> str:
    """A plain-text view of a :class:`~optimiser.assessment.steady_state.SupplyResult`."""
    f = format_quantity
    lines = ["B+ nodes at steady state (nominal mains)", ""]
    header = f"  {'node':<14}{'DC':>10}{'ripple p-p':>13}{'ripple rms':>13}{'cap. I rms':>13}"
    lines += [header, "  " + "-" * (len(header) - 2)]
    for n in result.nodes:
        lines.append(f"  {n.name:<14}{f(n.dc_voltage, 'V', 4):>10}{f(n.ripple_pp, 'V'):>13}"
                     f"{f(n.ripple_rms, 'V'):>13}{f(n.capacitor_rms_current, 'A'):>13}")
    r = result
    lines += [
        "",
        "Rectifier (per element) and winding",
        f"  peak current        {f(r.rectifier_peak_current, 'A')}",
        f"  average current     {f(r.rectifier_average_current, 'A')}",
        f"  RMS current         {f(r.rectifier_rms_current, 'A')}",
        f"  conduction          {r.conduction_angle:.0f} degrees of the mains cycle",
        f"  peak inverse volts  {f(r.piv, 'V')}",
        f"  winding RMS current {f(r.secondary_rms_current, 'A')}",
        "",
        "Power",
        f"  from the winding    {f(r.input_power, 'W')}",
        f"  into the loads      {f(r.load_power, 'W')}",
        f"  rectifier loss      {f(r.rectifier_loss, 'W')}",
        f"  winding-path loss   {f(r.winding_loss, 'W')}",
        f"  feeds and ESR loss  {f(r.ladder_loss, 'W')}",
    ]
    if not r.converged:
        lines += ["", "WARNING: the periodic solution did not reach its tolerance."]
    if caution:
        lines += ["", CAUTION]
    return "\n".join(lines)


def _optimise(args) -> int:
    import time
    from pathlib import Path

    from optimiser.codesign.run import optimise
    from optimiser.outputs.results import render_impossible, write_results
    from optimiser.inputs.spec import load_spec, spec_name

    for flag in ("seed", "generations", "population", "workers"):
        value = getattr(args, flag)
        if value is not None and value < (0 if flag == "seed" else 1):
            raise DesignError([f"--{flag}: must be at least {0 if flag == 'seed' else 1}, "
                               f"got {value}"])
    spec = load_spec(args.spec)
    spec_text = Path(args.spec).read_text(encoding="utf-8")
    name = spec_name(spec, args.spec)
    start = time.perf_counter()
    result = optimise(spec, population=args.population, generations=args.generations,
                      seed=args.seed, workers=args.workers,
                      progress=not args.quiet and sys.stderr.isatty())
    unworkable = int(result.scored.frame["unworkable"].astype(bool).sum())
    if unworkable:
        print(f"{unworkable} of the {len(result.scored.frame)} designs re-checked in full had no "
              "working steady state (no convergence or a collapsed node) and count as "
              "infeasible", file=sys.stderr)
    if not result.found:
        print(render_impossible(result), file=sys.stderr)
        return EXIT_NOTHING_FOUND
    out = Path(args.out) if args.out else Path("results") / name
    elapsed = time.perf_counter() - start
    write_results(result, out, spec_text, elapsed=elapsed)
    report = None
    if args.report:
        from optimiser.outputs.report import write_results_report

        report = write_results_report(out)
    knee = result.scored.frame.iloc[result.knee]
    met = sum(bool(len(r)) for r in result.branch_fronts.values())
    print(f"{len(result.front)} Pareto designs ({len(result.listed)} on the fronts of "
          f"{met} of {len(result.branch_fronts)} rectifier branches) in {elapsed:.1f} s, "
          f"written to {out}/")
    print(f"recommended: {knee['rectifier']}, " + ", ".join(
        f"{name} {OBJECTIVES[name].csv_scale * knee[name]:.4g}"
        + ("" if OBJECTIVES[name].unit in ("-", "") else f" {OBJECTIVES[name].unit}")
        for name in result.binding.objective_names) + f" (see {out}/summary.md)")
    if report is not None:
        print(f"report written to {report}")
    print(CAUTION)
    return 0


COMMANDS = {"optimise": _optimise, "evaluate": _evaluate, "transformer": _transformer,
            "report": _report}


def main(argv=None) -> int:
    import os

    from optimiser.formats.cache import CompileWatch

    args = _parser().parse_args(argv)
    try:
        with CompileWatch() as watch:
            status = COMMANDS[args.command](args)
    except DesignError as exc:
        for line in exc.problems:
            print(f"error: {line}", file=sys.stderr)
        return EXIT_BAD_INPUT
    except LookupError as exc:
        print(f"error: {exc.args[0] if exc.args else exc}", file=sys.stderr)
        return EXIT_BAD_INPUT
    except KeyboardInterrupt:
        print("interrupted", file=sys.stderr)
        return EXIT_INTERRUPTED
    except Exception as exc:  # a bug: one line, not a traceback, unless asked for
        if os.environ.get("RAILWRIGHT_DEBUG"):
            raise
        text = " ".join(str(exc).split())[:300]
        print(f"internal error (a bug in Railwright; RAILWRIGHT_DEBUG=1 shows where): "
              f"{type(exc).__name__}: {text}", file=sys.stderr)
        return EXIT_INTERNAL
    if watch.summary():
        print(watch.summary(), file=sys.stderr)
    return status
