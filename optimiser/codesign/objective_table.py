"""The named objectives of a search: one definition each, read by the search, ``pareto.csv``,
the summary and the report.

Every objective is a figure of a design, minimised by the search in its *search value*:

============== ============================================================ ===============
name           what it is                                                   in pareto.csv
============== ============================================================ ===============
cost           the parts list's total                                       cost units
regulation     the static drop from idle to full power at the sag node, in  % of idle B+
               fractions of idle B+ (the worst switch position)
sag_error      |static drop - the spec's sag target| (only with a target)   percentage pts
rectifier_stress the worst actual-to-rated ratio of the rectifier's ratings -
life           the shortest expected life of the parts that wear            hours
               (:mod:`optimiser.physics.life`); searched as -log10(hours)
============== ============================================================ ===============

``regulation`` never means the distance from a sag target: that is ``sag_error``.
A spec names 2-4 of them (``objectives:``); by default cost, regulation and rectifier stress,
with ``sag_error`` in place of ``regulation`` when the spec sets a sag target.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

__all__ = ["Objective", "OBJECTIVES", "FIGURE_HEADERS", "names_for", "search_values", "row_worst",
           "resolution_steps", "csv_frame", "from_csv_frame", "shown", "FAILED"]

#: Search value of an objective whose figure could not be computed (counts as very bad).
FAILED = 1e6


@dataclass(frozen=True)
class Objective:
    """One objective.

    Attributes
    ----------
    name : str
        Its name in a spec, the frame and the code.
    meaning : str
        What it is, for people.
    header : str
        Its column header in ``pareto.csv``, with its unit.
    csv_scale : float
        ``pareto.csv`` value = frame value * csv_scale.
    label : str
        Axis label (csv units).
    best : str
        A design best in it, in words ("cheapest").
    """

    name: str
    meaning: str
    header: str
    csv_scale: float
    label: str
    best: str

    @property
    def unit(self) -> str:
        """The unit of its ``pareto.csv`` column (from the header), e.g. ``"%"``."""
        return self.header.split("[", 1)[1].rstrip("]") if "[" in self.header else ""

    def search_value(self, figure):
        """The minimised value of a figure (life is searched as -log10 of its hours)."""
        x = np.asarray(figure, float)
        if self.name == "life":
            with np.errstate(all="ignore"):
                x = -np.log10(np.where(x > 0, x, np.nan))
        return np.where(np.isfinite(x), x, FAILED)


OBJECTIVES = {o.name: o for o in (
    Objective("cost", "parts list total", "cost [cost units]", 1.0, "cost [cost units]",
              "cheapest"),
    Objective("regulation", "static drop idle to full power at the sag node, % of idle B+",
              "regulation [%]", 100.0, "regulation (static sag) [%]", "stiffest"),
    Objective("sag_error", "distance of the static sag from its target", "sag_error [pp]",
              100.0, "sag error [percentage points]", "closest to target"),
    Objective("rectifier_stress", "worst actual/rated of the rectifier's ratings",
              "rectifier_stress [-]", 1.0, "rectifier stress [-]", "least rectifier stress"),
    Objective("life", "shortest expected life of the parts that wear", "life [h]", 1.0,
              "shortest part life [h]", "longest life"),
)}

#: Further figures pareto.csv carries with a unit in the header: frame column -> (header, scale).
FIGURE_HEADERS = {"static_drop": ("sag.static_drop [%]", 100.0),
                  "attack_time": ("sag.attack_time [s]", 1.0),
                  "recovery_time": ("sag.recovery_time [s]", 1.0)}


def shown(name, search_value) -> str:
    """A search value as people read it, in its pareto.csv unit (the progress line)."""
    o = OBJECTIVES[name]
    figure = 10.0 ** -search_value if name == "life" else search_value
    unit = "" if o.unit in ("-", "") else f" {o.unit}"
    return f"{figure * o.csv_scale:.4g}{unit}"


def names_for(spec) -> tuple:
    """The objectives a spec asks for: its ``objectives:``, else the default three."""
    chosen = getattr(spec, "objectives", None)
    if chosen:
        return tuple(chosen)
    middle = "sag_error" if spec.sag is not None else "regulation"
    return ("cost", middle, "rectifier_stress")


def figures_of(spec, cost, drop, stress, life):
    """Every objective's figure per design, by name (arrays (B,)).

    Parameters
    ----------
    spec : Spec
    cost : ndarray (B,)
        [cost units]
    drop : ndarray (B, P)
        Static drop at the sag node per switch position (NaN where a design has fewer). [-]
    stress : ndarray (B,)
        [-]
    life : ndarray (B,)
        Shortest part life. [h]
    """
    drop = np.atleast_2d(np.asarray(drop, float))
    if drop.shape[0] != len(np.atleast_1d(cost)):
        drop = drop.T
    out = {"cost": np.asarray(cost, float), "regulation": row_worst(drop),
           "rectifier_stress": np.asarray(stress, float), "life": np.asarray(life, float)}
    if spec.sag is not None:
        out["sag_error"] = row_worst(np.abs(drop - spec.sag.target))
    else:
        out["sag_error"] = np.full(len(out["cost"]), np.nan)
    return out


def search_values(names, figures) -> np.ndarray:
    """F (B, len(names)) for the search from :func:`figures_of`."""
    return np.column_stack([OBJECTIVES[n].search_value(figures[n]) for n in names])


def resolution_steps(names, resolution) -> np.ndarray:
    """Per objective, the difference in its search value too small to tell designs apart."""
    return np.array([float(getattr(resolution, n)) for n in names])


def row_worst(values):
    """The largest value of each row of a (B, k) array, ignoring NaN (NaN where a row is all
    NaN, or has no columns). (B,)"""
    values = np.asarray(values, float)
    if values.shape[1] == 0:
        return np.full(len(values), np.nan)
    with np.errstate(all="ignore"):
        return np.fmax.reduce(values, axis=1)


def csv_frame(frame):
    """A frame as ``pareto.csv`` carries it: objectives and sag figures under headers with
    their units, in those units."""
    out = frame.copy()
    renames = {}
    for name, o in OBJECTIVES.items():
        if name in out.columns:
            out[name] = out[name] * o.csv_scale
            renames[name] = o.header
    for name, (header, scale) in FIGURE_HEADERS.items():
        if name in out.columns:
            out[name] = out[name] * scale
            renames[name] = header
    return out.rename(columns=renames)


def from_csv_frame(frame):
    """The inverse of :func:`csv_frame` (a ``pareto.csv`` read back into frame names and units);
    a frame without unit headers is returned as it is."""
    out = frame.copy()
    back = {o.header: (name, o.csv_scale) for name, o in OBJECTIVES.items()}
    back.update({header: (name, scale) for name, (header, scale) in FIGURE_HEADERS.items()})
    renames = {}
    for header, (name, scale) in back.items():
        if header in out.columns:
            out[header] = out[header] / scale
            renames[header] = name
    return out.rename(columns=renames)
