"""The report's plots, each drawn with matplotlib and returned as an inline ``<svg>`` element:
a design's waveforms over one mains cycle, its sag step per node, its switch-on B+ per node, and
a run's Pareto front in pairwise projections (each point a link to its design).

Nothing is computed here beyond what a plot needs to place its labels: the curves come from
:func:`optimiser.assessment.full.assess` and
:func:`optimiser.assessment.steady_state.cycle_waveforms`.
"""

from __future__ import annotations

import functools
import io
import math
import re

import numpy as np

from optimiser.codesign.objective_table import OBJECTIVES as _TABLE
from optimiser.outputs.branch_figures import SAG_LABEL, draw_branches
from optimiser.outputs.report.front import _OBJECTIVE_LABEL, Front, _extremes
from optimiser.outputs.report.markup import _e, _ms, _q

# ---- colours: plain, distinct in colour and (by line style) in black and white
INK = "#1d2430"
MUTED = "#5b6472"
GRID = "#e3e6ec"
BLUE = "#1c5d99"
OCHRE = "#c77700"
RED = "#b3261e"
GREEN = "#2f7d4f"
GREY = "#8a8f98"
SHADE = "#f3e7cf"

_RC = {
    "svg.fonttype": "none",
    "font.family": "sans-serif",
    "font.sans-serif": ["DejaVu Sans", "Liberation Sans", "Arial"],
    "font.size": 8.5,
    "axes.titlesize": 9,
    "axes.titleweight": "bold",
    "axes.titlelocation": "left",
    "axes.edgecolor": MUTED,
    "axes.labelcolor": INK,
    "axes.grid": True,
    "axes.spines.top": False,
    "axes.spines.right": False,
    "grid.color": GRID,
    "grid.linewidth": 0.6,
    "xtick.color": MUTED,
    "ytick.color": MUTED,
    "xtick.labelcolor": INK,
    "ytick.labelcolor": INK,
    "lines.linewidth": 1.5,
    "legend.frameon": False,
    "legend.fontsize": 8,
    "figure.facecolor": "white",
}

_LABEL_BOX = dict(boxstyle="square,pad=0.15", facecolor="white", edgecolor="none", alpha=0.85)
# plot widths [in]: a full-width figure, and one of two side by side
WIDE = 9.0
HALF = 5.6


def _styled(plot):
    """Run a plot function inside the report's matplotlib style (titles, legends and lines read
    their defaults when they are made, so the whole function runs in the style)."""
    @functools.wraps(plot)
    def styled(*args, **kwargs):
        import matplotlib

        with matplotlib.rc_context(_RC):
            return plot(*args, **kwargs)
    return styled


def _figure(width, height, rows=1, cols=1, *, left=0.72, right=0.15, top=0.28, bottom=0.5,
            row_gap=0.42, col_gap=0.75, **kw):
    """A figure with fixed margins and gaps [in] (matplotlib's automatic layouts cost more
    than the drawing itself)."""
    from matplotlib.figure import Figure

    fig = Figure(figsize=(width, height))
    inner_h = height - top - bottom
    inner_w = width - left - right
    axis_h = (inner_h - row_gap * (rows - 1)) / rows
    axis_w = (inner_w - col_gap * (cols - 1)) / cols
    fig.subplots_adjust(left=left / width, right=1 - right / width, bottom=bottom / height,
                        top=1 - top / height, hspace=row_gap / axis_h, wspace=col_gap / axis_w)
    return fig, fig.subplots(rows, cols, squeeze=False, **kw)


