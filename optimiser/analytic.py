"""Piecewise-analytic periodic steady state of a full-wave capacitor-input supply (screening).

The search's screening tier: every design of a population, at every corner, in a few dozen numpy
operations on arrays, with no time stepping. The full simulator (:mod:`optimiser.supply`) re-checks
whatever the search keeps.

The method is Schade's (1943): between two switchings the circuit is linear. A full-wave rectifier
charging a reservoir capacitor conducts once per half-cycle; while it conducts, the path is the
EMF ``E sin(wt)`` behind a resistance ``R`` and leakage inductance ``L``, the rectifier linearised
as an offset ``V0`` plus a slope resistance (its law fitted over the pulse, as Schade fitted his
diodes' characteristics with an equivalent resistance), the reservoir ``C`` with its ESR, and the
load as a constant current ``I0``. That second-order linear system is solved in closed form (a
sinusoidal particular solution plus two exponentials); when the current returns to zero the
capacitor discharges linearly at ``I0/C`` until the next half-cycle. The conduction start and
length follow from two equations (the current ends at zero; the capacitor voltage repeats every
half-cycle), solved by Newton's method with an analytic Jacobian.

The ladder after the reservoir is linear: its DC by Ohm's law from the far end, its ripple as the
reservoir's harmonics times each node's transfer function.

Approximations (why this is a screen and not the simulator): the rectifier's law is linearised
over the pulse; the ladder's AC current does not load the reservoir; the bleeders are taken at
their DC current. ``tests/test_analytic.py`` measures the agreement with the simulator.

References
----------
.. [1] O. H. Schade, "Analysis of rectifier operation", Proc. IRE 31 (7), 1943, pp. 341-361.
.. [2] F. Langford-Smith (ed.), Radiotron Designer's Handbook, 4th ed., 1953, ch. 30
   (capacitor-input filters; the linear ladder's ripple attenuation).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from . import rectifier

__all__ = ["CycleFigures", "path_line", "reservoir_cycle", "ladder_figures", "steady_state",
           "surge", "choke_overshoot", "downstream_capacitance"]

#: Samples of the reservoir waveform over one half-cycle (for its harmonics and extremes).
GRID = 48
#: Harmonics of the reservoir's ripple carried down the ladder (each filter section takes them
#: down by at least the first order, so the higher ones do not move a filtered node's p-p).
HARMONICS = 12
#: Samples over one conduction pulse (for the current's peak and RMS).
PULSE_GRID = 24
#: Newton iterations on the conduction start and length.
NEWTON_ITERATIONS = 30
#: Passes that refit the rectifier's linearised law to the pulse's peak current.
FIT_PASSES = 3
#: The rectifier's law is fitted from this fraction of the pulse's peak current up: the part of
#: the pulse that carries most of its charge and sets its peak (chosen against the simulator,
#: tests/test_analytic.py). [-]
FIT_FROM = 0.25


@dataclass(frozen=True)
class CycleFigures:
    """The reservoir's periodic steady state, arrays of shape (B,) unless noted.

    Attributes
    ----------
    start, length : ndarray
        Conduction start after the EMF's zero crossing, and its length. [s]
    converged : ndarray of bool
        Newton's method met its tolerance and the pulse is a single positive one.
    node : ndarray (B, GRID)
        Reservoir node voltage over one half-cycle, uniformly sampled from the start. [V]
    source, terminal, current : ndarray (B, GRID + PULSE_GRID)
        EMF, winding terminal voltage and path current at the samples of ``node`` followed by
        samples over the pulse. [V], [V], [A]
    rectifier_node : ndarray (B, GRID + PULSE_GRID)
        Reservoir node voltage at the same samples. [V]
    peak_current, mean_square_current : ndarray
        Path current's peak and its mean square over the half-cycle. [A], [A^2]
    """

    start: np.ndarray
    length: np.ndarray
    converged: np.ndarray
    node: np.ndarray
    source: np.ndarray
    terminal: np.ndarray
    current: np.ndarray
    rectifier_node: np.ndarray
    peak_current: np.ndarray
    mean_square_current: np.ndarray


def path_line(elements: rectifier.PathElements, peak_current):
    """Straight-line fit of a conducting path's forward drop over ``0 .. peak_current``.

    Least squares over evenly spaced currents of the elements' laws (Shockley for silicon,
    Child-Langmuir for a valve plate): the equivalent-resistance linearisation Schade used for
    his diodes.

    Parameters
    ----------
    elements : PathElements
        Arrays (B,).
    peak_current : ndarray (B,)
        [A]

    Returns
    -------
    (offset, resistance) : ndarray (B,), ndarray (B,)
        Drop ~ offset + resistance * current. [V], [ohm]
    """
    x = np.linspace(FIT_FROM, 1.0, 9)
    i = np.maximum(peak_current, 1e-6)[:, None] * x[None, :]
    drop = (elements.silicon_count[:, None]
            * rectifier.shockley_voltage(i, elements.saturation_current[:, None],
                                         elements.emission_coefficient[:, None],
                                         elements.series_resistance[:, None])
            + elements.valve_count[:, None]
            * rectifier.child_langmuir_voltage(i, elements.perveance[:, None]))
    mean_i, mean_d = i.mean(axis=1), drop.mean(axis=1)
    slope = (((i - mean_i[:, None]) * (drop - mean_d[:, None])).sum(axis=1)
             / ((i - mean_i[:, None]) ** 2).sum(axis=1))
    return np.maximum(mean_d - slope * mean_i, 0.0), np.maximum(slope, 0.0)


class _Pulse:
    """The conducting interval's closed-form solution for arrays of designs (B,).

    States ``x = (i, v)``: path current and reservoir capacitor voltage, obeying
    ``L di/dt = E sin(wt) - V' - R i - v`` and ``C dv/dt = i - I0``.
    """

    def __init__(self, peak, omega, resistance, inductance, offset, capacitance, load):
        self.E, self.w, self.R, self.C, self.I0 = peak, omega, resistance, capacitance, load
        # no leakage at all: a first-order path, taken as a second-order one far over-damped
        # (damping ratio >= 4) and fast (L/R <= 1 us), which leaves the pulse as it is
        self.L = np.where(inductance > 0, inductance,
                          np.minimum(resistance ** 2 * capacitance / 64.0, resistance * 1e-6))
        self.V = offset
        z = resistance + 1j * omega * self.L + 1.0 / (1j * omega * capacitance)
        self.ip = peak / z  # phasors: signal = Im(phasor * exp(j w t))
        self.vp = self.ip / (1j * omega * capacitance)
        self.v_dc = -offset - resistance * load
        alpha = resistance / (2.0 * self.L)
        beta = np.sqrt(alpha ** 2 - 1.0 / (self.L * capacitance) + 0j)
        beta = np.where(np.abs(beta) < 1e-6 * alpha, 1e-6 * alpha, beta)
        self.l2 = -alpha - beta
        self.l1 = 1.0 / (self.L * capacitance * self.l2)  # the root product, free of cancellation

    def _col(self, a, t):
        return a if np.ndim(t) == 1 else a[:, None]

    def particular(self, t):
        """(i_p, v_p, di_p/dt, dv_p/dt) at times t (B,) or (B, K)."""
        c = self._col
        w = c(self.w, t)
        sin, cos = np.sin(w * t), np.cos(w * t)
        ip_re, ip_im, vp_re, vp_im = (c(a, t) for a in (self.ip.real, self.ip.imag,
                                                        self.vp.real, self.vp.imag))
        # Im(P exp(j w t)) = Re(P) sin + Im(P) cos; its derivative w (Re(P) cos - Im(P) sin)
        return (c(self.I0, t) + ip_re * sin + ip_im * cos,
                c(self.v_dc, t) + vp_re * sin + vp_im * cos,
                w * (ip_re * cos - ip_im * sin), w * (vp_re * cos - vp_im * sin))

    def flow(self, tau, y0, y1):
        """exp(A tau) applied to (y0, y1): the homogeneous solution."""
        c = self._col
        L, C, R, l1, l2 = (c(a, tau) for a in (self.L, self.C, self.R, self.l1, self.l2))
        y0, y1 = (y if np.ndim(y) == np.ndim(tau) else c(y, tau) for y in (y0, y1))
        e1, e2 = np.exp(l1 * tau), np.exp(l2 * tau)
        # exp(A t) = (e1 (A - l2 I) - e2 (A - l1 I)) / (l1 - l2)
        a0 = (-R / L) * y0 - y1 / L
        a1 = y0 / C
        out0 = (e1 * (a0 - l2 * y0) - e2 * (a0 - l1 * y0)) / (l1 - l2)
        out1 = (e1 * (a1 - l2 * y1) - e2 * (a1 - l1 * y1)) / (l1 - l2)
        return out0.real, out1.real

    def state(self, t1, v1, tau, i1=0.0):
        """(i, v) at t1 + tau from (i1, v1) at t1; tau (B,) or (B, K)."""
        ip1, vp1, _, _ = self.particular(t1)
        t = (t1 if np.ndim(tau) == 1 else t1[:, None]) + tau
        ip, vp, _, _ = self.particular(t)
        h0, h1 = self.flow(tau, i1 - ip1, v1 - vp1)
        return ip + h0, vp + h1

    def slope(self, t, i, v):
        """di/dt during conduction. [A/s]"""
        c = self._col
        return (c(self.E, t) * np.sin(c(self.w, t) * t) - c(self.V, t) - c(self.R, t) * i
                - v) / c(self.L, t)


def _solve(p: _Pulse, half, t1, tc):
    """Newton's method on (start, length): current ends at zero, capacitor voltage repeats."""
    converged = np.zeros(t1.shape, bool)
    for _ in range(NEWTON_ITERATIONS):
        v1 = p.E * np.sin(p.w * t1) - p.V
        i2, v2 = p.state(t1, v1, tc)
        t2 = t1 + tc
        f1 = i2
        f2 = v2 - p.I0 / p.C * (half - tc) - v1
        # Jacobian: in the length analytically (the state's own derivative); in the start through
        # the particular solution's and the initial value's derivatives
        d1_tc = p.slope(t2, i2, v2)
        d2_tc = i2 / p.C
        ip1, vp1, dip1, dvp1 = p.particular(t1)
        _, _, dip2, dvp2 = p.particular(t2)
        dv1 = p.E * p.w * np.cos(p.w * t1)
        g0, g1 = p.flow(tc, -dip1, dv1 - dvp1)
        d1_t1 = dip2 + g0
        d2_t1 = dvp2 + g1 - dv1
        det = d1_t1 * d2_tc - d1_tc * d2_t1
        det = np.where(np.abs(det) > 1e-300, det, 1e-300)
        step_t1 = (f1 * d2_tc - f2 * d1_tc) / det
        step_tc = (d1_t1 * f2 - d2_t1 * f1) / det
        limit = half / 8.0
        # a row that has converged keeps its values, so no row depends on the others
        step_t1 = np.where(converged, 0.0, np.clip(step_t1, -limit, limit))
        step_tc = np.where(converged, 0.0, np.clip(step_tc, -limit, limit))
        t1 = np.clip(t1 - step_t1, 0.0, 0.5 * half)
        tc = np.clip(tc - step_tc, 1e-4 * half, half)
        scale = np.maximum(p.E, 1.0)
        converged |= (np.abs(step_t1) < 1e-10 * half) & (np.abs(step_tc) < 1e-10 * half) & (
            np.abs(f2) < 1e-6 * scale)
        if converged.all():
            break
    return t1, tc, converged


