"""The design file: one concrete supply, read from YAML and validated with clear messages.

Every problem is reported as ``file:line:col: dotted.path: message``; the loader collects all of
them and raises one :class:`DesignError`. PyYAML's silent last-one-wins on duplicate keys is
refused here.
"""

from __future__ import annotations

from pathlib import Path
from typing import Annotated, Literal, Optional, Union

from pydantic import Field, ValidationError, field_validator, model_validator

from optimiser.formats.yamlfile import DesignError, read_yaml, validate
from optimiser.formats.ranges import ranged as R
from optimiser.formats.schema import Fraction, Strict, unique_names
from optimiser.inputs.tolerances import Tolerances

__all__ = [
    "DesignError",
    "Mains",
    "EquivalentTransformer",
    "DiodeModel",
    "ValveModel",
    "Rectifier",
    "Load",
    "Feed",
    "Node",
    "Design",
    "Conditions",
    "load_design",
    "read_yaml",
    "validate",
]

TOPOLOGIES = ("bridge", "centre-tap", "hybrid-bridge")




class Mains(Strict):
    """Nominal mains supply."""

    voltage: R("mains_voltage")
    frequency: R("mains_frequency")


class EquivalentTransformer(Strict):
    """The transformer as the rectifier sees it: an open-circuit EMF behind R and L.

    Either give the equivalent directly (secondary_voltage, secondary_resistance, optionally
    leakage_inductance), or give a physical ``build`` (see
    :class:`optimiser.physics.transformer.TransformerBuild`): the equivalent is then computed from it.
    """

    secondary_voltage: Optional[R("secondary_voltage")] = None
    secondary_resistance: Optional[R("secondary_resistance")] = None
    leakage_inductance: R("leakage_inductance") = 0.0
    #: RMS current the HV winding is rated for (per half-winding for centre-tap)
    rated_current: Optional[R("winding_current")] = None
    build: Optional["TransformerBuild"] = None

    @model_validator(mode="after")
    def _equivalent_or_build(self):
        given = self.secondary_voltage is not None and self.secondary_resistance is not None
        if self.build is None and not given:
            raise ValueError("give secondary_voltage and secondary_resistance, or a build")
        if self.build is not None and (self.secondary_voltage is not None
                                       or self.secondary_resistance is not None):
            raise ValueError("give either the equivalent (secondary_voltage, "
                             "secondary_resistance) or a build, not both")
        return self


class DiodeModel(Strict):
    """SPICE-style silicon diode parameters."""

    saturation_current: R("saturation_current")
    emission_coefficient: float = Field(gt=0, le=4)
    series_resistance: R("diode_resistance") = 0.0


class ValveModel(Strict):
    """Vacuum diode per plate by the Child-Langmuir law."""

    perveance: R("perveance")


class Reservoir(Strict):
    """A switchable position's own reservoir capacitor (replaces the first node's)."""

    capacitance: R("capacitance")
    esr: R("esr") = 0.0
    rated_voltage: Optional[R("capacitor_voltage")] = None
    capacitor_series: Optional[str] = None


class Position(Strict):
    """One branch of a switchable pair: its rectifier and, optionally, its own reservoir."""

    topology: Literal["bridge", "centre-tap", "hybrid-bridge"]
    diode: Optional[Union[DiodeModel, str]] = None
    valve: Optional[Union[ValveModel, str]] = None
    heater_shared: bool = False
    reservoir: Optional[Reservoir] = None


class Rectifier(Strict):
    topology: Literal["bridge", "centre-tap", "hybrid-bridge", "switchable"]
    diode: Optional[Union[DiodeModel, str]] = None
    valve: Optional[Union[ValveModel, str]] = None
    #: an indirectly heated rectifier valve whose heater shares a winding held near chassis
    #: potential with other valves (its cathode then sits at B+ above its heater)
    heater_shared: bool = False
    #: for ``switchable``: the two branches the switch selects, by name
    positions: Optional[dict[str, Position]] = None

    @model_validator(mode="after")
    def _positions(self):
        if self.topology == "switchable":
            if not self.positions or len(self.positions) != 2:
                raise ValueError("a switchable rectifier needs exactly two positions, e.g. "
                                 "{silicon: {...}, valve: {...}}")
            if self.diode is not None or self.valve is not None:
                raise ValueError("a switchable rectifier gives diode and valve per position")
        elif self.positions is not None:
            raise ValueError("positions belong to a switchable rectifier only")
        return self


