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
"""

from __future__ import annotations

import difflib
import math
from functools import lru_cache
from pathlib import Path
from typing import Iterable, Literal, Union

import numpy as np
import yaml
from pydantic import Field, ValidationError, field_validator, model_validator

from optimiser.formats.yamlfile import DesignError, read_yaml
from optimiser.formats.schema import (
    Capacitance,
    Current,
    Fraction,
    Frequency,
    Inductance,
    Mass,
    Power,
    Resistance,
    Strict,
    Temperature,
    Time,
    Voltage,
)

__all__ = [
    "resistor_working_voltage",
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


class MissingRating(LookupError):
    """The part's data file does not give the rating a calculation asked for."""


# --------------------------------------------------------------------------------------------
# Preferred-number series
# --------------------------------------------------------------------------------------------

#: Mantissas of the IEC 60063 preferred-number series (values per decade, 1 <= m < 10).
#: These are a standard's table, not a part's rating, so they live in code.
E_SERIES: dict[str, tuple[float, ...]] = {
    "E3": (1.0, 2.2, 4.7),
    "E6": (1.0, 1.5, 2.2, 3.3, 4.7, 6.8),
    "E12": (1.0, 1.2, 1.5, 1.8, 2.2, 2.7, 3.3, 3.9, 4.7, 5.6, 6.8, 8.2),
    "E24": (
        1.0, 1.1, 1.2, 1.3, 1.5, 1.6, 1.8, 2.0, 2.2, 2.4, 2.7, 3.0,
        3.3, 3.6, 3.9, 4.3, 4.7, 5.1, 5.6, 6.2, 6.8, 7.5, 8.2, 9.1,
    ),
}

SeriesName = Literal["E3", "E6", "E12", "E24"]


def e_series(name: str, decades: int | Iterable[int]) -> np.ndarray:
    """Values of a preferred-number series over whole decades, in SI.

    Parameters
    ----------
    name : str
        ``"E3"``, ``"E6"``, ``"E12"`` or ``"E24"``.
    decades : int or iterable of int
        Powers of ten to cover: ``range(-6, -3)`` gives 1.0e-6 ... 8.2e-4 for E12. [-]

    Returns
    -------
    numpy.ndarray
        Ascending values, each the nearest double to the decimal ``m·10^d`` (so ``2.2e-4``
        is exactly the float written ``2.2e-4``, free of ``2.2 * 1e-4`` rounding noise). [SI]

    References
    ----------
    .. [1] IEC 60063:2015, Preferred number series for resistors and capacitors.
    """
    key = name.upper() if isinstance(name, str) else name
    if key not in E_SERIES:
        raise ValueError(f"unknown preferred-number series {name!r}; allowed: {', '.join(E_SERIES)}")
    if isinstance(decades, (int, np.integer)):
        decades = [int(decades)]
    powers = sorted({int(d) for d in decades})
    return np.array([float(f"{m}e{d}") for d in powers for m in E_SERIES[key]])


# --------------------------------------------------------------------------------------------
# Models
# --------------------------------------------------------------------------------------------


class Part(Strict):
    """Fields every catalogue entry has."""

    name: str = Field(min_length=1)
    aliases: tuple[str, ...] = ()
    provenance: str = Field(min_length=1)
    notes: str | None = None

    @field_validator("provenance")
    @classmethod
    def _provenance_not_blank(cls, value: str) -> str:
        if not value.strip():
            raise ValueError("provenance must name the data sheet / handbook, or say 'from memory — verify'")
        return value


class OperatingPoint(Strict):
    """A voltage at a current, e.g. a tube drop or a forward voltage."""

    voltage: Voltage = Field(gt=0)
    current: Current = Field(gt=0)


class ImpedancePoint(Strict):
    """Minimum total effective plate-supply impedance per plate at an RMS plate voltage.

    ``rms_voltage`` may be left out when the data gives a single figure for every permitted
    plate voltage.
    """

    impedance: Resistance = Field(ge=0)
    rms_voltage: Voltage | None = Field(default=None, gt=0)


class ChokeInputRatings(Strict):
    """Maximum ratings of a valve rectifier feeding a choke-input filter."""

    max_plate_voltage_rms: Voltage | None = Field(default=None, gt=0)
    max_dc_current: Current | None = Field(default=None, gt=0)
    min_input_inductance: Inductance | None = Field(default=None, gt=0)


