"""What a search writes: the front as a table, every front design as a design file, plots, and a
summary a builder can read. Written whole or not at all.

Layout of a results folder::

    pareto.csv           one row per listed design (the union of the rectifier branches'
                         fronts; ``on_front`` marks the overall front): choices, every objective
                         (units in the header), sag and life figures, every other figure
    branches.csv         one row per rectifier branch: feasible or what binds, its cheapest,
                         closest-to-target and longest-life designs, premium, sag, life
    designs/<id>.yaml    each front design as a design file `railwright evaluate` accepts
    front.png            the listed designs in pairwise projections, branches marked
    sag_life.png         sag depth against the shortest part life, branches marked
    bplus.png            B+ and sag of a few representative designs
    summary.md           the spec, the front's range, the recommended design and why, its order
                         sheet, parts list and check table, and the cautions
    spec.yaml            the spec as given
"""

from __future__ import annotations

import os
import shutil
import tempfile
from pathlib import Path

import numpy as np
import yaml

from optimiser.inputs.design import Conditions
from optimiser.formats.units import format_quantity

__all__ = ["design_document", "design_yaml", "write_results", "render_summary",
           "render_impossible", "front_ids", "CAUTIONS"]

CAUTIONS = (
    "Valve amplifier supplies carry voltages that can kill, and their capacitors hold a lethal "
    "charge after switch-off. Discharge and measure every capacitor before touching the circuit; "
    "the bleeders listed here are a backstop, not a guarantee (they fail open).",
    "Fit a mains fuse (and a HV fuse where the design calls for one), earth the chassis solidly "
    "to the mains protective earth, and use parts rated for the voltages in the check table.",
    "Mains wiring, protective earthing, fusing, creepage and clearance distances and the "
    "insulation system are governed by the safety standards and wiring codes where the "
    "equipment is built and used; they take precedence over anything here. Defer to local codes "
    "and to licensed practice.",
    "Every figure is a design estimate from models and parts data partly recalled from memory; "
    "prices are invented defaults. Verify against the makers' data sheets and on the finished "
    "supply before trusting it.",
)


# --------------------------------------------------------------------------------------------
# Design files


def _q(value, unit):
    """A unit string that reads back to the same float (6 significant figures)."""
    return format_quantity(float(value), unit, digits=6)


def _percent(value):
    return f"{100 * float(value):.6g} %"


_CONDITION_UNITS = {
    "mains_low": _percent, "mains_high": _percent, "transformer_tolerance": _percent,
    "capacitor_minus": _percent, "capacitor_plus": _percent, "silicon_piv_margin": _percent,
    "ambient": lambda v: f"{float(v):.6g} degC",
    "ripple_self_heating": lambda v: f"{float(v):.6g} K",
    "output_valve_warm_up": lambda v: _q(v, "s"), "rectifier_warm_up": lambda v: _q(v, "s"),
    "discharge_time_limit": lambda v: _q(v, "s"), "sag_hold": lambda v: _q(v, "s"),
    "sag_release": lambda v: _q(v, "s"), "safe_voltage": lambda v: _q(v, "V"),
    "capacitor_series": str,
    "capacitor_voltage_derating": _percent, "resistor_power_derating": _percent,
}


def _conditions(conditions: Conditions) -> dict:
    out = {}
    for name in Conditions.model_fields:
        value = getattr(conditions, name)
        if value is None:
            continue
        if name not in _CONDITION_UNITS:
            raise KeyError(f"outputs: no unit known for conditions.{name}")
        out[name] = _CONDITION_UNITS[name](value)
    return out