class Load(Strict):
    """A node's load: constant current, a resistance, or idle and full-power currents."""

    current: Optional[R("load_current")] = None
    resistance: Optional[R("load_resistance")] = None
    idle_current: Optional[R("load_current")] = None
    full_power_current: Optional[R("load_current")] = None

    @model_validator(mode="after")
    def _one_form(self):
        forms = [self.current is not None, self.resistance is not None,
                 self.idle_current is not None or self.full_power_current is not None]
        if sum(forms) != 1:
            raise ValueError("give exactly one of: current, resistance, or idle_current with "
                             "full_power_current")
        if forms[2] and (self.idle_current is None or self.full_power_current is None):
            raise ValueError("idle_current and full_power_current go together")
        return self


class Feed(Strict):
    """What joins a node to the one before it: a resistor, or a choke (L with its resistance)."""

    resistance: R("feed_resistance") = 0.0
    inductance: R("feed_inductance") = 0.0
    #: a dropping resistor's power rating
    power_rating: Optional[R("power_rating")] = None
    #: a choke's DC current rating
    current_rating: Optional[R("current_rating")] = None

    @model_validator(mode="after")
    def _not_a_short(self):
        if self.resistance <= 0 and self.inductance <= 0:
            raise ValueError("a feed needs resistance > 0 or inductance > 0")
        return self


class Node(Strict):
    name: str = Field(min_length=1, pattern=r"^[A-Za-z0-9_+-][A-Za-z0-9_ +-]*$")
    capacitance: R("capacitance")
    esr: R("esr") = 0.0
    feed: Optional[Feed] = None
    load: Optional[Load] = None
    #: the capacitor's rated DC voltage, and the catalogue series it comes from
    rated_voltage: Optional[R("capacitor_voltage")] = None
    capacitor_series: Optional[str] = None
    #: bleeder resistor across this node's capacitor, and its power rating
    bleeder: Optional[R("bleeder")] = None
    bleeder_power_rating: Optional[R("power_rating")] = None


class Conditions(Strict):
    """Where and how the supply must survive; every default is common practice, no source."""

    mains_low: Annotated[Fraction, Field(ge=0, lt=0.5)] = 0.10
    mains_high: Annotated[Fraction, Field(ge=0, lt=0.5)] = 0.10
    #: the winder's tolerance on the secondary voltage
    transformer_tolerance: Annotated[Fraction, Field(ge=0, lt=0.3)] = 0.05
    #: capacitor tolerance; the catalogue series' own when not given
    capacitor_minus: Optional[Annotated[Fraction, Field(ge=0, lt=1)]] = None
    capacitor_plus: Optional[Annotated[Fraction, Field(ge=0, lt=2)]] = None
    ambient: R("ambient") = 40.0
    #: capacitor self-heating at its rated ripple current
    ripple_self_heating: R("self_heating") = 5.0
    #: time the output valves take to start drawing current after switch-on
    output_valve_warm_up: R("warm_up") = 15.0
    #: warm-up of a valve rectifier with no figure in its data
    rectifier_warm_up: R("warm_up") = 10.0
    #: margin asked of silicon PIV ratings over the worst reverse voltage
    silicon_piv_margin: Annotated[Fraction, Field(ge=0, lt=2)] = 0.20
    safe_voltage: R("safe_voltage") = 60.0
    discharge_time_limit: R("discharge_limit") = 60.0
    #: the sag test: full power for this long, then idle for this long
    sag_hold: R("sag_step") = 0.6
    sag_release: R("sag_step") = 0.8
    capacitor_series: str = "generic-105C-radial"
    #: derating (common practice, no source): an electrolytic's highest working voltage at the
    #: worst corner at most this fraction of its rating (its surge within the surge rating)
    capacitor_voltage_derating: Annotated[Fraction, Field(gt=0, le=1)] = 0.90
    #: derating (common practice, no source): a resistor's dissipation at most this fraction of
    #: its rating ("run power resistors at about half their rating")
    resistor_power_derating: Annotated[Fraction, Field(gt=0, le=1)] = 0.50


