"""Time-domain solution of the whole HV supply: exact-exponential stepping and periodic steady state.

The linear ladder (see :mod:`optimiser.physics.ladder`) is stepped exactly by its matrix exponential with
a first-order-hold on the inputs; the only nonlinearity, the rectifier path, is solved implicitly
at each step end as a scalar complementarity problem (see :func:`optimiser.physics.rectifier.path_step`).

A full-wave rectifier's circuit repeats every half mains cycle (the two paths take turns and are
alike), so the periodic steady state is found by shooting over one half-cycle: Newton's method on
``x(T/2) = x(0)`` with the exact Jacobian of the discrete map propagated along the step.
Everything is vectorised over a batch of designs.
"""

from __future__ import annotations

from dataclasses import dataclass

import numba
import numpy as np
from optimiser.physics.ladder import StateSpace
from optimiser.physics.rectifier import PathElements, path_step

__all__ = ["Discretisation", "discretise", "Waveforms", "periodic_steady_state", "step_response",
           "peaks"]


@dataclass(frozen=True)
class Discretisation:
    """The ladder's exact one-step map ``x+ = Phi x + Ga u + Gb u+`` for a step h.

    Attributes
    ----------
    step : float
        Time step h. [s]
    phi : ndarray (B, n, n)
    input_now, input_next : ndarray (B, n, m)
        First-order-hold input matrices for the inputs at the step start and end.
    """

    step: float
    phi: np.ndarray
    input_now: np.ndarray
    input_next: np.ndarray


_PADE13 = (64764752532480000.0, 32382376266240000.0, 7771770303897600.0, 1187353796428800.0,
           129060195264000.0, 10559470521600.0, 670442572800.0, 33522128640.0, 1323241920.0,
           40840800.0, 960960.0, 16380.0, 182.0, 1.0)


def expm(matrices):
    """Matrix exponential of a stack of matrices (B, n, n) in one vectorised pass.

    Scaling and squaring with the [13/13] Pade approximant; one scaling for the whole stack,
    taken from its largest 1-norm.

    References
    ----------
    .. [1] N. J. Higham, "The scaling and squaring method for the matrix exponential revisited,"
       SIAM J. Matrix Anal. Appl., vol. 26, no. 4, 2005.
    """
    a = np.asarray(matrices, dtype=float)
    norm = np.max(np.sum(np.abs(a), axis=-2)) if a.size else 0.0
    squarings = max(0, int(np.ceil(np.log2(norm / 5.371920351148152)))) if norm > 0 else 0
    a = a / 2.0 ** squarings
    b = _PADE13
    ident = np.broadcast_to(np.eye(a.shape[-1]), a.shape)
    a2 = a @ a
    a4 = a2 @ a2
    a6 = a2 @ a4
    u = a @ (a6 @ (b[13] * a6 + b[11] * a4 + b[9] * a2) + b[7] * a6 + b[5] * a4 + b[3] * a2
             + b[1] * ident)
    v = a6 @ (b[12] * a6 + b[10] * a4 + b[8] * a2) + b[6] * a6 + b[4] * a4 + b[2] * a2 \
        + b[0] * ident
    result = np.linalg.solve(v - u, v + u)
    for _ in range(squarings):
        result = result @ result
    return result


def discretise(model: StateSpace, step: float) -> Discretisation:
    """Exact discretisation of ``dx/dt = A x + B u`` with u linear over each step.

    Parameters
    ----------
    model : StateSpace
    step : float
        [s]

    Returns
    -------
    Discretisation
        Kept on the model, so a model is discretised once per step (the switch-on surge's
        step is the steady state's).

    References
    ----------
    .. [1] G. F. Franklin, J. D. Powell, M. Workman, Digital Control of Dynamic Systems, 3rd ed.,
       1998, sec. 6.3 (triangle-hold equivalent, computed from one augmented matrix exponential).
    """
    memo = model.__dict__.setdefault("_discretised", {})
    if step in memo:
        return memo[step]
    A, B = model.A, model.B
    batch, n, _ = A.shape
    m = B.shape[2]
    block = np.zeros((batch, n + 2 * m, n + 2 * m))
    block[:, :n, :n] = A * step
    block[:, :n, n:n + m] = B * step
    block[:, n:n + m, n + m:] = np.eye(m)
    big = expm(block)
    phi = big[:, :n, :n]
    gamma0 = big[:, :n, n:n + m]
    gamma1 = big[:, :n, n + m:]
    memo[step] = Discretisation(step=step, phi=phi, input_now=gamma0 - gamma1,
                                input_next=gamma1)
    return memo[step]


