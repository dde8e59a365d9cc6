"""Transformer design of a whole population: turns, wire, layers, losses, heat, mass, cost.

Part of :mod:`optimiser.physics.transformer`; see the package docstring for the method.
"""

from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass
from typing import Any, Sequence

import numba
import numpy as np

from optimiser.physics.transformer.physics import (
    COPPER_RESISTIVITY_20C,
    COPPER_DENSITY,
    COPPER_TEMPERATURE_COEFFICIENT_20C,
    _EMF_FACTOR,
    _MU_0,
    ei_area_product,
    ei_core_area,
    ei_magnetic_path_length,
    ei_steel_volume,
    ei_window,
    leakage_inductance_layered,
    magnetising_field,
    mean_turn_length,
    steinmetz_loss,
    turns_for_voltage,
)
from optimiser.physics.transformer.data import (
    TransformerData,
    WireTable,
    load_transformer_data,
)


_WIRE_SYSTEMS = ("metric", "awg", "both")
_RESERVED_NAMES = ("primary", "hv", "bias", "screen")
_ARRANGEMENTS = ("taps", "dual")
_FIXED_POINT_PASSES = 14
_FINAL_PASSES = 8
_TARGET_BISECTIONS = 12
_TEMPERATURE_CAP = 1000.0  # [degC]


# --------------------------------------------------------------------------------------------
# Results
# --------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class AuxiliaryWinding:
    """A heater or bias winding given to :func:`design_population`.

    Attributes
    ----------
    name : str
        Name used in the winding order and on the order sheet.
    voltage : array_like
        RMS voltage at rated load, end to end; 0 (with a current of 0) where the winding is not
        wound on a design: that design's figures are then those of a transformer without it,
        and :meth:`TransformerPopulation.design` leaves it out. [V]
    rms_current : array_like
        RMS current rating. [A]
    centre_tapped : bool
        A centre tap is brought out (hum balance); it carries no extra current.
    """

    name: str
    voltage: Any
    rms_current: Any
    centre_tapped: bool = False


@dataclass(frozen=True)
class _WindingFigures:
    """Figures of one winding. In :class:`WindingPopulation` every numeric field is an array of shape
    (n,); in :class:`WindingDesign` it is a Python scalar.

    Attributes
    ----------
    name : str
        ``"primary"``, ``"hv"``, ``"bias"`` or the heater's name.
    role : str
        ``"primary"``, ``"hv"``, ``"bias"`` or ``"heater"``.
    centre_tapped : bool
        A centre tap is brought out.
    conducting_paths : int
        2 for a centre-tapped HV (each half conducts in turn), else 1.
    rated_voltage : float
        Target RMS voltage at rated load per path (primary: the lowest mains voltage). [V]
    loaded_voltage : float
        RMS voltage at rated load per path as built, with integer turns (primary: as rated_voltage). [V]
    no_load_voltage : float
        RMS voltage per path with every winding unloaded (the primary still carries the core-loss
        current; the magnetising current, in quadrature, is neglected). [V]
    rms_current : float
        RMS current per path at rated load (primary: at the lowest mains voltage, total). [A]
    turns : float
        Turns of the whole winding (centre-tapped HV: both halves; primary: to the highest tap,
        dual: both windings). [-]
    turns_per_path : float
        Turns of one conducting path (primary: for the lowest voltage). [-]
    wire_label : str
        Wire size as ordered, e.g. ``"0.250 mm"`` or ``"AWG 30"``.
    wire_diameter : float
        Bare copper diameter. [m]
    wire_overall_diameter : float
        Diameter over the enamel (grade maximum). [m]
    current_density : float
        Actual RMS current density in the chosen wire. [A/m^2]
    turns_per_layer : float
        [-]
    layers : float
        [-]
    interlayer_thickness : float
        Paper between layers. [m]
    build : float
        Radial build including bulge allowance. [m]
    distance_from_former : float
        Where the winding starts, measured from the bobbin tube. [m]
    mean_turn_length : float
        [m]
    wire_length : float
        Length of copper wire in the whole winding. [m]
    resistance_20 : float
        DC resistance of one conducting path at 20 degC (primary: as connected for the lowest
        voltage). [ohm]
    resistance_hot : float
        The same at the computed winding temperature. [ohm]
    end_to_end_resistance_20 : float
        Whole winding at 20 degC (dual primary: each of the two windings). [ohm]
    copper_loss : float
        At rated load, hot. [W]
    copper_mass : float
        [kg]
    """

    name: str
    role: str
    centre_tapped: Any
    conducting_paths: Any
    rated_voltage: Any
    loaded_voltage: Any
    no_load_voltage: Any
    rms_current: Any
    turns: Any
    turns_per_path: Any
    wire_label: Any
    wire_diameter: Any
    wire_overall_diameter: Any
    current_density: Any
    turns_per_layer: Any
    layers: Any
    interlayer_thickness: Any
    build: Any
    distance_from_former: Any
    mean_turn_length: Any
    wire_length: Any
    resistance_20: Any
    resistance_hot: Any
    end_to_end_resistance_20: Any
    copper_loss: Any
    copper_mass: Any


@dataclass(frozen=True)
class WindingPopulation(_WindingFigures):
    __doc__ = "Figures of one winding over a population (numeric fields are arrays of shape (n,)).\n\n" + (
        _WindingFigures.__doc__ or ""
    )


@dataclass(frozen=True)
class WindingDesign(_WindingFigures):
    __doc__ = "Figures of one winding of one design (numeric fields are Python scalars).\n\n" + (
        _WindingFigures.__doc__ or ""
    )


