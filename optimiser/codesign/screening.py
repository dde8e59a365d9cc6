"""The search's screening tier: a whole population's objectives and constraints as arrays.

:meth:`CoDesign.score` builds every design, simulates it at six corners with the switch-on
transients and prices it line by line: right for the designs a builder will read, too slow to
run a hundred times a generation. :class:`Screen` gives the search the same objectives and
constraints, column for column, from the same choices, with

- the transformers from :meth:`CoDesign.transformer_populations` (one vectorised pass, and
  each distinct transformer designed once per run: the result of a design does not depend on
  the batch it is in),
- the steady state at the four corners the constraints read (nominal idle and full power, high
  mains at full power and with the valves cold) from :func:`optimiser.physics.analytic.steady_state`,
  all corners in one call,
- the switch-on surge and charge-up overshoot from :func:`optimiser.physics.analytic.surge` and
  :func:`optimiser.physics.analytic.choke_overshoot`, the discharge time of each capacitor through its
  own bleeder,
- where the spec sets sag attack or recovery windows, the sag step on the cycle-averaged
  circuit (:func:`optimiser.physics.transients.averaged_sag_step`),
- prices from per-choice tables filled once from :mod:`optimiser.assessment.bill`
  (:mod:`optimiser.codesign.screen_parts`),
- the checks from the one table both tiers use (:mod:`optimiser.assessment.checks`), fed the
  screen's figures (:mod:`optimiser.codesign.screen_figures`).

Where the screen's figures differ from the full assessment's, they lean to the cautious side
(more ripple, a larger surge): left alone, that would steer the search away from designs that
sit at a limit. So when a screen is made it measures itself: a random sample of the spec's
designs is assessed both ways, and each constraint is eased by the screen's typical excess
over the full value near its limit (:meth:`Screen._calibrate`).

What the search keeps is then assessed in full (:func:`optimiser.codesign.optimise`); the
screen only steers. ``tests/test_analytic.py`` and ``tests/test_screening.py`` measure how
closely it agrees with the simulator and the full assessment.
"""

from __future__ import annotations

import numpy as np

from optimiser.assessment import checks as check_table
from optimiser.codesign import branches, objective_table, screen_figures
from optimiser.codesign.screen_parts import PartTables, RectifierOptions, TransformerCache

__all__ = ["Screen"]

#: Designs of a random sample assessed both ways when a screen is made, to measure how far the
#: screen is from the full assessment on this spec's own design space.
CALIBRATION_SAMPLE = 96
#: Share of the sample's designs near a limit that the eased screen lets through where the full
#: assessment would (the quantile of the screen's excess over the full value). [-]
CALIBRATION_QUANTILE = 0.5
#: Least number of the sample's designs near a limit needed to measure a constraint; with
#: fewer, the screen is not eased for it.
CALIBRATION_MINIMUM = 8
#: A kept design counts as near a limit, for the per-branch correction, within this much of
#: it (constraints are ratios - 1, or errors in units of their allowance). [-]
BRANCH_NEAR = 0.25
#: Least number of a branch's designs near a limit for its correction to be measured.
BRANCH_MINIMUM = 4


def _excess(G_screen, G_full, rows, near, minimum):
    """Per constraint, the :data:`CALIBRATION_QUANTILE` of the screen's excess over the full
    value among ``rows`` (bool) within ``near`` of the limit by the full value, where the screen
    solved the design (a screen value of 1e5 or more marks one it could not); NaN where fewer
    than ``minimum`` such designs. (M,)"""
    out = np.full(G_full.shape[1], np.nan)
    for j in range(G_full.shape[1]):
        close = rows & (np.abs(G_full[:, j]) < near) & (np.abs(G_screen[:, j]) < 1e5)
        if close.sum() >= minimum:
            out[j] = float(np.quantile(G_screen[close, j] - G_full[close, j],
                                       CALIBRATION_QUANTILE))
    return out