@dataclass(frozen=True)
class Waveforms:
    """Sampled waveforms over one period of the steady state (or a transient), batch first.

    Attributes
    ----------
    time : ndarray (K+1,)
        Sample times from the start of the half mains cycle. [s]
    state : ndarray (B, K+1, n)
        Ladder states. [V] or [A]
    drive : ndarray (B, K+1)
        e, the voltage driving the path after the elements' drop. [V]
    current : ndarray (B, K+1)
        Path current. [A]
    drop : ndarray (B, K+1)
        Forward drop of the conducting path (negative: the reverse voltage while blocked). [V]
    source : ndarray (B, K+1)
        Open-circuit source voltage of the active half-winding. [V]
    converged : ndarray (B,) of bool
    residual : ndarray (B,)
        Largest periodicity error of a capacitor voltage at the end. [V]
    """

    time: np.ndarray
    state: np.ndarray
    drive: np.ndarray
    current: np.ndarray
    drop: np.ndarray
    source: np.ndarray
    converged: np.ndarray
    residual: np.ndarray


def _output_row(model: StateSpace):
    """(c, d) so that the path current is c.x + d.u."""
    c, d = model.feed_current
    return c[:, 0], d[:, 0]


@numba.njit(cache=True, parallel=True, nogil=True)
def _march_kernel(phi, ga, gb, kappa, c_row, beta, d_e, load_feed, peak, sines, x0, e0,
                  si, vv, isat, nem, rs, perv, want_jac, store, out_c, out_d, out_k,
                  xs, es, iss, ds, jac, top):
    """Compiled loop of :func:`_march` over the designs (see there); fills the output arrays.

    The designs are independent: threads split them (``prange``), each row a function of its
    own (DEVELOPERS.md: an inline row body once made numba take a reduction across rows).
    """
    for b in numba.prange(x0.shape[0]):
        _march_row(b, phi, ga, gb, kappa, c_row, beta, d_e, load_feed, peak, sines, x0, e0,
                   si, vv, isat, nem, rs, perv, want_jac, store, out_c, out_d, out_k,
                   xs, es, iss, ds, jac, top)


@numba.njit(cache=True)
def _track(b, x, e, out_c, out_d, out_k, top):
    """Raise ``top[b]`` to the outputs ``C x + d e + k`` of the state (x, e) where higher."""
    for m in range(top.shape[1]):
        v = 0.0
        for r in range(x.shape[0]):
            v += out_c[b, m, r] * x[r]
        v = v + out_d[b, m] * e + out_k[b, m]  # transients.node_outputs' order of sums
        if v > top[b, m]:
            top[b, m] = v


