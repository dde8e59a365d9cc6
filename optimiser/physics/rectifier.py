"""Rectifying elements: silicon and vacuum diodes, the conducting path, and closed-form limits.

A full-wave rectifier conducts through one *path* per half-cycle: two silicon diodes in a bridge,
one valve plate (or one silicon diode) in a centre-tap circuit, one valve plate plus one silicon
diode in a hybrid bridge. The path's forward drop as a function of its current is the sum of its
elements' laws. All functions take and return numpy arrays (one entry per design) in SI units.
"""

from __future__ import annotations

from dataclasses import dataclass

import numba
import numpy as np

__all__ = [
    "THERMAL_VOLTAGE",
    "PathElements",
    "shockley_voltage",
    "child_langmuir_voltage",
    "path_step",
    "conduction_half_angle",
    "infinite_capacitance_output",
    "ideal_diode_output",
]

#: kT/q at 27 degC, the nominal temperature SPICE uses for diode parameters. [V]
THERMAL_VOLTAGE = 1.380649e-23 * 300.15 / 1.602176634e-19


@dataclass(frozen=True)
class PathElements:
    """What one conducting path holds, per design (arrays of shape (n,)).

    Attributes
    ----------
    silicon_count : ndarray
        Silicon junctions in series in the path: 2 bridge, 1 centre-tap silicon or hybrid, 0 valve. [-]
    valve_count : ndarray
        Valve plates in series in the path: 1 for valve centre-tap and hybrid bridge, else 0. [-]
    saturation_current : ndarray
        Shockley saturation current IS of each silicon diode. [A]
    emission_coefficient : ndarray
        Shockley emission coefficient N. [-]
    series_resistance : ndarray
        Ohmic resistance RS of each silicon diode. [ohm]
    perveance : ndarray
        Child-Langmuir perveance K of each valve plate (ignored where valve_count is 0). [A/V^1.5]
    """

    silicon_count: np.ndarray
    valve_count: np.ndarray
    saturation_current: np.ndarray
    emission_coefficient: np.ndarray
    series_resistance: np.ndarray
    perveance: np.ndarray

    def take(self, index) -> "PathElements":
        """The same paths for a subset of designs."""
        return PathElements(*(np.asarray(getattr(self, f))[index] for f in self.__dataclass_fields__))


def shockley_voltage(current, saturation_current, emission_coefficient, series_resistance):
    """Forward voltage of a silicon diode: Shockley's law with an ohmic series resistance.

    Parameters
    ----------
    current : numeric
        Forward current, >= 0. [A]
    saturation_current : numeric
        IS. [A]
    emission_coefficient : numeric
        N. [-]
    series_resistance : numeric
        RS. [ohm]

    Returns
    -------
    numeric
        V = N*Vt*ln(1 + I/IS) + I*RS. [V]

    References
    ----------
    .. [1] W. Shockley, "The theory of p-n junctions in semiconductors", Bell Syst. Tech. J. 28, 1949;
       the SPICE diode model parameters IS, N, RS.
    """
    current = np.asarray(current, dtype=float)
    return (emission_coefficient * THERMAL_VOLTAGE * np.log1p(current / saturation_current)
            + current * series_resistance)


def child_langmuir_voltage(current, perveance):
    """Plate-to-cathode drop of a vacuum diode: the Child-Langmuir 3/2-power law inverted.

    Parameters
    ----------
    current : numeric
        Plate current, >= 0. [A]
    perveance : numeric
        K in I = K*V^1.5. [A/V^1.5]

    Returns
    -------
    numeric
        V = (I/K)^(2/3). [V]

    References
    ----------
    .. [1] C. D. Child, Phys. Rev. 32, 1911; I. Langmuir, Phys. Rev. 2, 1913.
    """
    current = np.maximum(np.asarray(current, dtype=float), 0.0)
    return np.cbrt(current / perveance) ** 2


