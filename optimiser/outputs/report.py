"""One self-contained HTML page per design, or per search run: what a builder looks at to choose.

The page opens in any browser with no server and no network: plots are inline SVG drawn with
matplotlib's SVG backend (text kept as text, so no font files), the stylesheet is inline, and a
few lines of inline JavaScript sort the tables. Nothing is fetched.

Per design the page shows the waveforms over one mains cycle, the sag step response per node,
the switch-on B+ trajectory against the capacitor ratings, the node figures, the check table, the
life estimates, the transformer order sheet, the parts list and the cautions. A switchable pair
shows its two positions side by side. A search run adds the Pareto front in pairwise projections
with the recommended design marked, and a table of every Pareto design.

Physics is not done here: every figure comes from :func:`optimiser.assessment.assess`,
:func:`optimiser.assessment.steady_state.cycle_waveforms`, :mod:`optimiser.assessment.bill` and
:mod:`optimiser.physics.transformer`.
"""

from __future__ import annotations

import functools
import html
import io
import math
import re
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from optimiser.formats.units import format_quantity

__all__ = ["design_report", "results_report", "write_report", "write_results_report",
           "read_front", "Front", "ResultsError", "MARGIN_BAND", "FULL_SECTIONS"]

#: A passing check whose ratio is at least this is shown as "close" rather than "pass": within
#: 10 % of its rating (a presentation choice; common practice, no source).
MARGIN_BAND = 0.9
#: A run with at most this many Pareto designs gets a full section for each; a larger one gets
#: sections for the recommended design and the extremes of each objective only.
FULL_SECTIONS = 8

OBJECTIVES = ("cost", "regulation", "rectifier_stress")
_OBJECTIVE_LABEL = {"cost": "cost [cost units]", "regulation": "regulation [%]",
                    "rectifier_stress": "rectifier stress [-]"}
_EXTREME_LABEL = {"cost": "cheapest", "regulation": "best regulation",
                  "rectifier_stress": "least rectifier stress"}

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


class ResultsError(ValueError):
    """A results folder the report cannot read (missing files or columns)."""


# ============================================================================================
# Display helpers

_SYMBOLS = (("kohm", "k\u03a9"), ("Mohm", "M\u03a9"), ("mohm", "m\u03a9"), ("ohm", "\u03a9"),
            ("degC", "\u00b0C"))


def _pretty(text: str) -> str:
    """Unit spellings of :func:`format_quantity` as a reader writes them (µF, kΩ, °C)."""
    text = re.sub(r"(?<=\d) u(?=[A-Za-z\u03a9])", " \u00b5", text)
    for plain, symbol in _SYMBOLS:
        text = text.replace(plain, symbol)
    return text


def _q(value, unit, digits=3) -> str:
    """A quantity with its unit, for a cell whose column mixes units."""
    if value is None or not np.isfinite(value):
        return "n/a"
    if unit in ("-", ""):
        return f"{value:.{digits}g}"
    # a non-breaking space: a number never wraps away from its unit
    return _pretty(format_quantity(float(value), unit, digits)).replace(" ", "\u00a0")


def _num(value, decimals=1) -> str:
    """A bare number for a column whose header carries the unit."""
    if value is None or not np.isfinite(value):
        return "n/a"
    return f"{value:,.{decimals}f}"


def _ms(seconds) -> str:
    return "n/a" if seconds is None or not np.isfinite(seconds) else f"{1e3 * seconds:.0f}"


def _e(text) -> str:
    return html.escape(str(text), quote=True)


def _slug(text) -> str:
    return re.sub(r"[^A-Za-z0-9_-]+", "-", str(text)).strip("-") or "x"


@dataclass(frozen=True)
class _Cell:
    """One table cell: its HTML, a sort key and a CSS class."""

    html: str
    sort: object = None
    cls: str = ""


def _cell(text, sort=None, cls="") -> _Cell:
    return _Cell(_e(text), sort, cls)


def _table(headers, rows, *, cls="data", caption=None, group_row=None, foot=None,
           row_ids=None) -> str:
    """An HTML table; sortable by clicking a header (numeric where a cell gives a sort key).

    Parameters
    ----------
    headers : list of str
        Column headers, the unit in square brackets where the column holds bare numbers.
    rows : list of list of (str or _Cell)
    group_row : list of (str, int), optional
        A header row above ``headers``: (label, column span).
    foot : list of list, optional
        Rows kept at the bottom (totals).
    row_ids : list of str or None, optional
        An ``id`` per body row (a link target).
    """
    out = [f'<table class="{cls} sortable">']
    if caption:
        out.append(f"<caption>{_e(caption)}</caption>")
    out.append("<thead>")
    if group_row:
        out.append("<tr>" + "".join(f'<th colspan="{span}" class="group">{_e(label)}</th>'
                                    for label, span in group_row) + "</tr>")
    out.append("<tr>" + "".join(f'<th scope="col">{_e(h)}</th>' for h in headers) + "</tr>")
    out.append("</thead><tbody>")

    def row_html(row, rid=None):
        cells = []
        for c in row:
            c = c if isinstance(c, _Cell) else _cell(c)
            attrs = ""
            if c.sort is not None and not (isinstance(c.sort, float) and math.isnan(c.sort)):
                attrs += f' data-sort="{_e(c.sort)}"'
            if c.cls:
                attrs += f' class="{c.cls}"'
            cells.append(f"<td{attrs}>{c.html}</td>")
        ident = f' id="{_e(rid)}"' if rid else ""
        return f"<tr{ident}>" + "".join(cells) + "</tr>"

    ids = row_ids or [None] * len(rows)
    out += [row_html(r, i) for r, i in zip(rows, ids)]
    out.append("</tbody>")
    if foot:
        out.append("<tfoot>" + "".join(row_html(r) for r in foot) + "</tfoot>")
    out.append("</table>")
    return "\n".join(out)


# ============================================================================================
# SVG plots

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


# ============================================================================================
# Tables of one design

def _verdict(check) -> _Cell:
    if not check.passed:
        return _Cell("\u2717 FAIL", 2, "verdict fail")
    if check.ratio >= MARGIN_BAND:
        return _Cell("! close", 1, "verdict close")
    return _Cell("\u2713 pass", 0, "verdict pass")


def _ratio_cell(check) -> _Cell:
    r = check.ratio
    shown = "n/a" if not np.isfinite(r) else f"{r:.2f}"
    width = 0 if not np.isfinite(r) else min(r, 1.2) / 1.2 * 100
    kind = "fail" if not check.passed else "close" if r >= MARGIN_BAND else "pass"
    bar = (f'<span class="bar" title="1 = at the rating"><span class="fill {kind}" '
           f'style="width:{width:.0f}%"></span></span>')
    return _Cell(f'<span class="ratio">{shown}</span>{bar}', r if np.isfinite(r) else None,
                 "ratio-cell")


def _check_q(value, unit) -> str:
    """A check's figure or rating; a dimensionless one (a fill factor) as a percentage."""
    if unit in ("-", "") and value is not None and np.isfinite(value):
        return f"{100 * value:.0f}\u00a0%"
    return _q(value, unit)