def _svg(fig, key: str, label: str, tooltips=None) -> str:
    """A figure as an inline ``<svg>`` element: no XML prologue, no metadata, no namespace URLs,
    ids made unique to ``key`` and only those referenced kept; it scales to its container."""
    import matplotlib
    from matplotlib.backends.backend_svg import FigureCanvasSVG

    buf = io.StringIO()
    with matplotlib.rc_context({**_RC, "svg.hashsalt": key}):
        FigureCanvasSVG(fig).print_svg(buf, metadata={"Date": None})
    text = buf.getvalue()
    text = text[text.index("<svg"):]
    text = re.sub(r"\s*<metadata>.*?</metadata>", "", text, flags=re.S)
    text = re.sub(r'\s*<style type="text/css">.*?</style>', "", text, flags=re.S)
    text = re.sub(r'\sxmlns(:\w+)?="[^"]*"', "", text)
    text = re.sub(r'\swidth="[\d.]+pt" height="[\d.]+pt"', "", text, count=1)
    referenced = set(re.findall(r'(?:href="|url\()#([^")]+)', text))
    text = re.sub(r'\sid="([^"]*)"',
                  lambda m: m.group(0) if m.group(1) in referenced else "", text)
    if tooltips:
        def titled(m):
            tip = tooltips.get(m.group(1))
            return m.group(0) + (f"<title>{_e(tip)}</title>" if tip else "")
        text = re.sub(r'<a xlink:href="#([^"]+)"[^>]*>', titled, text)
    return text.replace("<svg", f'<svg class="plot" role="img" aria-label="{_e(label)}"', 1)


def _figure_html(svg: str, caption: str, ident: str) -> str:
    return (f'<figure class="plot" id="{_e(ident)}">{svg}'
            f"<figcaption>{caption}</figcaption></figure>")


def _element_names(design) -> tuple:
    r = design.rectifier
    if r.topology == "bridge":
        return "diode pair A", "diode pair B"
    if r.topology == "hybrid-bridge":
        return "plate A with its diode", "plate B with its diode"
    if design.valve_path:
        return "plate A", "plate B"
    return "diode A", "diode B"


def _check(assessment, name):
    return next((c for c in assessment.checks if c.name == name), None)


@_styled
def _waveform_plot(design, a, key, width) -> str:
    from optimiser.assessment.steady_state import cycle_waveforms

    w = cycle_waveforms(a.steady)
    t = 1e3 * w["time"]
    fig, ax = _figure(width, 4.2, 2, 1, sharex=True)
    top, bottom = ax[0, 0], ax[1, 0]
    ct = design.rectifier.topology == "centre-tap"
    emf_label = "winding EMF, one half (open circuit)" if ct else "winding EMF (open circuit)"
    top.plot(t, w["secondary_voltage"], color=GREY, lw=1.1, ls="--", label=emf_label)
    top.plot(t, w["node_voltage"][:, 0], color=BLUE, lw=1.8,
             label=f"reservoir ({w['node_names'][0]})")
    top.axhline(0, color=MUTED, lw=0.6)
    top.set_ylabel("voltage [V]")
    top.set_title("Winding and reservoir voltage, nominal mains, full power")
    top.legend(loc="lower left", ncol=2)

    names = _element_names(design)
    ia, ib = w["element_current_a"], w["element_current_b"]
    bottom.plot(t, ia, color=BLUE, lw=1.6, label=names[0])
    bottom.plot(t, ib, color=OCHRE, lw=1.6, ls=(0, (5, 2)), label=names[1])
    peak = float(max(ia.max(), ib.max()))
    k = int(np.argmax(ia))
    bottom.annotate(f"peak {_q(peak, 'A')}", (t[k], ia[k]), xytext=(8, -2),
                    textcoords="offset points", fontsize=8, color=INK)
    top_of_scale = max(peak, 1e-6) * 1.35
    notes = []
    for check, label in (("valve.peak_plate_current", "rated peak plate current"),
                         ("diode.surge", "I_FSM, non-repetitive surge")):
        c = _check(a, check)
        if c is None or not np.isfinite(c.limit):
            continue
        if c.limit <= 1.5 * top_of_scale:
            bottom.axhline(c.limit, color=RED, lw=1.2, ls=(0, (1.5, 1.5)))
            bottom.text(t[-1], c.limit, f"{label} {_q(c.limit, 'A')}", color=RED, fontsize=8,
                        ha="right", va="bottom")
            top_of_scale = max(top_of_scale, c.limit * 1.15)
        else:
            notes.append(f"{label}\n{_q(c.limit, 'A')}, above this scale")
    if notes:
        # mid-cycle, between the two elements' pulses, the plot is empty
        bottom.text(0.5, 0.5, "\n".join(notes), transform=bottom.transAxes, ha="center",
                    va="center", fontsize=8, color=RED)
    bottom.set_ylim(-0.04 * top_of_scale, top_of_scale)
    bottom.set_ylabel("current per element [A]")
    bottom.set_xlabel("time over one mains cycle [ms]")
    bottom.set_xlim(t[0], t[-1])
    bottom.set_title("Rectifier current per element")
    # beside the title, clear of the rating line
    bottom.legend(loc="lower right", bbox_to_anchor=(1.0, 1.0), ncol=2, borderaxespad=0.1)
    return _svg(fig, key, "waveforms over one mains cycle")


