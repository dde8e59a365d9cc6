"""The binding of a spec to the search: decision variables, decoding, figures, objectives, limits.

A population matrix ``X`` (one row per candidate, float columns; integer columns hold indices)
is decoded into concrete :class:`~optimiser.design.Design` objects, solved by the steady-state
simulator at four operating points (nominal and high mains, idle and full power), and scored:

- objectives ``F`` = [cost, regulation, rectifier_stress], all minimised;
- constraints ``G`` (feasible when every column is <= 0): each node's DC voltage inside its
  window, ripple inside its limit, the sag inside its tolerance, the solution converged, and every
  check ratio (actual over rated, at the worst corner) at most 1.

Every constraint column is scaled so that 1.0 means "missed by the whole allowance" (a window's
half-width, a limit's own size); :attr:`CoDesign.constraints` says how to turn a value back into
volts, percent or a ratio for the report.

Interim parts of this module, to be replaced when the lead's ``assessment`` module and the
``transformer`` model land (each is marked INTERIM below): the rating checks, computed here from
the steady-state figures and the parts data; the switch-on figures (the no-load capacitor voltage
and the surge into a discharged reservoir, both simple upper bounds); and the transformer's size
and price, from the core-geometry scaling in ``data/prices.yaml``.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from functools import cached_property
from pathlib import Path

import numpy as np
import pandas as pd
import yaml

from . import evaluation, parts
from .design import (
    Design,
    EquivalentTransformer,
    Feed,
    Load,
    Mains,
    Node,
    Rectifier,
)
from .evaluation import Batch, figures, solve_batch
from .schema import Mass, Strict
from .search import Variable
from .spec import Spec
from .units import format_quantity

__all__ = [
    "OBJECTIVES",
    "ConstraintInfo",
    "Candidate",
    "Assessment",
    "PriceModel",
    "load_prices",
    "transformer_estimate",
    "CoDesign",
    "SpecMismatch",
]

OBJECTIVES = ("cost", "regulation", "rectifier_stress")
PRICES_FILE = Path(__file__).parent / "data" / "prices.yaml"
#: Sine-wave form factor of the EMF equation, 4.44 = 2π/√2. Source: the transformer EMF
#: equation V = 4.44·f·N·B·A (any transformer text, e.g. McLyman 4th ed. ch. 7).
FORM_FACTOR = 2.0 * math.pi / math.sqrt(2.0)
#: Mass of geometrically similar cores grows as Kg^(3/5): Kg goes as length^5, mass as length^3.
MASS_EXPONENT = 3.0 / 5.0


class SpecMismatch(ValueError):
    """A design that does not fit the spec's choices (unknown rectifier, capacitor, feed ...)."""


# --------------------------------------------------------------------------------------------
# Prices


class TransformerEstimate(Strict):
    efficiency: float
    reference_core_geometry_cm5: float
    reference_mass: Mass
    base: float
    labour_per_winding: float
    price_per_kg: float
    provenance: str


class _Price(Strict):
    price: float
    provenance: str


class _PartPrice(_Price):
    kind: str
    name: str


class _PriceFile(Strict):
    provenance: str
    transformer_estimate: TransformerEstimate
    valve_socket: _Price
    parts: list[_PartPrice]


@dataclass(frozen=True)
class PriceModel:
    """Prices in cost units: the transformer estimate's settings and part prices by name.

    Attributes
    ----------
    transformer : TransformerEstimate
    valve_socket : float
    parts : dict
        ``(kind, casefolded name) -> price``. [cost units]
    overrides : dict
        ``casefolded name -> price`` from the spec, applied to any kind. [cost units]
    """

    transformer: TransformerEstimate
    valve_socket: float
    parts: dict
    overrides: dict = field(default_factory=dict)

    def price(self, kind: str, name: str, default=None) -> float:
        """Price of a named part: the spec's override, else the price file, else ``default``."""
        key = name.casefold()
        if key in self.overrides:
            return self.overrides[key]
        if (kind, key) in self.parts:
            return self.parts[(kind, key)]
        if default is not None:
            return default
        raise LookupError(f"no price for {kind} {name!r} in {PRICES_FILE.name}; give one in the "
                          f"spec under costs.parts ({name}: <cost units>)")


def load_prices(spec: Spec | None = None, path=PRICES_FILE) -> PriceModel:
    """The bundled price model with a spec's ``costs`` overrides applied."""
    data = yaml.safe_load(Path(path).read_text(encoding="utf-8"))
    model = _PriceFile.model_validate(data)
    table = {(p.kind, p.name.casefold()): p.price for p in model.parts}
    tx = model.transformer_estimate
    overrides = {}
    if spec is not None:
        overrides = {k.casefold(): v for k, v in spec.costs.parts.items()}
        update = {k: v for k, v in spec.costs.transformer.model_dump().items() if v is not None}
        tx = tx.model_copy(update=update)
    return PriceModel(transformer=tx, valve_socket=model.valve_socket.price, parts=table,
                      overrides=overrides)