class Valve(Part):
    """A full-wave vacuum rectifier (two plates, common cathode).

    Capacitor-input ratings are the top-level fields; choke-input ratings, where known, sit in
    ``choke_input``. Currents and impedances are per plate unless the name says otherwise.
    """

    heating: Literal["direct", "indirect"]
    heater_voltage: Voltage = Field(gt=0)
    heater_current: Current = Field(gt=0)
    warm_up_time: Time | None = Field(default=None, gt=0)
    cathode_tied_to_heater: bool = False
    max_piv: Voltage = Field(gt=0)
    max_peak_current: Current = Field(gt=0)
    max_dc_current: Current = Field(gt=0)
    max_plate_voltage_rms: Voltage | None = Field(default=None, gt=0)
    max_input_capacitance: Capacitance | None = Field(default=None, gt=0)
    min_plate_impedance: tuple[ImpedancePoint, ...] = ()
    max_heater_cathode_voltage: Voltage | None = Field(default=None, gt=0)
    drop_at_current: OperatingPoint | None = None
    choke_input: ChokeInputRatings | None = None

    @field_validator("min_plate_impedance", mode="before")
    @classmethod
    def _one_point_or_list(cls, value):
        if isinstance(value, dict):
            return [value]
        return value

    @model_validator(mode="after")
    def _check_consistency(self):
        points = self.min_plate_impedance
        if len(points) > 1:
            if any(p.rms_voltage is None for p in points):
                raise ValueError("min_plate_impedance: with several points, each needs its rms_voltage")
            volts = [p.rms_voltage for p in points]
            if any(b <= a for a, b in zip(volts, volts[1:])):
                raise ValueError("min_plate_impedance: list the points in rising rms_voltage")
        if self.heating == "direct" and self.max_heater_cathode_voltage is not None:
            raise ValueError("max_heater_cathode_voltage applies to indirectly heated valves only")
        if self.heating == "direct" and self.cathode_tied_to_heater:
            raise ValueError("cathode_tied_to_heater applies to indirectly heated valves only")
        return self

    @property
    def perveance(self) -> float:
        """Perveance per plate, fitted through the data sheet's tube-drop point. [A/V^1.5]

        The Child–Langmuir law gives a space-charge-limited diode current ``I = K·V^(3/2)``;
        one stated point (V, I) fixes ``K = I / V^(3/2)``.

        References
        ----------
        .. [1] C. D. Child, "Discharge from hot CaO," Phys. Rev. (Series I), vol. 32, 1911;
           I. Langmuir, "The effect of space charge and residual gases on thermionic currents in
           high vacuum," Phys. Rev., vol. 2, 1913.
        """
        if self.drop_at_current is None:
            raise MissingRating(
                f"valve {self.name!r} has no drop_at_current in its data, so no perveance can be fitted; "
                "add drop_at_current {voltage, current} in a user parts file"
            )
        return self.drop_at_current.current / self.drop_at_current.voltage**1.5

    def min_plate_impedance_at(self, rms_voltage):
        """Minimum total effective plate-supply impedance per plate at an RMS plate voltage.

        Linear interpolation between the data points. Below the lowest point the lowest
        point's figure is kept (the data asks no less at lower voltage, so this errs safe);
        above the highest point the line through the last two points is extended (the
        figure rises with voltage). With one point the figure is the same at every voltage.
        Whether the voltage is within ``max_plate_voltage_rms`` is a separate check.

        Parameters
        ----------
        rms_voltage : numeric
            RMS plate (secondary half-winding) voltage. [V]

        Returns
        -------
        numeric
            Minimum impedance, the shape of ``rms_voltage``. [ohm]

        Raises
        ------
        MissingRating
            If the valve's data gives no minimum plate-supply impedance.
        """
        points = self.min_plate_impedance
        if not points:
            raise MissingRating(f"valve {self.name!r} has no min_plate_impedance in its data")
        v = np.asarray(rms_voltage, dtype=float)
        if len(points) == 1:
            out = np.full_like(v, points[0].impedance)
        else:
            vs = np.array([p.rms_voltage for p in points])
            zs = np.array([p.impedance for p in points])
            slope = (zs[-1] - zs[-2]) / (vs[-1] - vs[-2])
            out = np.where(v > vs[-1], zs[-1] + slope * (v - vs[-1]), np.interp(v, vs, zs))
        return out if out.ndim else float(out)


class ReverseRecovery(Strict):
    """Reverse-recovery class and, where the data gives it, the recovery time."""

    kind: Literal["standard", "fast", "soft"]
    time: Time | None = Field(default=None, gt=0)


