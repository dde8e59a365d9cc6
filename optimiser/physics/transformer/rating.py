"""The one definition of a designed transformer's rating: each winding's rated voltage and current,
the VA rating and the primary's VA. Every output (order sheet, parts list, ``pareto.csv``,
summary, report) reads these functions and nothing else.

Part of :mod:`optimiser.physics.transformer`; see the package docstring for the method.

Definitions
-----------
- A secondary's **rated voltage** is its RMS voltage per conducting path at rated current as
  built, with its whole-number turns (the figure the winder will measure), not the target it was
  designed for; the target and the difference are given beside it.
- A secondary's **rated current** is its RMS current per conducting path.
- The **VA rating** is the sum over the secondaries of rated voltage x rated current x conducting
  paths (both halves of a centre-tapped HV winding count, as the trade rates it).
- The **primary VA** is the lowest primary (tap) voltage x the primary RMS current at rated load;
  it exceeds the VA rating by the losses and the magnetising current.
- A winding's **voltage error** is |rated voltage as built / target - 1|; the design's is the worst
  winding's (:func:`worst_winding_error`), held within :data:`WINDING_VOLTAGE_TOLERANCE` by the
  check ``transformer.winding_voltage`` and named on the order sheet where it is not.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

#: Each winding's on-load voltage as built within this fraction of its target (the check's limit
#: and the order sheet's warning; common practice, no source).
WINDING_VOLTAGE_TOLERANCE = 0.01


@dataclass(frozen=True)
class WindingRating:
    """Rating of one secondary (scalars for one design, arrays for a population).

    Attributes
    ----------
    name, role : str
    voltage : float
        Rated voltage as built, RMS per conducting path at rated current. [V]
    target : float
        The voltage the winding was designed for. [V]
    error : float
        voltage / target - 1. [-]
    current : float
        RMS per conducting path. [A]
    paths : int
        Conducting paths (2 for a centre-tapped HV winding). [-]
    va : float
        voltage x current x paths. [VA]
    """

    name: str
    role: str
    voltage: object
    target: object
    error: object
    current: object
    paths: object
    va: object


def winding_ratings(design) -> list[WindingRating]:
    """Rated voltage, current and VA of every secondary of a design (or a population)."""
    out = []
    for w in design.windings[1:]:
        target = np.asarray(w.rated_voltage, float)
        voltage = np.asarray(w.loaded_voltage, float)
        with np.errstate(all="ignore"):
            error = np.where(target > 0, voltage / np.where(target > 0, target, 1.0) - 1.0, 0.0)
        va = voltage * np.asarray(w.rms_current, float) * np.asarray(w.conducting_paths, float)
        scalar = target.ndim == 0
        conv = (lambda x: float(x)) if scalar else (lambda x: x)
        out.append(WindingRating(w.name, w.role, conv(voltage), conv(target), conv(error),
                                 conv(np.asarray(w.rms_current, float)), w.conducting_paths,
                                 conv(va)))
    return out


def worst_winding_error(design):
    """The worst secondary's |rated voltage as built / target - 1| and its name, per design.

    Returns
    -------
    tuple
        (error [-], name): floats and str for one design, arrays (n,) for a population; 0 and
        "" where no secondary is wound.
    """
    ratings = winding_ratings(design)
    if not ratings:
        return (0.0, "") if np.ndim(design.primary_rms_current) == 0 else (
            np.zeros(np.shape(design.primary_rms_current)), np.array([""] * np.size(
                design.primary_rms_current)))
    errors = np.abs(np.stack([np.asarray(r.error, float) for r in ratings]))
    k = np.argmax(errors, axis=0)
    names = np.array([r.name for r in ratings])[k]
    worst = np.take_along_axis(errors, np.expand_dims(k, 0), axis=0)[0]
    if errors.ndim == 1:
        return float(worst), str(names)
    return worst, names


def winding_error_by_design(built) -> tuple:
    """:func:`worst_winding_error` of each of a list of designs (None: no physical build, NaN).

    Returns
    -------
    tuple
        (errors (n,) [-], list of winding names, "" where there is none).
    """
    values, names = [], []
    for t in built:
        error, name = (np.nan, "") if t is None else worst_winding_error(t)
        values.append(error)
        names.append(name)
    return np.array(values, float), names


def va_rating(design):
    """The VA rating: rated voltage x current x paths summed over the secondaries. [VA]"""
    total = sum(np.asarray(r.va, float) for r in winding_ratings(design))
    return float(total) if np.ndim(total) == 0 else total


def primary_va(design):
    """Lowest primary voltage x primary RMS current at rated load. [VA]"""
    value = design.primary_voltages[0] * np.asarray(design.primary_rms_current, float)
    return float(value) if np.ndim(value) == 0 else value


def turns_either_side(design, winding) -> tuple:
    """Whole turns just below and just above what a winding's target voltage needs, with the
    voltage each gives at rated current (the design's own primary EMF and resistance per turn).

    V(N) = N (E / N_p - I r_turn), E the primary EMF at rated load, r_turn the winding's hot
    resistance per turn of one conducting path.

    Returns
    -------
    tuple
        ((turns below, volts), (turns above, volts)) per conducting path.
    """
    primary = design.windings[0]
    ratio = winding.turns_per_path / primary.turns_per_path
    e_loaded = (winding.loaded_voltage + winding.rms_current * winding.resistance_hot) / ratio
    per_turn = (e_loaded / primary.turns_per_path
                - winding.rms_current * winding.resistance_hot / winding.turns_per_path)
    ideal = winding.rated_voltage / per_turn
    low, high = max(math.floor(ideal), 1), max(math.ceil(ideal), 1)
    if high == low:
        high = low + 1
    return (low, low * per_turn), (high, high * per_turn)
