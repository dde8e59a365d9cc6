"""One design -> every steady-state figure; many designs -> one vectorised pass.

This is the seam between the file world (validated :class:`~optimiser.inputs.design.Design` models) and
the physics modules, which work on arrays. Designs of the same ladder shape are solved together.
"""

from __future__ import annotations

from dataclasses import asdict, dataclass, field

import numpy as np
import pandas as pd

from optimiser.physics import ladder
from optimiser.physics import rectifier
from optimiser.physics import supply
from optimiser.physics.transients import node_outputs, output_statistics
from optimiser.inputs.design import Design, load_design

__all__ = ["NodeFigures", "SupplyResult", "Batch", "evaluate", "evaluate_many", "solve_batch",
           "cycle_waveforms"]

#: A rectifier path of less resistance than this (winding plus feed) is taken as this. [ohm]
MIN_PATH_RESISTANCE = 1e-3
#: Leakage of every capacitor, so a supply with no load at all (switch-on, before the valves
#: conduct) still has one periodic steady state. 1 nS = 1 Gohm, far below real leakage. [S]
LEAKAGE_CONDUCTANCE = 1e-9
#: Steps per half mains cycle in the steady-state solution (see tests/test_supply.py for the
#: step-size check against a tight reference).
STEPS_PER_HALF_CYCLE = 256
DEFAULT_DIODE = "1N4007"


@dataclass(frozen=True)
class NodeFigures:
    """Steady-state figures of one B+ node.

    Attributes
    ----------
    name : str
    dc_voltage : float
        Mean node voltage. [V]
    ripple_pp : float
        Peak-to-peak ripple. [V]
    ripple_rms : float
        RMS of the ripple (AC part). [V]
    capacitor_rms_current : float
        RMS current in the node's capacitor. [A]
    """

    name: str
    dc_voltage: float
    ripple_pp: float
    ripple_rms: float
    capacitor_rms_current: float


@dataclass(frozen=True)
class SupplyResult:
    """Periodic steady state of one supply.

    Attributes
    ----------
    nodes : tuple of NodeFigures
    rectifier_peak_current, rectifier_average_current, rectifier_rms_current : float
        Per rectifying element (one plate, one diode). [A]
    conduction_angle : float
        Part of the mains cycle one element conducts. [degrees]
    piv : float
        Largest reverse voltage across any rectifying element. [V]
    secondary_rms_current : float
        RMS current of the HV winding (each half-winding for centre-tap). [A]
    rectifier_loss, winding_loss : float
        Power lost in all rectifying elements, and in the path resistance of the transformer. [W]
    input_power, load_power, ladder_loss : float
        Power from the source; into the loads; in feed resistors, chokes and ESRs. [W]
    converged : bool
        Whether the periodic solution met its tolerance.
    """

    nodes: tuple
    rectifier_peak_current: float
    rectifier_average_current: float
    rectifier_rms_current: float
    conduction_angle: float
    piv: float
    secondary_rms_current: float
    rectifier_loss: float
    winding_loss: float
    input_power: float
    load_power: float
    ladder_loss: float
    converged: bool
    waveforms: dict = field(default=None, repr=False, compare=False)

    def to_dict(self) -> dict:
        """JSON-ready figures, SI floats (V, A, W, degrees)."""
        out = asdict(self)
        out.pop("waveforms")
        out["nodes"] = [asdict(n) for n in self.nodes]
        return out


