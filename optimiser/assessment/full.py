"""Everything a builder must check, for one design or a whole population.

Runs each design at its mains and tolerance corners, through the sag step, switch-on and
switch-off, and compares every part with its ratings. The physics is in :mod:`supply`,
:mod:`transients` and :mod:`ratings`, the checks in :mod:`optimiser.assessment.checks`; this
module only chooses the corners and collects figures.

Corners (mains and winding tolerance scale the EMF; capacitor tolerance scales every C):

============  =================  ===========  ==========================================
corner        EMF                capacitance  loads
============  =================  ===========  ==========================================
nominal_idle  1                  nominal      idle
nominal_full  1                  nominal      full power
low_full      low mains, -tol    low          full power  (lowest B+, most ripple)
high_idle     high mains, +tol   high         idle        (highest working B+)
high_full     high mains, +tol   high         full power  (peak currents, dissipation)
high_none     high mains, +tol   high         valves cold (switch-on voltages, PIV)
============  =================  ===========  ==========================================
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from optimiser.assessment import validity
from optimiser.parts import catalogue as parts
from optimiser.assessment import checks as check_table
from optimiser.physics import life as wear, ratings, supply, transients
from optimiser.physics.transformer.corners import worst_corners_by_design
from optimiser.physics.transformer.rating import winding_error_by_design
from optimiser.inputs.design import load_design
from optimiser.assessment.steady_state import Batch, SupplyResult, _groups, _result, solve_with_figures
from optimiser.assessment.corners import _corner_batches, _tolerances  # noqa: F401 (_tolerances: the checks' capacitor band)

__all__ = ["Assessment", "PairAssessment", "AssessmentTable", "assess", "assess_many",
           "CORNERS"]

CORNERS = ("nominal_idle", "nominal_full", "low_full", "high_idle", "high_full", "high_none")
#: How long the switch-on charge-up is simulated to find its overshoot. [s]
CHARGE_UP_TIME = 1.0
#: The switch-on trajectory is drawn over this span. [s]
TRAJECTORY_SPAN = 60.0


@dataclass(frozen=True)
class Assessment:
    """All figures and checks of one design.

    Attributes
    ----------
    steady : SupplyResult
        Periodic steady state at nominal mains and full power.
    idle : SupplyResult
        The same at idle.
    checks : list of ratings.Check
    rectifier_stress : float
        Worst actual-to-rated ratio over the rectifier's ratings (NaN: no ratings known). [-]
    nodes : list of dict
        Per node: B+ at idle and full power, static drop, window over the corners, sag
        dynamics, switch-on peak and discharge time (see :meth:`to_dict`).
    switch_on : dict
        Surge current, rectifier start and load start times, and (detail) the trajectory.
    life : dict
        Capacitor life per node and the rectifier valve's cathode loading.
    curves : dict
        (detail) Arrays for plots: sag response and switch-on trajectory.
    """

    steady: SupplyResult
    idle: SupplyResult
    checks: list
    rectifier_stress: float
    nodes: list
    switch_on: dict
    life: dict
    curves: dict = field(default=None, repr=False, compare=False)

    @property
    def passed(self) -> bool:
        return all(c.passed for c in self.checks)

    def to_dict(self) -> dict:
        out = self.steady.to_dict()
        out["checks"] = [c.to_dict() for c in self.checks]
        out["rectifier_stress"] = self.rectifier_stress
        out["sag"] = [{k: n[k] for k in ("name", "idle_voltage", "full_power_voltage",
                                         "static_drop", "static_drop_percent", "depth",
                                         "attack_time", "recovery_time")}
                      for n in self.nodes]
        out["bplus_window"] = [{"name": n["name"], "min": n["window_min"],
                                "max": n["window_max"]} for n in self.nodes]
        out["switch_on"] = dict(self.switch_on, nodes=[
            {"name": n["name"], "peak_voltage": n["switch_on_peak"],
             "discharge_time": n["discharge_time"]} for n in self.nodes])
        out["life"] = self.life
        out["passed"] = self.passed
        return out


@dataclass(frozen=True)
class PairAssessment:
    """A switchable pair of branches: each switch position assessed as a design of its own.

    Attributes
    ----------
    positions : dict of str -> Assessment
    """

    positions: dict

    @property
    def checks(self) -> list:
        """Every position's checks, named ``<position>/<check>``."""
        from dataclasses import replace as _replace

        return [_replace(c, name=f"{name}/{c.name}") for name, a in self.positions.items()
                for c in a.checks]

    @property
    def rectifier_stress(self) -> float:
        values = [a.rectifier_stress for a in self.positions.values()]
        finite = [v for v in values if np.isfinite(v)]
        return max(finite) if finite else float("nan")

    @property
    def passed(self) -> bool:
        return all(a.passed for a in self.positions.values())

    def to_dict(self) -> dict:
        return {"positions": {name: a.to_dict() for name, a in self.positions.items()},
                "checks": [c.to_dict() for c in self.checks],
                "rectifier_stress": self.rectifier_stress, "passed": self.passed}


