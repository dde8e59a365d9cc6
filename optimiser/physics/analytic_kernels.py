"""The screening tier's compiled loops (numba): one conduction pulse per design by Schade's
piecewise-analytic method, the switch-on surge from rest at the crest, and the ladder's ripple
from the reservoir's harmonics.

The array-level API that packs a population into the loops' columns and reads their results
back is :mod:`optimiser.physics.analytic`, whose docstring gives the method and its references.
Each parallel loop (``_cycle_kernel``, ``_surge_kernel``, ``_ladder_kernel``) calls a function
of its own for one row (see DEVELOPERS.md). Compiled results are cached beside this file.
"""

from __future__ import annotations

import numba
import numpy as np

from optimiser.physics import rectifier

#: Samples of the reservoir waveform over one half-cycle (for its harmonics and extremes).
GRID = 48
#: Harmonics of the reservoir's ripple carried down the ladder (each filter section takes them
#: down by at least the first order, so the higher ones do not move a filtered node's p-p).
HARMONICS = 6
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


@numba.njit(cache=True)
def _drop(i, si, vv, sat, n_e, r_s, perveance):
    """Forward drop of a path at a current (Shockley per junction, Child-Langmuir per plate)."""
    d = 0.0
    if si > 0:
        d += si * (n_e * rectifier.THERMAL_VOLTAGE * np.log1p(i / sat) + r_s * i)
    if vv > 0:
        d += vv * np.cbrt(i / perveance) ** 2
    return d


@numba.njit(cache=True)
def _path_line(peak_i, si, vv, sat, n_e, r_s, perveance):
    """(offset, slope): least-squares line through the path's law from FIT_FROM * peak_i to
    peak_i (Schade's equivalent-resistance linearisation). [V], [ohm]"""
    n = 9
    mi = md = 0.0
    xs = np.empty(n)
    ds = np.empty(n)
    top = max(peak_i, 1e-6)
    for k in range(n):
        xs[k] = top * (FIT_FROM + (1.0 - FIT_FROM) * k / (n - 1))
        ds[k] = _drop(xs[k], si, vv, sat, n_e, r_s, perveance)
        mi += xs[k] / n
        md += ds[k] / n
    sxy = sxx = 0.0
    for k in range(n):
        sxy += (xs[k] - mi) * (ds[k] - md)
        sxx += (xs[k] - mi) ** 2
    slope = max(sxy / sxx, 0.0)
    return max(md - slope * mi, 0.0), slope


@numba.njit(cache=True)
def _roots(R, L, C):
    """The conducting circuit's natural frequencies (l1 slow, l2 fast). [1/s]"""
    alpha = R / (2.0 * L)
    beta = np.sqrt(complex(alpha * alpha - 1.0 / (L * C), 0.0))
    if abs(beta) < 1e-6 * alpha:
        beta = complex(1e-6 * alpha, 0.0)
    l2 = -alpha - beta
    return 1.0 / (L * C * l2), l2  # the root product, free of cancellation


@numba.njit(cache=True)
def _flow(R, L, C, l1, l2, tau, y0, y1):
    """exp(A tau) (y0, y1) for A = [[-R/L, -1/L], [1/C, 0]]: the homogeneous solution."""
    e1 = np.exp(l1 * tau)
    e2 = np.exp(l2 * tau)
    a0 = (-R / L) * y0 - y1 / L
    a1 = y0 / C
    h0 = (e1 * (a0 - l2 * y0) - e2 * (a0 - l1 * y0)) / (l1 - l2)
    h1 = (e1 * (a1 - l2 * y1) - e2 * (a1 - l1 * y1)) / (l1 - l2)
    return h0.real, h1.real


