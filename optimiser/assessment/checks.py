"""The one table of checks: every part compared with its rating, for both tiers.

Each check is one :class:`CheckDef` in :data:`TABLE`: its name, what it measures, its unit, a
function computing its value and one computing its limit from a :class:`CheckFigures`, where
the limit comes from, and whether the rating is a least value or counts towards the rectifier
stress. The full assessment (:mod:`optimiser.assessment.full`) and the search's screen
(:mod:`optimiser.codesign.screening`) each fill a :class:`CheckFigures` with their own figures
(simulated or closed-form) and call :func:`evaluate`; neither computes a check itself.

Adding a check is adding one entry to :data:`TABLE` (and, if it reads a figure no check read
before, a field of :class:`CheckFigures` that both tiers fill).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Callable, Mapping, Sequence

import numpy as np

from optimiser.physics import ratings
from optimiser.physics.transformer.rating import WINDING_VOLTAGE_TOLERANCE

__all__ = ["CheckDef", "CheckFigures", "TABLE", "VALVE_RATINGS", "DIODE_RATINGS", "evaluate",
           "attribute_array", "rectifier_ratings", "worst_piv", "steady_peak"]

#: Valve ratings the checks read, by the part's attribute name.
VALVE_RATINGS = ("max_input_capacitance", "max_peak_current", "max_piv", "max_dc_current",
                 "max_plate_voltage_rms", "max_heater_cathode_voltage")
#: Silicon diode ratings the checks read, by the part's attribute name.
DIODE_RATINGS = ("v_rrm", "i_fsm", "i_f_avg")


@dataclass(frozen=True)
class CheckFigures:
    """What the checks read, one row per design (or design and switch position), whichever tier
    computed it. Per-node arrays are (R, N), the others (R,); NaN where a figure does not apply.

    Attributes
    ----------
    node_names : tuple of str
    fed : tuple of bool (N,)
        Whether a feed (resistor or choke) leads into each node.
    high_none, high_full : mapping of str -> ndarray
        Steady state at high mains and high winding tolerance with the valves cold and at full
        power: ``piv`` [V], ``peak_voltage`` (R, N) [V], ``rectifier_peak_current``,
        ``rectifier_average_current`` (per path), ``secondary_rms_current``,
        ``capacitor_rms_current`` (R, N), ``feed_rms_current`` (R, N), ``feed_dc_current``
        (R, N) [A].
    high_idle : mapping of str -> ndarray or None
        The same at idle (``piv``, ``peak_voltage``), where the tier solves that corner.
    surge_current : ndarray (R,)
        Switch-on surge into the empty reservoir at the mains crest, high mains. [A]
    charge_peak : ndarray (R, N)
        Highest voltage of each node during the switch-on charge-up. [V]
    discharge_time : ndarray (R, N)
        Time for each node to fall below the safe voltage after switch-off. [s]
    hv_voltage, hv_resistance, hv_leakage_inductance : ndarray (R,)
        The HV winding per plate: open-circuit RMS at nominal mains [V], series resistance
        [ohm] and leakage inductance [H] referred to it.
    frequency : ndarray (R,)
        Mains frequency. [Hz]
    mains_high, transformer_tolerance, silicon_piv_margin : ndarray (R,)
        The conditions: high mains and winding tolerance as fractions, the PIV margin asked of
        silicon. [-]
    discharge_time_limit : ndarray (R,)
        [s]
    temperature_rise, temperature_rise_limit : ndarray (R,)
        The transformer build's winding rise at the worst primary tap and mains corner
        (:func:`optimiser.physics.transformer.corners.worst_corners`) and its class allowance
        (NaN: no build). [K]
    build_ratio : ndarray (R,)
        Winding build over the window's room (NaN: no build). [-]
    flux_density, flux_density_limit : ndarray (R,)
        Peak flux density at the worst primary tap and mains corner
        (:func:`optimiser.physics.transformer.corners.worst_flux_density`) and the steel's
        limit. [T]
    flux_corner, rise_corner : sequence of str (R,), optional
        Which corner the flux density's and the rise's were, for the checks' sources (where the
        tier names it).
    winding_voltage_error : ndarray (R,)
        The worst secondary's |on-load voltage as built / target - 1|
        (:func:`optimiser.physics.transformer.rating.worst_winding_error`; NaN: no build). [-]
    hv_rated_current : ndarray (R,)
        The HV winding's rated RMS current. [A]
    has_valve, has_diode, heater_shared : ndarray of bool (R,)
        A rectifier valve (with its data), silicon diodes (with their data), an indirectly
        heated valve on a shared heater winding.
    valves : sequence (R,)
        The rectifier valve part per row (None: none), for ratings that depend on the voltage.
    rectifier_ratings : mapping of str -> ndarray (R,)
        ``valve.<attr>`` for :data:`VALVE_RATINGS`, ``diode.<attr>`` for
        :data:`DIODE_RATINGS` (see :func:`rectifier_ratings`).
    capacitance : ndarray (R, N)
        Nominal capacitance. [F]
    capacitance_plus : ndarray (R,)
        The reservoir's high tolerance as a fraction. [-]
    capacitor_rated_voltage, capacitor_surge_rating : ndarray (R, N)
        [V]
    capacitor_ripple_rating : ndarray (R, N)
        [A]
    feed_resistance, feed_inductance : ndarray (R, N)
        [ohm], [H] (column 0: the feed into the reservoir, if any).
    feed_power_rating, feed_current_rating : ndarray (R, N)
        A dropping resistor's power rating [W], a choke's DC current rating [A].
    bleeder_resistance, bleeder_power_rating : ndarray (R, N)
        [ohm], [W]
    bleeder_element_voltage : ndarray (R, N)
        The limiting element voltage of the bleeder's resistor class (its working voltage is
        the lesser of that and sqrt(P R)). [V]
    capacitor_voltage_derating, resistor_power_derating : ndarray (R,)
        The conditions' derating: an electrolytic's working voltage, a resistor's dissipation
        at most this fraction of its rating. [-]
    provenance : mapping or None
        Where the parts' ratings come from, per row: ``valve``, ``diode`` (list of str (R,)),
        ``capacitor`` (per node, list of str (R,)). None: the tier wants no sources.
    """

    node_names: tuple
    fed: tuple
    high_none: Mapping
    high_full: Mapping
    high_idle: Mapping | None
    surge_current: np.ndarray
    charge_peak: np.ndarray
    discharge_time: np.ndarray
    hv_voltage: np.ndarray
    hv_resistance: np.ndarray
    hv_leakage_inductance: np.ndarray
    frequency: np.ndarray
    mains_high: np.ndarray
    transformer_tolerance: np.ndarray
    silicon_piv_margin: np.ndarray
    discharge_time_limit: np.ndarray
    temperature_rise: np.ndarray
    temperature_rise_limit: np.ndarray
    build_ratio: np.ndarray
    flux_density: np.ndarray
    flux_density_limit: np.ndarray
    winding_voltage_error: np.ndarray
    hv_rated_current: np.ndarray
    has_valve: np.ndarray
    has_diode: np.ndarray
    heater_shared: np.ndarray
    valves: Sequence
    rectifier_ratings: Mapping
    capacitance: np.ndarray
    capacitance_plus: np.ndarray
    capacitor_rated_voltage: np.ndarray
    capacitor_surge_rating: np.ndarray
    capacitor_ripple_rating: np.ndarray
    feed_resistance: np.ndarray
    feed_inductance: np.ndarray
    feed_power_rating: np.ndarray
    feed_current_rating: np.ndarray
    bleeder_resistance: np.ndarray
    bleeder_power_rating: np.ndarray
    bleeder_element_voltage: np.ndarray
    capacitor_voltage_derating: np.ndarray
    resistor_power_derating: np.ndarray
    provenance: Mapping | None = None
    flux_corner: Sequence | None = None
    rise_corner: Sequence | None = None


@dataclass(frozen=True)
class CheckDef:
    """One check: how its value and its limit follow from a :class:`CheckFigures`.

    Attributes
    ----------
    name : str
        Dotted name; ``{node}`` in it makes a per-node check, named for each node.
    what : str
        What is compared, in a builder's words.
    unit : str
        SI unit of value and limit.
    value, limit : callable (CheckFigures, int or None) -> ndarray (R,)
        The worst figure and the rating; the int is the node index of a per-node check. NaN
        where the check does not apply.
    source : str or callable (CheckFigures, int or None) -> list of str (R,)
        Where the limit comes from (a callable reads the figures' provenance).
    minimum : bool
        The rating is a least value (ratio = limit/value).
    rectifier : bool
        Counts towards the rectifier stress.
    applies : callable (CheckFigures, int) -> bool, optional
        For a per-node check: whether the node has it at all.
    derating : callable (CheckFigures, int or None) -> ndarray (R,), optional
        The check's limit is the rating times this fraction (none: the rating itself).
    """

    name: str
    what: str
    unit: str
    value: Callable
    limit: Callable
    source: str | Callable
    minimum: bool = False
    rectifier: bool = False
    applies: Callable | None = None
    derating: Callable | None = None

    @property
    def per_node(self) -> bool:
        return "{node}" in self.name


def attribute_array(items, name, default=np.nan) -> np.ndarray:
    """An attribute of each item as floats; ``default`` where the item or attribute is None."""
    return np.array([default if (x is None or getattr(x, name, None) is None)
                     else getattr(x, name) for x in items], dtype=float)


def rectifier_ratings(valves, diodes) -> dict:
    """The rectifier parts' ratings the checks read, per row (NaN: no part or no rating)."""
    out = {f"valve.{a}": attribute_array(valves, a) for a in VALVE_RATINGS}
    out.update({f"diode.{a}": attribute_array(diodes, a) for a in DIODE_RATINGS})
    return out


def worst_piv(fig: CheckFigures) -> np.ndarray:
    """Peak inverse voltage per path, worst over the high-mains corners solved. [V] (R,)"""
    corners = [fig.high_none, fig.high_full] + ([fig.high_idle] if fig.high_idle else [])
    return np.maximum.reduce([c["piv"] for c in corners])


def steady_peak(fig: CheckFigures) -> np.ndarray:
    """Highest steady voltage of each node: valves cold, or idle where solved. [V] (R, N)"""
    peak = fig.high_none["peak_voltage"]
    return peak if fig.high_idle is None else np.maximum(peak, fig.high_idle["peak_voltage"])


def _only(mask, values):
    return np.where(mask, values, np.nan)


def _rating(key):
    return lambda fig, k: fig.rectifier_ratings[key]


def _min_plate_impedance(fig, k):
    out = np.full(len(fig.hv_voltage), np.nan)
    for valve in {id(v): v for v in fig.valves}.values():
        if valve is not None and valve.min_plate_impedance:
            at = np.array([v is valve for v in fig.valves])
            out[at] = valve.min_plate_impedance_at(fig.hv_voltage[at])
    return out


def _feed_rms(fig, k):
    return fig.high_full["feed_rms_current"][:, k] if k > 0 else \
        fig.high_full["secondary_rms_current"]


def _feed_dc(fig, k):
    return np.abs(fig.high_full["feed_dc_current"][:, k]) if k > 0 else \
        2 * fig.high_full["rectifier_average_current"]


def _is_choke(fig, k):
    return fig.feed_inductance[:, k] > 0


def _valve_source(fig, k):
    return fig.provenance["valve"]


def _diode_source(fig, k):
    return fig.provenance["diode"]


def _capacitor_source(fig, k):
    return fig.provenance["capacitor"][k]


def _fed(fig, k):
    return fig.fed[k]


def _corner_source(prefix, field):
    def source(f, k):
        corners = getattr(f, field)
        if corners is None:
            return [prefix] * len(f.hv_voltage)
        return [prefix if c == "no physical build" else f"{prefix}; worst corner: {c}"
                for c in corners]
    return source


def _bleeder_working_voltage(f, k):
    """A bleeder's working voltage: the lesser of its class's element voltage and sqrt(P R)."""
    return np.fmin(f.bleeder_element_voltage[:, k],
                   np.sqrt(f.bleeder_power_rating[:, k] * f.bleeder_resistance[:, k]))


def _capacitor_derating(f, k):
    return f.capacitor_voltage_derating


def _resistor_derating(f, k):
    return f.resistor_power_derating


#: The derating's wording in a check's description (defaults: conditions, common practice).
_DERATED = "(derated: conditions.{}, common practice, no source)"


TABLE = (
    CheckDef("valve.reservoir_capacitance", "reservoir capacitance (high tolerance) vs the "
             "valve's largest input capacitor", "F",
             lambda f, k: _only(f.has_valve, f.capacitance[:, 0] * (1 + f.capacitance_plus)),
             _rating("valve.max_input_capacitance"), _valve_source, rectifier=True),
    CheckDef("valve.peak_plate_current", "peak plate current, high mains, full power", "A",
             lambda f, k: _only(f.has_valve, f.high_full["rectifier_peak_current"]),
             _rating("valve.max_peak_current"), _valve_source, rectifier=True),
    CheckDef("valve.piv", "peak inverse voltage per plate, high mains", "V",
             lambda f, k: _only(f.has_valve, worst_piv(f)), _rating("valve.max_piv"),
             _valve_source, rectifier=True),
    CheckDef("valve.dc_current", "DC output current, high mains, full power", "A",
             lambda f, k: _only(f.has_valve, 2 * f.high_full["rectifier_average_current"]),
             _rating("valve.max_dc_current"), _valve_source, rectifier=True),
    CheckDef("valve.plate_supply_impedance", "effective plate-supply impedance per plate vs the "
             "least the valve asks", "ohm",
             lambda f, k: _only(f.has_valve, np.hypot(
                 f.hv_resistance, 2 * np.pi * f.frequency * f.hv_leakage_inductance)),
             _min_plate_impedance, _valve_source, minimum=True, rectifier=True),
    CheckDef("valve.plate_voltage_rms", "RMS plate voltage per plate, high mains", "V",
             lambda f, k: _only(f.has_valve, f.hv_voltage * (1 + f.mains_high)
                                * (1 + f.transformer_tolerance)),
             _rating("valve.max_plate_voltage_rms"), _valve_source, rectifier=True),
    CheckDef("valve.heater_cathode_voltage", "cathode above a shared heater winding, valves "
             "cold, high mains", "V", lambda f, k: _only(f.heater_shared, steady_peak(f)[:, 0]),
             _rating("valve.max_heater_cathode_voltage"), _valve_source, rectifier=True),
    CheckDef("diode.piv", "worst reverse voltage plus the asked margin vs V_RRM", "V",
             lambda f, k: _only(f.has_diode, worst_piv(f) * (1 + f.silicon_piv_margin)),
             _rating("diode.v_rrm"), _diode_source, rectifier=True),
    CheckDef("diode.surge", "switch-on surge at the mains crest, empty reservoir, vs I_FSM", "A",
             lambda f, k: _only(f.has_diode, f.surge_current), _rating("diode.i_fsm"),
             _diode_source, rectifier=True),
    CheckDef("diode.average_current", "average current per diode, high mains, full power", "A",
             lambda f, k: _only(f.has_diode, f.high_full["rectifier_average_current"]),
             _rating("diode.i_f_avg"), _diode_source, rectifier=True),
    CheckDef("transformer.temperature_rise", "winding temperature rise at the worst tap and "
             "mains corner vs the insulation class allowance at the stated ambient", "K", lambda f, k: f.temperature_rise,
             lambda f, k: f.temperature_rise_limit,
             _corner_source("the physical build: McLyman's surface-dissipation rise; IEC 60085 "
                            "class limit", "rise_corner")),
    CheckDef("transformer.window_fill", "winding build vs the window's room", "-",
             lambda f, k: f.build_ratio, lambda f, k: 1.0,
             "the physical build: layer-by-layer winding build"),
    CheckDef("transformer.flux_density", "peak flux density at the worst tap and mains corner "
             "vs the steel's limit", "T", lambda f, k: f.flux_density,
             lambda f, k: f.flux_density_limit,
             _corner_source("the steel grade's data", "flux_corner")),
    CheckDef("transformer.winding_voltage", "worst winding's on-load voltage as built (whole "
             "turns) vs its target, |V / V_target - 1|", "-",
             lambda f, k: f.winding_voltage_error,
             lambda f, k: np.full(len(f.hv_voltage), WINDING_VOLTAGE_TOLERANCE),
             "the transformer's rating (physics/transformer/rating.py); 1 % tolerance, common "
             "practice, no source"),
    CheckDef("transformer.hv_rms_current", "HV winding RMS current, high mains, full power", "A",
             lambda f, k: f.high_full["secondary_rms_current"], lambda f, k: f.hv_rated_current,
             "the transformer's rated current in the design"),
    CheckDef("capacitor.{node}.voltage", "highest voltage: valves cold or idle, high mains, vs "
             "the derated rating " + _DERATED.format("capacitor_voltage_derating"), "V",
             lambda f, k: np.maximum(steady_peak(f)[:, k], 0),
             lambda f, k: f.capacitor_rated_voltage[:, k], _capacitor_source,
             derating=_capacitor_derating),
    CheckDef("capacitor.{node}.surge_voltage", "charge-up overshoot at switch-on vs the surge "
             "rating", "V", lambda f, k: f.charge_peak[:, k],
             lambda f, k: f.capacitor_surge_rating[:, k], _capacitor_source),
    CheckDef("capacitor.{node}.ripple_current", "ripple current, high mains, full power", "A",
             lambda f, k: f.high_full["capacitor_rms_current"][:, k],
             lambda f, k: f.capacitor_ripple_rating[:, k], _capacitor_source),
    CheckDef("resistor.{node}.dissipation", "dropping resistor dissipation, high mains, full "
             "power, vs the derated rating " + _DERATED.format("resistor_power_derating"), "W",
             lambda f, k: np.where(_is_choke(f, k), np.nan,
                                   f.feed_resistance[:, k] * _feed_rms(f, k) ** 2),
             lambda f, k: f.feed_power_rating[:, k], "the design's power rating", applies=_fed,
             derating=_resistor_derating),
    CheckDef("choke.{node}.current", "choke DC current, high mains, full power", "A",
             lambda f, k: np.where(_is_choke(f, k), _feed_dc(f, k), np.nan),
             lambda f, k: f.feed_current_rating[:, k], "the design's current rating",
             applies=_fed),
    CheckDef("bleeder.{node}.dissipation", "bleeder dissipation at the highest voltage, vs the "
             "derated rating " + _DERATED.format("resistor_power_derating"), "W",
             lambda f, k: steady_peak(f)[:, k] ** 2 / f.bleeder_resistance[:, k],
             lambda f, k: f.bleeder_power_rating[:, k], "the design's power rating",
             derating=_resistor_derating),
    CheckDef("bleeder.{node}.voltage", "bleeder voltage at the highest voltage vs its working "
             "voltage (the lesser of its class's element voltage and sqrt(P R))", "V",
             lambda f, k: np.maximum(steady_peak(f)[:, k], 0), _bleeder_working_voltage,
             "the resistor catalogue's limiting element voltage"),
    CheckDef("bleeder.{node}.discharge_time", "time to fall below the safe voltage after "
             "switch-off (valves drawing nothing)", "s", lambda f, k: f.discharge_time[:, k],
             lambda f, k: f.discharge_time_limit,
             "conditions.discharge_time_limit (common practice, no source; local codes "
             "decide)"),
)


def evaluate(fig: CheckFigures, table=None) -> list:
    """Every check of a table (:data:`TABLE` unless given) over the figures' rows, in table
    order (per-node checks node by node, after the others).

    Returns
    -------
    list of ratings.CheckColumn
        NaN ratio where a check does not apply to a row.
    """
    table = TABLE if table is None else table
    rows = len(fig.hv_voltage)
    instances = [(d, None, d.name) for d in table if not d.per_node]
    for k, node in enumerate(fig.node_names):
        instances += [(d, k, d.name.format(node=node)) for d in table
                      if d.per_node and (d.applies is None or d.applies(fig, k))]
    out = []
    for d, k, name in instances:
        if isinstance(d.source, str):
            source = d.source
        else:
            source = d.source(fig, k) if fig.provenance is not None else [""] * rows
        derating = 1.0 if d.derating is None else d.derating(fig, k)
        out.append(ratings.column(name, d.what, d.unit, d.value(fig, k), d.limit(fig, k), source,
                                  minimum=d.minimum, rectifier=d.rectifier, derating=derating))
    return out