@dataclass(frozen=True)
class _TransformerFigures:
    """Figures of a transformer design. In :class:`TransformerPopulation` every per-design field is an
    array of shape (n,) (``primary_tap_turns``: (taps, n)); in :class:`TransformerDesign` a scalar.

    Attributes
    ----------
    frequency : float
        Mains frequency (shared). [Hz]
    primary_voltages : tuple of float
        Mains voltages, ascending (shared). [V]
    primary_arrangement : str
        ``"taps"`` or ``"dual"`` (shared).
    winding_order : tuple of str
        From the tube outward, including ``"screen"`` when fitted (shared).
    insulation_class : str
        IEC 60085 letter (shared).
    ambient_temperature : float
        Stated ambient (shared). [degC]
    wire_system : str
        ``"metric"``, ``"awg"`` or ``"both"`` (shared).
    enamel_grade : int
        1 or 2 (shared).
    screen : bool
        Electrostatic screen fitted (shared).
    core_index, core_name, tongue_width [m], stack [m], steel_index, steel_name
        The core chosen.
    core_area : float
        Iron cross-section A_c. [m^2]
    window_area : float
        One window, 0.5a x 1.5a. [m^2]
    magnetic_path_length : float
        [m]
    winding_width : float
        Usable traverse between the flanges less the end margins. [m]
    available_build : float
        Usable radial space in the window. [m]
    total_build : float
        Radial space used by windings, insulation, screen and wrap. [m]
    build_ratio : float
        total_build / available_build (> 1 does not fit). [-]
    fill_factor : float
        Bare copper area over window area (McLyman's K_u). [-]
    flux_density : float
        Peak flux density at the lowest mains voltage with the integer primary turns. [T]
    flux_density_limit : float
        Maximum recommended for the steel. [T]
    primary_tap_turns : array
        Turns from the start of the primary to each tap (dual: of each winding). [-]
    windings : tuple
        Primary first, then HV, bias (if any) and heaters in the order given.
    primary_rms_current : float
        At rated load and the lowest mains voltage. [A]
    magnetising_current : float
        RMS estimate from the peak ampere-turns over sqrt 2 (sine assumption; the real current is
        peaky). [A]
    core_loss_current : float
        [A]
    no_load_current : float
        Primary current with no load, sqrt(I_m^2 + I_c^2). [A]
    copper_loss, core_loss, total_loss : float
        At rated load, hot. [W]
    surface_area : float
        Outline surface for cooling. [m^2]
    temperature_rise : float
        Average rise by McLyman's rule. [K]
    temperature_rise_limit : float
        Class temperature - ambient - hot-spot allowance. [K]
    winding_temperature : float
        Ambient + rise. [degC]
    secondary_va : float
        VA rating, sum of rated V x I_rms over every conducting path of every secondary (a
        centre-tapped HV counts both halves, as the trade rates it). [VA]
    primary_va : float
        Lowest mains voltage x primary RMS current. [VA]
    area_product : float
        W_a A_c of the chosen core. [m^4]
    copper_mass, steel_mass, mass : float
        mass = copper + core steel (bobbin, varnish and frame not included). [kg]
    cost : float
        From the price model. [cost units]
    hv_open_circuit_voltage : float
        Thevenin RMS voltage per HV conducting path with the other windings at rated load (the
        source the rectifier sees). [V]
    hv_series_resistance : float
        R_s per conducting path, hot: R_path + R_primary (N_path / N_primary)^2. [ohm]
    hv_series_resistance_20 : float
        The same at 20 degC. [ohm]
    hv_leakage_inductance : float
        Primary-to-HV leakage referred to one HV conducting path. [H]
    hv_loaded_voltage : float
        RMS per HV path at the rated current. [V]
    hv_regulation : float
        (hv_open_circuit_voltage - hv_loaded_voltage) / hv_loaded_voltage. [-]
    max_voltage_error : float
        Largest |loaded / rated - 1| over the secondaries: what integer turns leave (few turns per
        volt on large cores make low-voltage heaters coarse). No tolerance is imposed here. [-]
    current_density_used : float
        Current density the wire was chosen for. [A/m^2]
    fits_window, wire_available, flux_ok, temperature_ok, stack_in_range, regulation_solvable,
    resistance_target_met, converged, feasible : bool
        Feasibility flags; ``feasible`` is all of them.
    """

    frequency: float
    primary_voltages: tuple
    primary_arrangement: str
    winding_order: tuple
    insulation_class: str
    ambient_temperature: float
    wire_system: str
    enamel_grade: int
    screen: bool
    core_index: Any
    core_name: Any
    tongue_width: Any
    stack: Any
    steel_index: Any
    steel_name: Any
    core_area: Any
    window_area: Any
    magnetic_path_length: Any
    winding_width: Any
    available_build: Any
    total_build: Any
    build_ratio: Any
    fill_factor: Any
    flux_density: Any
    flux_density_limit: Any
    primary_tap_turns: Any
    windings: tuple
    primary_rms_current: Any
    magnetising_current: Any
    core_loss_current: Any
    no_load_current: Any
    copper_loss: Any
    core_loss: Any
    total_loss: Any
    surface_area: Any
    temperature_rise: Any
    temperature_rise_limit: Any
    winding_temperature: Any
    secondary_va: Any
    primary_va: Any
    area_product: Any
    copper_mass: Any
    steel_mass: Any
    mass: Any
    cost: Any
    hv_open_circuit_voltage: Any
    hv_series_resistance: Any
    hv_series_resistance_20: Any
    hv_leakage_inductance: Any
    hv_loaded_voltage: Any
    hv_regulation: Any
    max_voltage_error: Any
    current_density_used: Any
    fits_window: Any
    wire_available: Any
    flux_ok: Any
    temperature_ok: Any
    stack_in_range: Any
    regulation_solvable: Any
    resistance_target_met: Any
    converged: Any
    feasible: Any


_SHARED_FIELDS = (
    "frequency",
    "primary_voltages",
    "primary_arrangement",
    "winding_order",
    "insulation_class",
    "ambient_temperature",
    "wire_system",
    "enamel_grade",
    "screen",
)


def _scalar(value):
    return value.item() if isinstance(value, (np.ndarray, np.generic)) else value


@dataclass(frozen=True)
class TransformerDesign(_TransformerFigures):
    __doc__ = (
        "One transformer design: the fields of a population, as Python scalars, plus the build block it\n"
        "came from (``build``, None when taken from a population).\n\n" + (_TransformerFigures.__doc__ or "")
    )

    build: Any = None


@dataclass(frozen=True)
class TransformerPopulation(_TransformerFigures):
    __doc__ = (
        "A population of transformer designs: every per-design field is a numpy array of shape (n,).\n\n"
        + (_TransformerFigures.__doc__ or "")
    )

    @property
    def size(self) -> int:
        """Number of designs n."""
        return int(np.asarray(self.stack).shape[0])

    def __len__(self) -> int:
        return self.size

    def design(self, index: int, build=None) -> TransformerDesign:
        """Design ``index`` of the population as a :class:`TransformerDesign` of Python scalars."""
        if not -self.size <= index < self.size:
            raise IndexError(f"design index {index} out of range for a population of {self.size}")
        values = {}
        absent = {w.name for w in self.windings[2:] if w.rated_voltage[index] == 0}
        for f in dataclasses.fields(_TransformerFigures):
            value = getattr(self, f.name)
            if f.name == "winding_order":
                values[f.name] = tuple(name for name in value if name not in absent)
            elif f.name in _SHARED_FIELDS:
                values[f.name] = value
            elif f.name == "windings":
                values[f.name] = tuple(_take_winding(w, index) for w in value
                                       if w.name not in absent)
            elif f.name == "primary_tap_turns":
                values[f.name] = tuple(float(t) for t in value[:, index])
            else:
                values[f.name] = _scalar(value[index])
        return TransformerDesign(**values, build=build)


def _take_winding(winding: WindingPopulation, index: int) -> WindingDesign:
    values = {}
    for f in dataclasses.fields(_WindingFigures):
        value = getattr(winding, f.name)
        values[f.name] = value if f.name in ("name", "role") else _scalar(value[index])
    return WindingDesign(**values)