def _build(block) -> dict:
    out = {
        "primaries": [_q(v, "V") for v in block.primaries],
        "primary_arrangement": block.primary_arrangement,
        "core": block.core,
        "stack": _q(block.stack, "m"),
        "steel": block.steel,
        "max_flux_density": _q(block.max_flux_density, "T"),
        "current_density": f"{block.current_density / 1e6:.6g} A/mm^2",
        "insulation_class": block.insulation_class,
        "ambient": f"{block.ambient:.6g} degC",
        "hv": {"voltage": _q(block.hv.voltage, "V"), "current": _q(block.hv.current, "A"),
               "centre_tapped": bool(block.hv.centre_tapped)},
        "heaters": [{"name": h.name, "voltage": _q(h.voltage, "V"),
                     "current": _q(h.current, "A"), "centre_tapped": bool(h.centre_tapped)}
                    for h in block.heaters],
        "screen": bool(block.screen),
        "wire": block.wire,
        "enamel_grade": int(block.enamel_grade),
    }
    if block.bias is not None:
        out["bias"] = {"voltage": _q(block.bias.voltage, "V"),
                       "current": _q(block.bias.current, "A"),
                       "centre_tapped": bool(block.bias.centre_tapped)}
    if block.winding_order is not None:
        out["winding_order"] = list(block.winding_order)
    if block.mounting:
        out["mounting"] = block.mounting
    return out


def _rectifier(r) -> dict:
    out = {"topology": r.topology}
    if r.topology == "switchable":
        out["positions"] = {name: _rectifier(p) for name, p in r.positions.items()}
        return out
    for key in ("diode", "valve"):
        value = getattr(r, key)
        if value is not None:
            if not isinstance(value, str):
                raise ValueError(f"outputs: rectifier {key} given by parameters cannot be named")
            out[key] = value
    if getattr(r, "heater_shared", False):
        out["heater_shared"] = True
    return out


def _node(node) -> dict:
    out = {"name": node.name, "capacitance": _q(node.capacitance, "F"),
           "esr": _q(node.esr, "ohm")}
    if node.rated_voltage is not None:
        out["rated_voltage"] = _q(node.rated_voltage, "V")
    if node.capacitor_series is not None:
        out["capacitor_series"] = node.capacitor_series
    if node.feed is not None:
        feed = {"resistance": _q(node.feed.resistance, "ohm")}
        if node.feed.inductance > 0:
            feed["inductance"] = _q(node.feed.inductance, "H")
        if node.feed.power_rating is not None:
            feed["power_rating"] = _q(node.feed.power_rating, "W")
        if node.feed.current_rating is not None:
            feed["current_rating"] = _q(node.feed.current_rating, "A")
        out["feed"] = feed
    load = node.load
    if load is not None:
        if load.idle_current is not None:
            out["load"] = {"idle_current": _q(load.idle_current, "A"),
                           "full_power_current": _q(load.full_power_current, "A")}
        elif load.current is not None:
            out["load"] = {"current": _q(load.current, "A")}
        else:
            out["load"] = {"resistance": _q(load.resistance, "ohm")}
    if node.bleeder is not None:
        out["bleeder"] = _q(node.bleeder, "ohm")
    if node.bleeder_power_rating is not None:
        out["bleeder_power_rating"] = _q(node.bleeder_power_rating, "W")
    return out


def design_document(design) -> dict:
    """A design as the mapping of unit strings a design file holds."""
    t = design.transformer
    if t.build is not None:
        transformer = {"rated_current": _q(t.rated_current, "A"), "build": _build(t.build)}
    else:
        transformer = {"secondary_voltage": _q(t.secondary_voltage, "V"),
                       "secondary_resistance": _q(t.secondary_resistance, "ohm"),
                       "leakage_inductance": _q(t.leakage_inductance, "H")}
        if t.rated_current is not None:
            transformer["rated_current"] = _q(t.rated_current, "A")
    return {
        "mains": {"voltage": _q(design.mains.voltage, "V"),
                  "frequency": _q(design.mains.frequency, "Hz")},
        "transformer": transformer,
        "rectifier": _rectifier(design.rectifier),
        "nodes": [_node(n) for n in design.nodes],
        "conditions": _conditions(design.conditions),
        **({"parts_files": list(design.parts_files)} if design.parts_files else {}),
        **({"transformer_data": design.transformer_data} if design.transformer_data else {}),
    }


