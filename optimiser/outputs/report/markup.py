"""HTML pieces of the report page with no physics and no plots: how numbers and units are
shown, escaping, sortable tables, and the small Markdown subset the project writes (the order
sheet, a run's summary) turned into HTML."""

from __future__ import annotations

import html
import math
import re
from dataclasses import dataclass

import numpy as np

from optimiser.formats.units import format_quantity

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