@_styled
def _sag_plot(design, a, key, width) -> str:
    c = a.curves
    freq = design.mains.frequency
    half = 0.5 / freq
    # the assessment rounds the hold up to whole half cycles
    hold = math.ceil(design.conditions.sag_hold / half - 1e-9) * half
    n = len(a.nodes)
    fig, ax = _figure(width, 0.4 + 1.75 * n, n, 1, sharex=True)
    lead = 0.15 * hold
    for k, node in enumerate(a.nodes):
        axk = ax[k, 0]
        idle, depth = node["idle_voltage"], node["depth"]
        settled = idle - depth
        t = np.concatenate([[-lead, 0.0], c["sag_time"]])
        v = np.concatenate([[idle, idle], c["sag_voltage"][:, k]])
        axk.axvspan(0, hold, color=SHADE, lw=0, zorder=0)
        axk.plot(t, v, color=BLUE, lw=1.7, zorder=3)
        axk.axhline(idle, color=MUTED, lw=0.8, ls=":")
        axk.axhline(settled, color=MUTED, lw=0.8, ls=":")
        span = max(abs(depth), 0.004 * abs(idle), 0.5)
        lo, hi = min(v.min(), settled), max(v.max(), idle)
        axk.set_ylim(lo - 0.35 * span, hi + 0.55 * span)
        x_depth = 0.88 * hold
        axk.annotate("", (x_depth, settled), (x_depth, idle),
                     arrowprops=dict(arrowstyle="<->", color=INK, lw=0.9, shrinkA=0, shrinkB=0))
        pct = 100 * depth / idle if idle else float("nan")
        axk.text(x_depth - 0.01 * hold, 0.5 * (idle + settled), f"depth {depth:.1f} V\n"
                 f"({pct:.1f} %)", ha="right", va="center", fontsize=8, color=INK)
        level_a = idle - 0.632 * depth
        if node["attack_time"] is not None:
            ta = node["attack_time"]
            axk.plot([0, ta], [level_a, level_a], color=RED, lw=1.1)
            axk.plot([ta], [level_a], "o", color=RED, ms=3.5, zorder=4)
            axk.annotate(f"attack {_ms(ta)} ms", (ta, level_a), xytext=(6, -3),
                         textcoords="offset points", color=RED, fontsize=8, va="top",
                         bbox=_LABEL_BOX)
        if node["recovery_time"] is not None:
            tr = node["recovery_time"]
            level_r = settled + 0.632 * depth
            axk.plot([hold, hold + tr], [level_r, level_r], color=GREEN, lw=1.1)
            axk.plot([hold + tr], [level_r], "s", color=GREEN, ms=3.5, zorder=4)
            axk.annotate(f"recovery {_ms(tr)} ms", (hold + tr, level_r), xytext=(6, 3),
                         textcoords="offset points", color=GREEN, fontsize=8, va="bottom",
                         bbox=_LABEL_BOX)
        if node["attack_time"] is None and node["recovery_time"] is None:
            axk.text(0.99, 0.9, "no measurable sag", transform=axk.transAxes, ha="right",
                     va="top", fontsize=8, color=MUTED)
        axk.set_ylabel("B+ [V]")
        axk.set_title(f"{node['name']}: idle {idle:.1f} V, full power {settled:.1f} V",
                      fontsize=8.5)
    ax[0, 0].text(0.5 * hold, 1.0, "full power", transform=ax[0, 0].get_xaxis_transform(),
                  ha="center", va="top", fontsize=8, color=OCHRE)
    ax[-1, 0].set_xlim(-lead, c["sag_time"][-1])
    ax[-1, 0].set_xlabel("time from the step to full power [s]")
    return _svg(fig, key, "sag step response per node")