# --------------------------------------------------------------------------------------------
# Population design
# --------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class _Setup:
    """Per-population constants prepared once before the fixed-point passes."""

    n: int
    data: TransformerData
    frequency: float
    taps: np.ndarray  # (T,) ascending [V]
    dual: bool
    a: np.ndarray
    stack: np.ndarray
    b_target: np.ndarray
    core: np.ndarray
    steel: np.ndarray
    core_area: np.ndarray
    winding_width: np.ndarray
    available_build: np.ndarray
    former_width: np.ndarray
    former_depth: np.ndarray
    former_offset: float  # tongue clearance + tube wall: tube surface to tongue face [m]
    names: tuple
    roles: tuple
    v_target: np.ndarray  # (S, n) secondaries [V]
    i_rated: np.ndarray  # (S, n) [A]
    paths: np.ndarray  # (S, n)
    centre_tapped: np.ndarray  # (W, n) bool, primary row False
    order: tuple  # winding rows from the tube outward, -1 = screen
    wire: WireTable
    enamel_grade: int
    ambient: float
    rise_limit: float
    interwinding: float
    outer_wrap: float
    screen_thickness: float
    sizing: np.ndarray  # current density [A/m^2] or target HV series resistance [ohm]


def _as_population(name: str, value) -> np.ndarray:
    array = np.atleast_1d(np.asarray(value, dtype=float))
    if array.ndim != 1:
        raise ValueError(f"{name} must be a scalar or a 1-D array, got shape {array.shape}")
    if not np.all(np.isfinite(array)):
        raise ValueError(f"{name} must be finite, got {value!r}")
    return array


def _check_positive(name: str, array: np.ndarray, allow_zero: bool = False) -> None:
    bad = array < 0 if allow_zero else array <= 0
    if np.any(bad):
        relation = ">= 0" if allow_zero else "> 0"
        raise ValueError(f"{name} must be {relation}, got {array[bad][0]!r}")


def _default_order(screen: bool, has_bias: bool, heater_names: Sequence[str]) -> tuple:
    order = ["primary"] + (["screen"] if screen else []) + ["hv"] + (["bias"] if has_bias else [])
    return tuple(order + list(heater_names))


def _check_order(order: Sequence[str], expected: Sequence[str]) -> None:
    if sorted(order) != sorted(expected):
        raise ValueError(
            f"winding_order must list each of {', '.join(expected)} exactly once, got {', '.join(order)}"
        )


def _check_shared(
    frequency, primary_voltages, primary_arrangement, wire_system, enamel_grade, ambient_temperature, screen
):
    """Validate the inputs shared by the whole population; return the sorted mains voltages."""
    if not (isinstance(frequency, (int, float)) and math.isfinite(frequency) and frequency > 0):
        raise ValueError(f"frequency must be a positive number of hertz, got {frequency!r}")
    if primary_arrangement not in _ARRANGEMENTS:
        raise ValueError(f"primary_arrangement must be one of {', '.join(_ARRANGEMENTS)}, got {primary_arrangement!r}")
    taps = np.sort(np.asarray(list(primary_voltages), dtype=float))
    if taps.size == 0 or not np.all(np.isfinite(taps)) or np.any(taps <= 0) or np.unique(taps).size != taps.size:
        raise ValueError(f"primary_voltages must be distinct positive voltages, got {primary_voltages!r}")
    if primary_arrangement == "dual" and (taps.size != 2 or abs(taps[1] / taps[0] - 2.0) > 0.02):
        raise ValueError(f"a dual primary needs two voltages V and 2V (series/parallel), got {primary_voltages!r}")
    if wire_system not in _WIRE_SYSTEMS:
        raise ValueError(f"wire_system must be one of {', '.join(_WIRE_SYSTEMS)}, got {wire_system!r}")
    if enamel_grade not in (1, 2):
        raise ValueError(f"enamel_grade must be 1 or 2, got {enamel_grade!r}")
    if not (isinstance(ambient_temperature, (int, float)) and math.isfinite(ambient_temperature)):
        raise ValueError(f"ambient_temperature must be a number of degC, got {ambient_temperature!r}")
    if not isinstance(screen, bool):
        raise ValueError(f"screen must be True or False, got {screen!r}")
    return taps


def _population_arrays(data: TransformerData, columns: dict, aux: Sequence[AuxiliaryWinding], sizing_name: str) -> dict:
    """Broadcast every per-design input to one length n and check its values."""
    arrays = {name: _as_population(name, value) for name, value in columns.items()}
    try:
        shape = np.broadcast_shapes(*(a.shape for a in arrays.values()))
    except ValueError:
        sizes = {name: a.shape[0] for name, a in arrays.items() if a.shape[0] != 1}
        raise ValueError(f"population inputs must have one common length (or 1), got {sizes}") from None
    arrays = {name: np.broadcast_to(a, shape).copy() for name, a in arrays.items()}
    for name, limit in (("core_index", len(data.cores)), ("steel_index", len(data.steels))):
        values = arrays[name]
        bad = (values != np.rint(values)) | (values < 0) | (values >= limit)
        if np.any(bad):
            raise ValueError(f"{name} must be whole numbers 0..{limit - 1}, got {values[bad][0]!r}")
    for name in ("stack", "max_flux_density", "hv_voltage", sizing_name):
        _check_positive(name, arrays[name])
    for name in ("hv_rms_current",) + tuple(f"{w.name}.rms_current" for w in aux):
        _check_positive(name, arrays[name], allow_zero=True)
    for w in aux:  # 0 V with 0 A: the winding is not wound on that design
        voltage, current = arrays[f"{w.name}.voltage"], arrays[f"{w.name}.rms_current"]
        _check_positive(f"{w.name}.voltage", voltage, allow_zero=True)
        if np.any((voltage == 0) & (current != 0)):
            raise ValueError(f"{w.name}.voltage is 0 V (not wound) where its rms_current is not 0 A")
    if np.any((arrays["hv_centre_tapped"] != 0) & (arrays["hv_centre_tapped"] != 1)):
        raise ValueError("hv_centre_tapped must be True/False (or 1/0)")
    return arrays


def _winding_layout(heaters, bias, screen, winding_order):
    """Names and roles of the windings (primary, hv, heaters, bias) and their order on the bobbin."""
    heater_names = [h.name for h in heaters]
    if len(set(heater_names)) != len(heater_names) or any(h in _RESERVED_NAMES or not h for h in heater_names):
        raise ValueError(f"heater names must be unique, non-empty and not one of {_RESERVED_NAMES}, got {heater_names}")
    bias_winding = (AuxiliaryWinding("bias", bias.voltage, bias.rms_current, bias.centre_tapped),) if bias else ()
    aux = tuple(heaters) + bias_winding
    names = ("primary", "hv") + tuple(w.name for w in aux)
    roles = ("primary", "hv") + ("heater",) * len(heaters) + (("bias",) if bias else ())
    expected = _default_order(screen, bias is not None, heater_names)
    order_names = tuple(winding_order) if winding_order is not None else expected
    _check_order(order_names, expected)
    order = tuple(-1 if name == "screen" else names.index(name) for name in order_names)
    return aux, names, roles, order


