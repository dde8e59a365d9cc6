"""Cost per design of the full assessment (corners, transients, checks), with and without the
sag step, at several population sizes. A measurement, not a test.

    python benchmarks/bench_assessment.py [--sizes 1 10 100 400]

Designs are random variations of the invented demo design specs/demo-design-valve.yaml.
"""

from __future__ import annotations

import argparse
import copy
import time
from pathlib import Path

import numpy as np
import yaml

from optimiser.assessment.full import assess_many
from optimiser.inputs.design import load_design

DEMO = Path(__file__).resolve().parents[1] / "specs" / "demo-design-valve.yaml"


def population(count, rng):
    raw = yaml.safe_load(DEMO.read_text())
    out = []
    for _ in range(count):
        d = copy.deepcopy(raw)
        d["transformer"]["secondary_resistance"] = f"{rng.uniform(60, 200):.3f} ohm"
        d["transformer"]["secondary_voltage"] = f"{rng.uniform(270, 330):.3f} V"
        d["nodes"][0]["capacitance"] = f"{rng.uniform(16, 60):.3f} uF"
        out.append(load_design(d))
    return out


def main(argv=None):
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--sizes", type=int, nargs="+", default=[1, 10, 100, 400])
    args = parser.parse_args(argv)
    rng = np.random.default_rng(1)
    assess_many(population(2, rng))  # compile the kernels once
    print("| N | with sag step, per design | without, per design |")
    print("|---|---|---|")
    for n in args.sizes:
        designs = population(n, rng)
        row = []
        for dynamics in (True, False):
            start = time.process_time()
            assess_many(designs, dynamics=dynamics)
            row.append((time.process_time() - start) / n)
        print(f"| {n} | {1e3 * row[0]:.2f} ms | {1e3 * row[1]:.2f} ms |")
    print("(CPU time of this process)")


if __name__ == "__main__":
    main()