def design_yaml(design, header: str = "") -> str:
    """A design file's text: optional comment lines, then the YAML."""
    lines = "".join(f"# {line}\n" if line else "#\n" for line in header.splitlines())
    return lines + yaml.safe_dump(design_document(design), sort_keys=False, allow_unicode=True,
                                  width=100)


# --------------------------------------------------------------------------------------------
# Summary


def front_ids(optimisation) -> list[str]:
    """Identifiers of the listed designs (:attr:`Optimisation.listed`, cheapest first):
    d01, d02, ..."""
    count = len(optimisation.listed)
    width = max(2, len(str(count)))
    return [f"d{i + 1:0{width}d}" for i in range(count)]


def _idmap(opt, ids) -> dict:
    return dict(zip((int(r) for r in opt.listed), ids))


def _pct(x):
    return f"{100 * x:.2f} %"


def _range_table(opt) -> list[str]:
    from optimiser.codesign.objective_table import OBJECTIVES

    fr = opt.scored.frame.iloc[opt.front]
    out = ["| objective | meaning | searched | lowest | highest |", "|---|---|---|---|---|"]
    for name, o in OBJECTIVES.items():
        values = fr[name].to_numpy(float) * o.csv_scale
        if not np.isfinite(values).any():
            continue
        searched = "yes" if name in opt.binding.objective_names else "no"
        out.append(f"| {o.header} | {o.meaning} | {searched} | {np.nanmin(values):.4g} | "
                   f"{np.nanmax(values):.4g} |")
    return out


def _front_table(opt, ids) -> list[str]:
    fr = opt.scored.frame
    sag_node = opt.binding.node_names[opt.spec.sag_node]
    out = ["| id | branch | rectifier | HV per path | core, stack | reservoir | cost | "
           f"regulation ({sag_node} static sag) | per position | sag error | shortest life | "
           "rectifier stress |", "|---|---|---|---|---|---|---|---|---|---|---|---|"]
    first = opt.binding.node_names[0]
    on_front = set(int(r) for r in opt.front)
    for ident, row in zip(ids, opt.listed):
        r = fr.iloc[row]
        mark = (" (recommended)" if row == opt.knee else
                "" if row in on_front else " (branch front only)")
        err = "" if not np.isfinite(r["sag_error"]) else f"{100 * r['sag_error']:.2f} pp"
        out.append(
            f"| {ident}{mark} | {r['branch']} | {r['rectifier']} | {format_quantity(r['secondary_voltage'], 'V')}"
            f" at {format_quantity(r['hv_current_rating'], 'A')} | {r['core']}, "
            f"{format_quantity(r['stack'], 'm')} | "
            f"{format_quantity(r[f'{first}.capacitance'], 'F')} "
            f"{format_quantity(r[f'{first}.rated_voltage'], 'V')} | {r['cost']:.1f} | "
            f"{_pct(r['regulation'])} | {_sag_text(fr, row, sag_node)} | {err} | "
            f"{r['life']:.3g} h | {r['rectifier_stress']:.3f} |")
    return out


def _sag_text(fr, row, node):
    cols = [c for c in fr.columns if c == f"{node}.static_drop_percent"
            or c.endswith(f"/{node}.static_drop_percent")]
    values = [fr.iloc[row][c] for c in cols if np.isfinite(fr.iloc[row][c])]
    return " / ".join(f"{v:.2f} %" for v in values)