def transformer_estimate(hv_va, copper_loss, other_va, windings, frequency, max_flux_density,
                         prices: TransformerEstimate):
    """INTERIM size and price of the power transformer from its VA and HV regulation.

    Parameters
    ----------
    hv_va : array_like
        Apparent power of the HV winding (V_rms · I_rms, both halves for centre-tap). [VA]
    copper_loss : array_like
        Copper loss of the HV conducting path (winding plus primary share). [W]
    other_va : array_like
        Apparent power of the heater and auxiliary windings. [VA]
    windings : array_like
        Number of windings, the primary counted. [-]
    frequency : float
        Mains frequency. [Hz]
    max_flux_density : float
        Peak flux density in the core. [T]
    prices : TransformerEstimate

    Returns
    -------
    core_geometry : ndarray
        Kg. [cm^5]
    mass : ndarray
        Estimated mass. [kg]
    cost : ndarray
        Estimated price. [cost units]

    References
    ----------
    .. [1] C. W. T. McLyman, Transformer and Inductor Design Handbook, 4th ed., CRC Press,
       2011, ch. 7 (core geometry Kg = Pt / (2·Ke·alpha), Ke = 0.145·Kf²·f²·Bm²·1e-4).
    """
    hv_va = np.asarray(hv_va, float)
    alpha = 100.0 * np.asarray(copper_loss, float) / np.maximum(hv_va, 1e-9)  # percent
    alpha = np.maximum(alpha, 1e-3)
    pt = (hv_va + np.asarray(other_va, float)) * (1.0 + 1.0 / prices.efficiency)
    ke = 0.145 * FORM_FACTOR ** 2 * frequency ** 2 * max_flux_density ** 2 * 1e-4
    kg = pt / (2.0 * ke * alpha)
    mass = prices.reference_mass * (kg / prices.reference_core_geometry_cm5) ** MASS_EXPONENT
    cost = prices.base + prices.labour_per_winding * np.asarray(windings, float) \
        + prices.price_per_kg * mass
    return kg, mass, cost


# --------------------------------------------------------------------------------------------
# Results


@dataclass(frozen=True)
class ConstraintInfo:
    """One constraint column of G.

    Attributes
    ----------
    name : str
        E.g. ``"plates.dc_voltage.low"`` or ``"check: valve peak plate current"``.
    description : str
        What it asks, for people.
    scale : float
        ``g · scale`` is the miss in ``unit`` (for a ratio check, ``g + 1`` is the ratio).
    unit : str
        ``"V"``, ``"%"``, or ``"ratio"``.
    """

    name: str
    description: str
    scale: float
    unit: str

    def miss(self, g: float) -> str:
        """How far a constraint value is from being met, in the constraint's own terms."""
        if self.unit == "ratio":
            return f"ratio {g + 1.0:.3g} (limit 1; {100 * g:.3g} % over)"
        if self.unit == "%":
            return f"{100 * g * self.scale:.3g} percentage points"
        if self.unit == "converged":
            return "the steady-state solution did not converge"
        return f"{format_quantity(g * self.scale, self.unit)}"


@dataclass(frozen=True)
class Candidate:
    """The decoded choices of one design.

    Attributes
    ----------
    secondary_voltage : float
        HV secondary, RMS open circuit at nominal mains (per half for centre-tap). [V]
    winding_resistance : float
        Series resistance per conducting path, winding plus primary referred. [ohm]
    rectifier : int
        Index into ``spec.choices.rectifiers``.
    capacitance : tuple of float
        Per node. [F]
    feeds : tuple of int
        Per node after the first, index into :attr:`CoDesign.feed_options`.
    """

    secondary_voltage: float
    winding_resistance: float
    rectifier: int
    capacitance: tuple
    feeds: tuple


@dataclass(frozen=True)
class Assessment:
    """Figures, objectives and constraints of a list of designs.

    Attributes
    ----------
    candidates : list of Candidate
    designs : list of Design
        As written to design files (idle and full-power loads, nominal mains).
    frame : pandas.DataFrame
        One row per design: the variables, the objectives, the nominal full-power figures named as
        :func:`~optimiser.evaluation.evaluate_many` names them, idle and worst-corner figures,
        costs, and ``check: <name>`` ratio columns.
    F : ndarray (B, 3)
        cost [cost units], regulation [-], rectifier_stress [-].
    G : ndarray (B, M)
        Constraint values, <= 0 feasible.
    check_names : tuple of str
    check_ratio : ndarray (B, K)
        Actual over rated at the worst corner, NaN where not applicable.
    check_value, check_limit : ndarray (B, K)
        The worst value and its limit, in SI units (``check_units`` says which).
    check_units : tuple of str
    """

    candidates: list
    designs: list
    frame: pd.DataFrame
    F: np.ndarray
    G: np.ndarray
    check_names: tuple
    check_ratio: np.ndarray
    check_value: np.ndarray
    check_limit: np.ndarray
    check_units: tuple

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

    @property
    def label(self) -> str:
        if self.kind == "choke":
            return f"choke {self.choke}"
        return f"resistor {format_quantity(self.resistance, 'ohm')}"


# --------------------------------------------------------------------------------------------
# The binding


def _sig(value, digits=3):
    """Round to significant figures (so a written design file reproduces the value exactly)."""
    value = np.asarray(value, float)
    with np.errstate(divide="ignore"):
        exponent = np.floor(np.log10(np.abs(np.where(value == 0, 1.0, value))))
    factor = 10.0 ** (digits - 1 - exponent)
    return np.round(value * factor) / factor


def _q(value, unit):
    """A unit string that reads back to the same float (6 significant figures)."""
    return format_quantity(float(value), unit, digits=6)


