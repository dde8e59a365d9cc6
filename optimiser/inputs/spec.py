"""The spec file: what a builder knows before anything is designed, and what may be searched.

A spec is YAML with a unit string for every physical value, validated like the design file
(:mod:`optimiser.inputs.design`): every problem is one line ``file:line:col: dotted.path: message``,
collected into one :class:`~optimiser.inputs.design.DesignError`.

Sections::

    name: linnet-15                  # optional; the results folder name (default: file stem)
    mains: {voltage: 230 V, frequency: 50 Hz, tolerance: 10 %}
    ambient: 40 degC                 # air around the parts
    nodes:                           # the B+ ladder in order; the first is the reservoir
      - name: plates
        dc_voltage: 330 V            # target ...
        window: 15 V                 # ... plus or minus this
        at: idle                     # idle | full-power: where the window applies
        idle_current: 72 mA
        full_power_current: 100 mA
        ripple: 30 V                 # largest ripple p-p, or `hum: 70 dB` (RMS below the DC)
    sag: {node: plates, target: 8 %, tolerance: 3 %}   # optional; attack/recovery windows too
    heaters: [{name: valve-heaters, voltage: 6.3 V, current: 2.4 A, centre_tap: true}]
    bias: {voltage: 50 V, current: 10 mA}              # optional auxiliary (bias) winding
    choices:                         # what may be searched
      secondary_voltage: {min: 260 V, max: 380 V, step: 1 V}   # HV at rated load, per path
      rectifiers: [{topology: centre-tap, valve: 5U4G}, {topology: bridge, diode: 1N4007}]
      reservoir: {series: generic-105C-radial, min: 10 uF, max: 100 uF}
      filter: {series: generic-105C-radial, min: 10 uF, max: 100 uF}
      feeds:
        screens: {resistance: {min: 220 ohm, max: 4.7 kohm}, chokes: [generic-5H-60mA]}
    transformer:                     # the physical transformer the search designs
      cores: [EI-a28, EI-a32, EI-a35]  # default: every core in cores.yaml, all their stacks
      steel: NO-M27-like
      max_flux_density: 1.25 T       # at nominal mains; +10 % mains gives 1.375 T, below the steel's 1.4 T
      current_density: {min: 2 A/mm^2, max: 4.5 A/mm^2}
      insulation_class: B
    conditions: {transformer_tolerance: 5 %}   # the design file's conditions (see design.py)
    costs: {parts: {5U4G: 26}, transformer: {labour_per_winding: 10}}
    search: {population: 200, generations: 60, seed: 1}

Everything is held as SI floats after validation (fractions as fractions: 8 % is 0.08).
The ``choices`` and ``transformer`` sections' models are in :mod:`optimiser.inputs.choices`.
"""

from __future__ import annotations

import math
import re
from pathlib import Path
from typing import Annotated, Literal, Optional

from pydantic import BeforeValidator, Field, field_validator, model_validator

from optimiser.inputs.design import Conditions, register_user_data
from optimiser.inputs.tolerances import Robustness, Tolerances
from optimiser.formats.yamlfile import DesignError, _positioned, read_yaml, validate
from optimiser.formats.ranges import ranged as R
from optimiser.formats.schema import (
    Fraction,
    Strict,
    Temperature,
    unique_names,
)
from optimiser.inputs.choices import (  # noqa: F401 (the spec's names, here too)
    CapacitorChoice,
    Choices,
    FeedOptions,
    NonNegative,
    Positive,
    PositionOption,
    RectifierOption,
    TransformerChoices,
)

__all__ = [
    "Spec",
    "NodeSpec",
    "SagSpec",
    "Winding",
    "BiasWinding",
    "TransformerChoices",
    "PositionOption",
    "RectifierOption",
    "CapacitorChoice",
    "FeedOptions",
    "Choices",
    "SearchSettings",
    "load_spec",
    "spec_name",
]

_DB = re.compile(r"^\s*([+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?)\s*dB\s*$")


def _decibels(value):
    """Read ``"70 dB"`` into the float 70.0; refuse bare numbers and other units."""
    if isinstance(value, bool) or not isinstance(value, str):
        raise ValueError(f"write a level in decibels such as '70 dB', got {value!r}")
    m = _DB.match(value)
    if not m:
        raise ValueError(f"'{value}' is not a level in decibels (write e.g. '70 dB')")
    level = float(m.group(1))
    if not math.isfinite(level):
        raise ValueError(f"'{value}' is not a finite number")
    return level


Decibels = Annotated[float, BeforeValidator(_decibels)]


class MainsSpec(Strict):
    """The mains the amplifier runs from."""

    voltage: R("mains_voltage")
    frequency: R("mains_frequency")
    tolerance: Annotated[Fraction, Field(ge=0, lt=0.5)] = 0.10


