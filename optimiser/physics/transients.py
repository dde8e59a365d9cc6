"""Transients of the HV supply: the sag step, switch-on, and discharge after switch-off.

Built on the exact-exponential stepping of :mod:`optimiser.physics.supply`; vectorised over a batch.
Times in seconds, voltages in volts, currents in amperes.
"""

from __future__ import annotations

from dataclasses import dataclass, replace

import numba
import numpy as np

from optimiser.physics import ladder
from optimiser.physics import supply

__all__ = [
    "node_outputs",
    "output_statistics",
    "half_cycle_means",
    "crossing_time",
    "SagResponse",
    "sag_step",
    "averaged_sag_step",
    "surge_peak",
    "charge_up",
    "charge_up_max",
    "charge_up_peaks",
    "discharge_times",
    "bleeder_for",
]

#: Steps per half mains cycle in transient runs whose cycle averages are all that is read.
TRANSIENT_STEPS = 32
#: Steps per half mains cycle for the sag step: under load a valve rectifier's pulses are narrow,
#: and 32 steps bias the loaded level by ~0.2 % (4 % of a 20 V sag); 128 agree with ngspice to
#: 0.2 % (tests/test_transients_against_ngspice.py).
SAG_STEPS = 128
#: Steps per half mains cycle for the switch-on surge, whose peak is short.
SURGE_STEPS = 256
#: A sag depth below this fraction of B+ counts as none (no attack or recovery time). [-]
NEGLIGIBLE_SAG = 1e-3


def node_outputs(maps, states, drive, loads):
    """Evaluate a linear output map ``y = C x + D u`` along a run.

    Parameters
    ----------
    maps : (C, D) with shapes (B, K, n), (B, K, m)
    states : ndarray (B, T, n)
    drive : ndarray (B, T)
        The path drive e. [V]
    loads : ndarray (B, N)
        Constant-current sinks. [A]

    Returns
    -------
    ndarray (B, T, K)
    """
    c, d = maps
    constant = np.matmul(d[:, :, 1:], loads[:, :, None])[:, None, :, 0]
    return np.matmul(states, c.transpose(0, 2, 1)) + d[:, None, :, 0] * drive[:, :, None] \
        + constant


def output_statistics(maps, states, drive, loads):
    """Mean, RMS and largest value over a run of each output ``y = C x + D u``.

    The same figures as ``y.mean(axis=1)``, ``sqrt((y ** 2).mean(axis=1))`` and
    ``y.max(axis=1)`` of :func:`node_outputs` (to rounding: the sums in another order), in one
    compiled pass that keeps no (B, T, K) array and releases the interpreter lock.

    Parameters
    ----------
    maps, states, drive, loads : as for :func:`node_outputs`

    Returns
    -------
    (mean, rms, top) : ndarray (B, K) each
    """
    c, d = maps
    constant = np.ascontiguousarray(np.matmul(d[:, :, 1:], loads[:, :, None])[:, :, 0])
    batch, k = c.shape[0], c.shape[1]
    mean, rms, top = (np.empty((batch, k)) for _ in range(3))
    _statistics_kernel(np.ascontiguousarray(c, dtype=float),
                       np.ascontiguousarray(d[:, :, 0], dtype=float), constant,
                       np.ascontiguousarray(states, dtype=float),
                       np.ascontiguousarray(drive, dtype=float), mean, rms, top)
    return mean, rms, top


@numba.njit(cache=True, parallel=True, nogil=True)
def _statistics_kernel(c, d, k, xs, es, mean, rms, top):
    """Compiled loop of :func:`output_statistics` over the designs (a row function each)."""
    for b in numba.prange(xs.shape[0]):
        _statistics_row(b, c, d, k, xs, es, mean, rms, top)


