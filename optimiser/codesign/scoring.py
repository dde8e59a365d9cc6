"""The full tier: designs assessed, priced and scored, with every figure in one table.

:meth:`Scoring.score` runs :func:`optimiser.assessment.full.assess_many` on designs (mains and
tolerance corners, the sag step where the spec sets attack or recovery windows, switch-on,
every rating), prices each from its parts list (:mod:`optimiser.assessment.bill`, with the
spec's price overrides: :meth:`Scoring.parts_list`), and hands the figures to
:class:`~optimiser.codesign.objectives.Objectives` for F and G. This is what the search's kept
designs are re-checked with and the only tier that is reported; :func:`check_names` probes it
for the constraint columns of the assessment's checks.
"""

from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np
import pandas as pd

from optimiser.assessment import bill
from optimiser.assessment.full import assess_many
from optimiser.codesign import branches
from optimiser.codesign.assembly import Assembly
from optimiser.codesign.encoding import RECTIFIER_COLUMN, Encoding
from optimiser.codesign.objectives import OBJECTIVES, Objectives
from optimiser.codesign.options import Options
from optimiser.parts import catalogue as parts
from optimiser.physics.transformer.rating import primary_va, va_rating, worst_winding_error

__all__ = ["Scored", "Scoring", "check_names"]


@dataclass(frozen=True)
class Scored:
    """Designs with every figure, objective and constraint.

    Attributes
    ----------
    designs : list of Design
    frame : pandas.DataFrame
        One row per design: what was chosen, the objectives and costs, the transformer's
        figures, the assessment's figures (nominal full power under the names
        :func:`~optimiser.assessment.steady_state.evaluate_many` uses where it has them) and
        ``check: <name>`` ratio columns.
    F : ndarray (B, n_obj)
        The searched objectives' search values (:mod:`optimiser.codesign.objective_table`).
    G : ndarray (B, M)
    table : AssessmentTable
        The assessment itself.
    """

    designs: list
    frame: pd.DataFrame
    F: np.ndarray
    G: np.ndarray
    table: object

    @property
    def feasible(self) -> np.ndarray:
        return np.all(self.G <= 0.0, axis=1)

    def join(self, other: "Scored") -> "Scored":
        """These designs followed by ``other``'s (scored by the same spec), as one."""
        from optimiser.assessment.full import AssessmentTable

        def frames(a, b):
            return pd.concat([a, b], ignore_index=True)

        t, u = self.table, other.table
        return Scored(designs=list(self.designs) + list(other.designs),
                      frame=frames(self.frame, other.frame), F=np.vstack([self.F, other.F]),
                      G=np.vstack([self.G, other.G]),
                      table=AssessmentTable(frame=frames(t.frame, u.frame),
                                            ratios=frames(t.ratios, u.ratios),
                                            assessments=list(t.assessments) + list(u.assessments)))


def check_names(options: Options, encoding: Encoding, assembly: Assembly) -> tuple:
    """Names of every assessment check any allowed design can have, from a probe: for each
    rectifier option, the designs at the variables' lower ends with resistor feeds and with
    choke feeds."""
    probes = []
    base = [v.lower for v in encoding.variables]
    n = len(options.node_names)
    for j in range(len(options.rectifiers)):
        for kind in ("resistor", "choke"):
            x = np.array(base, float)
            x[RECTIFIER_COLUMN] = j
            for k in range(1, n):
                opts = options.feed_options[k]
                pick = [i for i, o in enumerate(opts) if o.kind == kind] or [0]
                x[encoding.feed_column(k)] = pick[0]
            probes.append(x)
    table = assess_many(assembly.designs(encoding.decode(np.array(probes))), dynamics=False)
    return tuple(table.ratios.columns)


