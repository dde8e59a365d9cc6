"""The spec's options resolved once into plain tables, and the lookups on them.

Everything the search may choose from, and everything it derives without choosing, is looked up
in the spec, the parts catalogue and the transformer data here, once per spec, and held as
lists and arrays: the secondary-voltage and current-density grids, the cores and stacks, the
capacitor values and the voltage ratings each series offers (with their tan delta and surge
ratings), the ways to feed each node, the rectifier options (as design models, with the heater
winding each needs), the resistor power classes, the bleeder's preferred values, the spec's
price overrides. Nothing downstream goes back to the catalogue for a choice.

The lookups are the choices the search does not make but derives, each the cheapest that meets
its purpose: a capacitor's voltage rating (:meth:`Options.capacitor_rating`, against the
no-load crest of :meth:`Options.crest_voltage`) and a resistor's power class
(:meth:`Options.resistor_class`).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace

import numpy as np

from optimiser.assessment import bill
from optimiser.formats.units import format_quantity
from optimiser.inputs.design import Mains, Position, Rectifier
from optimiser.inputs.spec import Spec
from optimiser.parts import catalogue as parts
from optimiser.physics.transformer import load_transformer_data

__all__ = ["RATING_CHOICES", "BLEEDER_SERIES", "FeedOption", "Options", "rectifier_heater"]

#: Capacitor voltage ratings offered per capacitor: the lowest one above the no-load crest, or
#: the next one up (a higher rating also carries more ripple current). An encoding choice.
RATING_CHOICES = 2
#: Preferred-number series of the bleeder resistor (IEC 60063).
BLEEDER_SERIES = "E12"


@dataclass(frozen=True)
class FeedOption:
    """One way to join a node to the one before it."""

    kind: str  # "resistor" | "choke"
    resistance: float
    inductance: float = 0.0
    choke: str | None = None
    current_rating: float | None = None

    @property
    def label(self) -> str:
        if self.kind == "choke":
            return f"choke {self.choke}"
        return f"resistor {format_quantity(self.resistance, 'ohm')}"


def _grid(window) -> np.ndarray:
    """The values of a spec's min/max/step range."""
    return window.min + window.step * np.arange(
        int(math.floor((window.max - window.min) / window.step + 1e-9)) + 1)