@numba.njit(cache=True)
def _particular(w, I0, v_dc, ip, vp, t):
    """(i_p, v_p, di_p/dt, dv_p/dt): Im(P exp(j w t)) = Re(P) sin + Im(P) cos, plus DC."""
    s, c = np.sin(w * t), np.cos(w * t)
    return (I0 + ip.real * s + ip.imag * c, v_dc + vp.real * s + vp.imag * c,
            w * (ip.real * c - ip.imag * s), w * (vp.real * c - vp.imag * s))


@numba.njit(cache=True)
def _state(R, L, C, l1, l2, w, I0, v_dc, ip, vp, t1, i1, v1, tau):
    """(i, v) at t1 + tau from (i1, v1) at t1, while conducting."""
    ip1, vp1, _, _ = _particular(w, I0, v_dc, ip, vp, t1)
    return _state_from(R, L, C, l1, l2, w, I0, v_dc, ip, vp, t1, i1 - ip1, v1 - vp1, tau)


@numba.njit(cache=True)
def _state_from(R, L, C, l1, l2, w, I0, v_dc, ip, vp, t1, y0, y1, tau):
    """As :func:`_state`, given the start's departure (y0, y1) from the particular solution."""
    ipt, vpt, _, _ = _particular(w, I0, v_dc, ip, vp, t1 + tau)
    h0, h1 = _flow(R, L, C, l1, l2, tau, y0, y1)
    return ipt + h0, vpt + h1


@numba.njit(cache=True)
def _samples(R, L, C, l1, l2, w, I0, v_dc, ip, vp, t1, y0, y1, step, count, out_i, out_v,
             out_sin):
    """(i, v) and sin(w t) at t1 + k step, k = 0..count-1, while conducting: the sines and the
    exponentials advanced by rotation and multiplication from one sample to the next."""
    s, c = np.sin(w * t1), np.cos(w * t1)
    ds, dc = np.sin(w * step), np.cos(w * step)
    e1 = complex(1.0, 0.0)
    e2 = complex(1.0, 0.0)
    g1, g2 = np.exp(l1 * step), np.exp(l2 * step)
    a0 = (-R / L) * y0 - y1 / L
    a1 = y0 / C
    p0, q0 = a0 - l2 * y0, a0 - l1 * y0
    p1, q1 = a1 - l2 * y1, a1 - l1 * y1
    d = l1 - l2
    for k in range(count):
        out_i[k] = I0 + ip.real * s + ip.imag * c + ((e1 * p0 - e2 * q0) / d).real
        out_v[k] = v_dc + vp.real * s + vp.imag * c + ((e1 * p1 - e2 * q1) / d).real
        out_sin[k] = s
        s, c = s * dc + c * ds, c * dc - s * ds
        e1 *= g1
        e2 *= g2


@numba.njit(cache=True)
def _circuit(E, w, R, L_path, C, I0, V):
    """Constants of the conducting circuit: (L, l1, l2, v_dc, ip, vp)."""
    if L_path > 0.0:
        L = L_path
    else:  # no leakage: far over-damped (zeta >= 4) and fast (L/R <= 1 us), so first-order
        L = min(R * R * C / 64.0, R * 1e-6)
    z = complex(R, w * L - 1.0 / (w * C))
    ip = E / z
    vp = ip / complex(0.0, w * C)
    l1, l2 = _roots(R, L, C)
    return L, l1, l2, -V - R * I0, ip, vp


