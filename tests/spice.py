"""Independent reference: simulate a Railwright design with ngspice to periodic steady state.

This module is test tooling, not part of the ``optimiser`` package. It turns a design (the same
YAML/dict format the solver reads) into a SPICE netlist, runs ``ngspice -b`` (a general-purpose
circuit simulator, Debian package ``ngspice``) on it, and measures the last full mains cycle with
numpy, so Railwright's own solver can be checked against a transient of the same circuit.

Steady state is reached by a shooting-style loop: start from an estimated state (reservoir and
filter capacitor voltages, choke and leakage currents), simulate a run of whole mains cycles whose
length scales with the circuit's slowest time constant, measure how the cycle means of the state
still change from cycle to cycle over the last four cycles, extrapolate a clean geometric decay of
the slow mode (Aitken's delta-squared step) and restart from the extrapolated state, until the
estimated distance from the periodic steady state is negligible. The state at a cycle boundary is
complete (capacitor voltages and inductor currents; the source is back at phase zero), so a restart
continues the same trajectory.

Waveforms are measured on ngspice's own (non-uniform) time points: means and RMS values are
trapezoidal integrals over exactly one period, with the window ends interpolated in, which is exact
for the piecewise-linear waveform the points define; no resampling is needed.

Run ``python tests/spice.py design.yaml`` to print the reference result of one design file as JSON.
"""

from __future__ import annotations

import json
import math
import re
import shutil
import subprocess
import sys
import tempfile
import time
from dataclasses import dataclass, replace
from pathlib import Path

import numpy as np

if __package__ in (None, ""):
    # Run as a script from a checkout: make the optimiser package importable.
    sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from optimiser.formats.units import parse_quantity  # noqa: E402

__all__ = [
    "DesignError",
    "SpiceError",
    "spice_available",
    "netlist",
    "simulate",
    "load_design",
    "invented_designs",
    "design_dict",
]

NGSPICE = "ngspice"
TOPOLOGIES = ("bridge", "centre-tap", "hybrid-bridge")
BOLTZMANN = 1.380649e-23  # [J/K], exact (SI 2019)
ELEMENTARY_CHARGE = 1.602176634e-19  # [C], exact (SI 2019)
# Resistances that only keep the SPICE matrix non-singular; each passes well under 1 uA at B+.
_BLEED = 1e9  # [ohm] from each AC leg to ground, and across each valve plate
# Across each inductance, a resistance of this many times its reactance at the mains frequency:
# it gives the inductor current a path at the instant the (capacitance-free) elements turn off,
# which otherwise stalls ngspice ("timestep too small"). It carries 1e-4 of the inductor current at
# the mains frequency (h * 1e-4 at harmonic h), in quadrature with it.
_INDUCTOR_SHUNT = 1e4  # [-]
# Integration set-ups tried in turn when ngspice stalls ("timestep too small"), which it does now
# and then at the turn-off of a capacitance-free element in series with an inductance, or with
# near-ideal diodes in a floating bridge; a small change of set-up gets past it. The capacitance
# sits across each rectifying element (silicon CJO, or across a valve plate): 1 pF at 400 V moves
# 0.4 nC a cycle, ~20 nA at 50 Hz. All are second-order methods at the same tolerances.
_SETUPS = (("trap", 1e-12), ("trap", 0.0), ("gear", 1e-12), ("gear", 0.0))
_MIN_WINDING_RESISTANCE = 0.01  # [ohm]; below this ngspice stalls on a bridge
_STEPS_PER_CYCLE = 2000
# Longest single ngspice run. Late in a long transient the time resolution of a double (t * 2e-16)
# exceeds the steps ngspice needs at an element turn-off, and it aborts ("timestep too small"), so
# long settling is done in several runs, each restarting from the last state.
_MAX_RUN_CYCLES = 40
_RECORD_CYCLES = 4


class DesignError(ValueError):
    """A design that the reference harness cannot read or does not support."""


class SpiceError(RuntimeError):
    """ngspice failed, or its output could not be read."""


def spice_available() -> bool:
    """True when the ``ngspice`` executable is on PATH."""
    return shutil.which(NGSPICE) is not None


# ----------------------------------------------------------------------------------------------
# Design reading


@dataclass(frozen=True)
class _Node:
    name: str
    capacitance: float | None  # [F]
    esr: float  # [ohm]
    load_current: float | None  # [A], constant-current sink
    load_resistance: float | None  # [ohm]
    feed_resistance: float | None  # [ohm], from the previous node (or the rectifier output)
    feed_inductance: float | None  # [H]


@dataclass(frozen=True)
class _Design:
    frequency: float  # [Hz]
    secondary_peak: float  # [V], per conducting path / half-winding
    secondary_resistance: float  # [ohm]
    leakage_inductance: float  # [H]
    topology: str
    saturation_current: float | None  # [A]
    emission_coefficient: float | None  # [-]
    diode_resistance: float  # [ohm]
    perveance: float | None  # [A/V^1.5]
    nodes: tuple[_Node, ...]

    @property
    def period(self) -> float:
        return 1.0 / self.frequency

    @property
    def silicon_elements(self) -> bool:
        """True when any rectifying element is a silicon diode."""
        return not (self.topology == "centre-tap" and self.perveance is not None)

    @property
    def choke_input(self) -> bool:
        return self.nodes[0].feed_resistance is not None or self.nodes[0].feed_inductance is not None


def load_design(path) -> dict:
    """Read a design YAML file into a dict."""
    import yaml

    with open(path, encoding="utf-8") as handle:
        data = yaml.safe_load(handle)
    if not isinstance(data, dict):
        raise DesignError(f"{path}: a design file must be a mapping with mains, transformer, rectifier, nodes")
    return data


def _block(data: dict, key: str, where: str, required: bool = True) -> dict:
    value = data.get(key)
    if value is None:
        if required:
            raise DesignError(f"{where}{key} is required")
        return {}
    if not isinstance(value, dict):
        raise DesignError(f"{where}{key} must be a mapping, got {type(value).__name__}")
    return value


def _quantity(block: dict, key: str, dimension: str, where: str, *, required: bool = True, positive: bool = True):
    if key not in block or block[key] is None:
        if required:
            raise DesignError(f"{where}{key} is required")
        return None
    raw = block[key]
    try:
        value = parse_quantity(raw, dimension, allow_bare_number=dimension == "perveance")
    except ValueError as error:
        raise DesignError(f"{where}{key}: {error}") from None
    if positive and not value > 0:
        raise DesignError(f"{where}{key} must be > 0, got {raw!r}")
    if not positive and value < 0:
        raise DesignError(f"{where}{key} must be >= 0, got {raw!r}")
    return value