def _prepare(data: TransformerData, columns: dict, *, heaters, bias, screen, winding_order, frequency,
             primary_voltages, primary_arrangement, insulation_class, ambient_temperature, wire_system,
             enamel_grade, sizing_name) -> _Setup:
    """Check the inputs and work out everything that stays fixed during the fixed-point passes."""
    taps = _check_shared(
        frequency, primary_voltages, primary_arrangement, wire_system, enamel_grade, ambient_temperature, screen
    )
    class_temperature = data.class_temperature(insulation_class)
    aux, names, roles, order = _winding_layout(tuple(heaters), bias, screen, winding_order)
    columns = dict(columns)
    for w in aux:
        columns[f"{w.name}.voltage"] = w.voltage
        columns[f"{w.name}.rms_current"] = w.rms_current
    arrays = _population_arrays(data, columns, aux, sizing_name)
    n = arrays["stack"].shape[0]
    hv_ct = arrays["hv_centre_tapped"]
    core = arrays["core_index"].astype(int)
    steel = arrays["steel_index"].astype(int)
    a = data.tongue_widths[core]
    sf = np.array([s.stacking_factor for s in data.steels])[steel]
    bobbin, practice = data.bobbin, data.wire.winding_practice
    offset = bobbin.tongue_clearance + bobbin.wall_thickness
    window_width, window_height = ei_window(a)
    return _Setup(
        n=n,
        data=data,
        frequency=float(frequency),
        taps=taps,
        dual=primary_arrangement == "dual",
        a=a,
        stack=arrays["stack"],
        b_target=arrays["max_flux_density"],
        core=core,
        steel=steel,
        core_area=ei_core_area(a, arrays["stack"], sf),
        winding_width=window_height - 2.0 * bobbin.wall_thickness - 2.0 * practice.end_margin,
        available_build=window_width - offset - bobbin.outer_clearance,
        former_width=a + 2.0 * offset,
        former_depth=arrays["stack"] + 2.0 * offset,
        former_offset=offset,
        names=names,
        roles=roles,
        v_target=np.vstack([arrays["hv_voltage"]] + [arrays[f"{w.name}.voltage"] for w in aux]),
        i_rated=np.vstack([arrays["hv_rms_current"]] + [arrays[f"{w.name}.rms_current"] for w in aux]),
        paths=np.vstack([1.0 + hv_ct] + [np.ones(n)] * len(aux)),
        centre_tapped=np.vstack(
            [np.zeros(n, bool), hv_ct.astype(bool)] + [np.full(n, bool(w.centre_tapped)) for w in aux]
        ),
        order=order,
        wire=data.wire_tables[wire_system],
        enamel_grade=enamel_grade,
        ambient=float(ambient_temperature),
        rise_limit=class_temperature - float(ambient_temperature) - practice.hot_spot_allowance,
        interwinding=data.material(practice.interwinding.material).thickness * practice.interwinding.layers,
        outer_wrap=data.material(practice.outer_wrap.material).thickness * practice.outer_wrap.layers,
        screen_thickness=data.material(practice.screen.material).thickness * practice.screen.layers,
        sizing=arrays[sizing_name],
    )


def _snap_up(table: WireTable, current, current_density):
    required = np.sqrt(4.0 * np.asarray(current, dtype=float) / (np.pi * np.asarray(current_density)))
    index = np.searchsorted(table.diameters, required, side="left")
    available = index < table.diameters.size
    index = np.minimum(index, table.diameters.size - 1)
    return index, table.diameters[index], available


def wire_size_for_current(rms_current, current_density, wire_system="metric", data=None):
    """Smallest real wire size whose bare area carries a current at a current density.

    Parameters
    ----------
    rms_current : numeric
        RMS current. [A]
    current_density : numeric
        Allowed RMS current density. [A/m^2]
    wire_system : {"metric", "awg", "both"}
        IEC 60317 nominal diameters, ASTM B258 gauges, or both.
    data : TransformerData, optional

    Returns
    -------
    tuple
        (bare diameter [m], label array, available bool array); when no offered size is large
        enough the largest is returned with available False.

    References
    ----------
    .. [1] ASTM B258 (AWG diameters); IEC 60317-0-1 (nominal diameters of enamelled round wire).
    """
    data = data if data is not None else load_transformer_data()
    if wire_system not in _WIRE_SYSTEMS:
        raise ValueError(f"wire_system must be one of {', '.join(_WIRE_SYSTEMS)}, got {wire_system!r}")
    table = data.wire_tables[wire_system]
    index, diameter, available = _snap_up(table, rms_current, current_density)
    return diameter, np.array(table.labels)[index], available


def _iron(setup: _Setup, primary_turns):
    """Flux density with integer turns, core loss, magnetising and core-loss currents."""
    data = setup.data
    v_low = setup.taps[0]
    b = v_low / (_EMF_FACTOR * setup.frequency * primary_turns * setup.core_area)
    sf = np.array([s.stacking_factor for s in data.steels])[setup.steel]
    density = np.array([s.density_kg_per_m3 for s in data.steels])[setup.steel]
    steel_mass = density * ei_steel_volume(setup.a, setup.stack, sf)
    k, alpha, beta = (data.steinmetz[setup.steel, j] for j in range(3))
    specific_loss = steinmetz_loss(setup.frequency, b, k, alpha, beta)
    core_loss = steel_mass * specific_loss * data.lamination.core_loss_building_factor
    field = np.zeros(setup.n)
    for s in np.unique(setup.steel):  # the steels in use (each curve is an interpolation)
        steel = data.steels[int(s)]
        field = np.where(setup.steel == s, magnetising_field(b, steel.magnetisation), field)
    ampere_turns = field * ei_magnetic_path_length(setup.a) + b * data.lamination.joint_equivalent_gap / _MU_0
    magnetising = ampere_turns / (math.sqrt(2.0) * primary_turns)
    return b, steel_mass, core_loss, magnetising, core_loss / v_low


@numba.njit(cache=True)
def _interp(x, xp, fp):
    """np.interp for one point (flat beyond the ends), without an array in between."""
    if x <= xp[0]:
        return fp[0]
    last = xp.shape[0] - 1
    if x >= xp[last]:
        return fp[last]
    k = np.searchsorted(xp, x, side="right") - 1
    return fp[k] + (fp[k + 1] - fp[k]) * (x - xp[k]) / (xp[k + 1] - xp[k])