@numba.njit(cache=True)
def _newton(E, w, R, L, C, I0, V, l1, l2, v_dc, ip, vp, half, t1, tc):
    """Start and length of the pulse: the current ends at zero, the capacitor voltage repeats."""
    converged = False
    for _ in range(NEWTON_ITERATIONS):
        v1 = E * np.sin(w * t1) - V
        t2 = t1 + tc
        ip1, vp1, dip1, dvp1 = _particular(w, I0, v_dc, ip, vp, t1)
        ip2, vp2, dip2, dvp2 = _particular(w, I0, v_dc, ip, vp, t2)
        h0, h1 = _flow(R, L, C, l1, l2, tc, -ip1, v1 - vp1)
        i2, v2 = ip2 + h0, vp2 + h1
        f1 = i2
        f2 = v2 - I0 / C * (half - tc) - v1
        d1_tc = (E * np.sin(w * t2) - V - R * i2 - v2) / L
        d2_tc = i2 / C
        dv1 = E * w * np.cos(w * t1)
        g0, g1 = _flow(R, L, C, l1, l2, tc, -dip1, dv1 - dvp1)
        d1_t1 = dip2 + g0
        d2_t1 = dvp2 + g1 - dv1
        det = d1_t1 * d2_tc - d1_tc * d2_t1
        if abs(det) < 1e-300:
            det = 1e-300
        limit = half / 8.0
        step_t1 = min(max((f1 * d2_tc - f2 * d1_tc) / det, -limit), limit)
        step_tc = min(max((d1_t1 * f2 - d2_t1 * f1) / det, -limit), limit)
        t1 = min(max(t1 - step_t1, 0.0), 0.5 * half)
        tc = min(max(tc - step_tc, 1e-4 * half), half)
        if (abs(step_t1) < 1e-10 * half and abs(step_tc) < 1e-10 * half
                and abs(f2) < 1e-6 * max(E, 1.0)):
            converged = True
            break
    return t1, tc, converged


@numba.njit(cache=True)
def _half_angle(ratio):
    """Schade's infinite-C half conduction angle: tan(phi) - phi = pi ratio / 2. [rad]"""
    target = np.pi * ratio / 2.0
    phi = min(max(np.cbrt(3.0 * target), 1e-9), 1.5)
    for _ in range(60):
        f = np.tan(phi) - phi - target
        if abs(f) <= 1e-12 * target:
            break
        phi = min(max(phi - f / np.tan(phi) ** 2, 1e-12), np.pi / 2 - 1e-9)
    return phi


