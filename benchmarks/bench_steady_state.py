"""Side-by-side speed of the periodic steady state: ngspice per design vs Railwright's vectorised solver.

One run times, on the same machine:

* ngspice (tests/spice.py, run to periodic steady state) on each invented design of
  ``spice.invented_designs()`` and on bridge ladders of 1..5 nodes, in two settings (both start
  with every capacitor pre-charged to the harness's estimate of its DC, ``IC=`` with ``uic``, and
  stop at the first run whose estimated distance from periodic steady state is within the same
  tolerance, 2e-6 of the secondary peak):

  - *fine*: max step T/2000, reltol 1e-6 (the cross-check harness's own setting);
  - *coarse*: what an experienced user would pick for speed: max step T/200 and reltol 1e-5,
    falling back to T/500, then T/1000, for a design the coarser step cannot settle to the
    tolerance (its cycle-to-cycle noise stays above it; the table says which step it took);
* ``optimiser.evaluate_many`` on populations of N = 1, 10, 100, 1000, 10000 random variations of
  those designs, and on populations of bridge ladders of 1..5 nodes;

and prints designs per second, time per design, the speed-up over ngspice per design, and how the
time grows with N and with ladder length. The tables are also written as markdown to
``benchmarks/out/steady_state.md`` (gitignored).

Usage::

    python benchmarks/bench_steady_state.py                 # everything
    python benchmarks/bench_steady_state.py --ngspice-only  # the reference half only
    python benchmarks/bench_steady_state.py --sizes 1 10 100 --seed 3
"""

from __future__ import annotations

import argparse
import copy
import math
import platform
import statistics
import sys
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT / "tests"))

import spice  # noqa: E402  (tests/spice.py, the ngspice reference harness)
from optimiser.formats.units import format_quantity, parse_quantity  # noqa: E402

SIZES = (1, 10, 100, 1000, 10000)
LADDER_LENGTHS = (1, 2, 3, 4, 5)
LADDER_POPULATION = 1000
OUT = ROOT / "benchmarks" / "out" / "steady_state.md"


# ----------------------------------------------------------------------------------------------
# Designs


def _scaled(text: str, dimension: str, factor: float, unit: str) -> str:
    """A unit string scaled by ``factor``, written back with an engineering prefix of ``unit``."""
    return format_quantity(parse_quantity(text, dimension) * factor, unit, digits=6)


_VARIED = (
    # (block path, key, dimension, SI unit, half-width of the log-uniform factor)
    (("transformer",), "secondary_voltage", "voltage", "V", 0.15),
    (("transformer",), "secondary_resistance", "resistance", "ohm", 0.4),
)
_NODE_VARIED = (
    ("capacitance", "capacitance", "F", 0.5),
    ("esr", "resistance", "ohm", 0.5),
)


def vary(design: dict, rng: np.random.Generator) -> dict:
    """A random variation of an invented design: supply, winding, capacitors, loads and feeds."""
    out = copy.deepcopy(design)

    def factor(width):
        return float(np.exp(rng.uniform(-width, width)))

    for path, key, dimension, unit, width in _VARIED:
        block = out
        for part in path:
            block = block[part]
        block[key] = _scaled(block[key], dimension, factor(width), unit)
    for node in out["nodes"]:
        for key, dimension, unit, width in _NODE_VARIED:
            if key in node:
                node[key] = _scaled(node[key], dimension, factor(width), unit)
        load = node.get("load", {})
        if "current" in load:
            load["current"] = _scaled(load["current"], "current", factor(0.3), "A")
        if "resistance" in load:
            load["resistance"] = _scaled(load["resistance"], "resistance", factor(0.3), "ohm")
        feed = node.get("feed", {})
        if "resistance" in feed:
            feed["resistance"] = _scaled(feed["resistance"], "resistance", factor(0.3), "ohm")
    return out


def ladder(length: int) -> dict:
    """Invented test case: a silicon bridge feeding an RC ladder of ``length`` nodes."""
    nodes = [{"name": "n1", "capacitance": "100 uF", "load": {"current": "150 mA"}}]
    for k in range(2, length + 1):
        nodes.append(
            {"name": f"n{k}", "feed": {"resistance": f"{470 * k} ohm"}, "capacitance": "47 uF",
             "load": {"current": f"{20 / k:.3g} mA"}}
        )
    design = spice.invented_designs()["bridge"]
    design["nodes"] = nodes
    return design


def population(designs: list[dict], size: int, rng: np.random.Generator) -> list[dict]:
    return [vary(designs[i % len(designs)], rng) for i in range(size)]


# ----------------------------------------------------------------------------------------------
# Timing