class Screen:
    """Objectives and constraints of whole populations, for the search (see module docstring).

    Parameters
    ----------
    binding : CoDesign
    """

    def __init__(self, binding):
        self.b = binding
        s = binding.spec
        self.spec = s
        self.n = len(binding.node_names)
        cond = binding.conditions
        self.high = (1 + cond.mains_high) * (1 + cond.transformer_tolerance)
        self.frequency = s.mains.frequency
        self.full = np.array([ns.full_power_current for ns in s.nodes])
        self.idle = np.array([ns.idle_current for ns in s.nodes])
        self.rectifiers = RectifierOptions(binding)
        self.parts = PartTables(binding)
        self.transformers = TransformerCache(binding, self.rectifiers.option_key)
        self.slack = self._calibrate()
        #: per branch (rows: :func:`optimiser.codesign.branches.branches_of`), a correction to
        #: the easing measured on designs the search kept (:meth:`recalibrate`); zero until then
        self.branch_slack = np.zeros((len(branches.branches_of(s)), len(self.slack)))
        #: (F, G) of rows screened just before they are evaluated (:meth:`remember`: the
        #: winding's sizing, :mod:`optimiser.codesign.winding`), by the row's bytes (a design's
        #: screen figures do not depend on its batch), so the search does not screen a design
        #: twice; emptied by each :meth:`evaluate`
        self._remembered = {}

    def _calibrate(self):
        """How much to ease each constraint: on a random sample assessed both ways, the
        :data:`CALIBRATION_QUANTILE` of the screen's excess over the full assessment among the
        designs within one allowance of the limit (0 where the screen is not conservative or
        too few designs are near the limit)."""
        from optimiser.codesign.nsga import random_population

        X = random_population(self.b.variables, CALIBRATION_SAMPLE, seed=0)
        G_screen = self.score(X)[1]
        G_full = self.b.evaluate_full(X)[1]
        excess = _excess(G_screen, G_full, np.ones(len(X), bool), 1.0, CALIBRATION_MINIMUM)
        return np.where(np.isnan(excess), 0.0, np.maximum(excess, 0.0))

    def evaluate(self, X):
        """(F (B, n_obj), G (B, M)) of a population matrix: the objectives and constraints of the
        full assessment, estimated, each constraint eased by the error measured when the screen
        was made (:meth:`_calibrate`) and by its branch's correction (:meth:`recalibrate`).
        Designs screened just before (:meth:`remember`) are not screened again."""
        X = np.atleast_2d(np.asarray(X, float))
        known, self._remembered = self._remembered, {}
        hits = [known.get(row.tobytes()) for row in X]
        missing = np.flatnonzero([hit is None for hit in hits])
        if len(missing) == len(X):
            F, G, _ = self.score(X)
        else:
            F = np.empty((len(X), len(self.b.objective_names)))
            G = np.empty((len(X), len(self.slack)))
            if len(missing):
                F[missing], G[missing], _ = self.score(X[missing])
            for r, hit in enumerate(hits):
                if hit is not None:
                    F[r], G[r] = hit
        return F, G - self.slack - self.branch_slack[self.b.niche(X)]

    def recalibrate(self, X, G_full):
        """Correct the easing per branch from designs assessed both ways (the search's kept
        designs, which sit near the limits that bind): for each branch and constraint with at
        least :data:`BRANCH_MINIMUM` such designs within :data:`BRANCH_NEAR` of the limit, the
        easing becomes the :data:`CALIBRATION_QUANTILE` (the median) of the screen's excess
        over the full value among them (which may tighten the screen where, on that branch, it
        is optimistic).

        Parameters
        ----------
        X : ndarray (B, n_var)
        G_full : ndarray (B, M)
            The full assessment's constraints of the same rows.
        """
        X = np.atleast_2d(np.asarray(X, float))
        G_screen = self.score(X)[1]
        niche = self.b.niche(X)
        excess = np.array([_excess(G_screen, G_full, niche == b, BRANCH_NEAR, BRANCH_MINIMUM)
                           for b in range(len(self.branch_slack))])
        self.branch_slack = np.where(np.isnan(excess), 0.0, excess - self.slack)

    def remember(self, X, F, G):
        """Keep rows' screen figures (F, G uneased, as :meth:`score` gives them) for the next
        :meth:`evaluate`, which then does not screen them again."""
        for row, f, g in zip(np.atleast_2d(X), F, G):
            self._remembered[row.tobytes()] = (f, g)

    def forget(self):
        """Drop the figures :meth:`remember` kept."""
        self._remembered = {}

    def check_ratio_names(self, X):
        """Names of the check ratios the screen computes for a population."""
        return list(self.score(X)[2])

    def score(self, X):
        """(F, G uneased, check ratios per design by name) of a population matrix."""
        b, s, pt, ro = self.b, self.spec, self.parts, self.rectifiers
        choice = b.choices(X)
        count = len(choice["rectifier"])
        tr = self.transformers(choice)
        crest = b.crest_voltage(tr["hv_open_circuit_voltage"])
        cap = pt.capacitors(choice["capacitance"], crest, choice["rating_steps"])
        feed = pt.feeds(choice["feeds"])
        bleed = pt.bleeders(choice["capacitance"], crest)
        cost = (tr["cost"] + ro.cost[choice["rectifier"]] + cap["cost"].sum(axis=1)
                + cap["cost"][:, 0] * (ro.n_positions[choice["rectifier"]] - 1) + feed["cost"]
                + pt.class_cost[bleed["class"]].sum(axis=1))

        # one row per design and switch position, all corners in one call
        owner, within, position = ro.rows(choice["rectifier"])
        rows = screen_figures.Rows(
            owner=owner, position=position,
            elements={f: v[position] for f, v in ro.elements.items()},
            topology=ro.topology[position], hv_voltage=tr["hv_open_circuit_voltage"][owner],
            hv_resistance=tr["hv_series_resistance"][owner],
            hv_leakage_inductance=tr["hv_leakage_inductance"][owner],
            capacitance=choice["capacitance"][owner], esr=cap["esr"][owner],
            feed_resistance=feed["resistance"][owner], feed_inductance=feed["inductance"][owner],
            bleeder=bleed["resistance"][owner])
        tol0 = pt.tol_plus[0]
        f, stacked, failed = screen_figures.corners(rows, self.high, tol0, self.idle, self.full,
                                                    self.frequency)
        switch = screen_figures.switch_on(rows, f, self.high, tol0, bleed["c_plus"][owner],
                                          self.frequency, b.conditions.safe_voltage)
        fig = screen_figures.check_figures(b, ro, rows, f, switch, tr, cap, feed, bleed["power"],
                                           choice["hv_current"], tol0,
                                           pt.class_working[bleed["class"]])
        ratios = self._named(check_table.evaluate(fig), ro.prefix[position])
        # per design: worst over positions; a position the screen could not solve fails
        by_design = {name: _per_design(np.where(failed, np.nan, values), owner, count)
                     for name, (values, _) in ratios.items()}
        stress = objective_table.row_worst(np.column_stack(
            [by_design[name] for name, (_, r) in ratios.items() if r] or [np.full(count, np.nan)]))

        figures = {}
        for k, ns in enumerate(s.nodes):
            for key, corner, fig_key in (("idle_voltage", "nominal_idle", "dc_voltage"),
                                         ("full_power_voltage", "nominal_full", "dc_voltage"),
                                         ("ripple_pp", "nominal_full", "ripple_pp")):
                figures[f"{ns.name}.{key}"] = _spread(f[corner][fig_key][:, k], owner, within,
                                                      count, failed)
        k = s.sag_node
        idle_v = f["nominal_idle"]["dc_voltage"][:, k]
        full_v = f["nominal_full"]["dc_voltage"][:, k]
        figures["static_drop"] = _spread((idle_v - full_v) / idle_v, owner, within, count, failed)
        if b.needs_sag_dynamics:
            cond = b.conditions
            sag = screen_figures.sag_times(f, stacked, len(owner), self.n, self.frequency,
                                           self.idle, self.full, cond.sag_hold, cond.sag_release)
            for what in ("attack", "recovery"):
                figures[f"{what}_time"] = _spread(sag[what][:, k], owner, within, count, failed)
        else:
            none = np.full((count, 1), np.nan)
            figures["attack_time"] = figures["recovery_time"] = none
        G = b.constraint_values(figures, tr["buildable"], cap["made"], by_design)
        life = screen_figures.shortest_life(f, rows, ro, pt.series, cap["ripple"][owner],
                                            b.conditions)
        life = -_per_design(-np.where(failed, np.nan, life), owner, count)  # worst position
        figs = b.objective_figures(cost, figures["static_drop"], stress, life)
        return b.objective_values(figs), G, by_design

    @staticmethod
    def _named(columns, prefixes):
        """{check name: (ratio (R,), counts towards the rectifier stress)}; a switchable pair's
        checks carry their position's name, as the assessment names them."""
        out = {c.name: (c.ratio, c.rectifier) for c in columns}
        kinds = np.unique(prefixes)
        if len(kinds) == 1 and not kinds[0]:
            return out
        named = {}
        for prefix in kinds:
            mask = prefixes == prefix
            for name, (values, rectifier_check) in out.items():
                key = f"{prefix}/{name}" if prefix else name
                named[key] = (np.where(mask, values, np.nan), rectifier_check)
        return named


def _per_design(values, owner, count):
    """Worst of a row figure over each design's rows (NaN where none applies). (B,)"""
    if len(owner) == count:  # one row per design: no switchable pair in the batch
        return values
    out = np.full(count, -np.inf)
    np.maximum.at(out, owner, np.where(np.isnan(values), -np.inf, values))
    return np.where(np.isneginf(out), np.nan, out)


def _spread(values, owner, slot, count, failed):
    """A row figure as (B, P): one column per switch position (``slot``), NaN where a design
    has fewer positions or the screen failed."""
    out = np.full((count, slot.max() + 1 if len(slot) else 1), np.nan)
    out[owner, slot] = np.where(failed, np.nan, values)
    return out
