"""The search machinery: pymoo's NSGA-II over a float encoding, with no physics in it.

A *definition* is any object with

- ``variables``: a sequence of :class:`Variable` (float columns; integer columns hold indices),
- ``objective_names`` and ``constraint_names``: sequences of str,
- ``evaluate(X) -> (F, G)``: objectives (B, n_obj) to minimise and constraints (B, n_constr),
  feasible where every ``G <= 0``, for a whole population at once,
- optionally ``shown(name, search value) -> str``: an objective's best value as the progress
  line gives it,
- optionally ``niche(X) -> labels (B,)``: rows with different labels never compete for
  survival (:class:`NicheSurvival`), so that each niche keeps its own front,
- optionally ``repair(X) -> X``: applied to every design the search evaluates, after the
  integer columns are rounded (:class:`RepairingEvaluator`; mating only rounds them,
  :class:`IntegerRepair`, since pymoo repairs every batch it tries while it removes duplicate
  offspring, about three times the designs it keeps),
- optionally ``recalibrate(X)``: called once, halfway through the run, with the population and
  the archive of the best designs found; the definition may then evaluate differently (e.g. a
  cheap model corrected against a full one on designs that matter), so the search re-evaluates
  its archive and goes on from its population, which the next generation re-evaluates.

:func:`run` searches it with a fixed generation budget (in three objectives the whole population
soon becomes non-dominated, so tolerance-based stopping would never stop), reproducibly from a
seed, optionally splitting each population across worker processes, with an optional progress bar.
"""

from __future__ import annotations

import sys
import time
from concurrent.futures import ProcessPoolExecutor
from dataclasses import dataclass, field

import numpy as np
from pymoo.core.evaluator import Evaluator
from pymoo.core.problem import Problem
from pymoo.core.repair import Repair
from pymoo.operators.mutation.pm import PM

__all__ = ["Variable", "NicheSurvival", "IntegerRepair", "RepairingEvaluator", "IndexResetMutation",
           "VectorProblem", "SearchResult",
           "run", "non_dominated", "random_population", "knee"]


@dataclass(frozen=True)
class Variable:
    """One column of the encoding.

    Attributes
    ----------
    name : str
    lower, upper : float
        Bounds; for an integer column the first and last index.
    integer : bool
        Whether the column holds an index (rounded by :class:`IntegerRepair`).
    """

    name: str
    lower: float
    upper: float
    integer: bool = False

    def __post_init__(self):
        if not (np.isfinite(self.lower) and np.isfinite(self.upper)) or self.upper < self.lower:
            raise ValueError(f"variable {self.name}: need finite lower <= upper, got "
                             f"[{self.lower}, {self.upper}]")


def _bounds(variables):
    """Bounds pymoo samples in: an integer column spans +/- half a step beyond its end indices,
    so that rounding gives every index the same share."""
    lower = np.array([v.lower for v in variables], float)
    upper = np.array([v.upper for v in variables], float)
    integer = np.array([v.integer for v in variables], bool)
    half = np.where(integer, 0.5 - 1e-6, 0.0)
    xl, xu = lower - half, upper + half
    xu = np.where(xu > xl, xu, xl + 1e-12)  # pymoo needs xl < xu even for a fixed column
    return lower, upper, integer, xl, xu


def _repair_matrix(X, lower, upper, integer):
    X = np.array(X, float, copy=True)
    X[:, integer] = np.clip(np.rint(X[:, integer]), lower[integer], upper[integer])
    return X


def random_population(variables, count, seed):
    """A uniformly random population (integer columns rounded), e.g. to compare against. [-]"""
    lower, upper, integer, xl, xu = _bounds(variables)
    rng = np.random.default_rng(seed)
    X = xl + rng.random((count, len(variables))) * (xu - xl)
    return _repair_matrix(X, lower, upper, integer)


def non_dominated(F, feasible=None) -> np.ndarray:
    """Indices of the non-dominated rows of F (minimisation), among the feasible ones if given."""
    F = np.asarray(F, float)
    index = np.arange(len(F)) if feasible is None else np.flatnonzero(feasible)
    if index.size == 0:
        return index
    sub = F[index]
    le = np.all(sub[:, None, :] <= sub[None, :, :], axis=2)
    lt = np.any(sub[:, None, :] < sub[None, :, :], axis=2)
    dominated = np.any(le & lt, axis=0)
    # of exact duplicates keep the first
    _, first = np.unique(sub, axis=0, return_index=True)
    keep = np.zeros(len(sub), bool)
    keep[first] = True
    return index[~dominated & keep]


