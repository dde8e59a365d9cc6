"""The binding of a spec to the search: decision variables, concrete designs, objectives, limits.

A population matrix ``X`` (one row per candidate; integer columns hold indices) is decoded into
:class:`Candidate` choices, turned into concrete :class:`~optimiser.inputs.design.Design` objects (the
physical transformer of the whole population designed in one vectorised call of
:func:`optimiser.physics.transformer.design_population`), assessed by
:func:`optimiser.assessment.assess_many` (mains and tolerance corners, sag step, switch-on, every
rating) and priced by :mod:`optimiser.assessment.bill` (:meth:`CoDesign.score`). During the search the same
objectives and constraints come from a screening tier, :mod:`optimiser.codesign.screening`, many times
faster; :func:`optimise` assesses what the search kept in full, and only that is reported. The
result is scored:

- objectives ``F`` = [cost, regulation, rectifier_stress], all minimised: cost in cost units;
  regulation the distance of the static sag from its target (or the sag itself when the spec
  sets no target), as a fraction; rectifier stress the worst actual-to-rated ratio over the
  rectifier's ratings;
- constraints ``G`` (feasible where every column is <= 0): each node's DC voltage inside its
  window, ripple inside its limit, the sag inside its tolerance (and attack/recovery inside their
  windows), the transformer buildable, each capacitor value made at its rating, and every check
  of the assessment at most 1.

Each constraint column is scaled so that 1.0 means "missed by the whole allowance" (a window's
half-width, a limit's own size); :attr:`CoDesign.constraints` turns a value back into volts,
percent or a ratio for the report.

Choices the search does not make but derives (each the cheapest that meets its purpose):
the capacitor voltage rating (the lowest rating at or above the no-load crest at high mains,
optionally one step up), the dropping resistors' and bleeder's power class, the reservoir bleeder
(one across each capacitor, the largest E12 value that discharges it in time).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace
from functools import cached_property

import numpy as np
import pandas as pd

from optimiser.assessment import bill
from optimiser.parts import catalogue as parts
from optimiser.physics import transients
from optimiser.assessment.full import assess_many
from optimiser.inputs.design import (
    Design,
    EquivalentTransformer,
    Feed,
    Load,
    Mains,
    Node,
    Position,
    Rectifier,
)
from optimiser.codesign.nsga import Variable
from optimiser.inputs.spec import RECTIFIER_HEATER, Spec
from optimiser.inputs.build import BiasWindingBlock, HeaterWindingBlock, HvWindingBlock, TransformerBuild
from optimiser.physics.transformer import AuxiliaryWinding, design_population, load_transformer_data
from optimiser.formats.units import format_quantity, round_significant

__all__ = [
    "OBJECTIVES",
    "RATING_CHOICES",
    "ConstraintInfo",
    "Candidate",
    "Scored",
    "CoDesign",
    "Unmet",
    "Optimisation",
    "optimise",
    "reported_front",
]

OBJECTIVES = ("cost", "regulation", "rectifier_stress")
#: Capacitor voltage ratings offered per capacitor: the lowest one above the no-load crest, or
#: the next one up (a higher rating also carries more ripple current). An encoding choice.
RATING_CHOICES = 2
#: Preferred-number series of the bleeder resistor (IEC 60063).
BLEEDER_SERIES = "E12"


# --------------------------------------------------------------------------------------------
# Results


@dataclass(frozen=True)
class ConstraintInfo:
    """One constraint column of G.

    Attributes
    ----------
    name : str
        E.g. ``"plates.dc_voltage.low"`` or ``"check: valve.piv"``.
    description : str
        What it asks, for people.
    scale : float
        ``g · scale`` is the miss in ``unit``; for a ratio, ``g + 1`` is the ratio.
    unit : str
        ``"V"``, ``"s"``, ``"%"``, ``"ratio"`` or ``"flag"``.
    """

    name: str
    description: str
    scale: float
    unit: str

    def miss(self, g: float) -> str:
        """How far a constraint value is from being met, in the constraint's own terms."""
        if not math.isfinite(g):
            return "not computable (the solution failed)"
        if self.unit == "ratio":
            return f"ratio {g + 1.0:.4g} against a limit of 1 ({100 * g:.3g} % over)"
        if self.unit == "%":
            return f"{100 * g * self.scale:.3g} percentage points outside"
        if self.unit == "flag":
            return "not met"
        return f"{format_quantity(g * self.scale, self.unit)} outside"


@dataclass(frozen=True)
class Candidate:
    """The decoded choices of one design.

    Attributes
    ----------
    hv_voltage : float
        HV RMS voltage at rated load per conducting path. [V]
    hv_current : float
        HV RMS current rating per conducting path. [A]
    core_stack : int
        Index into :attr:`CoDesign.core_stacks`.
    current_density : float
        Wire current density of every winding. [A/m^2]
    rectifier : int
        Index into ``spec.choices.rectifiers``.
    capacitance : tuple of float
        Per node. [F]
    rating_steps : tuple of int
        Per node: 0 the lowest voltage rating above the crest, 1 the next.
    feeds : tuple of int
        Per node after the first: index into :attr:`CoDesign.feed_options`.
    """

    hv_voltage: float
    hv_current: float
    core_stack: int
    current_density: float
    rectifier: int
    capacitance: tuple
    rating_steps: tuple
    feeds: tuple


