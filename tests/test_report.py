"""The HTML report: self-contained, every section and plot present, units on tables, and a real
browser renders it without errors. The results folder here is the test's own: variants of the
invented demo design, assessed, written as a small front (not a search result)."""

import html
import json
import os
import re
import shutil
import subprocess
from html.parser import HTMLParser
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
import yaml

from optimiser.outputs import report
from optimiser.assessment.full import assess_many
from optimiser.assessment.bill import cost_breakdown
from optimiser.cli import main
from optimiser.inputs.design import load_design

SPECS = Path(__file__).parents[1] / "specs"
SUBSECTIONS = ("waveforms", "sag", "switch-on", "nodes", "checks", "figures", "life",
               "transformer", "parts", "cautions")
#: reservoir capacitances of the invented variants of the demo build design (d000-d002); the
#: invented switchable demo design is the last member of the front (d003)
VARIANTS = ("16 uF", "22 uF", "40 uF")
IDS = [f"d{i:03d}" for i in range(len(VARIANTS) + 1)]
PAIR = "design-d003"
#: plots: the front, three per fixed design, three per position of the pair
PLOTS = 1 + 3 * len(VARIANTS) + 6


# --------------------------------------------------------------------------------------------
# a tiny HTML reader

class _Page(HTMLParser):
    """Ids, tags, plots inside figures, and tables (headers and body cells) of a page."""

    def __init__(self, text):
        super().__init__(convert_charrefs=True)
        self.ids, self.tags, self.attrs = set(), [], []
        self.figures, self.tables = [], []
        self._figure = None
        self._table = None
        self._cell = None
        self._in_head = self._in_body = False
        self.feed(text)

    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        self.tags.append(tag)
        self.attrs.append((tag, a))
        if "id" in a:
            self.ids.add(a["id"])
        if tag == "figure":
            self._figure = {"id": a.get("id"), "svg": 0}
        if tag == "svg" and self._figure is not None:
            self._figure["svg"] += 1
        if tag == "table":
            self._table = {"cls": a.get("class", ""), "head": [], "body": []}
        if self._table is not None:
            if tag == "thead":
                self._in_head = True
            elif tag == "tbody":
                self._in_body = True
            elif tag == "tr":
                if self._in_head:
                    self._table["head"] = []
                elif self._in_body:
                    self._table["body"].append([])
            elif tag in ("th", "td"):
                self._cell = []

    def handle_endtag(self, tag):
        if tag == "figure" and self._figure is not None:
            self.figures.append(self._figure)
            self._figure = None
        if self._table is not None:
            if tag in ("th", "td") and self._cell is not None:
                text = " ".join("".join(self._cell).split())
                if self._in_head and tag == "th":
                    self._table["head"].append(text)
                elif self._in_body:
                    self._table["body"][-1].append(text)
                self._cell = None
            elif tag == "thead":
                self._in_head = False
            elif tag == "tbody":
                self._in_body = False
            elif tag == "table":
                self.tables.append(self._table)
                self._table = None

    def handle_data(self, data):
        if self._cell is not None:
            self._cell.append(data)


BARE_NUMBER = re.compile(r"^[-+]?\d[\d,]*(\.\d+)?$")


def assert_self_contained(text):
    """Nothing in the page is fetched: no network URL, no external file, no stylesheet link."""
    for bad in ("http://", "https://", "@import", "<link", "<img", "<iframe", "<object",
                "<embed", "//fonts."):
        assert bad not in text, f"page contains {bad!r}"
    assert not re.search(r"\ssrc\s*=", text), "page loads a file through src="
    for m in re.finditer(r"url\(\s*['\"]?([^)'\"]*)", text):
        assert m.group(1).startswith(("#", "data:")), f"url({m.group(1)}) fetches a file"


def assert_units_on_tables(page):
    """Every bare number in a data table has its unit in its column header or its row label."""
    unit = re.compile(r"\[[^\]]+\]")
    checked = 0
    for table in page.tables:
        if "data" not in table["cls"].split():
            continue
        for row in table["body"]:
            for col, cell in enumerate(row):
                if col and BARE_NUMBER.match(cell):
                    checked += 1
                    header = table["head"][col] if col < len(table["head"]) else ""
                    assert unit.search(header) or unit.search(row[0]), \
                        f"{cell} in column '{header}', row '{row[0]}' of {table['cls']}: no unit"
    assert checked > 0