class IntegerRepair(Repair):
    """Round the integer columns (and only those) to the nearest index inside their bounds."""

    def __init__(self, variables):
        super().__init__()
        self.lower, self.upper, self.integer, _, _ = _bounds(variables)

    def _do(self, problem, X, **kwargs):
        return _repair_matrix(X, self.lower, self.upper, self.integer)


class RepairingEvaluator(Evaluator):
    """pymoo's evaluator, applying the definition's own ``repair`` (rounded again after it) to
    the designs it is about to evaluate and writing the repaired rows back into them: each
    design the search keeps is repaired once, not every batch mating tries."""

    def __init__(self, variables, repair):
        super().__init__()
        self.lower, self.upper, self.integer, _, _ = _bounds(variables)
        self.repair = repair

    def _eval(self, problem, pop, evaluate_values_of, **kwargs):
        X = pop.get("X")
        if len(X):
            pop.set("X", _repair_matrix(self.repair(np.asarray(X, float)), self.lower,
                                        self.upper, self.integer))
        super()._eval(problem, pop, evaluate_values_of, **kwargs)


class IndexResetMutation(PM):
    """Polynomial mutation, plus a uniform redraw of integer columns.

    Polynomial mutation moves a value by a small step around where it is, which rounds back to
    the same index nearly always: a categorical choice (which rectifier, which core) would never
    be revisited once the population agrees on it. Each integer column of each offspring is
    therefore also redrawn uniformly over its indices with probability ``reset_probability``
    (default half the usual per-variable mutation rate, 0.5 / number of variables: on the demo
    specs this gave a larger hypervolume than no redraw or the full rate, over two seeds).
    """

    def __init__(self, variables, reset_probability=None, **kwargs):
        super().__init__(**kwargs)
        self.lower, self.upper, self.integer, _, _ = _bounds(variables)
        self.reset_probability = (0.5 / len(variables) if reset_probability is None
                                  else reset_probability)

    def _do(self, problem, X, *args, random_state=None, **kwargs):
        X = super()._do(problem, X, *args, random_state=random_state, **kwargs)
        cols = np.flatnonzero(self.integer & (self.upper > self.lower))
        if cols.size:
            redraw = random_state.random((len(X), cols.size)) < self.reset_probability
            span = self.upper[cols] - self.lower[cols] + 1
            draws = self.lower[cols] + np.floor(random_state.random((len(X), cols.size)) * span)
            X[:, cols] = np.where(redraw, draws, X[:, cols])
        return X