def _check_name(check) -> str:
    name = _e(check.name).replace(".", ".<wbr>")  # narrow columns break at the dots
    return (f'<span class="check-name">{name}</span>'
            f'<span class="what">{_e(check.what)}</span>')


def _order_checks(checks):
    """Failures first, then closest to the rating."""
    return sorted(checks, key=lambda c: (c.passed, -c.ratio if np.isfinite(c.ratio) else 0))


def _sources_list(checks):
    """Number each distinct rating source once: (number per source, the list as HTML)."""
    numbers = {}
    for c in checks:
        numbers.setdefault(c.source, len(numbers) + 1)
    items = "".join(f"<li>{_e(src)}</li>" for src in numbers)
    return numbers, f'<p class="note">Ratings from:</p><ol class="sources note">{items}</ol>'


def _checks_table(positions) -> str:
    """The verdicts: one column group per switch position; rating sources as numbered notes."""
    every = [c for p in positions for c in _order_checks(p[2].checks)]
    numbers, notes = _sources_list(every)
    if len(positions) == 1:
        a = positions[0][2]
        rows = [[_verdict(c), _Cell(_check_name(c), c.name), _Cell(_e(_check_q(c.value, c.unit)),
                 c.value), _Cell(_e(_check_q(c.limit, c.unit)), c.limit), _ratio_cell(c),
                 _Cell(f"[{numbers[c.source]}]", numbers[c.source])]
                for c in _order_checks(a.checks)]
        return _table(["verdict", "check (what is compared)", "worst figure", "rating",
                       "ratio [-]", "from [note]"], rows, cls="data checks") + notes
    names = [p[0] for p in positions]
    by_name = [{c.name: c for c in p[2].checks} for p in positions]
    order = []
    for c in _order_checks(every):
        if c.name not in order:
            order.append(c.name)
    rows = []
    for name in order:
        first = next(b[name] for b in by_name if name in b)
        row = [_Cell(_check_name(first), name)]
        for b in by_name:
            c = b.get(name)
            if c is None:
                row += [_Cell("does not apply", cls="na"), "", "", ""]
            else:
                row += [_verdict(c), _Cell(_e(_check_q(c.value, c.unit)), c.value),
                        _Cell(_e(_check_q(c.limit, c.unit)), c.limit), _ratio_cell(c)]
        notes_here = sorted({numbers[b[name].source] for b in by_name if name in b})
        row.append(_Cell(", ".join(f"[{n}]" for n in notes_here), notes_here[0]))
        rows.append(row)
    headers = (["check (what is compared)"]
               + ["verdict", "worst figure", "rating", "ratio [-]"] * len(names)
               + ["from [note]"])
    groups = [("", 1)] + [(f"position '{n}'", 4) for n in names] + [("", 1)]
    return _table(headers, rows, cls="data checks", group_row=groups) + notes


def _nodes_table(positions) -> str:
    pair = len(positions) > 1
    headers = (["position"] if pair else []) + [
        "node", "B+ idle [V]", "B+ full power [V]", "static drop [V]", "drop [%]",
        "ripple p-p [V]", "worst ripple p-p [V]", "B+ window, low-high mains [V]",
        "sag depth [V]", "attack [ms]", "recovery [ms]", "switch-on highest [V]",
        "below safe voltage after switch-off [s]"]
    rows = []
    for k in range(len(positions[0][2].nodes)):
        for name, design, a in positions:
            n = a.nodes[k]
            ripple = a.steady.nodes[k].ripple_pp
            t_safe = n["discharge_time"]
            row = ([name] if pair else []) + [
                n["name"],
                _Cell(_num(n["idle_voltage"]), n["idle_voltage"]),
                _Cell(_num(n["full_power_voltage"]), n["full_power_voltage"]),
                _Cell(_num(n["static_drop"]), n["static_drop"]),
                _Cell(_num(n["static_drop_percent"]), n["static_drop_percent"]),
                _Cell(_num(ripple, 2), ripple),
                _Cell(_num(n["ripple_pp_worst"], 2), n["ripple_pp_worst"]),
                _Cell(f"{n['window_min']:.0f}\u2013{n['window_max']:.0f}", n["window_min"]),
                _Cell(_num(n["depth"]), n["depth"]),
                _Cell(_ms(n["attack_time"]), n["attack_time"]),
                _Cell(_ms(n["recovery_time"]), n["recovery_time"]),
                _Cell(_num(n["switch_on_peak"], 0), n["switch_on_peak"]),
                _Cell(_num(t_safe) if np.isfinite(t_safe) else "never",
                      t_safe if np.isfinite(t_safe) else 1e300)]
            rows.append(row)
    return _table(headers, rows, cls="data nodes")


def _figures_table(positions) -> str:
    """Rectifier, winding and power figures at nominal mains, full power."""
    spec = [("rectifier peak current per element", "rectifier_peak_current", "A"),
            ("rectifier average current per element", "rectifier_average_current", "A"),
            ("rectifier RMS current per element", "rectifier_rms_current", "A"),
            ("conduction, part of the mains cycle", "conduction_angle", "\u00b0"),
            ("peak inverse voltage", "piv", "V"),
            ("HV winding RMS current", "secondary_rms_current", "A"),
            ("power from the winding", "input_power", "W"),
            ("power into the loads", "load_power", "W"),
            ("rectifier loss", "rectifier_loss", "W"),
            ("winding-path loss", "winding_loss", "W"),
            ("feed and ESR loss", "ladder_loss", "W")]
    rows = []
    for label, attr, unit in spec:
        row = [label]
        for _, _, a in positions:
            value = getattr(a.steady, attr)
            text = f"{value:.0f}\u00b0" if unit == "\u00b0" else _q(value, unit)
            row.append(_Cell(_e(text), value))
        rows.append(row)
    row = ["rectifier stress, the worst rectifier check ratio [-]"]
    for _, _, a in positions:
        row.append(_Cell(_e(_q(a.rectifier_stress, "-")), a.rectifier_stress))
    rows.append(row)
    row = ["switch-on surge current at the mains crest"]
    for _, _, a in positions:
        row.append(_Cell(_e(_q(a.switch_on["surge_current"], "A")),
                         a.switch_on["surge_current"]))
    rows.append(row)
    heads = ["figure"] + ([f"position '{p[0]}'" for p in positions] if len(positions) > 1
                          else ["value"])
    return _table(heads, rows, cls="data figures kv")


def _life_table(positions) -> str:
    pair = len(positions) > 1
    rows = []
    for name, _, a in positions:
        for cap in a.life["capacitors"]:
            hours = cap["life_hours"]
            core = cap["core_temperature"]
            rows.append(([name] if pair else []) + [
                cap["name"], cap["series"],
                _Cell(_num(core) if core is not None else "n/a", core),
                _Cell(f"{hours:,.0f}" if hours is not None else "n/a (no rated voltage)",
                      hours),
                _Cell(f"{hours / 8766:.0f}" if hours is not None else "n/a", hours)])
    heads = (["position"] if pair else []) + [
        "capacitor at node", "series", "core temperature [\u00b0C]", "estimated life [h]",
        "estimated life, always on [years]"]
    out = [_table(heads, rows, cls="data life")]
    for name, _, a in positions:
        v = a.life["rectifier_valve"]
        if v:
            where = f" (position '{name}')" if pair else ""
            out.append(f"<p>Rectifier valve {_e(v['name'])}{_e(where)}: cathode loading "
                       f"{100 * v['cathode_loading']:.0f} % of its DC rating; relative life "
                       f"index {v['relative_life']:.1f} (1 = at its full rating).</p>")
    out.append(f'<p class="note">{_e(positions[0][2].life["source"])}.</p>')
    return "\n".join(out)