def _part(rectifier: dict, kind: str) -> dict:
    """A rectifier's ``diode`` or ``valve`` block: parameters as given, or a part name resolved in
    Railwright's parts catalogue (data files with provenance). A missing diode is the solver's
    default part, so both simulate the same circuit."""
    value = rectifier.get(kind)
    if value is None and kind == "diode":
        from optimiser.assessment.steady_state import DEFAULT_DIODE

        value = DEFAULT_DIODE
    if isinstance(value, str):
        from optimiser.parts import catalogue as parts

        try:
            part = parts.find_part(kind, value)
        except LookupError as error:
            raise DesignError(f"rectifier.{kind}: {error}") from None
        if kind == "valve":
            return {"perveance": part.perveance}
        return {
            "saturation_current": f"{part.saturation_current:.17g} A",
            "emission_coefficient": part.emission_coefficient,
            "series_resistance": f"{part.series_resistance:.17g} ohm",
        }
    return _block(rectifier, kind, "rectifier.", required=False)


def _parallel(first: float | None, second: float | None) -> float | None:
    """Two optional resistances in parallel. [ohm]"""
    if first is None or second is None:
        return first if second is None else second
    return first * second / (first + second)


def _winding_resistance(transformer: dict) -> float:
    resistance = _quantity(transformer, "secondary_resistance", "resistance", "transformer.", positive=False)
    if resistance < _MIN_WINDING_RESISTANCE:
        raise DesignError(
            f"transformer.secondary_resistance must be >= {_MIN_WINDING_RESISTANCE * 1e3:g} mohm for the ngspice "
            f"reference (a bridge fed from a near-ideal source stalls its integration); got "
            f"{transformer['secondary_resistance']!r}"
        )
    return resistance


def _parse(design, loads: str = "full") -> _Design:
    """Read a design; ``loads`` picks the current of an idle/full-power load ("full" or "idle")."""
    if loads not in ("full", "idle"):
        raise DesignError(f"loads must be 'full' or 'idle', got {loads!r}")
    if isinstance(design, (str, Path)):
        design = load_design(design)
    if not isinstance(design, dict):
        raise DesignError(f"a design must be a dict or a path to a YAML file, got {type(design).__name__}")
    mains = _block(design, "mains", "")
    transformer = _block(design, "transformer", "")
    if "build" in transformer:
        raise DesignError("transformer.build: the reference harness needs the equivalent "
                          "(secondary_voltage, secondary_resistance, leakage_inductance)")
    rectifier = _block(design, "rectifier", "")
    topology = rectifier.get("topology")
    if topology == "switchable":
        raise DesignError("rectifier.topology: simulate each position of a switchable rectifier as its own design")
    if topology not in TOPOLOGIES:
        raise DesignError(f"rectifier.topology must be one of {', '.join(TOPOLOGIES)}; got {topology!r}")
    valve = _part(rectifier, "valve")
    perveance = _quantity(valve, "perveance", "perveance", "rectifier.valve.", required=bool(valve))
    if topology == "hybrid-bridge" and perveance is None:
        raise DesignError("rectifier.valve.perveance is required for a hybrid-bridge")
    needs_silicon = topology != "centre-tap" or perveance is None
    diode = _part(rectifier, "diode") if needs_silicon else {}
    saturation = _quantity(diode, "saturation_current", "current", "rectifier.diode.", required=needs_silicon)
    emission = _quantity(diode, "emission_coefficient", "fraction", "rectifier.diode.", required=needs_silicon)
    diode_rs = _quantity(diode, "series_resistance", "resistance", "rectifier.diode.", required=False, positive=False)

    raw_nodes = design.get("nodes")
    if not isinstance(raw_nodes, list) or not raw_nodes:
        raise DesignError("nodes must be a non-empty list (the B+ ladder, reservoir first)")
    nodes = []
    names = set()
    for index, raw in enumerate(raw_nodes):
        where = f"nodes[{index}]."
        if not isinstance(raw, dict):
            raise DesignError(f"nodes[{index}] must be a mapping")
        name = str(raw.get("name", f"node{index + 1}"))
        if name in names:
            raise DesignError(f"{where}name {name!r} is used twice")
        names.add(name)
        load = dict(_block(raw, "load", where, required=False))
        pair = ("idle_current", "full_power_current")
        if any(key in load for key in pair):
            if not all(key in load for key in pair) or "current" in load or "resistance" in load:
                raise DesignError(f"{where}load: idle_current and full_power_current go together, alone")
            load = {"current": load[pair[0] if loads == "idle" else pair[1]]}
        if load and ("current" in load) == ("resistance" in load):
            raise DesignError(f"{where}load must give exactly one of current or resistance")
        bleeder = _quantity(raw, "bleeder", "resistance", where, required=False)
        feed = _block(raw, "feed", where, required=False)
        if index > 0 and not feed:
            raise DesignError(f"{where}feed is required: every node after the first hangs from a feed")
        feed_r = _quantity(feed, "resistance", "resistance", where + "feed.", required=False, positive=False)
        feed_l = _quantity(feed, "inductance", "inductance", where + "feed.", required=False)
        if feed and not feed_l and not feed_r:
            raise DesignError(f"{where}feed needs a resistance > 0 or an inductance")
        nodes.append(
            _Node(
                name=name,
                capacitance=_quantity(raw, "capacitance", "capacitance", where, required=False),
                esr=_quantity(raw, "esr", "resistance", where, required=False, positive=False) or 0.0,
                load_current=_quantity(load, "current", "current", where + "load.", required=False, positive=False),
                load_resistance=_parallel(
                    _quantity(load, "resistance", "resistance", where + "load.", required=False), bleeder
                ),
                feed_resistance=(feed_r or 0.0) if feed else None,
                feed_inductance=feed_l,
            )
        )
    if nodes[0].capacitance is None and not (nodes[0].feed_inductance or nodes[0].feed_resistance):
        raise DesignError("nodes[0].capacitance is required (the reservoir), unless the first node has a feed")
    return _Design(
        frequency=_quantity(mains, "frequency", "frequency", "mains."),
        secondary_peak=math.sqrt(2.0) * _quantity(transformer, "secondary_voltage", "voltage", "transformer."),
        secondary_resistance=_winding_resistance(transformer),
        leakage_inductance=_quantity(
            transformer, "leakage_inductance", "inductance", "transformer.", required=False, positive=False
        )
        or 0.0,
        topology=topology,
        saturation_current=saturation,
        emission_coefficient=emission,
        diode_resistance=diode_rs or 0.0,
        perveance=perveance,
        nodes=tuple(nodes),
    )


