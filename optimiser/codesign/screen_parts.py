"""The screen's parts and prices per choice, filled once when a screen is made.

What :meth:`CoDesign.designs` would pick for each choice (a capacitor's voltage rating and ESR,
a feed's power class, the bleeder across each capacitor, the rectifier's switch positions and
their parts), and what :mod:`optimiser.assessment.bill` charges for it, as tables the screen
indexes by the decision variables (:class:`optimiser.codesign.screening.Screen`).
"""

from __future__ import annotations

import numpy as np

from optimiser.assessment import bill
from optimiser.assessment import checks as check_table
from optimiser.assessment.steady_state import DEFAULT_DIODE, path_elements_of
from optimiser.codesign.options import BLEEDER_SERIES
from optimiser.formats.units import round_significant
from optimiser.inputs.design import Feed
from optimiser.parts import catalogue as parts
from optimiser.physics.rectifier import PathElements
from optimiser.physics.transformer.corners import worst_corners
from optimiser.physics.transformer.rating import worst_winding_error

__all__ = ["RectifierOptions", "PartTables", "TransformerCache"]

_TRANSFORMER_FIELDS = ("hv_open_circuit_voltage", "hv_series_resistance",
                       "hv_leakage_inductance", "temperature_rise", "temperature_rise_limit",
                       "build_ratio", "flux_density", "flux_density_limit",
                       "winding_voltage_error", "cost")
_BUILDABLE_FIELDS = ("wire_available", "stack_in_range", "regulation_solvable", "converged")


class _Position:
    """One way a rectifier option conducts (a switchable option has two)."""

    def __init__(self, name, topology, diode, valve):
        self.name = name
        self.topology = topology
        self.valve = parts.find_part("valve", valve) if valve else None
        silicon = topology != "centre-tap" or valve is None
        self.diode = parts.find_part("diode", diode or DEFAULT_DIODE) if silicon else None
        self.elements = path_elements_of(topology, diode, valve)


class RectifierOptions:
    """The spec's rectifier options: their switch positions, the positions' parts and ratings
    (flat, one entry per position), and each option's price.

    Parameters
    ----------
    binding : CoDesign
    """

    def __init__(self, binding):
        self.positions = []
        for option in binding.spec.choices.rectifiers:
            if option.topology == "switchable":
                self.positions.append([_Position(name, p.topology, p.diode, p.valve)
                                       for name, p in option.positions.items()])
            else:
                self.positions.append([_Position(None, option.topology, option.diode,
                                                 option.valve)])
        self.n_positions = np.array([len(p) for p in self.positions])
        self.first_position = np.concatenate([[0], np.cumsum(self.n_positions)[:-1]])
        flat = [p for ps in self.positions for p in ps]
        self.elements = {f: np.array([p.elements[f] for p in flat], float)
                         for f in PathElements.__dataclass_fields__}
        self.topology = np.array([p.topology for p in flat])
        self.prefix = np.array([p.name or "" for p in flat])
        self.has_valve = np.array([p.valve is not None for p in flat])
        self.has_diode = np.array([p.diode is not None for p in flat])
        self.valves = np.empty(len(flat), object)
        self.valves[:] = [p.valve for p in flat]
        self.ratings = check_table.rectifier_ratings([p.valve for p in flat],
                                                     [p.diode for p in flat])
        self.option_key = [(o.centre_tapped, heater) for o, heater in
                           zip(binding.spec.choices.rectifiers, binding._rectifier_heaters)]
        self.cost = self._costs(binding)

    def _costs(self, b):
        """Cost of each option's rectifier parts and switch, from a probe design's parts list
        (the spec's price overrides included)."""
        base = np.array([v.lower for v in b.variables], float)
        out = []
        for j in range(len(self.positions)):
            x = base.copy()
            x[4] = j
            design = b.designs(b.decode(x[None, :]))[0]
            out.append(sum(line.cost for line in b.parts_list(design)
                           if line.group in ("rectifier", "hardware")))
        return np.array(out)

    def rows(self, rectifier):
        """One row per design and switch position: (owner design, position within the option,
        flat position index), each (R,)."""
        counts = self.n_positions[rectifier]
        owner = np.repeat(np.arange(len(rectifier)), counts)
        within = np.arange(len(owner)) - np.repeat(np.cumsum(counts) - counts, counts)
        return owner, within, self.first_position[rectifier][owner] + within


