"""One self-contained HTML page per design, or per search run: what a builder looks at to choose.

The page opens in any browser with no server and no network: plots are inline SVG drawn with
matplotlib's SVG backend (text kept as text, so no font files), the stylesheet is inline, and a
few lines of inline JavaScript sort the tables. Nothing is fetched.

Per design the page shows the waveforms over one mains cycle, the sag step response per node,
the switch-on B+ trajectory against the capacitor ratings, the node figures, the check table, the
life estimates, the transformer order sheet, the parts list and the cautions. A switchable pair
shows its two positions side by side. A search run adds the Pareto front in pairwise projections
with the recommended design marked, and a table of every Pareto design.

Physics is not done here: every figure comes from :func:`optimiser.assessment.full.assess`,
:func:`optimiser.assessment.steady_state.cycle_waveforms`, :mod:`optimiser.assessment.bill` and
:mod:`optimiser.physics.transformer`.

Modules: :mod:`.markup` (numbers, units, tables, Markdown as HTML), :mod:`.front` (reading a
run's front), :mod:`.plots` (the SVG plots), :mod:`.sections` (one design's section),
:mod:`.page` (the whole page and writing it). The page frame, stylesheet and script are package
data: ``page.html``, ``style.css``, ``script.js``.
"""

from optimiser.outputs.report.front import FULL_SECTIONS, Front, ResultsError, read_front
from optimiser.outputs.report.page import (design_report, results_report, write_report,
                                           write_results_report)
from optimiser.outputs.report.sections import MARGIN_BAND
# the tests reach these two internals through the package
from optimiser.outputs.report.front import _section_rows  # noqa: F401
from optimiser.outputs.report.page import _front_table  # noqa: F401

__all__ = ["design_report", "results_report", "write_report", "write_results_report",
           "read_front", "Front", "ResultsError", "MARGIN_BAND", "FULL_SECTIONS"]
