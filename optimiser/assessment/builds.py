"""Sampled builds of one design, and the fraction of them that pass (the yield).

A *build* is the design as one real unit comes out: its mains, its transformer's EMF and
winding resistance, each capacitor, each resistor and its rectifier valve drawn from the
design's tolerance model (:mod:`optimiser.inputs.tolerances`). Each build is itself a design
whose tolerance corners are collapsed to its own sampled values (no mains band, no winder's
or capacitor tolerance left), so the full assessment (:func:`assess_many`) takes every check
of every build at that build's own values, all builds in one vectorised call.

This is the Monte Carlo method of tolerance analysis: draw parts from their distributions,
evaluate, count the passes (e.g. J. M. Hammersley and D. C. Handscomb, *Monte Carlo Methods*,
Methuen 1964, ch. 5; the yield's sampling error is binomial, sqrt(y (1 - y) / N)).
"""

from __future__ import annotations

import os
from concurrent.futures import ThreadPoolExecutor
from collections.abc import Sequence
from dataclasses import dataclass

import numba
import numpy as np
import pandas as pd
from scipy import stats

from optimiser.parts import catalogue as parts
from optimiser.physics import transients
from optimiser.inputs.design import Design, load_design
from optimiser.inputs.tolerances import Spread, Tolerances
from optimiser.assessment.full import _solve_group, assess_many
from optimiser.assessment.steady_state import _groups

__all__ = ["Builds", "sample_builds", "YieldResult", "yield_of", "assess_yield",
           "FIGURES", "PERCENTILES"]

#: Percentiles reported of every check ratio and node figure. [%]
PERCENTILES = (1, 50, 99)
#: Builds assessed together at most (:func:`check_table`).
CHUNK = 500
#: Per-node figures whose spread over the builds is reported.
FIGURES = ("idle_voltage", "full_power_voltage", "static_drop_percent")


@dataclass(frozen=True)
class Builds:
    """Sampled builds of one design.

    Attributes
    ----------
    designs : BuildList
        One Design per build, its corners collapsed to its sampled values.
    factors : dict of str -> ndarray
        Each sampled quantity over its nominal value [-] (``capacitors``, ``feeds``,
        ``bleeders`` shaped (N, nodes); the others (N,)), and ``ambient`` [degC].
    """

    designs: "BuildList"
    factors: dict


class BuildList(Sequence):
    """The builds of one design as a sequence of :class:`Design`, each made when it is read
    (so that :func:`check_table` makes them in its worker threads, beside the compiled loops).

    All share the design's ladder shape, mains frequency and kind of rectifier path: the
    factors scale values, never add or remove a part.
    """

    def __init__(self, design: Design, factors: dict, count: int):
        self.design, self.factors, self.count = design, factors, count

    def __len__(self):
        return self.count

    def __getitem__(self, j):
        if isinstance(j, slice):
            return [self[i] for i in range(*j.indices(self.count))]
        if not -self.count <= j < self.count:
            raise IndexError(j)
        return _build(self.design, self.factors, j % self.count)


def _band(spread: Spread, minus, plus):
    """The spread's band, the design's own (minus, plus) where the spread leaves it out."""
    return (spread.minus if spread.minus is not None else minus,
            spread.plus if spread.plus is not None else plus)


def draw(spread: Spread, minus, plus, shape, rng) -> np.ndarray:
    """Factors over nominal, 1 + e with e drawn from the spread inside [-minus, +plus]. [-]

    ``normal``: zero mean, sigma = (minus + plus) / 2 / sigmas, truncated to the band.
    """
    lo, hi = -np.asarray(minus, float), np.asarray(plus, float)
    u = rng.random(shape)
    if spread.distribution == "uniform":
        return 1.0 + lo + (hi - lo) * u
    sigma = np.maximum((hi - lo) / 2.0 / spread.sigmas, 1e-300)
    a, b = stats.norm.cdf(lo / sigma), stats.norm.cdf(hi / sigma)
    return 1.0 + sigma * stats.norm.ppf(a + (b - a) * u)


