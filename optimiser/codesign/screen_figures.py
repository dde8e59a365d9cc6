"""The screen's figures of a population: closed-form steady state, switch-on, sag times.

Each row is one design and switch position (:meth:`RectifierOptions.rows`). The figures the
checks read are gathered into a :class:`optimiser.assessment.checks.CheckFigures`, the same
container the full assessment fills from its simulation, so both are checked by one table.
"""

from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np

from optimiser.assessment import checks as check_table
from optimiser.assessment.steady_state import LEAKAGE_CONDUCTANCE, MIN_PATH_RESISTANCE
from optimiser.physics import analytic
from optimiser.physics import life as wear
from optimiser.physics import ladder
from optimiser.physics import transients
from optimiser.physics.rectifier import PathElements

__all__ = ["CORNERS", "Rows", "corners", "switch_on", "check_figures", "shortest_life",
           "sag_times"]

#: Corners the constraints read: (name, mains at its high corner, capacitors at high tolerance,
#: loads).
CORNERS = (("nominal_idle", False, "idle"), ("nominal_full", False, "full"),
           ("high_full", True, "full"), ("high_none", True, "none"))


@dataclass(frozen=True)
class Rows:
    """What the screen's figures are computed from, one row per design and switch position.

    Attributes
    ----------
    owner, position : ndarray of int (R,)
        The design and the flat rectifier position of each row.
    elements : dict of str -> ndarray (R,)
        The rectifier path's elements (fields of :class:`PathElements`).
    topology : ndarray of str (R,)
    hv_voltage, hv_resistance, hv_leakage_inductance : ndarray (R,)
        The HV winding per plate: open-circuit RMS [V], series resistance [ohm], leakage [H].
    capacitance, esr, feed_resistance, feed_inductance, bleeder : ndarray (R, N)
        [F], [ohm], [ohm], [H], [ohm]
    """

    owner: np.ndarray
    position: np.ndarray
    elements: dict
    topology: np.ndarray
    hv_voltage: np.ndarray
    hv_resistance: np.ndarray
    hv_leakage_inductance: np.ndarray
    capacitance: np.ndarray
    esr: np.ndarray
    feed_resistance: np.ndarray
    feed_inductance: np.ndarray
    bleeder: np.ndarray


def corners(r: Rows, high, tol_plus, idle, full, frequency):
    """Steady state at every corner of :data:`CORNERS`, all in one call of
    :func:`optimiser.physics.analytic.steady_state`.

    Returns
    -------
    (figures, stacked, failed)
        Figures per corner name; the corners' ladder values stacked (corner by corner);
        rows the screen could not solve at some corner (R,).
    """
    rows, n = r.capacitance.shape
    corner_values, corner_peak = [], []
    for _, at_high, loads in CORNERS:
        scale = high if at_high else 1.0
        c_scale = (1 + tol_plus) if at_high else 1.0
        current = {"idle": idle, "full": full, "none": 0.0 * full}[loads]
        corner_values.append(ladder.LadderValues(
            path_resistance=np.maximum(r.hv_resistance, MIN_PATH_RESISTANCE),
            path_inductance=r.hv_leakage_inductance,
            capacitance=r.capacitance * c_scale, esr=r.esr,
            feed_resistance=r.feed_resistance, feed_inductance=r.feed_inductance,
            load_conductance=LEAKAGE_CONDUCTANCE + 1.0 / r.bleeder,
            load_current=np.broadcast_to(current, (rows, n)).copy()))
        corner_peak.append(np.sqrt(2.0) * r.hv_voltage * scale)
    stacked = ladder.LadderValues(*(np.concatenate([getattr(v, f) for v in corner_values])
                                    for f in ladder.LadderValues.__dataclass_fields__))
    reps = len(CORNERS)
    elements = PathElements(**{f: np.tile(v, reps) for f, v in r.elements.items()})
    figs = analytic.steady_state(stacked, elements, np.concatenate(corner_peak),
                                 np.full(rows * reps, frequency), np.tile(r.topology, reps))
    f = {name: {key: value[i * rows:(i + 1) * rows] for key, value in figs.items()}
         for i, (name, _, _) in enumerate(CORNERS)}
    failed = ~np.all([f[c]["converged"] for c, _, _ in CORNERS], axis=0)
    return f, stacked, failed