# ----------------------------------------------------------------------------------------------
# Estimates: a starting state and the slowest time constant


def _thermal_voltage(temperature: float) -> float:
    """kT/q at ``temperature`` [degC]. [V]"""
    return BOLTZMANN * (temperature + 273.15) / ELEMENTARY_CHARGE


def _element_drop(d: _Design, current: float, temperature: float, valve: bool) -> float:
    """Forward drop of one rectifying element at ``current`` [A]: Shockley with RS, or Child-Langmuir. [V]"""
    current = max(current, 1e-9)
    if valve:
        return (current / d.perveance) ** (2.0 / 3.0)
    n_vt = d.emission_coefficient * _thermal_voltage(temperature)
    return n_vt * math.log1p(current / d.saturation_current) + current * d.diode_resistance


def _path_drop(d: _Design, current: float, temperature: float) -> float:
    """Drop of the rectifying elements in one conducting path at ``current`` [A]. [V]"""
    if d.topology == "bridge":
        return 2 * _element_drop(d, current, temperature, valve=False)
    if d.topology == "hybrid-bridge":
        return _element_drop(d, current, temperature, valve=True) + _element_drop(d, current, temperature, False)
    return _element_drop(d, current, temperature, valve=d.perveance is not None)


def _ladder_dc(d: _Design, rectifier_voltage: float) -> tuple[list[float], list[float]]:
    """DC node voltages [V] and feed currents [A] of the ladder driven at ``rectifier_voltage`` [V]."""
    n = len(d.nodes)
    voltages = [rectifier_voltage] * n
    for _ in range(60):
        loads = [
            (node.load_current or 0.0) + (voltages[k] / node.load_resistance if node.load_resistance else 0.0)
            for k, node in enumerate(d.nodes)
        ]
        feeds = [sum(loads[k:]) for k in range(n)]
        previous = rectifier_voltage
        new = []
        for k, node in enumerate(d.nodes):
            previous -= (node.feed_resistance or 0.0) * feeds[k] if (k > 0 or d.choke_input) else 0.0
            new.append(max(previous, 0.0))
        if max(abs(a - b) for a, b in zip(new, voltages)) < 1e-9 * max(rectifier_voltage, 1.0):
            voltages = new
            break
        voltages = [0.5 * (a + b) for a, b in zip(new, voltages)]
    return voltages, feeds


def _half_conduction_angle(ratio: float) -> float:
    """Solve tan(phi) - phi = ratio for phi in (0, pi/2). [rad]"""
    from scipy.optimize import brentq

    if ratio <= 0:
        return 0.0
    return brentq(lambda phi: math.tan(phi) - phi - ratio, 1e-9, math.pi / 2 - 1e-12)


def _estimate_state(d: _Design, temperature: float) -> dict[str, float]:
    """A starting state near the periodic steady state: capacitor voltages and inductor currents.

    Capacitor input uses the infinite-C, series-resistance rectifier relation (tan phi - phi =
    pi R_s/(n R_L), V_dc = V_m cos phi; see /work/shared/REFERENCES.md, "classic textbook result");
    choke input uses the mean of the full-wave rectified sine, 2 V_m/pi. Only a starting point: the
    steady-state loop removes its error.
    """
    vpk = d.secondary_peak
    rs = d.secondary_resistance + d.leakage_inductance * 2 * math.pi * d.frequency
    voltage = 0.9 * vpk
    peak = 4 * max(_ladder_dc(d, voltage)[1][0], 1e-6)
    for _ in range(60):
        voltages, feeds = _ladder_dc(d, voltage)
        total = max(feeds[0], 1e-6)
        if d.choke_input:
            new = 2 * vpk / math.pi - total * rs - _path_drop(d, total, temperature)
        else:
            # The elements enter as their chord resistance at the peak current.
            chord = _path_drop(d, peak, temperature) / peak
            load_resistance = max(voltage, 1.0) / total
            phi = _half_conduction_angle(math.pi * (rs + d.nodes[0].esr + chord) / (2 * load_resistance))
            new = vpk * math.cos(phi)
            peak = 0.5 * peak + 0.25 * total * math.pi * (1 - math.cos(phi)) / max(math.sin(phi) - phi * math.cos(phi), 1e-9)
        new = max(new, 0.05 * vpk)
        if abs(new - voltage) < 1e-7 * vpk:
            voltage = new
            break
        voltage = 0.5 * (voltage + new)
    voltages, feeds = _ladder_dc(d, voltage)
    state = {}
    for k, node in enumerate(d.nodes):
        if node.capacitance:
            state[f"vc{k + 1}"] = voltages[k]
        if node.feed_inductance:
            state[f"il{k + 1}"] = feeds[k]
    if d.leakage_inductance > 0:
        for leg in _legs(d):
            state[f"ils{leg}"] = 0.0
    return state


def _slowest_time_constant(d: _Design, temperature: float) -> float:
    """Slowest decay time of the linearised ladder behind the rectifier's output resistance. [s]

    The rectifier is replaced by its source resistance (winding, element and ESR) divided by an
    assumed conduction duty (0.2 for capacitor input, 1 for choke input); constant-current loads
    are open circuits. The generalised eigenvalues of the nodal (G, C) pencil give the decay rates.
    """
    from scipy.linalg import eig

    total = max(_ladder_dc(d, d.secondary_peak)[1][0], 1e-6)
    r_element = (_path_drop(d, 1.01 * total, temperature) - _path_drop(d, total, temperature)) / (0.01 * total)
    r_source = d.secondary_resistance + 2 * math.pi * d.frequency * d.leakage_inductance + r_element
    duty = 1.0 if d.choke_input else 0.2
    names = ["rect"]
    inductors = []  # (a, b, inductance)
    resistors = [("rect", None, max(r_source / duty, 1e-3))]
    capacitors = []
    previous = "rect"
    for k, node in enumerate(d.nodes):
        here = f"n{k + 1}"
        if k == 0 and not d.choke_input:
            here = "rect"
        else:
            names.append(here)
            if node.feed_inductance:
                mid = f"f{k + 1}"
                names.append(mid)
                resistors.append((previous, mid, max(node.feed_resistance, 1e-3)))
                inductors.append((mid, here, node.feed_inductance))
            else:
                resistors.append((previous, here, node.feed_resistance))
        if node.capacitance:
            if node.esr > 0:
                mid = f"c{k + 1}"
                names.append(mid)
                capacitors.append((here, mid, node.capacitance))
                resistors.append((mid, None, node.esr))
            else:
                capacitors.append((here, None, node.capacitance))
        if node.load_resistance:
            resistors.append((here, None, node.load_resistance))
        previous = here
    size = len(names) + len(inductors)
    index = {name: i for i, name in enumerate(names)}
    g = np.zeros((size, size))
    c = np.zeros((size, size))

    def stamp(matrix, a, b, value):
        for p, sp in ((a, 1), (b, -1)):
            for q, sq in ((a, 1), (b, -1)):
                if p is not None and q is not None:
                    matrix[index[p], index[q]] += sp * sq * value

    for a, b, r in resistors:
        stamp(g, a, b, 1.0 / r)
    for a, b, cap in capacitors:
        stamp(c, a, b, cap)
    for j, (a, b, inductance) in enumerate(inductors):
        row = len(names) + j
        for node, sign in ((a, 1.0), (b, -1.0)):
            if node is not None:
                g[index[node], row] += sign
                g[row, index[node]] += sign
        c[row, row] = -inductance
    rates = eig(-g, c, right=False)
    rates = rates[np.isfinite(rates)]
    decay = -rates.real[rates.real < 0]
    if decay.size == 0:
        return 10 * d.period
    return float(1.0 / max(decay.min(), 1e-3))


