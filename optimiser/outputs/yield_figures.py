"""Yield over sampled builds as text and figures: the likeliest failures, the histogram of
idle B+ across builds with its target window, and the per-check yield as bars."""

from __future__ import annotations

import numpy as np

__all__ = ["yield_text", "summary_lines", "bplus_histogram", "check_bars", "builds_csv",
           "yield_html", "design_yield_html"]


def _ratio(c) -> str:
    return f"{c['p1']:.2f} / {c['p50']:.2f} / {c['p99']:.2f}"


def yield_text(y, count=3) -> str:
    """Plain text: the yield, its sampling error and the ``count`` likeliest failures."""
    lines = [f"Yield over {y.samples} sampled builds (seed {y.seed}): {100 * y.fraction:.1f} % "
             f"pass every check (sampling error +/- {100 * y.standard_error:.1f} %)", "",
             f"  {'most likely to fail':<40}{'passing':>9}   ratio 1st / 50th / 99th percentile"]
    for c in y.likely_failures(count):
        lines.append(f"  {c['name']:<40}{100 * c['yield']:>8.1f}%   {_ratio(c)}")
    lines += ["", f"  {'node figure':<40}{'mean':>9}{'std':>8}   1st / 50th / 99th percentile"]
    for n in y.nodes():
        lines.append(f"  {n['name']:<40}{n['mean']:>9.1f}{n['std']:>8.2f}   "
                     f"{n['p1']:.1f} / {n['p50']:.1f} / {n['p99']:.1f}")
    return "\n".join(lines)


def summary_lines(opt, row) -> list:
    """Markdown lines on one front design's yield (none when the spec asks no robustness)."""
    robust = getattr(opt, "robust", None)
    y = robust.of(row) if robust is not None else None
    if y is None:
        return []
    verdict = ("meets" if y.fraction >= robust.min_yield else "is BELOW")
    out = [f"- yield: {100 * y.fraction:.1f} % of {y.samples} sampled builds meet every "
           f"constraint (+/- {100 * y.standard_error:.1f} %); it {verdict} the asked minimum "
           f"{100 * robust.min_yield:.1f} %"]
    out += [f"  - likeliest to fail: `{c['name']}` passes in {100 * c['yield']:.1f} % "
            f"(ratio percentiles 1/50/99: {_ratio(c)})" for c in y.likely_failures(3)]
    below = [r for r, res in zip(robust.rows, robust.results) if res.fraction < robust.min_yield]
    if below:
        out.append(f"- {len(below)} of the {len(robust.rows)} front designs are below the "
                   "minimum yield (column `meets_min_yield` in pareto.csv)")
    return out


def builds_csv(y) -> str:
    """Per build: passed, each node figure and each check ratio (a results-folder table)."""
    frame = y.figures.copy()
    frame.insert(0, "passed", y.passed)
    for name in y.ratios.columns:
        frame[f"ratio: {name}"] = y.ratios[name].to_numpy(float)
    return frame.to_csv(index=False)


def bplus_histogram(ax, idle_voltage, low=None, high=None, node="", colour="#1c5d99",
                    band="#f3e7cf"):
    """Histogram of idle B+ across builds on ``ax``, with the target window shaded. [V]"""
    v = np.asarray(idle_voltage, float)
    v = v[np.isfinite(v)]
    if low is not None and high is not None:
        ax.axvspan(low, high, color=band, zorder=0, label="target window")
    ax.hist(v, bins=min(40, max(10, int(np.sqrt(v.size)))), color=colour, zorder=2,
            label=f"{v.size} builds")
    inside = np.mean((v >= low) & (v <= high)) if low is not None and v.size else None
    title = f"idle B+ at {node} across builds"
    if inside is not None:
        title += f": {100 * inside:.1f} % inside the window"
    ax.set_title(title)
    ax.set_xlabel("idle B+ [V]")
    ax.set_ylabel("builds")
    ax.legend(loc="upper right")