def switch_on(r: Rows, f, high, tol_plus, c_plus, frequency, safe_voltage):
    """The surge into the empty reservoir (R,) [A], each node's charge-up peak (R, N) [V] (an LC
    section's overshoot from the second-order step, an RC one following its input), and each
    capacitor's discharge time through its own bleeder (R, N) [s]."""
    n = r.capacitance.shape[1]
    hn = f["high_none"]
    high_c = r.capacitance * (1 + tol_plus)
    surge_i, surge_v = analytic.surge(np.sqrt(2.0) * r.hv_voltage * high, frequency,
                                      r.hv_resistance, r.hv_leakage_inductance, high_c[:, 0],
                                      r.esr[:, 0], PathElements(**r.elements))
    steady_peak = hn["peak_voltage"]
    charge = steady_peak.copy()
    charge[:, 0] = np.maximum(steady_peak[:, 0], surge_v)
    rise = np.maximum(r.hv_resistance, MIN_PATH_RESISTANCE) * high_c[:, 0]
    for k in range(1, n):
        lk, rk, ck = r.feed_inductance[:, k], r.feed_resistance[:, k] + r.esr[:, k], high_c[:, k]
        excess = charge[:, k - 1] - steady_peak[:, k - 1]
        choke = lk > 0
        ring = analytic.choke_overshoot(lk, rk, ck, rise) * charge[:, k - 1]
        follow = excess / np.sqrt(1.0 + (2 * np.pi * frequency * rk * ck) ** 2)
        charge[:, k] = steady_peak[:, k] + np.where(choke, ring, follow)
    discharge = (r.bleeder * c_plus
                 * np.log(np.maximum(hn["dc_voltage"], safe_voltage) / safe_voltage))
    return surge_i, charge, discharge


def check_figures(binding, options, r: Rows, f, switch, tr, cap, feed, bleeder_power,
                  hv_rated_current, tol_plus, bleeder_element_voltage):
    """The rows' figures for the check table (:class:`check_table.CheckFigures`);
    ``bleeder_power``, ``bleeder_element_voltage`` (B, N) of each design's bleeder class.

    The search's designs never share a heater winding with the rectifier valve (see
    :meth:`CoDesign._rectifier_model`), so that check never applies here.
    """
    surge_i, charge, discharge = switch
    cond = binding.conditions
    rows = len(r.owner)
    o, p = r.owner, r.position
    n = r.capacitance.shape[1]
    return check_table.CheckFigures(
        node_names=tuple(binding.node_names), fed=(False,) + (True,) * (n - 1),
        high_none=f["high_none"], high_full=f["high_full"], high_idle=None,
        surge_current=surge_i, charge_peak=charge, discharge_time=discharge,
        hv_voltage=r.hv_voltage, hv_resistance=r.hv_resistance,
        hv_leakage_inductance=r.hv_leakage_inductance,
        frequency=np.full(rows, binding.spec.mains.frequency),
        mains_high=np.full(rows, cond.mains_high),
        transformer_tolerance=np.full(rows, cond.transformer_tolerance),
        silicon_piv_margin=np.full(rows, cond.silicon_piv_margin),
        discharge_time_limit=np.full(rows, cond.discharge_time_limit),
        temperature_rise=tr["temperature_rise"][o],
        temperature_rise_limit=tr["temperature_rise_limit"][o],
        build_ratio=tr["build_ratio"][o], flux_density=tr["flux_density"][o],
        flux_density_limit=tr["flux_density_limit"][o],
        winding_voltage_error=tr["winding_voltage_error"][o],
        hv_rated_current=hv_rated_current[o],
        has_valve=options.has_valve[p], has_diode=options.has_diode[p],
        heater_shared=np.zeros(rows, bool), valves=options.valves[p],
        rectifier_ratings={key: v[p] for key, v in options.ratings.items()},
        capacitance=r.capacitance, capacitance_plus=np.full(rows, tol_plus),
        capacitor_rated_voltage=cap["rated"][o], capacitor_surge_rating=cap["surge"][o],
        capacitor_ripple_rating=cap["ripple"][o],
        feed_resistance=r.feed_resistance, feed_inductance=r.feed_inductance,
        feed_power_rating=feed["power"][o], feed_current_rating=feed["current"][o],
        bleeder_resistance=r.bleeder, bleeder_power_rating=bleeder_power[o],
        bleeder_element_voltage=bleeder_element_voltage[o],
        capacitor_voltage_derating=np.full(rows, cond.capacitor_voltage_derating),
        resistor_power_derating=np.full(rows, cond.resistor_power_derating))