def _check_table(assessment) -> list[str]:
    checks = assessment.checks
    out = ["| check | worst value | limit (derated) | ratio to limit | ratio to rating | verdict "
           "| limit's source |", "|---|---|---|---|---|---|---|"]
    for c in sorted(checks, key=lambda c: -c.ratio):
        unit = c.unit if c.unit not in ("-",) else ""
        verdict = "pass" if c.passed else "FAIL"
        source = c.source if len(c.source) <= 90 else c.source[:89].rstrip() + "…"
        out.append(f"| {c.name} | {format_quantity(c.value, unit)} | "
                   f"{format_quantity(c.limit, unit)} | {c.ratio:.3f} | "
                   f"{getattr(c, 'rating_ratio', c.ratio):.3f} | {verdict} | "
                   f"{source} |")
    return out


def _parts_table(lines) -> list[str]:
    out = ["| group | where | qty | part | rating | cost |", "|---|---|---|---|---|---|"]
    for line in lines:
        out.append(f"| {line.group} | {line.reference} | {line.quantity} | {line.description} | "
                   f"{line.rating} | {line.cost:.2f} |")
    out.append(f"| | | | **total** | | **{sum(line.cost for line in lines):.2f}** |")
    return out


def _knee_reason(opt) -> str:
    F = opt.scored.F[opt.front]
    k = list(opt.front).index(opt.knee)
    if len(F) <= 2:
        return ("The front holds only this and at most one other design; the cheaper of them is "
                "recommended.")
    lo, hi = F.min(axis=0), F.max(axis=0)
    span = np.where(hi > lo, hi - lo, 1.0)
    pos = (F[k] - lo) / span
    parts = ", ".join(f"{name} {100 * p:.0f} % of the way from the front's best to its worst"
                      for name, p in zip((n.replace("_", " ")
                                          for n in opt.binding.objective_names), pos))
    return ("It is the knee of the front: the design farthest inside the plane through the "
            "single-objective extremes, where moving towards any one objective costs the "
            f"most in the others (Das, 1999). It sits at {parts}.")


def render_summary(opt, spec_text: str, ids=None, elapsed=None) -> str:
    """The Markdown summary of a search with a non-empty front."""
    from optimiser.outputs.ordersheet import order_sheet_for, order_sheet_markdown

    from optimiser.outputs.branch_figures import branch_markdown, branch_table

    ids = ids or front_ids(opt)
    s = opt.spec
    res = opt.search
    knee_id = _idmap(opt, ids)[opt.knee]
    design = opt.scored.designs[opt.knee]
    assessment = opt.scored.table.assessments[opt.knee]
    out = [f"# Railwright co-design: {s.name or 'spec'}", ""]
    out += ["## Silicon or valve?", "",
            "One row per rectifier branch the spec allows (also `branches.csv`); figures are "
            "of each branch's cheapest design, the premium is its cost over the cheapest "
            "branch's cheapest. A branch that cannot meet the spec says what binds it.", ""]
    out += branch_markdown(branch_table(opt, _idmap(opt, ids))) + [""]
    out += ["## The spec", "", "```yaml", spec_text.rstrip(), "```", ""]
    out += ["## The search", "",
            f"NSGA-II, population {res.X.shape[0]}, {res.generations} generations, seed "
            f"{res.seed}: {res.evaluations} designs "
            f"evaluated, {int(opt.scored.feasible.sum())} of the final population's "
            f"{len(opt.scored.designs)} distinct designs meet every constraint, and "
            f"{len(opt.front)} of those form the overall front of "
            f"{', '.join(opt.binding.objective_names)}, the non-dominated set of the "
            f"{len(opt.listed)} designs on the rectifier branches' own fronts (differences "
            "below the spec's search resolution are not told apart)."
            + (f" Wall time {elapsed:.1f} s." if elapsed is not None else ""), ""]
    out += ["## The front's range", ""] + _range_table(opt) + [""]
    out += ["Every listed design (ordered by cost; each is `designs/<id>.yaml`, re-checked "
            "with `railwright evaluate designs/<id>.yaml`):", ""] + _front_table(opt, ids) + [""]
    out += [f"## Recommended: {knee_id}", "", _knee_reason(opt), ""]
    r = opt.scored.frame.iloc[opt.knee]
    out += [f"- rectifier: {r['rectifier']}",
            f"- cost {r['cost']:.1f} cost units, regulation (static sag) "
            f"{_pct(r['regulation'])}, rectifier stress {r['rectifier_stress']:.3f}, shortest "
            f"part life {r['life']:.3g} h"] + _yield_lines(opt, opt.knee) + [""]
    out += ["### Check table", ""] + _check_table(assessment) + [""]
    out += ["### Parts list", ""] + _parts_table(opt.binding.parts_list(design)) + [""]
    if design.transformer_design is not None:
        sheet = order_sheet_markdown(order_sheet_for(design))
        sheet = "\n".join(("#" * 2 + line) if line.startswith("#") else line
                          for line in sheet.splitlines())
        out += ["### Order sheet", "", sheet, ""]
    out += ["## Cautions", ""] + [f"- {c}" for c in CAUTIONS] + [""]
    return "\n".join(out)