def _parts_table(design) -> str:
    from optimiser.assessment.bill import parts_list

    lines = parts_list(design)
    rows = []
    for line in lines:
        rows.append([line.group, line.reference, _Cell(str(line.quantity), line.quantity),
                     _Cell(_e(_pretty(line.description))), _pretty(line.rating),
                     _Cell(_num(line.unit_cost, 2), line.unit_cost),
                     _Cell(_num(line.cost, 2) if np.isfinite(line.cost) else "unknown",
                           line.cost),
                     _Cell(_e(line.source), cls="source")])
    known = [line.cost for line in lines if np.isfinite(line.cost)]
    missing = len(lines) - len(known)
    total = _num(sum(known), 2)
    total_text = total if not missing else f"{total} + {missing} unpriced"
    foot = [[_Cell("<strong>total</strong>"), "", "", "", "", "",
             _Cell(f"<strong>{_e(total_text)}</strong>"),
             "estimates, not quotations" + ("" if not missing else
                                           "; ask for the unpriced parts")]]
    return _table(["group", "where", "quantity [pcs]", "part", "rating", "unit cost [cost units]",
                   "cost [cost units]", "price from"], rows, cls="data parts", foot=foot)


def _markdown_html(text: str, top: int = 4, table_cls: str = "sheet") -> str:
    """The small Markdown subset the project writes (headings, lists, tables, emphasis lines,
    paragraphs, code fences) as HTML. Images and links become their text: nothing is fetched."""
    def inline(s):
        s = re.sub(r"!\[([^\]]*)\]\([^)]*\)", r"[figure: \1]", s)
        s = re.sub(r"\[([^\]]*)\]\([^)]*\)", r"\1", s)
        s = _e(s)
        s = re.sub(r"\*\*(.+?)\*\*", r"<strong>\1</strong>", s)
        s = re.sub(r"`([^`]+)`", r"<code>\1</code>", s)
        s = re.sub(r"(?<![\w])_(.+?)_(?![\w])", r"<em>\1</em>", s)
        return s

    out, items, table, para, code = [], [], [], [], None

    def flush():
        nonlocal items, table, para
        if items:
            out.append("<ul>" + "".join(f"<li>{inline(i)}</li>" for i in items) + "</ul>")
            items = []
        if table:
            body = [r for r in table if not re.fullmatch(r"\|?[\s:|-]+\|?", r)]
            cells = [[c.strip() for c in r.strip().strip("|").split("|")] for r in body]
            head, rest = cells[0], cells[1:]
            out.append(f'<table class="{table_cls}"><thead><tr>'
                       + "".join(f"<th>{inline(h)}</th>" for h in head) + "</tr></thead><tbody>"
                       + "".join("<tr>" + "".join(f"<td>{inline(c)}</td>" for c in r) + "</tr>"
                                 for r in rest) + "</tbody></table>")
            table = []
        if para:
            out.append(f"<p>{inline(' '.join(para))}</p>")
            para = []

    for raw in text.splitlines():
        line = raw.rstrip()
        if code is not None:
            if line.startswith("```"):
                out.append(f"<pre>{_e(chr(10).join(code))}</pre>")
                code = None
            else:
                code.append(raw)
            continue
        if line.startswith("```"):
            flush()
            code = []
        elif m := re.match(r"(#{1,6})\s+(.*)", line):
            flush()
            level = min(6, top + len(m.group(1)) - 1)
            out.append(f"<h{level}>{inline(m.group(2))}</h{level}>")
        elif m := re.match(r"\s*[-*]\s+(.*)", line):
            if table or para:
                flush()
            items.append(m.group(1))
        elif line.lstrip().startswith("|"):
            if items or para:
                flush()
            table.append(line)
        elif not line.strip():
            flush()
        else:
            if items or table:
                flush()
            para.append(line.strip())
    if code is not None:
        out.append(f"<pre>{_e(chr(10).join(code))}</pre>")
    flush()
    return "\n".join(out)


def _transformer_html(design) -> str:
    from optimiser.outputs.ordersheet import order_sheet, order_sheet_markdown

    built = design.transformer_design
    if built is not None:
        sheet = order_sheet_markdown(order_sheet(built))
        return (f'<div class="order-sheet">{_markdown_html(sheet, top=4)}</div>')
    t = design.transformer
    topologies = ([p.topology for p in design.rectifier.positions.values()] if design.switchable
                  else [design.rectifier.topology])
    per = " per half-winding" if "centre-tap" in topologies else ""
    rows = [["HV secondary, RMS, open circuit" + per, _q(t.secondary_voltage, "V", 4)],
            ["series resistance per conducting path", _q(t.secondary_resistance, "ohm")],
            ["leakage inductance per conducting path", _q(t.leakage_inductance, "H")],
            ["rated HV current, RMS", _q(t.rated_current, "A") if t.rated_current else
             "not given"]]
    return ("<p>This design gives the transformer as an equivalent source, not a physical "
            "build, so there is no order sheet. These are the figures a winder must meet; "
            "add a <code>build</code> block to the design file for a full order sheet "
            "(see <code>specs/demo-design-build.yaml</code>).</p>"
            + _table(["figure", "value"], rows, cls="data equivalent kv"))


def _cautions_html(positions, design) -> str:
    """The safety cautions, with this design's own voltages and discharge times."""
    safe = design.conditions.safe_voltage
    highest = max(n["switch_on_peak"] for _, _, a in positions for n in a.nodes)
    working = max(n["window_max"] for _, _, a in positions for n in a.nodes)
    discharge = []
    for name, d, a in positions:
        where = f" (position '{name}')" if name else ""
        for k, n in enumerate(a.nodes):
            bleeder = d.nodes[k].bleeder
            via = (f"its {_pretty(format_quantity(bleeder, 'ohm'))} bleeder" if bleeder else
                   "the bleeders elsewhere in the ladder (none of its own)")
            t = n["discharge_time"]
            if np.isfinite(t):
                discharge.append(f"{n['name']}{where}: below {safe:.0f} V about {t:.0f} s after "
                                 f"switch-off, through {via}")
            else:
                discharge.append(f"{n['name']}{where}: never falls below {safe:.0f} V by itself "
                                 "\u2014 fit a bleeder")
    items = [
        f"<strong>High voltage.</strong> This supply reaches about {highest:.0f} V at switch-on "
        f"and up to {working:.0f} V in use at high mains. These voltages can kill. Work on it "
        "only if you are competent with high-voltage equipment, with the mains plug out.",
        "<strong>Stored charge.</strong> The capacitors stay charged after switch-off. With the "
        "bleeders fitted and intact (valves drawing nothing):<ul>"
        + "".join(f"<li>{_e(x)}</li>" for x in discharge) + "</ul>"
        "Measure every capacitor with a meter before you touch anything; a failed bleeder leaves "
        "the full charge in place.",
        "<strong>Bleeders.</strong> Rate each bleeder for the voltage across it and for the "
        "dissipation in the check table; do not leave them out to save power.",
        "<strong>Mains wiring.</strong> Fuse the primary, bond the chassis to the protective "
        "earth, use mains-rated switches (a rectifier changeover switch must be rated for the "
        "voltage it switches) and insulation rated for the working voltages.",
        "<strong>Local codes.</strong> Mains wiring, earthing, fusing and insulation are "
        "governed by local electrical codes and safety standards. These figures are "
        "engineering estimates, not a certification; the order sheet is a specification for a "
        "qualified winder. Defer to local codes and licensed practice.",
    ]
    return '<ul class="cautions">' + "".join(f"<li>{i}</li>" for i in items) + "</ul>"


