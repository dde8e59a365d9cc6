"""The builder's decision between rectifier branches: the "Silicon or valve?" table, the front
with each point's branch marked, and sag depth against the shortest part life.

Marker scheme (own): one marker shape per branch kind (silicon o, valve ^, hybrid s,
switchable D), one colour per branch; filled where a design is on the overall front, hollow
where it is on its branch's front only.
"""

from __future__ import annotations

import math

import numpy as np

from optimiser.codesign import objective_table
from optimiser.codesign.branches import branch_rows, kind_of

__all__ = ["MARKERS", "branch_table", "branch_markdown", "plot_front_branches", "plot_sag_life"]

MARKERS = {"silicon": "o", "valve": "^", "hybrid": "s", "switchable": "D"}

_COLUMNS = (("branch", "branch"), ("feasible", "meets the spec"), ("designs", "on its front"),
            ("cheapest", "cheapest"), ("cheapest_cost", "its cost"),
            ("cost_premium", "premium over the cheapest branch"),
            ("closest_to_target", "closest to sag target"), ("stiffest", "stiffest"),
            ("longest_life", "longest life"), ("sag_depth_pct", "sag [%]"),
            ("attack_time_s", "attack [s]"), ("recovery_time_s", "recovery [s]"),
            ("shortest_life_h", "shortest part life [h]"),
            ("rectifier_stress", "rectifier stress"), ("binding_constraints", "what binds"))


def _figure(width, height):
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    fig = Figure(figsize=(width, height), dpi=110)
    FigureCanvasAgg(fig)
    return fig


def branch_table(opt, idmap):
    """Rows of ``branches.csv`` (see :func:`optimiser.codesign.branches.branch_rows`)."""
    return branch_rows(opt, idmap)


def _fmt(value):
    if isinstance(value, (bool, np.bool_)):
        return "yes" if value else "no"
    if isinstance(value, float):
        return "" if not math.isfinite(value) else f"{value:.4g}"
    return str(value)


def branch_markdown(rows) -> list:
    """The "Silicon or valve?" table as Markdown lines (figures of each branch's cheapest
    design; a branch that misses the spec with what binds it)."""
    present = [(k, h) for k, h in _COLUMNS if any(k in r for r in rows)]
    out = ["| " + " | ".join(h for _, h in present) + " |",
           "|" + "---|" * len(present)]
    for r in rows:
        out.append("| " + " | ".join(_fmt(r.get(k, "")).replace("|", "/") for k, _ in present)
                   + " |")
    return out


def _style(keys):
    colours = {k: f"C{i % 10}" for i, k in enumerate(dict.fromkeys(keys))}
    return {k: (MARKERS.get(kind_of(k), "o"), colours[k]) for k in colours}


def plot_front_branches(opt, path, idmap):
    """The listed designs (union of the branch fronts) in the pairwise projections of the
    searched objectives, each point's branch marked."""
    fr = opt.scored.frame
    names = list(opt.binding.objective_names)
    listed = np.asarray(opt.listed, int)
    on_front = set(int(r) for r in opt.front)
    keys = fr["branch"].to_numpy(object)
    style = _style(keys[listed].tolist() or ["-"])
    pairs = [(a, b) for i, a in enumerate(names) for b in names[i + 1:]]
    fig = _figure(4.4 * len(pairs), 4.4)
    for i, (a, b) in enumerate(pairs):
        ax = fig.add_subplot(1, len(pairs), i + 1)
        oa, ob = objective_table.OBJECTIVES[a], objective_table.OBJECTIVES[b]
        for key, (marker, colour) in style.items():
            rows = [r for r in listed if keys[r] == key]
            if not rows:
                continue
            x = fr[a].to_numpy(float)[rows] * oa.csv_scale
            y = fr[b].to_numpy(float)[rows] * ob.csv_scale
            filled = np.array([r in on_front for r in rows])
            ax.scatter(x[filled], y[filled], marker=marker, color=colour, s=34,
                       edgecolors="k", linewidths=0.4, label=f"{key} (overall front)")
            if (~filled).any():
                ax.scatter(x[~filled], y[~filled], marker=marker, facecolors="none",
                           edgecolors=colour, s=34, label=f"{key} (branch front only)")
            for r, xi, yi in zip(rows, x, y):
                ax.annotate(idmap.get(r, ""), (xi, yi), fontsize=6, xytext=(3, 3),
                            textcoords="offset points")
        if opt.knee is not None:
            ax.scatter([fr[a].iloc[opt.knee] * oa.csv_scale], [fr[b].iloc[opt.knee] * ob.csv_scale],
                       marker="*", s=220, facecolors="none", edgecolors="crimson",
                       linewidths=1.5, label="recommended")
        if a == "life":
            ax.set_xscale("log")
        if b == "life":
            ax.set_yscale("log")
        ax.set_xlabel(oa.label)
        ax.set_ylabel(ob.label)
        ax.grid(alpha=0.3)
        if i == 0:
            ax.legend(fontsize=6, loc="best")
    fig.suptitle(f"Fronts per rectifier branch of {opt.spec.name or 'the spec'}: "
                 f"{len(opt.front)} on the overall front, {len(listed)} listed")
    fig.tight_layout()
    fig.savefig(path)


def plot_sag_life(opt, path, idmap):
    """Sag depth against the shortest part life across the union of the branch fronts,
    branches marked: what a looser supply costs in capacitor and valve life."""
    fr = opt.scored.frame
    listed = np.asarray(opt.listed, int)
    keys = fr["branch"].to_numpy(object)
    style = _style(keys[listed].tolist() or ["-"])
    fig = _figure(7.5, 4.8)
    ax = fig.add_subplot(1, 1, 1)
    for key, (marker, colour) in style.items():
        rows = [r for r in listed if keys[r] == key]
        if not rows:
            continue
        x = 100 * fr["regulation"].to_numpy(float)[rows]
        y = fr["life"].to_numpy(float)[rows]
        ax.scatter(x, y, marker=marker, color=colour, s=36, edgecolors="k", linewidths=0.4,
                   label=key)
        for r, xi, yi in zip(rows, x, y):
            ax.annotate(idmap.get(r, ""), (xi, yi), fontsize=6, xytext=(3, 3),
                        textcoords="offset points")
    if opt.spec.sag is not None:
        t = 100 * opt.spec.sag.target
        ax.axvline(t, color="crimson", linestyle="dashed", linewidth=0.8, label="sag target")
    ax.set_yscale("log")
    ax.set_xlabel("sag depth: static drop idle to full power [% of idle B+]")
    ax.set_ylabel("shortest part life [h]")
    ax.set_title("Sag against part life, per rectifier branch")
    ax.grid(alpha=0.3, which="both")
    ax.legend(fontsize=7)
    fig.tight_layout()
    fig.savefig(path)