class Scoring:
    """Designs of one spec assessed in full and scored (see module docstring).

    Parameters
    ----------
    options : Options
    objectives : Objectives
    """

    def __init__(self, options: Options, objectives: Objectives):
        self.options = options
        self.objectives = objectives
        self.spec = options.spec

    def score(self, designs, dynamics=None) -> Scored:
        """Assess, price and score designs (built by :meth:`Assembly.designs`, or read from
        files); ``dynamics``: run the sag step (default: only where the spec sets its
        windows)."""
        s = self.spec
        count = len(designs)
        table = assess_many(designs, dynamics=self.options.sag_dynamics if dynamics is None
                            else dynamics)
        fr = table.frame

        def columns(name):
            """The column of a figure, worst over a switchable pair's positions: (B, P)."""
            cols = [c for c in fr.columns if c == name or c.endswith("/" + name)]
            if not cols:
                return np.full((count, 1), np.nan)
            return np.column_stack([pd.to_numeric(fr[c], errors="coerce").to_numpy(float)
                                    for c in cols])

        sag_name = self.options.node_names[s.sag_node]
        figures = {}
        for ns in s.nodes:
            for key in ("idle_voltage", "full_power_voltage", "ripple_pp"):
                figures[f"{ns.name}.{key}"] = columns(f"{ns.name}.{key}")
        figures["static_drop"] = columns(f"{sag_name}.static_drop_percent") / 100.0
        for what in ("attack", "recovery"):
            figures[f"{what}_time"] = columns(f"{sag_name}.{what}_time").astype(float)
        ratios = {name: table.ratios[name].to_numpy(float) for name in table.ratios.columns}
        buildable = np.array([_buildable(d) for d in designs])
        G = self.objectives.constraint_values(figures, buildable, self._made(designs), ratios)
        # no working steady state (assessment.validity): infeasible on every constraint
        unworkable = fr["unworkable"].astype(bool).to_numpy()
        G[unworkable] = np.maximum(G[unworkable], 1.0)

        lines = [self.parts_list(d) for d in designs]
        cost = np.array([sum(line.cost for line in ls) for ls in lines])
        stress = fr["rectifier_stress"].to_numpy(float)
        life = columns("shortest_life")  # worst position
        life = np.where(np.isnan(life).all(axis=1), np.nan,
                        np.nanmin(np.where(np.isnan(life), np.inf, life), axis=1))
        figs = self.objectives.objective_figures(cost, figures["static_drop"], stress, life)
        for what in ("attack_time", "recovery_time"):  # worst position, for the results
            t = figures[what]
            figs[what] = np.where(np.isnan(t).all(axis=1), np.nan,
                                  np.nanmax(np.where(np.isnan(t), -np.inf, t), axis=1))
        F = self.objectives.objective_values(figs)
        frame = _frame(designs, lines, figs, G, table)
        return Scored(designs=list(designs), frame=frame, F=F, G=G, table=table)

    def _made(self, designs):
        """Whether each node's capacitor value is made at its voltage rating. (B, N)"""
        out = np.zeros((len(designs), len(self.options.node_names)), bool)
        for b, d in enumerate(designs):
            for k, node in enumerate(d.nodes):
                series = parts.find_part("capacitor", node.capacitor_series)
                try:
                    r = series.rating(node.rated_voltage)
                except LookupError:
                    continue
                out[b, k] = (r.min_capacitance * (1 - 1e-9) <= node.capacitance
                             <= r.max_capacitance * (1 + 1e-9))
        return out

    def parts_list(self, design):
        """The design's parts list (:func:`optimiser.assessment.bill.parts_list`) with the spec's
        price overrides applied to its rectifier valves and diodes."""
        lines = bill.parts_list(design)
        overrides = self.options.price_overrides
        if not overrides:
            return lines
        out = []
        for line in lines:
            if line.group == "rectifier":
                for name, price in overrides.items():
                    if line.description.casefold().split(" with ")[0].endswith(" " + name):
                        line = replace(line, unit_cost=price, cost=price * line.quantity,
                                       source="the spec's costs.parts")
            out.append(line)
        return out


def _frame(designs, lines, figs, G, table):
    """The results table: one row per design (see :attr:`Scored.frame`): every objective's
    figure (whichever are searched) and the sag times, then the choices and figures."""
    rows = []
    for d, ls in zip(designs, lines):
        t = d.transformer
        td = d.transformer_design
        row = {
            "rectifier": _rectifier_label(d.rectifier),
            "branch": branches.branch_key(d.rectifier),
            "secondary_voltage": t.build.hv.voltage if t.build is not None else np.nan,
            "hv_current_rating": t.rated_current,
            "core": t.build.core if t.build is not None else None,
            "stack": t.build.stack if t.build is not None else np.nan,
            "current_density": t.build.current_density if t.build is not None else np.nan,
            "open_circuit_voltage": t.secondary_voltage,
            "secondary_resistance": t.secondary_resistance,
            "leakage_inductance": t.leakage_inductance,
        }
        for k, node in enumerate(d.nodes):
            row[f"{node.name}.capacitance"] = node.capacitance
            row[f"{node.name}.rated_voltage"] = node.rated_voltage
            row[f"{node.name}.capacitor_series"] = node.capacitor_series
            row[f"{node.name}.esr"] = node.esr
            if node.feed is not None:
                row[f"{node.name}.feed_resistance"] = node.feed.resistance
                row[f"{node.name}.feed_inductance"] = node.feed.inductance
                row[f"{node.name}.feed_rating"] = (node.feed.current_rating
                                                   if node.feed.inductance > 0
                                                   else node.feed.power_rating)
            row[f"{node.name}.bleeder"] = node.bleeder if node.bleeder else np.nan
        groups = {}
        for line in ls:
            groups[line.group] = groups.get(line.group, 0.0) + line.cost
        for group, value in groups.items():
            row[f"cost.{group}"] = value
        if td is not None:
            row["transformer.va_rating"] = va_rating(td)  # the one VA definition
            row["transformer.primary_va"] = primary_va(td)
            row["transformer.winding_voltage_error"] = worst_winding_error(td)[0]
            for key in ("mass", "temperature_rise",
                        "temperature_rise_limit", "build_ratio", "flux_density",
                        "hv_regulation", "total_loss"):
                row[f"transformer.{key}"] = float(getattr(td, key))
        rows.append(row)
    mine = pd.DataFrame(rows)
    named = list(OBJECTIVES) + ["attack_time", "recovery_time"]
    for i, name in enumerate(named):
        mine.insert(1 + i, name, figs[name])
    mine.insert(1 + len(named), "feasible", np.all(G <= 0, axis=1))
    assessed = table.frame.drop(columns=["rectifier_stress"], errors="ignore")
    checks = table.ratios.add_prefix("check: ")
    return pd.concat([mine, assessed.reset_index(drop=True),
                      checks.reset_index(drop=True)], axis=1)


def _buildable(design) -> bool:
    td = design.transformer_design
    if td is None:
        return True
    return bool(td.wire_available and td.stack_in_range and td.regulation_solvable
                and td.converged)


def _rectifier_label(rectifier) -> str:
    if rectifier.topology == "switchable":
        return "switchable: " + " / ".join(f"{name} {_rectifier_label(p)}"
                                           for name, p in rectifier.positions.items())
    names = " + ".join(str(p) for p in (rectifier.valve, rectifier.diode) if p is not None)
    return f"{rectifier.topology} {names}".strip()