@numba.njit(cache=True)
def _cycle_row(b, peak, omega, resistance, inductance, capacitance, esr, constant, conductance, si,
               vv, sat, n_e, r_s, perveance, topology, node, current, scalars):
    """One row of :func:`_cycle_kernel` (a function of its own, so that the threads of the
    loop over rows share nothing but the arrays each row writes)."""
    pulse_i = np.empty(PULSE_GRID)
    pulse_v = np.empty(PULSE_GRID)
    pulse_s = np.empty(PULSE_GRID)
    grid_i = np.empty(GRID)
    grid_v = np.empty(GRID)
    grid_s = np.empty(GRID)
    E, w, C, esr_b = peak[b], omega[b], capacitance[b], esr[b]
    half = np.pi / w
    v_dc_est = E
    peak_i = 5.0 * max(constant[b] + conductance[b] * v_dc_est, 1e-9)
    t1 = tc = -1.0
    converged = False
    load = 0.0
    for fit in range(FIT_PASSES):
        load = max(constant[b] + conductance[b] * v_dc_est, 1e-9)
        offset, slope = _path_line(peak_i, si[b], vv[b], sat[b], n_e[b], r_s[b],
                                   perveance[b])
        # the node sees the ESR's drop of the load current while charging: fold it in
        R = resistance[b] + slope + esr_b
        V = offset - esr_b * load
        L, l1, l2, v_dc, ip, vp = _circuit(E, w, R, inductance[b], C, load, V)
        if t1 < 0.0:  # Schade's infinite-C limit, widened by the droop
            phi = _half_angle(R * load / max(E - V, 1.0))
            v_est = max(E * np.cos(phi) - V, 0.05 * E)
            s = min(max((v_est - 0.5 * load * half / C + V) / E, 0.05), 0.999)
            t1 = np.arcsin(s) / w
            tc = min(max((0.5 * np.pi + phi) / w - t1, 0.02 * half), 0.9 * half)
        t1, tc, converged = _newton(E, w, R, L, C, load, V, l1, l2, v_dc, ip, vp, half,
                                    t1, tc)
        v1 = E * np.sin(w * t1) - V
        ip1, vp1, _, _ = _particular(w, load, v_dc, ip, vp, t1)
        y0, y1 = -ip1, v1 - vp1
        total = 0.0
        peak_i = load
        samples = PULSE_GRID if fit == FIT_PASSES - 1 else 9  # the last pass in full
        _samples(R, L, C, l1, l2, w, load, v_dc, ip, vp, t1, y0, y1, tc / (samples - 1),
                 samples, pulse_i, pulse_v, pulse_s)
        for k in range(samples):
            peak_i = max(peak_i, pulse_i[k])
            total += pulse_v[k]
        # the pass's DC (the pulse, then the linear fall), and the resistive load it
        # implies: on the line from the open-circuit crest through it, V = E - R_o I
        v_end = pulse_v[samples - 1]
        v_mean = (tc * total / samples
                  + (half - tc) * (v_end - 0.5 * load / C * (half - tc))) / half
        r_out = max(E - v_mean, 0.0) / load
        i_est = (constant[b] + conductance[b] * E) / (1.0 + conductance[b] * r_out)
        v_dc_est = max(E - r_out * i_est, 0.0)
    # the half-cycle on a uniform grid from the start, then the pulse's own samples
    v1 = E * np.sin(w * t1) - V
    v_end = pulse_v[PULSE_GRID - 1]
    square = 0.0
    single = True
    piv = -np.inf
    _samples(R, L, C, l1, l2, w, load, v_dc, ip, vp, t1, y0, y1, half / GRID, GRID,
             grid_i, grid_v, grid_s)
    for k in range(GRID + PULSE_GRID):
        if k < GRID:
            t = half * k / GRID
            on = t < tc
            if on:
                i, v = max(grid_i[k], 0.0), grid_v[k]
            else:
                i, v = 0.0, v_end - load / C * (t - tc)
            sine = grid_s[k]
        else:
            j = k - GRID
            i, v, on, sine = max(pulse_i[j], 0.0), pulse_v[j], True, pulse_s[j]
            square += i * i * (0.5 if j == 0 or j == PULSE_GRID - 1 else 1.0)
            if 0 < j < PULSE_GRID - 1 and pulse_i[j] < -1e-6 * peak_i:
                single = False
        src = E * abs(sine)
        di = (E * sine - V - R * i - v) / L if on else 0.0
        rect = v + esr_b * (i - load)
        current[b, k] = i
        if k < GRID:
            node[b, k] = rect
        # the reverse voltage on a blocked element (as the simulator's figures take it)
        if topology[b] == 0:  # bridge: half of output plus winding terminal
            reverse = 0.5 * (rect + src - resistance[b] * i - L * di)
        elif topology[b] == 2:  # hybrid bridge: the conducting element's drop on top
            reverse = rect
            if i > 0.0:
                junction = n_e[b] * rectifier.THERMAL_VOLTAGE * np.log1p(i / sat[b]) \
                    + r_s[b] * i
                reverse += max(junction, np.cbrt(i / perveance[b]) ** 2)
        else:  # centre-tap: output plus the other half-winding
            reverse = rect + src
        piv = max(piv, reverse)
    scalars[b, 0] = t1
    scalars[b, 1] = tc
    scalars[b, 2] = 1.0 if (converged and single and tc < 0.9 * half) else 0.0
    scalars[b, 3] = peak_i
    scalars[b, 4] = square * tc / (PULSE_GRID - 1) / half
    scalars[b, 5] = piv


@numba.njit(cache=True, parallel=True)
def _cycle_kernel(peak, omega, resistance, inductance, capacitance, esr, constant, conductance,
                  si, vv, sat, n_e, r_s, perveance, topology, node, current, scalars):
    """Each row's reservoir cycle (see :func:`reservoir_cycle`); fills the output arrays."""
    count = peak.shape[0]
    for b in numba.prange(count):  # rows are independent: threads split them
        _cycle_row(b, peak, omega, resistance, inductance, capacitance, esr, constant, conductance,
                   si, vv, sat, n_e, r_s, perveance, topology, node, current, scalars)


