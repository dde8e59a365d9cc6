"""A designed transformer at its operating corners: every primary connection at low, nominal and
high mains (pure functions on arrays).

Part of :mod:`optimiser.physics.transformer`; see the package docstring for the method.

The design itself is made at the lowest primary voltage at nominal mains. A tapped primary is a
different transformer on each tap (its own turns in circuit, so its own flux, magnetising current
and resistance), and the mains moves every figure: the flux density and core loss rise with the
applied volts per turn, the secondary voltages with them. Here each corner is worked out from the
design's own turns, wire and build:

- peak flux density B = V / (4.44 f N_tap A_c) (Faraday's law, sine wave);
- magnetising current from the steel's normal magnetisation curve, I_m = (H l_m + B g / mu_0) /
  (sqrt 2 N_tap); core loss by the steel's Steinmetz fit times the building factor;
- secondary voltages E = V - R_p (I_c + sum n_s I_s), V_s = n_s E - I_s R_s (resistive drops, as the
  design), off load n_s (V - R_p I_c);
- copper loss at rated load and the temperature rise by McLyman's surface-dissipation rule, the
  winding resistances taken hot at the corner's own temperature (a short fixed point).

Every array has the design dimension last: a :class:`TransformerDesign` gives n = 1.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from optimiser.physics.transformer.data import TransformerData, load_transformer_data
from optimiser.physics.transformer.physics import (
    COPPER_TEMPERATURE_COEFFICIENT_20C,
    _EMF_FACTOR,
    _MU_0,
    magnetising_field,
    mclyman_temperature_rise,
    steinmetz_loss,
)

#: The mains corners, in order: name and which way the spec's tolerance moves the mains.
MAINS = ("low", "nominal", "high")
_TEMPERATURE_PASSES = 6


@dataclass(frozen=True)
class Corners:
    """Figures of a transformer at every (primary connection, mains corner).

    Arrays have shape (T, 3, n): T primary connections (taps, or the two connections of a dual
    primary), the three mains corners of :data:`MAINS`, n designs; per-secondary arrays
    (S, T, 3, n).

    Attributes
    ----------
    connections : tuple of str
        Label of each primary connection, e.g. ``"230 V tap"``.
    tap_voltages : ndarray (T,)
        Nominal mains voltage of each connection. [V]
    mains_factor : ndarray (3,)
        Applied voltage over the connection's nominal: 1 - low, 1, 1 + high. [-]
    applied_voltage, flux_density [T], magnetising_current [A], core_loss [W], copper_loss [W],
    temperature_rise [K], primary_current [A]
        At rated load (the magnetising current and core loss do not depend on load).
    loaded_voltage, no_load_voltage : ndarray (S, T, 3, n)
        RMS per conducting path of each secondary, at rated load and with every winding open. [V]
    secondary_names : tuple of str
    """

    connections: tuple
    tap_voltages: np.ndarray
    mains_factor: np.ndarray
    applied_voltage: np.ndarray
    flux_density: np.ndarray
    magnetising_current: np.ndarray
    core_loss: np.ndarray
    copper_loss: np.ndarray
    temperature_rise: np.ndarray
    primary_current: np.ndarray
    loaded_voltage: np.ndarray
    no_load_voltage: np.ndarray
    secondary_names: tuple

    def worst(self, field: str, secondary: int | None = None):
        """Largest value of ``field`` over the corners, and where it was, per design.

        Returns
        -------
        tuple
            (values (n,), list of corner labels such as ``"230 V tap, high mains (+10 %)"``).
        """
        values = getattr(self, field)
        if secondary is not None:
            values = values[secondary]
        flat = values.reshape(-1, values.shape[-1])
        k = np.argmax(flat, axis=0)
        return flat[k, np.arange(flat.shape[1])], [self.label(int(i)) for i in k]

    def label(self, flat_index: int) -> str:
        """Label of a corner from its index in the (T, 3) grid flattened."""
        tap, mains = divmod(flat_index, 3)
        change = (self.mains_factor[mains] - 1.0) * 100.0
        side = MAINS[mains] + " mains" + (f" ({change:+.0f} %)" if mains != 1 else "")
        return f"{self.connections[tap]}, {side}"


def _arr(value) -> np.ndarray:
    return np.atleast_1d(np.asarray(value, dtype=float))


def operating_corners(design, mains_low: float = 0.10, mains_high: float = 0.10,
                      data: TransformerData | None = None) -> Corners:
    """Work out a designed transformer at each primary connection and low, nominal, high mains.

    Parameters
    ----------
    design : TransformerDesign or TransformerPopulation
        A design from :func:`design_population` (a population or one design of it).
    mains_low, mains_high : float
        How far the mains may fall and rise from each connection's nominal voltage. [-]
    data : TransformerData, optional
        The parts data the design was made with (steel curves and loss fits).

    Returns
    -------
    Corners

    References
    ----------
    .. [1] C. W. T. McLyman, Transformer and Inductor Design Handbook, 4th ed., CRC Press 2011
       (EMF equation; temperature rise from surface dissipation, constants from memory — verify).
    .. [2] C. P. Steinmetz, "On the law of hysteresis," Trans. AIEE, vol. 9, 1892.
    """
    data = data if data is not None else load_transformer_data()
    primary, secondaries = design.windings[0], design.windings[1:]
    taps = np.asarray(design.primary_voltages, dtype=float)
    n_eq = _arr(primary.turns_per_path)
    n = n_eq.shape[0]
    tap_turns = np.asarray(design.primary_tap_turns, dtype=float).reshape(len(taps), -1)
    tap_turns = np.broadcast_to(tap_turns, (len(taps), n))
    r_primary_20 = _arr(primary.resistance_20)  # as connected for the lowest voltage
    if design.primary_arrangement == "dual":
        # parallel for V, series for 2V: same volts per turn; referred to the secondaries the
        # series connection's 4x resistance at 2x turns is the parallel one's
        turns_in = np.vstack([n_eq, 2.0 * n_eq])
        r_in = np.vstack([r_primary_20, 4.0 * r_primary_20])
        labels = (f"{taps[0]:.0f} V (windings in parallel)", f"{taps[1]:.0f} V (windings in series)")
    else:
        turns_in = tap_turns
        r_in = r_primary_20[None, :] * tap_turns / tap_turns[0]  # same wire throughout
        labels = tuple(f"{v:.0f} V tap" for v in taps) if len(taps) > 1 else (f"{taps[0]:.0f} V",)
    factor = np.array([1.0 - mains_low, 1.0, 1.0 + mains_high])
    volts = taps[:, None, None] * factor[None, :, None] * np.ones((1, 1, n))  # (T, 3, n)
    nt = turns_in[:, None, :]
    area = _arr(design.core_area)
    b = volts / (_EMF_FACTOR * design.frequency * nt * area)

    steel_index = np.broadcast_to(_arr(design.steel_index).astype(int), (n,))
    k, alpha, beta = (data.steinmetz[steel_index, j] for j in range(3))
    core_loss = (_arr(design.steel_mass) * steinmetz_loss(design.frequency, b, k, alpha, beta)
                 * data.lamination.core_loss_building_factor)
    field = np.zeros_like(b)
    for s in np.unique(steel_index):
        field = np.where(steel_index == s, magnetising_field(b, data.steels[int(s)].magnetisation),
                         field)
    ampere_turns = field * _arr(design.magnetic_path_length) + b * data.lamination.joint_equivalent_gap / _MU_0
    i_mag = ampere_turns / (math.sqrt(2.0) * nt)
    i_core = core_loss / volts

    ratio = np.stack([_arr(w.turns_per_path)[None, None, :] / nt for w in secondaries])  # (S,T,3,n)
    current = np.stack([_arr(w.rms_current) for w in secondaries])[:, None, None, :]
    paths = np.stack([_arr(w.conducting_paths) for w in secondaries])[:, None, None, :]
    r_sec_20 = np.stack([_arr(w.resistance_20) for w in secondaries])[:, None, None, :]
    reflect = np.where(paths > 1.5, math.sqrt(2.0), 1.0)
    in_phase = i_core + np.sum(ratio * current * reflect, axis=0)
    i_primary = np.hypot(in_phase, i_mag)
    loaded_current = i_core + np.sum(ratio * current, axis=0)
    surface = _arr(design.surface_area)
    ambient = float(design.ambient_temperature)
    temperature = np.broadcast_to(_arr(design.winding_temperature), b.shape).copy()
    for _ in range(_TEMPERATURE_PASSES):
        hot = 1.0 + COPPER_TEMPERATURE_COEFFICIENT_20C * (temperature - 20.0)
        r_p = r_in[:, None, :] * hot
        r_s = r_sec_20 * hot
        copper = i_primary**2 * r_p + np.sum(paths * current**2 * r_s, axis=0)
        rise = mclyman_temperature_rise(copper + core_loss, surface)
        temperature = ambient + rise
    e = volts - r_p * loaded_current
    loaded = ratio * e - current * r_s
    no_load = ratio * (volts - r_p * i_core)
    return Corners(
        connections=labels, tap_voltages=taps, mains_factor=factor, applied_voltage=volts,
        flux_density=b, magnetising_current=i_mag, core_loss=core_loss, copper_loss=copper,
        temperature_rise=rise, primary_current=i_primary, loaded_voltage=loaded,
        no_load_voltage=no_load, secondary_names=tuple(w.name for w in secondaries))


def worst_flux_density(design, mains_high: float = 0.10, data: TransformerData | None = None):
    """Peak flux density at the worst corner (highest mains, worst connection), per design.

    Returns
    -------
    tuple
        (flux density (n,) [T], list of the corner labels).
    """
    return operating_corners(design, 0.0, mains_high, data).worst("flux_density")


#: The figures the checks take at the worst corner.
CHECKED = ("flux_density", "temperature_rise")


def worst_corners(design, mains_low: float = 0.10, mains_high: float = 0.10,
                  data: TransformerData | None = None) -> dict:
    """The checked figures (:data:`CHECKED`) at their worst corner over every primary connection
    and low, nominal and high mains, per design, from one :func:`operating_corners`.

    Returns
    -------
    dict
        field -> (values (n,), list of the corner labels).
    """
    corners = operating_corners(design, mains_low, mains_high, data)
    return {field: corners.worst(field) for field in CHECKED}


def worst_corners_by_design(built, mains_low, mains_high) -> dict:
    """:func:`worst_corners` of each of a list of designs (None: no physical build, NaN).

    Returns
    -------
    dict
        field -> (values (n,), list of the corner labels, "no physical build" where none).
    """
    values = {field: [] for field in CHECKED}
    labels = {field: [] for field in CHECKED}
    for t, low, high in zip(built, mains_low, mains_high):
        worst = None if t is None else worst_corners(t, low, high)
        for field in CHECKED:
            values[field].append(np.nan if worst is None else float(worst[field][0][0]))
            labels[field].append("no physical build" if worst is None else worst[field][1][0])
    return {field: (np.array(values[field], float), labels[field]) for field in CHECKED}