def _first_guess(peak, omega, resistance, offset, capacitance, load, half):
    """Start and length from Schade's infinite-capacitance limit, widened by the droop."""
    v_dc = np.maximum(peak - offset, 1.0)
    phi = rectifier.conduction_half_angle(resistance * load / v_dc, pulses=2)
    v_dc = np.maximum(peak * np.cos(phi) - offset, 0.05 * peak)
    v_min = v_dc - 0.5 * load * half / capacitance
    s = np.clip((v_min + offset) / peak, 0.05, 0.999)
    t1 = np.arcsin(s) / omega
    t2 = (0.5 * np.pi + phi) / omega
    return t1, np.clip(t2 - t1, 0.02 * half, 0.9 * half)


def reservoir_cycle(peak, frequency, resistance, inductance, capacitance, esr, load,
                    elements: rectifier.PathElements, conductance=None):
    """Periodic steady state of the rectifier and reservoir of full-wave supplies.

    Parameters
    ----------
    peak : ndarray (B,)
        Peak EMF of the conducting half (or whole) winding. [V]
    frequency : float or ndarray (B,)
        Mains frequency. [Hz]
    resistance, inductance : ndarray (B,)
        Path resistance (winding and reflected primary) and leakage inductance. [ohm], [H]
    capacitance, esr : ndarray (B,)
        Reservoir capacitor and its series resistance. [F], [ohm]
    load : ndarray (B,)
        DC current drawn from the reservoir node (everything after it) as a constant. [A]
    elements : PathElements
    conductance : ndarray (B,), optional
        Resistive load (bleeders) on the supply, taken at the reservoir's DC voltage (refined
        pass by pass). [S]

    Returns
    -------
    CycleFigures

    References
    ----------
    .. [1] O. H. Schade, "Analysis of rectifier operation", Proc. IRE 31, 1943.
    """
    omega = 2.0 * np.pi * np.broadcast_to(np.asarray(frequency, float), peak.shape)
    half = np.pi / omega
    constant = load
    conductance = np.zeros_like(peak) if conductance is None else conductance
    v_dc = peak
    peak_i = 5.0 * np.maximum(constant + conductance * v_dc, 1e-9)
    t1 = tc = None
    for _ in range(FIT_PASSES):
        load = np.maximum(constant + conductance * v_dc, 1e-9)
        offset, slope = path_line(elements, peak_i)
        # the node sees the ESR's drop of the load current while charging: fold it in
        r_total = resistance + slope + esr
        v_eff = offset - esr * load
        pulse = _Pulse(peak, omega, r_total, inductance, v_eff, capacitance, load)
        if t1 is None:
            t1, tc = _first_guess(peak, omega, r_total, v_eff, capacitance, load, half)
        t1, tc, converged = _solve(pulse, half, t1, tc)
        v1 = peak * np.sin(omega * t1) - v_eff
        last = _ == FIT_PASSES - 1
        tau = tc[:, None] * np.linspace(0.0, 1.0, PULSE_GRID if last else 9)[None, :]
        i_pulse, v_pulse = pulse.state(t1, v1, tau)
        peak_i = np.maximum(i_pulse.max(axis=1), load)
        # the pass's DC (pulse, then the linear fall), and the resistive load it implies: on
        # the line from the open-circuit crest through this point, V = E - R_o I
        v_end = v_pulse[:, -1]
        v_mean = (tc * v_pulse.mean(axis=1)
                  + (half - tc) * (v_end - 0.5 * load / capacitance * (half - tc))) / half
        r_out = np.maximum(peak - v_mean, 0.0) / load
        current = (constant + conductance * peak) / (1.0 + conductance * r_out)
        v_dc = np.maximum(peak - r_out * current, 0.0)
    # the half-cycle on a uniform grid from the start: the pulse, then a linear discharge
    grid = half[:, None] * np.arange(GRID)[None, :] / GRID
    on = grid < tc[:, None]
    i_on, v_on = pulse.state(t1, v1, np.minimum(grid, tc[:, None]))
    v_end = v_pulse[:, -1]
    current = np.where(on, np.maximum(i_on, 0.0), 0.0)
    cap_v = np.where(on, v_on, v_end[:, None] - (load / capacitance)[:, None]
                     * (grid - tc[:, None]))
    node = cap_v + esr[:, None] * (current - load[:, None])
    # samples of the pulse itself, for its peak, RMS and the reverse voltages
    all_t = np.concatenate([grid, tau], axis=1)
    all_i = np.concatenate([current, np.maximum(i_pulse, 0.0)], axis=1)
    all_v = np.concatenate([cap_v, v_pulse], axis=1)
    all_on = np.concatenate([on, np.ones_like(tau, bool)], axis=1)
    abs_t = t1[:, None] + all_t
    source = peak[:, None] * np.abs(np.sin(omega[:, None] * abs_t))
    di = np.where(all_on, pulse.slope(abs_t, all_i, all_v), 0.0)
    terminal = source - resistance[:, None] * all_i - pulse.L[:, None] * di
    rect_node = all_v + esr[:, None] * (all_i - load[:, None])
    # Simpson's rule over the pulse (PULSE_GRID is even: use the first PULSE_GRID - 1 intervals
    # by the trapezium where Simpson's does not fit)
    sq = np.maximum(i_pulse, 0.0) ** 2
    h = tc / (PULSE_GRID - 1)
    integral = h * (sq.sum(axis=1) - 0.5 * (sq[:, 0] + sq[:, -1]))
    single = (i_pulse[:, 1:-1] < -1e-6 * peak_i[:, None]).any(axis=1)
    ok = converged & ~single & (tc < 0.9 * half)
    return CycleFigures(start=t1, length=tc, converged=ok, node=node, source=source,
                        terminal=terminal, current=all_i, rectifier_node=rect_node,
                        peak_current=peak_i, mean_square_current=integral / half)


