"""The whole job: search a spec, re-check in full what the search kept, pick the front and its
knee, and say which constraints no design met.

:func:`optimise` makes the :class:`~optimiser.codesign.problem.CoDesign` of a spec (and its
screen, calibrated before the first generation), runs NSGA-II on it
(:func:`optimiser.codesign.nsga.run`, steered by the screen, whose easing is corrected per
branch halfway on the designs the search holds), corrects the screen once more on the final
population and the search's archive, refines each branch by a Pareto local search on it
(:mod:`optimiser.codesign.refine`), assesses all of those in full
(:meth:`~optimiser.codesign.scoring.Scoring.score`), and reports only those full figures: the
feasible non-dominated designs at the spec's resolution (:func:`reported_front`), the knee, the
unmet constraints.
"""

from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np

import optimiser.codesign.nsga as search
from optimiser.codesign import branches, objective_table, refine
from optimiser.codesign.encoding import CURRENT_COLUMN
from optimiser.codesign.objectives import Unmet
from optimiser.codesign.problem import CoDesign
from optimiser.codesign.robustness import assess_robustness
from optimiser.codesign.scoring import Scored
from optimiser.inputs.spec import Spec

__all__ = ["Optimisation", "optimise", "reported_front"]


@dataclass(frozen=True)
class Optimisation:
    """The outcome of :func:`optimise`.

    Attributes
    ----------
    spec : Spec
    binding : CoDesign
    search : SearchResult
    scored : Scored
        The full assessment of the search's final population and its archive of the best
        designs found on the way (distinct designs).
    front : ndarray of int
        Rows of ``scored`` that meet every constraint and are non-dominated, by cost.
    knee : int or None
        Row of ``scored`` recommended (the front's knee); None when the front is empty.
    unmet : tuple of Unmet
        Constraints that no design of the final assessment met (the search's final population
        and the best designs it found on the way).
    branch_fronts : dict
        {branch key: rows of ``scored`` on that branch's own front} for every branch of the
        spec (:mod:`optimiser.codesign.branches`; empty where none of it met the spec).
    robust : RobustYield or None
        With the spec's ``robustness:``, each listed design's yield over sampled builds.
    """

    spec: Spec
    binding: CoDesign
    search: object
    scored: Scored
    front: np.ndarray
    knee: int | None
    unmet: tuple
    branch_fronts: dict = None
    robust: object = None  # the listed designs' yield over sampled builds (codesign.robustness)

    @property
    def listed(self) -> np.ndarray:
        """Rows of the union of the branch fronts (and the overall front), by cost: what the
        results list."""
        rows = np.unique(np.concatenate([np.asarray(r, int) for r in
                                         (self.branch_fronts or {}).values()]
                                        + [np.asarray(self.front, int)]))
        return rows[np.argsort(self.scored.frame["cost"].to_numpy(float)[rows], kind="stable")]

    @property
    def found(self) -> bool:
        """Whether any design met every constraint."""
        return len(self.front) > 0

    def nearest(self, count=3):
        """The designs that came closest: [(row, [(ConstraintInfo, value) missed])]."""
        violation = np.maximum(self.scored.G, 0.0).sum(axis=1)
        rows, seen = [], set()  # distinct designs: a population holds many copies of one
        for r in np.argsort(violation, kind="stable"):
            key = self.scored.designs[r].model_dump_json()
            if key not in seen:
                seen.add(key)
                rows.append(r)
            if len(rows) == count:
                break
        return [(int(r), [(info, float(g)) for info, g in
                          zip(self.binding.constraints, self.scored.G[r]) if g > 0])
                for r in rows]


def reported_front(F, feasible, resolution, names=("cost", "regulation", "rectifier_stress")):
    """Rows of the feasible, non-dominated designs, telling apart only objective differences
    larger than the spec's resolution (of designs that tie, the first in F's column order is
    kept); by F's first column (cost). ``names``: the objectives of F's columns."""
    steps = objective_table.resolution_steps(names, resolution)
    coarse = np.where(steps > 0, np.round(F / np.where(steps > 0, steps, 1.0)) * steps, F)
    order = np.lexsort(F.T[::-1])
    rank = np.empty(len(F), int)
    rank[order] = np.arange(len(F))
    rows = np.flatnonzero(feasible)
    rows = rows[np.argsort(rank[rows])]
    front = rows[np.sort(search.non_dominated(coarse[rows]))]
    return front[np.argsort(F[front, 0], kind="stable")]


def optimise(spec: Spec, *, population=None, generations=None, seed=None, workers=None,
             progress=False) -> Optimisation:
    """Search a spec's design space for the Pareto front of its objectives, a front per
    rectifier branch and their union (:mod:`optimiser.codesign.branches`).

    Parameters
    ----------
    spec : Spec
    population, generations, seed, workers : int, optional
        Override the spec's search settings.
    progress : bool
        Show a progress bar on stderr.

    Returns
    -------
    Optimisation
        With an empty front (and ``unmet`` saying why) when no design meets every constraint.
    """
    settings = spec.search
    binding = CoDesign(spec)
    binding.screen  # made (and calibrated) before the search, not in its first generation
    result = search.run(binding, population=population or settings.population,
                        generations=generations or settings.generations,
                        seed=settings.seed if seed is None else seed,
                        workers=workers or settings.workers, progress=progress)
    # the search steered by the screen (corrected halfway on what it held: CoDesign.recalibrate);
    # what it kept is corrected on once more, each branch refined by local moves on the screen
    # (codesign.refine), and all of it assessed in full: only that counts
    kept = np.unique(np.vstack([result.X, result.archive]), axis=0)
    decoded = binding.decode(kept)
    candidates = list(dict.fromkeys(decoded))
    scored = binding.score(binding.designs(candidates))
    place = {c: i for i, c in enumerate(candidates)}
    binding.recalibrate(kept, scored.G[[place[c] for c in decoded]])
    refined = binding.decode(refine.refine(binding, kept, binding.niche, CURRENT_COLUMN))
    new = [c for c in dict.fromkeys(refined) if c not in place]
    if new:
        scored = scored.join(binding.score(binding.designs(new)))

    def front_of(F, mask):
        return reported_front(F, mask, spec.search.resolution, binding.objective_names)

    keys = scored.frame["branch"].to_numpy(object)
    found = branches.branch_fronts(scored.F, scored.feasible, keys, front_of)
    fronts = {b.key: found.get(b.key, np.array([], int)) for b in branches.branches_of(spec)}
    front = branches.union_front(scored.F, fronts, front_of)
    # the sag step for the listed designs, where the search did without it
    scored = branches.with_dynamics(binding, scored, np.unique(np.concatenate(
        [front] + list(fronts.values()))))
    knee = int(front[search.knee(scored.F[front])]) if len(front) else None
    unmet = tuple(Unmet(info, float(best)) for info, best in
                  zip(binding.constraints, scored.G.min(axis=0)) if best > 0)
    opt = Optimisation(spec=spec, binding=binding, search=result, scored=scored, front=front,
                       knee=knee, unmet=unmet, branch_fronts=fronts)
    return replace(opt, robust=assess_robustness(binding, scored, opt.listed, spec))