@numba.njit(cache=True)
def _march_row(b, phi, ga, gb, kappa, c_row, beta, d_e, load_feed, peak, sines, x0, e0,
               si, vv, isat, nem, rs, perv, want_jac, store, out_c, out_d, out_k,
               xs, es, iss, ds, jac, top):
    """One design's march: the trajectory into (xs, es, iss, ds) if ``store``, the peaks of
    the outputs ``out_c x + out_d e + out_k`` into ``top`` if it has columns."""
    n = x0.shape[1]
    steps = sines.shape[0] - 1
    x = np.empty(n)
    y = np.empty(n)
    jx = np.empty((n, n + 1))
    dy = np.empty((n, n + 1))
    je = np.empty(n + 1)
    dq = np.empty(n + 1)
    for r in range(n):
        x[r] = x0[b, r]
    e = e0[b]
    i0 = d_e[b] * e + load_feed[b]
    for r in range(n):
        i0 += c_row[b, r] * x[r]
    if store:
        for r in range(n):
            xs[b, 0, r] = x[r]
        es[b, 0] = e
        ds[b, 0] = peak[b] * sines[0] - e
        iss[b, 0] = max(i0, 0.0)
    if top.shape[1]:
        for m in range(top.shape[1]):
            top[b, m] = -np.inf
        _track(b, x, e, out_c, out_d, out_k, top)
    z = np.nan
    if want_jac:
        jx[:, :] = 0.0
        for r in range(n):
            jx[r, r] = 1.0
        je[:] = 0.0
        je[n] = 1.0
    for k in range(1, steps + 1):
        src = peak[b] * sines[k]
        # y: the state at the step end with no drop in the path (u_k held, then first-order)
        for r in range(n):
            acc = ga[b, r] * e + gb[b, r] * src + kappa[b, r]
            for c in range(n):
                acc += phi[b, r, c] * x[c]
            y[r] = acc
        q = d_e[b] * src + load_feed[b]
        for r in range(n):
            q += c_row[b, r] * y[r]
        i, d, sens, z = path_step(q, beta[b], si[b], vv[b], isat[b], nem[b], rs[b], perv[b],
                                  z)
        if want_jac:
            for r in range(n):
                for c in range(n + 1):
                    acc = 0.0
                    for m in range(n):
                        acc += phi[b, r, m] * jx[m, c]
                    dy[r, c] = acc
        hold = i <= 0.0 and d_e[b] == 0.0
        if hold:
            # Blocked inductive path (its current is a state): hold the drive constant over
            # the step at the value that keeps the current at zero. A first-order hold from
            # the last conducting value rings (the trapezoidal rule's undamped mode) into
            # false pulses. A resistive path has no such mode and keeps the first-order hold.
            den = d_e[b]
            acc0 = load_feed[b]
            for r in range(n):
                g0 = ga[b, r] + gb[b, r]
                y[r] -= ga[b, r] * e + gb[b, r] * src
                den += c_row[b, r] * g0
                acc0 += c_row[b, r] * y[r]
            e_hold = -acc0 / den
            for r in range(n):
                x[r] = y[r] + (ga[b, r] + gb[b, r]) * e_hold
            d = src - e_hold
            i = 0.0
            if want_jac:
                for c in range(n + 1):
                    acc = 0.0
                    for r in range(n):
                        acc += c_row[b, r] * dy[r, c]
                    je[c] = -acc / den
                for r in range(n):
                    for c in range(n + 1):
                        jx[r, c] = dy[r, c] + (ga[b, r] + gb[b, r]) * je[c]
        else:
            for r in range(n):
                x[r] = y[r] - gb[b, r] * d
            if want_jac:
                for r in range(n):
                    for c in range(n + 1):
                        dy[r, c] += ga[b, r] * je[c]
                for c in range(n + 1):
                    acc = 0.0
                    for r in range(n):
                        acc += c_row[b, r] * dy[r, c]
                    dq[c] = sens * acc
                for r in range(n):
                    for c in range(n + 1):
                        jx[r, c] = dy[r, c] - gb[b, r] * dq[c]
                for c in range(n + 1):
                    je[c] = -dq[c]
        e = src - d
        if store:
            for r in range(n):
                xs[b, k, r] = x[r]
            es[b, k] = e
            iss[b, k] = i
            ds[b, k] = d
        if top.shape[1]:
            _track(b, x, e, out_c, out_d, out_k, top)
    if want_jac:
        for r in range(n):
            for c in range(n + 1):
                jac[b, r, c] = jx[r, c]
        for c in range(n + 1):
            jac[b, n, c] = je[c]


def _march(disc, c_row, d_row, loads, peak, omega, x0, e0, elements, steps, t0, sensitivity,
           outputs=None):
    """Step the supply from (x0, e0); optionally propagate d(x, e)/d(x0, e0).

    Each step: ``y = Phi x + Ga e + Gb v_src + kappa`` (the state with no drop at the step
    end), the path current ``i = q - beta d`` with ``q = c.y + d_e v_src + loads``, the
    complementarity problem for ``(i, d)``, then ``x+ = y - Gb d`` and ``e+ = v_src - d``.

    With ``outputs`` (a linear output map (C, D), see :func:`peaks`) no trajectory is kept:
    the only result is the largest value of each output over the run, (B, K).
    """
    batch, n = x0.shape
    h = disc.step
    ga = np.ascontiguousarray(disc.input_now[:, :, 0])
    gb = np.ascontiguousarray(disc.input_next[:, :, 0])
    kappa = np.einsum("bnm,bm->bn", disc.input_now[:, :, 1:] + disc.input_next[:, :, 1:], loads)
    beta = np.einsum("bn,bn->b", c_row, gb) + d_row[:, 0]
    load_feed = np.einsum("bm,bm->b", d_row[:, 1:], loads)
    times = t0 + h * np.arange(steps + 1)
    sines = np.abs(np.sin(omega * times))  # the active half-winding changes every half-cycle
    store = outputs is None
    length = steps + 1 if store else 1
    xs = np.empty((batch, length, n))
    es, iss, ds = (np.empty((batch, length)) for _ in range(3))
    jac = np.empty((batch, n + 1, n + 1))
    if store:
        out_c, out_d, out_k = np.empty((batch, 0, n)), np.empty((batch, 0)), np.empty((batch, 0))
    else:
        c, d = outputs
        out_c = np.ascontiguousarray(c, dtype=float)
        out_d = np.ascontiguousarray(d[:, :, 0], dtype=float)
        out_k = np.ascontiguousarray(np.matmul(d[:, :, 1:], loads[:, :, None])[:, :, 0])
    top = np.empty((batch, out_c.shape[1]))
    el = elements
    count = (batch,)
    _march_kernel(np.ascontiguousarray(disc.phi), ga, gb, kappa, np.ascontiguousarray(c_row),
                  beta, np.ascontiguousarray(d_row[:, 0]), load_feed,
                  np.broadcast_to(np.asarray(peak, float), count).copy(), sines,
                  np.ascontiguousarray(x0, dtype=float),
                  np.broadcast_to(np.asarray(e0, float), count).copy(),
                  *(np.broadcast_to(np.asarray(a, float), count).copy() for a in (
                      el.silicon_count, el.valve_count, el.saturation_current,
                      el.emission_coefficient, el.series_resistance, el.perveance)),
                  bool(sensitivity), store, out_c, out_d, out_k, xs, es, iss, ds, jac, top)
    if not store:
        return top
    return times, xs, es, iss, ds, np.asarray(peak)[:, None] * sines[None, :], \
        (jac if sensitivity else None)