def time_ngspice(designs: dict[str, dict]) -> list[dict]:
    rows = []
    for name, design in designs.items():
        result = spice.simulate(design)
        rows.append(
            {
                "design": name,
                "topology": design["rectifier"]["topology"],
                "nodes": len(design["nodes"]),
                "seconds": result["wall_time"],
                "cycles": result["steady_state"]["cycles"],
                "runs": result["steady_state"]["runs"],
                "settle": result["steady_state"]["settle_error"],
                "dc": result["nodes"][0]["dc_voltage"],
                "ripple": result["nodes"][0]["ripple_pp"],
            }
        )
    return rows


#: The coarse setting's (steps per mains cycle, reltol), tried in turn until one settles.
COARSE = ((200, 1e-5), (500, 1e-5), (1000, 1e-5))


def time_ngspice_coarse(designs: dict[str, dict]) -> list[dict]:
    """ngspice at the coarse setting: each design at the first (step, reltol) of COARSE that
    reaches the tolerance; the wall time counts the failed tries too (a user would pay them)."""
    rows = []
    for name, design in designs.items():
        spent = 0.0
        for steps, reltol in COARSE:
            period = 1.0 / parse_quantity(design["mains"]["frequency"], "frequency")
            started = time.perf_counter()
            try:
                result = spice.simulate(design, step=period / steps, reltol=reltol)
            except spice.SpiceError:
                spent += time.perf_counter() - started
                continue
            rows.append({"design": name, "steps": steps, "reltol": reltol,
                         "seconds": spent + result["wall_time"],
                         "cycles": result["steady_state"]["cycles"],
                         "runs": result["steady_state"]["runs"],
                         "settle": result["steady_state"]["settle_error"],
                         "dc": result["nodes"][0]["dc_voltage"],
                         "ripple": result["nodes"][0]["ripple_pp"]})
            break
        else:
            raise SystemExit(f"{name}: no coarse setting reached the tolerance")
    return rows


def time_call(function, argument, minimum_seconds: float = 0.5, most_repeats: int = 20) -> float:
    """Median wall time of ``function(argument)``, repeated until ``minimum_seconds`` have passed. [s]"""
    times = []
    started = time.perf_counter()
    while not times or (time.perf_counter() - started < minimum_seconds and len(times) < most_repeats):
        t0 = time.perf_counter()
        function(argument)
        times.append(time.perf_counter() - t0)
    return statistics.median(times)


def growth_exponent(sizes, seconds) -> float:
    """Slope of log(time) against log(size) between the two largest sizes (1 = linear). [-]"""
    if len(sizes) < 2:
        return float("nan")
    return math.log(seconds[-1] / seconds[-2]) / math.log(sizes[-1] / sizes[-2])


# ----------------------------------------------------------------------------------------------
# Report


def table(header: list[str], rows: list[list]) -> str:
    lines = ["| " + " | ".join(header) + " |", "|" + "|".join("---" for _ in header) + "|"]
    lines += ["| " + " | ".join(str(cell) for cell in row) + " |" for row in rows]
    return "\n".join(lines)


