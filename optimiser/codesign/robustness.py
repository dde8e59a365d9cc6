"""The search's designs re-assessed by sampled builds (a spec's ``robustness:``).

Each front design is drawn ``samples`` times from the spec's tolerance model
(:func:`optimiser.assessment.builds.sample_builds`); every build of every design is scored in
one call by the same constraints the search used (B+ windows, ripple, sag, every check), each
at the build's own sampled values. A build passes when it meets every constraint that a build
can miss: whether the transformer can be wound and whether a capacitor value is made are
properties of the design, not of a build, and are left out.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from optimiser.assessment.builds import YieldResult, sample_builds, yield_of

__all__ = ["RobustYield", "front_yield", "DESIGN_PROPERTIES"]

#: Constraints that belong to the design, not to one build of it.
DESIGN_PROPERTIES = ("transformer.buildable", ".capacitor_made")


@dataclass(frozen=True)
class RobustYield:
    """Yield of each front design.

    Attributes
    ----------
    rows : list of int
        Rows of the scored designs that were sampled (the front).
    results : list of YieldResult
        One per row.
    min_yield : float
    """

    rows: list
    results: list
    min_yield: float

    def column(self, count: int) -> np.ndarray:
        """Yield per scored design (NaN where not sampled). [-]"""
        out = np.full(count, np.nan)
        out[self.rows] = [r.fraction for r in self.results]
        return out

    def of(self, row: int) -> YieldResult | None:
        return dict(zip(self.rows, self.results)).get(row)


def front_yield(binding, scored, front, robustness, tolerances) -> RobustYield:
    """Sample builds of each front design and score them all by the search's constraints.

    Parameters
    ----------
    binding : CoDesign
    scored : Scored
        The full assessment of what the search kept.
    front : ndarray of int
        Rows of ``scored`` to sample.
    robustness : Robustness
        ``samples``, ``min_yield``, ``seed``.
    tolerances : Tolerances
        The spec's tolerance model.

    Returns
    -------
    RobustYield
    """
    rows = [int(r) for r in front]
    n = robustness.samples
    builds = []
    for r in rows:
        builds += sample_builds(scored.designs[r], n, robustness.seed, tolerances).designs
    names = [c.name for c in binding.constraints]
    keep = [i for i, name in enumerate(names)
            if not any(name.endswith(p) for p in DESIGN_PROPERTIES)]
    results = []
    if builds:
        built = binding.score(builds)
        ratios = pd.DataFrame(built.G[:, keep] + 1.0, columns=[names[i] for i in keep])
        from optimiser.assessment.builds import node_figures

        figures = node_figures(built.table.frame)
        for j in range(len(rows)):
            part = slice(j * n, (j + 1) * n)
            results.append(yield_of(ratios.iloc[part], figures.iloc[part], robustness.seed))
    return RobustYield(rows=rows, results=results, min_yield=robustness.min_yield)


def assess_robustness(binding, scored, front, spec) -> RobustYield | None:
    """The spec's ``robustness:`` over the front (None without one); adds the ``yield`` and
    ``meets_min_yield`` columns to ``scored.frame`` (NaN / None off the front)."""
    if spec.robustness is None:
        return None
    robust = front_yield(binding, scored, front, spec.robustness, spec.tolerances)
    values = robust.column(len(scored.designs))
    scored.frame["yield"] = values
    scored.frame["meets_min_yield"] = [None if np.isnan(v) else bool(v >= robust.min_yield)
                                       for v in values]
    return robust