@numba.njit(cache=True)
def _surge_row(b, peak, omega, resistance, inductance, capacitance, esr, si, vv, sat, n_e, r_s,
               perveance, out):
    """One row of :func:`_surge_kernel` (a function of its own, so that the threads of the
    loop over rows share nothing but the arrays each row writes)."""
    i_a, v_a, s_a = np.empty(PULSE_GRID), np.empty(PULSE_GRID), np.empty(PULSE_GRID)
    i_b, v_b, s_b = (np.empty(2 * PULSE_GRID), np.empty(2 * PULSE_GRID),
                     np.empty(2 * PULSE_GRID))
    E, w, C = peak[b], omega[b], capacitance[b]
    half = np.pi / w
    peak_i = E / max(resistance[b] + esr[b], 1e-3)
    best_i = best_v = 0.0
    for _ in range(2):
        offset, slope = _path_line(peak_i, si[b], vv[b], sat[b], n_e[b], r_s[b],
                                   perveance[b])
        R = resistance[b] + slope + esr[b]
        L, l1, l2, v_dc, ip, vp = _circuit(E, w, R, inductance[b], C, 0.0, offset)
        # the quarter cycle from the crest, then the next half-cycle from where it left off
        ip0, vp0, _, _ = _particular(w, 0.0, v_dc, ip, vp, 0.5 * half)
        _samples(R, L, C, l1, l2, w, 0.0, v_dc, ip, vp, 0.5 * half, -ip0, -vp0,
                 0.5 * half / (PULSE_GRID - 1), PULSE_GRID, i_a, v_a, s_a)
        ip0, vp0, _, _ = _particular(w, 0.0, v_dc, ip, vp, 0.0)
        _samples(R, L, C, l1, l2, w, 0.0, v_dc, ip, vp, 0.0, i_a[PULSE_GRID - 1] - ip0,
                 v_a[PULSE_GRID - 1] - vp0, half / (2 * PULSE_GRID - 1), 2 * PULSE_GRID,
                 i_b, v_b, s_b)
        best_i, best_v = 0.0, -np.inf
        for k in range(3 * PULSE_GRID - 1):
            if k < PULSE_GRID:
                i, v = i_a[k], v_a[k]
            else:
                i, v = i_b[k - PULSE_GRID + 1], v_b[k - PULSE_GRID + 1]
            if k > 0 and i < 0.0:  # the pulse has ended (the first sample is the rest)
                break
            best_i = max(best_i, i)
            best_v = max(best_v, v)
        peak_i = best_i
    out[b, 0] = best_i
    out[b, 1] = best_v


@numba.njit(cache=True, parallel=True)
def _surge_kernel(peak, omega, resistance, inductance, capacitance, esr, si, vv, sat, n_e, r_s,
                  perveance, out):
    """Each row's switch-on from rest at the crest (see :func:`surge`)."""
    for b in numba.prange(peak.shape[0]):  # rows are independent: threads split them
        _surge_row(b, peak, omega, resistance, inductance, capacitance, esr, si, vv, sat, n_e, r_s,
                   perveance, out)