@dataclass(frozen=True)
class AssessmentTable:
    """Assessments of many designs, in input order.

    Attributes
    ----------
    frame : DataFrame
        One row per design: scalar figures and ``<node>.<figure>`` columns.
    ratios : DataFrame
        One column per check name, ratio <= 1 inside its rating, NaN where not applicable.
    assessments : list of Assessment
    """

    frame: pd.DataFrame
    ratios: pd.DataFrame
    assessments: list


def _valve_part(design):
    v = design.rectifier.valve
    return parts.find_part("valve", v) if isinstance(v, str) and design.valve_path else None


def _diode_part(design):
    r = design.rectifier
    has_silicon = r.topology != "centre-tap" or r.valve is None
    if not has_silicon or not (r.diode is None or isinstance(r.diode, str)):
        return None
    from optimiser.assessment.steady_state import DEFAULT_DIODE

    return parts.find_part("diode", r.diode or DEFAULT_DIODE)


def _provenance(items, what):
    return [f"{what} {x.name}: {x.provenance}" if x is not None else "no rating given"
            for x in items]


def _solve_group(designs, detail, dynamics, lean):
    """Every corner's steady state, the sag, switch-on and switch-off, and the check columns."""
    batches = _corner_batches(designs)
    solved, seen = {}, {}
    for name, batch in batches.items():  # coinciding corners (a sampled build's) solve once
        seen[batch.key] = seen.get(batch.key) or (batch, *solve_with_figures(batch, lean))
        solved[name] = seen[batch.key]
    count, n_nodes = len(designs), len(designs[0].nodes)
    freq = designs[0].mains.frequency
    f = {k: v[3] for k, v in solved.items()}

    # ---- sag: idle -> full -> idle at nominal mains
    b_idle, m_idle, w_idle, _ = solved["nominal_idle"]
    b_full = solved["nominal_full"][0]
    if dynamics or detail:
        hold = max(d.conditions.sag_hold for d in designs)
        release = max(d.conditions.sag_release for d in designs)
        sag = transients.sag_step(m_idle, b_idle.elements, b_idle.peak, freq,
                                  b_idle.values.load_current, b_full.values.load_current, w_idle,
                                  hold, release)
    else:
        static = f["nominal_idle"]["dc_voltage"] - f["nominal_full"]["dc_voltage"]
        none = np.full_like(static, np.nan)
        sag = transients.SagResponse(time=np.empty(0), voltage=np.empty((count, 0, n_nodes)),
                                     depth=static, attack_time=none, recovery_time=none)

    # ---- switch-on at high mains with the valves cold
    b_none, m_none, w_none, f_none = solved["high_none"]
    surge = transients.surge_peak(m_none, b_none.elements, b_none.peak, freq,
                                  b_none.values.load_current)
    charge_peak = (transients.charge_up_peaks if lean else transients.charge_up_max)(
        m_none, b_none.elements, b_none.peak, freq, b_none.values.load_current, CHARGE_UP_TIME)
    discharge = transients.discharge_times(b_none.structure, b_none.values, f_none["dc_voltage"],
                                           np.array([d.conditions.safe_voltage
                                                     for d in designs]), modal=lean)

    valves = [_valve_part(d) for d in designs]
    diodes = [_diode_part(d) for d in designs]
    check_figures = _check_figures(designs, valves, diodes, f, surge, charge_peak, discharge)
    steady_peak = check_table.steady_peak(check_figures)
    columns = check_table.evaluate(check_figures)
    return solved, f, sag, surge, charge_peak, steady_peak, discharge, valves, diodes, columns