def periodic_steady_state(model: StateSpace, elements: PathElements, peak, frequency, loads,
                          x_guess, *, steps=256, max_newton=30, tol=1e-6):
    """Periodic steady state of a full-wave capacitor- or choke-input supply, by shooting.

    Parameters
    ----------
    model : StateSpace
        The ladder, with the rectifier path as its feed 0.
    elements : PathElements
        What the conducting path holds.
    peak : ndarray (B,)
        Peak open-circuit voltage of the (half-)winding. [V]
    frequency : float or ndarray
        Mains frequency; one value for the whole batch. [Hz]
    loads : ndarray (B, N)
        Constant-current sinks at the nodes. [A]
    x_guess : ndarray (B, n)
        Starting states (e.g. a DC estimate).
    steps : int
        Time steps per half mains cycle.
    max_newton : int
        Newton iterations at most.
    tol : float
        Convergence tolerance on the periodicity error, relative to the peak voltage. [-]

    Returns
    -------
    Waveforms
        Over one half mains cycle, starting at a zero crossing of the source.

    References
    ----------
    .. [1] T. J. Aprille, T. N. Trick, "Steady-state analysis of nonlinear circuits with periodic
       inputs," Proc. IEEE, vol. 60, no. 1, 1972 (shooting-Newton).
    """
    frequency = float(np.atleast_1d(frequency)[0])
    omega = 2 * np.pi * frequency
    h = 0.5 / frequency / steps
    disc = discretise(model, h)
    c_row, d_row = _output_row(model)
    peak = np.asarray(peak, dtype=float)
    batch, n = x_guess.shape
    x0 = np.array(x_guess, dtype=float)
    e0 = np.einsum("bn,bn->b", model.node_voltage[0][:, 0], x0)  # blocked: e equals node 0
    scale = _is_voltage(model, n).astype(float)
    cap = model.capacitor_voltage_index
    converged = np.zeros(batch, dtype=bool)
    residual = np.full(batch, np.inf)
    times = None
    xs = np.empty((batch, steps + 1, n))
    es, iss, ds, src = (np.empty((batch, steps + 1)) for _ in range(4))
    active = np.arange(batch)
    # Whether a design's next march is expected to be its last (Newton's quadratic rate from
    # its last two residuals): that march skips the Jacobian (a third of its cost); a design
    # it leaves short is marched again from the same start, with the Jacobian.
    last = np.zeros(batch, dtype=bool)
    before = np.full(batch, np.nan)
    for _ in range(max_newton):
        # only the designs not yet periodic are marched again
        sub = _take_disc(disc, active)
        args = (c_row[active], d_row[active], loads[active], peak[active], omega, x0[active],
                e0[active], elements.take(active), steps, 0.0)
        cheap = bool(np.all(last[active]))
        times, xa, ea, ia, da, sa, jac = _march(sub, *args, not cheap)
        xs[active], es[active], iss[active], ds[active], src[active] = xa, ea, ia, da, sa
        r = np.concatenate([xa[:, -1] - x0[active], (ea[:, -1] - e0[active])[:, None]], axis=1)
        res = np.max(np.abs(r[:, :n][:, cap]), axis=1) if cap.size else np.zeros(active.size)
        done = res <= tol * np.maximum(peak[active], 1.0)
        residual[active] = res
        converged[active] = done
        if np.all(done):
            break
        if cheap:
            jac = np.broadcast_to(2.0 * np.eye(n + 1), (active.size, n + 1, n + 1)).copy()
            short = np.flatnonzero(~done)
            jac[short] = _march(_take_disc(sub, short), *(
                a[short] if isinstance(a, np.ndarray) else a for a in args[:4]), omega,
                args[5][short], args[6][short], args[7].take(short), steps, 0.0, True)[-1]
        relative = res / np.maximum(peak[active], 1.0)
        with np.errstate(divide="ignore", invalid="ignore"):
            last[active] = 3.0 * relative ** 2 * relative / before[active] ** 2 <= tol
        before[active] = relative
        delta = _newton_step(jac - np.eye(n + 1)[None], -r)
        # keep a Newton step from throwing node voltages far outside the physical range
        vmax = np.max(np.abs(delta[:, :n] * scale[None, :]), axis=1)
        damp = np.minimum(1.0, 0.5 * np.maximum(peak[active], 1.0) / np.maximum(vmax, 1e-300))
        delta *= np.where(done, 0.0, damp)[:, None]
        x0[active] += delta[:, :n]
        e0[active] += delta[:, n]
        active = active[~done]
    return Waveforms(time=times, state=xs, drive=es, current=iss, drop=ds, source=src,
                     converged=converged, residual=residual)