def assert_design_sections(page, anchor, plots=3):
    assert anchor in page.ids
    for sub in SUBSECTIONS:
        assert f"{anchor}-{sub}" in page.ids, f"missing section {anchor}-{sub}"
    mine = [f for f in page.figures if f["id"] and f["id"].startswith(anchor + "-")]
    assert len(mine) == plots
    assert all(f["svg"] == 1 for f in mine)


# --------------------------------------------------------------------------------------------
# fixtures

@pytest.fixture(scope="module")
def results_dir(tmp_path_factory):
    """A small front of our own: the demo build design with three reservoir capacitors and the
    switchable demo design, each assessed; the second is flagged as recommended."""
    root = tmp_path_factory.mktemp("results") / "demo-run"
    (root / "designs").mkdir(parents=True)
    base = yaml.safe_load((SPECS / "demo-design-build.yaml").read_text(encoding="utf-8"))
    files = []
    for i, c in enumerate(VARIANTS):
        d = json.loads(json.dumps(base))
        d["nodes"][0]["capacitance"] = c
        path = root / "designs" / f"{IDS[i]}.yaml"
        path.write_text(yaml.safe_dump(d, sort_keys=False), encoding="utf-8")
        files.append(path)
    files.append(root / "designs" / f"{IDS[-1]}.yaml")
    shutil.copy(SPECS / "demo-design-switchable.yaml", files[-1])
    table = assess_many(files, detail=False)
    rows = []
    for i, (path, a) in enumerate(zip(files, table.assessments)):
        one = a.positions["silicon"] if hasattr(a, "positions") else a
        plates = one.nodes[0]
        # the pair has no transformer price: its known parts stand in for the search's cost
        lines = cost_breakdown(load_design(path))
        cost = sum(v for k, v in lines.items() if k != "total" and np.isfinite(v))
        rows.append({"id": path.stem, "cost": cost,
                     "regulation": plates["static_drop"] / plates["idle_voltage"],
                     "rectifier_stress": a.rectifier_stress, "rectifier": "invented",
                     "recommended": i == 1})
    pd.DataFrame(rows).to_csv(root / "pareto.csv", index=False)
    (root / "summary.md").write_text("# Run summary\n\n## Recommended design\n\nd001: the knee "
                                     "of the front.\n\n| a | b |\n|---|---|\n| 1 | 2 |\n",
                                     encoding="utf-8")
    return root


@pytest.fixture(scope="module")
def results_html(results_dir):
    # through the command line, which writes report.html inside the results folder
    assert main(["report", str(results_dir)]) == 0
    return (results_dir / "report.html").read_text(encoding="utf-8")


# --------------------------------------------------------------------------------------------
# without a browser

def test_results_page_is_self_contained_with_every_section(results_dir, results_html):
    assert_self_contained(results_html)
    page = _Page(results_html)
    for anchor in ("front", "front-plot", "front-table", "top"):
        assert anchor in page.ids
    for design_id in IDS[:-1]:
        assert_design_sections(page, f"design-{design_id}")
    assert_design_sections(page, PAIR, plots=6)
    # every plot is an inline SVG
    assert len(page.figures) == PLOTS
    assert results_html.count("<svg") == len(page.figures)
    assert_units_on_tables(page)
    # the summary's table is rendered, but it is not a data table and fetches nothing
    assert "Run summary" in results_html


def test_every_front_point_links_to_its_design(results_html):
    front_svg = results_html[results_html.index('id="front-plot"'):]
    front_svg = front_svg[:front_svg.index("</svg>")]
    page = _Page(results_html)
    for design_id in IDS:
        anchor = f"design-{design_id}"
        # three projections, each point a link, with its figures as a tooltip
        assert front_svg.count(f'xlink:href="#{anchor}"') >= 3
        assert anchor in page.ids
    assert "<title>d001: cost" in front_svg


def test_recommended_design_is_marked_and_explained(results_html):
    assert "Recommended: " in results_html and 'href="#design-d001"' in results_html
    # why, in the run's own words (from summary.md)
    assert "\u201cd001: the knee of the front.\u201d" in results_html
    section = results_html[results_html.index('id="design-d001"'):]
    assert section[:600].count('class="badge">recommended<') == 1
    # the extremes are named in the table of every design
    assert "cheapest" in results_html and "least rectifier stress" in results_html
    # recommended first among the design sections
    assert results_html.index('id="design-d001"') < results_html.index('id="design-d000"')