def _assess_group(designs, detail, dynamics=True, lean=False):
    solved, f, sag, surge, charge_peak, steady_peak, discharge, valves, diodes, columns = \
        _solve_group(designs, detail, dynamics, lean)
    count, n_nodes = len(designs), len(designs[0].nodes)
    names = [n.name for n in designs[0].nodes]
    stress = ratings.rectifier_stress(columns)
    if stress.size == 0:
        stress = np.full(count, np.nan)

    # ---- life
    life = _life(designs, valves, f)

    rectifier_start = np.array([_rectifier_start(d, v) for d, v in zip(designs, valves)])
    curves = _detail_curves(designs, sag, rectifier_start) if detail else None

    out = []
    for j, d in enumerate(designs):
        checks = []
        for c in columns:
            ratio = c.ratio[j]
            if np.isnan(ratio):
                continue
            checks.append(ratings.Check(name=c.name, what=c.what, unit=c.unit,
                                        value=float(c.value[j]), limit=float(c.limit[j]),
                                        ratio=float(ratio), passed=bool(ratio <= 1.0),
                                        source=c.source[j], derating=float(c.derating[j])))
        idle_dc = f["nominal_idle"]["dc_voltage"][j]
        full_dc = f["nominal_full"]["dc_voltage"][j]
        nodes = []
        for k in range(n_nodes):
            drop = idle_dc[k] - full_dc[k]
            nodes.append({
                "name": names[k],
                "idle_voltage": float(idle_dc[k]),
                "full_power_voltage": float(full_dc[k]),
                "static_drop": float(drop),
                "static_drop_percent": float(100 * drop / idle_dc[k]) if idle_dc[k] else np.nan,
                "depth": float(sag.depth[j, k]),
                "attack_time": _finite(sag.attack_time[j, k]),
                "recovery_time": _finite(sag.recovery_time[j, k]),
                "window_min": float(f["low_full"]["dc_voltage"][j, k]),
                "window_max": float(f["high_idle"]["dc_voltage"][j, k]),
                "ripple_pp_worst": float(f["low_full"]["ripple_pp"][j, k]),
                "switch_on_peak": float(max(charge_peak[j, k], steady_peak[j, k])),
                "discharge_time": float(discharge[j, k]),
            })
        switch_on = {
            "surge_current": float(surge[j]),
            "rectifier_start": float(rectifier_start[j]),
            "load_start": float(d.conditions.output_valve_warm_up),
        }
        design_curves = curves[j] if curves is not None else None
        out.append(Assessment(
            steady=_result(d, f["nominal_full"], j, waves=_waves(solved["nominal_full"], j)),
            idle=_result(d, f["nominal_idle"], j),
            checks=checks, rectifier_stress=float(stress[j]), nodes=nodes,
            switch_on=switch_on, life=life[j], curves=design_curves))
    return out


def _finite(x):
    return float(x) if np.isfinite(x) else None


def _waves(solved_corner, j):
    batch, model, waves, _ = solved_corner
    return {"time": waves.time, "batch": batch, "model": model, "waves": waves, "index": j}


def _rectifier_start(design, valve):
    if not design.valve_path:
        return 0.0
    if valve is not None and valve.warm_up_time is not None:
        return float(valve.warm_up_time)
    return float(design.conditions.rectifier_warm_up)