@dataclass(frozen=True)
class Scored:
    """Designs with every figure, objective and constraint.

    Attributes
    ----------
    designs : list of Design
    frame : pandas.DataFrame
        One row per design: what was chosen, the objectives and costs, the transformer's
        figures, the assessment's figures (nominal full power under the names
        :func:`~optimiser.assessment.steady_state.evaluate_many` uses where it has them) and ``check: <name>``
        ratio columns.
    F : ndarray (B, 3)
    G : ndarray (B, M)
    table : AssessmentTable
        The assessment itself.
    """

    designs: list
    frame: pd.DataFrame
    F: np.ndarray
    G: np.ndarray
    table: object

    @property
    def feasible(self) -> np.ndarray:
        return np.all(self.G <= 0.0, axis=1)


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


# --------------------------------------------------------------------------------------------
# The binding


class CoDesign:
    """One spec bound to the search.

    Parameters
    ----------
    spec : Spec
    """

    objective_names = OBJECTIVES

    def __init__(self, spec: Spec):
        self.spec = spec
        c = spec.choices
        t = spec.transformer
        self.node_names = [n.name for n in spec.nodes]
        n_nodes = len(spec.nodes)
        data = load_transformer_data()
        update = {k: v for k, v in spec.costs.transformer.model_dump().items() if v is not None}
        self.transformer_data = replace(data, prices=data.prices.model_copy(update=update))
        self.steel_index = data.steel_index(t.steel)
        self.max_flux_density = t.max_flux_density
        self.primaries = list(t.primaries or [spec.mains.voltage])
        names = t.cores or [core.name for core in data.cores]
        self.core_stacks = [(data.core_index(name), name, float(stack)) for name in names
                            for stack in data.cores[data.core_index(name)].stacks]
        vr = c.secondary_voltage
        self.voltage_grid = vr.min + vr.step * np.arange(
            int(math.floor((vr.max - vr.min) / vr.step + 1e-9)) + 1)
        jr = t.current_density
        self.density_grid = jr.min + jr.step * np.arange(
            int(math.floor((jr.max - jr.min) / jr.step + 1e-9)) + 1)
        full_dc = sum(ns.full_power_current for ns in spec.nodes)
        # without a range in the spec: a capacitor-input winding carries roughly 1.2-2 x I_dc RMS
        # (REFERENCES.md: ~1.6 x for a bridge at R_s/R_L = 10 %), bracketed generously
        self.hv_current_range = ((c.hv_current.min, c.hv_current.max) if c.hv_current else
                                 (0.5 * full_dc, 3.0 * full_dc))
        self.capacitor_choice = [c.reservoir] + [c.filter] * (n_nodes - 1)
        self.capacitor_values = [np.array(ch.values()) for ch in self.capacitor_choice]
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
        self._mains = Mains.model_construct(voltage=spec.mains.voltage,
                                            frequency=spec.mains.frequency)
        self._rectifiers = [self._rectifier_model(o) for o in c.rectifiers]
        self._rectifier_heaters = [self.rectifier_heater(o) for o in c.rectifiers]
        self._check_prices()
        self._resistor_classes = sorted(parts.load_catalogue("resistor").values(),
                                        key=lambda p: p.power)
        if c.resistor_ratings:
            self._resistor_classes = [p for p in self._resistor_classes
                                      if p.name in c.resistor_ratings]
        self._derated_power = np.array([p.power_at(spec.ambient) for p in self._resistor_classes])
        # per node, the voltage ratings its series offers: value range, tan delta, surge
        self.offered_ratings = []
        for choice in self.capacitor_choice:
            series = parts.find_part("capacitor", choice.series)
            offered = choice.ratings()
            own = [series.rating(r.rated) for r in offered]
            self.offered_ratings.append({
                "rated": np.array([r.rated for r in offered]),
                "min": np.array([r.min_capacitance for r in offered]) * (1 - 1e-9),
                "max": np.array([r.max_capacitance for r in offered]) * (1 + 1e-9),
                "tan_delta": np.array([series.tan_delta if r.tan_delta is None else r.tan_delta
                                       for r in own]),
                "surge": np.array([r.surge for r in own])})
        self._node_cache = {}
        self.variables = self._variables()
        self.constraints = self._constraint_info()
        self.constraint_names = [ci.name for ci in self.constraints]

    # ---------------------------------------------------------------- rectifiers and prices

    @staticmethod
    def _rectifier_model(option) -> Rectifier:
        if option.topology == "switchable":
            positions = {name: Position.model_construct(topology=p.topology, diode=p.diode,
                                                        valve=p.valve, heater_shared=False,
                                                        reservoir=None)
                         for name, p in option.positions.items()}
            return Rectifier.model_construct(topology="switchable", diode=None, valve=None,
                                             heater_shared=False, positions=positions)
        return Rectifier.model_construct(topology=option.topology, diode=option.diode,
                                         valve=option.valve, heater_shared=False, positions=None)

    def _check_prices(self):
        """Every part the search may use has a price (the spec's or the price list's)."""
        overrides = {k.casefold() for k in self.spec.costs.parts}
        for option in self.spec.choices.rectifiers:
            for sub in option.members():
                for group, name in (("diodes", sub.diode), ("valves", sub.valve)):
                    if name is None or name.casefold() in overrides:
                        continue
                    part = parts.find_part(group[:-1], name)
                    if not math.isfinite(bill.price_of(group, part.name)[0]):
                        raise LookupError(f"no price for {part.name} in {bill.PRICE_FILE.name}; "
                                          f"give one in the spec under costs.parts")

    def rectifier_heater(self, option):
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

    # ---------------------------------------------------------------- variables

    def _variables(self):
        lo, hi = self.hv_current_range
        out = [
            Variable("secondary_voltage", 0, len(self.voltage_grid) - 1, integer=True),
            Variable("hv_current", math.log10(lo), math.log10(hi)),
            Variable("core_stack", 0, len(self.core_stacks) - 1, integer=True),
            Variable("current_density", 0, len(self.density_grid) - 1, integer=True),
            Variable("rectifier", 0, len(self.spec.choices.rectifiers) - 1, integer=True),
        ]
        for name, values in zip(self.node_names, self.capacitor_values):
            out.append(Variable(f"{name}.capacitance", 0, len(values) - 1, integer=True))
        for name in self.node_names:
            out.append(Variable(f"{name}.rating_step", 0, RATING_CHOICES - 1, integer=True))
        for name, options in zip(self.node_names[1:], self.feed_options[1:]):
            out.append(Variable(f"{name}.feed", 0, len(options) - 1, integer=True))
        return out

    def choices(self, X) -> dict:
        """The choices of a population matrix as arrays (integer columns taken as indices):
        ``hv_voltage``, ``hv_current``, ``core_stack``, ``current_density``, ``rectifier`` (B,);
        ``capacitance``, ``rating_steps`` (B, N); ``feeds`` (B, N - 1)."""
        X = np.atleast_2d(np.asarray(X, float))
        n = len(self.node_names)

        def index(col, count):
            return np.clip(np.rint(X[:, col]).astype(int), 0, count - 1)

        return {
            "hv_voltage": self.voltage_grid[index(0, len(self.voltage_grid))],
            "hv_current": round_significant(10.0 ** X[:, 1], 3),
            "core_stack": index(2, len(self.core_stacks)),
            "current_density": self.density_grid[index(3, len(self.density_grid))],
            "rectifier": index(4, len(self.spec.choices.rectifiers)),
            "capacitance": np.column_stack([
                self.capacitor_values[k][index(5 + k, len(self.capacitor_values[k]))]
                for k in range(n)]),
            "rating_steps": np.column_stack([index(5 + n + k, RATING_CHOICES)
                                             for k in range(n)]),
            "feeds": np.array([index(5 + 2 * n + k - 1, len(self.feed_options[k]))
                               for k in range(1, n)], int).reshape(n - 1, len(X)).T,
        }

    def decode(self, X) -> list[Candidate]:
        """Candidates from a population matrix (integer columns are taken as indices)."""
        c = self.choices(X)
        return [Candidate(float(c["hv_voltage"][b]), float(c["hv_current"][b]),
                          int(c["core_stack"][b]), float(c["current_density"][b]),
                          int(c["rectifier"][b]), tuple(float(v) for v in c["capacitance"][b]),
                          tuple(int(v) for v in c["rating_steps"][b]),
                          tuple(int(v) for v in c["feeds"][b]))
                for b in range(len(c["rectifier"]))]

    def encode(self, candidate: Candidate) -> np.ndarray:
        """The population row of a candidate (the inverse of :meth:`decode`)."""
        row = [int(np.argmin(np.abs(self.voltage_grid - candidate.hv_voltage))),
               math.log10(candidate.hv_current), candidate.core_stack,
               int(np.argmin(np.abs(self.density_grid - candidate.current_density))),
               candidate.rectifier]
        for k, c in enumerate(candidate.capacitance):
            row.append(int(np.argmin(np.abs(np.log(self.capacitor_values[k] / c)))))
        row += list(candidate.rating_steps) + list(candidate.feeds)
        return np.array(row, float)

    # ---------------------------------------------------------------- designs

    def transformer_populations(self, core_stack, hv_voltage, hv_current, current_density,
                                rectifier, *, one_pass=False):
        """The physical transformers of designs (arrays (B,)): [(member rows,
        TransformerPopulation)].

        One vectorised pass per kind (with or without a rectifier heater winding), or with
        ``one_pass`` a single pass in which the designs without a valve rectifier have its heater
        winding at 0 V (not wound: the same figures, one call fewer).
        """
        s = self.spec
        options = s.choices.rectifiers
        heater = [self._rectifier_heaters[int(r)] for r in rectifier]
        out = []
        kinds = ((None,) if one_pass else (False, True))
        for with_heater in kinds:
            members = np.array([b for b in range(len(rectifier))
                                if with_heater is None or (heater[b] is not None) == with_heater],
                               int)
            if not members.size:
                continue
            ct = np.array([options[int(rectifier[b])].centre_tapped for b in members])
            heaters = [AuxiliaryWinding(h.name, h.voltage, h.current, h.centre_tap)
                       for h in s.heaters]
            wound = [heater[b] for b in members]
            if with_heater or (with_heater is None and any(h is not None for h in wound)):
                heaters.append(AuxiliaryWinding(
                    RECTIFIER_HEATER, np.array([h[0] if h else 0.0 for h in wound]),
                    np.array([h[1] if h else 0.0 for h in wound])))
            bias = (AuxiliaryWinding("bias", s.bias.voltage, s.bias.current, s.bias.centre_tap)
                    if s.bias is not None else None)
            t = s.transformer
            cores = [self.core_stacks[int(c)] for c in core_stack[members]]
            pop = design_population(
                core_index=np.array([c[0] for c in cores]),
                stack=np.array([c[2] for c in cores]),
                max_flux_density=self.max_flux_density,
                hv_voltage=np.asarray(hv_voltage, float)[members],
                hv_rms_current=np.asarray(hv_current, float)[members],
                frequency=s.mains.frequency, primary_voltages=self.primaries,
                primary_arrangement=t.primary_arrangement,
                insulation_class=t.insulation_class, ambient_temperature=s.ambient,
                hv_centre_tapped=ct,
                current_density=np.asarray(current_density, float)[members],
                heaters=heaters, bias=bias, screen=t.screen, steel_index=self.steel_index,
                wire_system=t.wire, data=self.transformer_data)
            out.append((members, pop))
        return out

    def designs(self, candidates) -> list[Design]:
        """Concrete designs of candidates, their transformers designed in one vectorised pass."""
        options = self.spec.choices.rectifiers
        count = len(candidates)
        built = [None] * count
        blocks = [None] * count
        field = lambda name: np.array([getattr(c, name) for c in candidates])  # noqa: E731
        for members, pop in self.transformer_populations(
                field("core_stack"), field("hv_voltage"), field("hv_current"),
                field("current_density"), field("rectifier")):
            for j, b in enumerate(members):
                c = candidates[b]
                option = options[c.rectifier]
                block = self._build_block(c, option.centre_tapped, self.rectifier_heater(option))
                blocks[b] = block
                built[b] = pop.design(j, build=block)
        return [self._design(c, blk, td) for c, blk, td in zip(candidates, blocks, built)]

    def _build_block(self, c: Candidate, centre_tapped: bool, heater) -> TransformerBuild:
        s = self.spec
        t = s.transformer
        heaters = [HeaterWindingBlock.model_construct(name=h.name, voltage=h.voltage,
                                                      current=h.current,
                                                      centre_tapped=h.centre_tap)
                   for h in s.heaters]
        if heater is not None:
            heaters.append(HeaterWindingBlock.model_construct(
                name=RECTIFIER_HEATER, voltage=heater[0], current=heater[1],
                centre_tapped=False))
        bias = (BiasWindingBlock.model_construct(voltage=s.bias.voltage, current=s.bias.current,
                                                 centre_tapped=s.bias.centre_tap)
                if s.bias is not None else None)
        _, core, stack = self.core_stacks[c.core_stack]
        return TransformerBuild.model_construct(
            primaries=self.primaries, primary_arrangement=t.primary_arrangement, core=core,
            stack=stack, steel=t.steel, max_flux_density=self.max_flux_density,
            current_density=c.current_density, insulation_class=t.insulation_class,
            ambient=s.ambient,
            hv=HvWindingBlock.model_construct(voltage=c.hv_voltage, current=c.hv_current,
                                              centre_tapped=centre_tapped),
            heaters=heaters, bias=bias, screen=t.screen, winding_order=None, wire=t.wire,
            enamel_grade=2, mounting=t.mounting)

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
        first = np.minimum(np.searchsorted(rated, crest, side="left"), len(rated) - 1)
        i = np.minimum(first + step.astype(int), len(rated) - 1)
        made_at = ((table["min"][None, :] <= capacitance[:, None])
                   & (capacitance[:, None] <= table["max"][None, :])
                   & (np.arange(len(rated))[None, :] >= i[:, None]))
        made = made_at.any(axis=1)
        return np.where(made, np.argmax(made_at, axis=1), i), made

    def _rating(self, node, capacitance, crest, step):
        """(rated voltage, made) for one design's capacitor (:meth:`capacitor_rating`)."""
        j, made = self.capacitor_rating(node, capacitance, crest, step)
        return float(self.offered_ratings[node]["rated"][j[0]]), bool(made[0])

    def resistor_class(self, dissipation):
        """Index into the resistor classes (by power) of the smallest whose derated power
        covers the asked margin over a dissipation, else the largest. Arrays or scalars."""
        need = self.spec.margins.resistor_power_factor * np.asarray(dissipation, float)
        fits = self._derated_power >= need[..., None]
        return np.where(fits.any(axis=-1), np.argmax(fits, axis=-1), len(self._derated_power) - 1)

    def _resistor_power(self, dissipation):
        """Power rating of the resistor class :meth:`resistor_class` picks. [W]"""
        return self._resistor_classes[int(self.resistor_class(dissipation))].power

    def _design(self, c: Candidate, block, built) -> Design:
        s = self.spec
        v_oc = float(built.hv_open_circuit_voltage)
        crest = self.crest_voltage(v_oc)
        full = [ns.full_power_current for ns in s.nodes]
        downstream = np.cumsum(full[::-1])[::-1]
        nodes = []
        for k, ns in enumerate(s.nodes):
            rated, _ = self._rating(k, c.capacitance[k], crest, c.rating_steps[k])
            series = parts.find_part("capacitor", self.capacitor_choice[k].series)
            feed = None
            if k > 0:
                fo = self.feed_options[k][c.feeds[k - 1]]
                if fo.kind == "choke":
                    feed = Feed.model_construct(resistance=fo.resistance, inductance=fo.inductance,
                                                power_rating=None, current_rating=fo.current_rating)
                else:
                    power = self._resistor_power(downstream[k] ** 2 * fo.resistance)
                    feed = Feed.model_construct(resistance=fo.resistance, inductance=0.0,
                                                power_rating=power, current_rating=None)
            esr = float(round_significant(
                series.esr(c.capacitance[k], 2.0 * s.mains.frequency, rated), 3))
            nodes.append(Node.model_construct(
                name=ns.name, capacitance=c.capacitance[k], esr=esr, feed=feed,
                load=Load.model_construct(current=None, resistance=None,
                                          idle_current=ns.idle_current,
                                          full_power_current=ns.full_power_current),
                rated_voltage=rated, capacitor_series=series.name, bleeder=None,
                bleeder_power_rating=None))
        # a bleeder across every capacitor, each discharging its own capacitor in time (the
        # feeds only help): the dissipation is shared, as builders share it
        cond = self.conditions
        values = parts.e_series(BLEEDER_SERIES, range(2, 8))
        time_allowed = cond.discharge_time_limit * s.margins.bleeder_time_fraction
        for k, node in enumerate(nodes):
            series = parts.find_part("capacitor", node.capacitor_series)
            r_max = transients.bleeder_for(node.capacitance * (1 + series.tolerance.plus), crest,
                                           cond.safe_voltage, time_allowed)
            fitting = values[values <= r_max]
            bleeder = float(fitting.max()) if fitting.size else float(values[0])
            nodes[k] = node.model_copy(update={
                "bleeder": bleeder,
                "bleeder_power_rating": self._resistor_power(crest ** 2 / bleeder)})
        transformer = EquivalentTransformer.model_construct(
            secondary_voltage=v_oc, secondary_resistance=float(built.hv_series_resistance),
            leakage_inductance=float(built.hv_leakage_inductance), rated_current=c.hv_current,
            build=block)
        design = Design.model_construct(mains=self._mains, transformer=transformer,
                                        rectifier=self._rectifiers[c.rectifier], nodes=nodes,
                                        conditions=self.conditions,
                                        parts_files=list(self.spec.parts_files),
                                        transformer_data=self.spec.transformer_data)
        object.__setattr__(design, "_built", built)
        return design

    # ---------------------------------------------------------------- constraints

    @cached_property
    def check_names(self) -> tuple:
        """Names of every assessment check any allowed design can have, from a probe."""
        probes = []
        base = [self.variables[i].lower for i in range(len(self.variables))]
        n = len(self.node_names)
        for j in range(len(self.spec.choices.rectifiers)):
            for kind in ("resistor", "choke"):
                x = np.array(base, float)
                x[4] = j
                for k in range(1, n):
                    opts = self.feed_options[k]
                    pick = [i for i, o in enumerate(opts) if o.kind == kind] or [0]
                    x[5 + 2 * n + k - 1] = pick[0]
                probes.append(x)
        table = assess_many(self.designs(self.decode(np.array(probes))), dynamics=False)
        return tuple(table.ratios.columns)

    def _constraint_info(self):
        s = self.spec
        out = []
        for ns in s.nodes:
            where = "at idle" if ns.at == "idle" else "at full power"
            out.append(ConstraintInfo(f"{ns.name}.dc_voltage.low", f"{ns.name} DC {where} at "
                                      f"least {format_quantity(ns.dc_voltage - ns.window, 'V')}",
                                      ns.window, "V"))
            out.append(ConstraintInfo(f"{ns.name}.dc_voltage.high", f"{ns.name} DC {where} at "
                                      f"most {format_quantity(ns.dc_voltage + ns.window, 'V')}",
                                      ns.window, "V"))
            if ns.ripple is not None or ns.hum is not None:
                limit = (f"{format_quantity(ns.ripple, 'V')} p-p" if ns.ripple is not None
                         else f"{ns.hum:g} dB below its DC")
                out.append(ConstraintInfo(f"{ns.name}.ripple", f"{ns.name} ripple at full power "
                                          f"within {limit}", 1.0, "ratio"))
        if s.sag is not None:
            sg = s.sag
            node = self.node_names[s.sag_node]
            out.append(ConstraintInfo("sag", f"static sag at {node} {100 * sg.target:.3g} % "
                                      f"+/- {100 * sg.tolerance:.3g} %", sg.tolerance, "%"))
            for what in ("attack", "recovery"):
                window = getattr(sg, what)
                if window is None:
                    continue
                if window.min is not None:
                    out.append(ConstraintInfo(f"sag.{what}.min", f"sag {what} time at {node} at "
                                              f"least {format_quantity(window.min, 's')}",
                                              window.min, "s"))
                if window.max is not None:
                    out.append(ConstraintInfo(f"sag.{what}.max", f"sag {what} time at {node} at "
                                              f"most {format_quantity(window.max, 's')}",
                                              window.max, "s"))
        out.append(ConstraintInfo("transformer.buildable", "the transformer can be wound: wire "
                                  "available, stack in range, voltage reachable, design "
                                  "converged", 1.0, "flag"))
        for name in self.node_names:
            out.append(ConstraintInfo(f"{name}.capacitor_made", f"the {name} capacitor value is "
                                      "made at its voltage rating in its series", 1.0, "flag"))
        for name in self.check_names:
            out.append(ConstraintInfo(f"check: {name}", f"{name} within its rating", 1.0, "ratio"))
        out.append(ConstraintInfo("check: other", "any further check within its rating", 1.0,
                                  "ratio"))
        return out

    # ---------------------------------------------------------------- evaluation

    @property
    def needs_sag_dynamics(self) -> bool:
        """Whether the spec sets attack or recovery windows (only then is the sag step run)."""
        sag = self.spec.sag
        return sag is not None and (sag.attack is not None or sag.recovery is not None)

    @cached_property
    def screen(self):
        """The search's screening tier (:class:`optimiser.codesign.screening.Screen`)."""
        from optimiser.codesign.screening import Screen

        return Screen(self)

    #: :meth:`evaluate` gives each row the same result in any batch (see :mod:`optimiser.codesign.nsga`).
    batch_independent = True

    def evaluate(self, X):
        """Objectives and constraints of a population for the search: (F (B, 3), G (B, M)),
        from the screening tier (:mod:`optimiser.screening`). What the search keeps is
        re-assessed in full by :func:`optimise`."""
        return self.screen.evaluate(X)

    def evaluate_full(self, X):
        """Objectives and constraints of a population from the full assessment."""
        scored = self.score(self.designs(self.decode(X)))
        return scored.F, scored.G

    def score(self, designs) -> Scored:
        """Assess, price and score designs (built by :meth:`designs`, or read from files)."""
        s = self.spec
        count = len(designs)
        table = assess_many(designs, dynamics=self.needs_sag_dynamics)
        fr = table.frame

        def columns(name):
            """The column of a figure, worst over a switchable pair's positions: (B, P)."""
            cols = [c for c in fr.columns if c == name or c.endswith("/" + name)]
            if not cols:
                return np.full((count, 1), np.nan)
            return np.column_stack([pd.to_numeric(fr[c], errors="coerce").to_numpy(float)
                                    for c in cols])

        sag_name = self.node_names[s.sag_node]
        figures = {}
        for ns in s.nodes:
            for key in ("idle_voltage", "full_power_voltage", "ripple_pp"):
                figures[f"{ns.name}.{key}"] = columns(f"{ns.name}.{key}")
        figures["static_drop"] = columns(f"{sag_name}.static_drop_percent") / 100.0
        for what in ("attack", "recovery"):
            figures[f"{what}_time"] = columns(f"{sag_name}.{what}_time").astype(float)
        ratios = {name: table.ratios[name].to_numpy(float) for name in table.ratios.columns}
        buildable = np.array([_buildable(d) for d in designs])
        regulation, G = self.constraint_values(figures, buildable, self._made(designs), ratios)

        lines = [self.parts_list(d) for d in designs]
        cost = np.array([sum(line.cost for line in ls) for ls in lines])
        stress = fr["rectifier_stress"].to_numpy(float)
        F = self.objective_values(cost, regulation, stress)
        frame = self._frame(designs, lines, F, G, table)
        return Scored(designs=list(designs), frame=frame, F=F, G=G, table=table)

    @staticmethod
    def objective_values(cost, regulation, stress):
        """F (B, 3) from the objectives' figures; a figure that failed counts as very bad."""
        F = np.column_stack([cost, regulation, stress])
        return np.where(np.isfinite(F), F, 1e6)

    def constraint_values(self, figures, buildable, made, ratios):
        """(regulation (B,), G (B, M)) from the figures of designs.

        Parameters
        ----------
        figures : dict of ndarray (B, P)
            Per switch position (P = 1 for a fixed rectifier; NaN where a design has fewer):
            ``<node>.idle_voltage``, ``<node>.full_power_voltage``, ``<node>.ripple_pp`` at
            nominal mains [V]; ``static_drop`` at the sag node [-]; ``attack_time``,
            ``recovery_time`` [s].
        buildable : ndarray of bool (B,)
        made : ndarray of bool (B, N)
            Each node's capacitor value made at its voltage rating.
        ratios : dict of str -> ndarray (B,)
            Check ratios by check name (NaN where a check does not apply).
        """
        s = self.spec
        count = len(buildable)

        def worst(values):
            with np.errstate(all="ignore"):
                return np.where(np.isnan(values).all(axis=1), np.nan,
                                np.nanmax(np.where(np.isnan(values), -np.inf, values), axis=1))

        g = []
        for ns in s.nodes:
            v = figures[f"{ns.name}.idle_voltage" if ns.at == "idle"
                        else f"{ns.name}.full_power_voltage"]
            g.append(worst((ns.dc_voltage - ns.window - v) / ns.window))
            g.append(worst((v - ns.dc_voltage - ns.window) / ns.window))
            if ns.ripple is not None or ns.hum is not None:
                ripple = figures[f"{ns.name}.ripple_pp"]
                full_v = figures[f"{ns.name}.full_power_voltage"]
                g.append(worst(ripple / ns.ripple_pp_limit(full_v) - 1.0))
        drop = figures["static_drop"]
        if s.sag is not None:
            off = np.abs(drop - s.sag.target)
            regulation = worst(off)
            g.append(worst((off - s.sag.tolerance) / s.sag.tolerance))
            for what in ("attack", "recovery"):
                window = getattr(s.sag, what)
                if window is None:
                    continue
                t = figures[f"{what}_time"]
                if window.min is not None:
                    g.append(worst((window.min - t) / window.min))
                if window.max is not None:
                    g.append(worst((t - window.max) / window.max))
        else:
            regulation = worst(drop)
        g.append(np.where(buildable, 0.0, 1.0))
        for k in range(len(s.nodes)):
            g.append(np.where(made[:, k], -1.0, 1.0))
        known = self.check_names
        missing = np.full(count, np.nan)
        checks = np.column_stack([ratios.get(name, missing) for name in known]) - 1.0
        g.extend(np.where(np.isnan(checks), -1.0, checks).T)
        others = [ratios[c] for c in ratios if c not in known]
        if others:
            g.append(np.nan_to_num(worst(np.column_stack(others)) - 1.0, nan=-1.0))
        else:
            g.append(np.full(count, -1.0))
        G = np.column_stack(g)
        return regulation, np.where(np.isnan(G), 1e6, G)  # a failed figure fails its constraint

    def _made(self, designs):
        out = np.zeros((len(designs), len(self.node_names)), bool)
        for b, d in enumerate(designs):
            for k, node in enumerate(d.nodes):
                series = parts.find_part("capacitor", node.capacitor_series)
                try:
                    r = series.rating(node.rated_voltage)
                except LookupError:
                    continue
                out[b, k] = (r.min_capacitance * (1 - 1e-9) <= node.capacitance
                             <= r.max_capacitance * (1 + 1e-9))
        return out

    def parts_list(self, design):
        """The design's parts list (:func:`optimiser.assessment.bill.parts_list`) with the spec's price
        overrides applied to its rectifier valves and diodes."""
        lines = bill.parts_list(design)
        overrides = {k.casefold(): v for k, v in self.spec.costs.parts.items()}
        if not overrides:
            return lines
        out = []
        for line in lines:
            if line.group == "rectifier":
                for name, price in overrides.items():
                    if line.description.casefold().split(" with ")[0].endswith(" " + name):
                        line = replace(line, unit_cost=price, cost=price * line.quantity,
                                       source="the spec's costs.parts")
            out.append(line)
        return out

    def _frame(self, designs, lines, F, G, table):
        rows = []
        for d, ls in zip(designs, lines):
            t = d.transformer
            td = d.transformer_design
            row = {
                "rectifier": _rectifier_label(d.rectifier),
                "secondary_voltage": t.build.hv.voltage if t.build is not None else np.nan,
                "hv_current_rating": t.rated_current,
                "core": t.build.core if t.build is not None else None,
                "stack": t.build.stack if t.build is not None else np.nan,
                "current_density": t.build.current_density if t.build is not None else np.nan,
                "open_circuit_voltage": t.secondary_voltage,
                "secondary_resistance": t.secondary_resistance,
                "leakage_inductance": t.leakage_inductance,
            }
            for k, node in enumerate(d.nodes):
                row[f"{node.name}.capacitance"] = node.capacitance
                row[f"{node.name}.rated_voltage"] = node.rated_voltage
                row[f"{node.name}.capacitor_series"] = node.capacitor_series
                row[f"{node.name}.esr"] = node.esr
                if node.feed is not None:
                    row[f"{node.name}.feed_resistance"] = node.feed.resistance
                    row[f"{node.name}.feed_inductance"] = node.feed.inductance
                    row[f"{node.name}.feed_rating"] = (node.feed.current_rating
                                                       if node.feed.inductance > 0
                                                       else node.feed.power_rating)
                row[f"{node.name}.bleeder"] = node.bleeder if node.bleeder else np.nan
            groups = {}
            for line in ls:
                groups[line.group] = groups.get(line.group, 0.0) + line.cost
            for group, value in groups.items():
                row[f"cost.{group}"] = value
            if td is not None:
                for key in ("secondary_va", "primary_va", "mass", "temperature_rise",
                            "temperature_rise_limit", "build_ratio", "flux_density",
                            "hv_regulation", "total_loss"):
                    row[f"transformer.{key}"] = float(getattr(td, key))
            rows.append(row)
        mine = pd.DataFrame(rows)
        for i, name in enumerate(OBJECTIVES):
            mine.insert(1 + i, name, F[:, i])
        mine.insert(1 + len(OBJECTIVES), "feasible", np.all(G <= 0, axis=1))
        assessed = table.frame.drop(columns=["rectifier_stress"], errors="ignore")
        checks = table.ratios.add_prefix("check: ")
        return pd.concat([mine, assessed.reset_index(drop=True),
                          checks.reset_index(drop=True)], axis=1)