def check_bars(ax, y, count=12, colours=("#2f7d4f", "#c77700", "#b3261e")):
    """Horizontal bars of per-check yield on ``ax``: the ``count`` least-passing checks."""
    checks = y.checks()[:count][::-1]
    names = [c["name"] for c in checks]
    values = np.array([100 * c["yield"] for c in checks])
    colour = [colours[0] if v >= 99.95 else colours[1] if v >= 90 else colours[2]
              for v in values]
    ax.barh(np.arange(len(names)), values, color=colour)
    ax.set_yticks(np.arange(len(names)), names)
    ax.set_xlim(0, 100)
    ax.set_xlabel("builds passing [%]")
    ax.set_title(f"per-check yield (overall {100 * y.fraction:.1f} %)")


def _window(spec):
    """(node name, low, high) of the sag node's idle B+ target window. [V]"""
    node = spec.nodes[spec.sag_node]
    return node.name, node.dc_voltage - node.window, node.dc_voltage + node.window


def write_builds(opt, folder, ids) -> None:
    """``builds/<id>.csv`` per front design: each sampled build's figures and check ratios,
    with the sag node's target window (read back by the report's yield figures)."""
    if getattr(opt, "robust", None) is None:
        return
    (folder / "builds").mkdir()
    node, low, high = _window(opt.spec)
    for ident, row in zip(ids, opt.front):
        y = opt.robust.of(int(row))
        if y is None:
            continue
        text = builds_csv(y)
        head, _, rest = text.partition("\n")
        rest = "".join(f"{line},{node},{low!r},{high!r}\n" for line in rest.splitlines())
        (folder / "builds" / f"{ident}.csv").write_text(
            f"{head},window_node,window_low,window_high\n{rest}", encoding="utf-8")


def yield_html(root, ident, figure, svg, figure_html) -> str:
    """The report's yield part of one design from ``builds/<id>.csv`` ('' when there is none);
    the report's own figure helpers are passed in (``figure``, ``svg``, ``figure_html``)."""
    import pandas as pd

    from optimiser.assessment.builds import yield_of

    path = root / "builds" / f"{ident}.csv"
    if not path.is_file():
        return ""
    frame = pd.read_csv(path)
    node = str(frame["window_node"].iloc[0])
    low, high = float(frame["window_low"].iloc[0]), float(frame["window_high"].iloc[0])
    ratio_cols = [c for c in frame.columns if c.startswith("ratio: ")]
    ratios = frame[ratio_cols].rename(columns=lambda c: c[len("ratio: "):])
    y = yield_of(ratios, frame[[c for c in frame.columns if "." in c and c not in ratio_cols]])
    caption = (f"{y.samples} sampled builds of {ident}: {100 * y.fraction:.1f} % meet every "
               f"constraint (sampling error +/- {100 * y.standard_error:.1f} %). Left: idle B+ at "
               f"{node} with its target window shaded; right: the least-passing constraints.")
    return _part(y, frame[f"{node}.idle_voltage"], node, low, high, ident, caption, figure, svg,
                 figure_html)


def design_yield_html(y, ident, figure, svg, figure_html) -> str:
    """The yield part of a single-design report from a :class:`YieldResult` (``--yield N``):
    idle B+ at the first node across the builds, and the per-check yield."""
    node = y.figures.columns[0].rsplit(".", 1)[0]
    caption = (f"{y.samples} sampled builds (seed {y.seed}) from the design's tolerances: "
               f"{100 * y.fraction:.1f} % pass every check (sampling error +/- "
               f"{100 * y.standard_error:.1f} %). Left: idle B+ at {node}; right: the "
               "least-passing checks.")
    return _part(y, y.figures[f"{node}.idle_voltage"], node, None, None, ident, caption, figure,
                 svg, figure_html)


def _part(y, idle, node, low, high, ident, caption, figure, svg, figure_html) -> str:
    import matplotlib

    with matplotlib.rc_context({"font.size": 8.5}):
        fig, axes = figure(9.0, 3.4, 1, 2, left=0.6, col_gap=2.6)
        bplus_histogram(axes[0, 0], idle, low, high, node)
        check_bars(axes[0, 1], y)
        image = svg(fig, f"yield-{ident}", "idle B+ across sampled builds and per-check yield")
    return (f'<section class="part" id="yield-{ident}"><h3>Yield over sampled builds</h3>'
            f"{figure_html(image, caption, f'yield-figure-{ident}')}</section>")