def seconds(value: float) -> str:
    return format_quantity(value, "s")


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--sizes", type=int, nargs="+", default=list(SIZES), help="population sizes N")
    parser.add_argument("--ladder-population", type=int, default=LADDER_POPULATION)
    parser.add_argument("--ngspice-only", action="store_true", help="time the ngspice reference only")
    parser.add_argument("--seed", type=int, default=2024)
    parser.add_argument("--out", type=Path, default=OUT, help="markdown report path")
    args = parser.parse_args(argv)

    if not spice.spice_available():
        print("ngspice not found on PATH; install Debian package ngspice", file=sys.stderr)
        return 1
    evaluate_many = None
    if not args.ngspice_only:
        import optimiser

        evaluate_many = getattr(optimiser, "evaluate_many", None)
        if evaluate_many is None:
            print("optimiser.evaluate_many is not there yet (solver not merged); use --ngspice-only", file=sys.stderr)
            return 1

    rng = np.random.default_rng(args.seed)
    designs = spice.invented_designs()
    sections = [
        "# Periodic steady state: ngspice vs Railwright",
        f"Machine: {platform.processor() or platform.machine()}, Python {platform.python_version()}, "
        f"seed {args.seed}. ngspice: tests/spice.py from capacitors pre-charged to the estimated DC "
        "(IC=, uic) to a settle error <= 2e-6 of the secondary peak; fine setting max step T/2000, "
        "reltol 1e-6; coarse setting max step T/200, reltol 1e-5 (T/500, then T/1000, where the "
        "coarser step does not settle).",
    ]

    print("ngspice, invented designs ...", file=sys.stderr)
    reference = time_ngspice(designs)
    per_design_ngspice = statistics.mean(row["seconds"] for row in reference)
    sections.append("## ngspice per design (invented designs)")
    sections.append(
        table(
            ["design", "topology", "nodes", "cycles", "runs", "settle error", "wall time"],
            [[r["design"], r["topology"], r["nodes"], r["cycles"], r["runs"], f"{r['settle']:.1e}", seconds(r["seconds"])]
             for r in reference],
        )
    )
    sections.append(f"Mean: {seconds(per_design_ngspice)} per design, {1 / per_design_ngspice:.3g} designs/s.")

    print("ngspice, invented designs, coarse setting ...", file=sys.stderr)
    coarse = time_ngspice_coarse(designs)
    per_design_coarse = statistics.mean(row["seconds"] for row in coarse)
    fine_by_name = {r["design"]: r for r in reference}
    sections.append("## ngspice per design, coarse setting (pre-charged, coarse step)")
    sections.append(
        table(
            ["design", "max step", "reltol", "cycles", "runs", "settle error", "wall time",
             "reservoir DC, fine -> coarse [V]", "ripple p-p, fine -> coarse [V]"],
            [[r["design"], f"T/{r['steps']}", f"{r['reltol']:g}", r["cycles"], r["runs"],
              f"{r['settle']:.1e}", seconds(r["seconds"]),
              f"{fine_by_name[r['design']]['dc']:.2f} -> {r['dc']:.2f}",
              f"{fine_by_name[r['design']]['ripple']:.3f} -> {r['ripple']:.3f}"] for r in coarse],
        )
    )
    median_fine = statistics.median(row["seconds"] for row in reference)
    median_coarse = statistics.median(row["seconds"] for row in coarse)
    sections.append(f"Mean: {seconds(per_design_coarse)} per design, {1 / per_design_coarse:.3g} designs/s "
                    f"({per_design_ngspice / per_design_coarse:.2g}x the fine setting's speed). Median: "
                    f"{seconds(median_coarse)} (fine setting {seconds(median_fine)}).")

    print("ngspice, ladders ...", file=sys.stderr)
    ladder_reference = time_ngspice({f"ladder-{n}": ladder(n) for n in LADDER_LENGTHS})
    ladder_ngspice = {row["nodes"]: row["seconds"] for row in ladder_reference}

    if evaluate_many is not None:
        # Warm-up: compile whatever the solver compiles just in time, outside the timings.
        evaluate_many(list(designs.values()) + [ladder(n) for n in LADDER_LENGTHS])
        rows = []
        timings = []
        for size in args.sizes:
            print(f"solver, N = {size} ...", file=sys.stderr)
            batch = population(list(designs.values()), size, rng)
            elapsed = time_call(evaluate_many, batch)
            timings.append(elapsed)
            per = elapsed / size
            rows.append([size, seconds(elapsed), f"{size / elapsed:.4g}", seconds(per),
                         f"{per_design_ngspice / per:.3g}x", f"{per_design_coarse / per:.3g}x",
                         f"{median_coarse / per:.3g}x"])
        sections.append("## Railwright `evaluate_many`, population of varied invented designs")
        sections.append(table(["N", "wall time", "designs/s", "per design", "speed-up vs ngspice, fine",
                               "speed-up vs ngspice, coarse",
                               "vs coarse median"], rows))
        sections.append(
            f"Growth with N between the two largest sizes: time ∝ N^{growth_exponent(args.sizes, timings):.2f}."
        )

    ladder_rows = []
    ladder_times = []
    for length in LADDER_LENGTHS:
        row = [length, seconds(ladder_ngspice[length])]
        if evaluate_many is not None:
            print(f"solver, ladder of {length} ...", file=sys.stderr)
            batch = population([ladder(length)], args.ladder_population, rng)
            elapsed = time_call(evaluate_many, batch)
            per = elapsed / args.ladder_population
            ladder_times.append(per)
            row += [seconds(per), f"{ladder_ngspice[length] / per:.3g}x"]
        ladder_rows.append(row)
    header = ["ladder nodes", "ngspice per design"]
    if evaluate_many is not None:
        header += [f"solver per design (N = {args.ladder_population})", "speed-up"]
    sections.append("## Ladder length")
    sections.append(table(header, ladder_rows))
    if ladder_times:
        sections.append(
            f"Solver time per design grows {ladder_times[-1] / ladder_times[0]:.2f}x from 1 to "
            f"{LADDER_LENGTHS[-1]} nodes; ngspice {ladder_ngspice[LADDER_LENGTHS[-1]] / ladder_ngspice[1]:.2f}x."
        )

    report = "\n\n".join(sections) + "\n"
    print(report)
    args.out.parent.mkdir(parents=True, exist_ok=True)
    args.out.write_text(report, encoding="utf-8")
    print(f"written to {args.out}", file=sys.stderr)
    return 0


if __name__ == "__main__":
    sys.exit(main())
