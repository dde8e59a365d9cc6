"""Transformer physics: copper, wire, EI core geometry, magnetics, heat (pure functions on arrays).

Part of :mod:`optimiser.physics.transformer`; see the package docstring for the method.
"""

from __future__ import annotations

import math

import numpy as np


# Annealed copper, IEC 60028 (International standard of resistance for copper).
COPPER_RESISTIVITY_20C = 0.017241e-6  # [ohm m] = 0.017241 ohm mm^2/m
COPPER_TEMPERATURE_COEFFICIENT_20C = 0.00393  # [1/K]
COPPER_DENSITY = 8890.0  # [kg/m^3]
_MU_0 = 4e-7 * math.pi  # [H/m]
_EMF_FACTOR = math.pi * math.sqrt(2.0)  # 4.44 of the transformer EMF equation, sine wave


# --------------------------------------------------------------------------------------------
# Physics: copper, wire, core geometry, magnetics, heat
# --------------------------------------------------------------------------------------------


def copper_resistivity(temperature):
    """Resistivity of annealed copper at a temperature, linear in temperature from 20 degC.

    Parameters
    ----------
    temperature : numeric
        Conductor temperature. [degC]

    Returns
    -------
    numeric
        Resistivity. [ohm m]

    References
    ----------
    .. [1] IEC 60028, International standard of resistance for copper: rho_20 = 0.017241 ohm mm^2/m,
       alpha_20 = 0.00393 /K.
    """
    t = np.asarray(temperature, dtype=float)
    return COPPER_RESISTIVITY_20C * (1.0 + COPPER_TEMPERATURE_COEFFICIENT_20C * (t - 20.0))


def awg_diameter(gauge):
    """Bare diameter of a round American Wire Gauge conductor.

    Parameters
    ----------
    gauge : numeric
        Gauge number n (0000 is -3). [-]

    Returns
    -------
    numeric
        Diameter d = 0.127 mm * 92^((36 - n)/39). [m]

    References
    ----------
    .. [1] ASTM B258, Standard Specification for Standard Nominal Diameters and Cross-Sectional Areas
       of AWG Sizes of Solid Round Wires Used as Electrical Conductors.
    """
    n = np.asarray(gauge, dtype=float)
    return 0.127e-3 * 92.0 ** ((36.0 - n) / 39.0)


def resistance_per_length(diameter, temperature=20.0):
    """DC resistance per unit length of a round copper conductor.

    Parameters
    ----------
    diameter : numeric
        Bare conductor diameter. [m]
    temperature : numeric
        Conductor temperature. [degC]

    Returns
    -------
    numeric
        Resistance per length rho(T) / (pi d^2 / 4). [ohm/m]

    References
    ----------
    .. [1] IEC 60028 (resistivity and temperature coefficient of annealed copper).
    """
    d = np.asarray(diameter, dtype=float)
    return copper_resistivity(temperature) / (0.25 * np.pi * d * d)


def turns_for_voltage(voltage, frequency, flux_density, core_area):
    """Turns a winding needs for an RMS voltage at a peak flux density (Faraday's law, sine wave).

    Parameters
    ----------
    voltage : numeric
        RMS voltage across the winding. [V]
    frequency : numeric
        Mains frequency. [Hz]
    flux_density : numeric
        Peak flux density in the core. [T]
    core_area : numeric
        Effective (iron) cross-section of the core. [m^2]

    Returns
    -------
    numeric
        Turns N = V / (4.44 f B A_c), not rounded. [-]

    References
    ----------
    .. [1] The transformer EMF equation, e.g. C. W. T. McLyman, Transformer and Inductor Design
       Handbook, 4th ed., CRC Press 2011 (4.44 = pi sqrt 2 for a sine wave).
    """
    return np.asarray(voltage, dtype=float) / (_EMF_FACTOR * frequency * np.asarray(flux_density) * core_area)