@numba.njit(cache=True)
def _ladder_row(b, reservoir, path_current, drawn, frequency, capacitance, esr, feed_r, feed_l,
                conductance, dc, cos_t, sin_t, ripple, node_peak, cap_ms, feed_ms, cross):
    """One row of :func:`_ladder_kernel` (a function of its own, so that the threads of the
    loop over rows share nothing but the arrays each row writes)."""
    n = capacitance.shape[1]
    M = reservoir.shape[1]
    H = cos_t.shape[1]
    X = np.empty(H, np.complex128)
    A = np.empty(H, np.complex128)
    phasor = np.empty((H, n), np.complex128)
    shunt_z = np.empty(n, np.complex128)
    series = np.empty(n, np.complex128)
    total = np.empty(n, np.complex128)
    mean = 0.0
    for m in range(M):
        mean += reservoir[b, m] / M
    for h in range(H):
        xr = xi = ar = ai = 0.0
        for m in range(M):
            x = reservoir[b, m] - mean
            a = path_current[b, m] - drawn[b]
            xr += x * cos_t[m, h]
            xi -= x * sin_t[m, h]
            ar += a * cos_t[m, h]
            ai -= a * sin_t[m, h]
        X[h] = complex(xr, xi)
        A[h] = complex(ar, ai)
    for k in range(n):
        cap_ms[b, k] = 0.0
        feed_ms[b, k] = 0.0
    cross[b] = 0.0
    scale = 2.0 / (M * M)  # Parseval for a real signal of harmonics 1..H (H < M / 2)
    for h in range(H):
        w = 2.0 * np.pi * 2.0 * frequency[b] * (h + 1)
        for k in range(n):
            shunt_z[k] = esr[b, k] + 1.0 / complex(0.0, w * capacitance[b, k])
            series[k] = complex(feed_r[b, k], w * feed_l[b, k])
        total[n - 1] = 1.0 / shunt_z[n - 1] + conductance[b, n - 1]
        for k in range(n - 2, -1, -1):
            total[k] = (1.0 / shunt_z[k] + conductance[b, k]
                        + 1.0 / (series[k + 1] + 1.0 / total[k + 1]))
        phasor[h, 0] = X[h]
        for k in range(1, n):
            phasor[h, k] = phasor[h, k - 1] / (1.0 + series[k] * total[k])
        for k in range(1, n):
            c = phasor[h, k] / shunt_z[k]
            f = (phasor[h, k - 1] - phasor[h, k]) / series[k]
            cap_ms[b, k] += scale * (c.real ** 2 + c.imag ** 2)
            feed_ms[b, k] += scale * (f.real ** 2 + f.imag ** 2)
            if k == 1:
                cross[b] += scale * (A[h].real * f.real + A[h].imag * f.imag)
    # node waveforms: the reservoir as it is, the others rebuilt from their harmonics
    high = low = reservoir[b, 0]
    for m in range(M):
        high = max(high, reservoir[b, m])
        low = min(low, reservoir[b, m])
    ripple[b, 0] = high - low
    node_peak[b, 0] = max(high, 0.0)
    for k in range(1, n):
        high = -np.inf
        low = np.inf
        for m in range(M):
            v = dc[b, k]
            for h in range(H):
                p = phasor[h, k]
                v += (2.0 / M) * (p.real * cos_t[m, h] - p.imag * sin_t[m, h])
            high = max(high, v)
            low = min(low, v)
        ripple[b, k] = high - low
        node_peak[b, k] = max(high, 0.0)


@numba.njit(cache=True, parallel=True)
def _ladder_kernel(reservoir, path_current, drawn, frequency, capacitance, esr, feed_r, feed_l,
                   conductance, dc, cos_t, sin_t, ripple, node_peak, cap_ms, feed_ms, cross):
    """Each row's ladder ripple from its reservoir waveform (see :func:`steady_state`).

    Harmonics 1..HARMONICS of the half-cycle waveform (a DFT of GRID samples) pass the ladder as
    phasors; mean squares by Parseval's theorem, node waveforms rebuilt from the same harmonics.
    """
    count = capacitance.shape[0]
    for b in numba.prange(count):  # rows are independent: threads split them
        _ladder_row(b, reservoir, path_current, drawn, frequency, capacitance, esr, feed_r, feed_l,
                    conductance, dc, cos_t, sin_t, ripple, node_peak, cap_ms, feed_ms, cross)