def _glance(positions, design, extra=None) -> str:
    """The short answer: does it pass, what it costs, where B+ lands."""
    from optimiser.assessment.bill import cost_breakdown

    total = cost_breakdown(design)["total"]
    failed = [f"{name + '/' if name else ''}{c.name}" for name, _, a in positions
              for c in a.checks if not c.passed]
    close = [c for _, _, a in positions for c in a.checks if c.passed and c.ratio >= MARGIN_BAND]
    if failed:
        verdict = (f'<span class="verdict fail">\u2717 fails {len(failed)} check'
                   f'{"s" if len(failed) > 1 else ""}</span> {_e(", ".join(failed))}')
    else:
        verdict = '<span class="verdict pass">\u2713 every check passes</span>'
        if close:
            verdict += (f" ({len(close)} within {100 * (1 - MARGIN_BAND):.0f} % of "
                        "its rating)")
    items = [("verdict", verdict),
             ("estimated cost", _e(f"{total:,.2f} cost units" if np.isfinite(total) else
                                   "unknown (a part has no price; see the parts list)"))]
    for name, _, a in positions:
        where = f" ({name})" if name else ""
        bplus = ", ".join(f"{n['name']} {n['idle_voltage']:.0f}\u2192"
                          f"{n['full_power_voltage']:.0f} V" for n in a.nodes)
        items.append((f"B+ idle \u2192 full power{where}", _e(bplus)))
        first = a.nodes[0]
        items.append((f"reservoir{where}", _e(
            f"ripple {a.steady.nodes[0].ripple_pp:.1f} V p-p, sag {first['depth']:.1f} V "
            f"({first['depth'] / first['idle_voltage'] * 100:.1f} %), rectifier stress "
            f"{_q(a.rectifier_stress, '-')}")))
    for label, value in (extra or []):
        items.append((label, _e(value)))
    return ('<dl class="glance">' + "".join(f"<dt>{_e(k)}</dt><dd>{v}</dd>" for k, v in items)
            + "</dl>")


def _positions(design, assessment):
    """[(position name or None, Design, Assessment)] in the design's order."""
    if hasattr(assessment, "positions"):
        return [(name, d, assessment.positions[name]) for name, d in design.positions()]
    return [(None, design, assessment)]


def _plots_html(positions, anchor, kind, plot, caption) -> str:
    width = WIDE if len(positions) == 1 else HALF
    figs = []
    for name, d, a in positions:
        key = f"{anchor}-{kind}-{_slug(name or 'one')}"
        title = f"<strong>Position '{_e(name)}'.</strong> " if name else ""
        figs.append(_figure_html(plot(d, a, key, width), title + caption(d, a), key))
    cls = "side-by-side" if len(positions) > 1 else "single"
    return f'<div class="{cls}">' + "".join(figs) + "</div>"


def _waveform_caption(d, a):
    c = _check(a, "valve.peak_plate_current")
    worst = (f" At high mains the peak plate current reaches {_q(c.value, 'A')}, "
             f"{100 * c.ratio:.0f} % of its rating." if c is not None else "")
    silicon = ("" if _check(a, "diode.surge") is None else
               " The diode data give no repetitive peak rating; the non-repetitive surge rating "
               "(I_FSM) is shown for scale, and the switch-on surge is checked against it.")
    return ("One mains cycle at nominal mains and full power: the winding's open-circuit EMF, "
            "the reservoir voltage and the current in each rectifying element, with the rating "
            f"the data gives.{worst}{silicon}")


def _sag_caption(d, a):
    return (f"Cycle-averaged B+ per node for a step from idle to full power held "
            f"{d.conditions.sag_hold:.2f} s (shaded), then back to idle. Attack and recovery "
            "are the times to 63 % of the change (the first-order convention).")


def _switch_on_caption(d, a):
    return ("B+ per node over the first minute at nominal mains: nothing until the rectifier "
            "conducts, the charge-up with the output valves cold, then the idle load once they "
            "warm. Red dashed: the capacitor's rated voltage; red dotted: its surge rating; "
            "grey: the highest voltage at high mains with the valves cold, which the checks "
            "compare with the ratings.")


def _design_section(design, assessment, anchor, title, *, subtitle="", extra=None,
                    design_file=None, badge="") -> str:
    positions = _positions(design, assessment)
    pair = len(positions) > 1
    parts = [f'<section class="design" id="{_e(anchor)}">',
             f"<h2>{_e(title)}{badge}</h2>"]
    if subtitle:
        parts.append(f'<p class="subtitle">{subtitle}</p>')
    if pair:
        names = " and ".join(f"'{p[0]}'" for p in positions)
        parts.append(f"<p>A switchable pair of rectifier branches: positions {_e(names)}, "
                     "each with its own rectifier and reservoir, shown side by side.</p>")
    parts.append(_glance(positions, design, extra))

    def sub(key, heading, body):
        parts.append(f'<section class="part" id="{_e(anchor)}-{key}"><h3>{_e(heading)}</h3>'
                     f"{body}</section>")

    sub("waveforms", "Waveforms over one mains cycle",
        _plots_html(positions, anchor, "waveforms", _waveform_plot, _waveform_caption))
    sub("sag", "Sag: the step from idle to full power",
        _plots_html(positions, anchor, "sag", _sag_plot, _sag_caption))
    sub("switch-on", "Switch-on: B+ over the first minute",
        _plots_html(positions, anchor, "switch-on", _switch_on_plot, _switch_on_caption))
    sub("nodes", "B+ nodes", _nodes_table(positions)
        + '<p class="note">B+ idle and full power, ripple and sag at nominal mains; worst '
          "ripple at low mains and full power; the window spans low mains at full power to "
          "high mains at idle.</p>")
    sub("checks", "Checks against the parts' ratings",
        f'<p class="note">Worst corner of mains, winding and capacitor tolerance. Ratio = '
        f"worst figure / rating (rating / figure for a least value), so at most 1 is inside "
        f"the rating. \u2713 pass: ratio below {MARGIN_BAND:.2f}; ! close: {MARGIN_BAND:.2f} "
        f"to 1; \u2717 FAIL: above 1.</p>" + _checks_table(positions))
    sub("figures", "Rectifier, winding and power (nominal mains, full power)",
        _figures_table(positions))
    sub("life", "Life estimates", _life_table(positions))
    sub("transformer", "Transformer", _transformer_html(design))
    sub("parts", "Parts list", _parts_table(design))
    sub("cautions", "Cautions", _cautions_html(positions, design))
    if design_file is not None:
        try:
            text = Path(design_file).read_text(encoding="utf-8")
        except OSError:
            text = None
        if text is not None:
            parts.append(f"<details><summary>The design file ({_e(Path(design_file).name)})"
                         f"</summary><pre>{_e(text)}</pre></details>")
    parts.append("</section>")
    return "\n".join(parts)