def shortest_life(f, r: Rows, options, series, ripple_rating, cond):
    """Shortest part life per row [h] (R,), as the full assessment reckons it
    (:mod:`optimiser.physics.life`): each capacitor at the highest ripple current of the
    screen's corners, the valve rectifier at high mains, full power.

    Parameters
    ----------
    series : sequence of capacitor series (N,)
    ripple_rating : ndarray (R, N)
        Each capacitor's ripple current rating. [A]
    cond : Conditions
    """
    ripple = np.maximum.reduce([f[c]["capacitor_rms_current"] for c, _, _ in CORNERS])
    lives = [wear.capacitor_life_hours(sr.rated_life, sr.rated_temperature, cond.ambient,
                                       ripple[:, k], ripple_rating[:, k],
                                       cond.ripple_self_heating)
             for k, sr in enumerate(series)]
    rated = options.ratings["valve.max_dc_current"][r.position]
    with np.errstate(all="ignore"):
        valve = wear.valve_life_hours(2 * f["high_full"]["rectifier_average_current"], rated)
    lives.append(np.where(options.has_valve[r.position], valve, np.nan))
    return wear.shortest(*lives)


def sag_times(f, stacked, rows, n, frequency, idle, full, hold, release):
    """Attack and recovery times (R, N) from the cycle-averaged circuit: each row's
    rectifier as the regulation line through its nominal idle and full-power figures
    (:func:`optimiser.physics.transients.averaged_sag_step`)."""
    f_idle, f_full = f["nominal_idle"], f["nominal_full"]
    v_idle, v_full = f_idle["dc_voltage"][:, 0], f_full["dc_voltage"][:, 0]
    i_idle = 2.0 * f_idle["rectifier_average_current"]
    i_full = 2.0 * f_full["rectifier_average_current"]
    step = i_full - i_idle
    with np.errstate(divide="ignore", invalid="ignore"):
        r_out = np.where(np.abs(step) > 1e-9, (v_idle - v_full) / step, 0.0)
    r_out = np.maximum(np.nan_to_num(r_out), MIN_PATH_RESISTANCE)
    source = v_idle + r_out * i_idle
    values = ladder.LadderValues(*(getattr(stacked, name)[:rows] for name in
                                   ladder.LadderValues.__dataclass_fields__))
    values = replace(values, path_resistance=r_out, path_inductance=np.zeros(rows))
    out = {"attack": np.full((rows, n), np.nan), "recovery": np.full((rows, n), np.nan)}
    shapes = values.feed_inductance > 0
    for shape in np.unique(shapes, axis=0):
        members = np.flatnonzero((shapes == shape).all(axis=1))
        structure = ladder.LadderStructure(n_nodes=n, esr=(True,) * n,
                                           inductive_feed=(False,) + tuple(bool(x) for x in
                                                                           shape[1:]))
        part = ladder.LadderValues(*(getattr(values, name)[members] for name in
                                     ladder.LadderValues.__dataclass_fields__))
        response = transients.averaged_sag_step(
            structure, part, source[members], frequency,
            np.broadcast_to(idle, (len(members), n)), np.broadcast_to(full, (len(members), n)),
            hold, release)
        out["attack"][members] = response.attack_time
        out["recovery"][members] = response.recovery_time
    return out