@numba.njit(cache=True)
def _solve_row(j, passes, final_passes, v_low, dual, i_core, i_mag, core_loss, n_eq, n_primary,
               ratio, v_target, i_rated, paths, current_density, diameters, enamel_nominal,
               enamel_increase, interlayer_limits, interlayer_thickness, lay_factor, bulge_factor,
               winding_width, order, interwinding, screen_thickness, outer_wrap, former_width,
               former_depth, former_offset, a, stack, ambient, temperature_cap, out_w, out_wire,
               out_n, out_ok):
    """One row of :func:`_solve_kernel` (a function of its own, so that the threads of the
    loop over rows share nothing but the arrays each row writes)."""
    S, n = v_target.shape
    W = S + 1
    parallel = 2.0 if dual else 1.0
    D = diameters.shape[0]
    rho = COPPER_RESISTIVITY_20C
    alpha = COPPER_TEMPERATURE_COEFFICIENT_20C
    turns = np.empty(W)
    turns_path = np.empty(W)
    wire_current = np.empty(W)
    diameter = np.empty(W)
    overall = np.empty(W)
    interlayer = np.empty(W)
    per_layer = np.empty(W)
    layers = np.empty(W)
    builds = np.empty(W)
    start = np.empty(W)
    mlt = np.empty(W)
    length = np.empty(W)
    r_end_20 = np.empty(W)
    r_path_20 = np.empty(W)
    r_path = np.empty(W)
    loss_each = np.empty(W)
    index = np.empty(W, np.int64)
    r = ratio[:, j].copy()
    temperature = ambient
    previous = ambient
    solvable = True
    total_passes = passes + final_passes + 1
    for step in range(total_passes):
        if step == passes:  # integer secondary turns from here on (none if not wound)
            for s in range(S):
                if v_target[s, j] > 0.0:
                    r[s] = max(np.rint(r[s] * n_eq[j]), 1.0) / n_eq[j]
        # ---- one pass (see the module's method)
        in_phase = i_core[j]
        loaded = i_core[j]
        for s in range(S):
            reflect = math.sqrt(2.0) if paths[s, j] > 1.5 else 1.0
            in_phase += r[s] * i_rated[s, j] * reflect
            loaded += r[s] * i_rated[s, j]
        i_primary = math.sqrt(in_phase * in_phase + i_mag[j] * i_mag[j])
        turns_path[0] = n_eq[j]
        turns[0] = n_primary[j]
        wire_current[0] = i_primary / parallel
        for s in range(S):
            turns_path[s + 1] = r[s] * n_eq[j]
            turns[s + 1] = paths[s, j] * r[s] * n_eq[j]
            wire_current[s + 1] = i_rated[s, j]
        available = True
        traverse = True
        for w in range(W):
            required = math.sqrt(4.0 * wire_current[w] / (math.pi * current_density[j]))
            k = np.searchsorted(diameters, required)
            if k >= D:
                available = False
                k = D - 1
            index[w] = k
            diameter[w] = diameters[k]
            overall[w] = diameter[w] + _interp(diameter[w], enamel_nominal, enamel_increase)
            m = min(np.searchsorted(interlayer_limits, diameter[w]),
                    interlayer_limits.shape[0] - 1)
            interlayer[w] = interlayer_thickness[m]
            p = math.floor(winding_width[j] / (overall[w] * lay_factor))
            if p < 1.0:
                traverse = False
            p = max(p, 1.0)
            per_layer[w] = p
            if w > 1 and v_target[w - 1, j] == 0.0:  # not wound on this design
                layers[w] = 0.0
                builds[w] = 0.0
                continue
            layers[w] = max(math.ceil(turns[w] / p - 1e-9), 1.0)
            builds[w] = (layers[w] * overall[w] + (layers[w] - 1.0) * interlayer[w]) \
                * bulge_factor
        cursor = 0.0
        for k in range(order.shape[0]):
            row = order[k]
            if row > 1 and v_target[row - 1, j] == 0.0:  # not wound: no wrap, no start
                start[row] = cursor
                continue
            if k > 0:
                cursor += interwinding
            if row < 0:
                cursor += screen_thickness
            else:
                start[row] = cursor
                cursor += builds[row]
        total_build = cursor + outer_wrap
        hot = 1.0 + alpha * (temperature - 20.0)
        share = (n_eq[j] / n_primary[j]) / parallel
        copper = 0.0
        for w in range(W):
            # physics.mean_turn_length and physics.resistance_per_length at 20 degC
            mlt[w] = 2.0 * (former_width[j] + former_depth[j]) + 2.0 * math.pi * (
                start[w] + 0.5 * builds[w])
            length[w] = turns[w] * mlt[w]
            r_end_20[w] = length[w] * rho / (0.25 * math.pi * diameter[w] * diameter[w])
            r_path_20[w] = r_end_20[0] * share if w == 0 else r_end_20[w] / paths[w - 1, j]
            r_path[w] = r_path_20[w] * hot
            if w == 0:
                loss_each[w] = i_primary * i_primary * r_path[0]
            else:
                loss_each[w] = paths[w - 1, j] * i_rated[w - 1, j] ** 2 * r_path[w]
            copper += loss_each[w]
        e_primary = v_low - r_path[0] * loaded
        # physics.ei_outline_surface_area and physics.mclyman_temperature_rise
        surface = 2.0 * (7.5 * a[j] * a[j]) + 2.0 * (5.5 * a[j]) * (
            stack[j] + 2.0 * (former_offset + total_build))
        psi = (copper + core_loss[j]) / (surface * 1e4)
        rise = 450.0 * max(psi, 0.0) ** 0.826
        # ---- after the pass
        if step < passes:
            solvable = _regulated_ratios_of(r, r_path, v_target[:, j], i_rated[:, j],
                                            v_low, i_core[j])
        if step < total_passes - 1:
            previous = temperature
            temperature = min(ambient + rise, temperature_cap)
    for w in range(W):
        out_w[0, w, j] = turns[w]
        out_w[1, w, j] = turns_path[w]
        out_w[2, w, j] = diameter[w]
        out_w[3, w, j] = overall[w]
        out_w[4, w, j] = interlayer[w]
        out_w[5, w, j] = per_layer[w]
        out_w[6, w, j] = layers[w]
        out_w[7, w, j] = builds[w]
        out_w[8, w, j] = start[w]
        out_w[9, w, j] = mlt[w]
        out_w[10, w, j] = length[w]
        out_w[11, w, j] = r_end_20[w] / (parallel if w == 0 else 1.0)
        out_w[12, w, j] = r_path_20[w]
        out_w[13, w, j] = r_path[w]
        out_w[14, w, j] = loss_each[w]
        out_w[15, w, j] = wire_current[w]
        out_wire[w, j] = index[w]
    for s in range(S):
        ratio[s, j] = r[s]
    out_n[0, j] = i_primary
    out_n[1, j] = total_build
    out_n[2, j] = e_primary
    out_n[3, j] = copper
    out_n[4, j] = surface
    out_n[5, j] = rise
    out_n[6, j] = temperature
    out_n[7, j] = previous
    out_ok[0, j] = available
    out_ok[1, j] = traverse
    out_ok[2, j] = solvable