def _buildable(design) -> bool:
    td = design.transformer_design
    if td is None:
        return True
    return bool(td.wire_available and td.stack_in_range and td.regulation_solvable
                and td.converged)


def _rectifier_label(rectifier) -> str:
    if rectifier.topology == "switchable":
        return "switchable: " + " / ".join(f"{name} {_rectifier_label(p)}"
                                           for name, p in rectifier.positions.items())
    names = " + ".join(str(p) for p in (rectifier.valve, rectifier.diode) if p is not None)
    return f"{rectifier.topology} {names}".strip()


# --------------------------------------------------------------------------------------------
# The whole job: search, re-check the final population, pick the front and its knee


@dataclass(frozen=True)
class Unmet:
    """A constraint that no evaluated design met.

    Attributes
    ----------
    constraint : ConstraintInfo
    best : float
        The least value it reached over the whole search (> 0: missed).
    """

    constraint: ConstraintInfo
    best: float

    @property
    def miss(self) -> str:
        return self.constraint.miss(self.best)


@dataclass(frozen=True)
class Optimisation:
    """The outcome of :func:`optimise`.

    Attributes
    ----------
    spec : Spec
    binding : CoDesign
    search : SearchResult
    scored : Scored
        The full assessment of the search's final population and its archive of the best
        designs found on the way (distinct designs).
    front : ndarray of int
        Rows of ``scored`` that meet every constraint and are non-dominated, by cost.
    knee : int or None
        Row of ``scored`` recommended (the front's knee); None when the front is empty.
    unmet : tuple of Unmet
        Constraints that no design of the final assessment met (the search's final population
        and the best designs it found on the way).
    """

    spec: Spec
    binding: CoDesign
    search: object
    scored: Scored
    front: np.ndarray
    knee: int | None
    unmet: tuple
    robust: object = None  # the front's yield over sampled builds (codesign.robustness)

    @property
    def found(self) -> bool:
        """Whether any design met every constraint."""
        return len(self.front) > 0

    def nearest(self, count=3):
        """The designs that came closest: [(row, [(ConstraintInfo, value) missed])]."""
        violation = np.maximum(self.scored.G, 0.0).sum(axis=1)
        rows = np.argsort(violation, kind="stable")[:count]
        return [(int(r), [(info, float(g)) for info, g in
                          zip(self.binding.constraints, self.scored.G[r]) if g > 0])
                for r in rows]