class Design(Strict):
    """One concrete HV supply."""

    mains: Mains
    transformer: EquivalentTransformer
    rectifier: Rectifier
    nodes: list[Node] = Field(min_length=1)
    conditions: Conditions = Conditions()
    tolerances: Tolerances = Tolerances()  # how real builds spread (optimiser.inputs.tolerances)
    #: the user's own parts files (same layout as optimiser/parts/data/*.yaml), relative to this file
    parts_files: list[str] = []
    #: the user's own folder of transformer data (cores, steels, wire, prices), relative to it
    transformer_data: Optional[str] = None

    @field_validator("nodes")
    @classmethod
    def _unique_names(cls, nodes):
        return unique_names(nodes)

    @model_validator(mode="after")
    def _consistent(self):
        if self.transformer.build is not None:
            problems = self._build_problems()
            if problems:
                raise ValueError("; ".join(problems))
            self._with_equivalent()
        if self.switchable:
            self.positions()  # each position is checked as a design of its own
            return self
        problems = self._problems()
        if problems:
            raise ValueError("; ".join(problems))
        return self

    def _problems(self):
        problems = []
        for k, node in enumerate(self.nodes[1:], start=1):
            if node.feed is None:
                problems.append(f"nodes.{k}.feed: node '{node.name}' needs a feed from the node "
                                "before it (resistance and/or inductance)")
        if self.rectifier.topology == "hybrid-bridge" and self.rectifier.valve is None:
            problems.append("rectifier.valve: a hybrid-bridge needs a valve (a part name or "
                            "{perveance: ...})")
        first = self.nodes[0].feed
        if first is not None and first.inductance > 0 and self.transformer.leakage_inductance > 0:
            problems.append("transformer.leakage_inductance: must be 0 H with a choke-input first "
                            "node (commutation overlap is not modelled); fold it into the choke")
        return problems

    def _build_problems(self):
        b = self.transformer.build
        topologies = ([p.topology for p in self.rectifier.positions.values()]
                      if self.switchable else [self.rectifier.topology])
        for topology in topologies:
            ct = topology == "centre-tap"
            if b.hv.centre_tapped != ct:
                return [f"transformer.build.hv.centre_tapped: must be {str(ct).lower()} for a "
                        f"{topology} rectifier"]
        return []

    def _with_equivalent(self):
        """A copy whose equivalent source comes from the physical build."""
        from optimiser.inputs.build import build_from_block

        t = self.transformer
        built = build_from_block(t.build, self.mains.frequency * 1.0)
        self._check_mains(t.build)
        equivalent = t.model_copy(update={
            "secondary_voltage": float(built.hv_open_circuit_voltage),
            "secondary_resistance": float(built.hv_series_resistance),
            "leakage_inductance": float(built.hv_leakage_inductance),
            "rated_current": t.rated_current or t.build.hv.current,
        })
        object.__setattr__(self, "transformer", equivalent)
        object.__setattr__(self, "_built", built)
        return self

    def _check_mains(self, build):
        if not any(abs(v - self.mains.voltage) <= 1e-6 * v for v in build.primaries):
            raise ValueError(f"transformer.build.primaries: none of them is the mains voltage "
                             f"{self.mains.voltage:g} V")

    @property
    def switchable(self) -> bool:
        return self.rectifier.topology == "switchable"

    def positions(self):
        """[(position name, Design)]: the design as the switch sets it; [(None, self)] if fixed."""
        if not self.switchable:
            return [(None, self)]
        out = []
        for name, p in self.rectifier.positions.items():
            rect = Rectifier.model_construct(topology=p.topology, diode=p.diode, valve=p.valve,
                                             heater_shared=p.heater_shared, positions=None)
            nodes = list(self.nodes)
            if p.reservoir is not None:
                nodes[0] = nodes[0].model_copy(update=p.reservoir.model_dump(exclude_none=True))
            design = self.model_copy(update={"rectifier": rect, "nodes": nodes})
            if self.transformer_design is not None:
                object.__setattr__(design, "_built", self.transformer_design)
            problems = design._problems()
            if problems:
                raise ValueError("; ".join(f"rectifier.positions.{name}: {p}" for p in problems))
            out.append((name, design))
        return out

    @property
    def transformer_design(self):
        """The physical transformer (a TransformerDesign) when the design gives a build."""
        return getattr(self, "_built", None)

    @property
    def valve_path(self) -> bool:
        """Whether a valve conducts in each path."""
        r = self.rectifier
        return r.topology == "hybrid-bridge" or (r.topology == "centre-tap" and r.valve is not None)