def _yield_lines(opt, row):
    from optimiser.outputs.yield_figures import summary_lines

    return summary_lines(opt, row)


def render_impossible(opt) -> str:
    """Plain text for a spec no design met: which constraints, and how far the nearest missed."""
    out = ["No design met every constraint of the spec."]
    if opt.unmet:
        out += ["", "Constraints no evaluated design met, with the nearest miss:"]
        for u in opt.unmet:
            out.append(f"  - {u.constraint.description}: {u.miss}")
    else:
        out += ["", "Each constraint was met by some design, but never all of them at once."]
    out += ["", "The nearest designs, and what each missed:"]
    fr = opt.scored.frame
    for i, (row, missed) in enumerate(opt.nearest(3), start=1):
        r = fr.iloc[row]
        out.append(f"  {i}. {r['rectifier']}, HV {format_quantity(r['secondary_voltage'], 'V')}, "
                   f"{r['core']}, cost {r['cost']:.1f}:")
        for info, g in missed:
            out.append(f"       {info.description}: {info.miss(g)}")
    out += ["", "Widen the choices (voltages, cores, capacitors, rectifiers), loosen a window or "
            "a limit, or give the search more generations."]
    return "\n".join(out)


# --------------------------------------------------------------------------------------------
# Plots


def _figure(width, height):
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    fig = Figure(figsize=(width, height), dpi=110)
    FigureCanvasAgg(fig)
    return fig


def plot_front(opt, path, ids):
    """The listed designs in the pairwise projections of the searched objectives, each point's
    rectifier branch marked (:func:`optimiser.outputs.branch_figures.plot_front_branches`)."""
    from optimiser.outputs.branch_figures import plot_front_branches

    plot_front_branches(opt, path, _idmap(opt, ids))


def _plot_front_by_objective(opt, path, ids):
    """(Earlier scheme, kept for three objectives) coloured by the remaining objective."""
    F = opt.scored.F
    front = opt.front
    labels = ("cost [cost units]", "regulation [%]", "rectifier stress [-]")
    scale = np.array([1.0, 100.0, 1.0])
    fig = _figure(13, 4.2)
    pairs = ((0, 1, 2), (0, 2, 1), (1, 2, 0))
    feasible = np.flatnonzero(opt.scored.feasible)
    for i, (a, b, c) in enumerate(pairs):
        ax = fig.add_subplot(1, 3, i + 1)
        others = np.setdiff1d(feasible, front)
        if others.size:
            ax.scatter(F[others, a] * scale[a], F[others, b] * scale[b], s=10, c="0.8",
                       label="feasible, dominated")
        sc = ax.scatter(F[front, a] * scale[a], F[front, b] * scale[b],
                        c=F[front, c] * scale[c], cmap="viridis", s=28, edgecolors="k",
                        linewidths=0.4, label="front")
        if opt.knee is not None:
            ax.scatter([F[opt.knee, a] * scale[a]], [F[opt.knee, b] * scale[b]], marker="*",
                       s=220, facecolors="none", edgecolors="crimson", linewidths=1.5,
                       label="recommended")
        for ident, row in zip(ids, front):
            ax.annotate(ident, (F[row, a] * scale[a], F[row, b] * scale[b]), fontsize=6,
                        xytext=(3, 3), textcoords="offset points")
        ax.set_xlabel(labels[a])
        ax.set_ylabel(labels[b])
        fig.colorbar(sc, ax=ax, label=labels[c])
        ax.grid(alpha=0.3)
        if i == 0:
            ax.legend(fontsize=7, loc="best")
    fig.suptitle(f"Pareto front of {opt.spec.name or 'the spec'}: {len(front)} designs")
    fig.tight_layout()
    fig.savefig(path)