class PartTables:
    """Capacitors, feeds, bleeders and resistor classes as :meth:`CoDesign.designs` picks
    them, with their prices.

    Parameters
    ----------
    binding : CoDesign
    """

    def __init__(self, binding):
        self.b = binding
        s = binding.spec
        self.n = len(binding.node_names)
        self.frequency = s.mains.frequency
        self.series = [parts.find_part("capacitor", ch.series) for ch in binding.capacitor_choice]
        self.tol_plus = np.array([sr.tolerance.plus for sr in self.series])
        full = np.array([ns.full_power_current for ns in s.nodes])
        # feeds: values, ratings and prices per option
        self.feed = []
        downstream = np.cumsum(full[::-1])[::-1]
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

    def capacitors(self, capacitance, crest, steps):
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

    def feeds(self, feeds):
        """Resistance, inductance, power and current ratings (B, N; column 0 none) and the
        feeds' cost (B,) of the chosen feed options."""
        count = len(feeds)
        out = {"resistance": np.zeros((count, self.n)), "inductance": np.zeros((count, self.n)),
               "power": np.full((count, self.n), np.nan),
               "current": np.full((count, self.n), np.nan), "cost": np.zeros(count)}
        for k in range(1, self.n):
            table = self.feed[k - 1][feeds[:, k - 1]]
            out["resistance"][:, k], out["inductance"][:, k] = table[:, 0], table[:, 1]
            out["power"][:, k], out["current"][:, k] = table[:, 2], table[:, 3]
            out["cost"] += table[:, 4]
        return out

    def bleeders(self, capacitance, crest):
        """The largest E12 bleeder discharging each capacitor (at its high tolerance) in time,
        and its power class: resistance, power rating, class index (B, N), and the capacitance
        at high tolerance (B, N)."""
        b = self.b
        cond = b.conditions
        allowed = cond.discharge_time_limit * b.spec.margins.bleeder_time_fraction
        c_plus = capacitance * (1 + self.tol_plus)[None, :]
        r_max = allowed / (c_plus * np.log(crest[:, None] / cond.safe_voltage))
        pick = np.searchsorted(self.bleeder_values, r_max * (1 + 1e-12), side="right") - 1
        bleeder = self.bleeder_values[np.maximum(pick, 0)]
        klass = b.resistor_class(crest[:, None] ** 2 / bleeder, crest[:, None])
        return {"resistance": bleeder, "power": self.class_power[klass], "class": klass,
                "c_plus": c_plus}


class TransformerCache:
    """Transformer arrays per design, each distinct transformer designed once per run (by
    :meth:`CoDesign.transformer_populations`, all kinds in one pass).

    Parameters
    ----------
    binding : CoDesign
    option_key : list
        Per rectifier option, what of it decides the transformer.
    """

    def __init__(self, binding, option_key):
        self.b = binding
        self.option_key = option_key
        self._known = {}

    def __call__(self, choice):
        keys = list(zip(choice["core_stack"].tolist(), choice["hv_voltage"].tolist(),
                        choice["hv_current"].tolist(), choice["current_density"].tolist(),
                        [self.option_key[r] for r in choice["rectifier"].tolist()]))
        new = [k for k in dict.fromkeys(keys) if k not in self._known]
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
                # the flux and rise checks read the worst tap and mains corner, the winding
                # voltage check the rating's figure, as in the full tier
                cond = self.b.conditions
                worst = {f: v[0] for f, v in worst_corners(
                    pop, cond.mains_low, cond.mains_high, self.b.options.transformer_data).items()}
                worst["winding_voltage_error"] = worst_winding_error(pop)[0]
                values = np.column_stack([np.asarray(worst[f] if f in worst else getattr(pop, f),
                                                     float) for f in _TRANSFORMER_FIELDS] + [ok])
                for j, m in enumerate(members):
                    self._known[new[m]] = values[j]
        table = np.array([self._known[k] for k in keys])
        out = {f: table[:, i] for i, f in enumerate(_TRANSFORMER_FIELDS)}
        out["buildable"] = table[:, -1] > 0.5
        return out
