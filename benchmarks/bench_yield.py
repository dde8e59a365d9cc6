"""Yield benchmark: N sampled builds of one design through the vectorised full tier.

    python benchmarks/bench_yield.py [N ...]

Prints the wall time of sampling and assessing N builds of the 3-node demo design
(specs/demo-design-valve.yaml), and of 1- to 5-node variants at one N, so that the growth with
N and with the node count can be read off. Each figure is the least of REPEATS runs (the
machine may be shared: the 1-minute load average is printed beside it). A benchmark, not a
timed test.
"""

from __future__ import annotations

import os
import sys
import time
from pathlib import Path

import numpy as np

from optimiser.assessment.builds import assess_yield
from optimiser.inputs.design import load_design

DESIGN = Path(__file__).resolve().parents[1] / "specs" / "demo-design-valve.yaml"
REPEATS = 3


def ladder(nodes: int):
    """The demo design cut or extended to ``nodes`` nodes (extra RC stages copy the last)."""
    d = load_design(DESIGN)
    base = list(d.nodes)
    out = base[:nodes]
    while len(out) < nodes:
        out.append(base[-1].model_copy(update={"name": f"stage{len(out)}"}))
    return d.model_copy(update={"nodes": out})


def timed(design, n, repeats=REPEATS):
    """(least wall time of ``repeats`` runs [s], the yield, the load average at the end)."""
    best = np.inf
    for _ in range(repeats):
        t = time.perf_counter()
        y = assess_yield(design, n, seed=1)
        best = min(best, time.perf_counter() - t)
    return best, y, os.getloadavg()[0]


def main(counts):
    timed(DESIGN, 20, 1)  # compile and warm the caches
    print("builds  wall [s]  per build [ms]  yield  load")
    for n in counts:
        t, y, load = timed(DESIGN, n)
        print(f"{n:>6}  {t:>8.2f}  {1e3 * t / n:>14.2f}  {y.fraction:.3f}  {load:.1f}")
    n = 2000
    print(f"\nnodes (N = {n})  wall [s]  per build [ms]  load")
    for nodes in range(1, 6):
        t, _, load = timed(ladder(nodes), n)
        print(f"{nodes:>14}  {t:>8.2f}  {1e3 * t / n:>14.2f}  {load:.1f}")


if __name__ == "__main__":
    main([int(a) for a in sys.argv[1:]] or [100, 1000, 10000])