# ----------------------------------------------------------------------------------------------
# Netlist


def _legs(d: _Design) -> tuple[int, ...]:
    """Sources of the secondary: one winding for a bridge, two half-windings for centre-tap."""
    return (1,) if d.topology != "centre-tap" else (1, 2)


def _elements(d: _Design) -> list[tuple[str, str, str, bool]]:
    """Rectifying elements as (label, anode node, cathode node, is_valve)."""
    if d.topology == "centre-tap":
        valve = d.perveance is not None
        return [("1", "ac1", "rect", valve), ("2", "ac2", "rect", valve)]
    up_valve = d.topology == "hybrid-bridge"
    return [("1", "ac1", "rect", up_valve), ("2", "ac2", "rect", up_valve), ("3", "0", "ac1", False), ("4", "0", "ac2", False)]


def _g(value: float) -> str:
    return f"{value:.12g}"


def _shunt(d: _Design, inductance: float) -> float:
    """Resistance put across ``inductance`` [H] (see _INDUCTOR_SHUNT). [ohm]"""
    return _INDUCTOR_SHUNT * 2 * math.pi * d.frequency * inductance


@dataclass(frozen=True)
class _Numerics:
    step: float  # [s], maximum time step
    reltol: float  # [-]
    temperature: float  # [degC]
    method: str = _SETUPS[0][0]
    element_capacitance: float = _SETUPS[0][1]  # [F]


def _netlist(d: _Design, state: dict, cycles: int, numerics: _Numerics, data_file: str) -> str:
    """Netlist plus control script: simulate ``cycles`` mains cycles from ``state`` and write the
    last _RECORD_CYCLES of them to ``data_file``."""
    period = d.period
    step = numerics.step
    cap = numerics.element_capacitance
    lines = [
        "* Railwright reference circuit (generated by tests/spice.py)",
        f".options reltol={_g(numerics.reltol)} abstol=1e-12 chgtol=1e-16 itl4=100 method={numerics.method}"
        f" tnom={_g(numerics.temperature)}",
        f".temp {_g(numerics.temperature)}",
    ]
    if d.silicon_elements:
        lines.append(
            f".model dsil D(IS={_g(d.saturation_current)} N={_g(d.emission_coefficient)} RS={_g(d.diode_resistance)}"
            f" CJO={_g(cap)})"
        )
    vpk = d.secondary_peak
    rs = d.secondary_resistance
    saves = ["v(rect)", "v(ac1)", "v(ac2)"]
    for leg in _legs(d):
        amplitude = vpk if leg == 1 else -vpk
        low = "ac2" if d.topology != "centre-tap" else "0"
        lines.append(f"VS{leg} w{leg} {low} SIN(0 {_g(amplitude)} {_g(d.frequency)})")
        saves += [f"i(vs{leg})", f"v(w{leg})"]
        if d.leakage_inductance > 0:
            lines.append(f"RS{leg} w{leg} x{leg} {_g(rs)}")
            lines.append(f"LS{leg} x{leg} ac{leg} {_g(d.leakage_inductance)} IC={_g(state.get(f'ils{leg}', 0.0))}")
            lines.append(f"RP{leg} x{leg} ac{leg} {_g(_shunt(d, d.leakage_inductance))}")
            saves.append(f"v(x{leg})")
        else:
            lines.append(f"RS{leg} w{leg} ac{leg} {_g(rs)}")
    for leg in (1, 2):
        lines.append(f"RB{leg} ac{leg} 0 {_g(_BLEED)}")
    for label, anode, cathode, valve in _elements(d):
        inner = f"e{label}"
        lines.append(f"VE{label} {anode} {inner} 0")
        saves.append(f"i(ve{label})")
        if valve:
            lines.append(f"BE{label} {inner} {cathode} I={_g(d.perveance)}*pow(max(v({inner},{cathode}),0),1.5)")
            lines.append(f"RE{label} {inner} {cathode} {_g(_BLEED)}")
            if cap > 0:
                lines.append(f"CE{label} {inner} {cathode} {_g(cap)}")
        else:
            lines.append(f"DE{label} {inner} {cathode} dsil")
    previous = "rect"
    for k, node in enumerate(d.nodes, start=1):
        here = f"n{k}"
        if node.feed_resistance is None and node.feed_inductance is None:
            lines.append(f"VF{k} {previous} {here} 0")
        elif not node.feed_inductance:
            lines.append(f"VF{k} {previous} f{k} 0")
            lines.append(f"RF{k} f{k} {here} {_g(node.feed_resistance)}")
        else:
            # The inductance hangs from node t{k}, after the feed's resistance if it has one.
            if node.feed_resistance:
                lines.append(f"VF{k} {previous} f{k} 0")
                lines.append(f"RF{k} f{k} t{k} {_g(node.feed_resistance)}")
            else:
                lines.append(f"VF{k} {previous} t{k} 0")
            lines.append(f"LF{k} t{k} {here} {_g(node.feed_inductance)} IC={_g(state.get(f'il{k}', 0.0))}")
            lines.append(f"RQ{k} t{k} {here} {_g(_shunt(d, node.feed_inductance))}")
            saves.append(f"v(t{k})")
        saves += [f"v({here})", f"i(vf{k})"]
        if node.capacitance:
            vc = _g(state.get(f"vc{k}", 0.0))
            lines.append(f"VC{k} {here} c{k} 0")
            if node.esr > 0:
                lines.append(f"C{k} c{k} d{k} {_g(node.capacitance)} IC={vc}")
                lines.append(f"RC{k} d{k} 0 {_g(node.esr)}")
                saves.append(f"v(d{k})")
            else:
                lines.append(f"C{k} c{k} 0 {_g(node.capacitance)} IC={vc}")
            saves += [f"v(c{k})", f"i(vc{k})"]
        if node.load_current is not None:
            lines.append(f"IL{k} {here} 0 DC {_g(node.load_current)}")
        if node.load_resistance is not None:
            lines.append(f"RL{k} {here} 0 {_g(node.load_resistance)}")
        previous = here
    stop = cycles * period
    start = max(stop - _RECORD_CYCLES * period - 2 * step, 0.0)
    lines += [
        ".control",
        "set wr_singlescale",
        "set wr_vecnames",
        "option numdgt=12",
        "save " + " ".join(saves),
        f"tran {_g(step)} {_g(stop)} {_g(start)} {_g(step)} uic",
        f"wrdata {data_file} " + " ".join(saves),
        "quit 0",
        ".endc",
        ".end",
    ]
    return "\n".join(lines) + "\n"