def _ladder_admittances(w, capacitance, esr, feed_resistance, feed_inductance, conductance):
    """Per angular frequency w (B, H): each node's capacitor impedance, its feed's impedance and
    the admittance from the node to ground of it and everything after it (B, H, N)."""
    n = capacitance.shape[1]
    shunt_z = esr[:, None, :] + 1.0 / (1j * w[:, :, None] * capacitance[:, None, :])
    shunt_y = 1.0 / shunt_z + conductance[:, None, :]
    series = feed_resistance[:, None, :] + 1j * w[:, :, None] * feed_inductance[:, None, :]
    total = np.empty_like(shunt_y)
    total[:, :, n - 1] = shunt_y[:, :, n - 1]
    for k in range(n - 2, -1, -1):
        total[:, :, k] = shunt_y[:, :, k] + 1.0 / (series[:, :, k + 1] + 1.0 / total[:, :, k + 1])
    return shunt_z, series, total


def downstream_capacitance(frequency, capacitance, esr, feed_resistance, feed_inductance,
                           conductance):
    """The capacitance the ladder after the reservoir adds to it at the ripple frequency.

    The susceptance of everything after the reservoir at twice the mains frequency, as a
    capacitance (0 where it is inductive). The pulse solution takes the reservoir as this much
    larger, so that a low-resistance feed's downstream capacitor shares the ripple current.

    Returns
    -------
    (capacitance, damping) : ndarray (B,), ndarray (B,)
        The added capacitance, and the factor (<= 1) by which the ladder's conductance at the
        ripple frequency further lowers the reservoir's ripple. [F], [-]
    """
    n = capacitance.shape[1]
    if n < 2:
        return np.zeros(capacitance.shape[0]), np.ones(capacitance.shape[0])
    w = (4.0 * np.pi * frequency)[:, None]
    _, series, total = _ladder_admittances(w, capacitance, esr, feed_resistance,
                                           feed_inductance, conductance)
    y_in = 1.0 / (series[:, 0, 1] + 1.0 / total[:, 0, 1])
    extra = np.maximum(y_in.imag / w[:, 0], 0.0)
    # what the susceptance alone leaves out: the ladder's loss also takes ripple current
    own = 1j * w[:, 0] * capacitance[:, 0]
    damping = np.abs(own + 1j * w[:, 0] * extra) / np.abs(own + y_in)
    return extra, np.minimum(damping, 1.0)