@numba.njit(cache=True, parallel=True)
def _solve_kernel(passes, final_passes, v_low, dual, i_core, i_mag, core_loss, n_eq, n_primary,
                  ratio, v_target, i_rated, paths, current_density, diameters, enamel_nominal,
                  enamel_increase, interlayer_limits, interlayer_thickness, lay_factor,
                  bulge_factor, winding_width, order, interwinding, screen_thickness,
                  outer_wrap, former_width, former_depth, former_offset, a, stack, ambient,
                  temperature_cap, out_w, out_wire, out_n, out_ok):
    """The fixed point of :func:`_solve`, one design (column) at a time, compiled.

    Each pass chooses the wire (the smallest offered size for the current density), lays the
    windings out layer by layer in their order on the bobbin, and computes resistances, losses
    and the temperature rise (McLyman) for the current turns ratios and winding temperature; the
    ratios are then re-solved for the rated loaded voltages (:func:`_regulated_ratios_of`),
    integer secondary turns taken, and the temperature iterated to its fixed point.

    Outputs (filled): ``out_w`` (K, W, n) per-winding figures in the order of
    :data:`_W_FIELDS`; ``out_wire`` (W, n) wire indices; ``out_n`` (K, n) per-design figures
    in the order of :data:`_N_FIELDS`; ``out_ok`` (3, n): wire available, traverse fits,
    solvable.
    """
    n = v_target.shape[1]
    for j in numba.prange(n):  # designs are independent: threads split them
        _solve_row(j, passes, final_passes, v_low, dual, i_core, i_mag, core_loss, n_eq, n_primary,
                   ratio, v_target, i_rated, paths, current_density, diameters, enamel_nominal,
                   enamel_increase, interlayer_limits, interlayer_thickness, lay_factor,
                   bulge_factor, winding_width, order, interwinding, screen_thickness, outer_wrap,
                   former_width, former_depth, former_offset, a, stack, ambient, temperature_cap,
                   out_w, out_wire, out_n, out_ok)



@numba.njit(cache=True)
def _regulated_ratios_of(r, r_path, v_target, i_rated, v_low, i_core):
    """Secondary turns ratios that give the rated loaded voltages for the resistances of a pass,
    for one design, in place on ``r``; returns whether they exist.

    With u_k = V_k + I_k R_k and E = V_1 - R_1 (sum n_k I_k + I_c), n_k = u_k / E gives
    E^2 - (V_1 - R_1 I_c) E + R_1 sum u_k I_k = 0, whose larger root is taken. Without a real
    root the drops exceed what any turns ratio can make up; E then sits at the maximum-power
    point V'/2 and the ratios are capped at twice the ideal (100 % compensation), which keeps
    the figures of an infeasible design finite.
    """
    S = r.shape[0]
    r_primary = r_path[0]
    total = 0.0
    for s in range(S):
        total += (v_target[s] + i_rated[s] * r_path[s + 1]) * i_rated[s]
    v_prime = v_low - r_primary * i_core
    discriminant = v_prime * v_prime - 4.0 * r_primary * total
    solvable = discriminant > 0.0 and v_prime > 0.0
    e = max(0.5 * (v_prime + math.sqrt(max(discriminant, 0.0))), 0.5 * abs(v_prime))
    e = max(e, 1e-3 * v_low)
    for s in range(S):
        if v_target[s] == 0.0:  # not wound on this design
            r[s] = 0.0
            continue
        ceiling = 2.0 * v_target[s] / v_low
        r[s] = min((v_target[s] + i_rated[s] * r_path[s + 1]) / e, ceiling)
        if not r[s] < ceiling:
            solvable = False
    return solvable


_W_FIELDS = ("turns", "turns_path", "diameter", "overall", "interlayer", "per_layer", "layers",
             "builds", "start", "mlt", "length", "r_end_20", "r_path_20", "r_path",
             "copper_loss_each", "wire_current")
_N_FIELDS = ("i_primary", "total_build", "e_primary", "copper_loss", "surface", "rise",
             "temperature", "previous")


def _solve(setup: _Setup, current_density):
    """Fixed point of turns, wire, geometry, resistance and temperature; then integer turns
    (:func:`_solve_kernel`)."""
    ideal = turns_for_voltage(setup.taps[:, None], setup.frequency, setup.b_target, setup.core_area)
    tap_turns = np.maximum(np.rint(ideal), 1.0)
    n_eq = tap_turns[0]
    n_primary = 2.0 * n_eq if setup.dual else tap_turns[-1]
    iron = _iron(setup, n_eq)
    ratio = np.ascontiguousarray(setup.v_target / setup.taps[0], dtype=float)
    S, n = ratio.shape
    W = S + 1
    practice = setup.data.wire.winding_practice
    points = setup.data.wire.enamel_build.points
    rules = practice.interlayer
    out_w = np.empty((len(_W_FIELDS), W, n))
    out_wire = np.empty((W, n), np.int64)
    out_n = np.empty((len(_N_FIELDS), n))
    out_ok = np.empty((3, n), np.bool_)
    f64 = lambda x: np.ascontiguousarray(np.broadcast_to(np.asarray(x, float), (n,)))  # noqa: E731
    _solve_kernel(
        _FIXED_POINT_PASSES, _FINAL_PASSES, float(setup.taps[0]), bool(setup.dual),
        f64(iron[4]), f64(iron[3]), f64(iron[2]), f64(n_eq), f64(n_primary), ratio,
        np.ascontiguousarray(setup.v_target, float), np.ascontiguousarray(setup.i_rated, float),
        np.ascontiguousarray(np.broadcast_to(setup.paths, (S, n)), float),
        f64(current_density), np.asarray(setup.wire.diameters, float),
        np.array([q.nominal_diameter for q in points], float),
        np.array([q.grade_1 if setup.enamel_grade == 1 else q.grade_2 for q in points], float),
        np.array([q.up_to_diameter for q in rules], float),
        np.array([setup.data.material(q.material).thickness for q in rules], float),
        float(practice.lay_factor), float(practice.bulge_factor), f64(setup.winding_width),
        np.array(setup.order, np.int64), float(setup.interwinding),
        float(setup.screen_thickness), float(setup.outer_wrap), f64(setup.former_width),
        f64(setup.former_depth), float(setup.former_offset), f64(setup.a), f64(setup.stack),
        float(setup.ambient), _TEMPERATURE_CAP, out_w, out_wire, out_n, out_ok)
    state = {name: out_w[k] for k, name in enumerate(_W_FIELDS)}
    state.update({name: out_n[k] for k, name in enumerate(_N_FIELDS)})
    temperature, previous = state.pop("temperature"), state.pop("previous")
    state.update(
        wire_index=out_wire,
        available=out_ok[0],
        traverse_ok=out_ok[1],
        ratio=ratio,
        tap_turns=tap_turns,
        iron=iron,
        temperature=temperature,
        solvable=out_ok[2],
        converged=np.abs(temperature - previous) < 0.05,
    )
    return state


