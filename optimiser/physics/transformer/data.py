"""Transformer parts data: cores, steels, wire and the price model, read from optimiser/parts/data.

Part of :mod:`optimiser.physics.transformer`; see the package docstring for the method.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache
from pathlib import Path
from typing import Any

import numpy as np
from pydantic import Field, field_validator, model_validator

from optimiser.formats.yamlfile import read_yaml
from optimiser.formats.schema import Strict, unit_field
from optimiser.parts.catalogue import DATA_DIR
from optimiser.physics.transformer.physics import (
    awg_diameter,
    steinmetz_fit,
)


_DATA_DIR = DATA_DIR


# --------------------------------------------------------------------------------------------
# Parts data files
# --------------------------------------------------------------------------------------------

_PositiveLength = unit_field("length", gt=0)
_NonNegativeLength = unit_field("length", ge=0)
_PositiveVoltage = unit_field("voltage", gt=0)
_NonNegativeCurrent = unit_field("current", ge=0)
_PositiveFrequency = unit_field("frequency", gt=0)
_PositiveFluxDensity = unit_field("flux_density", gt=0)
_PositiveSpecificLoss = unit_field("specific_loss", gt=0)
_PositiveCurrentDensity = unit_field("current_density", gt=0)
_Temperature = unit_field("temperature")
_NonNegativeRise = unit_field("temperature_difference", ge=0)
_Provenance = Field(min_length=1)


class CoreEntry(Strict):
    """One lamination size of ``cores.yaml``."""

    name: str = Field(min_length=1)
    tongue_width: _PositiveLength
    stacks: list[_PositiveLength] = Field(min_length=1)
    provenance: str = _Provenance


class BobbinSettings(Strict):
    wall_thickness: _NonNegativeLength
    tongue_clearance: _NonNegativeLength
    outer_clearance: _NonNegativeLength
    provenance: str = _Provenance


class LaminationSettings(Strict):
    stack_ratio_range: tuple[float, float]
    core_loss_building_factor: float = Field(ge=1.0)
    joint_equivalent_gap: _NonNegativeLength
    provenance: str = _Provenance

    @model_validator(mode="after")
    def _ordered(self):
        low, high = self.stack_ratio_range
        if not 0 < low <= high:
            raise ValueError(f"stack_ratio_range must be 0 < low <= high, got {self.stack_ratio_range}")
        return self


class CoresFile(Strict):
    bobbin: BobbinSettings
    lamination: LaminationSettings
    cores: list[CoreEntry] = Field(min_length=1)


class LossPoint(Strict):
    frequency: _PositiveFrequency
    flux_density: _PositiveFluxDensity
    loss: _PositiveSpecificLoss


class SteelEntry(Strict):
    """One grade of ``steels.yaml``."""

    name: str = Field(min_length=1)
    description: str
    max_flux_density: _PositiveFluxDensity
    density_kg_per_m3: float = Field(gt=0)
    stacking_factor: float = Field(gt=0, le=1)
    core_loss: list[LossPoint] = Field(min_length=3)
    magnetisation: list[tuple[float, float]] = Field(min_length=2)
    provenance: str = _Provenance

    @field_validator("magnetisation")
    @classmethod
    def _increasing(cls, points):
        b = [p[0] for p in points]
        h = [p[1] for p in points]
        if any(x <= 0 for x in b + h) or b != sorted(b) or h != sorted(h) or len(set(b)) != len(b):
            raise ValueError("magnetisation points must be positive with B and H strictly increasing")
        return points

    @model_validator(mode="after")
    def _two_frequencies(self):
        if len({p.frequency for p in self.core_loss}) < 2 or len({p.flux_density for p in self.core_loss}) < 2:
            raise ValueError(f"steel {self.name}: core_loss needs points at two frequencies and two flux densities")
        return self


class SteelsFile(Strict):
    steels: list[SteelEntry] = Field(min_length=1)


class AwgSettings(Strict):
    largest_gauge_number: int = Field(ge=0, le=56)
    smallest_gauge_number: int = Field(ge=0, le=56)
    provenance: str = _Provenance


class MetricSettings(Strict):
    nominal_diameters: list[_PositiveLength] = Field(min_length=1)
    provenance: str = _Provenance


class EnamelPoint(Strict):
    nominal_diameter: _PositiveLength
    grade_1: _NonNegativeLength
    grade_2: _NonNegativeLength


class EnamelBuild(Strict):
    points: list[EnamelPoint] = Field(min_length=1)
    provenance: str = _Provenance


class InsulationMaterial(Strict):
    name: str = Field(min_length=1)
    description: str
    thickness: _PositiveLength
    thermal_class: str
    provenance: str = _Provenance


class InsulationClass(Strict):
    name: str = Field(min_length=1)
    temperature: _Temperature
    provenance: str = _Provenance


class InterlayerRule(Strict):
    up_to_diameter: _PositiveLength
    material: str


class MaterialLayers(Strict):
    material: str
    layers: int = Field(default=1, ge=1)


class WindingPractice(Strict):
    lay_factor: float = Field(ge=1.0)
    bulge_factor: float = Field(ge=1.0)
    end_margin: _NonNegativeLength
    minimum_wire_diameter: _PositiveLength
    interlayer: list[InterlayerRule] = Field(min_length=1)
    interwinding: MaterialLayers
    outer_wrap: MaterialLayers
    screen: MaterialLayers
    current_density_range: tuple[_PositiveCurrentDensity, _PositiveCurrentDensity]
    hot_spot_allowance: _NonNegativeRise
    provenance: str = _Provenance

    @model_validator(mode="after")
    def _ordered(self):
        if self.current_density_range[0] >= self.current_density_range[1]:
            raise ValueError("current_density_range must be [low, high] with low < high")
        return self


class WireFile(Strict):
    awg: AwgSettings
    metric: MetricSettings
    enamel_build: EnamelBuild
    insulation_materials: list[InsulationMaterial] = Field(min_length=1)
    insulation_classes: list[InsulationClass] = Field(min_length=1)
    winding_practice: WindingPractice


class PriceExtras(Strict):
    screen: float = Field(ge=0)
    tapped_primary: float = Field(ge=0)
    centre_tap: float = Field(ge=0)


class PriceModel(Strict):
    """The user-editable price model of ``prices.yaml`` (currency-neutral cost units)."""

    currency: str
    base_cost: float = Field(ge=0)
    copper_per_kg: float = Field(ge=0)
    steel_per_kg: float = Field(ge=0)
    labour_per_winding: float = Field(ge=0)
    extras: PriceExtras
    provenance: str = _Provenance


@dataclass(frozen=True)
class WireTable:
    """Wire sizes offered to the wire choice, ascending bare diameter."""

    diameters: np.ndarray  # [m]
    labels: tuple[str, ...]


@dataclass(frozen=True)
class TransformerData:
    """Everything the transformer model reads from the data files, validated and in SI.

    Attributes
    ----------
    cores, bobbin, lamination : from ``cores.yaml``
    steels : from ``steels.yaml``
    wire : from ``wire.yaml``
    prices : from ``prices.yaml``
    tongue_widths : np.ndarray
        Tongue width of every core, in file order. [m]
    steinmetz : np.ndarray
        Per steel (k, alpha, beta) of P = k f^alpha B^beta, shape (n_steels, 3). [W/kg, -, -]
    wire_tables : dict
        ``"metric"``, ``"awg"``, ``"both"`` -> :class:`WireTable`.
    """

    cores: tuple[CoreEntry, ...]
    bobbin: BobbinSettings
    lamination: LaminationSettings
    steels: tuple[SteelEntry, ...]
    wire: WireFile
    prices: PriceModel
    tongue_widths: np.ndarray
    steinmetz: np.ndarray
    wire_tables: dict

    def core_index(self, name: str) -> int:
        """Index of the core called ``name``; ``ValueError`` naming the known cores otherwise."""
        for i, core in enumerate(self.cores):
            if core.name == name:
                return i
        raise ValueError(f"unknown core {name!r}; known cores: {', '.join(c.name for c in self.cores)}")

    def steel_index(self, name: str) -> int:
        """Index of the steel called ``name``; ``ValueError`` naming the known steels otherwise."""
        for i, steel in enumerate(self.steels):
            if steel.name == name:
                return i
        raise ValueError(f"unknown steel {name!r}; known steels: {', '.join(s.name for s in self.steels)}")

    def material(self, name: str) -> InsulationMaterial:
        for m in self.wire.insulation_materials:
            if m.name == name:
                return m
        known = ", ".join(m.name for m in self.wire.insulation_materials)
        raise ValueError(f"unknown insulation material {name!r}; known: {known}")

    def class_temperature(self, insulation_class: str) -> float:
        """Thermal class temperature of an insulation class letter. [degC]"""
        for c in self.wire.insulation_classes:
            if c.name == insulation_class:
                return c.temperature
        known = ", ".join(c.name for c in self.wire.insulation_classes)
        raise ValueError(f"insulation_class must be one of {known}, got {insulation_class!r}")


def _read_yaml(path: Path) -> Any:
    return read_yaml(path)[0]


def _wire_tables(wire: WireFile) -> dict:
    minimum = wire.winding_practice.minimum_wire_diameter
    thin, thick = wire.awg.largest_gauge_number, wire.awg.smallest_gauge_number
    gauges = np.arange(thin, thick - 1, -1)
    awg = [(float(awg_diameter(n)), f"AWG {n}") for n in gauges]
    metric = [(d, f"{d * 1e3:.3f} mm") for d in sorted(wire.metric.nominal_diameters)]
    tables = {}
    for system, entries in (("awg", awg), ("metric", metric), ("both", sorted(awg + metric))):
        kept = [(d, label) for d, label in entries if d >= minimum]
        if not kept:
            raise ValueError(f"wire.yaml: no {system} wire size is at least the minimum wire diameter")
        tables[system] = WireTable(np.array([d for d, _ in kept]), tuple(label for _, label in kept))
    return tables


#: The user's own folder of transformer data files (see :func:`use_user_folder`).
_USER_DIR: Path | None = None
DATA_FILES = ("cores.yaml", "steels.yaml", "wire.yaml", "prices.yaml")


def use_user_folder(directory) -> None:
    """Take transformer data files from the user's own folder from now on.

    Each of ``cores.yaml``, ``steels.yaml``, ``wire.yaml`` and ``prices.yaml`` found there
    replaces the bundled file of that name (copy the bundled one and edit it: add your own cores,
    steels, prices); the others stay bundled. A design or spec file names the folder under
    ``transformer_data:``. ``None`` goes back to the bundled files.
    """
    global _USER_DIR
    if directory is None:
        _USER_DIR = None
        return
    folder = Path(directory).resolve()
    if not folder.is_dir():
        raise ValueError(f"{folder}: transformer data folder not found")
    if not any((folder / name).is_file() for name in DATA_FILES):
        raise ValueError(f"{folder}: holds none of {', '.join(DATA_FILES)}")
    _USER_DIR = folder


def _file(directory: Path, name: str) -> Path:
    if _USER_DIR is not None and directory == _DATA_DIR and (_USER_DIR / name).is_file():
        return _USER_DIR / name
    return directory / name


def _load(directory: Path) -> TransformerData:
    cores = CoresFile.model_validate(_read_yaml(_file(directory, "cores.yaml")))
    steels = SteelsFile.model_validate(_read_yaml(_file(directory, "steels.yaml")))
    wire = WireFile.model_validate(_read_yaml(_file(directory, "wire.yaml")))
    prices = PriceModel.model_validate(_read_yaml(_file(directory, "prices.yaml")))
    fits = []
    for steel in steels.steels:
        pts = steel.core_loss
        fits.append(steinmetz_fit([p.frequency for p in pts], [p.flux_density for p in pts], [p.loss for p in pts]))
    data = TransformerData(
        cores=tuple(cores.cores),
        bobbin=cores.bobbin,
        lamination=cores.lamination,
        steels=tuple(steels.steels),
        wire=wire,
        prices=prices,
        tongue_widths=np.array([c.tongue_width for c in cores.cores]),
        steinmetz=np.array(fits),
        wire_tables=_wire_tables(wire),
    )
    practice = wire.winding_practice
    for name in [r.material for r in practice.interlayer] + [
        practice.interwinding.material,
        practice.outer_wrap.material,
        practice.screen.material,
    ]:
        data.material(name)
    return data


@lru_cache(maxsize=8)
def _load_cached(directory: str, user_folder: str) -> TransformerData:
    del user_folder  # part of the cache key: the files _load picks depend on it
    return _load(Path(directory))


def load_transformer_data(directory: str | Path | None = None) -> TransformerData:
    """Read and validate ``cores.yaml``, ``steels.yaml``, ``wire.yaml`` and ``prices.yaml``.

    Parameters
    ----------
    directory : path, optional
        Folder holding the four files; the package's ``optimiser/parts/data`` when omitted. Results are
        cached per folder, so edit-and-reload needs a new process.
    """
    return _load_cached(str(Path(directory) if directory is not None else _DATA_DIR),
                        str(_USER_DIR or ""))