def ladder_figures(reservoir_node, frequency, capacitance, esr, feed_resistance,
                   feed_inductance, conductance, dc_voltages):
    """Every node's ripple waveform and the ladder's AC currents, from the reservoir's waveform.

    Parameters
    ----------
    reservoir_node : ndarray (B, G)
        The reservoir node over one half-cycle, uniformly sampled. [V]
    frequency : ndarray (B,)
        Mains frequency. [Hz]
    capacitance, esr : ndarray (B, N)
        [F], [ohm]
    feed_resistance, feed_inductance : ndarray (B, N)
        Feed into each node from the one before (column 0 unused). [ohm], [H]
    conductance : ndarray (B, N)
        Resistive load (bleeders) at each node; constant-current loads carry no ripple. [S]
    dc_voltages : ndarray (B, N)
        Node DC voltages (column 0 the reservoir's mean). [V]

    Returns
    -------
    (node, capacitor_current, feed_ac) : ndarray (B, G, N) each
        Node voltage waveforms (DC included), capacitor currents and the feeds' AC currents.
        [V], [A], [A]

    Notes
    -----
    Each harmonic of the ripple (the half-cycle repeats, so harmonics of twice the mains
    frequency) passes the ladder as phasors: with the node's shunt admittance ``Y_k`` and the
    admittance of everything after it, the node gets ``1 / (1 + Z_k Y_total_k)`` of the one
    before.
    """
    count, samples = reservoir_node.shape
    n = capacitance.shape[1]
    spectrum = np.fft.rfft(reservoir_node - reservoir_node.mean(axis=1, keepdims=True),
                           axis=1)[:, :HARMONICS + 1]
    harmonic = np.arange(spectrum.shape[1])
    w = 2.0 * np.pi * 2.0 * frequency[:, None] * harmonic[None, :]
    w = np.where(harmonic[None, :] == 0, 1e-12, w)
    shunt_z, series, total = _ladder_admittances(w, capacitance, esr, feed_resistance,
                                                 feed_inductance, conductance)
    shunt_y = 1.0 / shunt_z + conductance[:, None, :]
    phasor = np.empty_like(shunt_y)
    phasor[:, :, 0] = spectrum
    for k in range(1, n):
        phasor[:, :, k] = phasor[:, :, k - 1] / (1.0 + series[:, :, k] * total[:, :, k])
    phasor[:, 0, :] = 0.0
    cap_i = phasor / shunt_z
    feed = np.zeros_like(phasor)
    feed[:, :, 1:] = (phasor[:, :, :-1] - phasor[:, :, 1:]) / series[:, :, 1:]
    feed[:, 0, :] = 0.0
    back = lambda s: np.fft.irfft(s, n=samples, axis=1)  # noqa: E731
    node = back(phasor) + dc_voltages[:, None, :]
    node[:, :, 0] = reservoir_node
    return node, back(cap_i), back(feed)