@numba.njit(cache=True)
def path_step(q, beta, silicon_count, valve_count, saturation_current, emission_coefficient,
              series_resistance, perveance, guess):
    """One design's rectifier complementarity problem at one time step (compiled scalar code).

    The linear network says the path current at the end of the step is ``i = q - beta*d`` where
    ``d`` is the path's forward drop. The elements say ``d = V(i)`` while ``i > 0``; when
    ``q <= 0`` the path blocks: ``i = 0`` and ``d = q/beta`` (a reverse voltage).

    ``i + beta*V(i) = q`` is solved by Newton's method in a variable that makes it convex and
    nearly linear: the junction voltage for an all-silicon path (i = IS*(exp(v/(N*Vt)) - 1)),
    the cube root of the current for a path with a valve plate (i = K*w^3). Iterates stay in the
    bracket [0, z(i=q)]; from below the root a Newton step overshoots above it, and from above
    Newton's method on a convex increasing function converges monotonically.

    Parameters
    ----------
    q : float
        Path current the network would carry with zero drop. [A]
    beta : float
        Current lost per volt of drop, > 0. [A/V]
    silicon_count, valve_count, saturation_current, emission_coefficient, series_resistance,
    perveance : float
        The path's elements (see :class:`PathElements`).
    guess : float
        The iteration variable from the previous step, or NaN.

    Returns
    -------
    (current, drop, ddrop_dq, state) : floats
        Path current [A], drop [V], the sensitivity dd/dq [V/A] used by the shooting Jacobian,
        and the iteration variable to warm-start the next step (NaN when blocked).
    """
    if q <= 0.0:
        return 0.0, q / beta, 1.0 / beta, np.nan
    nvt = emission_coefficient * THERMAL_VOLTAGE
    valve = valve_count > 0
    if valve:
        z_hi = np.cbrt(q / perveance)
    else:
        z_hi = nvt * np.log1p(q / saturation_current)
    z = z_hi
    if np.isfinite(guess) and 0.0 < guess < z_hi:
        z = guess
    for _ in range(80):
        if valve:
            i = perveance * z ** 3
            di = 3.0 * perveance * z * z
            v = z * z
            dv = 2.0 * z
            if silicon_count > 0.0:  # (a valve alone: the silicon's terms, finite, times 0)
                v += silicon_count * (nvt * np.log1p(i / saturation_current)
                                      + series_resistance * i)
                dv += silicon_count * (nvt / (saturation_current + i) + series_resistance) * di
            g = i + beta * v - q
            slope = di + beta * dv
        else:
            x = np.exp(z / nvt)
            i = saturation_current * (x - 1.0)
            di = saturation_current * x / nvt
            g = i + beta * silicon_count * (z + series_resistance * i) - q
            slope = di + beta * silicon_count * (1.0 + series_resistance * di)
        z_new = z - g / max(slope, 1e-300)
        z_new = min(max(z_new, 0.0), z_hi)
        done = abs(z_new - z) <= 1e-13 * (1.0 + z_hi)
        z = z_new
        if done:
            break
    if valve:
        i = perveance * z ** 3
    else:
        i = saturation_current * np.expm1(z / nvt)
    i = max(i, 1e-30)
    d = 0.0
    r = 0.0
    if silicon_count > 0.0:
        r_si = nvt / (saturation_current + i) + series_resistance
        d = silicon_count * (nvt * np.log1p(i / saturation_current) + series_resistance * i)
        r = silicon_count * r_si
    if valve:
        w = np.cbrt(i / perveance)
        d += valve_count * w * w
        r += valve_count * (2.0 / 3.0) / (perveance * w)
    return i, d, r / (1.0 + beta * r), z


def conduction_half_angle(rs_over_rl, pulses=2):
    """Half conduction angle of a capacitor-input rectifier with infinite C and series resistance.

    Solves tan(phi) - phi = pi * R_s / (n * R_L) by Newton's method.

    Parameters
    ----------
    rs_over_rl : numeric
        Series resistance per conducting path over load resistance. [-]
    pulses : int
        Charging pulses per mains cycle: 2 full wave, 1 half wave. [-]

    Returns
    -------
    numeric
        Half conduction angle phi. [rad]

    References
    ----------
    .. [1] O. H. Schade, "Analysis of Rectifier Operation," Proc. IRE, vol. 31, no. 7, 1943
       (the infinite-C limit of his analysis).
    """
    target = np.pi * np.asarray(rs_over_rl, dtype=float) / pulses
    phi = np.clip(np.cbrt(3.0 * target), 1e-9, 1.5)
    for _ in range(60):
        f = np.tan(phi) - phi - target
        phi = np.clip(phi - f / np.tan(phi) ** 2, 1e-12, np.pi / 2 - 1e-9)
    return phi


def infinite_capacitance_output(rs_over_rl, pulses=2):
    """V_dc / V_m of a capacitor-input rectifier with infinite C: cos(phi). [-]

    References
    ----------
    .. [1] O. H. Schade, Proc. IRE, vol. 31, no. 7, 1943 (infinite-C limit).
    """
    return np.cos(conduction_half_angle(rs_over_rl, pulses))


def ideal_diode_output(omega_c_rl):
    """V_dc / V_m of a full-wave capacitor-input rectifier with ideal diodes and R_s = 0.

    The capacitor follows the sine until cut-off at tan(theta2) = -omega*C*R_L, then discharges
    exponentially into R_L until the next half-wave meets it at theta1.

    Parameters
    ----------
    omega_c_rl : numeric
        omega*C*R_L, omega the mains angular frequency. [-]

    Returns
    -------
    numeric
        Mean output over the peak of the sine. [-]

    References
    ----------
    .. [1] Closed form derived from the ideal-switch circuit; the R_s = 0 limit of O. H. Schade,
       Proc. IRE, vol. 31, no. 7, 1943.
    """
    wcr = np.asarray(omega_c_rl, dtype=float)
    theta2 = np.pi - np.arctan(wcr)
    # turn-on: sin(theta2)*exp(-(theta1 + pi - theta2)/wcr) = sin(theta1), theta1 in (0, pi/2)
    theta1 = np.full_like(wcr, 1.0)
    for _ in range(100):
        g = np.sin(theta2) * np.exp(-(theta1 + np.pi - theta2) / wcr) - np.sin(theta1)
        dg = -np.sin(theta2) * np.exp(-(theta1 + np.pi - theta2) / wcr) / wcr - np.cos(theta1)
        theta1 = np.clip(theta1 - g / dg, 1e-9, np.pi / 2)
    decay = 1 - np.exp(-(theta1 + np.pi - theta2) / wcr)
    return (np.cos(theta1) - np.cos(theta2) + np.sin(theta2) * wcr * decay) / np.pi
