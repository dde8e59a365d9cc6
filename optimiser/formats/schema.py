"""Building blocks for file schemas: unit-string fields and the strict base model.

Every physical value in a spec or design file is a unit string ("47 uF"); these annotated
types turn it into an SI float during validation, so models hold plain floats.
"""

from __future__ import annotations

from typing import Annotated

from pydantic import BaseModel, BeforeValidator, ConfigDict, Field

from optimiser.formats.units import parse_quantity

__all__ = [
    "Strict",
    "Voltage",
    "Current",
    "Resistance",
    "Capacitance",
    "Inductance",
    "Frequency",
    "Time",
    "Power",
    "Mass",
    "Length",
    "FluxDensity",
    "Temperature",
    "TemperatureRise",
    "Fraction",
    "Perveance",
    "CurrentDensity",
    "SpecificLoss",
    "PricePerMass",
    "unit_field",
    "unique_names",
]


class Strict(BaseModel):
    """Base for every file block: unknown keys are errors, values are immutable."""

    model_config = ConfigDict(extra="forbid", frozen=True)


def unique_names(items, what="node"):
    """Raise ValueError if two items share a ``name``; return the items (a field validator)."""
    seen = set()
    for item in items:
        if item.name in seen:
            raise ValueError(f"{what} name '{item.name}' is used twice")
        seen.add(item.name)
    return items


def unit_field(dimension: str, **kwargs):
    """An annotated float read from a unit string of ``dimension`` (see :mod:`optimiser.formats.units`)."""
    return Annotated[float, BeforeValidator(lambda v: parse_quantity(v, dimension)), Field(**kwargs)]


Voltage = unit_field("voltage")
Current = unit_field("current")
Resistance = unit_field("resistance")
Capacitance = unit_field("capacitance")
Inductance = unit_field("inductance")
Frequency = unit_field("frequency")
Time = unit_field("time")
Power = unit_field("power")
Mass = unit_field("mass")
Length = unit_field("length")
FluxDensity = unit_field("flux_density")
Temperature = unit_field("temperature")
TemperatureRise = unit_field("temperature_difference")
Fraction = unit_field("fraction")
Perveance = unit_field("perveance")
CurrentDensity = unit_field("current_density")
SpecificLoss = unit_field("specific_loss")
PricePerMass = unit_field("price_per_mass")