def _hv_leakage(setup: _Setup, state):
    """Primary-to-HV leakage per HV conducting path; sequential halves when centre-tapped."""
    builds, start = state["builds"], state["start"]
    inner_first = start[0] < start[1]
    inner, outer = np.where(inner_first, 0, 1), np.where(inner_first, 1, 0)
    columns = np.arange(setup.n)
    inner_start, inner_build = start[inner, columns], builds[inner, columns]
    outer_start, outer_build = start[outer, columns], builds[outer, columns]
    gap = outer_start - (inner_start + inner_build)
    span = outer_start + outer_build - inner_start
    mlt = mean_turn_length(setup.former_width, setup.former_depth, inner_start, span)
    n_path = state["turns_path"][1]
    whole = leakage_inductance_layered(n_path, mlt, setup.winding_width, gap, builds[0], builds[1])
    half = 0.5 * builds[1]
    near = leakage_inductance_layered(n_path, mlt, setup.winding_width, gap, builds[0], half)
    far = leakage_inductance_layered(n_path, mlt, setup.winding_width, gap + half, builds[0], half)
    return np.where(setup.paths[0] > 1.5, 0.5 * (near + far), whole)


def _cost(setup: _Setup, copper_mass, steel_mass):
    prices = setup.data.prices
    wound = setup.v_target > 0  # the HV and each auxiliary winding wound on each design
    windings = (2 if setup.dual else 1) + np.sum(wound, axis=0)
    centre_taps = np.sum(setup.centre_tapped & np.vstack([np.ones((1, setup.n), bool), wound]),
                         axis=0)
    screen = any(row < 0 for row in setup.order)
    return (
        prices.base_cost
        + prices.copper_per_kg * copper_mass
        + prices.steel_per_kg * steel_mass
        + prices.labour_per_winding * windings
        + (prices.extras.screen if screen else 0.0)
        + prices.extras.tapped_primary * (setup.taps.size - 1)
        + prices.extras.centre_tap * centre_taps
    )


def _windings(setup: _Setup, state) -> tuple:
    ratio = state["ratio"]
    n_windings = len(setup.names)
    e = state["e_primary"]
    v_low = setup.taps[0]
    loaded = np.vstack([np.full(setup.n, v_low), ratio * e - setup.i_rated * state["r_path"][1:]])
    i_core = state["iron"][4]
    no_load = np.vstack([np.full(setup.n, v_low), ratio * (v_low - state["r_path"][0] * i_core)])
    rated = np.vstack([np.full(setup.n, v_low), setup.v_target])
    current = np.vstack([state["i_primary"], setup.i_rated])
    paths = np.vstack([np.ones(setup.n), setup.paths])
    area = 0.25 * np.pi * state["diameter"] ** 2
    labels = np.array(setup.wire.labels)[state["wire_index"]]
    result = []
    for w in range(n_windings):
        result.append(
            WindingPopulation(
                name=setup.names[w],
                role=setup.roles[w],
                centre_tapped=setup.centre_tapped[w].copy(),
                conducting_paths=paths[w].astype(int),
                rated_voltage=rated[w],
                loaded_voltage=loaded[w],
                no_load_voltage=no_load[w],
                rms_current=current[w],
                turns=state["turns"][w],
                turns_per_path=state["turns_path"][w],
                wire_label=labels[w],
                wire_diameter=state["diameter"][w],
                wire_overall_diameter=state["overall"][w],
                current_density=state["wire_current"][w] / area[w],
                turns_per_layer=state["per_layer"][w],
                layers=state["layers"][w],
                interlayer_thickness=state["interlayer"][w],
                build=state["builds"][w],
                distance_from_former=state["start"][w],
                mean_turn_length=state["mlt"][w],
                wire_length=state["length"][w],
                resistance_20=state["r_path_20"][w],
                resistance_hot=state["r_path"][w],
                end_to_end_resistance_20=state["r_end_20"][w],
                copper_loss=state["copper_loss_each"][w],
                copper_mass=state["length"][w] * area[w] * COPPER_DENSITY,
            )
        )
    return tuple(result)


def _assemble(setup: _Setup, state, current_density, target_met, settings) -> TransformerPopulation:
    data = setup.data
    b, steel_mass, core_loss, i_mag, i_core = state["iron"]
    windings = _windings(setup, state)
    hv = windings[1]
    ratio_hv = state["ratio"][0]
    r_primary, r_primary_20 = state["r_path"][0], state["r_path_20"][0]
    others = np.sum(state["ratio"][1:] * setup.i_rated[1:], axis=0) + i_core
    hv_open = ratio_hv * (setup.taps[0] - r_primary * others)
    r_s = hv.resistance_hot + ratio_hv**2 * r_primary
    hv_loaded = hv_open - hv.rms_current * r_s
    positive = hv_loaded > 0.0
    loaded_error = np.vstack([np.where(w.rated_voltage > 0, w.loaded_voltage
                                       / np.where(w.rated_voltage > 0, w.rated_voltage, 1.0) - 1.0,
                                       0.0) for w in windings[1:]])
    window_width, window_height = ei_window(setup.a)
    copper_mass = sum(w.copper_mass for w in windings)
    secondary_va = sum(w.rated_voltage * w.rms_current * w.conducting_paths for w in windings[1:])
    copper_area = np.sum(state["turns"] * 0.25 * np.pi * state["diameter"] ** 2, axis=0)
    low, high = data.lamination.stack_ratio_range
    ratio_stack = setup.stack / setup.a
    fits = (state["total_build"] <= setup.available_build) & state["traverse_ok"]
    flux_limit = np.array([s.max_flux_density for s in data.steels])[setup.steel]
    flags = {
        "fits_window": fits,
        "wire_available": state["available"],
        "flux_ok": b <= flux_limit * (1.0 + 1e-9),
        "temperature_ok": state["rise"] <= setup.rise_limit,
        "stack_in_range": (ratio_stack >= low * (1 - 1e-9)) & (ratio_stack <= high * (1 + 1e-9)),
        "regulation_solvable": state["solvable"],
        "resistance_target_met": target_met,
        "converged": state["converged"],
    }
    feasible = np.logical_and.reduce(list(flags.values()))
    return TransformerPopulation(
        **settings,
        core_index=setup.core,
        core_name=np.array([c.name for c in data.cores])[setup.core],
        tongue_width=setup.a,
        stack=setup.stack,
        steel_index=setup.steel,
        steel_name=np.array([s.name for s in data.steels])[setup.steel],
        core_area=setup.core_area,
        window_area=window_width * window_height,
        magnetic_path_length=ei_magnetic_path_length(setup.a),
        winding_width=setup.winding_width,
        available_build=setup.available_build,
        total_build=state["total_build"],
        build_ratio=state["total_build"] / setup.available_build,
        fill_factor=copper_area / (window_width * window_height),
        flux_density=b,
        flux_density_limit=flux_limit,
        primary_tap_turns=state["tap_turns"],
        windings=windings,
        primary_rms_current=state["i_primary"],
        magnetising_current=i_mag,
        core_loss_current=i_core,
        no_load_current=np.hypot(i_mag, i_core),
        copper_loss=state["copper_loss"],
        core_loss=core_loss,
        total_loss=state["copper_loss"] + core_loss,
        surface_area=state["surface"],
        temperature_rise=state["rise"],
        temperature_rise_limit=np.full(setup.n, setup.rise_limit),
        winding_temperature=setup.ambient + state["rise"],
        secondary_va=secondary_va,
        primary_va=setup.taps[0] * state["i_primary"],
        area_product=ei_area_product(setup.a, setup.stack, setup.core_area / (setup.a * setup.stack)),
        copper_mass=copper_mass,
        steel_mass=steel_mass,
        mass=copper_mass + steel_mass,
        cost=_cost(setup, copper_mass, steel_mass),
        hv_open_circuit_voltage=hv_open,
        hv_series_resistance=r_s,
        hv_series_resistance_20=hv.resistance_20 + ratio_hv**2 * r_primary_20,
        hv_leakage_inductance=_hv_leakage(setup, state),
        hv_loaded_voltage=hv_loaded,
        hv_regulation=np.where(positive, (hv_open - hv_loaded) / np.where(positive, hv_loaded, 1.0), np.inf),
        max_voltage_error=np.max(np.abs(loaded_error), axis=0),
        current_density_used=current_density,
        **flags,
        feasible=feasible,
    )


