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

__all__ = ["MARKERS", "branch_styles", "draw_branches", "branch_table", "branch_markdown",
           "plot_front_branches", "plot_sag_life"]

#: Marker shape per branch kind: the one marker scheme of every front plot (results and report).
MARKERS = {"silicon": "o", "valve": "^", "hybrid": "s", "switchable": "D"}

#: The sag-against-life plot's x axis.
SAG_LABEL = "sag depth: static drop idle to full power [% of idle B+]"

_COLUMNS = (("branch", "branch"), ("feasible", "meets the spec"), ("designs", "on its front"),
            ("cheapest", "cheapest"), ("cheapest_cost", "its cost"),
            ("cost_premium", "premium over the cheapest branch"),
            ("closest_to_target", "closest to sag target"), ("stiffest", "stiffest"),
            ("longest_life", "longest life"), ("sag_depth_pct", "sag [%]"),
            ("attack_time_s", "attack [s]"), ("recovery_time_s", "recovery [s]"),
            ("shortest_life_h", "shortest part life [h]"),
            ("rectifier_stress", "rectifier stress"), ("yield", "yield (share of builds passing)"),
            ("best_yield", "best yield in the branch"), ("binding_constraints", "what binds"))


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


def branch_styles(keys) -> dict:
    """{branch key: (marker, colour)}: the marker by the branch's kind (:data:`MARKERS`), a
    colour per branch in order of first appearance."""
    colours = {k: f"C{i % 10}" for i, k in enumerate(dict.fromkeys(keys))}
    return {k: (MARKERS.get(kind_of(k), "o"), colours[k]) for k in colours}


def draw_branches(ax, x, y, keys, on_front=None, *, size=34, labels=None):
    """Scatter points on an Axes with each point's branch marked (:func:`branch_styles`):
    filled where on the overall front, hollow where on its branch's front only.

    Parameters
    ----------
    ax : matplotlib Axes
    x, y : ndarray (n,)
    keys : sequence of str (n,)
        Each point's branch key.
    on_front : ndarray of bool (n,), optional
        Default: every point filled.
    labels : sequence of str (n,), optional
        A small label beside each point.

    Returns
    -------
    list of (artist, ndarray of int)
        Each scatter with the indices of its points (e.g. to give them links).
    """
    x, y = np.asarray(x, float), np.asarray(y, float)
    keys = np.asarray(keys, object)
    on_front = np.ones(len(x), bool) if on_front is None else np.asarray(on_front, bool)
    out = []
    for key, (marker, colour) in branch_styles(keys.tolist()).items():
        for filled in (True, False):
            idx = np.flatnonzero((keys == key) & (on_front == filled))
            if not len(idx):
                continue
            if filled:
                art = ax.scatter(x[idx], y[idx], marker=marker, color=colour, s=size,
                                 edgecolors="k", linewidths=0.4, zorder=3, label=key)
            else:
                art = ax.scatter(x[idx], y[idx], marker=marker, facecolors="none",
                                 edgecolors=colour, s=size, zorder=3,
                                 label=f"{key} (its branch's front only)")
            out.append((art, idx))
    for i in range(len(x) if labels is not None else 0):
        ax.annotate(labels[i], (x[i], y[i]), fontsize=6, xytext=(3, 3),
                    textcoords="offset points")
    return out


def plot_front_branches(opt, path, idmap):
    """The listed designs (union of the branch fronts) in the pairwise projections of the
    searched objectives, each point's branch marked (:func:`draw_branches`)."""
    fr = opt.scored.frame
    names = list(opt.binding.objective_names)
    listed = np.asarray(opt.listed, int)
    on_front = np.isin(listed, np.asarray(opt.front, int))
    keys = fr["branch"].to_numpy(object)[listed]
    labels = [idmap.get(int(r), "") for r in listed]
    pairs = [(a, b) for i, a in enumerate(names) for b in names[i + 1:]]
    fig = _figure(4.4 * len(pairs), 4.4)
    for i, (a, b) in enumerate(pairs):
        ax = fig.add_subplot(1, len(pairs), i + 1)
        oa, ob = objective_table.OBJECTIVES[a], objective_table.OBJECTIVES[b]
        x, y = (fr[n].to_numpy(float) * o.csv_scale for n, o in ((a, oa), (b, ob)))
        draw_branches(ax, x[listed], y[listed], keys, on_front, labels=labels)
        if opt.knee is not None:
            ax.scatter([x[opt.knee]], [y[opt.knee]], marker="*", s=220, facecolors="none",
                       edgecolors="crimson", linewidths=1.5, label="recommended")
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
    fig = _figure(7.5, 4.8)
    ax = fig.add_subplot(1, 1, 1)
    draw_branches(ax, 100 * fr["regulation"].to_numpy(float)[listed],
                  fr["life"].to_numpy(float)[listed], fr["branch"].to_numpy(object)[listed],
                  np.isin(listed, np.asarray(opt.front, int)), size=36,
                  labels=[idmap.get(int(r), "") for r in listed])
    if opt.spec.sag is not None:
        ax.axvline(100 * opt.spec.sag.target, color="crimson", linestyle="dashed",
                   linewidth=0.8, label="sag target")
    ax.set_yscale("log")
    ax.set_xlabel(SAG_LABEL)
    ax.set_ylabel("shortest part life [h]")
    ax.set_title("Sag against part life, per rectifier branch")
    ax.grid(alpha=0.3, which="both")
    ax.legend(fontsize=7)
    fig.tight_layout()
    fig.savefig(path)