# ============================================================================================
# The page

_CSS = """
:root { --ink: #1d2430; --muted: #5b6472; --rule: #d5d9e0; --accent: #1c5d99;
  --pass: #2f7d4f; --pass-bg: #e5f2e9; --close: #8a5a00; --close-bg: #fbefd6;
  --fail: #a4231b; --fail-bg: #f8e0dd; }
* { box-sizing: border-box; }
html { background: #f6f7f9; }
body { margin: 0 auto; max-width: 1200px; padding: 24px 32px 48px; background: #fff;
  color: var(--ink); font: 14px/1.45 system-ui, "Segoe UI", "DejaVu Sans", Arial, sans-serif; }
h1 { font-size: 24px; margin: 0 0 4px; }
h2 { font-size: 20px; margin: 0 0 8px; padding-bottom: 4px; border-bottom: 2px solid var(--ink); }
h3 { font-size: 16px; margin: 22px 0 6px; color: var(--accent); }
h4 { font-size: 15px; margin: 14px 0 4px; } h5 { font-size: 14px; margin: 12px 0 4px; }
h6 { font-size: 13px; margin: 10px 0 4px; }
a { color: var(--accent); }
p.subtitle, p.lede { color: var(--muted); margin-top: 0; }
p.note, .note { color: var(--muted); font-size: 12.5px; }
.banner { border: 2px solid var(--fail); background: var(--fail-bg); padding: 8px 12px;
  margin: 12px 0 18px; font-weight: 600; }
nav.toc { border: 1px solid var(--rule); padding: 8px 14px; margin: 0 0 20px; font-size: 13px; }
nav.toc ul { margin: 4px 0; padding-left: 18px; columns: 2; }
section.design, section.front { margin-top: 36px; }
dl.glance { display: grid; grid-template-columns: max-content 1fr; gap: 3px 14px;
  margin: 10px 0; padding: 10px 14px; border-left: 4px solid var(--accent); background: #f4f7fb; }
dl.glance dt { font-weight: 600; } dl.glance dd { margin: 0; }
.badge { display: inline-block; margin-left: 10px; padding: 1px 8px;
  border: 2px solid var(--accent); color: var(--accent); font-size: 13px; vertical-align: middle; }
figure.plot { margin: 8px 0 14px; }
figure.plot svg { width: 100%; height: auto; display: block; }
svg.plot * { stroke-linejoin: round; stroke-linecap: butt; }
svg.plot a:hover path, svg.plot a:focus path { stroke: #000; stroke-width: 2; }
figcaption { font-size: 12.5px; color: var(--muted); margin-top: 2px; }
.side-by-side { display: grid; grid-template-columns: 1fr 1fr; gap: 20px; }
table { border-collapse: collapse; margin: 6px 0 10px; font-size: 12.5px; }
table.data { width: 100%; }
table.data.kv { width: auto; min-width: 50%; }
ol.sources { margin: 0 0 10px; padding-left: 26px; }
td.ratio-cell { white-space: nowrap; }
th, td { border-bottom: 1px solid var(--rule); padding: 3px 7px; text-align: left;
  vertical-align: top; }
thead th { border-bottom: 2px solid var(--ink); background: #fff; }
thead th.group { text-align: center; border-bottom: 1px solid var(--ink); }
table.sortable thead tr:last-child th { cursor: pointer; }
table.sortable thead tr:last-child th::after { content: " \\2195"; color: #b0b6c0; }
table.sortable th[aria-sort=ascending]::after { content: " \\2191"; color: var(--ink); }
table.sortable th[aria-sort=descending]::after { content: " \\2193"; color: var(--ink); }
td[data-sort] { font-variant-numeric: tabular-nums; }
tfoot td { border-top: 2px solid var(--ink); border-bottom: none; }
td.source { color: var(--muted); font-size: 11.5px; max-width: 340px; }
td.na { color: var(--muted); font-style: italic; white-space: nowrap; }
.check-name { display: block; font-family: ui-monospace, "DejaVu Sans Mono", monospace;
  font-size: 12px; }
.what { display: block; color: var(--muted); font-size: 11.5px; }
.verdict { font-weight: 700; white-space: nowrap; }
.verdict.pass { color: var(--pass); background: var(--pass-bg); }
.verdict.close { color: var(--close); background: var(--close-bg); }
.verdict.fail { color: var(--fail); background: var(--fail-bg); }
span.verdict { padding: 0 6px; }
.ratio { display: inline-block; min-width: 2.6em; }
.bar { display: inline-block; position: relative; width: 60px; height: 9px; margin-left: 4px;
  vertical-align: middle; border: 1px solid #b0b6c0; }
.bar::after { content: ""; position: absolute; left: 83.3%; top: -3px; bottom: -3px;
  border-left: 1.5px solid var(--ink); }
.fill { display: block; height: 100%; }
.fill.pass { background: var(--pass); } .fill.close { background: var(--close); }
.fill.fail { background: var(--fail); }
.order-sheet { border: 1px solid var(--rule); padding: 4px 16px 10px; }
table.sheet th, table.sheet td { font-size: 12px; }
ul.cautions { border: 2px solid var(--fail); padding: 10px 14px 10px 32px; }
ul.cautions li { margin: 4px 0; }
pre { background: #f4f5f7; padding: 8px 10px; overflow-x: auto; font-size: 12px; }
details { margin: 12px 0; } summary { cursor: pointer; color: var(--accent); }
footer { margin-top: 40px; color: var(--muted); font-size: 12px; border-top: 1px solid var(--rule);
  padding-top: 8px; }
@media (max-width: 900px) { .side-by-side { grid-template-columns: 1fr; }
  nav.toc ul { columns: 1; } }
@media print {
  @page { size: A4; margin: 12mm 11mm; }
  html, body { background: #fff; }
  body { max-width: none; padding: 0; font-size: 9.5pt; color: #000; }
  nav.toc, summary { display: none; }
  section.design { break-before: page; }
  figure.plot, tr, dl.glance, ul.cautions, .badge { break-inside: avoid; }
  h2, h3 { break-after: avoid; }
  a { color: inherit; text-decoration: none; }
  table.sortable thead tr:last-child th::after { content: none; }
  .verdict, .fill, .banner { -webkit-print-color-adjust: exact; print-color-adjust: exact; }
  td.source { max-width: none; }
  table { font-size: 7.5pt; } th, td { padding: 2px 3px; }
  .what, td.source, .note { font-size: 7pt; } .check-name { font-size: 7.5pt; }
  .bar { width: 34px; }
}
"""