def capacitor_band(design: Design, node) -> tuple:
    """(minus, plus) of one capacitor: the conditions' override, else its series'. [-]"""
    c = design.conditions
    series = parts.find_part("capacitor", node.capacitor_series or c.capacitor_series)
    return (c.capacitor_minus if c.capacitor_minus is not None else series.tolerance.minus,
            c.capacitor_plus if c.capacitor_plus is not None else series.tolerance.plus)


def sample_builds(design, count: int, seed: int = 0, tolerances: Tolerances | None = None):
    """Draw ``count`` builds of a design from its tolerance model.

    Parameters
    ----------
    design : path, dict or Design
    count : int
        Number of builds.
    seed : int
        Seed of the draws (the same seed gives the same builds).
    tolerances : Tolerances, optional
        Instead of the design's own ``tolerances:`` (a spec's, for a search).

    Returns
    -------
    Builds
    """
    d = load_design(design)
    tol = tolerances or d.tolerances
    c = d.conditions
    rng = np.random.default_rng(seed)
    n = len(d.nodes)
    f = {
        "mains": draw(tol.mains, *_band(tol.mains, c.mains_low, c.mains_high), count, rng),
        "secondary_voltage": draw(tol.secondary_voltage, *_band(
            tol.secondary_voltage, c.transformer_tolerance, c.transformer_tolerance), count, rng),
        "winding_resistance": draw(tol.winding_resistance, *_band(tol.winding_resistance, 0, 0),
                                   count, rng),
        "perveance": draw(tol.perveance, *_band(tol.perveance, 0, 0), count, rng),
    }
    bands = np.array([_band(tol.capacitors, *capacitor_band(d, node)) for node in d.nodes])
    f["capacitors"] = draw(tol.capacitors, bands[:, 0], bands[:, 1], (count, n), rng)
    r_band = _band(tol.resistors, 0, 0)
    f["feeds"] = draw(tol.resistors, *r_band, (count, n), rng)
    f["bleeders"] = draw(tol.resistors, *r_band, (count, n), rng)
    hot = tol.ambient.max if tol.ambient.max is not None else c.ambient
    cold = min(tol.ambient.min, hot)
    f["ambient"] = cold + (hot - cold) * rng.random(count)
    return Builds(designs=BuildList(d, f, count), factors=f)


def _build(d: Design, f: dict, j: int) -> Design:
    """Build ``j``: the design at its sampled values, its tolerance corners collapsed."""
    t = d.transformer
    transformer = _copy(t, {
        "secondary_voltage": t.secondary_voltage * f["mains"][j] * f["secondary_voltage"][j],
        "secondary_resistance": t.secondary_resistance * f["winding_resistance"][j]})
    nodes = []
    for k, node in enumerate(d.nodes):
        update = {"capacitance": node.capacitance * f["capacitors"][j, k]}
        if node.bleeder is not None:
            update["bleeder"] = node.bleeder * f["bleeders"][j, k]
        if node.feed is not None and node.feed.inductance == 0:  # a resistor, not a choke
            update["feed"] = _copy(node.feed, {
                "resistance": node.feed.resistance * f["feeds"][j, k]})
        nodes.append(_copy(node, update))
    conditions = _copy(d.conditions, {
        "mains_low": 0.0, "mains_high": 0.0, "transformer_tolerance": 0.0,
        "capacitor_minus": 0.0, "capacitor_plus": 0.0, "ambient": float(f["ambient"][j])})
    update = {"transformer": transformer, "nodes": nodes, "conditions": conditions}
    r = d.rectifier
    if d.switchable:  # each position's own reservoir spreads like the first node's capacitor
        positions = {name: p if p.reservoir is None else _copy(p, {
            "reservoir": _copy(p.reservoir, {
                "capacitance": p.reservoir.capacitance * f["capacitors"][j, 0]})})
            for name, p in r.positions.items()}
        update["rectifier"] = _copy(r, {"positions": positions})
    build = _copy(d, update)
    if d.transformer_design is not None:
        object.__setattr__(build, "_built", d.transformer_design)
    object.__setattr__(build, "_perveance_factor", float(f["perveance"][j]))
    return build