@numba.njit(cache=True)
def _statistics_row(b, c, d, k, xs, es, mean, rms, top):
    outputs, samples, n = c.shape[1], xs.shape[1], xs.shape[2]
    total = np.zeros(outputs)
    square = np.zeros(outputs)
    high = np.full(outputs, -np.inf)
    for t in range(samples):
        for m in range(outputs):
            v = d[b, m] * es[b, t] + k[b, m]
            for r in range(n):
                v += c[b, m, r] * xs[b, t, r]
            total[m] += v
            square[m] += v * v
            if v > high[m]:
                high[m] = v
    for m in range(outputs):
        mean[b, m] = total[m] / samples
        rms[b, m] = np.sqrt(square[m] / samples)
        top[b, m] = high[m]


def half_cycle_means(values, steps_per_half):
    """Average over each half mains cycle: (B, T+1, K) samples -> (B, T // steps, K). [same]"""
    b, t, k = values.shape
    n = (t - 1) // steps_per_half
    return values[:, 1:1 + n * steps_per_half].reshape(b, n, steps_per_half, k).mean(axis=2)


def crossing_time(times, series, threshold, rising):
    """First time a series crosses a threshold, linearly interpolated; NaN if it never does.

    Parameters
    ----------
    times : ndarray (T,)
    series : ndarray (B, T, K)
    threshold : ndarray (B, K)
    rising : bool
        Look for an upward (True) or downward crossing.
    """
    over = series >= threshold[:, None, :] if rising else series <= threshold[:, None, :]
    first = np.argmax(over, axis=1)
    found = over.any(axis=1)
    prev = np.maximum(first - 1, 0)
    b, k = np.meshgrid(np.arange(series.shape[0]), np.arange(series.shape[2]), indexing="ij")
    y0, y1 = series[b, prev, k], series[b, first, k]
    t0, t1 = times[prev], times[first]
    with np.errstate(invalid="ignore", divide="ignore"):
        frac = np.where(y1 != y0, (threshold - y0) / (y1 - y0), 0.0)
    t = np.where(first > 0, t0 + np.clip(frac, 0, 1) * (t1 - t0), times[0])
    return np.where(found, t, np.nan)


@dataclass(frozen=True)
class SagResponse:
    """Cycle-averaged B+ through a step from idle to full power and back.

    Attributes
    ----------
    time : ndarray (T,)
        Middle of each half mains cycle, from the step. [s]
    voltage : ndarray (B, T, N)
        Half-cycle mean of each node. [V]
    depth : ndarray (B, N)
        Idle DC minus the mean at the end of the hold. [V]
    attack_time : ndarray (B, N)
        Time to 63 % of that drop; NaN if not reached within the hold. [s]
    recovery_time : ndarray (B, N)
        Time after release to recover 63 % of it; NaN if not within the release. [s]
    """

    time: np.ndarray
    voltage: np.ndarray
    depth: np.ndarray
    attack_time: np.ndarray
    recovery_time: np.ndarray


def sag_step(model, elements, peak, frequency, idle_loads, full_loads, idle_waves, hold, release,
             steps=SAG_STEPS):
    """The B+ response to a hard-played note: idle -> full power for ``hold``, then idle again.

    Parameters
    ----------
    model : StateSpace
    elements : PathElements
    peak : ndarray (B,)
        Peak source EMF. [V]
    frequency : float
        [Hz]
    idle_loads, full_loads : ndarray (B, N)
        Constant-current sinks at idle and full power. [A]
    idle_waves : Waveforms
        The periodic steady state at idle, whose first sample starts the run.
    hold, release : float
        Durations, rounded up to whole half mains cycles. [s]

    Returns
    -------
    SagResponse
        The 63 % times follow the first-order (RC) convention, time to 1 - 1/e of the change.
    """
    half = 0.5 / frequency
    n_hold = max(1, int(np.ceil(hold / half)))
    n_release = max(1, int(np.ceil(release / half)))
    x0 = idle_waves.state[:, 0]
    e0 = idle_waves.drive[:, 0]
    on = supply.step_response(model, elements, peak, frequency, full_loads, x0, e0,
                              n_hold * half, steps_per_half_cycle=steps)
    off = supply.step_response(model, elements, peak, frequency, idle_loads, on.state[:, -1],
                               on.drive[:, -1], n_release * half, steps_per_half_cycle=steps,
                               start_time=n_hold * half)
    v_on = half_cycle_means(node_outputs(model.node_voltage, on.state, on.drive, full_loads),
                            steps)
    v_off = half_cycle_means(node_outputs(model.node_voltage, off.state, off.drive, idle_loads),
                             steps)
    idle_v = node_outputs(model.node_voltage, idle_waves.state[:, :-1], idle_waves.drive[:, :-1],
                          idle_loads).mean(axis=1)
    return _sag_response(idle_v, v_on, v_off, half)