# Sort a table by the clicked header: numbers by their data-sort key, the rest as text. Before
# printing, open every collapsed block so paper shows it.
_JS = """
(function () {
  function key(td) {
    var k = td ? td.getAttribute('data-sort') : null;
    if (k !== null && k !== '' && !isNaN(Number(k))) return Number(k);
    return td ? td.textContent.trim().toLowerCase() : '';
  }
  function sortBy(th) {
    var row = th.parentNode, table = th.closest('table'), body = table.tBodies[0];
    var col = Array.prototype.indexOf.call(row.children, th);
    var up = th.getAttribute('aria-sort') !== 'ascending';
    Array.prototype.forEach.call(row.children, function (h) { h.removeAttribute('aria-sort'); });
    th.setAttribute('aria-sort', up ? 'ascending' : 'descending');
    var rows = Array.prototype.slice.call(body.rows);
    rows.sort(function (a, b) {
      var x = key(a.cells[col]), y = key(b.cells[col]);
      var c = (typeof x === 'number' && typeof y === 'number') ? x - y
        : String(x).localeCompare(String(y));
      return up ? c : -c;
    });
    rows.forEach(function (r) { body.appendChild(r); });
  }
  document.querySelectorAll('table.sortable thead tr:last-child th').forEach(function (th) {
    th.tabIndex = 0;
    th.addEventListener('click', function () { sortBy(th); });
    th.addEventListener('keydown', function (e) { if (e.key === 'Enter') sortBy(th); });
  });
  window.addEventListener('beforeprint', function () {
    document.querySelectorAll('details').forEach(function (d) { d.open = true; });
  });
})();
"""


def _page(title: str, lede: str, toc, body: str) -> str:
    from optimiser import __version__
    from optimiser.formats.writing import CAUTION

    toc_html = ('<nav class="toc" aria-label="contents"><strong>Contents</strong><ul>'
                + "".join(f'<li><a href="#{_e(a)}">{_e(t)}</a></li>' for a, t in toc)
                + "</ul></nav>")
    return ("<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n"
            '<meta name="viewport" content="width=device-width, initial-scale=1">\n'
            f"<title>{_e(title)}</title>\n<style>{_CSS}</style>\n</head>\n<body>\n"
            f'<header id="top"><h1>{_e(title)}</h1><p class="lede">{lede}</p>'
            f'<p class="banner" role="note">{_e(CAUTION)}</p></header>\n{toc_html}\n{body}\n'
            f"<footer>Written by Railwright {_e(__version__)}. Every figure is a simulation "
            "estimate from the design and the parts data (whose provenance the check table "
            "names); costs are in cost units, not quotations.</footer>\n"
            f"<script>{_JS}</script>\n</body>\n</html>\n")


def design_report(design, *, title=None, builds=None) -> str:
    """One self-contained HTML page for one design.

    Parameters
    ----------
    design : path, dict or Design
        A design file (YAML), a dict of the same shape, or a loaded :class:`Design`.
    title : str, optional
        The page title; the file name when not given.
    builds : YieldResult, optional
        Sampled builds of the design (``--yield N``): their yield part is added.

    Returns
    -------
    str
        The whole page.
    """
    from optimiser.assessment.full import assess
    from optimiser.inputs.design import load_design

    path = Path(design) if isinstance(design, (str, Path)) else None
    d = load_design(design)
    name = path.stem if path is not None else "design"
    anchor = f"design-{_slug(name)}"
    a = assess(d, detail=True)
    title = title or f"Railwright report: {name}"
    section = _design_section(d, a, anchor, f"Design {name}", design_file=path,
                              subtitle=_e(str(path)) if path is not None else "")
    if builds is not None:
        from optimiser.outputs.yield_figures import design_yield_html

        section += design_yield_html(builds, anchor, _figure, _svg, _figure_html)
    toc = [(anchor, f"Design {name}")] + [(f"{anchor}-{k}", t) for k, t in _SUBSECTIONS]
    lede = ("One HV supply: its waveforms, sag, switch-on, checks, transformer, parts and "
            "cautions.")
    return _page(title, lede, toc, section)


_SUBSECTIONS = (("waveforms", "waveforms"), ("sag", "sag"), ("switch-on", "switch-on"),
                ("nodes", "B+ nodes"), ("checks", "checks"), ("figures", "rectifier and power"),
                ("life", "life"), ("transformer", "transformer"), ("parts", "parts list"),
                ("cautions", "cautions"))


# ============================================================================================
# A search run

@dataclass(frozen=True)
class Front:
    """The Pareto designs of a search run, as read from its results folder.

    Attributes
    ----------
    frame : pandas.DataFrame
        ``pareto.csv`` as written by the search.
    ids : list of str
        Each row's design id (the stem of its design file).
    design_files : list of Path or None
        Each row's design file, None where it is missing.
    recommended : int or None
        Row of the recommended design.
    reason : str or None
        Why it is recommended, in the run's own words where it gives them.
    """

    frame: object
    ids: list
    design_files: list
    recommended: int | None
    reason: str | None

    def objective(self, name) -> np.ndarray:
        """One objective per row: cost [cost units], regulation [-], rectifier_stress [-]."""
        return self.frame[name].to_numpy(dtype=float)


_ID_COLUMNS = ("id", "design_id", "design", "name", "design_file", "file", "label")
_FLAG_COLUMNS = ("recommended", "is_recommended", "recommend", "knee", "is_knee")
_TRUE = {"true", "1", "yes", "y", "x", "*", "recommended", "knee"}