def reported_front(F, feasible, resolution):
    """Rows of the feasible, non-dominated designs, telling apart only objective differences
    larger than the spec's resolution (of designs that tie, the cheapest is kept); by cost."""
    from optimiser.codesign import nsga as search

    steps = np.array([resolution.cost, resolution.regulation, resolution.rectifier_stress])
    coarse = np.where(steps > 0, np.round(F / np.where(steps > 0, steps, 1.0)) * steps, F)
    order = np.lexsort((F[:, 2], F[:, 1], F[:, 0]))
    rank = np.empty(len(F), int)
    rank[order] = np.arange(len(F))
    rows = np.flatnonzero(feasible)
    rows = rows[np.argsort(rank[rows])]
    front = rows[np.sort(search.non_dominated(coarse[rows]))]
    return front[np.argsort(F[front, 0], kind="stable")]


def optimise(spec: Spec, *, population=None, generations=None, seed=None, workers=None,
             progress=False) -> Optimisation:
    """Search a spec's design space for the Pareto front of cost, regulation and rectifier stress.

    Parameters
    ----------
    spec : Spec
    population, generations, seed, workers : int, optional
        Override the spec's search settings.
    progress : bool
        Show a progress bar on stderr.

    Returns
    -------
    Optimisation
        With an empty front (and ``unmet`` saying why) when no design meets every constraint.
    """
    from optimiser.codesign import nsga as search

    settings = spec.search
    binding = CoDesign(spec)
    binding.screen  # made (and calibrated) before the search, not in its first generation
    result = search.run(binding, population=population or settings.population,
                        generations=generations or settings.generations,
                        seed=settings.seed if seed is None else seed,
                        workers=workers or settings.workers, progress=progress)
    # the search steered by the screen; what it kept is assessed in full, and only that counts
    kept = np.vstack([result.X, result.archive]) if len(result.archive) else result.X
    candidates = list(dict.fromkeys(binding.decode(kept)))
    scored = binding.score(binding.designs(candidates))
    front = reported_front(scored.F, scored.feasible, spec.search.resolution)
    knee = int(front[search.knee(scored.F[front])]) if len(front) else None
    unmet = tuple(Unmet(info, float(best)) for info, best in
                  zip(binding.constraints, scored.G.min(axis=0)) if best > 0)
    from optimiser.codesign.robustness import assess_robustness

    return Optimisation(spec=spec, binding=binding, search=result, scored=scored, front=front,
                        knee=knee, unmet=unmet,
                        robust=assess_robustness(binding, scored, front, spec))
