"""Checking and preparing the input of a transformer population design: arrays and their
shapes, the winding order, the per-population constants (:class:`_Setup`), wire sizes
snapped up to a real table, and the iron (flux density, core loss, magnetising current).

Part of :mod:`optimiser.physics.transformer`.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Sequence

import numpy as np

from optimiser.physics.transformer.physics import (
    _EMF_FACTOR,
    _MU_0,
    ei_core_area,
    ei_magnetic_path_length,
    ei_steel_volume,
    ei_window,
    magnetising_field,
    steinmetz_loss,
)
from optimiser.physics.transformer.data import (
    TransformerData,
    WireTable,
    load_transformer_data,
)
from optimiser.physics.transformer.figures import AuxiliaryWinding


_WIRE_SYSTEMS = ("metric", "awg", "both")
_RESERVED_NAMES = ("primary", "hv", "bias", "screen")
_ARRANGEMENTS = ("taps", "dual")


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