def _sag_response(idle_v, v_on, v_off, half):
    """The sag's depth and 63 % times from half-cycle means (B, T, N) of the hold and the
    release, each mean placed at the middle of its half-cycle."""
    t_on = (np.arange(v_on.shape[1]) + 0.5) * half
    t_off = (np.arange(v_off.shape[1]) + 0.5) * half
    depth = idle_v - v_on[:, -1]
    attack = crossing_time(t_on, v_on, idle_v - 0.632 * depth, rising=False)
    recovery = crossing_time(t_off, v_off, v_on[:, -1] + 0.632 * depth, rising=True)
    # a node that does not move (a load that is the same at idle and full power) has no times
    still = np.abs(depth) < NEGLIGIBLE_SAG * np.abs(idle_v)
    attack = np.where(still, np.nan, attack)
    recovery = np.where(still, np.nan, recovery)
    return SagResponse(time=np.concatenate([t_on, v_on.shape[1] * half + t_off]),
                       voltage=np.concatenate([v_on, v_off], axis=1), depth=depth,
                       attack_time=attack, recovery_time=recovery)


def averaged_sag_step(structure, values, source, frequency, idle_loads, full_loads, hold,
                      release):
    """The sag step of :func:`sag_step` on the cycle-averaged circuit: the rectifier and its
    winding as a DC source behind their output resistance, feeding the linear ladder.

    A capacitor-input rectifier's mean output falls with its mean load current along a nearly
    straight line V = E - R_o I (its static regulation); averaged over the mains cycle it is
    that source behind R_o, so a load step moves B+ with the ladder's own time constants (the
    reservoir's R_o C first). The screen's stand-in for the simulated step.

    Parameters
    ----------
    structure : LadderStructure
        With a resistive path (the source resistance is the path).
    values : LadderValues
        ``path_resistance`` the output resistance R_o, no path inductance. [ohm]
    source : ndarray (B,)
        E, the open-circuit end of the regulation line. [V]
    frequency : float
        Mains frequency (the means are over its half-cycles). [Hz]
    idle_loads, full_loads : ndarray (B, N)
        [A]
    hold, release : float
        [s]

    Returns
    -------
    SagResponse

    References
    ----------
    .. [1] F. Langford-Smith (ed.), Radiotron Designer's Handbook, 4th ed., 1953, ch. 30
       (regulation of capacitor-input filters; the effective source resistance).
    """
    half = 0.5 / frequency
    model = ladder.state_space(structure, values)
    count, n = model.A.shape[0], model.A.shape[1]
    u_idle = np.column_stack([source, idle_loads])
    u_full = np.column_stack([source, full_loads])
    x = np.linalg.solve(model.A, -np.einsum("bij,bj->bi", model.B, u_idle)[..., None])[..., 0]
    disc = supply.discretise(model, half)
    drive = disc.input_now + disc.input_next  # the inputs hold still over a step

    def outputs(states, u):
        C, D = model.node_voltage
        return np.einsum("bkn,btn->btk", C, states) + np.einsum("bkm,bm->bk", D, u)[:, None, :]

    def march(x, u, steps):
        push = np.einsum("bij,bj->bi", drive, u)
        out = np.empty((count, steps + 1, n))
        out[:, 0] = x
        for k in range(steps):
            out[:, k + 1] = np.einsum("bij,bj->bi", disc.phi, out[:, k]) + push
        return out

    idle_v = outputs(x[:, None, :], u_idle)[:, 0]
    on = march(x, u_full, max(1, int(np.ceil(hold / half))))
    off = march(on[:, -1], u_idle, max(1, int(np.ceil(release / half))))
    # the mean over a half-cycle of a smooth response: the mean of its ends
    v_on = outputs(0.5 * (on[:, 1:] + on[:, :-1]), u_full)
    v_off = outputs(0.5 * (off[:, 1:] + off[:, :-1]), u_idle)
    return _sag_response(idle_v, v_on, v_off, half)


