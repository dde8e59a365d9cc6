"""Objectives and constraints: the columns of F and G, from designs' figures.

Both tiers of the search fill the same figures (the full assessment in
:mod:`optimiser.codesign.scoring`, the screen in :mod:`optimiser.codesign.screening`) and hand
them to :meth:`Objectives.objective_values` and :meth:`Objectives.constraint_values`, so the
two agree column for column:

- objectives ``F``: the spec's 2-4 named objectives (:attr:`Objectives.names`; default cost,
  regulation or sag_error, rectifier_stress), each defined once in
  :mod:`optimiser.codesign.objective_table` (cost in cost units; regulation the static drop at
  the sag node; sag_error its distance from the target; rectifier stress the worst
  actual-to-rated ratio of the rectifier's ratings; life the shortest part life), in their
  search values;
- constraints ``G`` (feasible where every column is <= 0): each node's DC voltage inside its
  window, ripple inside its limit, the sag inside its tolerance (and attack/recovery inside
  their windows), the transformer buildable, each capacitor value made at its rating, and every
  check of the assessment at most 1.

Each constraint column is scaled so that 1.0 means "missed by the whole allowance" (a window's
half-width, a limit's own size); its :class:`ConstraintInfo` turns a value back into volts,
percent or a ratio for the report, and :class:`Unmet` reports a constraint no design met.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from optimiser.codesign import objective_table
from optimiser.formats.units import format_quantity
from optimiser.inputs.spec import Spec

__all__ = ["OBJECTIVES", "ConstraintInfo", "Unmet", "Objectives"]

#: Every objective a spec may name, in the order of the results' objective columns
#: (:data:`optimiser.codesign.objective_table.OBJECTIVES`).
OBJECTIVES = tuple(objective_table.OBJECTIVES)


@dataclass(frozen=True)
class ConstraintInfo:
    """One constraint column of G.

    Attributes
    ----------
    name : str
        E.g. ``"plates.dc_voltage.low"`` or ``"check: valve.piv"``.
    description : str
        What it asks, for people.
    scale : float
        ``g · scale`` is the miss in ``unit``; for a ratio, ``g + 1`` is the ratio.
    unit : str
        ``"V"``, ``"s"``, ``"%"``, ``"ratio"`` or ``"flag"``.
    """

    name: str
    description: str
    scale: float
    unit: str

    def miss(self, g: float) -> str:
        """How far a constraint value is from being met, in the constraint's own terms."""
        if not math.isfinite(g):
            return "not computable (the solution failed)"
        if self.unit == "ratio":
            return f"ratio {g + 1.0:.4g} against a limit of 1 ({100 * g:.3g} % over)"
        if self.unit == "%":
            return f"{100 * g * self.scale:.3g} percentage points outside"
        if self.unit == "flag":
            return "not met"
        return f"{format_quantity(g * self.scale, self.unit)} outside"


@dataclass(frozen=True)
class Unmet:
    """A constraint that no evaluated design met.

    Attributes
    ----------
    constraint : ConstraintInfo
    best : float
        The least value it reached over the whole search (> 0: missed).
    """

    constraint: ConstraintInfo
    best: float

    @property
    def miss(self) -> str:
        return self.constraint.miss(self.best)


