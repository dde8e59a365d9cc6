"""The whole report page: a design's page, a search run's page (the front, the table of every
Pareto design, then a section per design), and writing a page whole or not at all.

The page's frame, stylesheet and script are package data beside this module (``page.html``,
``style.css``, ``script.js``), read once and filled in here.
"""

from __future__ import annotations

import functools
import string
from importlib import resources
from pathlib import Path

import numpy as np

from optimiser.codesign.objective_table import OBJECTIVES
from optimiser.outputs.branch_figures import branch_markdown
from optimiser.outputs.report.front import Front, _extremes, _section_rows, read_front
from optimiser.outputs.report.markup import _Cell, _e, _markdown_html, _num, _slug, _table
from optimiser.outputs.report.plots import (_csv_values, _figure, _figure_html, _front_plot,
                                           _sag_life_plot, _svg)
from optimiser.outputs.yield_figures import design_yield_html, yield_html
from optimiser.outputs.report.sections import _design_section


@functools.cache
def _asset(name: str) -> str:
    """One of the page's package data files, as text."""
    return resources.files(__package__).joinpath(name).read_text(encoding="utf-8")


def _page(title: str, lede: str, toc, body: str) -> str:
    """The page frame (``page.html``) filled in: title, lede, caution, contents, body, the
    inline stylesheet (``style.css``) and script (``script.js``)."""
    from optimiser import __version__
    from optimiser.formats.writing import CAUTION

    toc_html = ('<nav class="toc" aria-label="contents"><strong>Contents</strong><ul>'
                + "".join(f'<li><a href="#{_e(a)}">{_e(t)}</a></li>' for a, t in toc)
                + "</ul></nav>")
    return string.Template(_asset("page.html")).substitute(
        title=_e(title), lede=lede, caution=_e(CAUTION), toc=toc_html, body=body,
        version=_e(__version__), style=_asset("style.css"), script=_asset("script.js"))


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
        section += design_yield_html(builds, anchor, _figure, _svg, _figure_html)
    toc = [(anchor, f"Design {name}")] + [(f"{anchor}-{k}", t) for k, t in _SUBSECTIONS]
    lede = ("One HV supply: its waveforms, sag, switch-on, checks, transformer, parts and "
            "cautions.")
    return _page(title, lede, toc, section)


_SUBSECTIONS = (("waveforms", "waveforms"), ("sag", "sag"), ("switch-on", "switch-on"),
                ("nodes", "B+ nodes"), ("checks", "checks"), ("figures", "rectifier and power"),
                ("life", "life"), ("transformer", "transformer"), ("parts", "parts list"),
                ("cautions", "cautions"))


def _why(front: Front) -> str:
    r = front.recommended
    if r is None:
        return ("<p>The run records no recommended design. Every point links to its design; "
                "compare them in the table below.</p>")
    facts = "It has " + ", ".join(_objective_fact(front, n, r) for n in front.searched) + "."
    if front.reason:
        why = f" Why, in the run's words: \u201c{_e(front.reason)}\u201d"
    else:
        why = (" The search recommends a knee of the front: the design where giving up more "
               "of one objective buys little in the others.")
    return (f"<p><strong>Recommended: <a href=\"#{_e(_anchor(front.ids[r]))}\">"
            f"{_e(front.ids[r])}</a>.</strong> {_e(facts)}{why}</p>")


def _objective_fact(front: Front, name, r) -> str:
    """One objective of row r beside the front's best, in pareto.csv's units."""
    o = OBJECTIVES[name]
    values = _csv_values(front, name)
    best = values[int(np.argmin(front.search_value(name)))]
    return f"{o.label} {values[r]:.4g} (front's {o.best}: {best:.4g})"


def _objectives_text(front: Front, r) -> str:
    return ", ".join(f"{OBJECTIVES[n].label} {_csv_values(front, n)[r]:.4g}"
                     for n in OBJECTIVES if n in front.frame.columns
                     and np.isfinite(front.objective(n)[r]))


def _anchor(design_id) -> str:
    return f"design-{_slug(design_id)}"


