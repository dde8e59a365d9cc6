"""The ``transformer: build:`` block of a design file, and the one design it describes.

Part of :mod:`optimiser.physics.transformer`; see the package docstring for the method.
"""

from __future__ import annotations

from typing import Literal

from pydantic import Field, ValidationInfo, field_validator, model_validator

from optimiser.formats.ranges import ranged as R
from optimiser.formats.schema import Strict
from optimiser.physics.transformer.data import (
    TransformerData,
    _PositiveLength,
    load_transformer_data,
)
from optimiser.physics.transformer.population import (
    AuxiliaryWinding,
    TransformerDesign,
    _RESERVED_NAMES,
    _check_order,
    _default_order,
    design_population,
)


# --------------------------------------------------------------------------------------------
# Design-file block
# --------------------------------------------------------------------------------------------

_WindingName = Field(pattern=r"^[A-Za-z][A-Za-z0-9_.-]*$")


class HvWindingBlock(Strict):
    """HV secondary of a build.

    ``voltage`` (RMS at rated load) and ``current`` (RMS rating) are per conducting path: for a
    centre-tapped winding, each half ("300-0-300 V" is voltage "300 V").
    """

    voltage: R("secondary_voltage")
    current: R("winding_current")
    centre_tapped: bool = False


class HeaterWindingBlock(Strict):
    """A heater winding: ``voltage`` end to end at rated load, ``current`` RMS; a centre tap is a tap."""

    name: str = _WindingName
    voltage: R("heater_voltage")
    current: R("heater_current")
    centre_tapped: bool = False


class BiasWindingBlock(Strict):
    """The bias supply winding: ``voltage`` end to end at rated load, ``current`` RMS."""

    voltage: R("bias_voltage")
    current: R("bias_current")
    centre_tapped: bool = False


def _context_data(info: ValidationInfo) -> TransformerData:
    context = info.context or {}
    data = context.get("transformer_data")
    return data if isinstance(data, TransformerData) else load_transformer_data()


class TransformerBuild(Strict):
    """A physical transformer build, as written under ``transformer: build:`` in a design file.

    The mains frequency is not part of the block: it comes from the design's mains. Core and steel
    names are checked against the parts data (``context={"transformer_data": data}`` to validate
    against other data files than the packaged ones).
    """

    primaries: list[R("mains_voltage")] = Field(min_length=1, max_length=8)
    primary_arrangement: Literal["taps", "dual"] = "taps"
    core: str
    stack: _PositiveLength
    steel: str
    max_flux_density: R("flux_density")
    current_density: R("current_density")
    insulation_class: Literal["A", "E", "B", "F", "H"]
    ambient: R("ambient")
    hv: HvWindingBlock
    heaters: list[HeaterWindingBlock] = Field(default_factory=list)
    bias: BiasWindingBlock | None = None
    screen: bool = False
    winding_order: list[str] | None = None
    wire: Literal["metric", "awg", "both"] = "metric"
    enamel_grade: Literal[1, 2] = 2
    mounting: str = ""
    #: lead colours / terminal markings by winding name, replacing the order sheet's default scheme
    leads: dict[str, str] = Field(default_factory=dict)

    @field_validator("core")
    @classmethod
    def _known_core(cls, name: str, info: ValidationInfo) -> str:
        _context_data(info).core_index(name)
        return name

    @field_validator("steel")
    @classmethod
    def _known_steel(cls, name: str, info: ValidationInfo) -> str:
        _context_data(info).steel_index(name)
        return name

    @model_validator(mode="after")
    def _consistent(self):
        voltages = sorted(self.primaries)
        if len(set(voltages)) != len(voltages):
            raise ValueError(f"primaries must be distinct voltages, got {self.primaries}")
        if self.primary_arrangement == "dual" and (len(voltages) != 2 or abs(voltages[1] / voltages[0] - 2) > 0.02):
            raise ValueError("a dual primary needs two voltages V and 2V, e.g. ['115 V', '230 V']")
        names = [h.name for h in self.heaters]
        if len(set(names)) != len(names) or any(n in _RESERVED_NAMES for n in names):
            raise ValueError(f"heater names must be unique and not one of {', '.join(_RESERVED_NAMES)}, got {names}")
        if self.winding_order is not None:
            _check_order(self.winding_order, _default_order(self.screen, self.bias is not None, names))
        return self


def build_from_block(
    block: TransformerBuild, frequency: float, data: TransformerData | None = None
) -> TransformerDesign:
    """Design the transformer a build block describes (the population code path with n = 1).

    Parameters
    ----------
    block : TransformerBuild
        The validated ``transformer: build:`` block.
    frequency : float
        Mains frequency of the design. [Hz]
    data : TransformerData, optional
        Parts data; the packaged data files when omitted.

    Returns
    -------
    TransformerDesign
    """
    data = data if data is not None else load_transformer_data()
    heaters = [AuxiliaryWinding(h.name, h.voltage, h.current, h.centre_tapped) for h in block.heaters]
    bias = None
    if block.bias is not None:
        bias = AuxiliaryWinding("bias", block.bias.voltage, block.bias.current, block.bias.centre_tapped)
    population = design_population(
        core_index=data.core_index(block.core),
        stack=block.stack,
        max_flux_density=block.max_flux_density,
        hv_voltage=block.hv.voltage,
        hv_rms_current=block.hv.current,
        hv_centre_tapped=block.hv.centre_tapped,
        frequency=frequency,
        primary_voltages=block.primaries,
        primary_arrangement=block.primary_arrangement,
        insulation_class=block.insulation_class,
        ambient_temperature=block.ambient,
        current_density=block.current_density,
        heaters=heaters,
        bias=bias,
        screen=block.screen,
        winding_order=block.winding_order,
        steel_index=data.steel_index(block.steel),
        wire_system=block.wire,
        enamel_grade=block.enamel_grade,
        data=data,
    )
    return population.design(0, build=block)
