"""Piecewise-analytic periodic steady state of a full-wave capacitor-input supply (screening).

The search's screening tier: every design of a population, at every corner, with no time
stepping: a compiled loop per design (numba; the rows split across the machine's cores, each
row's result independent of the others). The full simulator (:mod:`optimiser.physics.supply`)
re-checks whatever the search keeps. The compiled loops are in
:mod:`optimiser.physics.analytic_kernels`; this module is the array-level API around them.

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

The ladder after the reservoir is linear: its DC exactly from the far end, its ripple as the
reservoir's first harmonics (a DFT of the sampled half-cycle) times each node's transfer
function, mean squares by Parseval's theorem.

Approximations (why this is a screen and not the simulator): the rectifier's law is linearised
over the pulse; the ladder after the reservoir loads it only as the capacitance (and loss) it
shows at the ripple frequency; the bleeders are taken at their DC current; a current that
never stops (continuous conduction) is not solved, and says so. ``tests/test_analytic.py``
measures the agreement with closed forms and the simulator.

References
----------
.. [1] O. H. Schade, "Analysis of rectifier operation", Proc. IRE 31 (7), 1943, pp. 341-361.
.. [2] F. Langford-Smith (ed.), Radiotron Designer's Handbook, 4th ed., 1953, ch. 30
   (capacitor-input filters; the linear ladder's ripple attenuation).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from optimiser.physics import rectifier
from optimiser.physics.analytic_kernels import (  # noqa: F401 (the method's constants, here too)
    FIT_FROM,
    FIT_PASSES,
    GRID,
    HARMONICS,
    NEWTON_ITERATIONS,
    PULSE_GRID,
    _cycle_kernel,
    _ladder_kernel,
    _surge_kernel,
)

__all__ = ["CycleFigures", "reservoir_cycle", "steady_state",
           "surge", "choke_overshoot", "downstream_capacitance"]

_DFT_ANGLE = 2.0 * np.pi * np.outer(np.arange(GRID), np.arange(1, HARMONICS + 1)) / GRID
_DFT_COS, _DFT_SIN = np.cos(_DFT_ANGLE), np.sin(_DFT_ANGLE)


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
    current : ndarray (B, GRID + PULSE_GRID)
        Path current at the samples of ``node`` followed by samples over the pulse. [A]
    piv : ndarray
        Largest reverse voltage across a blocked rectifying element. [V]
    peak_current, mean_square_current : ndarray
        Path current's peak and its mean square over the half-cycle. [A], [A^2]
    """

    start: np.ndarray
    length: np.ndarray
    converged: np.ndarray
    node: np.ndarray
    current: np.ndarray
    piv: np.ndarray
    peak_current: np.ndarray
    mean_square_current: np.ndarray


def _column(x, count):
    """A contiguous float column of ``count`` (a scalar broadcast), as the compiled loops take."""
    return np.ascontiguousarray(np.broadcast_to(np.asarray(x, float), (count,)))