class CoDesign:
    """One spec bound to the search: variables, decoding, assessment, objectives, constraints.

    Parameters
    ----------
    spec : Spec
    prices : PriceModel, optional
        Default: the bundled prices with the spec's overrides.
    steps_per_half_cycle : int, optional
        Steady-state solver resolution; default the spec's search setting.
    """

    objective_names = OBJECTIVES

    def __init__(self, spec: Spec, prices: PriceModel | None = None,
                 steps_per_half_cycle: int | None = None):
        self.spec = spec
        self.prices = prices or load_prices(spec)
        self.steps = steps_per_half_cycle or spec.search.steps_per_half_cycle
        c = spec.choices
        self.node_names = [n.name for n in spec.nodes]
        n_nodes = len(spec.nodes)
        vr = c.secondary_voltage
        self.voltage_grid = vr.min + vr.step * np.arange(int(math.floor((vr.max - vr.min)
                                                                        / vr.step + 1e-9)) + 1)
        self.capacitor_choice = [c.reservoir] + [c.filter] * (n_nodes - 1)
        self.capacitor_values = [np.array(ch.values()) for ch in self.capacitor_choice]
        self.feed_options = [[]]
        for name in self.node_names[1:]:
            opts = spec.choices.feeds[name]
            options = []
            for choke in opts.chokes:
                p = parts.find_part("choke", choke)
                options.append(FeedOption("choke", p.dc_resistance, p.inductance, p.name))
            if opts.resistance is not None:
                options += [FeedOption("resistor", r) for r in opts.resistance.values()]
            self.feed_options.append(options)
        self._esr_cache = {}
        self._node_cache = {}
        self._mains = Mains.model_construct(voltage=spec.mains.voltage,
                                            frequency=spec.mains.frequency)
        self._rectifiers = [Rectifier.model_construct(topology=o.topology, diode=o.diode,
                                                      valve=o.valve) for o in c.rectifiers]
        self._rectifier_tables()
        self._part_tables()
        self.variables = self._variables()
        self.constraints = self._constraint_info()
        self.constraint_names = [ci.name for ci in self.constraints]

    # ---------------------------------------------------------------- variables

    def _variables(self):
        c = self.spec.choices
        out = [
            Variable("secondary_voltage", 0, len(self.voltage_grid) - 1, integer=True),
            Variable("winding_resistance", math.log10(c.winding_resistance.min),
                     math.log10(c.winding_resistance.max)),
            Variable("rectifier", 0, len(c.rectifiers) - 1, integer=True),
        ]
        for name, values in zip(self.node_names, self.capacitor_values):
            out.append(Variable(f"{name}.capacitance", 0, len(values) - 1, integer=True))
        for name, options in zip(self.node_names[1:], self.feed_options[1:]):
            out.append(Variable(f"{name}.feed", 0, len(options) - 1, integer=True))
        return out

    def decode(self, X) -> list[Candidate]:
        """Candidates from a population matrix (integer columns are taken as indices)."""
        X = np.atleast_2d(np.asarray(X, float))
        n = len(self.node_names)
        iv = np.clip(np.rint(X[:, 0]).astype(int), 0, len(self.voltage_grid) - 1)
        volts = self.voltage_grid[iv]
        ohms = _sig(10.0 ** X[:, 1], 3)
        rect = np.clip(np.rint(X[:, 2]).astype(int), 0, len(self.spec.choices.rectifiers) - 1)
        caps = [self.capacitor_values[k][np.clip(np.rint(X[:, 3 + k]).astype(int), 0,
                                                 len(self.capacitor_values[k]) - 1)]
                for k in range(n)]
        feeds = [np.clip(np.rint(X[:, 3 + n + k - 1]).astype(int), 0,
                         len(self.feed_options[k]) - 1) for k in range(1, n)]
        return [Candidate(float(volts[b]), float(ohms[b]), int(rect[b]),
                          tuple(float(caps[k][b]) for k in range(n)),
                          tuple(int(f[b]) for f in feeds)) for b in range(X.shape[0])]

    def encode(self, candidate: Candidate) -> np.ndarray:
        """The population row of a candidate (the inverse of :meth:`decode`)."""
        row = [int(np.argmin(np.abs(self.voltage_grid - candidate.secondary_voltage))),
               math.log10(candidate.winding_resistance), candidate.rectifier]
        for k, c in enumerate(candidate.capacitance):
            row.append(int(np.argmin(np.abs(np.log(self.capacitor_values[k] / c)))))
        row += list(candidate.feeds)
        return np.array(row, float)

    def esr(self, node: int, capacitance: float) -> float:
        """ESR used for a node's capacitor: the series' worst tan δ at the ripple frequency. [ohm]

        The ripple fundamental of a full-wave rectifier is twice the mains frequency.
        ESR = tan δ / (2π f C) (IEC 60384-4); the largest tan δ over the allowed ratings is
        taken so that the rating chosen afterwards can only be better. Rounded to 3 significant
        figures so that a written design file holds exactly the value simulated.
        """
        key = (node, capacitance)
        if key not in self._esr_cache:
            choice = self.capacitor_choice[node]
            series = parts.find_part("capacitor", choice.series)
            tan_delta = max([series.tan_delta] + [r.tan_delta for r in choice.ratings()
                                                  if r.tan_delta is not None])
            f = 2.0 * self.spec.mains.frequency
            self._esr_cache[key] = float(_sig(tan_delta / (2 * math.pi * f * capacitance), 3))
        return self._esr_cache[key]

    def _node(self, k, capacitance, feed_index, loads):
        key = (k, capacitance, feed_index, loads)
        node = self._node_cache.get(key)
        if node is None:
            ns = self.spec.nodes[k]
            if loads == "spec":
                load = Load.model_construct(current=None, resistance=None,
                                            idle_current=ns.idle_current,
                                            full_power_current=ns.full_power_current)
            else:
                current = ns.idle_current if loads == "idle" else ns.full_power_current
                load = Load.model_construct(current=current, resistance=None, idle_current=None,
                                            full_power_current=None)
            feed = None
            if k > 0:
                fo = self.feed_options[k][feed_index]
                feed = Feed.model_construct(resistance=fo.resistance, inductance=fo.inductance)
            node = Node.model_construct(name=ns.name, capacitance=capacitance,
                                        esr=self.esr(k, capacitance), feed=feed, load=load)
            self._node_cache[key] = node
        return node

    def design(self, candidate: Candidate, loads="spec") -> Design:
        """The concrete supply of a candidate.

        Parameters
        ----------
        loads : {"spec", "idle", "full"}
            "spec": idle and full-power currents, as a design file holds them; "idle"/"full":
            constant-current loads at that level.
        """
        s = self.spec
        opt = s.choices.rectifiers[candidate.rectifier]
        nodes = [self._node(k, candidate.capacitance[k],
                            candidate.feeds[k - 1] if k else None, loads)
                 for k in range(len(s.nodes))]
        return Design.model_construct(
            mains=self._mains,
            transformer=EquivalentTransformer.model_construct(
                secondary_voltage=candidate.secondary_voltage,
                secondary_resistance=candidate.winding_resistance, leakage_inductance=0.0),
            rectifier=self._rectifiers[candidate.rectifier],
            nodes=nodes)

    def candidate_of(self, design: Design) -> Candidate:
        """The choices behind a design (e.g. one read back from a design file).

        Raises
        ------
        SpecMismatch
            If the design is not one the spec's choices allow.
        """
        s = self.spec
        if [n.name for n in design.nodes] != self.node_names:
            raise SpecMismatch(f"the design's nodes {[n.name for n in design.nodes]} are not the "
                               f"spec's {self.node_names}")
        r = design.rectifier
        key = (r.topology, r.diode if isinstance(r.diode, str) else None,
               r.valve if isinstance(r.valve, str) else None)
        matches = [j for j, o in enumerate(s.choices.rectifiers)
                   if (o.topology, o.diode, o.valve) == key]
        if not matches:
            raise SpecMismatch(f"rectifier {key} is not among the spec's rectifiers")
        feeds = []
        for k, node in enumerate(design.nodes[1:], start=1):
            found = [j for j, fo in enumerate(self.feed_options[k])
                     if math.isclose(fo.resistance, node.feed.resistance, rel_tol=1e-6)
                     and math.isclose(fo.inductance, node.feed.inductance, rel_tol=1e-6,
                                      abs_tol=1e-12)]
            if not found:
                raise SpecMismatch(f"node {node.name}: feed {node.feed} is not among the options")
            feeds.append(found[0])
        return Candidate(design.transformer.secondary_voltage,
                         design.transformer.secondary_resistance, matches[0],
                         tuple(n.capacitance for n in design.nodes), tuple(feeds))

    # ---------------------------------------------------------------- parts tables

    def _rectifier_tables(self):
        """Per rectifier option: counts, ratings (NaN where not applicable) and prices."""
        opts = self.spec.choices.rectifiers
        nan = math.nan
        t = {k: np.full(len(opts), nan) for k in (
            "diodes", "valves", "v_rrm", "i_f_avg", "i_fsm", "diode_rs", "max_piv", "max_peak",
            "max_dc", "max_c", "max_vrms", "heater_va", "price", "silicon_only")}
        self._plate_impedance = []
        for j, o in enumerate(opts):
            diodes = {"bridge": 4, "hybrid-bridge": 2, "centre-tap": 2}[o.topology] \
                if o.diode else 0
            t["diodes"][j] = diodes
            t["valves"][j] = 1 if o.valve else 0
            t["silicon_only"][j] = 0 if o.valve else 1
            price = 0.0
            if o.diode:
                d = parts.find_part("diode", o.diode)
                t["v_rrm"][j], t["i_f_avg"][j], t["i_fsm"][j] = d.v_rrm, d.i_f_avg, d.i_fsm
                t["diode_rs"][j] = d.series_resistance
                price += diodes * self.prices.price("diode", d.name)
            impedance = None
            if o.valve:
                v = parts.find_part("valve", o.valve)
                t["max_piv"][j], t["max_peak"][j], t["max_dc"][j] = (
                    v.max_piv, v.max_peak_current, v.max_dc_current)
                t["max_c"][j] = v.max_input_capacitance or nan
                if o.topology == "centre-tap":
                    t["max_vrms"][j] = v.max_plate_voltage_rms or nan
                t["heater_va"][j] = v.heater_voltage * v.heater_current
                price += self.prices.price("valve", v.name) + self.prices.valve_socket
                impedance = v.min_plate_impedance_at if v.min_plate_impedance else None
            else:
                t["heater_va"][j] = 0.0
            t["price"][j] = price
            self._plate_impedance.append(impedance)
        self.rect = t

    def _part_tables(self):
        names = self.spec.choices.resistor_ratings
        catalogue = parts.load_catalogue("resistor")
        classes = [catalogue[n] if n in catalogue else parts.find_part("resistor", n)
                   for n in names] if names else list(catalogue.values())
        classes.sort(key=lambda p: self.prices.price("resistor", p.name, p.cost))
        self.resistor_classes = classes
        amb = self.spec.ambient
        self.res = {
            "power": np.array([p.power_at(amb) for p in classes]),
            "max_v": np.array([p.max_working_voltage for p in classes]),
            "r_min": np.array([p.resistance_range.min for p in classes]),
            "r_max": np.array([p.resistance_range.max for p in classes]),
            "cost": np.array([self.prices.price("resistor", p.name, p.cost) for p in classes]),
        }
        self.feed_tables = [None]
        for options in self.feed_options[1:]:
            chokes = [parts.find_part("choke", o.choke) if o.kind == "choke" else None
                      for o in options]
            self.feed_tables.append({
                "resistance": np.array([o.resistance for o in options]),
                "is_choke": np.array([o.kind == "choke" for o in options]),
                "rated_current": np.array([p.rated_current if p else np.nan for p in chokes]),
                "cost": np.array([self.prices.price("choke", p.name, p.cost) if p else 0.0
                                  for p in chokes]),
            })
        self.cap_tables = []
        for choice in self.capacitor_choice:
            series = parts.find_part("capacitor", choice.series)
            ratings = choice.ratings()
            self.cap_tables.append({
                "series": series,
                "rated": np.array([r.rated for r in ratings]),
                "surge": np.array([r.surge for r in ratings]),
                "c_min": np.array([r.min_capacitance for r in ratings]),
                "c_max": np.array([r.max_capacitance for r in ratings]),
            })

    # ---------------------------------------------------------------- constraints

    @cached_property
    def check_names(self) -> tuple:
        names = ["diode PIV", "diode average current", "diode switch-on surge", "valve PIV",
                 "valve peak plate current", "valve DC current", "valve reservoir capacitance",
                 "valve plate-supply impedance", "valve plate voltage"]
        for k, name in enumerate(self.node_names):
            names += [f"{name} capacitor voltage", f"{name} capacitor switch-on voltage",
                      f"{name} capacitor ripple current"]
            if k > 0:
                names.append(f"{name} feed rating")
        return tuple(names)

    RECTIFIER_CHECKS = 9  # the first checks are the rectifier's: their worst is the stress

    def _constraint_info(self):
        out = []
        for ns in self.spec.nodes:
            where = "at idle" if ns.at == "idle" else "at full power"
            out.append(ConstraintInfo(f"{ns.name}.dc_voltage.low",
                                      f"{ns.name} DC {where} at least "
                                      f"{format_quantity(ns.dc_voltage - ns.window, 'V')}",
                                      ns.window, "V"))
            out.append(ConstraintInfo(f"{ns.name}.dc_voltage.high",
                                      f"{ns.name} DC {where} at most "
                                      f"{format_quantity(ns.dc_voltage + ns.window, 'V')}",
                                      ns.window, "V"))
            if ns.ripple is not None or ns.hum is not None:
                limit = (f"{format_quantity(ns.ripple, 'V')} p-p" if ns.ripple is not None
                         else f"{ns.hum:g} dB below DC")
                out.append(ConstraintInfo(f"{ns.name}.ripple", f"{ns.name} ripple at full "
                                          f"power within {limit}", 1.0, "ratio"))
        if self.spec.sag is not None:
            sg = self.spec.sag
            out.append(ConstraintInfo("sag", f"sag at {self.node_names[self.spec.sag_node]} "
                                      f"{100 * sg.target:.3g} % +/- {100 * sg.tolerance:.3g} %",
                                      sg.tolerance, "%"))
        out.append(ConstraintInfo("converged", "steady-state solution converged", 1.0,
                                  "converged"))
        for name in self.check_names:
            out.append(ConstraintInfo(f"check: {name}", f"{name} within its rating", 1.0,
                                      "ratio"))
        return out

    # ---------------------------------------------------------------- evaluation

    def evaluate(self, X):
        """Objectives and constraints of a population: (F (B, 3), G (B, M))."""
        a = self.assess(self.decode(X))
        return a.F, a.G

    def assess(self, candidates, designs=None, steps=None) -> Assessment:
        """Solve and score candidates (see the module docstring).

        Parameters
        ----------
        candidates : list of Candidate
        designs : list of Design, optional
            Their designs, if already built (e.g. read from files).
        steps : int, optional
            Solver steps per half mains cycle; default this binding's setting.
        """
        steps = steps or self.steps
        s = self.spec
        count = len(candidates)
        n = len(s.nodes)
        if designs is None:
            designs = [self.design(c) for c in candidates]
        # four operating points per candidate, solved together: nominal/high x idle/full
        high = 1.0 + s.mains.tolerance
        points = (("idle", 1.0), ("full", 1.0), ("idle", high), ("full", high))
        variants, scales = [], []
        for loads, scale in points:
            variants += [self.design(c, loads) for c in candidates]
            scales += [scale] * count
        figs = _solve(variants, np.array(scales), steps)
        op = {name: {k: v[i * count:(i + 1) * count] for k, v in figs.items()}
              for i, name in enumerate(("nominal_idle", "nominal_full", "high_idle", "high_full"))}
        vsec = np.array([c.secondary_voltage for c in candidates])
        rw = np.array([c.winding_resistance for c in candidates])
        rect = np.array([c.rectifier for c in candidates], dtype=int)
        cap = np.array([c.capacitance for c in candidates]).reshape(count, n)
        idle = np.array([ns.idle_current for ns in s.nodes])
        full = np.array([ns.full_power_current for ns in s.nodes])
        downstream = np.cumsum(full[::-1])[::-1]  # DC through each node's feed [A]
        rt = {k: v[rect] for k, v in self.rect.items()}
        v_peak_high = math.sqrt(2.0) * vsec * high

        # ---- INTERIM rating checks (to be replaced by optimiser.assessment.assess_many)
        names = self.check_names
        value = np.full((count, len(names)), np.nan)
        limit = np.full((count, len(names)), np.nan)
        ratio = np.full((count, len(names)), np.nan)
        check_units = [""] * len(names)

        def put(name, val, lim, unit, rat=None):
            """One check: worst value, its limit, and actual-over-rated (NaN: not applicable)."""
            j = names.index(name)
            val = np.broadcast_to(np.asarray(val, float), (count,))
            lim = np.broadcast_to(np.asarray(lim, float), (count,))
            with np.errstate(invalid="ignore", divide="ignore"):
                rat = val / lim if rat is None else rat
            applicable = np.isfinite(val) & np.isfinite(lim)
            value[:, j] = np.where(applicable, val, np.nan)
            limit[:, j] = np.where(applicable, lim, np.nan)
            ratio[:, j] = np.where(applicable, rat, np.nan)
            check_units[j] = unit

        piv = op["high_idle"]["piv"]
        si = rt["diodes"] > 0
        put("diode PIV", np.where(si, piv, np.nan), rt["v_rrm"], "V")
        put("diode average current", np.where(si, op["high_full"]["rectifier_average_current"],
                                              np.nan), rt["i_f_avg"], "A")
        # a discharged reservoir is a short at switch-on: only the path resistance limits the
        # first peak (common practice, no source); applies where silicon conducts at once
        esr0 = np.array([self.esr(0, c) for c in cap[:, 0]])
        surge = v_peak_high / (rw + esr0 + np.nan_to_num(rt["diode_rs"]) * np.where(
            rt["diodes"] == 4, 2, 1))
        put("diode switch-on surge", np.where(rt["silicon_only"] > 0, surge, np.nan),
            rt["i_fsm"], "A")
        valve = rt["valves"] > 0
        put("valve PIV", np.where(valve, piv, np.nan), rt["max_piv"], "V")
        put("valve peak plate current", np.where(valve, op["high_full"]["rectifier_peak_current"],
                                                 np.nan), rt["max_peak"], "A")
        put("valve DC current", np.where(valve, full.sum(), np.nan), rt["max_dc"], "A")
        tol_plus = self.cap_tables[0]["series"].tolerance.plus
        put("valve reservoir capacitance", np.where(valve, cap[:, 0] * (1 + tol_plus), np.nan),
            rt["max_c"], "F")
        z_min = np.full(count, np.nan)
        for j, fn in enumerate(self._plate_impedance):
            if fn is not None:
                mask = rect == j
                z_min[mask] = fn(vsec[mask] * high)
        # a minimum, not a maximum: the plate-supply impedance must be at least z_min
        put("valve plate-supply impedance", rw, z_min, "ohm (minimum)", rat=z_min / rw)
        put("valve plate voltage", np.where(valve, vsec * high, np.nan), rt["max_vrms"], "V")

        cap_cost = np.zeros(count)
        cap_labels = [[None] * count for _ in range(n)]
        rows = np.arange(count)
        for k, ns in enumerate(s.nodes):
            table = self.cap_tables[k]
            steady = op["high_idle"]["dc_voltage"][:, k] + 0.5 * op["high_idle"]["ripple_pp"][:, k]
            switch_on = v_peak_high  # INTERIM: the no-load peak while the output valves are cold
            i_rip = op["high_full"]["capacitor_rms_current"][:, k]
            c = cap[:, k][:, None]
            rated = table["rated"][None, :]
            made = (c >= table["c_min"][None, :] * (1 - 1e-9)) & (
                c <= table["c_max"][None, :] * (1 + 1e-9))
            ripple_rating = table["series"].ripple_rating(c, rated)
            worst = np.maximum(np.maximum(steady[:, None] / rated,
                                          switch_on[:, None] / table["surge"][None, :]),
                               i_rip[:, None] / ripple_rating)
            worst = np.where(made, worst, np.inf)
            ok = worst <= 1.0
            # the lowest (cheapest) rating that meets every check, else the nearest miss
            pick = np.where(ok.any(axis=1), np.argmax(ok, axis=1), np.argmin(worst, axis=1))
            put(f"{ns.name} capacitor voltage", steady, table["rated"][pick], "V")
            put(f"{ns.name} capacitor switch-on voltage", switch_on, table["surge"][pick], "V")
            put(f"{ns.name} capacitor ripple current", i_rip, ripple_rating[rows, pick], "A")
            cap_cost += table["series"].cost(cap[:, k], table["rated"][pick])
            for b in range(count):
                cap_labels[k][b] = (f"{format_quantity(cap[b, k], 'F')} "
                                    f"{format_quantity(table['rated'][pick[b]], 'V')} "
                                    f"{table['series'].name}")

        feed_cost = np.zeros(count)
        feed_labels = [[None] * count for _ in range(n)]
        factor = s.margins.resistor_power_factor
        res = self.res
        for k in range(1, n):
            opts = self.feed_options[k]
            idx = np.array([c.feeds[k - 1] for c in candidates], dtype=int)
            table = self.feed_tables[k]
            r = table["resistance"][idx]
            is_choke = table["is_choke"][idx]
            i_dc = downstream[k]
            # resistor: the cheapest rating class whose derated power, range and working voltage
            # fit, run at no more than 1/factor of its rating (common practice, no source: "run
            # power resistors at about half their rating")
            power = factor * i_dc ** 2 * r
            ratio_p = power[:, None] / res["power"][None, :]
            ratio_v = (i_dc * r)[:, None] / res["max_v"][None, :]
            in_range = (r[:, None] >= res["r_min"][None, :]) & (r[:, None] <= res["r_max"][None, :])
            worst = np.where(in_range, np.maximum(ratio_p, ratio_v), np.inf)
            ok = worst <= 1.0
            pick = np.where(ok.any(axis=1), np.argmax(ok, axis=1), np.argmin(worst, axis=1))
            rating = table["rated_current"][idx]
            put(f"{s.nodes[k].name} feed rating", np.where(is_choke, i_dc, power),
                np.where(is_choke, rating, res["power"][pick]), "A (choke) or W (resistor)",
                rat=np.where(is_choke, i_dc / rating, worst[rows, pick]))
            feed_cost += np.where(is_choke, table["cost"][idx], res["cost"][pick])
            for b in range(count):
                feed_labels[k][b] = opts[idx[b]].label + (
                    "" if is_choke[b] else f" {self.resistor_classes[pick[b]].name}")
        check_units = tuple(check_units)

        # ---- objectives
        ni, nf = op["nominal_idle"], op["nominal_full"]
        sag_k = s.sag_node
        drop = (ni["dc_voltage"] - nf["dc_voltage"]) / ni["dc_voltage"]
        if s.sag is not None:
            regulation = np.abs(drop[:, sag_k] - s.sag.target)
        else:
            regulation = drop[:, sag_k]
        with np.errstate(invalid="ignore"):
            stress = np.nanmax(np.where(np.isnan(ratio[:, :self.RECTIFIER_CHECKS]), -np.inf,
                                        ratio[:, :self.RECTIFIER_CHECKS]), axis=1)
        # INTERIM transformer estimate
        ct = np.array([s.choices.rectifiers[j].topology == "centre-tap" for j in rect])
        hv_va = vsec * nf["secondary_rms_current"] * np.where(ct, 2.0, 1.0)
        other_va = sum(w.voltage * w.current for w in s.heaters + s.auxiliary) + rt["heater_va"]
        windings = 2 + len(s.heaters) + len(s.auxiliary) + rt["valves"]
        kg, mass, tx_cost = transformer_estimate(
            hv_va, nf["winding_loss"], other_va, windings, s.mains.frequency,
            s.transformer.max_flux_density, self.prices.transformer)
        cost = tx_cost + rt["price"] + cap_cost + feed_cost
        F = np.column_stack([cost, regulation, stress])

        # ---- constraints
        g = []
        for k, ns in enumerate(s.nodes):
            v = (ni if ns.at == "idle" else nf)["dc_voltage"][:, k]
            g.append((ns.dc_voltage - ns.window - v) / ns.window)
            g.append((v - ns.dc_voltage - ns.window) / ns.window)
            if ns.ripple is not None or ns.hum is not None:
                g.append(nf["ripple_pp"][:, k] / ns.ripple_pp_limit(nf["dc_voltage"][:, k]) - 1.0)
        if s.sag is not None:
            g.append((np.abs(drop[:, sag_k] - s.sag.target) - s.sag.tolerance) / s.sag.tolerance)
        converged = np.ones(count, bool)
        for o in op.values():
            converged &= o["converged"].astype(bool)
        g.append(np.where(converged, -1.0, 1.0))
        g += list((np.nan_to_num(ratio, nan=0.0) - 1.0).T)
        G = np.column_stack(g)
        G = np.where(np.isfinite(G), G, 1e6)
        F = np.where(np.isfinite(F), F, 1e6)

        # ---- the frame
        cols = {
            "secondary_voltage": vsec,
            "winding_resistance": rw,
            "rectifier": [s.choices.rectifiers[j].label for j in rect],
        }
        for k, name in enumerate(self.node_names):
            cols[f"{name}.capacitance"] = cap[:, k]
            cols[f"{name}.capacitor"] = cap_labels[k]
            if k > 0:
                cols[f"{name}.feed"] = feed_labels[k]
        cols.update({"cost": cost, "regulation": regulation, "rectifier_stress": stress,
                     "feasible": np.all(G <= 0, axis=1)})
        for f in evaluation.SCALARS:
            cols[f] = nf[f]
        for k, name in enumerate(self.node_names):
            for f in evaluation.NODE_FIGURES:
                cols[f"{name}.{f}"] = nf[f][:, k]
            cols[f"{name}.dc_voltage_idle"] = ni["dc_voltage"][:, k]
            cols[f"{name}.drop"] = drop[:, k]
            cols[f"{name}.dc_voltage_high_mains_idle"] = op["high_idle"]["dc_voltage"][:, k]
        cols.update({
            "worst.piv": piv,
            "worst.rectifier_peak_current": op["high_full"]["rectifier_peak_current"],
            "worst.secondary_rms_current": op["high_full"]["secondary_rms_current"],
            "switch_on.surge_estimate": np.where(rt["silicon_only"] > 0, surge, np.nan),
            "transformer.hv_va": hv_va,
            "transformer.other_va": other_va + 0.0 * hv_va,
            "transformer.copper_loss": nf["winding_loss"],
            "transformer.core_geometry_cm5": kg,
            "transformer.mass_estimate": mass,
            "cost.transformer": tx_cost,
            "cost.rectifier": rt["price"],
            "cost.capacitors": cap_cost,
            "cost.feeds": feed_cost,
        })
        for j, name in enumerate(names):
            cols[f"check: {name}"] = ratio[:, j]
        frame = pd.DataFrame(cols)
        return Assessment(candidates=list(candidates), designs=list(designs), frame=frame, F=F,
                          G=G, check_names=names, check_ratio=ratio, check_value=value,
                          check_limit=limit, check_units=check_units)


