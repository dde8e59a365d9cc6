"""Benchmark: how close the default search comes to the best front we can find (issue 11).

Run from the repository root::

    python benchmarks/bench_front_quality.py                       # both demo specs
    python benchmarks/bench_front_quality.py specs/demo-valve.yaml --reference-seeds 3

For each spec it builds a *reference front*: several long runs (population and generations
scaled up, seeds of their own) and the default runs of seeds 1-5, every feasible design of each
run's full re-check pooled, and the non-dominated set of the pool taken, overall and within each
rectifier branch. Then for each default run (the spec's own population and generations, seeds
1-5) it reports

- its hypervolume as a fraction of the reference front's, overall (of the run's overall front,
  as reported: non-dominated at the spec's ``search.resolution``; and of every feasible design
  the run assessed, non-dominated exactly, which is what the search found before the report
  set aside designs within the resolution of another) and per branch (of the run's reported
  front for that branch), with
  ``pymoo.indicators.hv.HV(zero_to_one=True)``: the objectives are the search values (life as
  -log10 of its hours), normalised by the reference front's fixed ideal and nadir, the reference
  point 10 % beyond the nadir on every objective;
- its reported front's hypervolume as a fraction of the reference front's *at the same
  resolution* (the reference pool reported by the same rule, ``reported_front`` at the spec's
  ``search.resolution``): what a builder would see from the default run against what the long
  runs would show. Reporting at a resolution sets aside designs within it of another, so the
  reported front of the reference itself holds less than its exact hypervolume (the line
  ``reference at resolution`` says how much); a run's reported front may exceed it, since the
  rule keeps the cheapest of designs that tie, not the ones with the most hypervolume;
- its IGD to the reference front in the same normalised space;
- its wall time.

Goal (issue 11): at least 0.98 of the reference hypervolume at the default settings, in about
5-10 s per demo after the first-run compile.

``--save DIR`` writes each spec's reference pool to ``DIR/<spec name>.npz``; ``--reference DIR``
reads it back instead of making the long runs (the default runs are pooled in as always): for
comparing changes to the search against one reference.

A branch whose reference front spans less than 5 % of the overall front's span in an objective
is normalised with a span of that 5 % there (a branch of one or two designs would otherwise be
scaled to nothing).
"""

from __future__ import annotations

import argparse
import sys
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

from pymoo.indicators.hv import HV  # noqa: E402
from pymoo.indicators.igd import IGD  # noqa: E402

from optimiser.codesign import nsga  # noqa: E402
from optimiser.codesign.run import optimise, reported_front  # noqa: E402
from optimiser.inputs.spec import load_spec  # noqa: E402

DEMOS = ("specs/demo-valve.yaml", "specs/demo-silicon.yaml")
SEEDS = (1, 2, 3, 4, 5)
#: the reference point beyond the nadir, as a share of the normalised span
REFERENCE_MARGIN = 0.1
#: the least span of a branch's normalisation, as a share of the overall front's span
LEAST_SPAN = 0.05


def _pool(opt):
    """(F, branch keys) of every feasible design of a run's full re-check."""
    keep = opt.scored.feasible
    return opt.scored.F[keep], opt.scored.frame["branch"].to_numpy(str)[keep]


def _non_dominated(F):
    return F[nsga.non_dominated(F)] if len(F) else F


def _bounds(reference, least=None):
    ideal, nadir = reference.min(axis=0), reference.max(axis=0)
    if least is not None:
        nadir = np.maximum(nadir, ideal + least)
    nadir = np.where(nadir > ideal, nadir, ideal + 1e-9)
    return ideal, nadir


def _hv(F, ideal, nadir):
    if not len(F):
        return 0.0
    ref = ideal + (1 + REFERENCE_MARGIN) * (nadir - ideal)
    return float(HV(ref_point=ref, ideal=ideal, nadir=nadir, zero_to_one=True)(F))


def _igd(F, reference, ideal, nadir):
    if not len(F):
        return float("nan")
    scale = nadir - ideal
    return float(IGD((reference - ideal) / scale)((F - ideal) / scale))