class Options:
    """One spec's options as tables (see module docstring).

    Parameters
    ----------
    spec : Spec
    """

    def __init__(self, spec: Spec):
        self.spec = spec
        c = spec.choices
        t = spec.transformer
        self.node_names = [n.name for n in spec.nodes]
        # the transformer: its data with the spec's prices, cores and stacks, grids
        data = load_transformer_data()
        update = {k: v for k, v in spec.costs.transformer.model_dump().items() if v is not None}
        self.transformer_data = replace(data, prices=data.prices.model_copy(update=update))
        self.steel_index = data.steel_index(t.steel)
        self.max_flux_density = t.max_flux_density
        self.primaries = list(t.primaries or [spec.mains.voltage])
        names = t.cores or [core.name for core in data.cores]
        self.core_stacks = [(data.core_index(name), name, float(stack)) for name in names
                            for stack in data.cores[data.core_index(name)].stacks]
        self.voltage_grid = _grid(c.secondary_voltage)
        self.density_grid = _grid(t.current_density)
        full_dc = sum(ns.full_power_current for ns in spec.nodes)
        # without a range in the spec: a capacitor-input winding carries roughly 1.2-2 x I_dc RMS
        # (REFERENCES.md: ~1.6 x for a bridge at R_s/R_L = 10 %), bracketed generously
        self.hv_current_range = ((c.hv_current.min, c.hv_current.max) if c.hv_current else
                                 (0.5 * full_dc, 3.0 * full_dc))
        # capacitors: the values per node (their ratings below)
        self.capacitor_choice = [c.reservoir] + [c.filter] * (len(spec.nodes) - 1)
        self.capacitor_values = [np.array(ch.values()) for ch in self.capacitor_choice]
        # feeds: per node after the first, its chokes then its resistor values
        self.feed_options = [[]]
        for name in self.node_names[1:]:
            opts = c.feeds[name]
            options = []
            for choke in opts.chokes:
                p = parts.find_part("choke", choke)
                options.append(FeedOption("choke", p.dc_resistance, p.inductance, p.name,
                                          p.rated_current))
            if opts.resistance is not None:
                options += [FeedOption("resistor", r) for r in opts.resistance.values()]
            self.feed_options.append(options)
        self.conditions = spec.conditions.model_copy(update={
            "mains_low": spec.mains.tolerance, "mains_high": spec.mains.tolerance,
            "ambient": spec.ambient, "capacitor_series": c.reservoir.series})
        self.mains = Mains.model_construct(voltage=spec.mains.voltage,
                                           frequency=spec.mains.frequency)
        self.sag_dynamics = spec.sag is not None and (spec.sag.attack is not None
                                                      or spec.sag.recovery is not None)
        # rectifiers: the design model of each option and the heater winding it needs
        self.rectifiers = [_rectifier_model(o) for o in c.rectifiers]
        self.rectifier_heaters = [rectifier_heater(o) for o in c.rectifiers]
        # prices: the spec's overrides (by part name, folded), and every rectifier part priced
        self.price_overrides = {k.casefold(): v for k, v in spec.costs.parts.items()}
        self._check_prices()
        # resistors: the power classes allowed, by power, and each one's power derated
        self.resistor_classes = sorted(parts.load_catalogue("resistor").values(),
                                       key=lambda p: p.power)
        if c.resistor_ratings:
            self.resistor_classes = [p for p in self.resistor_classes
                                     if p.name in c.resistor_ratings]
        self.derated_power = np.array([p.power_at(spec.ambient) for p in self.resistor_classes])
        # per node, the voltage ratings its series offers: value range, tan delta, surge
        self.offered_ratings = [_offered_ratings(choice) for choice in self.capacitor_choice]
        self.bleeder_values = parts.e_series(BLEEDER_SERIES, range(2, 8))

    def _check_prices(self):
        """Every part the search may use has a price (the spec's or the price list's)."""
        for option in self.spec.choices.rectifiers:
            for sub in option.members():
                for group, name in (("diodes", sub.diode), ("valves", sub.valve)):
                    if name is None or name.casefold() in self.price_overrides:
                        continue
                    part = parts.find_part(group[:-1], name)
                    if not math.isfinite(bill.price_of(group, part.name)[0]):
                        raise LookupError(f"no price for {part.name} in {bill.PRICE_FILE.name}; "
                                          f"give one in the spec under costs.parts")

    # ---------------------------------------------------------------- derived choices

    def crest_voltage(self, open_circuit_voltage):
        """No-load crest of the HV winding at high mains and the winder's high tolerance. [V]

        With the valves cold nothing loads the supply but the bleeder, so every capacitor of a
        capacitor-input ladder charges towards this peak (an LC feed can ring above it at
        switch-on; the assessment checks that against the surge rating).
        """
        cond = self.conditions
        return (math.sqrt(2.0) * open_circuit_voltage * (1 + cond.mains_high)
                * (1 + cond.transformer_tolerance))

    def capacitor_rating(self, node, capacitance, crest, step):
        """(index into ``offered_ratings[node]``, made) of a node's capacitor, per design: the
        lowest allowed rating at or above the crest, ``step`` ratings higher, moved up until the
        value is made at it (else the stepped rating, not made). Arrays or scalars."""
        table = self.offered_ratings[node]
        rated = table["rated"]
        capacitance, crest, step = (np.atleast_1d(np.asarray(x, float)) for x in
                                    (capacitance, crest, step))
        # the working voltage at most the derated share of the rating (conditions)
        crest = crest / self.conditions.capacitor_voltage_derating
        first = np.minimum(np.searchsorted(rated, crest, side="left"), len(rated) - 1)
        i = np.minimum(first + step.astype(int), len(rated) - 1)
        made_at = ((table["min"][None, :] <= capacitance[:, None])
                   & (capacitance[:, None] <= table["max"][None, :])
                   & (np.arange(len(rated))[None, :] >= i[:, None]))
        made = made_at.any(axis=1)
        return np.where(made, np.argmax(made_at, axis=1), i), made

    def rating(self, node, capacitance, crest, step):
        """(rated voltage, made) for one design's capacitor (:meth:`capacitor_rating`)."""
        j, made = self.capacitor_rating(node, capacitance, crest, step)
        return float(self.offered_ratings[node]["rated"][j[0]]), bool(made[0])

    def resistor_class(self, dissipation, voltage=None):
        """Index into the resistor classes (by power) of the smallest whose derated power
        covers the asked margin over a dissipation (and whose element voltage covers
        ``voltage``, if given), else the largest. Arrays or scalars."""
        need = self.spec.margins.resistor_power_factor * np.asarray(dissipation, float)
        fits = self.derated_power >= need[..., None]
        if voltage is not None:
            working = np.array([p.max_working_voltage for p in self.resistor_classes])
            fits = fits & (working >= np.asarray(voltage, float)[..., None])
        return np.where(fits.any(axis=-1), np.argmax(fits, axis=-1), len(self.derated_power) - 1)

    def resistor_power(self, dissipation, voltage=None):
        """Power rating of the resistor class :meth:`resistor_class` picks. [W]"""
        return self.resistor_classes[int(self.resistor_class(dissipation, voltage))].power


def _offered_ratings(choice) -> dict:
    """The voltage ratings a capacitor choice's series offers: rated voltage, value range,
    tan delta and surge rating, as arrays over the ratings."""
    series = parts.find_part("capacitor", choice.series)
    offered = choice.ratings()
    own = [series.rating(r.rated) for r in offered]
    return {"rated": np.array([r.rated for r in offered]),
            "min": np.array([r.min_capacitance for r in offered]) * (1 - 1e-9),
            "max": np.array([r.max_capacitance for r in offered]) * (1 + 1e-9),
            "tan_delta": np.array([series.tan_delta if r.tan_delta is None else r.tan_delta
                                   for r in own]),
            "surge": np.array([r.surge for r in own])}


def _rectifier_model(option) -> Rectifier:
    """The design model of a spec's rectifier option."""
    if option.topology == "switchable":
        positions = {name: Position.model_construct(topology=p.topology, diode=p.diode,
                                                    valve=p.valve, heater_shared=False,
                                                    reservoir=None)
                     for name, p in option.positions.items()}
        return Rectifier.model_construct(topology="switchable", diode=None, valve=None,
                                         heater_shared=False, positions=positions)
    return Rectifier.model_construct(topology=option.topology, diode=option.diode,
                                     valve=option.valve, heater_shared=False, positions=None)


def rectifier_heater(option):
    """(voltage [V], current [A]) of the heater winding a rectifier option needs, or None.

    A valve rectifier gets its own heater winding (a directly heated filament is at B+; an
    indirectly heated one is kept off the signal valves' winding, so no heater-cathode limit
    applies); a switchable pair needs the larger of its valves' heaters.
    """
    valves = [parts.find_part("valve", m.valve) for m in option.members() if m.valve]
    if not valves:
        return None
    worst = max(valves, key=lambda v: v.heater_voltage * v.heater_current)
    return worst.heater_voltage, max(v.heater_current for v in valves
                                     if v.heater_voltage == worst.heater_voltage)