class NicheSurvival:
    """NSGA-II survival run within each niche, each niche given an equal share of the places.

    A niche with fewer members than its share keeps them all and its unused places go to the
    others (evenly, in label order), so the population stays full. Niches never compete, so a
    niche the others dominate (e.g. a valve rectifier beside a cheaper silicon one) is kept
    alive with its own front instead of being bred out. Ranks and crowding are set within each
    niche; the tournament compares them as usual.

    Parameters
    ----------
    niche_of : callable X -> labels (B,)
    """

    def __init__(self, niche_of):
        from pymoo.operators.survival.rank_and_crowding import RankAndCrowding

        self.niche_of = niche_of
        self.inner = RankAndCrowding()

    def do(self, problem, pop, *args, n_survive=None, random_state=None, **kwargs):
        from pymoo.core.population import Population

        n_survive = len(pop) if n_survive is None else min(n_survive, len(pop))
        labels = np.asarray(self.niche_of(pop.get("X")))
        kinds, sizes = np.unique(labels, return_counts=True)
        quota = np.zeros(len(kinds), int)
        left = n_survive
        open_ = np.ones(len(kinds), bool)
        while left > 0 and open_.any():
            share = max(left // int(open_.sum()), 1)
            for i in np.flatnonzero(open_):
                take = min(share, sizes[i] - quota[i], left)
                quota[i] += take
                left -= take
                if quota[i] >= sizes[i]:
                    open_[i] = False
                if left == 0:
                    break
        parts = [self.inner.do(problem, pop[labels == k], n_survive=int(q),
                               random_state=random_state)
                 for k, q in zip(kinds, quota) if q > 0]
        return Population.merge(*parts) if len(parts) > 1 else parts[0]


_WORKER_DEFINITION = None


def _worker_init(definition):
    global _WORKER_DEFINITION
    _WORKER_DEFINITION = definition


def _worker_ready(_):
    return _WORKER_DEFINITION is not None


def _worker_evaluate(X):
    F, G = _WORKER_DEFINITION.evaluate(X)
    return np.asarray(F, float), np.asarray(G, float)


class VectorProblem(Problem):
    """A pymoo problem evaluating the whole population in one call of ``definition.evaluate``.

    Keeps the time spent in the definition (the physics), the number of evaluations, and the
    least value each constraint reached over the whole run (to say which could never be met).
    """

    def __init__(self, definition, pool=None, workers=1, chunks=1, archive_size=100):
        self.definition = definition
        self.archive_size = archive_size
        self.archive_X = np.empty((0, len(definition.variables)))
        self.archive_F = np.empty((0, len(definition.objective_names)))
        self.variables = list(definition.variables)
        self.lower, self.upper, self.integer, xl, xu = _bounds(self.variables)
        self.n_constraints = len(definition.constraint_names)
        super().__init__(n_var=len(self.variables), n_obj=len(definition.objective_names),
                         n_ieq_constr=self.n_constraints, xl=xl, xu=xu, elementwise=False)
        self.pool = pool
        self.workers = workers
        self.chunks = chunks
        self.physics_time = 0.0
        self.archive_time = 0.0
        self.evaluations = 0
        self.best_constraints = np.full(self.n_constraints, np.inf)

    def __getstate__(self):
        state = self.__dict__.copy()
        state["pool"] = None  # pymoo deep-copies the problem into its result
        return state

    def _evaluate(self, x, out, *args, **kwargs):
        start = time.perf_counter()
        # the split does not depend on where the pieces run, so that the figures (which can
        # differ in their last digits with the batch a design is solved in) and hence the
        # front are the same whatever the number of workers
        pieces = [p for p in np.array_split(x, self.chunks) if len(p)]
        if self.pool is not None and len(pieces) > 1:
            results = list(self.pool.map(_worker_evaluate, pieces))
        else:
            results = [self.definition.evaluate(p) for p in pieces]
        F = np.vstack([np.asarray(r[0], float).reshape(len(p), self.n_obj)
                       for r, p in zip(results, pieces)])
        G = np.vstack([np.asarray(r[1], float).reshape(len(p), self.n_constraints)
                       for r, p in zip(results, pieces)])
        self.physics_time += time.perf_counter() - start
        self.evaluations += len(x)
        F = np.asarray(F, float).reshape(len(x), self.n_obj)
        out["F"] = F
        if self.n_constraints:
            G = np.asarray(G, float).reshape(len(x), self.n_constraints)
            out["G"] = G
            self.best_constraints = np.minimum(self.best_constraints, G.min(axis=0))
        start = time.perf_counter()
        feasible = np.all(G <= 0, axis=1) if self.n_constraints else np.ones(len(x), bool)
        self._archive(np.asarray(x, float)[feasible], F[feasible])
        self.archive_time += time.perf_counter() - start

    def rescreen_archive(self):
        """Evaluate the archive again (after the definition changed how it evaluates) and keep
        what is still feasible and non-dominated."""
        X = self.archive_X
        self.archive_X = np.empty((0, X.shape[1]))
        self.archive_F = np.empty((0, self.n_obj))
        if not len(X):
            return
        F, G = self.definition.evaluate(X)
        F = np.asarray(F, float).reshape(len(X), self.n_obj)
        G = np.asarray(G, float).reshape(len(X), self.n_constraints)
        self.evaluations += len(X)
        feasible = np.all(G <= 0, axis=1)
        self._archive(X[feasible], F[feasible])

    def _archive(self, X, F):
        """Keep the feasible non-dominated designs seen so far (at most ``archive_size``,
        evenly spread in the first objective)."""
        if not len(X):
            return
        X = np.vstack([self.archive_X, X])
        F = np.vstack([self.archive_F, F])
        keep = non_dominated(F)
        keep = keep[np.argsort(F[keep, 0], kind="stable")]
        if len(keep) > self.archive_size:
            keep = keep[np.unique(np.linspace(0, len(keep) - 1, self.archive_size).round()
                                  .astype(int))]
        self.archive_X, self.archive_F = X[keep], F[keep]


@dataclass(frozen=True)
class SearchResult:
    """The final population of a search and its bookkeeping.

    Attributes
    ----------
    X, F, G : ndarray
        Final population: variables, objectives, constraints.
    feasible : ndarray of bool
    front : ndarray of int
        Rows of the final population that are feasible and non-dominated.
    best_constraints : ndarray
        Least value each constraint reached over every evaluation of the run.
    archive : ndarray
        The feasible non-dominated designs of the whole run (rows of the encoding), at most a
        population's worth: the best found on the way, which the final population may have lost.
    evaluations : int
    generations : int
    seed : int
    physics_time : float
        Wall time inside ``definition.evaluate`` (and the workers). [s]
    archive_time : float
        Wall time keeping the archive of the best designs found. [s]
    total_time : float
        Wall time of the whole search. [s]
    history : list of dict
        Per generation: ``generation``, ``feasible`` count, and the best of each objective among
        the feasible designs of the population (NaN while none is feasible).
    """

    X: np.ndarray
    F: np.ndarray
    G: np.ndarray
    feasible: np.ndarray
    front: np.ndarray
    best_constraints: np.ndarray
    archive: np.ndarray
    evaluations: int
    generations: int
    seed: int
    physics_time: float
    archive_time: float
    total_time: float
    history: list = field(default_factory=list)

    @property
    def overhead_time(self) -> float:
        """Wall time of pymoo's own bookkeeping (total less physics and the archive). [s]"""
        return self.total_time - self.physics_time - self.archive_time


def knee(F):
    """The knee of a front: the point farthest inside the plane through its single-objective
    extremes, measured in objectives normalised to the front's range.

    Parameters
    ----------
    F : array_like (P, m)
        Objectives of the front's points (minimised).

    Returns
    -------
    int
        Row of the knee.

    Notes
    -----
    The plane through the m anchor points (each the best in one objective) is the convex hull of
    individual minima of normal-boundary intersection; the point farthest from it towards the
    ideal point is where a step towards any one objective costs the most in the others. When the
    anchors do not span a plane (e.g. one point is best in two objectives) the plane
    ``sum(f) = 1`` through the unit anchors is used instead.

    References
    ----------
    .. [1] I. Das, "On characterizing the 'knee' of the Pareto curve based on normal-boundary
       intersection," Structural Optimization, vol. 18, 1999.
    .. [2] J. Branke, K. Deb, H. Dierolf, M. Osswald, "Finding knees in multi-objective
       optimization," PPSN VIII, LNCS 3242, 2004.
    """
    F = np.asarray(F, float)
    if len(F) <= 2:
        return 0
    lo, hi = F.min(axis=0), F.max(axis=0)
    span = np.where(hi > lo, hi - lo, 1.0)
    f = (F - lo) / span
    anchors = f[np.argmin(F, axis=0)]
    normal = np.ones(F.shape[1])
    if np.linalg.matrix_rank(anchors) == F.shape[1]:
        candidate = np.linalg.solve(anchors, np.ones(F.shape[1]))
        if np.all(candidate > 0):
            normal = candidate
    distance = (1.0 - f @ normal) / np.linalg.norm(normal)
    return int(np.argmax(distance))


def _make_callback(objective_names, history, bar, shown=None):
    from pymoo.core.callback import Callback

    class _Watch(Callback):
        def notify(self, algorithm):
            pop = algorithm.pop
            F = pop.get("F")
            feasible = pop.get("FEAS").ravel()
            best = {name: (float(np.min(F[feasible, i])) if feasible.any() else float("nan"))
                    for i, name in enumerate(objective_names)}
            entry = {"generation": len(history) + 1, "feasible": int(feasible.sum()), **best}
            if not feasible.any():
                entry["least_violation"] = float(np.min(pop.get("CV")))
            history.append(entry)
            if bar is not None:
                post = {"feasible": entry["feasible"]}
                if feasible.any():
                    post.update({k: f"{v:.4g}" if shown is None else shown(k, v)
                                 for k, v in best.items()})
                else:
                    post["least violation"] = f"{entry['least_violation']:.3g}"
                bar.set_postfix(post, refresh=False)
                bar.update(1)

    return _Watch()


#: Added to the seed for the second half of a run with a halfway ``recalibrate`` (any fixed
#: number: the halves draw from generators of their own).
STAGE_SEED = 7919


def _pool(definition, workers):
    """Worker processes holding the definition (None for one worker), started now: before a
    progress bar's monitor thread exists (forking a process that runs threads can deadlock)."""
    if workers <= 1:
        return None
    pool = ProcessPoolExecutor(max_workers=workers, initializer=_worker_init,
                               initargs=(definition,))
    list(pool.map(_worker_ready, range(workers)))
    return pool


def run(definition, population=100, generations=100, seed=1, workers=1, progress=False,
        initial=None, chunks=None) -> SearchResult:
    """Search a definition with NSGA-II for a fixed number of generations.

    Parameters
    ----------
    definition : object
        See the module docstring.
    population : int
        Designs per generation. [-]
    generations : int
        Generations, the initial population counted as the first. [-]
    seed : int
        Seed of the one random generator every operator draws from: same seed, same front.
    workers : int
        Processes to evaluate the population in (1: in this process).
    chunks : int, optional
        Pieces each population is evaluated in; default ``max(2, workers)``. The front for a
        seed is reproducible for a given number of chunks, however many workers run them. A
        definition with ``batch_independent = True`` (each row's result the same in any batch)
        is evaluated whole, in this process: splitting it cannot change the front, and sending
        it to workers would cost more than it saves.
    progress : bool
        Show a progress bar on stderr (the caller decides; e.g. only on a terminal).
    initial : ndarray, optional
        Starting population (rows of the encoding); random if not given.

    With a definition's ``recalibrate``, at least four generations and one worker (worker
    processes would keep the definition as it was), the run is made in two halves: after the
    first, ``recalibrate`` is called with its population and archive, and the second starts
    from that population (seeded ``seed + STAGE_SEED``).

    Returns
    -------
    SearchResult
    """
    from pymoo.algorithms.moo.nsga2 import NSGA2
    from pymoo.optimize import minimize

    start = time.perf_counter()
    if getattr(definition, "batch_independent", False):
        workers, chunks = 1, 1
    # halves only in this process: worker processes would keep the definition as it was
    recalibrate = getattr(definition, "recalibrate", None) if workers <= 1 else None
    stages = ([generations // 2, generations - generations // 2]
              if recalibrate is not None and generations >= 4 else [generations])
    pool, bar = None, None
    try:
        pool = _pool(definition, workers)
        problem = VectorProblem(definition, pool=pool, workers=workers,
                                chunks=chunks or max(2, workers), archive_size=population)
        repair = IntegerRepair(problem.variables)
        own_repair = getattr(definition, "repair", None)
        history = []
        if progress:
            from tqdm import tqdm

            bar = tqdm(total=generations, desc="search", unit="gen", file=sys.stderr,
                       leave=False, dynamic_ncols=True)
        callback = _make_callback(list(definition.objective_names), history, bar,
                                  getattr(definition, "shown", None))
        for stage, budget in enumerate(stages):
            if stage:
                # halfway: the definition corrects itself on what the search holds, then the
                # search goes on from its population (re-evaluated as its next generation)
                held = res.pop.get("X")
                recalibrate(np.unique(np.vstack([held, problem.archive_X]), axis=0))
                problem.rescreen_archive()
                initial = held
            kwargs = {}
            if initial is not None:
                kwargs["sampling"] = repair._do(problem, np.asarray(initial, float))
            if hasattr(definition, "niche"):
                kwargs["survival"] = NicheSurvival(definition.niche)
            if own_repair is not None:
                kwargs["evaluator"] = RepairingEvaluator(problem.variables, own_repair)
            algorithm = NSGA2(pop_size=population, repair=repair, eliminate_duplicates=True,
                              mutation=IndexResetMutation(problem.variables, eta=20),
                              return_least_infeasible=True, **kwargs)
            res = minimize(problem, algorithm, ("n_gen", budget), seed=seed + stage * STAGE_SEED,
                           callback=callback, verbose=False, copy_algorithm=False)
    finally:
        if bar is not None:
            bar.close()
        if pool is not None:
            pool.shutdown()
    pop = res.pop
    X, F = pop.get("X"), pop.get("F")
    n_constr = len(definition.constraint_names)
    G = pop.get("G") if n_constr else np.zeros((len(X), 0))
    feasible = np.all(G <= 0, axis=1) if n_constr else np.ones(len(X), bool)
    return SearchResult(X=X, F=F, G=G, feasible=feasible, front=non_dominated(F, feasible),
                        best_constraints=problem.best_constraints.copy(),
                        archive=problem.archive_X.copy(),
                        evaluations=problem.evaluations, generations=generations, seed=seed,
                        physics_time=problem.physics_time,
                        archive_time=problem.archive_time,
                        total_time=time.perf_counter() - start, history=history)