def reservoir_cycle(peak, frequency, resistance, inductance, capacitance, esr, load,
                    elements: rectifier.PathElements, conductance=None, topology=None):
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
    topology : ndarray of str (B,), optional
        ``bridge``, ``centre-tap`` (the default) or ``hybrid-bridge``, for the reverse voltage.

    Returns
    -------
    CycleFigures

    References
    ----------
    .. [1] O. H. Schade, "Analysis of rectifier operation", Proc. IRE 31, 1943.
    """
    count = peak.shape[0]
    f64 = lambda x: _column(x, count)  # noqa: E731
    omega = 2.0 * np.pi * f64(frequency)
    conductance = np.zeros(count) if conductance is None else conductance
    codes = np.zeros(count, np.int64) if topology is None else np.select(
        [np.asarray(topology) == "bridge", np.asarray(topology) == "hybrid-bridge"], [0, 2], 1)
    node = np.empty((count, GRID))
    current = np.empty((count, GRID + PULSE_GRID))
    scalars = np.empty((count, 6))
    el = elements
    _cycle_kernel(f64(peak), omega, f64(resistance), f64(inductance), f64(capacitance), f64(esr),
                  f64(load), f64(conductance), f64(el.silicon_count), f64(el.valve_count),
                  f64(el.saturation_current), f64(el.emission_coefficient),
                  f64(el.series_resistance), f64(el.perveance), codes, node, current, scalars)
    return CycleFigures(start=scalars[:, 0], length=scalars[:, 1], converged=scalars[:, 2] > 0.5,
                        node=node, current=current, piv=scalars[:, 5],
                        peak_current=scalars[:, 3], mean_square_current=scalars[:, 4])


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


def steady_state(values, elements: rectifier.PathElements, peak, frequency,
                 topology) -> dict:
    """Every steady-state figure of a batch of supplies, under the names
    :func:`optimiser.assessment.steady_state.figures` gives them (those a screen needs).

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
                            conductance=v.load_conductance[:, 0] + after_b, topology=topology)
    dc = np.empty((count, n))
    dc[:, 0] = cycle.node.mean(axis=1)
    reservoir = dc[:, :1] + damping[:, None] * (cycle.node - dc[:, :1])
    downstream = np.empty((count, n))
    downstream[:, 0] = v.load_current[:, 0] + v.load_conductance[:, 0] * dc[:, 0] + after_a \
        + after_b * dc[:, 0]
    for k in range(1, n):
        downstream[:, k] = a[:, k] + b[:, k] * dc[:, k - 1]
        dc[:, k] = dc[:, k - 1] - v.feed_resistance[:, k] * downstream[:, k]
    ripple, node_peak, cap_ms, feed_ms = (np.empty((count, n)) for _ in range(4))
    cross = np.empty(count)
    _ladder_kernel(np.ascontiguousarray(reservoir), np.ascontiguousarray(cycle.current[:, :GRID]),
                   downstream[:, 0].copy(), np.ascontiguousarray(frequency, float),
                   v.capacitance, v.esr, v.feed_resistance, v.feed_inductance,
                   v.load_conductance, dc, _DFT_COS, _DFT_SIN, ripple, node_peak,
                   cap_ms, feed_ms, cross)
    cap_rms = np.sqrt(cap_ms)
    # the reservoir's capacitor carries the path current (mean: the DC drawn) less the ladder's
    ac_after = feed_ms[:, 1] - 2.0 * cross if n > 1 else 0.0
    cap_rms[:, 0] = np.sqrt(np.maximum(cycle.mean_square_current - downstream[:, 0] ** 2
                                       + ac_after, 0.0))
    feed_dc = downstream.copy()
    feed_dc[:, 0] = 0.0
    feed_rms = np.sqrt(feed_dc ** 2 + feed_ms)
    feed_rms[:, 0] = 0.0
    i_sq = cycle.mean_square_current
    whole = np.asarray(topology) != "centre-tap"
    return {
        "dc_voltage": dc,
        "ripple_pp": ripple,
        "peak_voltage": node_peak,
        "capacitor_rms_current": cap_rms,
        "feed_rms_current": feed_rms,
        "feed_dc_current": feed_dc,
        "rectifier_peak_current": cycle.peak_current,
        "rectifier_average_current": 0.5 * downstream[:, 0],
        "rectifier_rms_current": np.sqrt(0.5 * i_sq),
        "piv": cycle.piv,
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
    count = peak.shape[0]
    f64 = lambda x: _column(x, count)  # noqa: E731
    out = np.empty((count, 2))
    el = elements
    _surge_kernel(f64(peak), 2.0 * np.pi * f64(frequency), f64(resistance), f64(inductance),
                  f64(capacitance), f64(esr), f64(el.silicon_count), f64(el.valve_count),
                  f64(el.saturation_current), f64(el.emission_coefficient),
                  f64(el.series_resistance), f64(el.perveance), out)
    return out[:, 0], out[:, 1]


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