def representatives(opt) -> list[int]:
    """A few telling front designs: the cheapest, the recommended, the best-regulated and the
    least stressed (rows of ``scored``, without repeats)."""
    F = opt.scored.F
    front = list(opt.front)
    picks = [front[int(np.argmin(F[front, 0]))], opt.knee] + [
        front[int(np.argmin(F[front, j]))] for j in range(1, F.shape[1])]
    return list(dict.fromkeys(p for p in picks if p is not None))


def plot_bplus(opt, path, ids, detail):
    """B+ of representative designs: each node at idle and full power against its window, and
    the sag node's response to a hard-played note and its release."""
    rows = representatives(opt)
    names = opt.binding.node_names
    fig = _figure(13, 4.6)
    ax = fig.add_subplot(1, 2, 1)
    width = 0.8 / (2 * len(rows))
    x = np.arange(len(names))
    lowest = []
    for i, row in enumerate(rows):
        a = detail[row]
        first = a if not hasattr(a, "positions") else next(iter(a.positions.values()))
        idle = [n["idle_voltage"] for n in first.nodes]
        full = [n["full_power_voltage"] for n in first.nodes]
        lowest += full
        label = _idmap(opt, ids)[row]
        colour = f"C{i}"
        ax.bar(x + (2 * i) * width, idle, width, color=colour, label=f"{label} idle")
        ax.bar(x + (2 * i + 1) * width, full, width, color=colour, alpha=0.45, hatch="//",
               label=f"{label} full power")
    for k, ns in enumerate(opt.spec.nodes):
        ax.hlines([ns.dc_voltage - ns.window, ns.dc_voltage + ns.window], k - 0.1, k + 0.9,
                  colors="crimson", linestyles="dashed", linewidth=0.8)
        ax.annotate(f"window at {ns.at}", (k - 0.1, ns.dc_voltage + ns.window), fontsize=6,
                    color="crimson", xytext=(0, 2), textcoords="offset points")
        lowest.append(ns.dc_voltage - ns.window)
    ax.set_ylim(0.85 * min(lowest), None)
    ax.set_xticks(x + 0.4 - width / 2)
    ax.set_xticklabels(names)
    ax.set_ylabel("B+ DC at nominal mains [V]")
    ax.set_title("B+ per node: idle (solid) and full power (hatched)")
    ax.legend(fontsize=6, ncol=2)
    ax.grid(alpha=0.3, axis="y")
    ax2 = fig.add_subplot(1, 2, 2)
    k = opt.spec.sag_node
    for row in rows:
        a = detail[row]
        first = a if not hasattr(a, "positions") else next(iter(a.positions.values()))
        curves = first.curves or {}
        if "sag_time" in curves:
            ax2.plot(np.asarray(curves["sag_time"]) * 1e3,
                     np.asarray(curves["sag_voltage"])[:, k],
                     label=_idmap(opt, ids)[row])
    ax2.set_xlabel("time from the full-power step [ms]")
    ax2.set_ylabel(f"{names[k]} B+ [V]")
    ax2.set_title(f"Sag at {names[k]}: full power, then idle again")
    ax2.legend(fontsize=7)
    ax2.grid(alpha=0.3)
    fig.tight_layout()
    fig.savefig(path)