class NodeSpec(Strict):
    """One B+ node: what it must deliver, and how clean."""

    name: str = Field(min_length=1, pattern=r"^[A-Za-z0-9_+-][A-Za-z0-9_ +-]*$")
    dc_voltage: R("bplus_voltage")
    window: R("bplus_window")
    at: Literal["idle", "full-power"] = "idle"
    idle_current: R("load_current")
    full_power_current: R("load_current")
    ripple: Optional[R("ripple")] = None
    hum: Optional[Annotated[Decibels, Positive]] = None

    @model_validator(mode="after")
    def _consistent(self):
        if self.window >= self.dc_voltage:
            raise ValueError("window must be smaller than dc_voltage (it is the +/- band "
                             "around it)")
        if self.ripple is not None and self.hum is not None:
            raise ValueError("give the ripple limit once: either ripple (V p-p) or hum (dB "
                             "below DC)")
        if self.idle_current <= 0 and self.full_power_current <= 0:
            raise ValueError("idle_current and full_power_current cannot both be 0 A")
        return self

    def ripple_pp_limit(self, dc_voltage):
        """Largest ripple p-p allowed at a DC voltage; inf when no limit is set. [V]

        A hum level is an RMS ripple below the DC, ``20·log10(V_dc / V_rms)``; a sine ripple's
        p-p is ``2·sqrt(2)`` times its RMS (the ripple is taken as sinusoidal for this limit).
        """
        if self.ripple is not None:
            return self.ripple + 0.0 * dc_voltage
        if self.hum is not None:
            return 2.0 * math.sqrt(2.0) * dc_voltage * 10.0 ** (-self.hum / 20.0)
        return math.inf + 0.0 * dc_voltage


class TimeWindow(Strict):
    min: Optional[R("sag_time")] = None
    max: Optional[Annotated[R("sag_time"), Positive]] = None

    @model_validator(mode="after")
    def _ordered(self):
        if self.min is None and self.max is None:
            raise ValueError("give min, max or both")
        if self.min is not None and self.max is not None and self.max <= self.min:
            raise ValueError("max must be above min")
        return self


class SagSpec(Strict):
    """The drop from idle to full power the player wants, at one node."""

    node: Optional[str] = None
    target: Annotated[Fraction, Field(ge=0, lt=1)]
    tolerance: Annotated[Fraction, Field(gt=0, lt=1)]
    attack: Optional[TimeWindow] = None
    recovery: Optional[TimeWindow] = None


class Winding(Strict):
    """A heater winding on the same transformer (voltage end to end, RMS current)."""

    name: str = Field(pattern=r"^[A-Za-z][A-Za-z0-9_.-]*$")
    voltage: R("heater_voltage")
    current: Annotated[R("heater_current"), Positive]
    centre_tap: bool = False

    @field_validator("name")
    @classmethod
    def _not_reserved(cls, name):
        if name in ("primary", "hv", "bias", "screen", RECTIFIER_HEATER):
            raise ValueError(f"'{name}' is a name the transformer keeps for its own windings")
        return name


#: Name of the winding the search adds for a valve rectifier's heater.
RECTIFIER_HEATER = "rectifier-heater"


class BiasWinding(Strict):
    """An auxiliary (bias supply) winding."""

    voltage: R("bias_voltage")
    current: Annotated[R("bias_current"), Positive]
    centre_tap: bool = False


class Margins(Strict):
    """How hard parts may be run (defaults: common practice, no source).

    ``resistor_power_factor``: a resistor's derated power must be this many times its DC
    dissipation ("run power resistors at about half their rating"). ``bleeder_time_fraction``:
    the reservoir's bleeder takes the supply to the safe voltage in this fraction of the
    discharge time limit.
    """

    resistor_power_factor: float = Field(default=2.0, ge=1.0)
    bleeder_time_fraction: float = Field(default=0.5, gt=0, le=1.0)


class TransformerPrices(Strict):
    """Overrides of the transformer price model (``data/prices.yaml``)."""

    base_cost: Optional[float] = Field(default=None, ge=0)
    copper_per_kg: Optional[float] = Field(default=None, ge=0)
    steel_per_kg: Optional[float] = Field(default=None, ge=0)
    labour_per_winding: Optional[float] = Field(default=None, ge=0)


class Costs(Strict):
    """Overrides of the bundled price data (currency-neutral cost units).

    ``parts`` sets the price of a rectifier valve (with its socket) or diode by name.
    """

    parts: dict[str, Annotated[float, Field(ge=0)]] = {}
    transformer: TransformerPrices = TransformerPrices()


class Resolution(Strict):
    """Differences in the objectives too small to tell designs apart on the reported front."""

    cost: float = Field(default=0.1, ge=0)
    regulation: Annotated[Fraction, Field(ge=0)] = 0.001
    sag_error: Annotated[Fraction, Field(ge=0)] = 0.001
    rectifier_stress: float = Field(default=0.005, ge=0)
    #: in decades of hours (the life objective is searched as -log10 of its hours): 0.01 ~ 2.3 %
    life: float = Field(default=0.01, ge=0)


class SearchSettings(Strict):
    """The search's budget and reproducibility."""

    population: int = Field(default=200, ge=8, le=5000)
    generations: int = Field(default=60, ge=1, le=10000)
    seed: int = Field(default=1, ge=0)
    workers: int = Field(default=1, ge=1, le=64)
    resolution: Resolution = Resolution()