def netlist(design, *, cycles: int | None = None, step: float | None = None, temperature: float = 27.0,
            loads: str = "full") -> str:
    """The ngspice netlist of a design, starting from the harness's estimated state.

    Parameters
    ----------
    design : dict or path
        A Railwright design (dict, or path to its YAML file).
    cycles : int, optional
        Mains cycles to simulate; default one chunk sized from the slowest time constant.
    step : float, optional
        Maximum time step. [s] Default one 2000th of the mains period.
    temperature : float
        Device temperature. [degC] 27 is SPICE's default.
    loads : {"full", "idle"}
        Which current of an idle/full-power load to draw.
    """
    d = _parse(design, loads)
    numerics = _Numerics(step=step or d.period / _STEPS_PER_CYCLE, reltol=1e-6, temperature=temperature)
    cycles = cycles or _chunk_cycles(d, _slowest_time_constant(d, temperature))
    return _netlist(d, _estimate_state(d, temperature), cycles, numerics, "data.txt")


# ----------------------------------------------------------------------------------------------
# Running ngspice and reading its output


class _Stalled(SpiceError):
    """ngspice gave up on a time step ("timestep too small")."""


def _run(text: str, data_file: str, workdir: Path, timeout: float) -> dict[str, np.ndarray]:
    circuit = workdir / "circuit.cir"
    circuit.write_text(text, encoding="utf-8")
    output = workdir / data_file
    if output.exists():
        output.unlink()
    try:
        run = subprocess.run(
            [NGSPICE, "-b", circuit.name], cwd=workdir, capture_output=True, text=True, timeout=timeout, check=False
        )
    except FileNotFoundError:
        raise SpiceError("ngspice not found on PATH; install Debian package ngspice") from None
    except subprocess.TimeoutExpired:
        raise SpiceError(f"ngspice did not finish within {timeout:g} s") from None
    log = run.stdout + run.stderr
    if run.returncode != 0 or re.search(r"aborted|Timestep too small|no such vector", log, re.I) or not output.exists():
        tail = "\n".join(log.strip().splitlines()[-15:])
        stalled = re.search(r"Timestep too small", log, re.I)
        raise (_Stalled if stalled else SpiceError)(f"ngspice failed (exit {run.returncode}):\n{tail}")
    with open(output, encoding="utf-8") as handle:
        header = handle.readline().split()
    values = np.loadtxt(output, skiprows=1, ndmin=2)
    if values.shape[1] != len(header) or header[0] != "time" or values.shape[0] < 10:
        raise SpiceError(f"unexpected ngspice data: {values.shape} values for columns {header}")
    data = {name.lower(): values[:, i] for i, name in enumerate(header)}
    time_axis = data["time"]
    keep = np.concatenate(([True], np.diff(time_axis) > 0))  # drop repeated time points
    return {name: column[keep] for name, column in data.items()}


def _state_signals(d: _Design, data: dict) -> dict[str, np.ndarray]:
    """Waveforms of the state variables: capacitor voltages [V] and inductor currents [A]."""
    state = {}
    for k, node in enumerate(d.nodes, start=1):
        if node.capacitance:
            state[f"vc{k}"] = data[f"v(c{k})"] - (data[f"v(d{k})"] if node.esr > 0 else 0.0)
        if node.feed_inductance:
            shunted = (data[f"v(t{k})"] - data[f"v(n{k})"]) / _shunt(d, node.feed_inductance)
            state[f"il{k}"] = data[f"i(vf{k})"] - shunted
    if d.leakage_inductance > 0:
        for leg in _legs(d):
            shunted = (data[f"v(x{leg})"] - data[f"v(ac{leg})"]) / _shunt(d, d.leakage_inductance)
            state[f"ils{leg}"] = -data[f"i(vs{leg})"] - shunted
    return state


def _state_scale(d: _Design, key: str) -> float:
    """Scale that makes a state variable's change relative: the secondary peak, or the DC load current."""
    if key.startswith("vc"):
        return d.secondary_peak
    return max(_ladder_dc(d, d.secondary_peak)[1][0], 1e-6)


def _settling(steps: np.ndarray, expected_ratio: float) -> tuple[float, float]:
    """Decay ratio per cycle and estimated distance from steady state, from cycle-to-cycle changes.

    Parameters
    ----------
    steps : numpy.ndarray
        Changes of the scaled cycle-mean state between consecutive cycles, oldest first (at least
        three rows). [-]
    expected_ratio : float
        Per-cycle decay of the slowest mode expected from the time-constant estimate. [-]

    Returns
    -------
    ratio : float
        The measured ratio when the last changes shrink geometrically with one consistent ratio in
        (0, 0.999) (the two ratios within a tenth of the distance from 1), else 0 (no clean
        single-mode decay, e.g. a ringing LC filter).
    settle : float
        Estimated remaining distance to the periodic steady state: the last change summed over
        the geometric tail of the measured ratio, or else the largest recent change over the
        tail of ``expected_ratio`` (conservative).
    """
    if steps.shape[1] == 0:
        return 0.0, 0.0
    ratios = []
    for older, newer in zip(steps[-3:-1], steps[-2:]):
        norm = float(older @ older)
        ratios.append(float(newer @ older) / norm if norm > 0 else 0.0)
    last = float(np.max(np.abs(steps[-1])))
    r = ratios[-1]
    if all(0.0 < q < 0.999 for q in ratios) and abs(r - ratios[0]) <= 0.1 * (1.0 - r):
        return r, last / (1.0 - r)
    recent = float(np.max(np.abs(steps[-2:])))
    return 0.0, recent / (1.0 - min(max(expected_ratio, max(ratios, default=0.0), 0.0), 0.999))


