"""Parts ratings: the check rows, the rectifier stress figure, and component life.

A check compares a worst-case figure with a rating. Its ratio is value/limit for a maximum
rating and limit/value for a minimum one, so ``ratio <= 1`` always means inside the rating.
Vectorised: every check is a column over a batch of designs, NaN where it does not apply.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import cached_property

import numpy as np

__all__ = ["CheckColumn", "Check", "check_ratio", "column", "rectifier_stress", "capacitor_life",
           "valve_cathode_loading"]


@dataclass(frozen=True)
class CheckColumn:
    """One check over a batch.

    Attributes
    ----------
    name : str
        Dotted name, e.g. ``valve.peak_plate_current`` or ``capacitor.plates.voltage``.
    what : str
        What is compared, in a builder's words.
    unit : str
        SI unit of value and limit.
    value, limit : ndarray (B,)
        Worst computed figure and the rating (NaN where the check does not apply).
    minimum : bool
        The rating is a least value (ratio = limit/value).
    source : list of str (B,)
        Where each design's limit comes from.
    rectifier : bool
        Counts towards the rectifier stress.
    """

    name: str
    what: str
    unit: str
    value: np.ndarray
    limit: np.ndarray
    minimum: bool
    source: list
    rectifier: bool = False
    #: (B,) the limit is the rating times this (1: no derating); ratio to the rating = ratio * it
    derating: np.ndarray = 1.0

    @cached_property
    def ratio(self) -> np.ndarray:
        return check_ratio(self.value, self.limit, self.minimum)


def check_ratio(value, limit, minimum=False) -> np.ndarray:
    """value/limit for a maximum rating, limit/value for a least one; NaN where either is missing
    (an infinite value, a figure that ran away, counts as far over). [-]"""
    value = np.asarray(value, float)
    limit = np.asarray(limit, float)
    with np.errstate(divide="ignore", invalid="ignore"):
        r = limit / value if minimum else value / limit
    return np.where(np.isfinite(limit) & np.isfinite(value) | np.isinf(value), r, np.nan)


@dataclass(frozen=True)
class Check:
    """One check of one design: a row of the verdict table.

    Attributes
    ----------
    name, what, unit, source : str
    value, limit, ratio : float
        Worst figure, rating, and value/limit (limit/value for a least rating). [unit], [-]
    passed : bool
        ratio <= 1.
    """

    name: str
    what: str
    unit: str
    value: float
    limit: float
    ratio: float
    passed: bool
    source: str
    #: the limit is the rating times this (1: no derating)
    derating: float = 1.0

    @property
    def rating_ratio(self) -> float:
        """value / the rating itself (the ratio to the derated limit times the derating)."""
        return self.ratio * self.derating

    def to_dict(self) -> dict:
        return {"name": self.name, "what": self.what, "unit": self.unit, "value": self.value,
                "limit": self.limit, "ratio": self.ratio, "passed": self.passed,
                "source": self.source, "derating": self.derating,
                "rating_ratio": self.rating_ratio}


def column(name, what, unit, value, limit, source, *, minimum=False, rectifier=False,
           derating=1.0):
    """Build a :class:`CheckColumn`, broadcasting value, limit and source over the batch;
    ``limit`` is the rating, the check's limit ``derating`` times it."""
    value = np.asarray(value, dtype=float)
    limit = np.broadcast_to(np.asarray(limit, dtype=float) * derating, value.shape).copy()
    if isinstance(source, str):
        source = [source] * value.shape[0]
    return CheckColumn(name=name, what=what, unit=unit, value=value, limit=limit,
                       minimum=minimum, source=list(source), rectifier=rectifier,
                       derating=np.broadcast_to(np.asarray(derating, float),
                                                value.shape).copy())


def rectifier_stress(columns) -> np.ndarray:
    """Worst actual-to-rated ratio over the rectifier's own ratings; <= 1 is inside. [-]

    NaN where no rectifier rating applies (a part given by parameters only).
    """
    ratios = [c.ratio for c in columns if c.rectifier]
    if not ratios:
        return np.array([])
    stack = np.vstack(ratios)
    with np.errstate(all="ignore"):
        worst = np.where(np.isnan(stack).all(axis=0), np.nan,
                         np.nanmax(np.where(np.isnan(stack), -np.inf, stack), axis=0))
    return worst


def capacitor_life(rated_life, rated_temperature, ambient, ripple_current, ripple_rating,
                   self_heating_at_rating):
    """Expected life of an electrolytic capacitor by the 10 degC rule with ripple self-heating.

    T_core = T_ambient + dT_rated * (I_ripple / I_rated)^2;  L = L0 * 2^((T_rated - T_core)/10).

    Parameters
    ----------
    rated_life : numeric
        Life at the rated temperature and rated ripple. [s]
    rated_temperature, ambient : numeric
        [degC]
    ripple_current, ripple_rating : numeric
        RMS ripple current and its rating. [A]
    self_heating_at_rating : numeric
        Core temperature rise at the rated ripple current. [K]

    Returns
    -------
    (life, core_temperature) : numeric
        [s], [degC]

    References
    ----------
    .. [1] Arrhenius "10 degC rule", L = L0 * 2^((T0 - T)/10), as published in capacitor
       makers' application notes (REFERENCES.md; common practice). Self-heating in proportion
       to I^2 follows from the ESR loss I^2 * ESR at a fixed thermal resistance.
    """
    core = ambient + self_heating_at_rating * (np.asarray(ripple_current) / ripple_rating) ** 2
    return rated_life * 2.0 ** ((rated_temperature - core) / 10.0), core


def valve_cathode_loading(dc_current, rated_dc_current):
    """Cathode loading of a rectifier valve and a relative life index.

    Loading = I_dc / I_dc,rated; the relative life index is its inverse (1 = run at its rating,
    2 = half loaded), the trade's rule that emission life falls as cathode current rises.

    Returns
    -------
    (loading, relative_life) : numeric
        [-], [-]

    References
    ----------
    .. [1] Common practice, no source: a rule of thumb, not a life model.
    """
    loading = np.asarray(dc_current) / rated_dc_current
    return loading, 1.0 / loading