def _check_figures(designs, valves, diodes, f, surge, charge_peak, discharge):
    """The figures the check table reads (:class:`optimiser.assessment.checks.CheckFigures`),
    one row per design."""
    nodes = [[d.nodes[k] for d in designs] for k in range(len(designs[0].nodes))]
    found = {}  # each capacitor series looked up once

    def find(name):
        if name not in found:
            found[name] = parts.find_part("capacitor", name)
        return found[name]

    series = [[find(n.capacitor_series or d.conditions.capacitor_series)
               for n, d in zip(ns, designs)] for ns in nodes]
    rated = np.column_stack([[n.rated_voltage or np.nan for n in ns] for ns in nodes])
    surge_v = np.column_stack([[s.rating(r).surge if np.isfinite(r) and _has_rating(s, r)
                                else np.nan for s, r in zip(ss, rated[:, k])]
                               for k, ss in enumerate(series)])
    ripple = np.column_stack([[s.ripple_rating(n.capacitance, r)
                               if np.isfinite(r) and _has_rating(s, r) else np.nan
                               for s, n, r in zip(ss, ns, rated[:, k])]
                              for k, (ss, ns) in enumerate(zip(series, nodes))])
    feeds = [[n.feed for n in ns] for ns in nodes]

    def feed_attr(name, default=np.nan):
        return np.column_stack([check_table.attribute_array(fs, name, default) for fs in feeds])

    built = [d.transformer_design for d in designs]
    cond = [d.conditions for d in designs]
    worst = worst_corners_by_design(built, [c.mains_low for c in cond],
                                    [c.mains_high for c in cond])
    return check_table.CheckFigures(
        node_names=tuple(n.name for n in designs[0].nodes),
        fed=tuple(k > 0 or ns[0].feed is not None for k, ns in enumerate(nodes)),
        high_none=f["high_none"], high_full=f["high_full"], high_idle=f["high_idle"],
        surge_current=surge, charge_peak=charge_peak, discharge_time=discharge,
        hv_voltage=np.array([d.transformer.secondary_voltage for d in designs], float),
        hv_resistance=np.array([d.transformer.secondary_resistance for d in designs], float),
        hv_leakage_inductance=np.array([d.transformer.leakage_inductance for d in designs],
                                       float),
        frequency=np.array([d.mains.frequency for d in designs], float),
        mains_high=np.array([c.mains_high for c in cond], float),
        transformer_tolerance=np.array([c.transformer_tolerance for c in cond], float),
        silicon_piv_margin=np.array([c.silicon_piv_margin for c in cond], float),
        discharge_time_limit=np.array([c.discharge_time_limit for c in cond], float),
        temperature_rise=worst["temperature_rise"][0], rise_corner=worst["temperature_rise"][1],
        temperature_rise_limit=check_table.attribute_array(built, "temperature_rise_limit"),
        build_ratio=check_table.attribute_array(built, "build_ratio"),
        flux_density=worst["flux_density"][0], flux_corner=worst["flux_density"][1],
        flux_density_limit=check_table.attribute_array(built, "flux_density_limit"),
        winding_voltage_error=winding_error_by_design(built)[0],
        hv_rated_current=np.array([d.transformer.rated_current or np.nan for d in designs]),
        has_valve=np.array([v is not None for v in valves]),
        has_diode=np.array([d is not None for d in diodes]),
        heater_shared=np.array([v is not None and v.heating == "indirect"
                                and d.rectifier.heater_shared
                                for d, v in zip(designs, valves)], bool),
        valves=valves, rectifier_ratings=check_table.rectifier_ratings(valves, diodes),
        capacitance=np.column_stack([[n.capacitance for n in ns] for ns in nodes]),
        capacitance_plus=np.array([_tolerances(d)[1] for d in designs]),
        capacitor_rated_voltage=rated, capacitor_surge_rating=surge_v,
        capacitor_ripple_rating=ripple,
        feed_resistance=feed_attr("resistance", 0.0),
        feed_inductance=feed_attr("inductance", 0.0),
        feed_power_rating=feed_attr("power_rating"),
        feed_current_rating=feed_attr("current_rating"),
        bleeder_resistance=np.column_stack([[n.bleeder or np.nan for n in ns] for ns in nodes]),
        bleeder_power_rating=np.column_stack(
            [check_table.attribute_array(ns, "bleeder_power_rating") for ns in nodes]),
        bleeder_element_voltage=np.column_stack(
            [[parts.resistor_element_voltage(n.bleeder_power_rating) for n in ns]
             for ns in nodes]),
        capacitor_voltage_derating=np.array([c.capacitor_voltage_derating for c in cond]),
        resistor_power_derating=np.array([c.resistor_power_derating for c in cond]),
        provenance={"valve": _provenance(valves, "valve"), "diode": _provenance(diodes, "diode"),
                    "capacitor": [[f"the design's rated voltage; {s.name}: {s.provenance}"
                                   for s in ss] for ss in series]},
    )


