"""The range of every physical field that makes sense for a valve amplifier's HV supply.

A value outside its range is refused with the range in the message ("1 MHz is outside
25 Hz..400 Hz, the range of a mains frequency"), so a slip of a prefix (``uF`` for ``mF``,
``kV`` for ``V``) is caught before anything is simulated, and nothing a user writes can make
the simulation run for minutes (a 1 MHz mains, an hour-long sag step). The ranges are wide:
they bound what any mains-powered valve amplifier's supply could use, not what is good design.
Every range is common practice, no source, unless its row says otherwise.

Each range is also stated in the JSON schema of the field (``minimum``, ``maximum``, ``unit``;
see ``Design.model_json_schema()``).
"""

from __future__ import annotations

from functools import lru_cache
from typing import Annotated

from pydantic import AfterValidator, BeforeValidator, Field

from optimiser.formats.units import DIMENSIONS, format_quantity, parse_quantity

__all__ = ["RANGES", "ranged", "out_of_range"]

#: name -> (dimension, lowest, highest, what it is). SI units (degC for temperatures).
RANGES: dict[str, tuple[str, float, float, str]] = {
    # mains: 100 V (Japan) to 240 V (UK, Australia) nominal, with room for odd local supplies;
    # 25 Hz (old railway and industrial supplies) to 400 Hz (aircraft and ship supplies)
    "mains_voltage": ("voltage", 80.0, 280.0, "a mains voltage"),
    "mains_frequency": ("frequency", 25.0, 400.0, "a mains frequency"),
    # the HV winding, per conducting path: from a low-voltage preamp supply to a large
    # transmitting-valve amplifier
    "secondary_voltage": ("voltage", 10.0, 2000.0, "an HV secondary voltage"),
    "secondary_resistance": ("resistance", 0.0, 10e3, "a winding resistance"),
    "leakage_inductance": ("inductance", 0.0, 1.0, "a leakage inductance"),
    "winding_current": ("current", 1e-3, 10.0, "a winding current rating"),
    # B+ nodes
    "bplus_voltage": ("voltage", 1.0, 2000.0, "a B+ voltage"),
    "bplus_window": ("voltage", 0.01, 1000.0, "a B+ window"),
    "ripple": ("voltage", 1e-6, 1000.0, "a ripple voltage"),
    "load_current": ("current", 0.0, 5.0, "a B+ load current"),
    "load_resistance": ("resistance", 10.0, 100e6, "a load resistance"),
    "capacitance": ("capacitance", 10e-9, 0.1, "a B+ capacitor"),
    "esr": ("resistance", 0.0, 1e3, "a capacitor ESR"),
    "capacitor_voltage": ("voltage", 1.0, 10e3, "a capacitor's rated voltage"),
    "feed_resistance": ("resistance", 0.0, 10e6, "a dropping resistance"),
    "feed_inductance": ("inductance", 0.0, 200.0, "a choke's inductance"),
    "power_rating": ("power", 1e-3, 1e3, "a power rating"),
    "current_rating": ("current", 1e-4, 10.0, "a current rating"),
    "bleeder": ("resistance", 100.0, 1e9, "a bleeder resistor"),
    # rectifier models: SPICE saturation currents of rectifier diodes lie near 1e-14..1e-7 A;
    # Child-Langmuir perveances of rectifier valves near 1e-4..1e-2 A/V^1.5
    "saturation_current": ("current", 1e-20, 1e-3, "a diode saturation current"),
    "diode_resistance": ("resistance", 0.0, 1e3, "a diode series resistance"),
    "perveance": ("perveance", 1e-7, 1.0, "a valve perveance"),
    # conditions
    "ambient": ("temperature", -40.0, 85.0, "an ambient temperature"),
    "self_heating": ("temperature_difference", 1e-3, 60.0, "a capacitor self-heating"),
    "warm_up": ("time", 0.0, 600.0, "a warm-up time"),
    "safe_voltage": ("voltage", 1.0, 1000.0, "a safe voltage"),
    "discharge_limit": ("time", 1e-3, 3600.0, "a discharge time limit"),
    # the sag step is simulated cycle by cycle: ten seconds each way is far beyond any
    # amplifier's sag, and keeps one design's step under a second
    "sag_step": ("time", 10e-3, 10.0, "a sag-test hold or release time"),
    "sag_time": ("time", 0.0, 10.0, "a sag attack or recovery time"),
    # other windings
    "heater_voltage": ("voltage", 1.0, 200.0, "a heater winding voltage"),
    "heater_current": ("current", 0.0, 50.0, "a heater winding current"),
    "bias_voltage": ("voltage", 1.0, 1000.0, "a bias winding voltage"),
    "bias_current": ("current", 0.0, 2.0, "a bias winding current"),
    # transformer build: grain-oriented steels saturate near 2 T, and below 0.1 T a core is
    # absurdly large; copper windings run at 0.5..10 A/mm^2
    "flux_density": ("flux_density", 0.1, 2.0, "a design flux density"),
    "current_density": ("current_density", 0.3e6, 15e6, "a winding current density"),
}


def out_of_range(value: float, name: str) -> str | None:
    """The reason ``value`` is outside the range ``name``, or None when inside."""
    dimension, low, high, what = RANGES[name]
    if low <= value <= high:
        return None
    unit = DIMENSIONS[dimension][1]

    def shown(x):
        if dimension in ("fraction", "temperature", "temperature_difference"):
            return f"{x:g} {unit}".strip()
        return format_quantity(x, unit)

    return f"{shown(value)} is outside {shown(low)}..{shown(high)}, the range of {what}"


@lru_cache(maxsize=None)
def ranged(name: str):
    """The annotated float type of a field read as a unit string and held to ``RANGES[name]``."""
    dimension, low, high, _ = RANGES[name]

    def check(value: float) -> float:
        reason = out_of_range(value, name)
        if reason:
            raise ValueError(reason)
        return value

    return Annotated[float, BeforeValidator(lambda v: parse_quantity(v, dimension)),
                     AfterValidator(check),
                     Field(json_schema_extra={"minimum": low, "maximum": high,
                                              "unit": DIMENSIONS[dimension][1]})]
