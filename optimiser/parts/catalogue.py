"""The parts catalogue: valve and silicon rectifiers, capacitor series, chokes, resistor ratings.

Parts data lives in YAML files under ``optimiser/parts/data/`` (one file per kind), every entry with a
``provenance``. This module reads them into frozen pydantic models holding SI floats, lets user
files add or override entries, and looks parts up by name or alias.

Each data file is a mapping::

    kind: valve            # valve | diode | capacitor | choke | resistor
    entries:
      - name: 5AR4
        aliases: [GZ34]
        ...
        provenance: "..."

User files have the same form (``kind`` may be left out; if given it must match). A user entry
replaces every bundled entry whose name or alias equals its name or one of its aliases, compared
without regard to case.

The bundled files are read once per process and cached; user files are read on every call.
The models the entries are read into are in :mod:`optimiser.parts.models` (and named here
too).
"""

from __future__ import annotations

import difflib
import math
from functools import lru_cache
from pathlib import Path
from typing import Iterable

import yaml
from pydantic import ValidationError

from optimiser.formats.yamlfile import DesignError, read_yaml
from optimiser.parts.models import (
    E_SERIES,
    AnyPart,
    CapacitorSeries,
    Choke,
    Diode,
    ImpedancePoint,
    MissingRating,
    OperatingPoint,
    Part,
    ResistorRating,
    Valve,
    e_series,
)

__all__ = [
    "resistor_element_voltage",
    "CatalogueError",
    "PartNotFound",
    "MissingRating",
    "KINDS",
    "Part",
    "Valve",
    "Diode",
    "CapacitorSeries",
    "Choke",
    "ResistorRating",
    "OperatingPoint",
    "ImpedancePoint",
    "E_SERIES",
    "e_series",
    "load_catalogue",
    "find_part",
    "use_user_files",
    "bundled_file",
]

DATA_DIR = Path(__file__).parent / "data"


class CatalogueError(ValueError):
    """A parts file that cannot be read: bad YAML, unknown or missing field, no provenance."""


class PartNotFound(LookupError):
    """No part of the asked kind has that name or alias."""


#: Catalogue kinds: model class and bundled file name.
KINDS: dict[str, tuple[type[Part], str]] = {
    "valve": (Valve, "valves.yaml"),
    "diode": (Diode, "diodes.yaml"),
    "capacitor": (CapacitorSeries, "capacitors.yaml"),
    "choke": (Choke, "chokes.yaml"),
    "resistor": (ResistorRating, "resistors.yaml"),
}
_PLURALS = {k + "s": k for k in KINDS}


def _kind(kind: str) -> str:
    k = str(kind).strip().lower()
    k = _PLURALS.get(k, k)
    if k not in KINDS:
        raise ValueError(f"unknown part kind {kind!r}; allowed: {', '.join(KINDS)}")
    return k


def bundled_file(kind: str) -> Path:
    """Path of the data file shipped with the package for ``kind``."""
    return DATA_DIR / KINDS[_kind(kind)][1]


# --------------------------------------------------------------------------------------------
# Reading files
# --------------------------------------------------------------------------------------------

def _read_yaml(path: Path):
    """Return (data, entry line numbers) of a parts file."""
    try:
        data, node = read_yaml(path)
    except DesignError as exc:
        raise CatalogueError("; ".join(exc.problems)) from None
    lines: list[int] = []
    for key_node, value_node in node.value:
        if key_node.value == "entries" and isinstance(value_node, yaml.SequenceNode):
            lines = [item.start_mark.line + 1 for item in value_node.value]
    return data, lines


def _format_error(err: dict) -> str:
    loc = ".".join(str(p) for p in err.get("loc", ()))
    msg = err.get("msg", "invalid")
    if err.get("type") == "extra_forbidden":
        msg = "unknown field"
    return f"{loc}: {msg}" if loc else msg


def _parse_file(path: Path, kind: str) -> list[Part]:
    model, _ = KINDS[kind]
    data, lines = _read_yaml(path)
    if not isinstance(data, dict):
        raise CatalogueError(f"{path}: a parts file is a mapping with 'kind' and 'entries'")
    unknown = set(data) - {"kind", "entries"}
    if unknown:
        raise CatalogueError(f"{path}: unknown top-level key(s) {sorted(unknown)}; allowed: kind, entries")
    if "kind" in data and _PLURALS.get(str(data["kind"]).lower(), str(data["kind"]).lower()) != kind:
        raise CatalogueError(f"{path}: file holds kind {data['kind']!r}, but {kind!r} parts were asked for")
    entries = data.get("entries")
    if not isinstance(entries, list):
        raise CatalogueError(f"{path}: 'entries' must be a list of {kind} entries")
    parts: list[Part] = []
    for i, raw in enumerate(entries):
        where = f"{path}:{lines[i]}" if i < len(lines) else str(path)
        if not isinstance(raw, dict):
            raise CatalogueError(f"{where}: entry {i} is not a mapping")
        label = f"entry {i} ({raw['name']!r})" if "name" in raw else f"entry {i}"
        prov = raw.get("provenance")
        if not isinstance(prov, str) or not prov.strip():
            raise CatalogueError(
                f"{where}: {kind} {label} has no provenance; every entry must name its data sheet "
                "or handbook, or say 'from memory — verify'"
            )
        try:
            parts.append(model.model_validate(raw))
        except ValidationError as exc:
            problems = "; ".join(_format_error(e) for e in exc.errors())
            raise CatalogueError(f"{where}: {kind} {label}: {problems}") from None
    return parts


