"""Transformer design of a whole population: turns, wire, layers, losses, heat, mass, cost.

Part of :mod:`optimiser.physics.transformer`; see the package docstring for the method. This
module runs the design (:func:`design_population`): the fixed point, the leakage, the cost and
the assembly of the figures. Its input is checked and prepared in :mod:`.preparation`, the
fixed point is compiled in :mod:`.kernel`, and the figures are the dataclasses of
:mod:`.figures`.
"""

from __future__ import annotations

from typing import Sequence

import numpy as np

from optimiser.physics.transformer.physics import (
    COPPER_DENSITY,
    ei_area_product,
    ei_magnetic_path_length,
    ei_window,
    leakage_inductance_layered,
    mean_turn_length,
    turns_for_voltage,
)
from optimiser.physics.transformer.data import (
    TransformerData,
    load_transformer_data,
)
from optimiser.physics.transformer.figures import (  # noqa: F401 (the package's names, here too)
    AuxiliaryWinding,
    TransformerDesign,
    TransformerPopulation,
    WindingDesign,
    WindingPopulation,
)
from optimiser.physics.transformer.kernel import _solve_kernel
from optimiser.physics.transformer.turns import whole_turns
from optimiser.physics.transformer.preparation import (  # noqa: F401 (read by inputs.build)
    _RESERVED_NAMES,
    _Setup,
    _check_order,
    _default_order,
    _iron,
    _prepare,
    wire_size_for_current,
)


_FIXED_POINT_PASSES = 14
_FINAL_PASSES = 8
#: Rounds of whole turns: the first chooses them, the second re-sets the volts per turn for the
#: resistances as moved by the first's turns (the lowest winding's turns held).
_TURNS_ROUNDS = 2
_TARGET_BISECTIONS = 12
_TEMPERATURE_CAP = 1000.0  # [degC]


_W_FIELDS = ("turns", "turns_path", "diameter", "overall", "interlayer", "per_layer", "layers",
             "builds", "start", "mlt", "length", "r_end_20", "r_path_20", "r_path",
             "copper_loss_each", "wire_current")
_N_FIELDS = ("i_primary", "total_build", "e_primary", "copper_loss", "surface", "rise",
             "temperature", "previous")


def _kernel(setup: _Setup, current_density, tap_turns, ratio, free_passes, total_passes,
            temperature0):
    """One call of :func:`_solve_kernel` for the primary turns ``tap_turns`` (T, n) and the
    secondary turns ratios ``ratio`` (S, n) (re-solved in place during the free passes)."""
    n_eq = tap_turns[0]
    n_primary = 2.0 * n_eq if setup.dual else tap_turns[-1]
    iron = _iron(setup, n_eq)
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
        free_passes, total_passes, float(setup.taps[0]), bool(setup.dual),
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
        float(setup.ambient), f64(temperature0), _TEMPERATURE_CAP, out_w, out_wire, out_n,
        out_ok)
    state = {name: out_w[k] for k, name in enumerate(_W_FIELDS)}
    state.update({name: out_n[k] for k, name in enumerate(_N_FIELDS)})
    state.update(wire_index=out_wire, available=out_ok[0], traverse_ok=out_ok[1],
                 solvable=out_ok[2], ratio=ratio, tap_turns=tap_turns, iron=iron)
    return state


def _solve(setup: _Setup, current_density):
    """Fixed point of turns, wire, geometry, resistance and temperature with free turns ratios;
    then whole turns, the lowest-voltage winding setting the volts per turn
    (:func:`.turns.whole_turns`), and the fixed point again with those turns."""
    ideal = turns_for_voltage(setup.taps[:, None], setup.frequency, setup.b_target, setup.core_area)
    first_taps = np.maximum(np.rint(ideal), 1.0)
    ratio = np.ascontiguousarray(setup.v_target / setup.taps[0], dtype=float)
    free = _kernel(setup, current_density, first_taps, ratio, _FIXED_POINT_PASSES,
                   _FIXED_POINT_PASSES + 1, np.full(setup.n, setup.ambient))
    n_p0 = first_taps[0]
    wound = setup.v_target > 0
    hold = None
    state, path_turns = free, free["ratio"] * n_p0  # the free pass's turns (not whole)
    primary_turns = n_p0
    for _ in range(_TURNS_ROUNDS):
        # each winding's own drop per turn at rated current, and the primary's EMF, of the last
        # pass (the EMF hardly moves with the primary's turns: R_p grows as the reflected
        # current falls); held to at most 100 % compensation, as the free pass's ratios are,
        # so that the turns of a design whose drops no ratio can make up stay finite
        emf = np.maximum(state["e_primary"], 0.5 * setup.taps[0])
        drop = np.where(wound, setup.i_rated * state["r_path"][1:]
                        / np.where(wound, path_turns, 1.0), 0.0)
        drop = np.minimum(drop, 0.5 * emf / primary_turns)
        secondary, n_eq, _, hold = whole_turns(setup.v_target, drop, emf, primary_turns,
                                               hold=hold, least_primary=n_p0)
        tap_turns = np.vstack([n_eq] + [np.maximum(np.rint(n_eq * v / setup.taps[0]), 1.0)
                                        for v in setup.taps[1:]])
        ratio = np.ascontiguousarray(secondary / n_eq, dtype=float)
        state = _kernel(setup, current_density, tap_turns, ratio, 0, _FINAL_PASSES + 1,
                        state["temperature"])
        path_turns, primary_turns = secondary, n_eq
    temperature, previous = state.pop("temperature"), state.pop("previous")
    state.update(temperature=temperature, solvable=free["solvable"],
                 converged=np.abs(temperature - previous) < 0.05)
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