class ForwardVoltage(OperatingPoint):
    """A data sheet forward-voltage figure: ``kind`` says whether it is the maximum or typical."""

    kind: Literal["max", "typ"]


class Diode(Part):
    """A silicon rectifier diode with SPICE-style Shockley parameters (IS, N, RS) at 25 °C.

    The Shockley parameters are fitted to the stated ``forward_voltage`` figure; see the entry's
    notes for how.
    """

    v_rrm: Voltage = Field(gt=0)
    i_f_avg: Current = Field(gt=0)
    i_fsm: Current = Field(gt=0)
    i_fsm_duration: Time = Field(gt=0)
    reverse_recovery: ReverseRecovery
    forward_voltage: ForwardVoltage
    saturation_current: Current = Field(gt=0)
    emission_coefficient: float = Field(gt=0)
    series_resistance: Resistance = Field(ge=0)


class VoltageRating(Strict):
    """One rated voltage of a capacitor series and the capacitance range made at it."""

    rated: Voltage = Field(gt=0)
    surge: Voltage = Field(gt=0)
    min_capacitance: Capacitance = Field(gt=0)
    max_capacitance: Capacitance = Field(gt=0)
    tan_delta: float | None = Field(default=None, gt=0, description="overrides the series' tan_delta")

    @model_validator(mode="after")
    def _check(self):
        if self.surge < self.rated:
            raise ValueError("surge voltage must be >= rated voltage")
        if self.max_capacitance < self.min_capacitance:
            raise ValueError("max_capacitance must be >= min_capacitance")
        return self


class Tolerance(Strict):
    """Capacitance tolerance band, as fractions below and above nominal."""

    minus: Fraction = Field(ge=0, lt=1)
    plus: Fraction = Field(ge=0)


class RippleModel(Strict):
    """Ripple-current rating ``I = I_ref · (C/C_ref)^a · (V/V_ref)^b`` at ``frequency``."""

    frequency: Frequency = Field(gt=0)
    reference_current: Current = Field(gt=0)
    reference_capacitance: Capacitance = Field(gt=0)
    reference_voltage: Voltage = Field(gt=0)
    capacitance_exponent: float = Field(ge=0)
    voltage_exponent: float = Field(ge=0)


class PriceModel(Strict):
    """Estimated price in cost units: ``base + coefficient · (E / 1 J)^exponent``, E = C·V²/2."""

    base: float = Field(ge=0)
    coefficient: float = Field(ge=0)
    exponent: float = Field(gt=0)


class CapacitorSeries(Part):
    """A capacitor series: ratings, value range, loss, ripple rating, life and price model."""

    technology: Literal["aluminium_electrolytic", "polypropylene_film"]
    rated_temperature: Temperature
    rated_life: Time = Field(gt=0)
    tolerance: Tolerance
    value_series: SeriesName
    voltage_ratings: tuple[VoltageRating, ...] = Field(min_length=1)
    tan_delta: float = Field(gt=0)
    tan_delta_frequency: Frequency = Field(gt=0)
    ripple: RippleModel
    price: PriceModel

    def rating(self, rated_voltage: float) -> VoltageRating:
        """The voltage rating equal to ``rated_voltage`` [V] (within 0.1 %)."""
        for r in self.voltage_ratings:
            if math.isclose(r.rated, rated_voltage, rel_tol=1e-3):
                return r
        made = ", ".join(f"{r.rated:g} V" for r in self.voltage_ratings)
        raise MissingRating(f"capacitor series {self.name!r} has no {rated_voltage:g} V rating; made: {made}")

    def values(self, rated_voltage: float) -> np.ndarray:
        """Capacitances made at a rated voltage, from the series' preferred numbers. [F]"""
        r = self.rating(rated_voltage)
        lo, hi = math.floor(math.log10(r.min_capacitance)), math.ceil(math.log10(r.max_capacitance))
        c = e_series(self.value_series, range(lo, hi + 1))
        keep = (c >= r.min_capacitance * (1 - 1e-9)) & (c <= r.max_capacitance * (1 + 1e-9))
        return c[keep]

    def esr(self, capacitance, frequency=None, rated_voltage=None):
        """Equivalent series resistance from the dissipation factor: ESR = tan δ / (2π f C).

        Parameters
        ----------
        capacitance : numeric
            Capacitance. [F]
        frequency : numeric, optional
            Frequency; the series' ``tan_delta_frequency`` if not given. tan δ is taken as
            constant with frequency, which holds roughly near the reference frequency only. [Hz]
        rated_voltage : float, optional
            Rated voltage, to use that rating's own tan δ where the data gives one. [V]

        Returns
        -------
        numeric
            ESR. [ohm]

        References
        ----------
        .. [1] IEC 60384-4, Fixed capacitors for use in electronic equipment — Part 4:
           Aluminium electrolytic capacitors (tangent of loss angle, ESR = tan δ / ωC).
        """
        f = self.tan_delta_frequency if frequency is None else np.asarray(frequency, dtype=float)
        tan_delta = self.tan_delta
        if rated_voltage is not None and self.rating(rated_voltage).tan_delta is not None:
            tan_delta = self.rating(rated_voltage).tan_delta
        return tan_delta / (2.0 * np.pi * f * np.asarray(capacitance, dtype=float))

    def ripple_rating(self, capacitance, rated_voltage):
        """Rated RMS ripple current at the model's frequency and the rated temperature. [A]

        The power-law shape is the catalogue's own fit (see the data file), not a published
        method: read it as an estimate of what a maker of that grade would rate.

        Parameters
        ----------
        capacitance : numeric
            Capacitance. [F]
        rated_voltage : numeric
            Rated voltage of the part. [V]
        """
        m = self.ripple
        c = np.asarray(capacitance, dtype=float)
        v = np.asarray(rated_voltage, dtype=float)
        return (
            m.reference_current
            * (c / m.reference_capacitance) ** m.capacitance_exponent
            * (v / m.reference_voltage) ** m.voltage_exponent
        )

    def cost(self, capacitance, rated_voltage):
        """Estimated price of one part in cost units (an estimate, not a quotation). [-]

        Parameters
        ----------
        capacitance : numeric
            Capacitance. [F]
        rated_voltage : numeric
            Rated voltage of the part. [V]
        """
        p = self.price
        energy = 0.5 * np.asarray(capacitance, dtype=float) * np.asarray(rated_voltage, dtype=float) ** 2
        return p.base + p.coefficient * energy**p.exponent