def measure(path, reference_seeds, scale_population, scale_generations, save=None, read=None):
    spec = load_spec(path)
    s = spec.search
    runs, pools = {}, []
    for seed in SEEDS:
        start = time.perf_counter()
        opt = optimise(spec, seed=seed)
        runs[seed] = (opt, time.perf_counter() - start)
        pools.append(_pool(opt))
    start = time.perf_counter()
    if read is not None:
        stored = np.load(Path(read) / f"{spec.name}.npz")
        long_runs = [(stored["F"], stored["keys"])]
        made = f"the pool read from {read}"
    else:
        long_runs = [_pool(optimise(spec, seed=seed, population=s.population * scale_population,
                                    generations=s.generations * scale_generations))
                     for seed in reference_seeds]
        made = (f"{len(reference_seeds)} runs of population {s.population * scale_population} x "
                f"{s.generations * scale_generations} generations")
    build = time.perf_counter() - start
    if save is not None:
        Path(save).mkdir(parents=True, exist_ok=True)
        np.savez(Path(save) / f"{spec.name}.npz", F=np.vstack([p[0] for p in long_runs]),
                 keys=np.concatenate([p[1] for p in long_runs]))
    pools += long_runs
    F = np.vstack([p[0] for p in pools])
    keys = np.concatenate([p[1] for p in pools])
    reference = _non_dominated(F)
    ideal, nadir = _bounds(reference)
    span = nadir - ideal
    branch_ref = {}
    for key in dict.fromkeys(keys.tolist()):
        ref = _non_dominated(F[keys == key])
        branch_ref[key] = (ref, *_bounds(ref, LEAST_SPAN * span))
    names = runs[1][0].binding.objective_names
    print(f"\n## {spec.name} ({', '.join(names)})")
    print(f"reference: {len(reference)} designs on the front of {len(F)} feasible pooled from "
          f"{len(SEEDS)} default runs and {made} ({build:.0f} s)")
    hv_ref = _hv(reference, ideal, nadir)
    thinned = F[reported_front(F, np.ones(len(F), bool), s.resolution, names)]
    hv_thin = _hv(thinned, ideal, nadir)
    print(f"reference at resolution: {len(thinned)} designs, {hv_thin / hv_ref:.4f} of the "
          "reference's hypervolume")
    branches = list(branch_ref)
    print("| seed | wall time [s] | HV / reference | HV of all found / reference | "
          "HV / reference at resolution | IGD | "
          + " | ".join(f"HV / ref: {b}" for b in branches) + " |")
    print("|---|---|---|---|---|---|" + "---|" * len(branches))
    ratios, found, alike, per_branch, times = [], [], [], {b: [] for b in branches}, []
    for seed, (opt, wall) in runs.items():
        front = opt.scored.F[opt.front]
        ratio = _hv(front, ideal, nadir) / hv_ref
        ratios.append(ratio)
        found.append(_hv(_non_dominated(_pool(opt)[0]), ideal, nadir) / hv_ref)
        alike.append(_hv(front, ideal, nadir) / hv_thin)
        times.append(wall)
        cells = []
        run_keys = opt.scored.frame["branch"].to_numpy(object)
        for b in branches:
            ref, lo, hi = branch_ref[b]
            rows = np.asarray(opt.branch_fronts.get(b, []), int)
            rows = rows[run_keys[rows] == b] if len(rows) else rows
            r = _hv(opt.scored.F[rows], lo, hi) / _hv(ref, lo, hi)
            per_branch[b].append(r)
            cells.append(f"{r:.3f}")
        print(f"| {seed} | {wall:.1f} | {ratio:.4f} | {found[-1]:.4f} | {alike[-1]:.4f} | "
              f"{_igd(front, reference, ideal, nadir):.4f} | " + " | ".join(cells) + " |")
    print(f"| mean | {np.mean(times):.1f} | {np.mean(ratios):.4f} | {np.mean(found):.4f} | "
          f"{np.mean(alike):.4f} | | "
          + " | ".join(f"{np.mean(per_branch[b]):.3f}" for b in branches) + " |")
    print(f"| least | | {np.min(ratios):.4f} | {np.min(found):.4f} | {np.min(alike):.4f} | | "
          + " | ".join(f"{np.min(per_branch[b]):.3f}" for b in branches) + " |")
    return ratios


def main(argv=None):
    p = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    p.add_argument("specs", nargs="*", default=list(DEMOS))
    p.add_argument("--reference-seeds", type=int, default=3,
                   help="long runs pooled into the reference (seeds 101, 102, ...)")
    p.add_argument("--scale-population", type=int, default=2)
    p.add_argument("--scale-generations", type=int, default=3)
    p.add_argument("--save", metavar="DIR", help="write each spec's reference pool here")
    p.add_argument("--reference", metavar="DIR", help="read the reference pools from here")
    args = p.parse_args(argv)
    optimise(load_spec(args.specs[0]), population=20, generations=2)  # compile first
    for path in args.specs:
        measure(path, tuple(range(101, 101 + args.reference_seeds)), args.scale_population,
                args.scale_generations, save=args.save, read=args.reference)


if __name__ == "__main__":
    main()