@_styled
def _switch_on_plot(design, a, key, width) -> str:
    c = a.curves
    t, v = c["switch_on_time"], c["switch_on_voltage"]
    n = len(a.nodes)
    fig, ax = _figure(width, 0.5 + 1.6 * n, n, 1, sharex=True)
    for k, node in enumerate(a.nodes):
        axk = ax[k, 0]
        name = node["name"]
        axk.plot(t, v[:, k], color=BLUE, lw=1.7, zorder=3)
        top = float(np.nanmax(v[:, k]))
        rated = _check(a, f"capacitor.{name}.voltage")
        surge = _check(a, f"capacitor.{name}.surge_voltage")
        design_rated = design.nodes[k].rated_voltage
        limit = rated.limit if rated is not None else design_rated
        if limit is not None and np.isfinite(limit):
            axk.axhline(limit, color=RED, lw=1.2, ls=(0, (5, 2)))
            axk.text(t[-1], limit, f"rated {limit:.0f} V", color=RED, fontsize=8,
                     ha="right", va="top", bbox=_LABEL_BOX)
            top = max(top, limit)
        else:
            axk.text(0.99, 0.05, "no rated voltage given", transform=axk.transAxes,
                     ha="right", fontsize=8, color=RED)
        if surge is not None and np.isfinite(surge.limit):
            axk.axhline(surge.limit, color=RED, lw=1.0, ls=(0, (1.5, 1.5)))
            axk.text(t[-1], surge.limit, f"surge {surge.limit:.0f} V", color=RED,
                     fontsize=8, ha="right", va="bottom")
            top = max(top, surge.limit)
        worst = node["switch_on_peak"]
        axk.axhline(worst, color=GREY, lw=0.9, ls=(0, (6, 2, 1, 2)))
        axk.text(0.3 * t[-1], worst, f"highest at high mains {worst:.0f} V", color=MUTED,
                 fontsize=8, ha="left", va="top", bbox=_LABEL_BOX)
        top = max(top, worst)
        j = int(np.nanargmax(v[:, k]))
        axk.plot([t[j]], [v[j, k]], "v", color=INK, ms=4, zorder=4)
        axk.annotate(f"{v[j, k]:.0f} V", (t[j], v[j, k]), xytext=(6, -4),
                     textcoords="offset points", fontsize=8, color=INK, va="top")
        events = ((c["rectifier_start"], "\u2190 rectifier conducts", 0.30),
                  (c["load_start"], "\u2190 output valves draw", 0.10))
        for when, label, height in events:
            if when > 0:
                axk.axvline(when, color=GREY, lw=0.9, ls="-.")
                if k == 0:
                    # under the trace, which runs high once the rectifier conducts
                    axk.annotate(label, (when, height), xycoords=axk.get_xaxis_transform(),
                                 xytext=(3, 0), textcoords="offset points", ha="left",
                                 va="bottom", fontsize=8, color=MUTED, bbox=_LABEL_BOX)
        axk.set_ylim(0, 1.12 * top)
        axk.set_ylabel("B+ [V]")
        axk.set_title(f"{name}", fontsize=8.5)
    ax[-1, 0].set_xlim(0, t[-1])
    ax[-1, 0].set_xlabel("time from switch-on [s]")
    return _svg(fig, key, "switch-on B+ trajectory per node")