@dataclass
class Batch:
    """Designs of one ladder shape as arrays (batch first). Built by :meth:`from_designs`."""

    structure: ladder.LadderStructure
    values: ladder.LadderValues
    elements: rectifier.PathElements
    peak: np.ndarray
    frequency: float
    winding_resistance: np.ndarray
    winding_inductance: np.ndarray
    first_feed_resistance: np.ndarray
    first_feed_inductance: np.ndarray
    topology: np.ndarray
    names: list

    @property
    def key(self) -> tuple:
        """What tells two batches of the same designs apart: EMF, capacitors and loads."""
        v = self.values
        return (self.peak.tobytes(), v.capacitance.tobytes(), v.load_current.tobytes())

    @staticmethod
    def structure_of(design: Design) -> ladder.LadderStructure:
        first = design.nodes[0].feed
        path_inductive = design.transformer.leakage_inductance > 0 or (
            first is not None and first.inductance > 0)
        feeds = [path_inductive] + [n.feed.inductance > 0 for n in design.nodes[1:]]
        return ladder.LadderStructure(
            n_nodes=len(design.nodes),
            esr=tuple(n.esr > 0 for n in design.nodes),
            inductive_feed=tuple(feeds),
        )

    @classmethod
    def from_designs(cls, designs, mains_scale=1.0, capacitance_scale=1.0, loads="full"):
        """Arrays for designs that share one ladder shape.

        Parameters
        ----------
        designs : list of Design
        mains_scale : float or array-like
            Source EMF over its nominal value, per design (mains and winding tolerance). [-]
        capacitance_scale : float or array-like
            Every capacitor over its nominal value, per design. [-]
        loads : {"full", "idle", "none"}
            Which current of an idle/full-power load to use. "none": the valves draw nothing
            yet (switch-on); resistive loads and bleeders stay.
        """
        structure = cls.structure_of(designs[0])
        n = structure.n_nodes
        count = len(designs)
        frequency = designs[0].mains.frequency
        scale = np.broadcast_to(np.asarray(mains_scale, float), (count,))
        c_scale = np.broadcast_to(np.asarray(capacitance_scale, float), (count,))
        cap = np.empty((count, n))
        esr = np.zeros((count, n))
        feed_r = np.zeros((count, n))
        feed_l = np.zeros((count, n))
        g_load = np.full((count, n), LEAKAGE_CONDUCTANCE)
        i_load = np.zeros((count, n))
        r_w = np.empty(count)
        l_w = np.empty(count)
        peak = np.empty(count)
        el = {k: np.zeros(count) for k in ("silicon_count", "valve_count", "saturation_current",
                                           "emission_coefficient", "series_resistance",
                                           "perveance")}
        topology = []
        memo = {}  # each kind of rectifier's parts looked up once a batch
        for b, d in enumerate(designs):
            if (cls.structure_of(d) != structure or d.mains.frequency != frequency
                    or d.valve_path != designs[0].valve_path):
                raise ValueError("a batch holds designs of one ladder shape, mains frequency and "
                                 "kind of rectifier path")
            t = d.transformer
            peak[b] = np.sqrt(2.0) * t.secondary_voltage * scale[b]
            r_w[b] = t.secondary_resistance
            l_w[b] = t.leakage_inductance
            for k, node in enumerate(d.nodes):
                cap[b, k] = node.capacitance * c_scale[b]
                esr[b, k] = node.esr
                if node.bleeder is not None:
                    g_load[b, k] += 1.0 / node.bleeder
                if node.feed is not None:
                    feed_r[b, k] = node.feed.resistance
                    feed_l[b, k] = node.feed.inductance
                if node.load is not None:
                    ld = node.load
                    if ld.resistance is not None:
                        g_load[b, k] += 1.0 / ld.resistance
                    elif loads == "none":
                        pass
                    elif ld.current is not None:
                        i_load[b, k] = ld.current
                    else:
                        i_load[b, k] = ld.idle_current if loads == "idle" else ld.full_power_current
            path = _path_elements(d, memo)
            for key, value in path.items():
                el[key][b] = value
            topology.append(d.rectifier.topology)
        path_r = r_w + feed_r[:, 0]
        path_l = l_w + feed_l[:, 0]
        path_r = np.where(path_l > 0, path_r, np.maximum(path_r, MIN_PATH_RESISTANCE))
        values = ladder.LadderValues(
            path_resistance=path_r, path_inductance=path_l, capacitance=cap, esr=esr,
            feed_resistance=feed_r, feed_inductance=feed_l, load_conductance=g_load,
            load_current=i_load)
        return cls(structure=structure, values=values, elements=rectifier.PathElements(**el),
                   peak=peak, frequency=frequency, winding_resistance=r_w, winding_inductance=l_w,
                   first_feed_resistance=feed_r[:, 0], first_feed_inductance=feed_l[:, 0],
                   topology=np.array(topology), names=[n.name for n in designs[0].nodes])


def _path_elements(design: Design, memo=None) -> dict:
    """Per-path element counts and parameters of one design (parts resolved from the
    catalogue; those of a rectifier named by its parts' names kept in ``memo``)."""
    r = design.rectifier
    key = (r.topology, r.diode, r.valve)
    if memo is None or not all(x is None or isinstance(x, str) for x in key):
        out = path_elements_of(*key)
    else:
        if key not in memo:
            memo[key] = path_elements_of(*key)
        out = dict(memo[key])
    # a sampled build's own valve (optimiser.assessment.builds) differs from its type's figure
    out["perveance"] *= getattr(design, "_perveance_factor", 1.0)
    return out