def surge_peak(model, elements, peak, frequency, loads, steps=SURGE_STEPS):
    """Peak rectifier current when the supply is switched on at a mains peak, capacitors empty.

    The worst switch-on phase for a capacitor-input supply is the crest of the sine: the empty
    reservoir is a short circuit behind the path resistance (and leakage inductance). For a
    valve rectifier this is hot switching (the valve already warm, e.g. a standby switch).

    Returns
    -------
    ndarray (B,)
        [A]
    """
    batch, n = model.A.shape[0], model.A.shape[1]
    quarter = 0.25 / frequency
    run = supply.step_response(model, elements, peak, frequency, loads, np.zeros((batch, n)),
                               np.zeros(batch), 2 * (0.5 / frequency),
                               steps_per_half_cycle=steps, start_time=quarter)
    return run.current.max(axis=1)


def charge_up(model, elements, peak, frequency, loads, duration, steps=TRANSIENT_STEPS,
              start_time=0.0, x0=None):
    """Charging of the supply from empty: instantaneous node voltages over ``duration``.

    Returns
    -------
    (time, voltage) : ndarray (T,), ndarray (B, T, N)
        [s], [V]
    """
    batch, n = model.A.shape[0], model.A.shape[1]
    x0 = np.zeros((batch, n)) if x0 is None else x0
    run = supply.step_response(model, elements, peak, frequency, loads, x0, np.zeros(batch),
                               duration, steps_per_half_cycle=steps, start_time=start_time)
    return run.time - start_time, node_outputs(model.node_voltage, run.state, run.drive, loads)


def charge_up_max(model, elements, peak, frequency, loads, duration, steps=TRANSIENT_STEPS):
    """The highest instantaneous voltage of each node over :func:`charge_up`. [V] (B, N)"""
    return charge_up(model, elements, peak, frequency, loads, duration, steps)[1].max(axis=1)


def charge_up_peaks(model, elements, peak, frequency, loads, duration, steps=TRANSIENT_STEPS):
    """The highest instantaneous voltage of each node while the supply charges from empty:
    ``charge_up(...)[1].max(axis=1)`` (to rounding) without keeping the trajectory. [V]

    Returns
    -------
    ndarray (B, N)
    """
    batch, n = model.A.shape[0], model.A.shape[1]
    return supply.peaks(model, elements, peak, frequency, loads, np.zeros((batch, n)),
                        np.zeros(batch), duration, model.node_voltage, steps_per_half_cycle=steps)