class _Catalogue:
    """Entries of one kind by name, and an index of casefolded names and aliases."""

    def __init__(self, kind: str):
        self.kind = kind
        self.entries: dict[str, Part] = {}
        self.index: dict[str, str] = {}

    def copy(self) -> "_Catalogue":
        other = _Catalogue(self.kind)
        other.entries = dict(self.entries)
        other.index = dict(self.index)
        return other

    def add(self, part: Part, path: Path, override: bool) -> None:
        keys = [part.name.casefold(), *(a.casefold() for a in part.aliases)]
        if len(set(keys)) != len(keys):
            raise CatalogueError(f"{path}: {self.kind} {part.name!r} repeats a name among its aliases")
        clashes = {self.index[k] for k in keys if k in self.index}
        if clashes and not override:
            raise CatalogueError(
                f"{path}: {self.kind} {part.name!r} reuses the name or alias of {sorted(clashes)} in the same file"
            )
        for old in clashes:
            del self.entries[old]
            self.index = {k: v for k, v in self.index.items() if v != old}
        self.entries[part.name] = part
        for k in keys:
            self.index[k] = part.name

    def find(self, name: str) -> Part:
        key = str(name).strip().casefold()
        if key in self.index:
            return self.entries[self.index[key]]
        shown = {}
        for n, p in self.entries.items():
            for label in (n, *p.aliases):
                shown[label.casefold()] = label
        close = difflib.get_close_matches(key, list(shown), n=4, cutoff=0.5)
        if close:
            hint = "close matches: " + ", ".join(shown[c] for c in close)
        else:
            names = sorted(self.entries)
            hint = "known: " + ", ".join(names[:12]) + (" ..." if len(names) > 12 else "")
        raise PartNotFound(f"no {self.kind} named {name!r} in the parts catalogue; {hint}")


def _merge(catalogue: _Catalogue, path: Path, override: bool) -> None:
    file_cat = _Catalogue(catalogue.kind)
    for part in _parse_file(path, catalogue.kind):
        file_cat.add(part, path, override=False)
    for part in file_cat.entries.values():
        catalogue.add(part, path, override=override)


@lru_cache(maxsize=None)
def _bundled(kind: str) -> _Catalogue:
    catalogue = _Catalogue(kind)
    _merge(catalogue, bundled_file(kind), override=False)
    return catalogue


#: User parts files named by the design or spec being worked on (see :func:`use_user_files`).
_USER_FILES: tuple = ()


def use_user_files(paths) -> None:
    """Make these user parts files part of every catalogue lookup from now on.

    A design or spec file names them under ``parts_files:``; its loader calls this, so every
    later lookup (simulation, checks, parts list, search) sees the user's own parts. Entries
    replace bundled ones sharing a name or alias. Each call replaces the previous list.

    Parameters
    ----------
    paths : iterable of path
    """
    global _USER_FILES
    files = tuple(Path(p).resolve() for p in paths)
    for path in files:
        if not path.is_file():
            raise CatalogueError(f"{path}: parts file not found")
    _USER_FILES = files


def _catalogue(kind: str, extra_files: Iterable) -> _Catalogue:
    if isinstance(extra_files, (str, Path)):
        extra_files = (extra_files,)
    k = _kind(kind)
    # the registered files serve every kind they hold; files passed here must hold this kind
    registered = tuple(p for p in _USER_FILES if _file_kind(p) == k)
    return _merged(k, registered + tuple(Path(p) for p in extra_files))


@lru_cache(maxsize=64)
def _file_kind(path: Path):
    data, _ = _read_yaml(path)
    return data.get("kind") if isinstance(data, dict) else None


@lru_cache(maxsize=64)
def _merged(kind: str, files: tuple) -> _Catalogue:
    if not files:
        return _bundled(kind)
    catalogue = _bundled(kind).copy()
    for path in files:
        _merge(catalogue, path, override=True)
    return catalogue


def resistor_element_voltage(power) -> float:
    """Limiting element voltage of the smallest catalogue resistor class rated for ``power``
    (the largest class if none is). [V] (NaN where unknown). A resistor's working voltage is
    the lesser of this and sqrt(P R) (:mod:`optimiser.assessment.checks`)."""
    if power is None or not math.isfinite(power):
        return float("nan")
    classes = sorted(load_catalogue("resistor").values(), key=lambda p: p.power)
    fitting = [c for c in classes if c.power >= power * (1 - 1e-9)] or classes[-1:]
    return float(fitting[0].max_working_voltage)


def load_catalogue(kind: str, extra_files: Iterable = ()) -> dict[str, Part]:
    """All parts of one kind, bundled entries first, then user files in order.

    Parameters
    ----------
    kind : str
        ``"valve"``, ``"diode"``, ``"capacitor"``, ``"choke"`` or ``"resistor"`` (plurals
        accepted).
    extra_files : iterable of path, optional
        User parts files of the same schema. An entry replaces any earlier entry sharing a name
        or alias with it (case-insensitive).

    Returns
    -------
    dict[str, Part]
        Entries by name as written in the files (a fresh dict; the models are frozen).

    Raises
    ------
    CatalogueError
        A file that cannot be read, an unknown field, a bad value, or an entry without
        provenance; the message names the file, the line and the entry.
    """
    return dict(_catalogue(kind, extra_files).entries)


def find_part(kind: str, name: str, extra_files: Iterable = ()) -> AnyPart:
    """Look a part up by name or alias, ignoring case.

    Parameters
    ----------
    kind : str
        As for :func:`load_catalogue`.
    name : str
        Name or alias, e.g. ``"gz34"``.
    extra_files : iterable of path, optional
        User parts files, as for :func:`load_catalogue`.

    Raises
    ------
    PartNotFound
        Naming the kind, the name asked for and a few close matches.
    """
    return _catalogue(kind, extra_files).find(name)