class Choke(Part):
    """A filter choke."""

    inductance: Inductance = Field(gt=0)
    dc_resistance: Resistance = Field(gt=0)
    rated_current: Current = Field(gt=0)
    mass: Mass = Field(gt=0)
    cost: float = Field(ge=0, description="estimated price in cost units")


class ResistanceRange(Strict):
    min: Resistance = Field(gt=0)
    max: Resistance = Field(gt=0)


class Derating(Strict):
    """Linear power derating: full power up to ``full_power_up_to``, none at ``zero_power_at``."""

    full_power_up_to: Temperature
    zero_power_at: Temperature

    @model_validator(mode="after")
    def _check(self):
        if self.zero_power_at <= self.full_power_up_to:
            raise ValueError("zero_power_at must be above full_power_up_to")
        return self


class ResistorRating(Part):
    """A power-resistor rating class (power, working voltage, derating, value series, cost)."""

    technology: str = Field(min_length=1)
    power: Power = Field(gt=0)
    max_working_voltage: Voltage = Field(gt=0)
    derating: Derating
    value_series: SeriesName
    resistance_range: ResistanceRange
    tolerance: Fraction = Field(gt=0, lt=1)
    cost: float = Field(ge=0, description="estimated price in cost units")

    def power_at(self, ambient_temperature):
        """Permitted dissipation at an ambient temperature, by the linear derating. [W]

        Parameters
        ----------
        ambient_temperature : numeric
            Ambient temperature. [degC]

        References
        ----------
        .. [1] IEC 60115-1, Fixed resistors for use in electronic equipment — Part 1: Generic
           specification (rated dissipation and the linear derating curve).
        """
        d = self.derating
        t = np.asarray(ambient_temperature, dtype=float)
        frac = np.clip((d.zero_power_at - t) / (d.zero_power_at - d.full_power_up_to), 0.0, 1.0)
        out = self.power * frac
        return out if out.ndim else float(out)


AnyPart = Union[Valve, Diode, CapacitorSeries, Choke, ResistorRating]

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


def resistor_working_voltage(power, resistance) -> float:
    """Working voltage of a resistor of the smallest catalogue class rated for ``power``: the
    lesser of the class's limiting element voltage and sqrt(P R). [V] (NaN where unknown)."""
    if power is None or resistance is None:
        return float("nan")
    classes = sorted(load_catalogue("resistor").values(), key=lambda p: p.power)
    fitting = [c for c in classes if c.power >= power * (1 - 1e-9)] or classes[-1:]
    c = fitting[0]
    return float(min(c.max_working_voltage, np.sqrt(c.power * resistance)))


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