def _take_disc(disc: Discretisation, index) -> Discretisation:
    return Discretisation(step=disc.step, phi=disc.phi[index], input_now=disc.input_now[index],
                          input_next=disc.input_next[index])


def _newton_step(system, rhs):
    """Solve each design's Newton system; a singular one (no conduction at all, say) by least
    squares."""
    try:
        return np.linalg.solve(system, rhs[:, :, None])[:, :, 0]
    except np.linalg.LinAlgError:
        return np.stack([np.linalg.lstsq(a, b, rcond=None)[0] for a, b in zip(system, rhs)])


def _is_voltage(model: StateSpace, n):
    mask = np.zeros(n, dtype=bool)
    mask[model.capacitor_voltage_index] = True
    return mask


def step_response(model: StateSpace, elements: PathElements, peak, frequency, loads, x0, e0,
                  duration, *, steps_per_half_cycle=64, start_time=0.0):
    """March the supply through a transient (switch-on, a load step) from a known state.

    Parameters
    ----------
    model, elements, peak, frequency, loads : as for :func:`periodic_steady_state`
        ``loads`` and ``peak`` are held over the whole run.
    x0 : ndarray (B, n)
        Starting states.
    e0 : ndarray (B,)
        Starting path drive (the node-0 voltage for a blocked path). [V]
    duration : float
        [s]
    steps_per_half_cycle : int
    start_time : float
        Mains phase at the start, as a time from a zero crossing. [s]

    Returns
    -------
    Waveforms
        ``converged`` all True and ``residual`` zero: nothing is iterated.
    """
    frequency = float(np.atleast_1d(frequency)[0])
    omega = 2 * np.pi * frequency
    h = 0.5 / frequency / steps_per_half_cycle
    steps = int(np.ceil(duration / h))
    disc = discretise(model, h)
    c_row, d_row = _output_row(model)
    times, xs, es, iss, ds, src, _ = _march(disc, c_row, d_row, loads, np.asarray(peak, float),
                                            omega, x0, e0, elements, steps, start_time, False)
    batch = x0.shape[0]
    return Waveforms(time=times, state=xs, drive=es, current=iss, drop=ds, source=src,
                     converged=np.ones(batch, dtype=bool), residual=np.zeros(batch))


def peaks(model: StateSpace, elements: PathElements, peak, frequency, loads, x0, e0, duration,
          outputs, *, steps_per_half_cycle=64, start_time=0.0):
    """The largest value over a transient of each output ``y = C x + D u`` (node voltages, say).

    The march of :func:`step_response` without keeping its trajectory: the same steps and the
    same states, so the same peaks as the maximum over its samples (to rounding: the output
    is summed in the march's own order), in a fraction of the memory.

    Parameters
    ----------
    model, elements, peak, frequency, loads, x0, e0, duration, steps_per_half_cycle, start_time
        As for :func:`step_response`.
    outputs : (C, D)
        A linear output map of the ladder, shapes (B, K, n) and (B, K, m) (e.g.
        ``model.node_voltage``).

    Returns
    -------
    ndarray (B, K)
        [same as the outputs]
    """
    frequency = float(np.atleast_1d(frequency)[0])
    omega = 2 * np.pi * frequency
    h = 0.5 / frequency / steps_per_half_cycle
    steps = int(np.ceil(duration / h))
    disc = discretise(model, h)
    c_row, d_row = _output_row(model)
    return _march(disc, c_row, d_row, loads, np.asarray(peak, float), omega, x0, e0, elements,
                  steps, start_time, False, outputs=outputs)