def _copy(model, update: dict):
    """``model.model_copy(update=update)`` by the same steps (a shallow copy, the fields
    updated and marked set, nothing validated) without pydantic's general path: a build takes
    eight copies."""
    new = object.__new__(type(model))
    object.__setattr__(new, "__dict__", {**model.__dict__, **update})
    extra, private = model.__pydantic_extra__, getattr(model, "__pydantic_private__", None)
    object.__setattr__(new, "__pydantic_extra__", None if extra is None else dict(extra))
    object.__setattr__(new, "__pydantic_fields_set__",
                       model.__pydantic_fields_set__ | update.keys())
    object.__setattr__(new, "__pydantic_private__", None if private is None else dict(private))
    return new


@dataclass(frozen=True)
class YieldResult:
    """The yield of one design over its sampled builds.

    Attributes
    ----------
    samples : int
    seed : int
    passed : ndarray of bool (N,)
        Whether each build passed every check.
    ratios : DataFrame
        Per build (row) and check (column) its ratio, <= 1 passing, NaN where not applicable.
    figures : DataFrame
        Per build the ``<node>.<figure>`` columns of :data:`FIGURES`.
    """

    samples: int
    seed: int
    passed: np.ndarray
    ratios: pd.DataFrame
    figures: pd.DataFrame

    @property
    def fraction(self) -> float:
        """Fraction of builds passing every check. [-]"""
        return float(self.passed.mean()) if self.samples else float("nan")

    @property
    def standard_error(self) -> float:
        """Binomial sampling error of :attr:`fraction`. [-]"""
        y = self.fraction
        return float(np.sqrt(max(y * (1 - y), 0.0) / max(self.samples, 1)))

    def checks(self) -> list:
        """Per check: name, fraction passing and the ratio's percentiles, least passing first."""
        out = []
        for name in self.ratios.columns:
            r = self.ratios[name].to_numpy(float)
            applies = np.isfinite(r)
            if not applies.any():
                continue
            q = np.percentile(r[applies], PERCENTILES)
            out.append({"name": name, "yield": float(np.mean(r[applies] <= 1.0)),
                        "applies": int(applies.sum()),
                        **{f"p{p}": float(v) for p, v in zip(PERCENTILES, q)}})
        return sorted(out, key=lambda c: (c["yield"], -c[f"p{PERCENTILES[-1]}"]))

    def nodes(self) -> list:
        """Per ``<node>.<figure>`` column: mean, standard deviation and percentiles."""
        out = []
        for name in self.figures.columns:
            v = self.figures[name].to_numpy(float)
            v = v[np.isfinite(v)]
            if not v.size:
                continue
            q = np.percentile(v, PERCENTILES)
            out.append({"name": name, "mean": float(v.mean()), "std": float(v.std(ddof=1))
                        if v.size > 1 else 0.0, **{f"p{p}": float(x) for p, x in
                                                    zip(PERCENTILES, q)}})
        return out

    def likely_failures(self, count=3) -> list:
        """The ``count`` checks most likely to fail (least yield, then highest 99th ratio)."""
        return self.checks()[:count]

    def to_dict(self) -> dict:
        return {"samples": self.samples, "seed": self.seed, "fraction": self.fraction,
                "standard_error": self.standard_error, "checks": self.checks(),
                "nodes": self.nodes()}


def yield_of(ratios: pd.DataFrame, figures: pd.DataFrame, seed: int = 0) -> YieldResult:
    """The yield from per-build check ratios (NaN: the check does not apply, it passes)."""
    r = ratios.to_numpy(float)
    passed = ~(np.where(np.isnan(r), 0.0, r) > 1.0).any(axis=1)
    return YieldResult(samples=len(ratios), seed=seed, passed=passed,
                       ratios=ratios.reset_index(drop=True),
                       figures=figures.reset_index(drop=True))