def _series_resistance(state):
    return state["r_path"][1] + state["ratio"][0] ** 2 * state["r_path"][0]


def _current_density_for_target(setup: _Setup, target):
    """Largest current density (thinnest wire, cheapest) whose HV R_s (hot) is at most ``target``,
    by bisection in log J over the practice's range; R_s grows with J, in steps of wire size."""
    low_j, high_j = setup.data.wire.winding_practice.current_density_range
    low, high = np.full(setup.n, low_j), np.full(setup.n, high_j)
    high_ok = _series_resistance(_solve(setup, high)) <= target
    for _ in range(_TARGET_BISECTIONS):
        middle = np.sqrt(low * high)
        ok = _series_resistance(_solve(setup, middle)) <= target
        low, high = np.where(ok, middle, low), np.where(ok, high, middle)
    return np.where(high_ok, high_j, low)


def design_population(
    *,
    core_index,
    stack,
    max_flux_density,
    hv_voltage,
    hv_rms_current,
    frequency: float,
    primary_voltages: Sequence[float],
    insulation_class: str,
    ambient_temperature: float,
    hv_centre_tapped=False,
    current_density=None,
    target_resistance=None,
    heaters: Sequence[AuxiliaryWinding] = (),
    bias: AuxiliaryWinding | None = None,
    screen: bool = False,
    winding_order: Sequence[str] | None = None,
    steel_index=0,
    primary_arrangement: str = "taps",
    wire_system: str = "metric",
    enamel_grade: int = 2,
    data: TransformerData | None = None,
) -> TransformerPopulation:
    """Design a whole population of mains transformers in one vectorised call.

    Per-design inputs are scalars or 1-D arrays of one common length n (scalars broadcast).

    Parameters
    ----------
    core_index : array_like of int
        Index into the cores of ``cores.yaml`` (see :meth:`TransformerData.core_index`). [-]
    stack : array_like
        Stack height. [m]
    max_flux_density : array_like
        Design peak flux density at the lowest mains voltage. [T]
    hv_voltage : array_like
        HV RMS voltage at rated load per conducting path (each half when centre-tapped). [V]
    hv_rms_current : array_like
        HV RMS current per conducting path (from the rectifier waveform, not the DC current). [A]
    frequency : float
        Mains frequency. [Hz]
    primary_voltages : sequence of float
        Mains voltages: one, several taps, or [V, 2V] for a dual primary. [V]
    insulation_class : str
        IEC 60085 letter: A, E, B, F or H.
    ambient_temperature : float
        Ambient the temperature rise is checked at. [degC]
    hv_centre_tapped : array_like of bool
        True for a centre-tapped full-wave HV winding.
    current_density, target_resistance : array_like
        Exactly one: the RMS current density every winding's wire is chosen for [A/m^2], or the HV
        series resistance per path R_s (hot) to meet with the largest current density that does
        [ohm].
    heaters : sequence of AuxiliaryWinding
        Heater windings (voltage end to end).
    bias : AuxiliaryWinding, optional
        Bias supply winding (its name is taken as ``"bias"``).
    screen : bool
        Fit an electrostatic screen.
    winding_order : sequence of str, optional
        From the tube outward, naming ``primary``, ``hv``, ``bias``, ``screen`` and each heater once;
        default primary, screen, hv, bias, heaters.
    steel_index : array_like of int
        Index into the steels of ``steels.yaml``. [-]
    primary_arrangement : {"taps", "dual"}
    wire_system : {"metric", "awg", "both"}
        Wire sizes offered (IEC 60317 metric, ASTM B258 AWG, or both).
    enamel_grade : {1, 2}
        IEC 60317 enamel grade, for the overall diameter.
    data : TransformerData, optional
        Parts data; the packaged data files when omitted.

    Returns
    -------
    TransformerPopulation
        Every figure as an array over the population, with feasibility flags.

    Raises
    ------
    ValueError
        For malformed input only (wrong shapes, non-positive values, unknown names). Designs that
        do not fit, overheat or cannot meet their voltages are flagged, not raised.

    References
    ----------
    .. [1] C. W. T. McLyman, Transformer and Inductor Design Handbook, 4th ed., CRC Press 2011.
    .. [2] IEC 60028 (copper), ASTM B258 (AWG), IEC 60317-0-1 (enamelled wire), IEC 60085 (classes).
    """
    data = data if data is not None else load_transformer_data()
    if (current_density is None) == (target_resistance is None):
        raise ValueError("give exactly one of current_density or target_resistance")
    by_density = current_density is not None
    sizing_name = "current_density" if by_density else "target_resistance"
    columns = {
        "core_index": core_index,
        "stack": stack,
        "max_flux_density": max_flux_density,
        "hv_voltage": hv_voltage,
        "hv_rms_current": hv_rms_current,
        "hv_centre_tapped": hv_centre_tapped,
        "steel_index": steel_index,
        sizing_name: current_density if by_density else target_resistance,
    }
    setup = _prepare(
        data,
        columns,
        heaters=heaters,
        bias=bias,
        screen=screen,
        winding_order=winding_order,
        frequency=frequency,
        primary_voltages=primary_voltages,
        primary_arrangement=primary_arrangement,
        insulation_class=insulation_class,
        ambient_temperature=ambient_temperature,
        wire_system=wire_system,
        enamel_grade=enamel_grade,
        sizing_name=sizing_name,
    )
    if by_density:
        j = setup.sizing
        target_met = np.ones(setup.n, bool)
        state = _solve(setup, j)
    else:
        j = _current_density_for_target(setup, setup.sizing)
        state = _solve(setup, j)
        target_met = _series_resistance(state) <= setup.sizing * (1.0 + 1e-9)
    settings = {
        "frequency": setup.frequency,
        "primary_voltages": tuple(float(v) for v in setup.taps),
        "primary_arrangement": primary_arrangement,
        "winding_order": tuple("screen" if row < 0 else setup.names[row] for row in setup.order),
        "insulation_class": insulation_class,
        "ambient_temperature": setup.ambient,
        "wire_system": wire_system,
        "enamel_grade": enamel_grade,
        "screen": screen,
    }
    return _assemble(setup, state, j, target_met, settings)
