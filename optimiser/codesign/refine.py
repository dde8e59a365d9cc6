"""A short Pareto local search per rectifier branch after the genetic search, on the screen.

NSGA-II spreads a population over a branch's front in broad strokes, but it is poor at the last
step: a niche of forty places soon converges to a few points, and a branch whose feasible
designs sit in a small corner of the space (e.g. a silicon bridge at the lowest secondary
voltage, the highest current density and one core, where it needs the winding's resistance to
sag at all) can end the run a per cent short of every constraint. So after the search each
branch's designs are refined by Pareto local search [1]_: every design on the branch's working
set is moved one step in one variable at a time (one index up or down in every integer column:
voltage step, core, current density, capacitor value, rating step, feed; the HV current rating
by :data:`CURRENT_STEPS` alone and by :data:`PAIRED_STEPS` together with each of the other
moves, since it trades the winding's resistance against its rating), the moves are screened
(not eased: :meth:`optimiser.codesign.screening.Screen.cautious`; the eased screen passes
designs on a constraint's edge that the full tier fails), and the working set becomes the
feasible non-dominated designs of the branch seen so far, or, while the branch has no feasible
design yet, its :data:`NEAREST` designs of least constraint violation. Only designs new to the
working set are moved in the next round, for at most :data:`ROUNDS` rounds.

The moves do not depend on a random draw and the screen's result for a design does not depend
on its batch, so the refinement is as reproducible as the search. What it keeps is re-checked
in full with the search's population and archive (:func:`optimiser.codesign.optimise`), and only
those figures count.

References
----------
.. [1] L. Paquete, M. Chiarandini, T. Stützle, "Pareto local optimum sets in the biobjective
   traveling salesman problem: an experimental study," in *Metaheuristics for Multiobjective
   Optimisation*, LNEMS 535, Springer, 2004, pp. 177-199.
"""

from __future__ import annotations

import numpy as np

from optimiser.codesign import nsga

__all__ = ["refine", "ROUNDS", "NEAREST", "KEEP", "MOVED", "CURRENT_STEPS", "PAIRED_STEPS"]

#: Rounds of moves at most. [-]
ROUNDS = 8
#: Designs of least constraint violation kept per branch while it has no feasible design. [-]
NEAREST = 8
#: Designs per branch kept at most (of a larger feasible non-dominated set, an even spread in
#: the first objective). [-]
KEEP = 40
#: Designs per branch moved at most per round (an even spread in the first objective). [-]
MOVED = 12
#: Moves of the HV current rating alone, as factors (searched as log10 of the rating), and
#: those made together with each other move. [-]
CURRENT_STEPS = (0.98, 0.99, 0.995, 1.005, 1.01, 1.02)
PAIRED_STEPS = (0.99, 1.01)


def _violation(G):
    return np.maximum(G, 0.0).sum(axis=1) if G.shape[1] else np.zeros(len(G))


def _spread(rows, F, keep):
    """At most ``keep`` of ``rows``, evenly spread in the first objective."""
    rows = rows[np.argsort(F[rows, 0], kind="stable")]
    if len(rows) > keep:
        rows = rows[np.unique(np.linspace(0, len(rows) - 1, keep).round().astype(int))]
    return rows


def _moves(X, variables, current_column):
    """Every design of X moved one step in one variable, and in the HV current rating with
    each of those steps (rows that leave the bounds are dropped). (K, d)"""
    lower = np.array([v.lower for v in variables])
    upper = np.array([v.upper for v in variables])
    integer = np.array([v.integer for v in variables])
    steps = []
    for c in np.flatnonzero(integer & (upper > lower)):
        for s in (-1.0, 1.0):
            step = np.zeros(len(variables))
            step[c] = s
            steps.append(step)
    def current(factors):
        out = []
        for factor in factors:
            step = np.zeros(len(variables))
            step[current_column] = np.log10(factor)
            out.append(step)
        return out

    steps = steps + current(CURRENT_STEPS) + [a + b for a in steps
                                              for b in current(PAIRED_STEPS)]
    out = (X[:, None, :] + np.array(steps)[None, :, :]).reshape(-1, len(variables))
    inside = np.all((out >= lower - 1e-12) & (out <= upper + 1e-12), axis=1)
    return out[inside]


def refine(definition, X, branch_of, current_column, rounds=ROUNDS, evaluate=None):
    """Pareto local search per branch from a population (see module docstring).

    Parameters
    ----------
    definition : object
        ``variables`` and ``evaluate(X) -> (F, G)``.
    X : ndarray (B, d)
        Where to start: e.g. the search's final population and archive.
    branch_of : callable X -> labels (B,)
        Each row's branch; moves never change it.
    current_column : int
        The column of the HV current rating (log10 [A]).
    rounds : int
    evaluate : callable X -> (F, G), optional
        What the moves are judged by; default ``definition.evaluate``.

    Returns
    -------
    ndarray (K, d)
        Each branch's working set at the end: its feasible non-dominated designs found on the
        screen (at most :data:`KEEP`), or its designs nearest to feasible.
    """
    variables = list(definition.variables)
    evaluate = definition.evaluate if evaluate is None else evaluate
    X = np.unique(np.asarray(X, float), axis=0)
    F, G = evaluate(X)
    F, G = np.asarray(F, float), np.asarray(G, float)
    labels = np.asarray(branch_of(X))
    seen = {row.tobytes() for row in X}
    working = {k: _working(np.flatnonzero(labels == k), F, G) for k in np.unique(labels)}
    fresh = {k: _spread(rows, F, MOVED) for k, rows in working.items()}
    for _ in range(rounds):
        starts = np.concatenate([rows for rows in fresh.values()]) if fresh else []
        if not len(starts):
            break
        moved = _moves(X[np.asarray(starts, int)], variables, current_column)
        moved = np.unique(moved, axis=0) if len(moved) else moved
        new = [row.tobytes() not in seen for row in moved]
        moved = moved[np.asarray(new, bool)] if len(moved) else moved
        if not len(moved):
            break
        seen.update(row.tobytes() for row in moved)
        f, g = evaluate(moved)
        base = len(X)
        X, F, G = np.vstack([X, moved]), np.vstack([F, f]), np.vstack([G, g])
        labels = np.concatenate([labels, np.asarray(branch_of(moved))])
        fresh = {}
        for k in working:
            rows = np.concatenate([working[k], np.arange(base, len(X))[labels[base:] == k]])
            working[k] = _working(rows, F, G)
            fresh[k] = _spread(working[k][working[k] >= base], F, MOVED)
    keep = np.concatenate([rows for rows in working.values()]) if working else []
    return X[np.asarray(keep, int)]


def _working(rows, F, G):
    """A branch's working set among ``rows``: its feasible non-dominated designs (an even spread
    of at most :data:`KEEP`), or, with none feasible, its :data:`NEAREST` of least violation."""
    rows = np.asarray(rows, int)
    if not len(rows):
        return rows
    v = _violation(G[rows])
    feasible = rows[v <= 0]
    if len(feasible):
        return _spread(feasible[nsga.non_dominated(F[feasible])], F, KEEP)
    return np.sort(rows[np.argsort(v, kind="stable")[:NEAREST]])
