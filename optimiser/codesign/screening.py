"""The search's screening tier: a whole population's objectives and constraints as arrays.

:meth:`CoDesign.score` builds every design, simulates it at six corners with the switch-on
transients and prices it line by line: right for the designs a builder will read, too slow to
run a hundred times a generation. :class:`Screen` gives the search the same objectives and
constraints, column for column, from the same choices, with

- the transformers from :meth:`CoDesign.transformer_populations` (one vectorised pass, and
  each distinct transformer designed once per run: the result of a design does not depend on
  the batch it is in),
- the steady state at the four corners the constraints read (nominal idle and full power, high
  mains at full power and with the valves cold) from :func:`optimiser.physics.analytic.steady_state`,
  all corners in one call,
- the switch-on surge and charge-up overshoot from :func:`optimiser.physics.analytic.surge` and
  :func:`optimiser.physics.analytic.choke_overshoot`, the discharge time of each capacitor through its
  own bleeder,
- where the spec sets sag attack or recovery windows, the sag step on the cycle-averaged
  circuit (:func:`optimiser.physics.transients.averaged_sag_step`),
- prices from per-choice tables filled once from :mod:`optimiser.assessment.bill`.

Where the screen's figures differ from the full assessment's, they lean to the cautious side
(more ripple, a larger surge): left alone, that would steer the search away from designs that
sit at a limit. So when a screen is made it measures itself: a random sample of the spec's
designs is assessed both ways, and each constraint is eased by the screen's typical excess
over the full value near its limit (:meth:`Screen._calibrate`).

What the search keeps is then assessed in full (:func:`optimiser.codesign.optimise`); the
screen only steers. ``tests/test_analytic.py`` and ``tests/test_screening.py`` measure how
closely it agrees with the simulator and the full assessment.
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np

from optimiser.physics import analytic
from optimiser.assessment import bill
from optimiser.physics import ladder
from optimiser.parts import catalogue as parts
from optimiser.physics import ratings
from optimiser.physics import transients
from optimiser.codesign.problem import BLEEDER_SERIES
from optimiser.inputs.design import Feed
from optimiser.assessment.steady_state import DEFAULT_DIODE, LEAKAGE_CONDUCTANCE, MIN_PATH_RESISTANCE, path_elements_of
from optimiser.physics.rectifier import PathElements
from optimiser.formats.units import round_significant

__all__ = ["Screen"]

#: Designs of a random sample assessed both ways when a screen is made, to measure how far the
#: screen is from the full assessment on this spec's own design space.
CALIBRATION_SAMPLE = 96
#: Share of the sample's designs near a limit that the eased screen lets through where the full
#: assessment would (the quantile of the screen's excess over the full value). [-]
CALIBRATION_QUANTILE = 0.5
#: Least number of the sample's designs near a limit needed to measure a constraint; with
#: fewer, the screen is not eased for it.
CALIBRATION_MINIMUM = 8
#: Corners the constraints read: (name, mains at its high corner, capacitors at high tolerance,
#: loads).
CORNERS = (("nominal_idle", False, "idle"), ("nominal_full", False, "full"),
           ("high_full", True, "full"), ("high_none", True, "none"))
_TRANSFORMER_FIELDS = ("hv_open_circuit_voltage", "hv_series_resistance",
                       "hv_leakage_inductance", "temperature_rise", "temperature_rise_limit",
                       "build_ratio", "flux_density", "flux_density_limit", "cost")
_BUILDABLE_FIELDS = ("wire_available", "stack_in_range", "regulation_solvable", "converged")


def _nanmax(stack, axis):
    with np.errstate(all="ignore"):
        return np.where(np.isnan(stack).all(axis=axis), np.nan,
                        np.nanmax(np.where(np.isnan(stack), -np.inf, stack), axis=axis))


class _Position:
    """One way a rectifier option conducts (a switchable option has two)."""

    def __init__(self, name, topology, diode, valve):
        self.name = name
        self.topology = topology
        self.valve = parts.find_part("valve", valve) if valve else None
        silicon = topology != "centre-tap" or valve is None
        self.diode = parts.find_part("diode", diode or DEFAULT_DIODE) if silicon else None
        self.elements = path_elements_of(topology, diode, valve)


class Screen:
    """Objectives and constraints of whole populations, for the search (see module docstring).

    Parameters
    ----------
    binding : CoDesign
    """

    def __init__(self, binding):
        self.b = binding
        s = binding.spec
        self.spec = s
        self.n = len(binding.node_names)
        cond = binding.conditions
        self.high = (1 + cond.mains_high) * (1 + cond.transformer_tolerance)
        series = [parts.find_part("capacitor", ch.series) for ch in binding.capacitor_choice]
        self.series = series
        self.tol_plus = np.array([sr.tolerance.plus for sr in series])
        self.frequency = s.mains.frequency
        self.full = np.array([ns.full_power_current for ns in s.nodes])
        self.idle = np.array([ns.idle_current for ns in s.nodes])
        # rectifier options: their positions, and what they cost (one probe design each)
        self.positions = []
        for option in s.choices.rectifiers:
            if option.topology == "switchable":
                self.positions.append([_Position(name, p.topology, p.diode, p.valve)
                                       for name, p in option.positions.items()])
            else:
                self.positions.append([_Position(None, option.topology, option.diode,
                                                 option.valve)])
        self.n_positions = np.array([len(p) for p in self.positions])
        flat = [p for ps in self.positions for p in ps]
        self.first_position = np.concatenate([[0], np.cumsum(self.n_positions)[:-1]])
        self.flat_positions = flat
        self.position_elements = {f: np.array([p.elements[f] for p in flat], float)
                                  for f in PathElements.__dataclass_fields__}
        self.position_topology = np.array([p.topology for p in flat])
        self.position_prefix = np.array([p.name or "" for p in flat])
        self.has_valve = np.array([p.valve is not None for p in flat])
        self.has_diode = np.array([p.diode is not None for p in flat])
        self.position_rating = {
            (kind, attr): np.array([np.nan if getattr(p, kind) is None
                                    or getattr(getattr(p, kind), attr, None) is None
                                    else getattr(getattr(p, kind), attr) for p in flat], float)
            for kind, attrs in (("valve", ("max_input_capacitance", "max_peak_current",
                                           "max_piv", "max_dc_current",
                                           "max_plate_voltage_rms")),
                                ("diode", ("v_rrm", "i_fsm", "i_f_avg")))
            for attr in attrs}
        options = s.choices.rectifiers
        self.option_key = [(o.centre_tapped, heater) for o, heater in
                           zip(options, binding._rectifier_heaters)]
        self.rectifier_cost = self._rectifier_costs()
        # feeds: values, ratings and prices per option
        self.feed = []
        downstream = np.cumsum(self.full[::-1])[::-1]
        for k in range(1, self.n):
            rows = []
            for fo in binding.feed_options[k]:
                if fo.kind == "choke":
                    cost = bill._choke_line("", Feed.model_construct(
                        resistance=fo.resistance, inductance=fo.inductance, power_rating=None,
                        current_rating=fo.current_rating)).cost
                    rows.append((fo.resistance, fo.inductance, np.nan, fo.current_rating, cost))
                else:
                    power = binding._resistor_power(downstream[k] ** 2 * fo.resistance)
                    cost = bill._resistor_line("", fo.resistance, power, s.ambient).cost
                    rows.append((fo.resistance, 0.0, power, np.nan, cost))
            self.feed.append(np.array(rows, float).reshape(-1, 5))
        # resistor classes: power and price (by rated power)
        self.class_power = np.array([c.power for c in binding._resistor_classes])
        self.class_working = np.array([c.max_working_voltage for c in binding._resistor_classes])
        self.class_cost = np.array([bill._resistor_line("", 1.0, p, s.ambient).cost
                                    for p in self.class_power])
        self.bleeder_values = np.sort(parts.e_series(BLEEDER_SERIES, range(2, 8)))
        self._transformers = {}
        self.slack = self._calibrate()

    def _calibrate(self):
        """How much to ease each constraint: on a random sample assessed both ways, the
        :data:`CALIBRATION_QUANTILE` of the screen's excess over the full assessment among the
        designs within one allowance of the limit (0 where the screen is not conservative or
        too few designs are near the limit)."""
        from optimiser.codesign.nsga import random_population

        X = random_population(self.b.variables, CALIBRATION_SAMPLE, seed=0)
        G_screen = self._score(X)[1]
        G_full = self.b.evaluate_full(X)[1]
        slack = np.zeros(G_full.shape[1])
        for j in range(G_full.shape[1]):
            near = (np.abs(G_full[:, j]) < 1.0) & (np.abs(G_screen[:, j]) < 1e5)
            if near.sum() >= CALIBRATION_MINIMUM:
                excess = G_screen[near, j] - G_full[near, j]
                slack[j] = max(float(np.quantile(excess, CALIBRATION_QUANTILE)), 0.0)
        return slack

    # ------------------------------------------------------------------ fixed choices

    def _rectifier_costs(self):
        """Cost of each option's rectifier parts and switch, from a probe design's parts list
        (the spec's price overrides included)."""
        b = self.b
        base = np.array([v.lower for v in b.variables], float)
        out = []
        for j in range(len(self.positions)):
            x = base.copy()
            x[4] = j
            design = b.designs(b.decode(x[None, :]))[0]
            out.append(sum(line.cost for line in b.parts_list(design)
                           if line.group in ("rectifier", "hardware")))
        return np.array(out)

    def _capacitors(self, capacitance, crest, steps):
        """(rated voltage, made, ESR, ripple rating, surge rating, cost) per design and node,
        as :meth:`CoDesign._rating` and :meth:`CoDesign._design` choose them."""
        count = len(crest)
        out = {key: np.empty((count, self.n)) for key in
               ("rated", "esr", "ripple", "surge", "cost")}
        out["made"] = np.zeros((count, self.n), bool)
        f2 = 2.0 * self.frequency
        for k, sr in enumerate(self.series):
            table = self.b.offered_ratings[k]
            c = capacitance[:, k]
            j, made = self.b.capacitor_rating(k, c, crest, steps[:, k])
            v = table["rated"][j]
            out["rated"][:, k] = v
            out["made"][:, k] = made
            out["esr"][:, k] = round_significant(table["tan_delta"][j] / (2.0 * np.pi * f2 * c), 3)
            out["ripple"][:, k] = sr.ripple_rating(c, v)
            out["surge"][:, k] = table["surge"][j]
            out["cost"][:, k] = sr.cost(c, v)
        return out

    def _transformer(self, choice):
        """Transformer arrays per design, each distinct transformer designed once per run."""
        keys = list(zip(choice["core_stack"].tolist(), choice["hv_voltage"].tolist(),
                        choice["hv_current"].tolist(), choice["current_density"].tolist(),
                        [self.option_key[r] for r in choice["rectifier"].tolist()]))
        new = [k for k in dict.fromkeys(keys) if k not in self._transformers]
        if new:
            first = {k: i for i, k in reversed(list(enumerate(keys)))}
            rows = np.array([first[k] for k in new])
            for members, pop in self.b.transformer_populations(
                    choice["core_stack"][rows], choice["hv_voltage"][rows],
                    choice["hv_current"][rows], choice["current_density"][rows],
                    choice["rectifier"][rows], one_pass=True):
                ok = np.ones(len(members), bool)
                for name in _BUILDABLE_FIELDS:
                    ok &= np.asarray(getattr(pop, name), bool)
                values = np.column_stack([np.asarray(getattr(pop, f), float)
                                          for f in _TRANSFORMER_FIELDS] + [ok])
                for j, m in enumerate(members):
                    self._transformers[new[m]] = values[j]
        table = np.array([self._transformers[k] for k in keys])
        out = {f: table[:, i] for i, f in enumerate(_TRANSFORMER_FIELDS)}
        out["buildable"] = table[:, -1] > 0.5
        return out

    # ------------------------------------------------------------------ evaluation

    def evaluate(self, X):
        """(F (B, 3), G (B, M)) of a population matrix: the objectives and constraints of the
        full assessment, estimated, each constraint eased by the error measured when the screen
        was made (:meth:`_calibrate`)."""
        F, G, _ = self._score(X)
        return F, G - self.slack

    def check_ratio_names(self, X):
        """Names of the check ratios the screen computes for a population."""
        return list(self._score(X)[2])

    def _score(self, X):
        """(F, G uneased, check ratios per design by name) of a population matrix."""
        b, s, n = self.b, self.spec, self.n
        choice = b.choices(X)
        count = len(choice["rectifier"])
        tr = self._transformer(choice)
        v_oc = tr["hv_open_circuit_voltage"]
        crest = b.crest_voltage(v_oc)
        cap = self._capacitors(choice["capacitance"], crest, choice["rating_steps"])
        c_nom = choice["capacitance"]

        feed_r = np.zeros((count, n))
        feed_l = np.zeros((count, n))
        feed_power = np.full((count, n), np.nan)
        feed_current = np.full((count, n), np.nan)
        feed_cost = np.zeros(count)
        for k in range(1, n):
            table = self.feed[k - 1][choice["feeds"][:, k - 1]]
            feed_r[:, k], feed_l[:, k] = table[:, 0], table[:, 1]
            feed_power[:, k], feed_current[:, k] = table[:, 2], table[:, 3]
            feed_cost += table[:, 4]
        # bleeders: the largest E12 value discharging its capacitor in time, its power class
        cond = b.conditions
        allowed = cond.discharge_time_limit * s.margins.bleeder_time_fraction
        c_plus = c_nom * (1 + self.tol_plus)[None, :]
        r_max = allowed / (c_plus * np.log(crest[:, None] / cond.safe_voltage))
        pick = np.searchsorted(self.bleeder_values, r_max * (1 + 1e-12), side="right") - 1
        bleeder = self.bleeder_values[np.maximum(pick, 0)]
        bleeder_class = b.resistor_class(crest[:, None] ** 2 / bleeder, crest[:, None])
        bleeder_power = self.class_power[bleeder_class]

        cost = (tr["cost"] + self.rectifier_cost[choice["rectifier"]] + cap["cost"].sum(axis=1)
                + cap["cost"][:, 0] * (self.n_positions[choice["rectifier"]] - 1) + feed_cost
                + self.class_cost[bleeder_class].sum(axis=1))

        # one row per design and switch position, all corners in one call
        counts = self.n_positions[choice["rectifier"]]
        owner = np.repeat(np.arange(count), counts)
        rows = len(owner)
        within = np.arange(rows) - np.repeat(np.cumsum(counts) - counts, counts)
        position = self.first_position[choice["rectifier"]][owner] + within
        el = {f: v[position] for f, v in self.position_elements.items()}
        topology = self.position_topology[position]
        r_w = tr["hv_series_resistance"][owner]
        l_w = tr["hv_leakage_inductance"][owner]
        corner_values, corner_peak = [], []
        for _, high, loads in CORNERS:
            scale = self.high if high else 1.0
            c_scale = (1 + self.tol_plus[0]) if high else 1.0
            current = {"idle": self.idle, "full": self.full, "none": 0.0 * self.full}[loads]
            corner_values.append(ladder.LadderValues(
                path_resistance=np.maximum(r_w, MIN_PATH_RESISTANCE), path_inductance=l_w,
                capacitance=c_nom[owner] * c_scale, esr=cap["esr"][owner],
                feed_resistance=feed_r[owner], feed_inductance=feed_l[owner],
                load_conductance=LEAKAGE_CONDUCTANCE + 1.0 / bleeder[owner],
                load_current=np.broadcast_to(current, (rows, n)).copy()))
            corner_peak.append(np.sqrt(2.0) * v_oc[owner] * scale)
        stacked = ladder.LadderValues(*(np.concatenate([getattr(v, f) for v in corner_values])
                                        for f in ladder.LadderValues.__dataclass_fields__))
        reps = len(CORNERS)
        elements = PathElements(**{f: np.tile(v, reps) for f, v in el.items()})
        figs = analytic.steady_state(stacked, elements, np.concatenate(corner_peak),
                                     np.full(rows * reps, self.frequency),
                                     np.tile(topology, reps))
        f = {name: {key: value[i * rows:(i + 1) * rows] for key, value in figs.items()}
             for i, (name, _, _) in enumerate(CORNERS)}
        failed = ~np.all([f[c]["converged"] for c, _, _ in CORNERS], axis=0)

        # switch-on: the surge into the empty reservoir, the charge-up overshoot of LC sections
        hn = f["high_none"]
        high_c = c_nom[owner] * (1 + self.tol_plus[0])
        surge_i, surge_v = analytic.surge(corner_peak[3], self.frequency, r_w, l_w,
                                          high_c[:, 0], cap["esr"][owner, 0],
                                          PathElements(**el))
        steady_peak = hn["peak_voltage"]
        charge = steady_peak.copy()
        charge[:, 0] = np.maximum(steady_peak[:, 0], surge_v)
        rise = np.maximum(r_w, MIN_PATH_RESISTANCE) * high_c[:, 0]
        for k in range(1, n):
            lk, rk, ck = feed_l[owner, k], feed_r[owner, k] + cap["esr"][owner, k], high_c[:, k]
            excess = charge[:, k - 1] - steady_peak[:, k - 1]
            choke = lk > 0
            ring = analytic.choke_overshoot(lk, rk, ck, rise) * charge[:, k - 1]
            follow = excess / np.sqrt(1.0 + (2 * np.pi * self.frequency * rk * ck) ** 2)
            charge[:, k] = steady_peak[:, k] + np.where(choke, ring, follow)
        discharge = (bleeder[owner] * c_plus[owner]
                     * np.log(np.maximum(hn["dc_voltage"], cond.safe_voltage) / cond.safe_voltage))

        ratios = self._checks(owner, position, f, tr, cap, choice, crest, surge_i, steady_peak,
                              charge, discharge, bleeder, bleeder_power, feed_power,
                              feed_current, feed_l, feed_r, c_plus, bleeder_class)
        # per design: worst over positions; a position the screen could not solve fails
        by_design = {name: _per_design(np.where(failed, np.nan, values), owner, count)
                     for name, (values, _) in ratios.items()}
        stress = _nanmax(np.column_stack([by_design[name] for name, (_, r) in ratios.items()
                                          if r] or [np.full(count, np.nan)]), axis=1)

        figures = {}
        for k, ns in enumerate(s.nodes):
            figures[f"{ns.name}.idle_voltage"] = _spread(f["nominal_idle"]["dc_voltage"][:, k],
                                                         owner, within, count, failed)
            figures[f"{ns.name}.full_power_voltage"] = _spread(
                f["nominal_full"]["dc_voltage"][:, k], owner, within, count, failed)
            figures[f"{ns.name}.ripple_pp"] = _spread(f["nominal_full"]["ripple_pp"][:, k],
                                                      owner, within, count, failed)
        k = s.sag_node
        idle_v = f["nominal_idle"]["dc_voltage"][:, k]
        full_v = f["nominal_full"]["dc_voltage"][:, k]
        figures["static_drop"] = _spread((idle_v - full_v) / idle_v, owner, within, count, failed)
        if b.needs_sag_dynamics:
            sag = self._sag_times(f, stacked, rows)
            for what in ("attack", "recovery"):
                figures[f"{what}_time"] = _spread(sag[what][:, k], owner, within, count, failed)
        else:
            none = np.full((count, 1), np.nan)
            figures["attack_time"] = figures["recovery_time"] = none
        G = b.constraint_values(figures, tr["buildable"], cap["made"], by_design)
        life = self._life(owner, position, f, cap, count, failed)
        figs = b.objective_figures(cost, figures["static_drop"], stress, life)
        return b.objective_values(figs), G, by_design

    def _life(self, owner, position, f, cap, count, failed):
        """Shortest part life per design [h], as the assessment reckons it
        (:mod:`optimiser.physics.life`): capacitors at the highest ripple current of the
        screen's corners, the valve rectifier at high mains, full power; worst position."""
        from optimiser.physics import life as wear

        cond = self.b.conditions
        ripple = np.maximum.reduce([f[c]["capacitor_rms_current"] for c, _, _ in CORNERS])
        lives = []
        for k, sr in enumerate(self.series):
            lives.append(wear.capacitor_life_hours(sr.rated_life, sr.rated_temperature,
                                                   cond.ambient, ripple[:, k],
                                                   cap["ripple"][owner, k],
                                                   cond.ripple_self_heating))
        rated = self.position_rating[("valve", "max_dc_current")][position]
        lives.append(np.where(self.has_valve[position], wear.valve_life_hours(
            2 * f["high_full"]["rectifier_average_current"], rated), np.nan))
        shortest = np.where(failed, np.nan, wear.shortest(*lives))
        return -_per_design(-shortest, owner, count)

    def _sag_times(self, f, stacked, rows):
        """Attack and recovery times (R, N) from the cycle-averaged circuit: each row's
        rectifier as the regulation line through its nominal idle and full-power figures
        (:func:`optimiser.physics.transients.averaged_sag_step`)."""
        idle, full = f["nominal_idle"], f["nominal_full"]
        v_idle, v_full = idle["dc_voltage"][:, 0], full["dc_voltage"][:, 0]
        i_idle = 2.0 * idle["rectifier_average_current"]
        i_full = 2.0 * full["rectifier_average_current"]
        step = i_full - i_idle
        with np.errstate(divide="ignore", invalid="ignore"):
            r_out = np.where(np.abs(step) > 1e-9, (v_idle - v_full) / step, 0.0)
        r_out = np.maximum(np.nan_to_num(r_out), MIN_PATH_RESISTANCE)
        source = v_idle + r_out * i_idle
        values = ladder.LadderValues(*(getattr(stacked, name)[:rows] for name in
                                       ladder.LadderValues.__dataclass_fields__))
        values = replace(values, path_resistance=r_out,
                         path_inductance=np.zeros(rows))
        out = {"attack": np.full((rows, self.n), np.nan),
               "recovery": np.full((rows, self.n), np.nan)}
        shapes = values.feed_inductance > 0
        cond = self.b.conditions
        for shape in np.unique(shapes, axis=0):
            members = np.flatnonzero((shapes == shape).all(axis=1))
            structure = ladder.LadderStructure(n_nodes=self.n, esr=(True,) * self.n,
                                               inductive_feed=(False,) + tuple(bool(x) for x in
                                                                               shape[1:]))
            part = ladder.LadderValues(*(getattr(values, name)[members] for name in
                                         ladder.LadderValues.__dataclass_fields__))
            response = transients.averaged_sag_step(
                structure, part, source[members], self.frequency,
                np.broadcast_to(self.idle, (len(members), self.n)),
                np.broadcast_to(self.full, (len(members), self.n)), cond.sag_hold,
                cond.sag_release)
            out["attack"][members] = response.attack_time
            out["recovery"][members] = response.recovery_time
        return out

    def _checks(self, owner, position, f, tr, cap, choice, crest, surge_i, steady_peak, charge,
                discharge, bleeder, bleeder_power, feed_power, feed_current, feed_l, feed_r,
                c_plus, bleeder_class):
        """Check ratios per row (design and position), named as the assessment names them:
        {name: (ratio (R,), counts towards the rectifier stress)}."""
        cond = self.b.conditions
        hf, hn = f["high_full"], f["high_none"]
        rows = len(owner)
        col = ratings.check_ratio

        def part(attr, kind):
            return self.position_rating[(kind, attr)][position]

        has_valve = self.has_valve[position]
        has_diode = self.has_diode[position]
        only = lambda mask, v: np.where(mask, v, np.nan)  # noqa: E731
        worst_piv = np.maximum(hn["piv"], hf["piv"])
        v_oc = tr["hv_open_circuit_voltage"][owner]
        out = {}
        rect = {
            "valve.reservoir_capacitance": (only(has_valve, c_plus[owner, 0]),
                                            part("max_input_capacitance", "valve"), False),
            "valve.peak_plate_current": (only(has_valve, hf["rectifier_peak_current"]),
                                         part("max_peak_current", "valve"), False),
            "valve.piv": (only(has_valve, worst_piv), part("max_piv", "valve"), False),
            "valve.dc_current": (only(has_valve, 2 * hf["rectifier_average_current"]),
                                 part("max_dc_current", "valve"), False),
            "valve.plate_voltage_rms": (only(has_valve, v_oc * self.high),
                                        part("max_plate_voltage_rms", "valve"), False),
            "diode.piv": (only(has_diode, worst_piv * (1 + cond.silicon_piv_margin)),
                          part("v_rrm", "diode"), False),
            "diode.surge": (only(has_diode, surge_i), part("i_fsm", "diode"), False),
            "diode.average_current": (only(has_diode, hf["rectifier_average_current"]),
                                      part("i_f_avg", "diode"), False),
        }
        for name, (value, limit, minimum) in rect.items():
            out[name] = (col(value, limit, minimum), True)
        impedance = np.hypot(tr["hv_series_resistance"][owner],
                             2 * np.pi * self.frequency * tr["hv_leakage_inductance"][owner])
        min_z = np.full(rows, np.nan)
        for i in np.unique(position):
            valve = self.flat_positions[i].valve
            if valve is not None and valve.min_plate_impedance:
                at = position == i
                min_z[at] = valve.min_plate_impedance_at(v_oc[at])
        out["valve.plate_supply_impedance"] = (col(only(has_valve, impedance), min_z, True),
                                               True)
        t = {k: tr[k][owner] for k in tr}
        out["transformer.temperature_rise"] = (col(t["temperature_rise"],
                                                   t["temperature_rise_limit"]), False)
        out["transformer.window_fill"] = (col(t["build_ratio"], 1.0), False)
        out["transformer.flux_density"] = (col(t["flux_density"], t["flux_density_limit"]),
                                           False)
        out["transformer.hv_rms_current"] = (col(hf["secondary_rms_current"],
                                                 choice["hv_current"][owner]), False)
        for k, name in enumerate(self.b.node_names):
            c = {key: v[owner, k] for key, v in cap.items()}
            out[f"capacitor.{name}.voltage"] = (col(np.maximum(steady_peak[:, k], 0),
                                                    c["rated"] * cond.capacitor_voltage_derating),
                                                False)
            out[f"capacitor.{name}.surge_voltage"] = (col(charge[:, k], c["surge"]), False)
            out[f"capacitor.{name}.ripple_current"] = (col(hf["capacitor_rms_current"][:, k],
                                                           c["ripple"]), False)
            if k > 0:
                choke = feed_l[owner, k] > 0
                power = feed_r[owner, k] * hf["feed_rms_current"][:, k] ** 2
                out[f"resistor.{name}.dissipation"] = (col(np.where(choke, np.nan, power),
                                                           feed_power[owner, k]
                                                           * cond.resistor_power_derating), False)
                out[f"choke.{name}.current"] = (col(np.where(choke, np.abs(
                    hf["feed_dc_current"][:, k]), np.nan), feed_current[owner, k]), False)
            out[f"bleeder.{name}.dissipation"] = (col(steady_peak[:, k] ** 2 / bleeder[owner, k],
                                                      bleeder_power[owner, k]
                                                      * cond.resistor_power_derating), False)
            out[f"bleeder.{name}.voltage"] = (col(steady_peak[:, k], np.minimum(
                self.class_working[bleeder_class[owner, k]],
                np.sqrt(bleeder_power[owner, k] * bleeder[owner, k]))), False)
            out[f"bleeder.{name}.discharge_time"] = (col(discharge[:, k],
                                                         cond.discharge_time_limit), False)
        # a switchable pair's checks carry their position's name
        prefixes = self.position_prefix[position]
        kinds = np.unique(prefixes)
        if len(kinds) == 1 and not kinds[0]:
            return out
        named = {}
        for prefix in kinds:
            mask = prefixes == prefix
            for name, (values, rectifier_check) in out.items():
                key = f"{prefix}/{name}" if prefix else name
                named[key] = (np.where(mask, values, np.nan), rectifier_check)
        return named


def _per_design(values, owner, count):
    """Worst of a row figure over each design's rows (NaN where none applies). (B,)"""
    if len(owner) == count:  # one row per design: no switchable pair in the batch
        return values
    out = np.full(count, -np.inf)
    np.maximum.at(out, owner, np.where(np.isnan(values), -np.inf, values))
    return np.where(np.isneginf(out), np.nan, out)


def _spread(values, owner, slot, count, failed):
    """A row figure as (B, P): one column per switch position (``slot``), NaN where a design
    has fewer positions or the screen failed."""
    out = np.full((count, slot.max() + 1 if len(slot) else 1), np.nan)
    out[owner, slot] = np.where(failed, np.nan, values)
    return out
