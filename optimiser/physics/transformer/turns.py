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

Every winding's turns are for the EMF it needs at rated load, its own resistive drop
compensated: V = N (e - I rho), e the volts per turn and rho its resistance per turn from the
fixed point's resistances (the resistance grows with the turns, so the drop is taken per turn).
"""

from __future__ import annotations

import numpy as np

#: Each winding's on-load voltage is aimed within this fraction of its target (under the
#: check's 1 %, leaving room for the resistances' move when the turns change: the second round
#: of :func:`optimiser.physics.transformer.population._solve` lands within about 0.05 % of what
#: it expects, in the designs tried).
TURNS_AIM = 0.008
#: The most extra turns tried on the lowest-voltage winding beyond its rounded-up count.
MAX_EXTRA_TURNS = 8
#: The flux density may fall to 1 / MAX_FLUX_FALL of the design's to suit the small windings.
MAX_FLUX_FALL = 1.3


def whole_turns(target, drop_per_turn, emf_primary, primary_turns, hold=None,
                least_primary=None, aim=TURNS_AIM, max_extra=MAX_EXTRA_TURNS,
                max_fall=MAX_FLUX_FALL):
    """Whole turns of every secondary and of the primary from the lowest-voltage winding.

    A winding of N turns per conducting path gives V = N (e - I rho) at rated load, e the volts
    per turn and I rho its own resistive drop per turn; so the lowest-voltage winding's whole
    turns N_L set e = V_L / N_L + I_L rho_L, the primary has N_p = E / e turns (rounded), and
    every other winding N_s = V_s / (e - I_s rho_s) (rounded).

    Parameters
    ----------
    target : array_like (S, n)
        Each secondary's rated voltage per conducting path at rated load; 0 where the winding is
        not wound. [V]
    drop_per_turn : array_like (S, n)
        Its resistive drop at rated current per turn, I R / N. [V]
    emf_primary : array_like (n,)
        The primary's EMF at rated load (the lowest tap's voltage less its resistive drop). [V]
    primary_turns : array_like (n,)
        The primary's (lowest tap's) turns the EMF was worked out for: E / primary_turns is the
        design's volts per turn. [-]
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
        (index, turns) of the lowest-voltage winding), the turns whole numbers; the error is
        each winding's on-load voltage against its target, N_s (E / N_p - I_s rho_s) / V_s - 1.

    References
    ----------
    .. [1] Common practice, no source: the heater winding's whole turns set the volts per turn;
       the primary's and the HV winding's many turns round finely.
    """
    v = np.asarray(target, float)
    d = np.asarray(drop_per_turn, float)
    e_p = np.asarray(emf_primary, float)
    n_p0 = np.asarray(primary_turns, float)
    wound = v > 0
    S, n = v.shape
    cols = np.arange(n)
    per_turn0 = e_p / n_p0
    if hold is None:
        lowest = np.argmin(np.where(wound, v, np.inf), axis=0)
    else:
        lowest, max_extra = np.asarray(hold[0], int), 0
    any_wound = wound.any(axis=0)
    v_low = np.where(any_wound, v[lowest, cols], 1.0)
    d_low = np.where(any_wound, d[lowest, cols], 0.0)
    if hold is None:
        base = np.maximum(np.ceil(v_low / np.maximum(per_turn0 - d_low, 1e-12) - 1e-9), 1.0)
    else:
        base = np.asarray(hold[1], float)
    floor = 1.0 if least_primary is None else np.asarray(least_primary, float)
    best_turns = best_primary = best_error = best_low = None
    for k in range(max_extra + 1):
        n_low = base + k
        per_turn = np.where(any_wound, v_low / n_low + d_low, per_turn0)
        n_p = np.maximum(np.rint(e_p / per_turn), floor)
        real = e_p / n_p  # volts per turn with whole primary turns
        net = np.maximum(real[None, :] - d, 1e-12)
        turns = np.where(wound, np.maximum(np.rint(v / net), 1.0), 0.0)
        turns[lowest, cols] = np.where(any_wound, n_low, 0.0)
        error = np.where(wound, turns * net / np.where(wound, v, 1.0) - 1.0, 0.0)
        worst = np.max(np.abs(error), axis=0) if S else np.zeros(n)
        if k == 0:
            best_turns, best_primary, best_error, best_low = turns, n_p, worst, n_low
            continue
        allowed = per_turn0 / real <= max_fall
        better = allowed & (best_error > aim) & (worst < best_error)
        best_turns = np.where(better, turns, best_turns)
        best_primary = np.where(better, n_p, best_primary)
        best_error = np.where(better, worst, best_error)
        best_low = np.where(better, n_low, best_low)
    return best_turns, best_primary, best_error, (lowest, best_low)