def path_elements_of(topology, diode, valve) -> dict:
    """Per-path element counts and parameters of a rectifier: its topology and its diode and
    valve (part names or models; None where it has none)."""
    perveance = _valve_perveance(valve) if valve is not None else 1.0
    if topology == "bridge":
        si, vv = 2, 0
    elif topology == "hybrid-bridge":
        si, vv = 1, 1
    elif valve is not None:
        si, vv = 0, 1
    else:
        si, vv = 1, 0
    model = _diode_model(diode) if si else None
    return {
        "silicon_count": si,
        "valve_count": vv,
        "saturation_current": model.saturation_current if model else 1e-9,
        "emission_coefficient": model.emission_coefficient if model else 1.0,
        "series_resistance": model.series_resistance if model else 0.0,
        "perveance": perveance,
    }


def _diode_model(diode):
    from optimiser.inputs.design import DiodeModel

    if isinstance(diode, DiodeModel):
        return diode
    from optimiser.parts import catalogue as parts

    return parts.find_part("diode", diode or DEFAULT_DIODE)


def _valve_perveance(valve) -> float:
    from optimiser.inputs.design import ValveModel

    if isinstance(valve, ValveModel):
        return valve.perveance
    from optimiser.parts import catalogue as parts

    return parts.find_part("valve", valve).perveance


def initial_states(batch: Batch, model: ladder.StateSpace) -> np.ndarray:
    """A DC estimate of every state, to start the shooting iteration from.

    The reservoir starts at the infinite-C output with series resistance (Schade's limit) less a
    guess of the elements' drop; the ladder below it by resistive division.
    """
    v = batch.values
    count, n_nodes = v.capacitance.shape
    total = v.load_current.sum(axis=1) + (v.load_conductance * batch.peak[:, None] * 0.9).sum(1)
    total = np.maximum(total, 1e-6)
    drop = batch.elements.silicon_count * 0.8 + batch.elements.valve_count * np.cbrt(
        (4 * total / 2) / batch.elements.perveance) ** 2
    r_load = np.maximum(batch.peak - drop, 1.0) / total
    v0 = batch.peak * rectifier.infinite_capacitance_output(v.path_resistance / r_load) - drop
    v0 = np.clip(v0, 0.05 * batch.peak, batch.peak)
    node_v = np.repeat(v0[:, None], n_nodes, axis=1)
    for _ in range(2):
        load = v.load_current + v.load_conductance * node_v
        downstream = np.cumsum(load[:, ::-1], axis=1)[:, ::-1]
        for k in range(1, n_nodes):
            node_v[:, k] = node_v[:, k - 1] - v.feed_resistance[:, k] * downstream[:, k]
        node_v = np.maximum(node_v, 0.0)
    x = np.zeros((count, model.A.shape[1]))
    x[:, model.capacitor_voltage_index] = node_v
    for node, index in model.inductor_index:
        x[:, index] = downstream[:, node]
    return x


def solve_batch(batch: Batch, steps: int = STEPS_PER_HALF_CYCLE):
    """Periodic steady state of a batch: (StateSpace, Waveforms)."""
    model = ladder.state_space(batch.structure, batch.values)
    x0 = initial_states(batch, model)
    waves = supply.periodic_steady_state(model, batch.elements, batch.peak, batch.frequency,
                                         batch.values.load_current, x0, steps=steps)
    return model, waves


def solve_with_figures(batch: Batch, checked_only=False):
    """(StateSpace, Waveforms, figures) of a batch: :func:`solve_batch` then :func:`figures`."""
    model, waves = solve_batch(batch)
    return model, waves, figures(batch, model, waves, checked_only)