def ei_window(tongue_width):
    """Window of a scrapless EI lamination: width (winding build direction) and height (traverse).

    Parameters
    ----------
    tongue_width : numeric
        Width a of the centre tongue. [m]

    Returns
    -------
    tuple of numeric
        (0.5 a, 1.5 a). [m]

    References
    ----------
    .. [1] Scrapless EI lamination geometry (window 0.5a x 1.5a, outline 3a x 2.5a), widely
       standardised — from memory — verify.
    """
    a = np.asarray(tongue_width, dtype=float)
    return 0.5 * a, 1.5 * a


def ei_core_area(tongue_width, stack, stacking_factor):
    """Effective iron cross-section of the centre tongue, A_c = a x stack x stacking factor.

    Parameters
    ----------
    tongue_width : numeric
        Tongue width a. [m]
    stack : numeric
        Stack height. [m]
    stacking_factor : numeric
        Iron fraction of the stack. [-]

    Returns
    -------
    numeric
        A_c. [m^2]

    References
    ----------
    .. [1] C. W. T. McLyman, Transformer and Inductor Design Handbook, 4th ed., CRC Press 2011.
    """
    return np.asarray(tongue_width, dtype=float) * stack * stacking_factor


def ei_magnetic_path_length(tongue_width):
    """Mean magnetic path length of a scrapless EI core.

    The mean path runs along the centre lines of the half-tongue, yokes and outer leg (each a/2 wide),
    a rectangle a x 2a, with its four corners rounded to radius a/4 because flux takes the inside of a
    corner: l_m = 6a - (8 - 2 pi) a/4 = 5.57a.

    Parameters
    ----------
    tongue_width : numeric
        Tongue width a. [m]

    Returns
    -------
    numeric
        l_m. [m]

    References
    ----------
    .. [1] Derived from the scrapless EI geometry (window 0.5a x 1.5a, limbs a/2).
    """
    a = np.asarray(tongue_width, dtype=float)
    return 6.0 * a - (8.0 - 2.0 * np.pi) * a / 4.0


def ei_steel_volume(tongue_width, stack, stacking_factor):
    """Iron volume of a scrapless EI stack: (outline 7.5a^2 - two windows 1.5a^2) x stack x SF.

    Parameters
    ----------
    tongue_width, stack : numeric
        Tongue width and stack height. [m]
    stacking_factor : numeric
        Iron fraction of the stack. [-]

    Returns
    -------
    numeric
        Volume 6 a^2 x stack x stacking factor. [m^3]

    References
    ----------
    .. [1] Derived from the scrapless EI geometry.
    """
    a = np.asarray(tongue_width, dtype=float)
    return 6.0 * a * a * stack * stacking_factor


def ei_outline_surface_area(tongue_width, stack, coil_overhang):
    """Outer surface of the box around an EI core and its coil, for the heat-dissipation rule.

    Parameters
    ----------
    tongue_width : numeric
        Tongue width a; the outline is 3a x 2.5a. [m]
    stack : numeric
        Stack height. [m]
    coil_overhang : numeric
        How far the coil stands out of each face of the stack. [m]

    Returns
    -------
    numeric
        Surface 2(3a 2.5a) + 2(3a + 2.5a)(stack + 2 overhang). [m^2]

    References
    ----------
    .. [1] C. W. T. McLyman, Transformer and Inductor Design Handbook, 4th ed., CRC Press 2011
       (surface area A_t of the assembled transformer).
    """
    a = np.asarray(tongue_width, dtype=float)
    depth = stack + 2.0 * np.asarray(coil_overhang)
    return 2.0 * (7.5 * a * a) + 2.0 * (5.5 * a) * depth