def _solve(designs, mains_scale, steps):
    """Steady-state figures of many designs, grouped by ladder shape; arrays in input order."""
    groups = {}
    for i, d in enumerate(designs):
        groups.setdefault((Batch.structure_of(d), d.valve_path), []).append(i)
    out = {}
    for members in groups.values():
        idx = np.array(members)
        batch = Batch.from_designs([designs[i] for i in members], mains_scale=mains_scale[idx])
        model, waves = solve_batch(batch, steps=steps)
        figs = figures(batch, model, waves)
        for key, val in figs.items():
            val = np.asarray(val)
            if key not in out:
                out[key] = np.empty((len(designs),) + val.shape[1:], dtype=val.dtype)
            out[key][idx] = val
    return out


# --------------------------------------------------------------------------------------------
# The whole job: search, re-check at full resolution, pick the front and its knee


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
        The search, run at the spec's (coarser) solver resolution.
    assessment : Assessment
        The final population's distinct designs, re-assessed at the full solver resolution.
    front : ndarray of int
        Rows of ``assessment`` that meet every constraint and are non-dominated, by cost.
    knee : int or None
        Row of ``assessment`` recommended (the front's knee), None when the front is empty.
    unmet : tuple of Unmet
        Constraints that no design evaluated during the search met.
    """

    spec: Spec
    binding: "CoDesign"
    search: object
    assessment: Assessment
    front: np.ndarray
    knee: int | None
    unmet: tuple

    @property
    def found(self) -> bool:
        """Whether any design met every constraint."""
        return len(self.front) > 0

    def nearest(self, count=3):
        """The designs that came closest: (row, [(ConstraintInfo, value) violated]) pairs."""
        violation = np.maximum(self.assessment.G, 0.0).sum(axis=1)
        rows = np.argsort(violation, kind="stable")[:count]
        out = []
        for r in rows:
            missed = [(info, float(g)) for info, g in zip(self.binding.constraints,
                                                          self.assessment.G[r]) if g > 0]
            out.append((int(r), missed))
        return out


def reported_front(F, feasible, resolution):
    """Rows of the feasible, non-dominated designs, telling apart only objective differences
    larger than the spec's resolution; of designs that tie, the cheapest is kept. By cost."""
    from . import search

    steps = np.array([resolution.cost, resolution.regulation, resolution.rectifier_stress])
    coarse = np.where(steps > 0, np.round(F / np.where(steps > 0, steps, 1.0)) * steps, F)
    order = np.lexsort((F[:, 2], F[:, 1], F[:, 0]))  # ties keep the cheapest
    rank = np.empty(len(F), int)
    rank[order] = np.arange(len(F))
    rows = np.flatnonzero(feasible)
    rows = rows[np.argsort(rank[rows])]
    keep = search.non_dominated(coarse[rows])
    front = rows[np.sort(keep)]
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
    from . import search

    settings = spec.search
    binding = CoDesign(spec)
    result = search.run(binding, population=population or settings.population,
                        generations=generations or settings.generations,
                        seed=settings.seed if seed is None else seed,
                        workers=workers or settings.workers, progress=progress)
    candidates = list(dict.fromkeys(binding.decode(result.X)))
    assessment = binding.assess(candidates, steps=evaluation.STEPS_PER_HALF_CYCLE)
    front = reported_front(assessment.F, assessment.feasible, spec.search.resolution)
    knee = int(front[search.knee(assessment.F[front])]) if len(front) else None
    unmet = tuple(Unmet(info, float(best)) for info, best in
                  zip(binding.constraints, result.best_constraints) if best > 0)
    return Optimisation(spec=spec, binding=binding, search=result, assessment=assessment,
                        front=front, knee=knee, unmet=unmet)
