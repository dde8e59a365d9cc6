"""Unit strings at the edges: parse "47 uF" into SI floats, format SI floats for people.

Inside Railwright every value is a plain SI float (V, A, ohm, F, H, s, Hz, W, kg, m, T, K).
Unit strings live only in spec/design files and reports. Parsing uses pint for the unit lookup,
with the number parsed by a regular expression and the unit lookup cached, because a full pint
parse costs ~250 us and a spec may hold hundreds of values.
"""

from __future__ import annotations

import math
import re

import numpy as np
from functools import lru_cache

__all__ = ["UnitError", "parse_quantity", "format_quantity", "round_significant", "DIMENSIONS"]


class UnitError(ValueError):
    """A unit string that cannot be read, or has the wrong dimension."""


# Name of each physical dimension used in files -> (pint unit that defines it, SI symbol shown).
DIMENSIONS: dict[str, tuple[str, str]] = {
    "voltage": ("volt", "V"),
    "current": ("ampere", "A"),
    "resistance": ("ohm", "ohm"),
    "capacitance": ("farad", "F"),
    "inductance": ("henry", "H"),
    "frequency": ("hertz", "Hz"),
    "time": ("second", "s"),
    "power": ("watt", "W"),
    "mass": ("kilogram", "kg"),
    "length": ("meter", "m"),
    "flux_density": ("tesla", "T"),
    "temperature": ("kelvin", "degC"),
    "temperature_difference": ("kelvin", "K"),
    "fraction": ("", ""),
    "perveance": ("ampere / volt ** 1.5", "A/V^1.5"),
    "current_density": ("ampere / meter ** 2", "A/m^2"),
    "specific_loss": ("watt / kilogram", "W/kg"),
    "price_per_mass": ("1 / kilogram", "/kg"),
}


@lru_cache(maxsize=64)
def _dimension_of(pint_unit: str) -> str:
    if not pint_unit:
        return ""
    return str(_registry().Quantity(1.0, pint_unit).dimensionality)


#: Longest unit string read ("4.7 kohm"; "2.5 A/mm^2"); a longer one is refused before parsing.
MAX_UNIT_STRING = 40

_NUMBER = re.compile(r"^\s*([+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?)\s*(.*?)\s*$")
# Unit words we refuse because pint reads them as something no builder means.
_TRAPS = {
    "k": "a bare 'k' is Boltzmann's constant to the unit parser; write e.g. '10 kohm'",
    "h": "'h' is hours; inductance is 'H'",
    "MF": "'MF' is megafarad; write 'uF'",
    "mF": "'mF' is millifarad; write e.g. '1000 uF' to avoid doubt",
    "kOhm": "write 'kohm' (or 'kΩ')",
    "KOhm": "write 'kohm' (or 'kΩ')",
    "Kohm": "write 'kohm' (or 'kΩ')",
    "M": "a bare 'M' is ambiguous; write e.g. '1 Mohm'",
}
_ALIASES = {"Ω": "ohm", "µ": "u", "μ": "u", "ohms": "ohm", "Ohm": "ohm", "°C": "degC", "℃": "degC"}


@lru_cache(maxsize=1)
def _registry():
    import pint

    return pint.UnitRegistry()


@lru_cache(maxsize=512)
def _unit_lookup(unit: str) -> tuple[float, str]:
    """Return (scale to SI, dimensionality string) for a unit word."""
    if unit == "%":
        return 0.01, ""
    q1 = _registry().Quantity(1.0, unit)
    return float(q1.to_base_units().magnitude), str(q1.dimensionality)


def _clean_unit(unit: str) -> str:
    for a, b in _ALIASES.items():
        unit = unit.replace(a, b)
    return unit