def _chunk_cycles(d: _Design, time_constant: float) -> int:
    """Cycles per ngspice run: three ``time_constant`` [s], within [8, _MAX_RUN_CYCLES]."""
    return int(np.clip(math.ceil(3.0 * time_constant / d.period), 8, _MAX_RUN_CYCLES))


# ----------------------------------------------------------------------------------------------
# Measurements over one mains cycle


def _window(t: np.ndarray, y: np.ndarray, t0: float, t1: float) -> tuple[np.ndarray, np.ndarray]:
    """Samples of y on [t0, t1], with the end points interpolated in."""
    inside = (t > t0) & (t < t1)
    tw = np.concatenate(([t0], t[inside], [t1]))
    yw = np.concatenate(([np.interp(t0, t, y)], y[inside], [np.interp(t1, t, y)]))
    return tw, yw


_trapezoid = getattr(np, "trapezoid", None) or np.trapz  # numpy < 2 has only trapz


def _mean(t, y):
    return float(_trapezoid(y, t) / (t[-1] - t[0]))


def _rms(t, y):
    return float(math.sqrt(max(_trapezoid(y * y, t) / (t[-1] - t[0]), 0.0)))


def _conducting_time(t, y, threshold):
    """Time y spends above threshold, with linear interpolation of the crossings. [s]"""
    above = y > threshold
    dt = np.diff(t)
    both = above[:-1] & above[1:]
    total = float(np.sum(dt[both]))
    edge = above[:-1] != above[1:]
    y0, y1 = y[:-1][edge], y[1:][edge]
    fraction = np.where(above[:-1][edge], (y0 - threshold) / (y0 - y1), (y1 - threshold) / (y1 - y0))
    return total + float(np.sum(dt[edge] * fraction))


def _measure(d: _Design, data: dict, t1: float, conduction_threshold: float) -> dict:
    period = d.period
    t0 = t1 - period
    t = data["time"]

    def w(name):
        return _window(t, data[name], t0, t1)

    nodes = []
    load_power = 0.0
    for k, node in enumerate(d.nodes, start=1):
        tv, v = w(f"v(n{k})")
        dc = _mean(tv, v)
        entry = {
            "name": node.name,
            "dc_voltage": dc,
            "ripple_pp": float(v.max() - v.min()),
            "ripple_rms": _rms(tv, v - dc),
            "capacitor_rms_current": _rms(*w(f"i(vc{k})")) if node.capacitance else 0.0,
            "load_current": (node.load_current or 0.0) + (dc / node.load_resistance if node.load_resistance else 0.0),
        }
        if node.load_current is not None:
            load_power += node.load_current * dc
        if node.load_resistance is not None:
            load_power += _mean(tv, v * v) / node.load_resistance
        nodes.append(entry)

    elements = []
    for label, anode, cathode, valve in _elements(d):
        ti, current = w(f"i(ve{label})")
        va = np.zeros_like(ti) if anode == "0" else w(f"v({anode})")[1]
        vk = w(f"v({cathode})")[1]
        peak = float(current.max())
        elements.append(
            {
                "element": label,
                "kind": "valve" if valve else "silicon",
                "peak_current": peak,
                "rms_current": _rms(ti, current),
                "average_current": _mean(ti, current),
                "conduction_angle": 360.0 * _conducting_time(ti, current, conduction_threshold * peak) / period,
                "piv": float(np.max(vk - va)),
            }
        )
    windings = []
    input_power = 0.0
    for leg in _legs(d):
        ts, i_into = w(f"i(vs{leg})")
        emf = w(f"v(w{leg})")[1] - (w("v(ac2)")[1] if d.topology != "centre-tap" else 0.0)
        windings.append(_rms(ts, i_into))
        input_power += _mean(ts, -emf * i_into)
    return {
        "nodes": nodes,
        "rectifier_peak_current": max(e["peak_current"] for e in elements),
        "rectifier_rms_current": float(np.mean([e["rms_current"] for e in elements])),
        "rectifier_average_current": float(np.mean([e["average_current"] for e in elements])),
        "conduction_angle": float(np.mean([e["conduction_angle"] for e in elements])),
        "piv": max(e["piv"] for e in elements),
        "secondary_rms_current": float(np.mean(windings)),
        "input_power": input_power,
        "load_power": load_power,
        "elements": elements,
    }


# ----------------------------------------------------------------------------------------------
# Steady state


def _run_with_fallback(d: _Design, state: dict, cycles: int, numerics: _Numerics, workdir: Path, timeout: float,
                       setups_used: list) -> dict[str, np.ndarray]:
    """Run one chunk, trying the integration set-ups in turn while ngspice stalls.

    The set-up that worked is appended to ``setups_used``; the last one there is tried first.
    """
    preferred = setups_used[-1] if setups_used else _SETUPS[0]
    order = [preferred] + [setup for setup in _SETUPS if setup != preferred]
    for method, capacitance in order:
        trial = replace(numerics, method=method, element_capacitance=capacitance)
        try:
            data = _run(_netlist(d, state, cycles, trial, "data.txt"), "data.txt", workdir, timeout)
        except _Stalled as error:
            failure = error
            continue
        setups_used.append((method, capacitance))
        return data
    raise SpiceError(f"ngspice stalled with every integration set-up {_SETUPS}; last report:\n{failure}")