def figures(batch: Batch, model: ladder.StateSpace, waves: supply.Waveforms,
            checked_only=False) -> dict:
    """Every steady-state figure of a batch as arrays (per-node figures shaped (B, N)); with
    ``checked_only`` just those the full tier's checks read (a sampled build's)."""
    v = batch.values
    loads = v.load_current
    xs = waves.state[:, :-1]  # the last sample repeats the first
    es = waves.drive[:, :-1]
    cur = waves.current[:, :-1]
    drop = waves.drop[:, :-1]
    src = waves.source[:, :-1]

    node_v = node_outputs(model.node_voltage, xs, es, loads)
    dc = node_v.mean(axis=1)
    if checked_only:  # the check figures to rounding in one compiled pass (the B+ exact)
        maps = [model.node_voltage, model.capacitor_current, model.feed_current]
        mean, rms, top = output_statistics(tuple(np.concatenate(m, axis=1) for m in zip(*maps)),
                                           xs, es, loads)
        n_nodes = dc.shape[1]
        node_peak, cap_rms = top[:, :n_nodes], rms[:, n_nodes:2 * n_nodes]
        feed_dc, feed_rms = mean[:, 2 * n_nodes:], rms[:, 2 * n_nodes:]
    else:
        cap_i = node_outputs(model.capacitor_current, xs, es, loads)
        feed_i = node_outputs(model.feed_current, xs, es, loads)
        node_peak = node_v.max(axis=1)
        cap_rms = np.sqrt((cap_i ** 2).mean(axis=1))
        feed_rms, feed_dc = np.sqrt((feed_i ** 2).mean(axis=1)), feed_i.mean(axis=1)

    i_mean = cur.mean(axis=1)
    i_sq = (cur ** 2).mean(axis=1)
    peak_i = cur.max(axis=1)

    dt = waves.time[1] - waves.time[0]
    di_dt = (np.roll(cur, -1, axis=1) - np.roll(cur, 1, axis=1)) / (2 * dt)
    v_rect = node_v[:, :, 0] + batch.first_feed_resistance[:, None] * cur \
        + batch.first_feed_inductance[:, None] * di_dt
    terminal = src - batch.winding_resistance[:, None] * cur \
        - batch.winding_inductance[:, None] * di_dt
    el = batch.elements
    topo = batch.topology[:, None]
    on = cur > 0
    piv_bridge = 0.5 * (v_rect + terminal)
    if checked_only and not np.any(topo == "hybrid-bridge"):
        piv_hybrid = v_rect  # (not chosen below)
    else:
        v_si = rectifier.shockley_voltage(cur, el.saturation_current[:, None],
                                          el.emission_coefficient[:, None],
                                          el.series_resistance[:, None])
        v_valve = rectifier.child_langmuir_voltage(cur, el.perveance[:, None])
        piv_hybrid = np.where(on, v_rect + np.maximum(v_si, v_valve), v_rect)
    piv_ct = v_rect + src
    piv = np.where(topo == "bridge", piv_bridge, np.where(topo == "hybrid-bridge", piv_hybrid,
                                                           piv_ct)).max(axis=1)
    whole_winding = batch.topology != "centre-tap"
    out = {
        "dc_voltage": dc,
        "capacitor_rms_current": cap_rms,
        "peak_voltage": node_peak,
        "feed_rms_current": feed_rms,
        "feed_dc_current": feed_dc,
        "rectifier_peak_current": peak_i,
        "rectifier_average_current": 0.5 * i_mean,
        "piv": piv,
        "secondary_rms_current": np.where(whole_winding, np.sqrt(i_sq), np.sqrt(0.5 * i_sq)),
        "converged": waves.converged,
    }
    if checked_only:
        return out
    conducting = cur > 1e-4 * np.maximum(peak_i[:, None], 1e-12)
    load_power = (dc * loads).sum(axis=1) + (v.load_conductance * (node_v ** 2).mean(1)).sum(1)
    feed_loss = np.zeros(len(dc))
    for k in range(1, batch.structure.n_nodes):
        feed_loss += v.feed_resistance[:, k] * (feed_i[:, :, k] ** 2).mean(axis=1)
    feed_loss += batch.first_feed_resistance * i_sq
    esr_loss = (v.esr * (cap_i ** 2).mean(axis=1)).sum(axis=1)
    out.update({
        "ripple_pp": node_v.max(axis=1) - node_v.min(axis=1),
        "ripple_rms": node_v.std(axis=1),
        "rectifier_rms_current": np.sqrt(0.5 * i_sq),
        "conduction_angle": conducting.mean(axis=1) * 180.0,
        "rectifier_loss": (np.where(on, drop, 0.0) * cur).mean(axis=1),
        "winding_loss": batch.winding_resistance * i_sq,
        "input_power": (src * cur).mean(axis=1),
        "load_power": load_power,
        "ladder_loss": feed_loss + esr_loss,
    })
    return out