def read_front(result_dir) -> Front:
    """Read a search run's front tolerantly: ``pareto.csv``, ``designs/``, ``summary.md``.

    The id column is the first of ``id, design_id, design, name, design_file, file, label``
    whose values name files in ``designs/`` (as ``<id>``, ``<id>.yaml`` or a path), else any
    column that does. The recommended design is a true value in a ``recommended``/``knee``
    column, else the design ``summary.md`` names on a line with "recommend", else the knee
    (``optimiser.codesign.nsga.knee``) where that function exists.

    Raises
    ------
    ResultsError
        No ``pareto.csv``, an objective column missing, or no column naming the design files.
    """
    import pandas as pd

    root = Path(result_dir)
    csv = root / "pareto.csv"
    if not csv.is_file():
        raise ResultsError(f"{root}: no pareto.csv (is this a folder written by "
                           "railwright optimise?)")
    frame = pd.read_csv(csv)
    missing = [c for c in OBJECTIVES if c not in frame.columns]
    if missing:
        raise ResultsError(f"{csv}: missing column(s) {', '.join(missing)}; the front needs "
                           f"{', '.join(OBJECTIVES)}")
    designs = root / "designs"
    stems = {p.stem: p for p in sorted(designs.glob("*.yaml"))} if designs.is_dir() else {}

    def stem(value):
        return Path(str(value)).stem if str(value).endswith((".yaml", ".yml")) else str(value)

    columns = [c for c in _ID_COLUMNS if c in frame.columns]
    columns += [c for c in frame.columns if c not in columns]
    id_column, best = None, 0
    for c in columns:
        hits = sum(stem(v) in stems for v in frame[c])
        if hits > best and hits >= max(1, len(frame) // 2):
            id_column, best = c, hits
            if c in _ID_COLUMNS:
                break
    if id_column is None:
        named = [c for c in _ID_COLUMNS if c in frame.columns]
        if not named or stems:
            raise ResultsError(f"{csv}: no column names the design files in {designs} "
                               f"(looked for {', '.join(_ID_COLUMNS)})")
        id_column = named[0]
    ids = [stem(v) for v in frame[id_column]]
    files = [stems.get(i) for i in ids]
    recommended, reason = _recommended(frame, ids, root)
    return Front(frame=frame, ids=ids, design_files=files, recommended=recommended,
                 reason=reason)


def _recommended(frame, ids, root):
    """(row, reason): the flagged row, else the one summary.md recommends, else the knee."""
    said = _summary_recommendation(root, ids)
    for c in _FLAG_COLUMNS:
        if c not in frame.columns:
            continue
        flags = [str(v).strip().lower() in _TRUE for v in frame[c]]
        if any(flags):
            row = flags.index(True)
            for w in ("why", "reason", "recommended_why", "recommendation"):
                if w in frame.columns and isinstance(frame[w].iloc[row], str):
                    return row, frame[w].iloc[row]
            return row, said[1] if said and said[0] == row else None
    if said:
        return said
    try:
        from optimiser.codesign.nsga import knee
    except ImportError:
        return None, None
    F = frame[list(OBJECTIVES)].to_numpy(dtype=float)
    if len(F) == 0 or not np.all(np.isfinite(F)):
        return None, None
    return int(knee(F)), ("the knee of the front, computed by the report (the run records no "
                          "recommendation)")


def _summary_recommendation(root, ids):
    """(row, why) of the design summary.md recommends: a heading with "recommend" and the
    paragraph under it, else a plain paragraph with "recommend" that names a design."""
    summary = root / "summary.md"
    if not summary.is_file():
        return None
    paragraphs = [p.strip() for p in re.split(r"\n\s*\n", summary.read_text(encoding="utf-8"))]

    def named(text):
        return [i for i, d in enumerate(ids)
                if re.search(rf"(?<![\w-]){re.escape(d)}(?![\w-])", text)]

    def plain(text):
        return re.sub(r"\s+", " ", re.sub(r"[#*_`>]", "", text)).strip()

    def is_prose(text):
        return bool(text) and not text.startswith(("#", "|", "```", "-", "*"))

    for k, para in enumerate(paragraphs):
        if para.startswith("#") and "recommend" in para.lower():
            below = paragraphs[k + 1] if k + 1 < len(paragraphs) else ""
            rows = named(para) or named(below)
            if rows:
                return rows[0], plain(below) if is_prose(below) else None
    for para in paragraphs:
        if is_prose(para) and "recommend" in para.lower() and named(para):
            return named(para)[0], plain(para)
    return None


def _section_rows(front: Front) -> list:
    """Rows that get a full section: all of a small front, else the recommended design and
    the extremes of each objective."""
    n = len(front.ids)
    if n <= FULL_SECTIONS:
        chosen = list(range(n))
    else:
        chosen = [] if front.recommended is None else [front.recommended]
        for name in OBJECTIVES:
            values = front.objective(name)
            if np.any(np.isfinite(values)):
                row = int(np.nanargmin(values))
                if row not in chosen:
                    chosen.append(row)
    return [r for r in chosen if front.design_files[r] is not None]


def _extremes(front: Front) -> dict:
    out = {}
    for name in OBJECTIVES:
        values = front.objective(name)
        if np.any(np.isfinite(values)):
            out.setdefault(int(np.nanargmin(values)), []).append(_EXTREME_LABEL[name])
    return out


@_styled
def _front_plot(front: Front, anchors, key) -> str:
    values = {name: front.objective(name) for name in OBJECTIVES}
    values["regulation"] = 100 * values["regulation"]
    pairs = (("cost", "regulation"), ("cost", "rectifier_stress"),
             ("regulation", "rectifier_stress"))
    fig, ax = _figure(WIDE * 1.1, 3.6, 1, 3, bottom=0.95, top=0.15)
    urls = [f"#{a}" for a in anchors]
    extremes = _extremes(front)
    markers = {"cheapest": "s", "best regulation": "D", "least rectifier stress": "^"}
    for axk, (x, y) in zip(ax[0], pairs):
        pts = axk.scatter(values[x], values[y], s=22, color=BLUE, alpha=0.75,
                          edgecolor="white", linewidth=0.5, zorder=3, label="Pareto design")
        pts.set_urls(urls)
        for row, labels in extremes.items():
            for label in labels:
                m = axk.scatter([values[x][row]], [values[y][row]], s=46, marker=markers[label],
                                facecolor="none", edgecolor=INK, linewidth=1.1, zorder=4,
                                label=label)
                m.set_urls([urls[row]])
        r = front.recommended
        if r is not None:
            star = axk.scatter([values[x][r]], [values[y][r]], s=170, marker="*", color=OCHRE,
                               edgecolor=INK, linewidth=0.8, zorder=5, label="recommended")
            star.set_urls([urls[r]])
            axk.annotate(front.ids[r], (values[x][r], values[y][r]), xytext=(7, 5),
                         textcoords="offset points", fontsize=8, color=INK)
        axk.set_xlabel(_OBJECTIVE_LABEL[x])
        axk.set_ylabel(_OBJECTIVE_LABEL[y])
        axk.margins(0.12)
    handles, labels = ax[0, 0].get_legend_handles_labels()
    unique = dict(zip(labels, handles))
    fig.legend(unique.values(), unique.keys(), loc="lower center", ncol=len(unique))
    tips = {}
    for i, a in enumerate(anchors):
        tips[a] = (f"{front.ids[i]}: cost {values['cost'][i]:.1f}, regulation "
                   f"{values['regulation'][i]:.2f} %, stress {values['rectifier_stress'][i]:.2f}")
    return _svg(fig, key, "the Pareto front in pairwise projections", tooltips=tips)


def _why(front: Front) -> str:
    r = front.recommended
    if r is None:
        return ("<p>The run records no recommended design. Every point links to its design; "
                "compare them in the table below.</p>")
    cost, reg, stress = (front.objective(n) for n in OBJECTIVES)
    facts = (f"It costs {cost[r]:.1f} cost units (cheapest on the front {np.nanmin(cost):.1f}), "
             f"regulates to {100 * reg[r]:.2f} % (best {100 * np.nanmin(reg):.2f} %) and loads "
             f"its rectifier to a stress of {stress[r]:.2f} (least {np.nanmin(stress):.2f}).")
    if front.reason:
        why = f" Why, in the run's words: \u201c{_e(front.reason)}\u201d"
    else:
        why = (" The search recommends a knee of the front: the design where giving up more "
               "of one objective buys little in the others.")
    return (f"<p><strong>Recommended: <a href=\"#{_e(_anchor(front.ids[r]))}\">"
            f"{_e(front.ids[r])}</a>.</strong> {_e(facts)}{why}</p>")


def _anchor(design_id) -> str:
    return f"design-{_slug(design_id)}"


def _front_table(front: Front, sections, link_base: Path) -> str:
    import os

    frame = front.frame
    extremes = _extremes(front)
    extra = [(c, "[V]") for c in ("secondary_voltage",) if c in frame.columns]
    text_extra = [c for c in ("rectifier",) if c in frame.columns]
    heads = ["design", "role", "cost [cost units]", "regulation [%]", "rectifier stress [-]"]
    heads += [f"{c.replace('_', ' ')} {u}" for c, u in extra] + text_extra + ["design file"]
    rows, ids = [], []
    for i, design_id in enumerate(front.ids):
        role = (["recommended"] if i == front.recommended else []) + extremes.get(i, [])
        anchor = _anchor(design_id)
        link = f'<a href="#{_e(anchor)}">{_e(design_id)}</a>' if i in sections else _e(design_id)
        f = front.design_files[i]
        file_link = (f'<a href="{_e(Path(os.path.relpath(f, link_base)).as_posix())}">'
                     f"{_e(f.name)}</a>" if f is not None else "missing")
        row = [_Cell(link, design_id), ", ".join(role) or "\u2013",
               _Cell(_num(front.objective("cost")[i], 2), front.objective("cost")[i]),
               _Cell(_num(100 * front.objective("regulation")[i], 2),
                     front.objective("regulation")[i]),
               _Cell(_num(front.objective("rectifier_stress")[i], 2),
                     front.objective("rectifier_stress")[i])]
        row += [_Cell(_num(float(frame[c].iloc[i]), 1), float(frame[c].iloc[i])) for c, _ in extra]
        row += [str(frame[c].iloc[i]) for c in text_extra]
        row.append(_Cell(file_link, f.name if f is not None else ""))
        rows.append(row)
        # rows without a section of their own are the link target of their point
        ids.append(None if i in sections else anchor)
    return _table(heads, rows, cls="data front-table", row_ids=ids)


def results_report(result_dir, *, link_base=None) -> str:
    """One self-contained HTML page for a whole search run.

    Parameters
    ----------
    result_dir : path
        A folder written by ``railwright optimise``: ``pareto.csv``, ``designs/<id>.yaml`` and
        optionally ``summary.md``.
    link_base : path, optional
        The folder the page will be written to, for the relative links to the design files;
        ``result_dir`` when not given.

    Returns
    -------
    str
        The whole page: the front, then a section per Pareto design (or per the recommended
        design and the extremes of each objective when there are more than
        :data:`FULL_SECTIONS`).
    """
    from optimiser.assessment.full import assess
    from optimiser.inputs.design import DesignError, load_design

    root = Path(result_dir)
    front = read_front(root)
    link_base = Path(link_base) if link_base is not None else root
    chosen = _section_rows(front)
    order = sorted(chosen, key=lambda r: (r != front.recommended, r))
    anchors = [_anchor(i) for i in front.ids]
    extremes = _extremes(front)

    body = ['<section class="front" id="front"><h2>The Pareto front</h2>',
            "<p>Every design on the front, in the three pairwise projections of its objectives: "
            "cost (transformer, rectifier, capacitors, chokes and resistors, in cost units), "
            "regulation (the idle-to-full-power drop of the sag node, or its distance from "
            "the spec's sag target, in % of idle B+) and rectifier stress (the worst ratio of "
            "a rectifier figure to its rating). Lower is better on every axis. Each point links "
            "to its design.</p>",
            _figure_html(_front_plot(front, anchors, "front"), "The front in pairwise "
                         "projections. Star: the recommended design; open square, diamond and "
                         "triangle: the cheapest, best-regulated and least-stressed designs.",
                         "front-plot"),
            _why(front)]
    if len(chosen) < len(front.ids):
        body.append(f"<p>The front holds {len(front.ids)} designs; the sections below cover "
                    "the recommended design and the extremes of each objective. Every design "
                    "file is linked in the table.</p>")
    body.append('<h3 id="front-table">Every Pareto design</h3>')
    body.append(_front_table(front, set(chosen), link_base))
    summary = root / "summary.md"
    if summary.is_file():
        body.append("<details><summary>The run's summary (summary.md)</summary>"
                    f"{_markdown_html(summary.read_text(encoding='utf-8'), top=4)}</details>")
    body.append("</section>")

    toc = [("front", "The Pareto front")]
    from optimiser.outputs.yield_figures import yield_html

    for r in order:
        path = front.design_files[r]
        roles = (["recommended"] if r == front.recommended else []) + extremes.get(r, [])
        badge = "".join(f'<span class="badge">{_e(x)}</span>' for x in roles)
        try:
            design = load_design(path)
        except DesignError as exc:
            # one unreadable design file does not cost the builder the rest of the run
            body.append(f'<section class="design" id="{_e(anchors[r])}"><h2>Design '
                        f"{_e(front.ids[r])}{badge}</h2><p class=\"banner\">This design file "
                        "could not be read:</p><ul>"
                        + "".join(f"<li>{_e(p)}</li>" for p in exc.problems) + "</ul></section>")
            toc.append((anchors[r], f"Design {front.ids[r]} (unreadable)"))
            continue
        a = assess(design, detail=True)
        extra = [("objectives", f"cost {front.objective('cost')[r]:.2f} cost units, regulation "
                                f"{100 * front.objective('regulation')[r]:.2f} %, rectifier "
                                f"stress {front.objective('rectifier_stress')[r]:.2f}")]
        body.append(_design_section(
            design, a, anchors[r], f"Design {front.ids[r]}", badge=badge, extra=extra,
            design_file=path, subtitle=f'<a href="#front">back to the front</a> \u00b7 '
                                       f"{_e(path.name)}"))
        body.append(yield_html(root, front.ids[r], _figure, _svg, _figure_html))
        toc.append((anchors[r], f"Design {front.ids[r]}" + (f" ({', '.join(roles)})"
                                                           if roles else "")))
    title = f"Railwright run: {root.resolve().name}"
    count = len(front.ids)
    lede = (f"{count} Pareto design{'s' if count != 1 else ''} of cost, regulation and "
            "rectifier stress, and what each looks like on the bench.")
    return _page(title, lede, toc, "\n".join(body))


# ============================================================================================
# Writing

def write_report(html_text: str, path) -> Path:
    """Write a page whole or not at all (a temporary file beside it, then a rename).

    Parameters
    ----------
    html_text : str
    path : path

    Returns
    -------
    Path
        Where it was written.
    """
    from optimiser.formats.writing import write_text_atomic

    target = Path(path)
    write_text_atomic(target, html_text)
    return target


def write_results_report(result_dir, path=None) -> Path:
    """Write the run's page, by default ``report.html`` inside ``result_dir``.

    For ``railwright optimise --report``: call it once the results folder is complete.
    """
    root = Path(result_dir)
    target = Path(path) if path is not None else root / "report.html"
    return write_report(results_report(root, link_base=target.parent), target)