def node_figures(frame: pd.DataFrame) -> pd.DataFrame:
    """The ``<node>.<figure>`` columns of :data:`FIGURES` from an assessment frame."""
    cols = [c for c in frame.columns if c.rsplit(".", 1)[-1] in FIGURES]
    return frame[cols].apply(pd.to_numeric, errors="coerce")


def assess_yield(design, count: int, seed: int = 0, tolerances=None) -> YieldResult:
    """Sample ``count`` builds of a design and assess them all (steady state at idle and full
    power, switch-on, switch-off, every check; the sag depth is the static drop).

    Parameters
    ----------
    design : path, dict or Design
    count : int
    seed : int
    tolerances : Tolerances, optional
        Instead of the design's own.

    Returns
    -------
    YieldResult
    """
    builds = sample_builds(design, count, seed, tolerances)
    if builds.designs.design.switchable:  # a pair: one assessment per position
        table = assess_many(list(builds.designs), dynamics=False, lean=True)
        return yield_of(table.ratios, node_figures(table.frame), seed)
    return yield_of(*check_table(builds.designs), seed)


def check_table(designs, chunk=CHUNK, threads=None):
    """Every check ratio and the :data:`FIGURES` of designs without a switch, straight from the
    full tier's check columns (:func:`assess_many`'s figures, without its per-design objects).

    Parameters
    ----------
    designs : list of Design, or BuildList
        (A :class:`BuildList`'s builds are made chunk by chunk in the threads.)
    chunk : int
        Designs solved together at most (the arrays of a few hundred stay in the caches).
    threads : int, optional
        Chunks solved at once (default: one per core). The compiled marches release the
        interpreter lock, so the threads overlap; each chunk's figures are its own, so the
        result is the same for any number of threads.

    Returns
    -------
    (ratios, figures) : DataFrame, DataFrame
        Row per design; a check applying to none of them left out.
    """
    groups = [range(len(designs))] if isinstance(designs, BuildList) else \
        _groups(designs).values()  # (one design's builds are of one ladder shape)
    parts = [list(m[i:i + chunk]) for m in groups for i in range(0, len(m), chunk)]

    def table(members):
        if pool_threads > 1:  # the pool fills the cores: each kernel on its thread alone
            numba.set_num_threads(1)  # (this thread's own setting)
        group = [designs[i] for i in members]
        solved, *_, columns = _solve_group(group, False, False, True)
        ratios = pd.DataFrame({c.name: c.ratio for c in columns}, index=members)
        idle = solved["nominal_idle"][3]["dc_voltage"]
        full = solved["nominal_full"][3]["dc_voltage"]
        with np.errstate(divide="ignore", invalid="ignore"):
            percent = np.where(idle != 0, 100 * (idle - full) / idle, np.nan)
        return ratios, pd.DataFrame({f"{node.name}.{name}": values[:, k]
                                     for k, node in enumerate(group[0].nodes)
                                     for name, values in zip(FIGURES, (idle, full, percent))},
                                    index=members)

    if not parts:
        return pd.DataFrame(), pd.DataFrame()
    pool_threads = 1
    if _threading_layer() != "workqueue":  # (that one is not safe from two threads)
        pool_threads = threads or os.cpu_count() or 1
    with ThreadPoolExecutor(max_workers=pool_threads) as pool:
        ratios, figures = zip(*pool.map(table, parts))
    ratios = pd.concat(ratios).sort_index()
    return ratios.dropna(axis=1, how="all"), pd.concat(figures).sort_index()


def _threading_layer() -> str:
    """numba's threading layer, started (by a parallel kernel's call on no designs) if it has
    not been yet."""
    empty = np.empty((0, 1, 1))
    transients.output_statistics((empty, np.empty((0, 1, 2))), empty, np.empty((0, 1)),
                                 np.empty((0, 1)))
    return numba.threading_layer()