def parse_quantity(text, dimension: str, *, allow_bare_number: bool = False) -> float:
    """Parse a unit string such as ``"47 uF"`` into an SI float of the named dimension.

    Parameters
    ----------
    text : str or number
        The value as written in a file. A bare number is accepted only for dimensionless
        quantities, or when ``allow_bare_number`` (then it is taken as already SI).
    dimension : str
        One of :data:`DIMENSIONS`.

    Returns
    -------
    float
        The value in SI units (degC stays degC for temperatures).

    Raises
    ------
    UnitError
        With a message saying what was wrong and what is allowed.
    """
    if dimension not in DIMENSIONS:
        raise KeyError(dimension)
    pint_unit, si = DIMENSIONS[dimension]
    want = _dimension_of(pint_unit)
    if isinstance(text, bool):
        raise UnitError(f"expected a {dimension} such as '1 {si}'".rstrip() + f", got {text!r}")
    if isinstance(text, (int, float)):
        if dimension in ("fraction", "perveance") or allow_bare_number:
            value = float(text)
            if not math.isfinite(value):
                raise UnitError(f"value must be finite, got {text!r}")
            return value
        raise UnitError(f"a {dimension} needs a unit, e.g. '{text} {si}'; got the bare number {text!r}")
    if not isinstance(text, str):
        raise UnitError(f"expected a {dimension} as a string with a unit, got {type(text).__name__}")
    if len(text) > MAX_UNIT_STRING:
        raise UnitError(f"'{text[:20]}...' is {len(text):,} characters long; a value with its "
                        f"unit is at most {MAX_UNIT_STRING} (e.g. '47 uF')")
    if "," in text:
        raise UnitError(f"'{text}': use '.' as the decimal point and no thousands separator")
    m = _NUMBER.match(text)
    if not m:
        raise UnitError(f"'{text}' does not start with a number (expected e.g. '10 {si}')")
    number, unit = m.group(1), _clean_unit(m.group(2))
    value = float(number)
    if not math.isfinite(value):
        raise UnitError(f"'{text}' is not a finite number")
    if unit in _TRAPS:
        raise UnitError(f"'{text}': {_TRAPS[unit]}")
    if " " in unit and "/" not in unit and "*" not in unit:
        raise UnitError(f"'{text}': no spaces inside a unit (write e.g. '47 uF', not '47 u F')")
    if unit == "" and dimension not in ("fraction", "perveance") and not allow_bare_number:
        raise UnitError(f"'{text}' has no unit; a {dimension} needs one, e.g. '{number} {si}'")
    if dimension in ("temperature", "temperature_difference"):
        allowed = ("degC",) if dimension == "temperature" else ("K", "degC")
        if unit not in allowed:
            raise UnitError(f"'{text}': write a {dimension.replace('_', ' ')} in {' or '.join(allowed)}")
        return value
    try:
        scale, dim = _unit_lookup(unit) if unit else (1.0, "")
    except Exception:
        raise UnitError(f"'{text}': unknown unit '{unit}'") from None
    if unit == "" and dimension == "perveance":
        dim = want
    if dim != want:
        raise UnitError(f"'{text}' is not a {dimension} (expected a unit like '{si}')")
    result = value * scale
    if not math.isfinite(result):
        raise UnitError(f"'{text}' is out of range")
    return result


_PREFIXES = [(1e9, "G"), (1e6, "M"), (1e3, "k"), (1.0, ""), (1e-3, "m"), (1e-6, "u"), (1e-9, "n"), (1e-12, "p")]


def format_quantity(value: float, unit: str, digits: int = 3) -> str:
    """Format an SI float with an engineering prefix: ``format_quantity(4.7e-5, "F") -> "47 uF"``."""
    if value is None or not math.isfinite(value):
        return "n/a"
    if value == 0:
        return f"0 {unit}".strip()
    if unit in ("%", "", "-", "degC", "K", "dB"):
        return f"{value:.{digits}g} {unit}".strip()
    mag = abs(value)
    for scale, prefix in _PREFIXES:
        if mag >= scale * 0.9995:
            break
    else:
        scale, prefix = _PREFIXES[-1]
    shown = value / scale
    text = f"{shown:.{digits}g}"
    if "e" in text:
        text = f"{shown:.{digits}f}".rstrip("0").rstrip(".")
    return f"{text} {prefix}{unit}"


def round_significant(value, digits=3):
    """Round to significant figures (arrays too), so that a file holds exactly the value used."""
    value = np.asarray(value, float)
    safe = np.where(value == 0, 1.0, np.abs(value))
    factor = 10.0 ** (digits - 1 - np.floor(np.log10(safe)))
    return np.round(value * factor) / factor
