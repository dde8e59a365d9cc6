"""The spec file's ``choices`` and ``transformer`` sections: what the search may choose.

The HV secondary voltage range; the rectifiers (each a topology with a valve or a diode); the
capacitor series and value ranges of the reservoir and filter; each feed's resistors and chokes;
and the transformer's cores, steel, flux density, current density and insulation. Part and core
names are checked against the catalogues as the file is read. The rest of the spec (targets,
loads, margins, costs, search settings) and reading the file are in
:mod:`optimiser.inputs.spec`.
"""

from __future__ import annotations

import math
from typing import Annotated, Literal, Optional

from pydantic import Field, field_validator, model_validator

from optimiser.parts import catalogue as parts
from optimiser.formats.ranges import ranged as R
from optimiser.formats.schema import (
    CurrentDensity,
    Strict,
    Voltage,
)

# field constraints, read by the rest of the spec (:mod:`optimiser.inputs.spec`) too
Positive = Field(gt=0)
NonNegative = Field(ge=0)


def _known(kind, name):
    parts.find_part(kind, name)  # raises PartNotFound (a LookupError) naming close matches
    return name


class PositionOption(Strict):
    """One rectifier: a topology with its parts (names from the catalogue)."""

    topology: Literal["bridge", "centre-tap", "hybrid-bridge"]
    diode: Optional[str] = None
    valve: Optional[str] = None

    @field_validator("diode")
    @classmethod
    def _diode_known(cls, name):
        if name is not None:
            try:
                _known("diode", name)
            except LookupError as exc:
                raise ValueError(str(exc.args[0])) from None
        return name

    @field_validator("valve")
    @classmethod
    def _valve_known(cls, name):
        if name is not None:
            try:
                valve = parts.find_part("valve", name)
                valve.perveance  # noqa: B018 - a valve without a drop point cannot be simulated
            except LookupError as exc:
                raise ValueError(str(exc.args[0])) from None
        return name

    @model_validator(mode="after")
    def _parts_fit(self):
        t = self.topology
        if t == "bridge" and (self.valve is not None or self.diode is None):
            raise ValueError("a bridge takes four silicon diodes: give diode (a part name) and no "
                             "valve")
        if t == "hybrid-bridge" and (self.valve is None or self.diode is None):
            raise ValueError("a hybrid-bridge needs a valve (the positive pair) and a diode "
                             "(the negative pair)")
        if t == "centre-tap" and (self.valve is None) == (self.diode is None):
            raise ValueError("a centre-tap rectifier takes either a valve or a diode, not both")
        return self

    @property
    def label(self) -> str:
        """Short readable name, e.g. ``"centre-tap 5AR4"``."""
        named = " + ".join(p for p in (self.valve, self.diode) if p)
        return f"{self.topology} {named}"

    @property
    def centre_tapped(self) -> bool:
        return self.topology == "centre-tap"

    def members(self):
        return [self]


class RectifierOption(PositionOption):
    """A rectifier the search may pick, or ``switchable``: two positions on one transformer,
    selected by a switch, sharing the reservoir (both must use the HV winding alike: both
    centre-tap, or both bridges)."""

    topology: Literal["bridge", "centre-tap", "hybrid-bridge", "switchable"]
    positions: Optional[dict[str, PositionOption]] = None

    @model_validator(mode="after")
    def _parts_fit(self):
        if self.topology != "switchable":
            if self.positions is not None:
                raise ValueError("positions belong to a switchable rectifier only")
            return PositionOption._parts_fit(self)
        if not self.positions or len(self.positions) != 2:
            raise ValueError("a switchable rectifier needs exactly two positions, e.g. "
                             "{silicon: {...}, valve: {...}}")
        if self.diode is not None or self.valve is not None:
            raise ValueError("a switchable rectifier gives diode and valve per position")
        if len({p.centre_tapped for p in self.positions.values()}) != 1:
            raise ValueError("both positions must use the HV winding alike (both centre-tap, or "
                             "both bridges): they share one transformer")
        return self

    @property
    def label(self) -> str:
        if self.topology == "switchable":
            return "switchable " + " / ".join(f"{n}: {p.label}" for n, p in self.positions.items())
        return PositionOption.label.fget(self)

    @property
    def centre_tapped(self) -> bool:
        if self.topology == "switchable":
            return next(iter(self.positions.values())).centre_tapped
        return self.topology == "centre-tap"

    @property
    def has_valve(self) -> bool:
        return any(m.valve is not None for m in self.members())

    def members(self):
        """The rectifiers involved: the positions of a switchable pair, else this one."""
        return list(self.positions.values()) if self.topology == "switchable" else [self]


class VoltageRange(Strict):
    min: R("secondary_voltage")
    max: R("secondary_voltage")
    step: Annotated[Voltage, Positive] = 1.0

    @model_validator(mode="after")
    def _ordered(self):
        if self.max <= self.min:
            raise ValueError("max must be above min")
        return self


class CurrentRange(Strict):
    min: R("winding_current")
    max: R("winding_current")

    @model_validator(mode="after")
    def _ordered(self):
        if self.max <= self.min:
            raise ValueError("max must be above min")
        return self


class CurrentDensityRange(Strict):
    min: R("current_density")
    max: R("current_density")
    step: Annotated[CurrentDensity, Positive] = 0.05e6

    @model_validator(mode="after")
    def _ordered(self):
        if self.max <= self.min:
            raise ValueError("max must be above min")
        return self