def test_read_front_is_tolerant(results_dir, tmp_path):
    # the ids as file names in a 'design' column, no flag: the summary names the design
    other = tmp_path / "run"
    shutil.copytree(results_dir, other)
    frame = pd.read_csv(other / "pareto.csv").drop(columns=["recommended"])
    frame = frame.rename(columns={"id": "design"})
    frame["design"] = [f"designs/{d}.yaml" for d in frame["design"]]
    frame.to_csv(other / "pareto.csv", index=True)  # and an unnamed index column
    front = report.read_front(other)
    assert front.ids == IDS
    assert front.recommended == 1 and "knee" in front.reason
    assert all(f is not None and f.is_file() for f in front.design_files)


def test_read_front_errors_name_what_is_missing(results_dir, tmp_path):
    with pytest.raises(report.ResultsError, match="no pareto.csv"):
        report.read_front(tmp_path)
    bad = tmp_path / "bad"
    shutil.copytree(results_dir, bad)
    pd.read_csv(bad / "pareto.csv").drop(columns=["regulation"]).to_csv(bad / "pareto.csv")
    with pytest.raises(report.ResultsError, match="regulation"):
        report.read_front(bad)


def test_an_unreadable_design_file_is_reported_not_fatal(results_dir, tmp_path):
    broken = tmp_path / "run"
    shutil.copytree(results_dir, broken)
    for path in (broken / "designs").glob("*.yaml"):
        path.write_text("mains: {voltage: 230 V}\n", encoding="utf-8")
    page = report.results_report(broken)
    assert page.count("could not be read") == len(IDS)
    assert "front-plot" in _Page(page).ids


def test_a_large_front_gets_sections_for_the_recommended_and_the_extremes(results_dir,
                                                                          monkeypatch):
    # the limit is read where the sections are chosen
    monkeypatch.setattr(report.front, "FULL_SECTIONS", 1)
    front = report.read_front(results_dir)
    rows = report._section_rows(front)
    costs, stress = front.objective("cost"), front.objective("rectifier_stress")
    expected = {1, int(np.argmin(costs)), int(np.argmin(front.objective("regulation"))),
                int(np.argmin(stress))}
    assert rows[0] == 1 and set(rows) == expected
    # a design without a section is still a link target: its row in the table
    table = report._front_table(front, {1}, results_dir)
    assert 'id="design-d001"' not in table
    for design_id in IDS[:1] + IDS[2:]:
        assert f'id="design-{design_id}"' in table


def test_switchable_pair_shows_both_positions(results_html):
    page = _Page(results_html)
    section = results_html[results_html.index(f'id="{PAIR}"'):]
    for position in ("silicon", "valve"):
        for kind in ("waveforms", "sag", "switch-on"):
            assert f"{PAIR}-{kind}-{position}" in page.ids
        assert f"position '{position}'" in html.unescape(section)
    assert 'class="side-by-side"' in section
    # verdicts carry text as well as colour, so they print in black and white
    assert "\u2717 FAIL" in section and "\u2713 pass" in section


def test_cli_report_and_evaluate_report(tmp_path, monkeypatch, capsys):
    monkeypatch.chdir(tmp_path)
    # a design without a physical build: the equivalent source instead of an order sheet
    assert main(["report", str(SPECS / "demo-design-bridge.yaml")]) == 0
    written = tmp_path / "demo-design-bridge.report.html"
    assert str(written) in capsys.readouterr().out
    page = written.read_text(encoding="utf-8")
    assert "equivalent source" in page and "specification for the winder" not in page
    # evaluate --report on a design with a build: the order sheet is in the page
    out = tmp_path / "ev.html"
    assert main(["evaluate", str(SPECS / "demo-design-build.yaml"), "--json", "--report",
                 str(out)]) == 0
    captured = capsys.readouterr()
    assert json.loads(captured.out)["passed"] in (True, False)  # stdout stays one JSON object
    assert str(out) in captured.err
    page = out.read_text(encoding="utf-8")
    assert page.startswith("<!DOCTYPE html>") and "specification for the winder" in page
    assert "Design reference" in page and "valve.peak_plate_current" in page
    assert_self_contained(page)
    assert_units_on_tables(_Page(page))
    # a folder that is not a run
    assert main(["report", str(tmp_path)]) == 2
    assert "no pareto.csv" in capsys.readouterr().err


# --------------------------------------------------------------------------------------------
# in a real browser