def mean_turn_length(former_width, former_depth, distance_from_former, build):
    """Mean length of turn of a winding on a rectangular former.

    A turn at distance d outside a convex former of perimeter P has length P + 2 pi d (Steiner's
    formula for the parallel set of a convex body); the mean turn sits at the middle of the build.

    Parameters
    ----------
    former_width, former_depth : numeric
        Outside dimensions of the bobbin tube. [m]
    distance_from_former : numeric
        Distance of the winding's first layer from the tube surface. [m]
    build : numeric
        Radial build of the winding. [m]

    Returns
    -------
    numeric
        MLT = 2 (width + depth) + 2 pi (distance + build / 2). [m]

    References
    ----------
    .. [1] J. Steiner's formula for parallel sets of convex bodies (perimeter of a parallel set).
    """
    return 2.0 * (np.asarray(former_width) + former_depth) + 2.0 * np.pi * (
        np.asarray(distance_from_former) + 0.5 * np.asarray(build)
    )


def steinmetz_fit(frequencies, flux_densities, losses):
    """Least-squares fit of P = k f^alpha B^beta to specific core-loss points, in log space.

    Parameters
    ----------
    frequencies : sequence
        Frequency of each point. [Hz]
    flux_densities : sequence
        Peak flux density of each point. [T]
    losses : sequence
        Specific loss of each point. [W/kg]

    Returns
    -------
    tuple of float
        (k [W/kg at 1 Hz, 1 T], alpha [-], beta [-]).

    References
    ----------
    .. [1] C. P. Steinmetz, "On the law of hysteresis," Trans. AIEE, vol. 9, 1892 (power-law form,
       here with a frequency exponent as in the usual generalised form).
    """
    f = np.log(np.asarray(frequencies, dtype=float))
    b = np.log(np.asarray(flux_densities, dtype=float))
    p = np.log(np.asarray(losses, dtype=float))
    matrix = np.column_stack([np.ones_like(f), f, b])
    (ln_k, alpha, beta), *_ = np.linalg.lstsq(matrix, p, rcond=None)
    return float(np.exp(ln_k)), float(alpha), float(beta)


def steinmetz_loss(frequency, flux_density, k, alpha, beta):
    """Specific core loss P = k f^alpha B^beta.

    Parameters
    ----------
    frequency : numeric
        Frequency. [Hz]
    flux_density : numeric
        Peak flux density. [T]
    k, alpha, beta : numeric
        Fit from :func:`steinmetz_fit`. [W/kg, -, -]

    Returns
    -------
    numeric
        Specific loss. [W/kg]

    References
    ----------
    .. [1] C. P. Steinmetz, "On the law of hysteresis," Trans. AIEE, vol. 9, 1892.
    """
    return np.asarray(k) * np.asarray(frequency, dtype=float) ** alpha * np.asarray(flux_density) ** beta


def magnetising_field(flux_density, curve):
    """Peak magnetising field for a peak flux density, from (B, H) points of a magnetisation curve.

    Interpolates log H linearly in B between points; beyond the last point it continues the last
    segment's slope (saturation makes H climb steeply), below the first it takes H proportional to B.

    Parameters
    ----------
    flux_density : numeric
        Peak flux density. [T]
    curve : sequence of (B, H)
        Normal magnetisation curve, B and H increasing. [T, A/m]

    Returns
    -------
    numeric
        Peak field strength. [A/m]

    References
    ----------
    .. [1] Normal magnetisation curve as given on electrical-steel data sheets.
    """
    pts = np.asarray(curve, dtype=float)
    bs, log_h = pts[:, 0], np.log(pts[:, 1])
    b = np.asarray(flux_density, dtype=float)
    slope = (log_h[-1] - log_h[-2]) / (bs[-1] - bs[-2])
    inside = np.exp(np.interp(b, bs, log_h))
    above = np.exp(log_h[-1] + slope * (b - bs[-1]))
    below = pts[0, 1] * b / bs[0]
    return np.where(b > bs[-1], above, np.where(b < bs[0], below, inside))