class Spec(Strict):
    """A whole spec file."""

    name: Optional[str] = Field(default=None, pattern=r"^[A-Za-z0-9_.+-]+$")
    mains: MainsSpec
    ambient: Temperature = 35.0
    nodes: list[NodeSpec] = Field(min_length=1)
    sag: Optional[SagSpec] = None
    heaters: list[Winding] = []
    bias: Optional[BiasWinding] = None
    choices: Choices
    transformer: TransformerChoices
    conditions: Conditions = Conditions()
    tolerances: Tolerances = Tolerances()  # how real builds spread (optimiser.inputs.tolerances)
    robustness: Optional[Robustness] = None  # re-assess kept designs by sampled builds
    margins: Margins = Margins()
    costs: Costs = Costs()
    search: SearchSettings = SearchSettings()
    #: 2-4 objectives to minimise (life is maximised); default cost, regulation (sag_error with
    #: a sag target), rectifier_stress (:mod:`optimiser.codesign.objective_table`)
    objectives: Optional[list[Literal["cost", "regulation", "sag_error", "rectifier_stress",
                                      "life"]]] = Field(default=None, min_length=2, max_length=4)
    #: the user's own parts files (same layout as optimiser/parts/data/*.yaml), relative to this file
    parts_files: list[str] = []
    #: the user's own folder of transformer data (cores, steels, wire, prices), relative to it
    transformer_data: Optional[str] = None

    @field_validator("nodes")
    @classmethod
    def _unique(cls, nodes):
        return unique_names(nodes)

    @field_validator("objectives")
    @classmethod
    def _distinct_objectives(cls, names):
        if names is not None and len(set(names)) != len(names):
            raise ValueError("each objective may be named once")
        return names

    @property
    def sag_node(self) -> int:
        """Index of the node whose sag is the regulation objective."""
        if self.sag is None or self.sag.node is None:
            return 0
        return [n.name for n in self.nodes].index(self.sag.node)


def _cross_problems(spec: Spec):
    """Checks that span sections: (pydantic-style loc, message) pairs."""
    names = [n.name for n in spec.nodes]
    out = []
    for key in spec.choices.feeds:
        if key not in names:
            out.append((("choices", "feeds", key), f"no node is named '{key}'; nodes: "
                        + ", ".join(names)))
        elif key == names[0]:
            out.append((("choices", "feeds", key), f"'{key}' is the reservoir (first node); "
                        "it is fed straight from the rectifier (capacitor input)"))
    for k, name in enumerate(names[1:], start=1):
        if name not in spec.choices.feeds:
            out.append((("choices", "feeds"), f"node '{name}' needs feed options (a resistance "
                        "range and/or chokes) to join it to the node before it"))
    if len(names) > 1 and spec.choices.filter is None:
        out.append((("choices",), "filter: required key is missing (capacitors for the nodes "
                    "after the reservoir)"))
    if spec.objectives and "sag_error" in spec.objectives and spec.sag is None:
        out.append((("objectives",), "sag_error needs a sag target (a sag: section)"))
    if spec.sag is not None and spec.sag.node is not None and spec.sag.node not in names:
        out.append((("sag", "node"), f"no node is named '{spec.sag.node}'; nodes: "
                    + ", ".join(names)))
    primaries = spec.transformer.primaries
    if primaries is not None and not any(abs(v - spec.mains.voltage) <= 1e-6 * v
                                         for v in primaries):
        out.append((("transformer", "primaries"), f"none of them is the mains voltage "
                    f"{spec.mains.voltage:g} V"))
    taken = {"mains_low": "mains.tolerance", "mains_high": "mains.tolerance",
             "ambient": "ambient", "capacitor_series": "choices.reservoir.series"}
    for key in sorted(set(spec.conditions.model_fields_set) & set(taken)):
        out.append((("conditions", key), f"set this through {taken[key]} in the spec"))
    heater_names = [h.name for h in spec.heaters]
    if len(set(heater_names)) != len(heater_names):
        out.append((("heaters",), "heater names must be unique"))
    return out


def _spec_from(data, node=None, source="spec") -> Spec:
    spec = validate(Spec, data, node, source)
    problems = [_positioned(node, loc, message, source) for loc, message in _cross_problems(spec)]
    if problems:
        raise DesignError(problems)
    return spec


def load_spec(source) -> Spec:
    """Read and validate a spec: a path to a YAML file, a dict of the same shape, or a Spec.

    Raises
    ------
    DesignError
        With one ``file:line:col: dotted.path: message`` line per problem.
    """
    if isinstance(source, Spec):
        return source
    if isinstance(source, dict):
        register_user_data(source, Path.cwd(), "spec")
        return _spec_from(source)
    data, node = read_yaml(source)
    register_user_data(data, Path(source).parent, str(source))
    return _spec_from(data, node, str(source))


def spec_name(spec: Spec, source=None) -> str:
    """The spec's name: its ``name`` key, else the file's stem, else ``"spec"``."""
    if spec.name:
        return spec.name
    if source is not None and not isinstance(source, (dict, Spec)):
        return Path(source).stem
    return "spec"