def _has_rating(series, rated_voltage):
    try:
        series.rating(rated_voltage)
    except (LookupError, ValueError):
        return False
    return True


def _life(designs, valves, f):
    """Life of the parts that wear, per design, and the shortest on one scale of hours
    (:mod:`optimiser.physics.life`): each electrolytic at its worst core temperature (the
    highest ripple current over the corners), the valve rectifier by its cathode loading at
    high mains and full power."""
    ripple = np.maximum.reduce([f[c]["capacitor_rms_current"] for c in CORNERS])
    out = []
    for j, d in enumerate(designs):
        caps = []
        for k, node in enumerate(d.nodes):
            series = parts.find_part("capacitor", node.capacitor_series or
                                     d.conditions.capacitor_series)
            entry = {"name": node.name, "series": series.name}
            if node.rated_voltage is not None and _has_rating(series, node.rated_voltage):
                life, core = ratings.capacitor_life(
                    series.rated_life, series.rated_temperature, d.conditions.ambient,
                    ripple[j, k], series.ripple_rating(node.capacitance, node.rated_voltage),
                    d.conditions.ripple_self_heating)
                entry.update(core_temperature=float(core), life_hours=float(life / 3600.0))
            else:
                entry.update(core_temperature=None, life_hours=None)
            caps.append(entry)
        v = valves[j]
        valve = None
        if v is not None:
            current = 2 * f["high_full"]["rectifier_average_current"][j]
            loading, rel = ratings.valve_cathode_loading(current, v.max_dc_current)
            valve = {"name": v.name, "cathode_loading": float(loading),
                     "relative_life": float(rel),
                     "life_hours": float(wear.valve_life_hours(current, v.max_dc_current))}
        hours = [c["life_hours"] for c in caps if c["life_hours"] is not None]
        hours += [valve["life_hours"]] if valve is not None else []
        out.append({"capacitors": caps, "rectifier_valve": valve,
                    "shortest_hours": float(min(hours)) if hours else None,
                    "source": "capacitor: 10 degC rule at the worst core temperature (ripple "
                              "self-heating; makers' application notes; common practice); "
                              f"valve: {wear.VALVE_LIFE_AT_RATING:g} h at its rated current "
                              "(common practice, no source) over its cathode loading at high "
                              "mains, full power"})
    return out


def _detail_curves(designs, sag, rectifier_start):
    """Arrays for plots, per design: the sag response and the switch-on trajectory.

    The trajectory at nominal mains: nothing until the rectifier conducts (silicon at once, a
    valve after its warm-up), the charge-up with the output valves cold, the idle load once they
    have warmed up, then the idle steady state to the end of the span.
    """
    from optimiser.physics.ladder import state_space

    out = []
    for j, d in enumerate(designs):
        freq = d.mains.frequency
        half = 0.5 / freq
        steps = transients.TRANSIENT_STEPS
        t_rect = rectifier_start[j]
        t_load = d.conditions.output_valve_warm_up
        cold = t_load > t_rect
        first = Batch.from_designs([d], 1.0, 1.0, "none" if cold else "idle")
        m1 = state_space(first.structure, first.values)
        span_a = min(CHARGE_UP_TIME * 2, t_load - t_rect) if cold else CHARGE_UP_TIME * 2
        n_a = max(1, int(np.ceil(span_a / half)))
        run_a = supply.step_response(m1, first.elements, first.peak, freq,
                                     first.values.load_current, np.zeros((1, m1.A.shape[1])),
                                     np.zeros(1), n_a * half, steps_per_half_cycle=steps)
        va = transients.half_cycle_means(transients.node_outputs(
            m1.node_voltage, run_a.state, run_a.drive, first.values.load_current), steps)[0]
        times = [np.array([0.0, t_rect]), t_rect + (np.arange(va.shape[0]) + 0.5) * half]
        volts = [np.zeros((2, va.shape[1])), va]
        if cold:
            idle = Batch.from_designs([d], 1.0, 1.0, "idle")
            m2 = state_space(idle.structure, idle.values)
            n_b = int(np.ceil(CHARGE_UP_TIME * 2 / half))
            run_b = supply.step_response(m2, idle.elements, idle.peak, freq,
                                         idle.values.load_current, run_a.state[:, -1],
                                         run_a.drive[:, -1], n_b * half,
                                         steps_per_half_cycle=steps, start_time=n_a * half)
            vb = transients.half_cycle_means(transients.node_outputs(
                m2.node_voltage, run_b.state, run_b.drive, idle.values.load_current), steps)[0]
            start_b = max(t_load, t_rect + n_a * half)
            times += [np.array([start_b]), start_b + (np.arange(vb.shape[0]) + 0.5) * half]
            volts += [va[-1:], vb]
        end = max(TRAJECTORY_SPAN, times[-1][-1])
        times.append(np.array([end]))
        volts.append(volts[-1][-1:])
        out.append({
            "sag_time": sag.time,
            "sag_voltage": sag.voltage[j],
            "switch_on_time": np.concatenate(times),
            "switch_on_voltage": np.concatenate(volts, axis=0),
            "rectifier_start": float(t_rect),
            "load_start": float(t_load),
        })
    return out