# Injected into a copy of the page only: records script errors, console errors, every
# resource the page fetched, the rendered size of each plot, and sorts the front table by cost.
HOOK = """<script>
window.__rw = {errors: []};
window.addEventListener('error', function (e) { __rw.errors.push(String(e.message)); });
(function () { var ce = console.error; console.error = function () {
  __rw.errors.push(Array.prototype.join.call(arguments, ' '));
  ce.apply(console, arguments); }; })();
window.addEventListener('load', function () {
  var b = document.body, sorted = '';
  try {
    var th = document.querySelector('table.front-table thead tr:last-child th:nth-child(3)');
    if (th) { th.click();
      sorted = document.querySelector('table.front-table tbody tr td').textContent.trim(); }
  } catch (e) { __rw.errors.push(String(e)); }
  b.setAttribute('data-test-errors', JSON.stringify(__rw.errors));
  b.setAttribute('data-test-resources', JSON.stringify(
    performance.getEntriesByType('resource').map(function (r) { return r.name; })));
  b.setAttribute('data-test-sorted', sorted);
  b.setAttribute('data-test-plots', JSON.stringify(Array.prototype.map.call(
    document.querySelectorAll('figure.plot svg'), function (s) {
      var r = s.getBoundingClientRect(); return [Math.round(r.width), Math.round(r.height)]; })));
});
</script>"""


def artefact_dir(tmp_path_factory):
    where = os.environ.get("RAILWRIGHT_ARTIFACTS")
    if where:
        path = Path(where)
        path.mkdir(parents=True, exist_ok=True)
        return path
    return tmp_path_factory.mktemp("artefacts")


def render(chromium, html_text, work, screenshot):
    """Open a copy of the page with the hook in headless Chromium: the DOM after load, the
    page's console lines, and a screenshot."""
    page = work / "page.html"
    page.write_text(html_text.replace("<head>", "<head>\n" + HOOK, 1), encoding="utf-8")
    run = subprocess.run(
        [chromium, "--headless", "--no-sandbox", "--disable-gpu", "--disable-quic",
         "--no-first-run", "--disable-background-networking", "--disable-component-update",
         "--disable-sync", f"--user-data-dir={work / 'profile'}", "--enable-logging=stderr",
         "--v=0", "--hide-scrollbars", "--window-size=1280,4000", f"--screenshot={screenshot}",
         "--dump-dom", page.as_uri()],
        capture_output=True, text=True, timeout=120)
    assert run.returncode == 0, run.stderr[-2000:]
    console = [line for line in run.stderr.splitlines() if ":CONSOLE" in line]
    return _Page(run.stdout), run.stdout, console


def body_attr(page, name):
    return next(a for tag, a in page.attrs if tag == "body")[name]


# the shared mechanism of tests/conftest.py: skip without Chromium (before the page is built),
# fail under RAILWRIGHT_REQUIRE_TOOLS=1
@pytest.mark.chromium
def test_results_page_in_a_browser(results_dir, results_html, tmp_path, tmp_path_factory, tool):
    chromium = tool("chromium")
    shot = artefact_dir(tmp_path_factory) / "report-results.png"
    page, dom, console = render(chromium, results_html, tmp_path, shot)
    assert console == [], console
    assert json.loads(body_attr(page, "data-test-errors")) == []
    # nothing fetched: no fonts, scripts, styles or images from anywhere
    assert json.loads(body_attr(page, "data-test-resources")) == []
    for anchor in ("front", "front-plot", "front-table"):
        assert anchor in page.ids
    for design_id in IDS:
        for sub in SUBSECTIONS:
            assert f"design-{design_id}-{sub}" in page.ids
    plots = json.loads(body_attr(page, "data-test-plots"))
    assert len(plots) == PLOTS
    assert all(w > 350 and h > 150 for w, h in plots), plots
    # the pair's positions side by side at this width: each about half the page
    pair = [w for (w, _), f in zip(plots, _Page(results_html).figures)
            if f["id"].startswith(PAIR + "-")]
    assert len(pair) == 6 and all(350 < w < 700 for w in pair), pair
    # the sortable table sorted by cost: the cheapest first
    cheapest = pd.read_csv(results_dir / "pareto.csv").sort_values("cost")["id"].iloc[0]
    assert body_attr(page, "data-test-sorted") == cheapest
    assert shot.is_file() and shot.stat().st_size > 10_000
    print(f"\nscreenshot: {shot}")
