"""A search run's front as the report reads it from a results folder: ``pareto.csv`` (its unit
headers read back through :mod:`optimiser.codesign.objective_table`), the design files under
``designs/``, ``spec.yaml`` (which objectives were searched), ``branches.csv`` and
``summary.md``; which design is recommended and why, its extremes, and which designs get a full
section on the page."""

from __future__ import annotations

import re
from dataclasses import dataclass
from pathlib import Path

import numpy as np

#: A run with at most this many Pareto designs gets a full section for each; a larger one gets
#: sections for the recommended design and the extremes of each objective only.
FULL_SECTIONS = 8

from optimiser.codesign.objective_table import OBJECTIVES as _TABLE, from_csv_frame, names_for

#: Every objective a run may carry (:mod:`optimiser.codesign.objective_table`).
OBJECTIVES = tuple(_TABLE)
#: The objectives of a run that does not say which it searched.
DEFAULT_SEARCHED = ("cost", "regulation", "rectifier_stress")
_OBJECTIVE_LABEL = {n: o.label for n, o in _TABLE.items()}
_EXTREME_LABEL = {n: o.best for n, o in _TABLE.items()}


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
    searched : tuple of str
        The objectives the run searched (its spec's), in order.
    branches : list of dict
        ``branches.csv``'s rows (empty where the run wrote none).
    """

    frame: object
    ids: list
    design_files: list
    recommended: int | None
    reason: str | None
    searched: tuple = DEFAULT_SEARCHED
    branches: list = ()

    def objective(self, name) -> np.ndarray:
        """One objective's figure per row, in the frame's units (fractions for regulation and
        sag_error, hours for life)."""
        return self.frame[name].to_numpy(dtype=float)

    def search_value(self, name) -> np.ndarray:
        """One objective as the search minimised it (life as -log10 of its hours)."""
        return _TABLE[name].search_value(self.objective(name))

    @property
    def branch(self) -> np.ndarray:
        """Each row's rectifier branch ("" where the run does not say)."""
        if "branch" not in self.frame.columns:
            return np.array([""] * len(self.frame), object)
        return self.frame["branch"].fillna("").astype(str).to_numpy(object)

    @property
    def on_front(self) -> np.ndarray:
        """Whether each row is on the overall front (else on its branch's front only)."""
        if "on_front" not in self.frame.columns:
            return np.ones(len(self.frame), bool)
        return np.array([str(v).strip().lower() in _TRUE for v in self.frame["on_front"]])


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
    frame = from_csv_frame(pd.read_csv(csv))  # unit headers back to frame names and units
    searched = _searched(root, frame)
    missing = [c for c in searched if c not in frame.columns]
    if missing:
        raise ResultsError(f"{csv}: missing column(s) {', '.join(missing)}; the front needs "
                           f"{', '.join(searched)}")
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
    recommended, reason = _recommended(frame, ids, root, searched)
    table = root / "branches.csv"
    rows = pd.read_csv(table).to_dict("records") if table.is_file() else []
    return Front(frame=frame, ids=ids, design_files=files, recommended=recommended,
                 reason=reason, searched=searched, branches=rows)


def _searched(root, frame) -> tuple:
    """The objectives the run searched: its ``spec.yaml``'s; where that cannot be read, the
    default three (sag_error in place of regulation where the run has sag errors)."""
    from optimiser.formats.yamlfile import DesignError
    from optimiser.inputs.spec import load_spec

    try:
        return tuple(names_for(load_spec(root / "spec.yaml")))
    except (DesignError, OSError):
        if "sag_error" in frame.columns and frame["sag_error"].notna().any():
            return ("cost", "sag_error", "rectifier_stress")
        return DEFAULT_SEARCHED


def _recommended(frame, ids, root, searched=DEFAULT_SEARCHED):
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
    F = np.column_stack([_TABLE[n].search_value(frame[n].to_numpy(float)) for n in searched])
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
        for name in front.searched:
            values = front.objective(name)
            if np.any(np.isfinite(values)):
                row = int(np.argmin(front.search_value(name)))
                if row not in chosen:
                    chosen.append(row)
    return [r for r in chosen if front.design_files[r] is not None]


def _extremes(front: Front) -> dict:
    out = {}
    for name in front.searched:
        values = front.objective(name)
        if np.any(np.isfinite(values)):
            out.setdefault(int(np.argmin(front.search_value(name))), []).append(
                _EXTREME_LABEL[name])
    return out