SCALARS = ("rectifier_peak_current", "rectifier_average_current", "rectifier_rms_current",
           "conduction_angle", "piv", "secondary_rms_current", "rectifier_loss", "winding_loss",
           "input_power", "load_power", "ladder_loss", "converged")
NODE_FIGURES = ("dc_voltage", "ripple_pp", "ripple_rms", "capacitor_rms_current")


def _groups(designs):
    groups = {}
    for i, d in enumerate(designs):
        # the path solver takes one iteration variable per batch: silicon-only or with a valve
        key = (Batch.structure_of(d), d.mains.frequency, d.valve_path)
        groups.setdefault(key, []).append(i)
    return groups


def _solve_all(designs, chunk=2000):
    """Figures of every design, in input order: list of (figures dict, index within it)."""
    out = [None] * len(designs)
    for _, members in _groups(designs).items():
        for start in range(0, len(members), chunk):
            part = members[start:start + chunk]
            batch = Batch.from_designs([designs[i] for i in part])
            model, waves = solve_batch(batch)
            figs = figures(batch, model, waves)
            for j, i in enumerate(part):
                out[i] = (figs, j, batch, model, waves)
    return out


def _result(design, figs, j, waves=None) -> SupplyResult:
    nodes = tuple(
        NodeFigures(name=n.name, **{f: float(figs[f][j, k]) for f in NODE_FIGURES})
        for k, n in enumerate(design.nodes))
    scalars = {f: (bool(figs[f][j]) if f == "converged" else float(figs[f][j])) for f in SCALARS}
    return SupplyResult(nodes=nodes, waveforms=waves, **scalars)


def cycle_waveforms(result: SupplyResult) -> dict:
    """One whole mains cycle of a steady state, for plots.

    The solver works over half a cycle with the conducting path in turn; this unfolds it: the
    other element of the pair conducts the same current in the second half.

    Returns
    -------
    dict of ndarray
        ``time`` [s]; ``secondary_voltage`` (open-circuit EMF of the winding, or of one half for
        centre-tap) [V]; ``node_voltage`` (T, N) [V]; ``element_current_a`` and
        ``element_current_b`` (one rectifying element of each path) [A]; ``node_names``.
    """
    w = result.waveforms
    waves, model, batch, j = w["waves"], w["model"], w["batch"], w.get("index", 0)
    loads = batch.values.load_current[j:j + 1]
    v = node_outputs(model.node_voltage, waves.state[j:j + 1], waves.drive[j:j + 1], loads)[0]
    half = waves.time[-1] - waves.time[0]
    t = np.concatenate([waves.time, waves.time[1:] + half])
    peak = batch.peak[j]
    current = waves.current[j]
    zeros = np.zeros_like(current)
    return {
        "time": t,
        "secondary_voltage": peak * np.sin(2 * np.pi * batch.frequency * t),
        "node_voltage": np.concatenate([v, v[1:]], axis=0),
        "element_current_a": np.concatenate([current, zeros[1:]]),
        "element_current_b": np.concatenate([zeros, current[1:]]),
        "node_names": [n.name for n in result.nodes],
    }


def _fixed(design: Design) -> Design:
    if design.switchable:
        from optimiser.inputs.design import DesignError

        raise DesignError(["rectifier: a switchable pair has two steady states; evaluate each "
                           "position (Design.positions()) or use optimiser.assessment.assess"])
    return design


def evaluate(design) -> SupplyResult:
    """Periodic steady state of one supply.

    Parameters
    ----------
    design : path, dict or Design
        A design file, or a dict of the same shape.

    Returns
    -------
    SupplyResult
    """
    d = _fixed(load_design(design))
    figs, j, batch, model, waves = _solve_all([d])[0]
    return _result(d, figs, j, waves={"time": waves.time, "batch": batch, "model": model,
                                      "waves": waves})


def evaluate_many(designs) -> pd.DataFrame:
    """Evaluate many designs in one vectorised pass; one DataFrame row per design.

    Columns: the scalar figures of :class:`SupplyResult`, and ``<node name>.<figure>`` for the
    node figures.
    """
    parsed = [_fixed(load_design(d)) for d in designs]
    rows = []
    for d, (figs, j, *_rest) in zip(parsed, _solve_all(parsed)):
        row = {f: figs[f][j] for f in SCALARS}
        for k, node in enumerate(d.nodes):
            for f in NODE_FIGURES:
                row[f"{node.name}.{f}"] = figs[f][j, k]
        rows.append(row)
    return pd.DataFrame(rows)
