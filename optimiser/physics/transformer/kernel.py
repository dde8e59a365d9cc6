"""The compiled fixed point of the transformer design, one design (row) at a time: turns,
wire, layers, geometry, resistance and temperature iterated together (the whole turns are
chosen between two calls, in :mod:`.population`).

Numba ``njit`` loops over whole populations; the formulas are copies of those in
:mod:`optimiser.physics.transformer.physics` (``tests/test_transformer.py::
test_the_compiled_passes_use_the_physics_modules_formulas`` holds them together). Each
parallel loop calls a function of its own for one row (see DEVELOPERS.md). Compiled
results are cached beside this file.
"""

from __future__ import annotations

import math

import numba
import numpy as np

from optimiser.physics.transformer.physics import (
    COPPER_RESISTIVITY_20C,
    COPPER_TEMPERATURE_COEFFICIENT_20C,
)


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
def _solve_row(j, free_passes, total_passes, v_low, dual, i_core, i_mag, core_loss, n_eq, n_primary,
               ratio, v_target, i_rated, paths, current_density, diameters, enamel_nominal,
               enamel_increase, interlayer_limits, interlayer_thickness, lay_factor, bulge_factor,
               winding_width, order, interwinding, screen_thickness, outer_wrap, former_width,
               former_depth, former_offset, a, stack, ambient, temperature0, temperature_cap, out_w,
               out_wire, out_n, out_ok):
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
    temperature = temperature0[j]
    previous = temperature0[j]
    solvable = True
    for step in range(total_passes):
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
        if step < free_passes:
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
def _solve_kernel(free_passes, total_passes, v_low, dual, i_core, i_mag, core_loss, n_eq, n_primary,
                  ratio, v_target, i_rated, paths, current_density, diameters, enamel_nominal,
                  enamel_increase, interlayer_limits, interlayer_thickness, lay_factor,
                  bulge_factor, winding_width, order, interwinding, screen_thickness,
                  outer_wrap, former_width, former_depth, former_offset, a, stack, ambient,
                  temperature0, temperature_cap, out_w, out_wire, out_n, out_ok):
    """The fixed point of :func:`_solve`, one design (column) at a time, compiled.

    Each of ``total_passes`` passes chooses the wire (the smallest offered size for the current
    density), lays the windings out layer by layer in their order on the bobbin, and computes
    resistances, losses and the temperature rise (McLyman) for the current turns ratios and
    winding temperature (starting from ``temperature0``); after each of the first
    ``free_passes`` the ratios are re-solved for the rated loaded voltages
    (:func:`_regulated_ratios_of`), after the others they are kept (whole turns), and the
    temperature is iterated to its fixed point. The last pass does not move the temperature.

    Outputs (filled): ``out_w`` (K, W, n) per-winding figures in the order of
    :data:`_W_FIELDS`; ``out_wire`` (W, n) wire indices; ``out_n`` (K, n) per-design figures
    in the order of :data:`_N_FIELDS`; ``out_ok`` (3, n): wire available, traverse fits,
    solvable.
    """
    n = v_target.shape[1]
    for j in numba.prange(n):  # designs are independent: threads split them
        _solve_row(j, free_passes, total_passes, v_low, dual, i_core, i_mag, core_loss, n_eq, n_primary,
                   ratio, v_target, i_rated, paths, current_density, diameters, enamel_nominal,
                   enamel_increase, interlayer_limits, interlayer_thickness, lay_factor,
                   bulge_factor, winding_width, order, interwinding, screen_thickness, outer_wrap,
                   former_width, former_depth, former_offset, a, stack, ambient, temperature0,
                   temperature_cap, out_w, out_wire, out_n, out_ok)


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