def steady_state(values, elements: rectifier.PathElements, peak, frequency, topology,
                 winding_resistance, winding_inductance) -> dict:
    """Every steady-state figure of a batch of supplies, under the names
    :func:`optimiser.evaluation.figures` gives them (those a screen needs).

    Parameters
    ----------
    values : LadderValues
        The ladder (arrays (B,) and (B, N)); column 0 of the feeds is the path's.
    elements : PathElements
    peak : ndarray (B,)
        Peak EMF. [V]
    frequency : ndarray (B,)
        [Hz]
    topology : ndarray of str (B,)
        ``bridge``, ``centre-tap`` or ``hybrid-bridge``.
    winding_resistance, winding_inductance : ndarray (B,)
        The winding's share of the path (for its terminal voltage). [ohm], [H]

    Returns
    -------
    dict
        ``dc_voltage``, ``ripple_pp``, ``peak_voltage``, ``capacitor_rms_current``,
        ``feed_rms_current``, ``feed_dc_current`` (B, N); ``rectifier_peak_current``,
        ``rectifier_average_current``, ``rectifier_rms_current``, ``piv``,
        ``secondary_rms_current``, ``converged`` (B,). [V], [A]
    """
    v = values
    count, n = v.capacitance.shape
    frequency = np.broadcast_to(np.asarray(frequency, float), (count,))
    extra, damping = downstream_capacitance(frequency, v.capacitance, v.esr, v.feed_resistance,
                                            v.feed_inductance, v.load_conductance)
    # the DC ladder is linear: what each node and everything after it draws is a + b V of the
    # voltage feeding it (from the far end), so the reservoir sees a + b V and the rest follows
    a = np.zeros((count, n))
    b = np.zeros((count, n))
    after_a, after_b = np.zeros(count), np.zeros(count)
    for k in range(n - 1, 0, -1):
        c_k = v.load_current[:, k] + after_a
        g_k = v.load_conductance[:, k] + after_b
        denominator = 1.0 + v.feed_resistance[:, k] * g_k
        a[:, k], b[:, k] = c_k / denominator, g_k / denominator
        after_a, after_b = a[:, k], b[:, k]
    cycle = reservoir_cycle(peak, frequency, v.path_resistance, v.path_inductance,
                            v.capacitance[:, 0] + extra, v.esr[:, 0],
                            v.load_current[:, 0] + after_a, elements,
                            conductance=v.load_conductance[:, 0] + after_b)
    dc = np.empty((count, n))
    dc[:, 0] = cycle.node.mean(axis=1)
    reservoir = dc[:, :1] + damping[:, None] * (cycle.node - dc[:, :1])
    downstream = np.empty((count, n))
    downstream[:, 0] = v.load_current[:, 0] + v.load_conductance[:, 0] * dc[:, 0] + after_a \
        + after_b * dc[:, 0]
    for k in range(1, n):
        downstream[:, k] = a[:, k] + b[:, k] * dc[:, k - 1]
        dc[:, k] = dc[:, k - 1] - v.feed_resistance[:, k] * downstream[:, k]
    node, cap_i, feed_ac = ladder_figures(reservoir, frequency,
                                          v.capacitance, v.esr, v.feed_resistance,
                                          v.feed_inductance, v.load_conductance, dc)
    cap_rms = np.sqrt((cap_i ** 2).mean(axis=1))
    # the reservoir's capacitor carries the path current (mean: the DC drawn) less the ladder's
    if n > 1:
        after = feed_ac[:, :, 1]
        ac_after = (after ** 2).mean(axis=1) - 2.0 * (
            (cycle.current[:, :GRID] - downstream[:, :1]) * after).mean(axis=1)
    else:
        ac_after = 0.0
    cap_rms[:, 0] = np.sqrt(np.maximum(cycle.mean_square_current - downstream[:, 0] ** 2
                                       + ac_after, 0.0))
    feed_dc = downstream.copy()
    feed_dc[:, 0] = 0.0
    feed_rms = np.sqrt(feed_dc ** 2 + (feed_ac ** 2).mean(axis=1))
    feed_rms[:, 0] = 0.0
    i_sq = cycle.mean_square_current
    cur = cycle.current
    rect = cycle.rectifier_node
    v_si = rectifier.shockley_voltage(cur, elements.saturation_current[:, None],
                                      elements.emission_coefficient[:, None],
                                      elements.series_resistance[:, None])
    v_valve = rectifier.child_langmuir_voltage(cur, elements.perveance[:, None])
    topo = np.asarray(topology)[:, None]
    piv_bridge = 0.5 * (rect + cycle.terminal)
    piv_hybrid = np.where(cur > 0, rect + np.maximum(v_si, v_valve), rect)
    piv_ct = rect + cycle.source
    piv = np.where(topo == "bridge", piv_bridge,
                   np.where(topo == "hybrid-bridge", piv_hybrid, piv_ct)).max(axis=1)
    whole = np.asarray(topology) != "centre-tap"
    return {
        "dc_voltage": dc,
        "ripple_pp": node.max(axis=1) - node.min(axis=1),
        "peak_voltage": np.maximum(node.max(axis=1), 0.0),
        "capacitor_rms_current": cap_rms,
        "feed_rms_current": feed_rms,
        "feed_dc_current": feed_dc,
        "rectifier_peak_current": cycle.peak_current,
        "rectifier_average_current": 0.5 * downstream[:, 0],
        "rectifier_rms_current": np.sqrt(0.5 * i_sq),
        "piv": piv,
        "secondary_rms_current": np.where(whole, np.sqrt(i_sq), np.sqrt(0.5 * i_sq)),
        "converged": cycle.converged,
    }