def mclyman_temperature_rise(total_loss, surface_area):
    """Temperature rise of a transformer from its surface dissipation, dT = 450 psi^0.826.

    Parameters
    ----------
    total_loss : numeric
        Copper plus core loss. [W]
    surface_area : numeric
        Outer surface of the assembled transformer. [m^2]

    Returns
    -------
    numeric
        Average temperature rise above ambient. [K]

    References
    ----------
    .. [1] C. W. T. McLyman, Transformer and Inductor Design Handbook, 4th ed., CRC Press 2011
       (psi in W/cm^2; constants from memory — verify).
    """
    psi = np.asarray(total_loss, dtype=float) / (np.asarray(surface_area) * 1e4)
    return 450.0 * np.maximum(psi, 0.0) ** 0.826


def leakage_inductance_layered(turns, mean_turn_length, winding_width, gap, inner_build, outer_build):
    """Leakage inductance of two concentric layered windings, referred to the winding with ``turns``.

    L = mu_0 N^2 MLT / b_w * (c + (a_1 + a_2) / 3): the field energy between and inside two
    windings of equal traverse b_w, uniform ampere-turns, gap c, builds a_1 and a_2.

    Parameters
    ----------
    turns : numeric
        Turns of the winding the result is referred to. [-]
    mean_turn_length : numeric
        Mean turn length of the whole two-winding arrangement. [m]
    winding_width : numeric
        Traverse (width along the tongue) of the windings. [m]
    gap : numeric
        Radial space between the two windings' copper. [m]
    inner_build, outer_build : numeric
        Radial builds of the two windings. [m]

    Returns
    -------
    numeric
        Leakage inductance. [H]

    References
    ----------
    .. [1] C. W. T. McLyman, Transformer and Inductor Design Handbook, 4th ed., CRC Press 2011,
       leakage inductance of concentric windings (chapter from memory — verify).
    .. [2] W. M. Flanagan, Handbook of Transformer Design and Applications, 2nd ed., McGraw-Hill 1993.
    """
    n = np.asarray(turns, dtype=float)
    return (
        _MU_0
        * n
        * n
        * np.asarray(mean_turn_length)
        / np.asarray(winding_width)
        * (np.asarray(gap) + (np.asarray(inner_build) + outer_build) / 3.0)
    )


def area_product_required(
    total_apparent_power,
    frequency,
    flux_density,
    current_density,
    window_utilisation=0.4,
    waveform_factor=4.44,
):
    """Area product a core needs, A_p = W_a A_c = P_t / (K_f K_u B f J).

    In McLyman's units A_p [cm^4] = P_t 10^4 / (K_f K_u B f J [A/cm^2]); in SI the factors cancel.

    Parameters
    ----------
    total_apparent_power : numeric
        P_t, the sum of the apparent powers of all windings (primary plus secondaries). [VA]
    frequency : numeric
        Mains frequency. [Hz]
    flux_density : numeric
        Peak flux density. [T]
    current_density : numeric
        Current density in the copper. [A/m^2]
    window_utilisation : numeric
        K_u, copper area over window area. [-]
    waveform_factor : numeric
        K_f, 4.44 for a sine wave. [-]

    Returns
    -------
    numeric
        A_p. [m^4]

    References
    ----------
    .. [1] C. W. T. McLyman, Transformer and Inductor Design Handbook, 4th ed., CRC Press 2011
       (area-product method).
    """
    return np.asarray(total_apparent_power, dtype=float) / (
        waveform_factor * window_utilisation * np.asarray(flux_density) * frequency * np.asarray(current_density)
    )


def ei_area_product(tongue_width, stack, stacking_factor):
    """Area product W_a A_c of a scrapless EI core (one window times the iron area). [m^4]

    Parameters
    ----------
    tongue_width, stack : numeric
        [m]
    stacking_factor : numeric
        [-]

    References
    ----------
    .. [1] C. W. T. McLyman, Transformer and Inductor Design Handbook, 4th ed., CRC Press 2011.
    """
    width, height = ei_window(tongue_width)
    return width * height * ei_core_area(tongue_width, stack, stacking_factor)