def load_design(source) -> Design:
    """Read and validate a design: a path to a YAML file, a dict, or a :class:`Design`.

    A ``parts_files`` list (paths relative to the design file, or to the working folder for a
    dict) is made part of every catalogue lookup (:func:`optimiser.parts.use_user_files`).
    """
    if isinstance(source, Design):
        return source
    if isinstance(source, dict):
        register_user_data(source, Path.cwd(), "design")
        return _validated(source, None, "design")
    data, node = read_yaml(source)
    register_user_data(data, Path(source).parent, str(source))
    return _validated(data, node, str(source))


def _validated(data, node, source) -> Design:
    """Validate, reporting unknown part names together with every other problem."""
    unknown = part_name_problems(data, node, source)
    try:
        design = validate(Design, data, node, source)
    except DesignError as exc:
        raise DesignError(exc.problems + [p for p in unknown if p not in exc.problems]) from None
    if unknown:
        raise DesignError(unknown)
    return design


def part_name_problems(data, node=None, source="design") -> list[str]:
    """One line per part named in a design that no catalogue holds (rectifier diode and valve,
    capacitor series), positioned like the schema's problems."""
    from optimiser.formats.yamlfile import _positioned
    from optimiser.parts import catalogue as parts

    def get(tree, *keys):
        for key in keys:
            tree = tree.get(key) if isinstance(tree, dict) else None
        return tree

    wanted = []  # (kind, location)
    rect = get(data, "rectifier")
    blocks = [((), rect)]
    if isinstance(get(rect, "positions"), dict):
        blocks += [(("positions", name), p) for name, p in rect["positions"].items()]
    for where, block in blocks:
        wanted += [(kind, ("rectifier",) + where + (kind,)) for kind in ("diode", "valve")
                   if isinstance(get(block, kind), str)]
        if isinstance(get(block, "reservoir", "capacitor_series"), str):
            wanted.append(("capacitor", ("rectifier",) + where + ("reservoir", "capacitor_series")))
    nodes = get(data, "nodes")
    for k, n in enumerate(nodes if isinstance(nodes, list) else []):
        if isinstance(get(n, "capacitor_series"), str):
            wanted.append(("capacitor", ("nodes", k, "capacitor_series")))
    if isinstance(get(data, "conditions", "capacitor_series"), str):
        wanted.append(("capacitor", ("conditions", "capacitor_series")))
    out = []
    for kind, loc in wanted:
        name = data
        for key in loc:
            name = name[key]
        try:
            parts.find_part(kind, name)
        except LookupError as exc:
            out.append(_positioned(node, loc, str(exc.args[0] if exc.args else exc), source))
    return out


def register_user_data(data: dict, folder: Path, source: str) -> None:
    """Resolve a file's ``parts_files`` and ``transformer_data`` against ``folder`` (in place)
    and register them for every later lookup."""
    directory = data.get("transformer_data")
    if directory is not None:
        from optimiser.physics.transformer import use_user_folder

        if not isinstance(directory, str):
            raise DesignError([f"{source}: transformer_data: a folder path"])
        resolved = str((folder / directory).resolve())
        try:
            use_user_folder(resolved)
        except ValueError as exc:
            raise DesignError([f"{source}: transformer_data: {exc}"]) from None
        data["transformer_data"] = resolved
    files = data.get("parts_files")
    if not files:
        return
    if not isinstance(files, list) or not all(isinstance(f, str) for f in files):
        raise DesignError([f"{source}: parts_files: a list of file paths"])
    from optimiser.parts import catalogue as parts

    resolved = [str((folder / f).resolve()) for f in files]
    try:
        parts.use_user_files(resolved)
    except parts.CatalogueError as exc:
        raise DesignError([f"{source}: parts_files: {exc}"]) from None
    data["parts_files"] = resolved


from optimiser.inputs.build import TransformerBuild  # noqa: E402  (the build block refers back to schema

EquivalentTransformer.model_rebuild()
Design.model_rebuild()