class CapacitorChoice(Strict):
    """A capacitor series and the range of values the search may use from it."""

    series: str
    min: R("capacitance")
    max: R("capacitance")
    voltage_ratings: Optional[list[R("capacitor_voltage")]] = None

    @field_validator("series")
    @classmethod
    def _series_known(cls, name):
        try:
            _known("capacitor", name)
        except LookupError as exc:
            raise ValueError(str(exc.args[0])) from None
        return name

    @model_validator(mode="after")
    def _check(self):
        if self.max < self.min:
            raise ValueError("max must be at least min")
        series = parts.find_part("capacitor", self.series)
        made = [r.rated for r in series.voltage_ratings]
        if self.voltage_ratings is not None:
            missing = [v for v in self.voltage_ratings
                       if not any(math.isclose(v, m, rel_tol=1e-3) for m in made)]
            if missing:
                raise ValueError(f"series {self.series} is not made at "
                                 + ", ".join(f"{v:g} V" for v in missing)
                                 + "; made: " + ", ".join(f"{m:g} V" for m in made))
        if not self.values():
            raise ValueError(f"series {self.series} makes no value between the given min and max "
                             "at the allowed voltage ratings")
        return self

    def ratings(self):
        """The allowed voltage ratings of the series, ascending (VoltageRating models)."""
        series = parts.find_part("capacitor", self.series)
        out = [r for r in series.voltage_ratings if self.voltage_ratings is None or any(
            math.isclose(r.rated, v, rel_tol=1e-3) for v in self.voltage_ratings)]
        return sorted(out, key=lambda r: r.rated)

    def values(self) -> list[float]:
        """Every value the series makes at some allowed rating inside [min, max], ascending. [F]"""
        series = parts.find_part("capacitor", self.series)
        found = set()
        for r in self.ratings():
            for c in series.values(r.rated):
                if self.min * (1 - 1e-9) <= c <= self.max * (1 + 1e-9):
                    found.add(float(c))
        return sorted(found)


class ResistorOptions(Strict):
    min: Annotated[R("feed_resistance"), Positive]
    max: Annotated[R("feed_resistance"), Positive]
    series: Literal["E3", "E6", "E12", "E24"] = "E12"

    @model_validator(mode="after")
    def _check(self):
        if self.max < self.min:
            raise ValueError("max must be at least min")
        if not self.values():
            raise ValueError(f"no {self.series} value lies between min and max")
        return self

    def values(self) -> list[float]:
        """Preferred values inside [min, max], ascending. [ohm]"""
        lo, hi = math.floor(math.log10(self.min)), math.ceil(math.log10(self.max))
        vals = parts.e_series(self.series, range(lo, hi + 1))
        return [float(v) for v in vals if self.min * (1 - 1e-9) <= v <= self.max * (1 + 1e-9)]


class FeedOptions(Strict):
    """What may join a node to the one before it: a dropping resistor and/or named chokes."""

    resistance: Optional[ResistorOptions] = None
    chokes: list[str] = []

    @field_validator("chokes")
    @classmethod
    def _chokes_known(cls, names):
        for name in names:
            try:
                _known("choke", name)
            except LookupError as exc:
                raise ValueError(str(exc.args[0])) from None
        return names

    @model_validator(mode="after")
    def _something(self):
        if self.resistance is None and not self.chokes:
            raise ValueError("give a resistance range, chokes, or both")
        return self


class Choices(Strict):
    """What the search may vary.

    ``secondary_voltage`` is the HV winding's RMS voltage at its rated current, per conducting
    path (each half of a centre-tapped winding); ``hv_current`` the RMS current it is rated for
    (default: from half to three times the total full-power DC current).
    """

    secondary_voltage: VoltageRange
    hv_current: Optional[CurrentRange] = None
    rectifiers: list[RectifierOption] = Field(min_length=1)
    reservoir: CapacitorChoice
    filter: Optional[CapacitorChoice] = None
    feeds: dict[str, FeedOptions] = {}
    resistor_ratings: Optional[list[str]] = Field(default=None, min_length=1)

    @field_validator("resistor_ratings")
    @classmethod
    def _ratings_known(cls, names):
        for name in names or ():
            try:
                _known("resistor", name)
            except LookupError as exc:
                raise ValueError(str(exc.args[0])) from None
        return names


def _transformer_data():
    from optimiser.physics.transformer import load_transformer_data

    return load_transformer_data()


class TransformerChoices(Strict):
    """The physical transformer: what the search may pick, and how it is built.

    ``cores`` lists lamination names from ``cores.yaml`` (default: all); every catalogued stack
    of each is a choice. ``max_flux_density`` is the design flux density; keep it below the
    steel's limit (``steels.yaml``), which the finished transformer is checked against: whole
    turns and the highest primary tap put the real peak a little above the design figure.
    """

    primaries: Optional[list[R("mains_voltage")]] = None
    primary_arrangement: Literal["taps", "dual"] = "taps"
    cores: Optional[list[str]] = None
    steel: str
    max_flux_density: R("flux_density")
    current_density: CurrentDensityRange = CurrentDensityRange(min="2 A/mm^2", max="4.5 A/mm^2")
    insulation_class: Literal["A", "E", "B", "F", "H"] = "B"
    screen: bool = True
    wire: Literal["metric", "awg", "both"] = "metric"
    mounting: str = ""

    @field_validator("cores")
    @classmethod
    def _cores_known(cls, names):
        data = _transformer_data()
        for name in names or ():
            data.core_index(name)  # ValueError naming the known cores
        if names is not None and not names:
            raise ValueError("give at least one core, or leave cores out for all of them")
        return names

    @field_validator("steel")
    @classmethod
    def _steel_known(cls, name):
        _transformer_data().steel_index(name)
        return name
