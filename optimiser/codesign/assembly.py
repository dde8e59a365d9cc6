"""Design assembly: decoded candidates turned into concrete designs and their transformers.

:meth:`Assembly.transformer_populations` designs the physical transformers of a whole
population in one vectorised call of :func:`optimiser.physics.transformer.design_population`
(one call per kind: with or without a valve rectifier's heater winding). :meth:`Assembly.designs`
then builds each candidate's :class:`~optimiser.inputs.design.Design`: the transformer's build
block and equivalent circuit, the rectifier, and per node its capacitor (value, the voltage
rating derived from the no-load crest, ESR), its feed (a choke, or a resistor of the power
class its dissipation needs) and its bleeder (one across each capacitor, the largest
preferred value that discharges it in time).
"""

from __future__ import annotations

import numpy as np

from optimiser.codesign.encoding import Candidate
from optimiser.codesign.options import Options
from optimiser.formats.units import round_significant
from optimiser.inputs.build import (
    BiasWindingBlock,
    HeaterWindingBlock,
    HvWindingBlock,
    TransformerBuild,
)
from optimiser.inputs.design import Design, EquivalentTransformer, Feed, Load, Node
from optimiser.inputs.spec import RECTIFIER_HEATER
from optimiser.parts import catalogue as parts
from optimiser.physics import transients
from optimiser.physics.transformer import AuxiliaryWinding, design_population

__all__ = ["Assembly"]


class Assembly:
    """Candidates of one spec's options built into designs (see module docstring).

    Parameters
    ----------
    options : Options
    """

    def __init__(self, options: Options):
        self.options = options
        self.spec = options.spec

    def transformer_populations(self, core_stack, hv_voltage, hv_current, current_density,
                                rectifier, *, one_pass=False):
        """The physical transformers of designs (arrays (B,)): [(member rows,
        TransformerPopulation)].

        One vectorised pass per kind (with or without a rectifier heater winding), or with
        ``one_pass`` a single pass in which the designs without a valve rectifier have its heater
        winding at 0 V (not wound: the same figures, one call fewer).
        """
        s, o = self.spec, self.options
        options = s.choices.rectifiers
        heater = [o.rectifier_heaters[int(r)] for r in rectifier]
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
            cores = [o.core_stacks[int(c)] for c in core_stack[members]]
            pop = design_population(
                core_index=np.array([c[0] for c in cores]),
                stack=np.array([c[2] for c in cores]),
                max_flux_density=o.max_flux_density,
                hv_voltage=np.asarray(hv_voltage, float)[members],
                hv_rms_current=np.asarray(hv_current, float)[members],
                frequency=s.mains.frequency, primary_voltages=o.primaries,
                primary_arrangement=t.primary_arrangement,
                insulation_class=t.insulation_class, ambient_temperature=s.ambient,
                hv_centre_tapped=ct,
                current_density=np.asarray(current_density, float)[members],
                heaters=heaters, bias=bias, screen=t.screen, steel_index=o.steel_index,
                wire_system=t.wire, data=o.transformer_data)
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
                block = self._build_block(c, option.centre_tapped,
                                         self.options.rectifier_heaters[c.rectifier])
                blocks[b] = block
                built[b] = pop.design(j, build=block)
        return [self._design(c, blk, td) for c, blk, td in zip(candidates, blocks, built)]

    def _build_block(self, c: Candidate, centre_tapped: bool, heater) -> TransformerBuild:
        """The transformer build block of a candidate (what the winder's sheet is made of)."""
        s, o = self.spec, self.options
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
        _, core, stack = o.core_stacks[c.core_stack]
        return TransformerBuild.model_construct(
            primaries=o.primaries, primary_arrangement=t.primary_arrangement, core=core,
            stack=stack, steel=t.steel, max_flux_density=o.max_flux_density,
            current_density=c.current_density, insulation_class=t.insulation_class,
            ambient=s.ambient,
            hv=HvWindingBlock.model_construct(voltage=c.hv_voltage, current=c.hv_current,
                                              centre_tapped=centre_tapped),
            heaters=heaters, bias=bias, screen=t.screen, winding_order=None, wire=t.wire,
            enamel_grade=2, mounting=t.mounting)

    def _design(self, c: Candidate, block, built) -> Design:
        """The design of a candidate around its designed transformer."""
        s, o = self.spec, self.options
        v_oc = float(built.hv_open_circuit_voltage)
        crest = o.crest_voltage(v_oc)
        full = [ns.full_power_current for ns in s.nodes]
        downstream = np.cumsum(full[::-1])[::-1]
        nodes = []
        for k, ns in enumerate(s.nodes):
            rated, _ = o.rating(k, c.capacitance[k], crest, c.rating_steps[k])
            series = parts.find_part("capacitor", o.capacitor_choice[k].series)
            feed = None
            if k > 0:
                fo = o.feed_options[k][c.feeds[k - 1]]
                if fo.kind == "choke":
                    feed = Feed.model_construct(resistance=fo.resistance, inductance=fo.inductance,
                                                power_rating=None, current_rating=fo.current_rating)
                else:
                    power = o.resistor_power(downstream[k] ** 2 * fo.resistance)
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
        cond = o.conditions
        values = o.bleeder_values
        time_allowed = cond.discharge_time_limit * s.margins.bleeder_time_fraction
        for k, node in enumerate(nodes):
            series = parts.find_part("capacitor", node.capacitor_series)
            r_max = transients.bleeder_for(node.capacitance * (1 + series.tolerance.plus), crest,
                                           cond.safe_voltage, time_allowed)
            fitting = values[values <= r_max]
            bleeder = float(fitting.max()) if fitting.size else float(values[0])
            nodes[k] = node.model_copy(update={
                "bleeder": bleeder,
                "bleeder_power_rating": o.resistor_power(crest ** 2 / bleeder, crest)})
        transformer = EquivalentTransformer.model_construct(
            secondary_voltage=v_oc, secondary_resistance=float(built.hv_series_resistance),
            leakage_inductance=float(built.hv_leakage_inductance), rated_current=c.hv_current,
            build=block)
        design = Design.model_construct(mains=o.mains, transformer=transformer,
                                        rectifier=o.rectifiers[c.rectifier], nodes=nodes,
                                        conditions=o.conditions,
                                        parts_files=list(s.parts_files),
                                        transformer_data=s.transformer_data)
        object.__setattr__(design, "_built", built)
        return design