def simulate(
    design,
    *,
    cycles: int | None = None,
    step: float | None = None,
    tolerance: float = 2e-6,
    max_runs: int = 12,
    temperature: float = 27.0,
    reltol: float = 1e-6,
    conduction_threshold: float = 1e-4,
    timeout: float = 300.0,
    loads: str = "full",
) -> dict:
    """Simulate a design with ngspice to periodic steady state and measure its last mains cycle.

    Parameters
    ----------
    design : dict or path
        A Railwright design (dict, or path to its YAML file).
    cycles : int, optional
        If given, simulate exactly this many mains cycles (>= 4) from the estimated state, without
        extrapolation or the settling test (in runs of at most 40 cycles, each continuing from the
        last; residual and settle error are still reported). Default: loop until settled.
    step : float, optional
        Maximum time step. [s] Default one 2000th of the mains period.
    tolerance : float
        Stop when the estimated distance of the state from periodic steady state, relative to the
        secondary peak voltage (capacitor voltages) or the DC load current (inductor currents), is
        below this. [-]
    max_runs : int
        Most ngspice runs of the steady-state loop before giving up with :class:`SpiceError`.
    temperature : float
        Diode temperature. [degC] 27 is SPICE's default.
    reltol : float
        ngspice's relative tolerance. [-]
    conduction_threshold : float
        An element counts as conducting while its current exceeds this fraction of its peak. [-]
    timeout : float
        Longest one ngspice run may take. [s]
    loads : {"full", "idle"}
        Which current of an idle/full-power load to draw (Railwright's solver defaults to full).

    Returns
    -------
    dict
        ``nodes`` (each ``name``, ``dc_voltage`` [V], ``ripple_pp`` [V], ``ripple_rms`` [V],
        ``capacitor_rms_current`` [A], ``load_current`` [A]); per rectifying element
        ``rectifier_peak_current`` [A] (largest element), ``rectifier_rms_current`` [A],
        ``rectifier_average_current`` [A] (mean over elements), ``conduction_angle`` [deg of the
        mains cycle], ``piv`` [V] (largest reverse voltage on any element);
        ``secondary_rms_current`` [A] (per half-winding for centre-tap); ``input_power`` [W] (from
        the open-circuit EMF), ``load_power`` [W]; ``elements`` (per-element figures);
        ``steady_state`` (``cycles`` simulated, ``runs``, ``residual`` = last cycle-to-cycle change,
        ``settle_error`` = estimated distance from steady state, both relative as for
        ``tolerance``; ``time_constant`` [s] estimated for the slowest mode, ``step`` [s], ``reltol``,
        ``temperature`` [degC], ``integration`` = the ngspice set-ups that ran); ``wall_time`` [s].
    """
    started = time.perf_counter()
    d = _parse(design, loads)
    if not spice_available():
        raise SpiceError("ngspice not found on PATH; install Debian package ngspice")
    period = d.period
    step = step or period / _STEPS_PER_CYCLE
    numerics = _Numerics(step=step, reltol=reltol, temperature=temperature)
    setups_used: list[tuple[str, float]] = []
    tau = _slowest_time_constant(d, temperature)
    chunk = _chunk_cycles(d, tau)
    if cycles is not None and cycles < _RECORD_CYCLES:
        raise DesignError(f"cycles must be >= {_RECORD_CYCLES}, got {cycles}")
    state = _estimate_state(d, temperature)
    keys = sorted(state)
    scale = np.array([_state_scale(d, key) for key in keys])
    if cycles is not None:
        # A fixed length, in near-equal runs that each continue from the previous one's end.
        count = math.ceil(cycles / _MAX_RUN_CYCLES)
        plan = [cycles // count + (i < cycles % count) for i in range(count)]
    total_cycles = 0
    runs = 0
    with tempfile.TemporaryDirectory(prefix="railwright-spice-") as folder:
        workdir = Path(folder)
        while True:
            if cycles is not None:
                chunk = plan[runs]
            data = _run_with_fallback(d, state, chunk, numerics, workdir, timeout, setups_used)
            runs += 1
            total_cycles += chunk
            end = chunk * period
            signals = _state_signals(d, data)
            final = {key: float(np.interp(end, data["time"], signals[key])) for key in keys}
            # Cycle means settle like the state but, unlike values at a cycle boundary, are not
            # sensitive to a commutation in progress at the boundary.
            means = np.array(
                [
                    [_mean(*_window(data["time"], signals[key], end - (j + 1) * period, end - j * period)) for key in keys]
                    for j in reversed(range(min(_RECORD_CYCLES, chunk)))
                ]
            ).reshape(-1, len(keys))
            steps = np.diff(means / scale, axis=0)
            residual = float(np.max(np.abs(steps[-1]))) if keys else 0.0
            ratio, settle = _settling(steps, math.exp(-period / tau))
            if cycles is not None:
                if runs == len(plan):
                    break
                state = final
                continue
            if settle <= tolerance or not keys:
                break
            if runs >= max_runs:
                raise SpiceError(
                    f"no periodic steady state after {runs} runs ({total_cycles} cycles): "
                    f"estimated distance {settle:.2e} > tolerance {tolerance:.1e}"
                )
            # Aitken's step for the slow mode's geometric decay; none when the decay is not clean.
            jump = ratio / (1.0 - ratio) if ratio else 0.0
            state = {key: final[key] + jump * steps[-1][i] * scale[i] for i, key in enumerate(keys)}
        result = _measure(d, data, end, conduction_threshold)
    result["steady_state"] = {
        "cycles": total_cycles,
        "runs": runs,
        "residual": residual,
        "settle_error": settle,
        "time_constant": tau,
        "step": step,
        "reltol": reltol,
        "temperature": temperature,
        "integration": [
            {"method": method, "element_capacitance": capacitance}
            for method, capacitance in dict.fromkeys(setups_used)
        ],
    }
    result["wall_time"] = time.perf_counter() - started
    return result


# ----------------------------------------------------------------------------------------------
# Invented designs for the cross-checks and the benchmark

_SILICON = {"saturation_current": "5 nA", "emission_coefficient": 1.8, "series_resistance": "0.03 ohm"}


def design_dict(topology, secondary_voltage, secondary_resistance, nodes, *, diode=_SILICON,
                perveance=None, leakage=None):
    """An invented design in Railwright's design-file format, on 230 V / 50 Hz mains (fresh dicts
    every call). ``diode=None`` for a path with no silicon."""
    transformer = {"secondary_voltage": secondary_voltage, "secondary_resistance": secondary_resistance}
    if leakage:
        transformer["leakage_inductance"] = leakage
    rectifier = {"topology": topology}
    if diode:
        rectifier["diode"] = dict(diode)
    if perveance:
        rectifier["valve"] = {"perveance": perveance}
    return {
        "mains": {"voltage": "230 V", "frequency": "50 Hz"},
        "transformer": transformer,
        "rectifier": rectifier,
        "nodes": nodes,
    }


def invented_designs() -> dict[str, dict]:
    """Invented test cases (not taken from any published or commercial circuit), one per feature.

    Returns fresh dicts on every call, keyed by a short name.
    """
    return {
        # Invented test case: silicon bridge, capacitor input, reservoir with ESR, two nodes.
        "bridge": design_dict("bridge", "300 V", "50 ohm", [
            {"name": "plates", "capacitance": "100 uF", "esr": "0.2 ohm", "load": {"current": "200 mA"}},
            {"name": "screens", "feed": {"resistance": "470 ohm"}, "capacitance": "47 uF", "load": {"current": "15 mA"}},
        ]),
        # Invented test case: silicon centre-tap (per half-winding values).
        "centre-tap-silicon": design_dict("centre-tap", "280 V", "35 ohm", [
            {"name": "plates", "capacitance": "68 uF", "load": {"current": "120 mA"}},
        ]),
        # Invented test case: valve centre-tap, small reservoir.
        "centre-tap-valve": design_dict("centre-tap", "330 V", "90 ohm", [
            {"name": "plates", "capacitance": "32 uF", "load": {"current": "110 mA"}},
        ], perveance="7.07e-4", diode=None),
        # Invented test case: silicon bridge with a large leakage inductance.
        "bridge-leakage": design_dict("bridge", "300 V", "20 ohm", [
            {"name": "plates", "capacitance": "150 uF", "load": {"current": "250 mA"}},
        ], leakage="150 mH"),
        # Invented test case: three-node CRC ladder, the last node a resistive load.
        "crc-ladder": design_dict("bridge", "300 V", "50 ohm", [
            {"name": "plates", "capacitance": "47 uF", "load": {"current": "150 mA"}},
            {"name": "screens", "feed": {"resistance": "1 kohm"}, "capacitance": "22 uF", "load": {"current": "20 mA"}},
            {"name": "input", "feed": {"resistance": "10 kohm"}, "capacitance": "22 uF", "load": {"resistance": "100 kohm"}},
        ]),
        # Invented test case: hybrid bridge (valve plates up, silicon down).
        "hybrid-bridge": design_dict("hybrid-bridge", "350 V", "60 ohm", [
            {"name": "plates", "capacitance": "47 uF", "load": {"current": "140 mA"}},
        ], perveance="1.0e-3"),
        # Invented test case: choke input (L feed on the first node), no leakage inductance.
        "choke-input": design_dict("bridge", "380 V", "40 ohm", [
            {"name": "plates", "feed": {"inductance": "10 H", "resistance": "150 ohm"}, "capacitance": "47 uF",
             "load": {"current": "150 mA"}},
        ]),
        # Invented test case: resistive load on a large reservoir.
        "resistive-load": design_dict("bridge", "300 V", "15 ohm", [
            {"name": "plates", "capacitance": "220 uF", "load": {"resistance": "2.2 kohm"}},
        ]),
    }


def main(argv=None) -> int:
    """Print the ngspice reference result of a design YAML file as JSON (debugging aid)."""
    import argparse

    parser = argparse.ArgumentParser(description="ngspice reference simulation of a Railwright design")
    parser.add_argument("design", help="design YAML file")
    parser.add_argument("--cycles", type=int, help="simulate exactly this many cycles (no steady-state loop)")
    parser.add_argument("--step", type=float, help="maximum time step in seconds")
    parser.add_argument("--loads", choices=("full", "idle"), default="full",
                        help="current of idle/full-power loads (default full)")
    parser.add_argument("--netlist", action="store_true", help="print the netlist instead of simulating")
    args = parser.parse_args(argv)
    options = {"cycles": args.cycles, "step": args.step, "loads": args.loads}
    try:
        if args.netlist:
            sys.stdout.write(netlist(args.design, **options))
        else:
            print(json.dumps(simulate(args.design, **options), indent=2))
    except (DesignError, SpiceError, OSError) as error:
        print(f"error: {error}", file=sys.stderr)
        return 1
    return 0


if __name__ == "__main__":
    sys.exit(main())


# ----------------------------------------------------------------------------------------------
# Transients (switch-on, load steps): one ngspice run, no steady-state loop


def transient(design, *, duration: float, phase: float = 0.0, empty: bool = False,
              load_step: tuple | None = None, step: float | None = None,
              temperature: float = 27.0, loads: str = "full", timeout: float = 300.0) -> dict:
    """One ngspice transient of a design, every sample kept.

    Parameters
    ----------
    design : dict or path
    duration : float
        Simulated time. [s]
    phase : float
        Phase of the mains sine at t = 0 (90 = switched on at the crest). [degrees]
    empty : bool
        Start with every capacitor discharged and every inductor current zero (switch-on);
        otherwise from the harness's estimate of the steady state.
    load_step : (t_on, t_off, scale) or None
        Multiply every constant-current load by ``scale`` from t_on to t_off (0 ns edges are
        given 1 us). [s], [s], [-]
    step : float, optional
        Maximum time step; T/2000 by default. [s]
    loads : {"full", "idle", "none"}
        Which load currents the circuit starts with ("none": no constant-current loads).

    Returns
    -------
    dict of ndarray
        ngspice's vectors by name (``time``, ``v(n1)``, ``i(ve1)``, ...).
    """
    d = _parse(design, "full" if loads == "none" else loads)
    step = d.period / _STEPS_PER_CYCLE if step is None else step
    state = {} if empty else _estimate_state(d, temperature)
    numerics = _Numerics(step=step, reltol=1e-6, temperature=temperature)
    text = _netlist(d, state, 1, numerics, "data.txt")
    text = re.sub(r"SIN\(0 (\S+) (\S+)\)", lambda m: f"SIN(0 {m.group(1)} {m.group(2)} 0 0 "
                  f"{_g(phase)})", text)
    text = re.sub(r"^(tran \S+) \S+ \S+ (\S+ uic)$", lambda m: f"{m.group(1)} {_g(duration)} 0 "
                  f"{m.group(2)}", text, flags=re.M)

    def current_source(m):
        name, node, value = m.group(1), m.group(2), float(m.group(3))
        if loads == "none":
            value = 0.0
        if load_step is None:
            return f"{name} {node} 0 DC {_g(value)}"
        t_on, t_off, scale = load_step
        edge = 1e-6
        high = value * scale
        return (f"{name} {node} 0 PWL(0 {_g(value)} {_g(t_on)} {_g(value)} {_g(t_on + edge)} "
                f"{_g(high)} {_g(t_off)} {_g(high)} {_g(t_off + edge)} {_g(value)})")

    text = re.sub(r"^(IL\d+) (\S+) 0 DC (\S+)$", current_source, text, flags=re.M)
    with tempfile.TemporaryDirectory(prefix="railwright-spice-") as tmp:
        return _run(text, "data.txt", Path(tmp), timeout)
