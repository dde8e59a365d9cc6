"""A search run's front as the report reads it from a results folder: ``pareto.csv``, the
design files under ``designs/`` and ``summary.md``; which design is recommended and why, its
extremes, and which designs get a full section on the page."""

from __future__ import annotations

import re
from dataclasses import dataclass
from pathlib import Path

import numpy as np

#: A run with at most this many Pareto designs gets a full section for each; a larger one gets
#: sections for the recommended design and the extremes of each objective only.
FULL_SECTIONS = 8

OBJECTIVES = ("cost", "regulation", "rectifier_stress")
_OBJECTIVE_LABEL = {"cost": "cost [cost units]", "regulation": "regulation [%]",
                    "rectifier_stress": "rectifier stress [-]"}
_EXTREME_LABEL = {"cost": "cheapest", "regulation": "best regulation",
                  "rectifier_stress": "least rectifier stress"}


class ResultsError(ValueError):
    """A results folder the report cannot read (missing files or columns)."""


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