def _front_table(front: Front, sections, link_base: Path) -> str:
    import os

    frame = front.frame
    extremes = _extremes(front)
    extra = [(c, "[V]") for c in ("secondary_voltage",) if c in frame.columns]
    text_extra = [c for c in ("rectifier",) if c in frame.columns]
    shown = [n for n in OBJECTIVES if n in frame.columns and np.isfinite(front.objective(n)).any()]
    heads = ["design", "role"] + [OBJECTIVES[n].header + (" (searched)" if n in
                                                                    front.searched else "")
                                            for n in shown] + ["branch"]
    heads += [f"{c.replace('_', ' ')} {u}" for c, u in extra] + text_extra + ["design file"]
    rows, ids = [], []
    values = {n: _csv_values(front, n) for n in shown}
    for i, design_id in enumerate(front.ids):
        role = (["recommended"] if i == front.recommended else []) + extremes.get(i, [])
        role += [] if front.on_front[i] else ["its branch's front only"]
        anchor = _anchor(design_id)
        link = f'<a href="#{_e(anchor)}">{_e(design_id)}</a>' if i in sections else _e(design_id)
        f = front.design_files[i]
        file_link = (f'<a href="{_e(Path(os.path.relpath(f, link_base)).as_posix())}">'
                     f"{_e(f.name)}</a>" if f is not None else "missing")
        row = [_Cell(link, design_id), ", ".join(role) or "\u2013"]
        row += [_Cell(_num(values[n][i], 4 if n == "life" else 2), values[n][i]) for n in shown]
        row.append(str(front.branch[i]))
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

    body = []
    if front.branches:
        body += ['<section class="branches" id="branches"><h2>Silicon or valve?</h2>',
                 "<p>One row per rectifier option the spec allows (<code>branches.csv</code>), "
                 "each with its own front found by the search: figures of each branch's "
                 "cheapest design; the premium is its cost over the cheapest branch's cheapest. "
                 "A branch that cannot meet the spec says what binds it.</p>",
                 _markdown_html("\n".join(branch_markdown(front.branches)), top=3)]
        if "life" in front.frame.columns and np.isfinite(front.objective("life")).any():
            body.append(_figure_html(_sag_life_plot(front, anchors, "sag-life", _target(root)),
                                     "Sag depth against the shortest part life (the first "
                                     "part to wear out: an electrolytic or the rectifier "
                                     "valve) over every listed design; marker shape by kind "
                                     "of rectifier, colour by branch, hollow where a design is "
                                     "on its branch's front only.", "sag-life-plot"))
        body.append("</section>")
    body += ['<section class="front" id="front"><h2>The Pareto front</h2>',
             "<p>Every listed design (the union of the rectifier branches' fronts) in the "
             "pairwise projections of the searched objectives: "
             + "; ".join(f"{n} ({OBJECTIVES[n].meaning})" for n in front.searched)
             + ". Lower is better on every axis but life. Each point links to its design.</p>",
             _figure_html(_front_plot(front, anchors, "front"), "The front in pairwise "
                          "projections. Marker shape: kind of rectifier; colour: branch; "
                          "hollow: on its branch's front only. Star: the recommended design; "
                          "ringed: the best design in one objective.", "front-plot"),
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

    toc = ([("branches", "Silicon or valve?")] if front.branches else []) + [
        ("front", "The Pareto front")]
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
        extra = [("objectives", _objectives_text(front, r))]
        body.append(_design_section(
            design, a, anchors[r], f"Design {front.ids[r]}", badge=badge, extra=extra,
            design_file=path, subtitle=f'<a href="#front">back to the front</a> \u00b7 '
                                       f"{_e(path.name)}"))
        body.append(yield_html(root, front.ids[r], _figure, _svg, _figure_html))
        toc.append((anchors[r], f"Design {front.ids[r]}" + (f" ({', '.join(roles)})"
                                                           if roles else "")))
    title = f"Railwright run: {root.resolve().name}"
    count = len(front.ids)
    lede = (f"{count} listed design{'s' if count != 1 else ''} (the rectifier branches' fronts) "
            f"of {', '.join(front.searched)}, and what each looks like on the bench.")
    return _page(title, lede, toc, "\n".join(body))


def _target(root):
    """The run's sag target (a fraction), from its spec.yaml; None without one."""
    from optimiser.formats.yamlfile import DesignError
    from optimiser.inputs.spec import load_spec

    try:
        sag = load_spec(Path(root) / "spec.yaml").sag
    except (DesignError, OSError):
        return None
    return None if sag is None else sag.target


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
