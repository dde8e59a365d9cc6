"""Whole turns: the lowest-voltage winding sets the volts per turn (pure functions on arrays).

Part of :mod:`optimiser.physics.transformer`; see the package docstring for the method.

A winding has a whole number of turns, so at some 0.3-1 V a turn a 6.3 V heater can miss its
voltage by several per cent, while the HV winding's hundreds of turns round finely. The
designer's rule of the trade: choose the lowest-voltage winding's whole turns first, rounding UP
(so the volts per turn, and with them the flux density, only fall), set the volts per turn from
it, then every other winding's turns and the primary's from that volts per turn. Where another
low-voltage winding then misses its target (a 12.6 V heater beside a 6.3 V one, a 5 V rectifier
heater beside a 6.3 V one), the lowest winding is given one turn more, then another, until every
winding lands within the aim (or the flux has fallen as far as the designer allows): the
volts per turn that suits all the small windings at once.

Every winding's turns are for the EMF it needs at rated load, u = V + I R (its own resistive drop
compensated), from the fixed point's resistances.
"""

from __future__ import annotations

import numpy as np

#: Each winding's on-load voltage is aimed within this fraction of its target (half the
#: check's 1 %, leaving room for the resistances' move when the turns change).
TURNS_AIM = 0.005
#: The most extra turns tried on the lowest-voltage winding beyond its rounded-up count.
MAX_EXTRA_TURNS = 8
#: The flux density may fall to 1 / MAX_FLUX_FALL of the design's to suit the small windings.
MAX_FLUX_FALL = 1.3


def whole_turns(ideal, emf_ratio, primary_turns, hold=None, least_primary=None, aim=TURNS_AIM,
                max_extra=MAX_EXTRA_TURNS, max_fall=MAX_FLUX_FALL):
    """Whole turns of every secondary and of the primary from the lowest-voltage winding.

    Parameters
    ----------
    ideal : array_like (S, n)
        Turns per conducting path each secondary needs at the design's volts per turn (its
        rated voltage plus its own resistive drop at rated current, over the volts per turn;
        not rounded); 0 where the winding is not wound. The lowest-voltage winding is the one
        with the fewest. [-]
    emf_ratio : array_like (S, n)
        Each secondary's EMF at rated load over its rated voltage, u / V = 1 + I R / V. [-]
    primary_turns : array_like (n,)
        The primary's (lowest tap's) turns at the design's volts per turn (need not be whole).
        [-]
    hold : tuple of array_like (n,), optional
        (index, turns): keep that winding as the lowest with those turns (a second round, after
        the resistances have moved with the first round's turns), only re-setting the volts per
        turn from its EMF and the other windings' turns from it.
    least_primary : array_like (n,), optional
        The fewest primary turns allowed (the design's own count, so that the flux density never
        rises above the design's).
    aim : float
        The largest |on-load voltage / target - 1| aimed at. [-]
    max_extra : int
        Most turns added to the lowest winding's rounded-up count to meet the aim.
    max_fall : float
        Largest factor the volts per turn (and the flux) may fall by to meet the aim. [-]

    Returns
    -------
    tuple
        (secondary turns per path (S, n), primary turns (n,), worst expected |error| (n,),
        (index, turns) of the lowest-voltage winding), the turns whole numbers; the error is each winding's on-load voltage against its target,
        error_s = (N_s N_p0 / (x_s N_p) - 1) u_s / V_s, with x_s the ideal turns, N_p0 and N_p
        the primary's turns before and after.

    References
    ----------
    .. [1] Common practice, no source: the heater winding's whole turns set the volts per turn;
       the primary's and the HV winding's many turns round finely.
    """
    x = np.asarray(ideal, float)
    ratio = np.asarray(emf_ratio, float)
    n_p0 = np.asarray(primary_turns, float)
    wound = x > 0
    S, n = x.shape
    cols = np.arange(n)
    if hold is None:
        lowest = np.argmin(np.where(wound, x, np.inf), axis=0)
    else:
        lowest, max_extra = np.asarray(hold[0], int), 0
    any_wound = wound.any(axis=0)
    x_low = np.where(any_wound, x[lowest, cols], 1.0)
    base = np.maximum(np.ceil(x_low - 1e-9), 1.0) if hold is None else np.asarray(hold[1], float)
    floor = 1.0 if least_primary is None else np.asarray(least_primary, float)
    best_turns = best_primary = best_error = best_low = None
    for k in range(max_extra + 1):
        n_low = base + k
        n_p = np.maximum(np.rint(n_p0 * n_low / x_low), floor)
        scale = n_p / n_p0
        turns = np.where(wound, np.maximum(np.rint(x * scale), 1.0), 0.0)
        turns[lowest, cols] = np.where(any_wound, n_low, 0.0)
        with np.errstate(divide="ignore", invalid="ignore"):
            error = np.where(wound, (turns / (x * scale) - 1.0) * ratio, 0.0)
        worst = np.max(np.abs(error), axis=0) if S else np.zeros(n)
        if k == 0:
            best_turns, best_primary, best_error, best_low = turns, n_p, worst, n_low
            continue
        allowed = scale <= max_fall
        better = allowed & (best_error > aim) & (worst < best_error)
        best_turns = np.where(better, turns, best_turns)
        best_primary = np.where(better, n_p, best_primary)
        best_error = np.where(better, worst, best_error)
        best_low = np.where(better, n_low, best_low)
    return best_turns, best_primary, best_error, (lowest, best_low)