def _csv_values(front: Front, name) -> np.ndarray:
    """An objective in the units pareto.csv and the axes give it (% for regulation, ...)."""
    return front.objective(name) * _TABLE[name].csv_scale


def _branch_points(axk, x, y, front: Front, urls, size=22):
    """The points with each one's rectifier branch marked (the one marker scheme,
    :func:`optimiser.outputs.branch_figures.draw_branches`), each a link to its design."""
    for art, idx in draw_branches(axk, x, y, front.branch, front.on_front, size=size):
        art.set_urls([urls[i] for i in idx])


def _legend_below(fig, ax):
    handles, labels = ax.get_legend_handles_labels()
    unique = dict(zip(labels, handles))
    fig.legend(unique.values(), unique.keys(), loc="lower center",
               ncol=min(len(unique), 4), fontsize=7)


@_styled
def _front_plot(front: Front, anchors, key) -> str:
    names = list(front.searched)
    values = {name: _csv_values(front, name) for name in names}
    pairs = [(a, b) for i, a in enumerate(names) for b in names[i + 1:]]
    fig, ax = _figure(WIDE * 1.1 * max(len(pairs), 3) / 3, 4.2, 1, len(pairs), bottom=1.5,
                      top=0.15)
    urls = [f"#{a}" for a in anchors]
    extremes = _extremes(front)
    for axk, (x, y) in zip(ax[0], pairs):
        _branch_points(axk, values[x], values[y], front, urls)
        for row, labels in extremes.items():
            m = axk.scatter([values[x][row]], [values[y][row]], s=70, marker="o",
                            facecolor="none", edgecolor=INK, linewidth=0.9, zorder=4,
                            label="extreme of one objective (ringed)")
            m.set_urls([urls[row]])
        r = front.recommended
        if r is not None:
            star = axk.scatter([values[x][r]], [values[y][r]], s=170, marker="*", color=OCHRE,
                               edgecolor=INK, linewidth=0.8, zorder=5, label="recommended")
            star.set_urls([urls[r]])
            axk.annotate(front.ids[r], (values[x][r], values[y][r]), xytext=(7, 5),
                         textcoords="offset points", fontsize=8, color=INK)
        for name, setter in ((x, axk.set_xscale), (y, axk.set_yscale)):
            if name == "life":
                setter("log")
        axk.set_xlabel(_OBJECTIVE_LABEL[x])
        axk.set_ylabel(_OBJECTIVE_LABEL[y])
        axk.margins(0.12)
    _legend_below(fig, ax[0, 0])
    tips = {}
    for i, a in enumerate(anchors):
        unit = {n: "" if _TABLE[n].unit in ("-", "") else f" {_TABLE[n].unit}" for n in names}
        tips[a] = (f"{front.ids[i]}: " + ", ".join(
            f"{n.replace('_', ' ')} {values[n][i]:.4g}{unit[n]}" for n in names)
            + (f"; {front.branch[i]}" if front.branch[i] else ""))
    return _svg(fig, key, "the Pareto front in pairwise projections, branches marked",
                tooltips=tips)


@_styled
def _sag_life_plot(front: Front, anchors, key, target=None) -> str:
    """Sag depth against the shortest part life over the listed designs, branches marked."""
    fig, ax = _figure(HALF * 1.3, 3.6, bottom=0.95)
    axk = ax[0, 0]
    urls = [f"#{a}" for a in anchors]
    _branch_points(axk, _csv_values(front, "regulation"), front.objective("life"), front, urls,
                   size=30)
    if target is not None:
        axk.axvline(100 * target, color=RED, lw=0.9, ls="--", label="sag target")
    axk.set_yscale("log")
    axk.set_xlabel(SAG_LABEL)
    axk.set_ylabel(_OBJECTIVE_LABEL["life"])
    _legend_below(fig, axk)
    return _svg(fig, key, "sag depth against shortest part life, branches marked")
