"""The shortest expected life of the parts that wear, on one scale of hours.

Two kinds of part wear out in an HV supply: electrolytic capacitors (their electrolyte dries at a
rate set by the core temperature) and a valve rectifier (its cathode's emission falls with use,
the faster the harder it is loaded). Both are put on one scale of hours:

- an electrolytic's life is the maker's rated life at its rated temperature, scaled by the
  10 degC rule at its worst core temperature (ambient plus ripple self-heating in proportion to
  (I_ripple / I_rated)^2, :func:`optimiser.physics.ratings.capacitor_life`);
- a valve rectifier's life is :data:`VALVE_LIFE_AT_RATING` hours at its full rated DC current,
  scaled by the inverse of its cathode loading (:func:`optimiser.physics.ratings.valve_cathode_loading`):
  at half its rated current it is taken to last twice as long.

The shortest of these is the design's life figure: the first part the builder will replace.
Silicon diodes, resistors and the transformer are not counted (run inside their ratings they
outlast the capacitors by far).
"""

from __future__ import annotations

import numpy as np

from optimiser.physics import ratings

__all__ = ["VALVE_LIFE_AT_RATING", "capacitor_life_hours", "valve_life_hours", "shortest"]

#: Life of a rectifier valve run continuously at its full rated DC current. [h]
#: Common practice, no source (from memory — verify): builders expect a few thousand hours
#: from a rectifier valve worked at its rating; 5000 h is taken here.
VALVE_LIFE_AT_RATING = 5000.0


def capacitor_life_hours(rated_life, rated_temperature, ambient, ripple_current, ripple_rating,
                         self_heating_at_rating):
    """Electrolytic life at a core temperature set by its ripple current. [h]

    Parameters as :func:`optimiser.physics.ratings.capacitor_life` (rated life in [s]).
    """
    life, _ = ratings.capacitor_life(rated_life, rated_temperature, ambient, ripple_current,
                                     ripple_rating, self_heating_at_rating)
    return np.asarray(life, float) / 3600.0


def valve_life_hours(dc_current, rated_dc_current, life_at_rating=VALVE_LIFE_AT_RATING):
    """A rectifier valve's life on the hours scale: life at rating over cathode loading. [h]

    Parameters
    ----------
    dc_current, rated_dc_current : numeric
        DC output current and the valve's rated DC current. [A]
    life_at_rating : float
        Hours at full rated current (:data:`VALVE_LIFE_AT_RATING`). [h]
    """
    _, relative = ratings.valve_cathode_loading(np.asarray(dc_current, float), rated_dc_current)
    return life_at_rating * relative


def shortest(*lives):
    """Least of life figures (arrays broadcast together), ignoring NaN (a part absent). [h]

    NaN where no part applies.
    """
    stack = np.stack(np.broadcast_arrays(*[np.asarray(x, float) for x in lives]))
    with np.errstate(all="ignore"):
        return np.where(np.isnan(stack).all(axis=0), np.nan,
                        np.nanmin(np.where(np.isnan(stack), np.inf, stack), axis=0))