# --------------------------------------------------------------------------------------------
# Writing


def write_results(opt, out_dir, spec_text: str, elapsed=None) -> Path:
    """Write a search's results to ``out_dir``, whole or not at all.

    Everything is written into a temporary folder beside the target and renamed into place at
    the end; a failure leaves no partial folder (and an earlier folder of that name untouched).

    Parameters
    ----------
    opt : Optimisation
        With a non-empty front.
    out_dir : path
    spec_text : str
        The spec file as given, copied into the results.
    elapsed : float, optional
        Wall time of the run, for the summary. [s]

    Returns
    -------
    Path
        The folder written.
    """
    from optimiser.assessment.full import assess_many

    if not opt.found:
        raise ValueError("no design met every constraint: nothing to write")
    target = Path(out_dir)
    target.parent.mkdir(parents=True, exist_ok=True)
    tmp = Path(tempfile.mkdtemp(dir=target.parent, prefix=f".{target.name}.partial-"))
    umask = os.umask(0)
    os.umask(umask)
    os.chmod(tmp, 0o777 & ~umask)  # a results folder, not a private temporary one
    try:
        from optimiser.codesign.objective_table import csv_frame
        from optimiser.outputs.branch_figures import branch_table, plot_sag_life

        ids = front_ids(opt)
        idmap = _idmap(opt, ids)
        on_front = set(int(r) for r in opt.front)
        front = opt.scored.frame.iloc[opt.listed].copy()
        front.insert(0, "id", ids)
        front.insert(1, "recommended", [row == opt.knee for row in opt.listed])
        front.insert(2, "on_front", [int(row) in on_front for row in opt.listed])
        csv_frame(front).to_csv(tmp / "pareto.csv", index=False)
        import pandas as pd

        pd.DataFrame(branch_table(opt, idmap)).to_csv(tmp / "branches.csv", index=False)
        (tmp / "designs").mkdir()
        for ident, row in zip(ids, opt.listed):
            r = opt.scored.frame.iloc[row]
            header = (f"Pareto design {ident} of spec {opt.spec.name or 'spec'}, found by "
                      "railwright optimise.\nInvented example output; not a known commercial "
                      f"amplifier.\ncost {r['cost']:.2f} cost units, regulation "
                      f"{_pct(r['regulation'])}, rectifier stress {r['rectifier_stress']:.3f}")
            (tmp / "designs" / f"{ident}.yaml").write_text(
                design_yaml(opt.scored.designs[row], header), encoding="utf-8")
        (tmp / "spec.yaml").write_text(spec_text, encoding="utf-8")
        from optimiser.outputs.yield_figures import write_builds

        write_builds(opt, tmp, ids)
        rows = representatives(opt)
        detailed = assess_many([opt.scored.designs[r] for r in rows], detail=True).assessments
        detail = dict(zip(rows, detailed))
        plot_front(opt, tmp / "front.png", ids)
        plot_bplus(opt, tmp / "bplus.png", ids, detail)
        plot_sag_life(opt, tmp / "sag_life.png", idmap)
        (tmp / "summary.md").write_text(render_summary(opt, spec_text, ids, elapsed),
                                        encoding="utf-8")
        _swap_into_place(tmp, target)
    except BaseException:
        shutil.rmtree(tmp, ignore_errors=True)
        raise
    return target


def _swap_into_place(tmp: Path, target: Path):
    """Rename a finished folder onto the target, replacing an earlier one only once done."""
    if not target.exists():
        os.replace(tmp, target)
        return
    old = Path(tempfile.mkdtemp(dir=target.parent, prefix=f".{target.name}.old-"))
    old.rmdir()
    os.replace(target, old)
    try:
        os.replace(tmp, target)
    except BaseException:
        os.replace(old, target)
        raise
    shutil.rmtree(old, ignore_errors=True)