def surge(peak, frequency, resistance, inductance, capacitance, esr,
          elements: rectifier.PathElements):
    """Switch-on at the mains crest into an empty reservoir: peak current and capacitor voltage.

    The same closed form as the steady state, from rest at the crest: the rest of that
    half-cycle, then (a full-wave rectifier hands the current to the other path as the EMF
    reverses) the next half-cycle from where the first left off, until the current stops.

    Returns
    -------
    (current, voltage) : ndarray (B,), ndarray (B,)
        Peak path current and the highest reservoir voltage over those. [A], [V]
    """
    omega = 2.0 * np.pi * np.broadcast_to(np.asarray(frequency, float), peak.shape)
    half = np.pi / omega
    peak_i = peak / np.maximum(resistance + esr, 1e-3)
    zero = np.zeros_like(peak)
    for _ in range(2):
        offset, slope = path_line(elements, peak_i)
        pulse = _Pulse(peak, omega, resistance + slope + esr, inductance, offset, capacitance,
                       zero)
        # first the quarter cycle from the crest, then a whole half-cycle
        first = 0.5 * half[:, None] * np.linspace(0.0, 1.0, PULSE_GRID)[None, :]
        i_a, v_a = pulse.state(0.5 * half, zero, first)
        i_b, v_b = pulse.state(zero, v_a[:, -1], half[:, None] * np.linspace(
            0.0, 1.0, 2 * PULSE_GRID)[None, :], i1=i_a[:, -1])
        i = np.concatenate([i_a, i_b[:, 1:]], axis=1)
        v = np.concatenate([v_a, v_b[:, 1:]], axis=1)
        # up to the pulse's end (the first sample where the current would reverse; the first
        # sample is the rest it starts from)
        reversed_ = i < 0.0
        reversed_[:, 0] = False
        ended = np.cumsum(reversed_, axis=1) > 0
        peak_i = np.where(ended, 0.0, i).max(axis=1)
    return peak_i, np.where(ended, -np.inf, v).max(axis=1)