def discharge_times(structure, values, start_voltages, safe_voltage, *, horizon=3600.0,
                    modal=False):
    """Time for each node to fall below a safe voltage after switch-off.

    The rectifier blocks, the valves are taken as drawing nothing (the conservative case: in
    reality they drain the capacitors for a while as they cool), and only bleeders and
    resistive loads discharge the ladder: ``x(t) = expm(A t) x0``.

    Parameters
    ----------
    structure : LadderStructure
    values : LadderValues
        With the constant-current loads ignored.
    start_voltages : ndarray (B, N)
        Node voltages at switch-off. [V]
    safe_voltage : float or ndarray (B,)
        [V]
    horizon : float
        Longest time looked at; beyond it the result is inf. [s]
    modal : bool
        Take ``expm(A t) x0`` from the eigenvectors of A (``V exp(L t) V^-1 x0``): the same
        times to rounding at a fraction of the cost for a large batch; a design whose
        eigenvectors are near dependent (cond > 1e8) still gets the matrix exponential.

    Returns
    -------
    ndarray (B, N)
        [s]
    """
    open_path = replace(structure, inductive_feed=(False,) + tuple(structure.inductive_feed[1:]))
    vals = replace(values, path_resistance=np.full_like(values.path_resistance, 1e15),
                   path_inductance=np.zeros_like(values.path_inductance),
                   load_current=np.zeros_like(values.load_current))
    model = ladder.state_space(open_path, vals)
    batch, n = model.A.shape[0], model.A.shape[1]
    x0 = np.zeros((batch, n))
    x0[:, model.capacitor_voltage_index] = start_voltages
    times = np.concatenate([[0.0], np.geomspace(1e-2, horizon, 120)])
    states = np.empty((batch, times.size, n))
    exact = np.ones(batch, dtype=bool)
    if modal:
        lam, vec = np.linalg.eig(model.A)
        with np.errstate(all="ignore"):
            exact = ~(np.linalg.cond(vec) < 1e8)
        fine = ~exact
        w = np.linalg.solve(vec[fine], x0[fine].astype(complex)[..., None])[..., 0]
        modes = np.exp(lam[fine][:, None, :] * times[None, :, None]) * w[:, None, :]
        states[fine] = np.einsum("bij,btj->bti", vec[fine], modes).real
    if exact.any():
        a = np.repeat(model.A[exact][:, None], times.size, axis=1) * times[None, :, None, None]
        flows = supply.expm(a.reshape(-1, n, n)).reshape(-1, times.size, n, n)
        states[exact] = np.einsum("btij,bj->bti", flows, x0[exact])
    v = np.abs(np.einsum("bkn,btn->btk", model.node_voltage[0], states))
    safe_voltage = np.broadcast_to(np.asarray(safe_voltage, float).reshape(-1, 1, 1)
                                   if np.ndim(safe_voltage) else safe_voltage, (batch, 1, 1))
    # the last time above the threshold, so a ringing LC ladder counts its last excursion
    above = v > safe_voltage
    last = times.size - 1 - np.argmax(above[:, ::-1], axis=1)
    never_above = ~above.any(axis=1)
    still_above = above[:, -1]
    nxt = np.minimum(last + 1, times.size - 1)
    b, k = np.meshgrid(np.arange(batch), np.arange(v.shape[2]), indexing="ij")
    v0, v1 = v[b, last, k], v[b, nxt, k]
    t0, t1 = times[last], times[nxt]
    with np.errstate(divide="ignore", invalid="ignore"):
        frac = np.log(v0 / safe_voltage[:, :, 0]) / np.log(v0 / np.maximum(v1, 1e-300))
    t = t0 + np.clip(np.nan_to_num(frac, nan=1.0), 0, 1) * (t1 - t0)
    return np.where(never_above, 0.0, np.where(still_above, np.inf, t))


def bleeder_for(capacitance, start_voltage, safe_voltage, time):
    """Largest bleeder that takes a capacitor from start_voltage to safe_voltage in ``time``.

    R <= t / (C ln(V0 / V_safe)).

    Parameters
    ----------
    capacitance : numeric
        [F]
    start_voltage, safe_voltage : numeric
        [V]
    time : numeric
        [s]

    Returns
    -------
    numeric
        [ohm]

    References
    ----------
    .. [1] RC discharge v = V0 exp(-t/RC), solved for R (REFERENCES.md, derived).
    """
    return time / (capacitance * np.log(start_voltage / safe_voltage))
