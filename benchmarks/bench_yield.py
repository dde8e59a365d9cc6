"""Yield benchmark: N sampled builds of one design through the vectorised full tier.

    python benchmarks/bench_yield.py [N ...]

Prints the wall time of sampling and assessing N builds of the 3-node demo design
(specs/demo-design-valve.yaml), and of 1- to 5-node variants at one N, so that the growth with
N and with the node count can be read off. A benchmark, not a timed test.
"""

from __future__ import annotations

import sys
import time
from pathlib import Path

from optimiser.assessment.builds import assess_yield
from optimiser.inputs.design import load_design

DESIGN = Path(__file__).resolve().parents[1] / "specs" / "demo-design-valve.yaml"


def ladder(nodes: int):
    """The demo design cut or extended to ``nodes`` nodes (extra RC stages copy the last)."""
    d = load_design(DESIGN)
    base = list(d.nodes)
    out = base[:nodes]
    while len(out) < nodes:
        out.append(base[-1].model_copy(update={"name": f"stage{len(out)}"}))
    return d.model_copy(update={"nodes": out})


def timed(design, n):
    t = time.perf_counter()
    y = assess_yield(design, n, seed=1)
    return time.perf_counter() - t, y


def main(counts):
    timed(DESIGN, 20)  # compile and warm the caches
    print("builds  wall [s]  per build [ms]  yield")
    for n in counts:
        t, y = timed(DESIGN, n)
        print(f"{n:>6}  {t:>8.2f}  {1e3 * t / n:>14.2f}  {y.fraction:.3f}")
    n = 2000
    print(f"\nnodes (N = {n})  wall [s]  per build [ms]")
    for nodes in range(1, 6):
        t, _ = timed(ladder(nodes), n)
        print(f"{nodes:>14}  {t:>8.2f}  {1e3 * t / n:>14.2f}")


if __name__ == "__main__":
    main([int(a) for a in sys.argv[1:]] or [100, 1000, 10000])