def assess_many(designs, *, detail=False, dynamics=True, lean=False) -> AssessmentTable:
    """Assess many designs; designs of one ladder shape are solved together.

    Parameters
    ----------
    designs : list of path, dict or Design
    detail : bool
        Also keep the arrays for plots (sag response, switch-on trajectory).
    dynamics : bool
        Simulate the sag step for attack and recovery times. Without it the sag depth is the
        static drop from idle to full power and the times are None (a search that asks only
        for the amount of sag saves the transient).
    lean : bool
        Sampled builds' shortcuts (:mod:`optimiser.assessment.builds`; the same figures to
        rounding): charge-up peaks taken in the march, discharge by modes (transients).
    """
    parsed = [load_design(d) for d in designs]
    # a switchable pair is assessed as one design per switch position
    flat, owner = [], []
    for i, d in enumerate(parsed):
        for name, position in d.positions():
            flat.append(position)
            owner.append((i, name))
    flat_results = [None] * len(flat)
    for _, members in _groups(flat).items():
        group = _assess_group([flat[i] for i in members], detail, dynamics, lean)
        for i, a in zip(members, group):
            flat_results[i] = a
    results = [None] * len(parsed)
    for (i, name), a in zip(owner, flat_results):
        if name is None:
            results[i] = a
        else:
            if results[i] is None:
                results[i] = PairAssessment(positions={})
            results[i].positions[name] = a
    rows, ratio_rows = [], []
    for a, bad in zip(results, validity.per_design(len(parsed), owner, flat_results, flat)):
        row = {"rectifier_stress": a.rectifier_stress, "passed": a.passed and not bad,
               "unworkable": bad}  # no working supply (assessment.validity): its reasons
        members = a.positions.items() if isinstance(a, PairAssessment) else [(None, a)]
        for name, one in members:
            prefix = "" if name is None else f"{name}/"
            row.update({f"{prefix}{k}": v for k, v in _row(one).items()})
        rows.append(row)
        ratio_rows.append({c.name: c.ratio for c in a.checks})
    return AssessmentTable(frame=pd.DataFrame(rows), ratios=pd.DataFrame(ratio_rows),
                           assessments=results)


def _row(a: Assessment) -> dict:
    row = {"rectifier_stress": a.rectifier_stress, "passed": a.passed,
           "surge_current": a.switch_on["surge_current"],
           "rectifier_peak_current": a.steady.rectifier_peak_current,
           "secondary_rms_current": a.steady.secondary_rms_current}
    for n in a.nodes:
        for key, value in n.items():
            if key != "name":
                row[f"{n['name']}.{key}"] = value
    for node in a.steady.nodes:
        row[f"{node.name}.ripple_pp"] = node.ripple_pp
    hours = a.life.get("shortest_hours")
    row["shortest_life"] = np.nan if hours is None else hours  # [h]
    return row


def assess(design, *, detail=True) -> Assessment:
    """Assess one design (see :func:`assess_many`); one with no working supply is refused."""
    return validity.refused(assess_many([design], detail=detail), design).assessments[0]