def choke_overshoot(inductance, resistance, capacitance, rise_time):
    """Fraction by which an LC section's output overshoots a step at its input.

    A series R-L feeding C is second order: damping ``zeta = (R/2) sqrt(C/L)``; a step
    overshoots by ``exp(-pi zeta / sqrt(1 - zeta^2))`` when under-damped. An input that rises
    with a time constant ``rise_time`` rather than at once is followed by a smaller ring: the
    overshoot is taken down by the first-order lag's gain at the ringing frequency.

    Parameters
    ----------
    inductance, resistance, capacitance : ndarray
        [H], [ohm], [F]
    rise_time : ndarray
        Time constant of the input's rise. [s]

    Returns
    -------
    ndarray
        Overshoot over the final value, 0 when over-damped. [-]

    References
    ----------
    .. [1] The second-order step response (any control text, e.g. K. Ogata, Modern Control
       Engineering, ch. 5); the LC filter's resonance: Radiotron Designer's Handbook, ch. 30.
    """
    L = np.maximum(inductance, 1e-12)
    zeta = 0.5 * resistance * np.sqrt(capacitance / L)
    under = zeta < 1.0
    z = np.where(under, zeta, 0.5)
    step = np.where(under, np.exp(-np.pi * z / np.sqrt(1.0 - z * z)), 0.0)
    ring = np.sqrt(np.abs(1.0 - z * z)) / np.sqrt(L * capacitance)
    return step / np.sqrt(1.0 + (ring * rise_time) ** 2)