class Objectives:
    """The objectives and constraints of one spec (see module docstring).

    Parameters
    ----------
    spec : Spec
    check_names : sequence of str
        The assessment checks any allowed design can have, one constraint column each
        (:func:`optimiser.codesign.scoring.check_names`); any other check a design has shares
        one further column.
    """

    def __init__(self, spec: Spec, check_names):
        self.spec = spec
        #: the objectives searched, in F's column order
        self.names = objective_table.names_for(spec)
        self.check_names = tuple(check_names)
        self.constraints = self._constraint_info()
        self.constraint_names = [ci.name for ci in self.constraints]

    def _constraint_info(self):
        s = self.spec
        out = []
        for ns in s.nodes:
            where = "at idle" if ns.at == "idle" else "at full power"
            out.append(ConstraintInfo(f"{ns.name}.dc_voltage.low", f"{ns.name} DC {where} at "
                                      f"least {format_quantity(ns.dc_voltage - ns.window, 'V')}",
                                      ns.window, "V"))
            out.append(ConstraintInfo(f"{ns.name}.dc_voltage.high", f"{ns.name} DC {where} at "
                                      f"most {format_quantity(ns.dc_voltage + ns.window, 'V')}",
                                      ns.window, "V"))
            if ns.ripple is not None or ns.hum is not None:
                limit = (f"{format_quantity(ns.ripple, 'V')} p-p" if ns.ripple is not None
                         else f"{ns.hum:g} dB below its DC")
                out.append(ConstraintInfo(f"{ns.name}.ripple", f"{ns.name} ripple at full power "
                                          f"within {limit}", 1.0, "ratio"))
        if s.sag is not None:
            sg = s.sag
            node = s.nodes[s.sag_node].name
            out.append(ConstraintInfo("sag", f"static sag at {node} {100 * sg.target:.3g} % "
                                      f"+/- {100 * sg.tolerance:.3g} %", sg.tolerance, "%"))
            for what in ("attack", "recovery"):
                window = getattr(sg, what)
                if window is None:
                    continue
                if window.min is not None:
                    out.append(ConstraintInfo(f"sag.{what}.min", f"sag {what} time at {node} at "
                                              f"least {format_quantity(window.min, 's')}",
                                              window.min, "s"))
                if window.max is not None:
                    out.append(ConstraintInfo(f"sag.{what}.max", f"sag {what} time at {node} at "
                                              f"most {format_quantity(window.max, 's')}",
                                              window.max, "s"))
        out.append(ConstraintInfo("transformer.buildable", "the transformer can be wound: wire "
                                  "available, stack in range, voltage reachable, design "
                                  "converged", 1.0, "flag"))
        for ns in s.nodes:
            out.append(ConstraintInfo(f"{ns.name}.capacitor_made", f"the {ns.name} capacitor "
                                      "value is made at its voltage rating in its series", 1.0,
                                      "flag"))
        for name in self.check_names:
            out.append(ConstraintInfo(f"check: {name}", f"{name} within its rating", 1.0, "ratio"))
        out.append(ConstraintInfo("check: other", "any further check within its rating", 1.0,
                                  "ratio"))
        return out

    def objective_figures(self, cost, drop, stress, life):
        """Every objective's figure per design, {name: (B,)}, from cost [cost units], the
        static drop at the sag node per position (B, P) [-], the rectifier stress [-] and the
        shortest part life [h] (:func:`optimiser.codesign.objective_table.figures_of`)."""
        return objective_table.figures_of(self.spec, cost, drop, stress, life)

    def objective_values(self, figures):
        """F (B, n_obj) of the searched objectives; a figure that failed counts as very bad."""
        return objective_table.search_values(self.names, figures)

    def constraint_values(self, figures, buildable, made, ratios):
        """G (B, M) from the figures of designs.

        Parameters
        ----------
        figures : dict of ndarray (B, P)
            Per switch position (P = 1 for a fixed rectifier; NaN where a design has fewer):
            ``<node>.idle_voltage``, ``<node>.full_power_voltage``, ``<node>.ripple_pp`` at
            nominal mains [V]; ``static_drop`` at the sag node [-]; ``attack_time``,
            ``recovery_time`` [s].
        buildable : ndarray of bool (B,)
        made : ndarray of bool (B, N)
            Each node's capacitor value made at its voltage rating.
        ratios : dict of str -> ndarray (B,)
            Check ratios by check name (NaN where a check does not apply).
        """
        s = self.spec
        count = len(buildable)
        worst = objective_table.row_worst
        g = []
        for ns in s.nodes:
            v = figures[f"{ns.name}.idle_voltage" if ns.at == "idle"
                        else f"{ns.name}.full_power_voltage"]
            g.append(worst((ns.dc_voltage - ns.window - v) / ns.window))
            g.append(worst((v - ns.dc_voltage - ns.window) / ns.window))
            if ns.ripple is not None or ns.hum is not None:
                ripple = figures[f"{ns.name}.ripple_pp"]
                full_v = figures[f"{ns.name}.full_power_voltage"]
                g.append(worst(ripple / ns.ripple_pp_limit(full_v) - 1.0))
        drop = figures["static_drop"]
        if s.sag is not None:
            off = np.abs(drop - s.sag.target)
            g.append(worst((off - s.sag.tolerance) / s.sag.tolerance))
            for what in ("attack", "recovery"):
                window = getattr(s.sag, what)
                if window is None:
                    continue
                t = figures[f"{what}_time"]
                if window.min is not None:
                    g.append(worst((window.min - t) / window.min))
                if window.max is not None:
                    g.append(worst((t - window.max) / window.max))
        g.append(np.where(buildable, 0.0, 1.0))
        for k in range(len(s.nodes)):
            g.append(np.where(made[:, k], -1.0, 1.0))
        known = self.check_names
        missing = np.full(count, np.nan)
        checks = np.column_stack([ratios.get(name, missing) for name in known]) - 1.0
        g.extend(np.where(np.isnan(checks), -1.0, checks).T)
        others = [ratios[c] for c in ratios if c not in known]
        if others:
            g.append(np.nan_to_num(worst(np.column_stack(others)) - 1.0, nan=-1.0))
        else:
            g.append(np.full(count, -1.0))
        G = np.column_stack(g)
        return np.where(np.isnan(G), 1e6, G)  # a failed figure fails its constraint
