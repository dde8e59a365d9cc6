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
moves, since it trades the winding's resistance against its rating), and, where the definition
has ``thinnest``, wound in the thinnest wire that carries its current with the secondary volts
that keep its B+ (:func:`optimiser.codesign.winding.thinnest`: one step at a time cannot make
that move, since the thinner wire alone fails the B+); each node's capacitor is also moved
one step together with its feed :data:`FILTER_STEPS` the other way (a smaller capacitor behind
a larger resistor). The moves are screened
(by the definition's ``evaluate``: the screen with its easing corrected per branch on the
search's kept designs assessed in full, :meth:`optimiser.codesign.screening.Screen.recalibrate`);
those short only of B+ are screened again topped up, where the definition has ``topped_up``
(:func:`optimiser.codesign.winding.topped_up`: the secondary raised by the shortfall), and the
working set becomes the feasible non-dominated designs of the branch seen so far, or,
while the branch has no feasible design yet, its :data:`NEAREST` designs of least constraint
violation. Only designs new to the
working set are moved in the next round, for at most :data:`ROUNDS` rounds.

One step at a time cannot cross between two corners the core and the wire couple: a smaller
core fits its windings only at a higher current density, and a design one step off either
fails the window fill or the temperature rise, so the path between two feasible corners leads
through infeasible designs. Before the moves, therefore, each branch's :data:`SWEEP_STARTS`
designs of least violation are swept over every core and every :data:`SWEEP_DENSITY`-th current
density, each with its own HV current rating and wound thinnest (with the definition's
``thinnest``; without it, with the least rating, which the definition's repair raises to what
the winding carries, :func:`optimiser.codesign.winding.sized`): a rating above the need makes
a larger wire that may not fit the smaller core. The designs the sweep finds join the working
sets the moves start from.

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

__all__ = ["refine", "ROUNDS", "NEAREST", "KEEP", "MOVED", "CURRENT_STEPS", "PAIRED_STEPS",
           "FILTER_STEPS", "SWEEP_STARTS", "SWEEP_DENSITY"]

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
#: Steps of a node's feed index made together with one step of its capacitor index the other
#: way (a smaller capacitor behind a larger resistor: the filter's time constant kept). [-]
FILTER_STEPS = (1, 2, 3)
#: Designs per branch the sweep starts from (those of least constraint violation). [-]
SWEEP_STARTS = 2
#: The sweep's step in the current density's index (every step from the lowest, and the
#: highest). [-]
SWEEP_DENSITY = 4


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
    names = [v.name for v in variables]
    for c, name in enumerate(names):
        if name.endswith(".feed") and name[:-5] + ".capacitance" in names:
            k = names.index(name[:-5] + ".capacitance")
            for s in (-1.0, 1.0):
                for n in FILTER_STEPS:
                    step = np.zeros(len(variables))
                    step[k], step[c] = s, -s * n
                    steps.append(step)
    out = (X[:, None, :] + np.array(steps)[None, :, :]).reshape(-1, len(variables))
    inside = np.all((out >= lower - 1e-12) & (out <= upper + 1e-12), axis=1)
    return out[inside]


def refine(definition, X, branch_of, current_column, rounds=ROUNDS, evaluate=None):
    """Pareto local search per branch from a population, after a sweep of each branch's core
    and current density (see module docstring).

    Parameters
    ----------
    definition : object
        ``variables``, ``evaluate(X) -> (F, G)``, optionally ``repair(X) -> X`` (applied to
        every design made here, as the search applies it), ``thinnest(X) -> X`` (a move of
        every design moved, and of every design of the sweep) and ``topped_up(X, G) -> X``
        (of screened designs, those short only of B+ with the volts added: screened too).
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
    repair = getattr(definition, "repair", None)
    thinnest = getattr(definition, "thinnest", None)
    topped_up = getattr(definition, "topped_up", None)
    X = np.unique(np.asarray(X, float), axis=0)
    F, G = (np.asarray(a, float) for a in evaluate(X))
    labels = np.asarray(branch_of(X))
    seen = {row.tobytes() for row in X}
    working = {k: _working(np.flatnonzero(labels == k), F, G) for k in np.unique(labels)}

    def screened(new):
        """The designs of ``new`` (repaired) not seen yet, screened: (rows, F, G)."""
        if len(new) and repair is not None:
            new = repair(new)
        new = np.unique(new, axis=0) if len(new) else new
        new = new[np.asarray([row.tobytes() not in seen for row in new], bool)] if len(new) else new
        if not len(new):
            return new, None, None
        seen.update(row.tobytes() for row in new)
        return (new, *evaluate(new))

    def add(new):
        """Screen the designs of ``new`` not seen yet (and of those short only of B+, the same
        topped up, with the definition's ``topped_up``) and take them into each branch's
        working set: {branch: its working designs among them}, {} if none was new."""
        nonlocal X, F, G, labels
        new, f, g = screened(new)
        if not len(new):
            return {}
        if topped_up is not None:
            more, f2, g2 = screened(topped_up(new, g))
            if len(more):
                new, f, g = np.vstack([new, more]), np.vstack([f, f2]), np.vstack([g, g2])
        base = len(X)
        X, F, G = np.vstack([X, new]), np.vstack([F, f]), np.vstack([G, g])
        labels = np.concatenate([labels, np.asarray(branch_of(new))])
        fresh = {}
        for k in working:
            rows = np.concatenate([working[k], np.arange(base, len(X))[labels[base:] == k]])
            working[k] = _working(rows, F, G)
            fresh[k] = working[k][working[k] >= base]
        return fresh

    starts = np.concatenate([_starts(rows, F, G) for rows in working.values()] or [[]])
    add(_sweep(X[starts.astype(int)], variables, current_column, thinnest))
    fresh = dict(working)
    for _ in range(rounds):
        starts = np.concatenate([_spread(rows, F, MOVED) for rows in fresh.values()])
        if not len(starts):
            break
        moved = X[starts.astype(int)]
        moves = _moves(moved, variables, current_column)
        if thinnest is not None:
            moves = np.vstack([moves, thinnest(moved)])
        fresh = add(moves)
        if not fresh:
            break
    keep = np.concatenate([rows for rows in working.values()]) if working else []
    return X[np.asarray(keep, int)]


def _starts(rows, F, G):
    """Of a branch's working set, its :data:`SWEEP_STARTS` designs of least constraint
    violation, the cheapest first."""
    rows = np.asarray(rows, int)
    order = np.lexsort((F[rows, 0], _violation(G[rows])))
    return rows[order[:SWEEP_STARTS]]


def _sweep(X, variables, current_column, thinnest=None):
    """Each row of X at every core and every :data:`SWEEP_DENSITY`-th current density (and the
    highest), each with its own HV current rating and with the least (which ``repair`` sizes
    up to what the winding carries), or with ``thinnest`` applied where given. (K, d)"""
    names = [v.name for v in variables]
    c, d = names.index("core_stack"), names.index("current_density")
    cores = np.arange(variables[c].lower, variables[c].upper + 1)
    densities = np.unique(np.r_[np.arange(variables[d].lower, variables[d].upper + 1,
                                          SWEEP_DENSITY), variables[d].upper])
    grid = np.array([(a, b) for a in cores for b in densities], float)
    out = np.repeat(X, len(grid), axis=0)
    out[:, c] = np.tile(grid[:, 0], len(X))
    out[:, d] = np.tile(grid[:, 1], len(X))
    if thinnest is not None:
        return np.vstack([out, thinnest(out)])
    least = out.copy()
    least[:, current_column] = variables[current_column].lower
    return np.vstack([out, least])


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
