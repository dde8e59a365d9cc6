"""The transformer design's figures: a population's (every figure an array over the designs)
and one design's drawn from it, per winding and for the whole transformer, and the heater
or bias winding given as input.

Part of :mod:`optimiser.physics.transformer`; :func:`.population.design_population` fills
them.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass
from typing import Any

import numpy as np


@dataclass(frozen=True)
class AuxiliaryWinding:
    """A heater or bias winding given to :func:`design_population`.

    Attributes
    ----------
    name : str
        Name used in the winding order and on the order sheet.
    voltage : array_like
        RMS voltage at rated load, end to end; 0 (with a current of 0) where the winding is not
        wound on a design: that design's figures are then those of a transformer without it,
        and :meth:`TransformerPopulation.design` leaves it out. [V]
    rms_current : array_like
        RMS current rating. [A]
    centre_tapped : bool
        A centre tap is brought out (hum balance); it carries no extra current.
    """

    name: str
    voltage: Any
    rms_current: Any
    centre_tapped: bool = False


@dataclass(frozen=True)
class _WindingFigures:
    """Figures of one winding. In :class:`WindingPopulation` every numeric field is an array of shape
    (n,); in :class:`WindingDesign` it is a Python scalar.

    Attributes
    ----------
    name : str
        ``"primary"``, ``"hv"``, ``"bias"`` or the heater's name.
    role : str
        ``"primary"``, ``"hv"``, ``"bias"`` or ``"heater"``.
    centre_tapped : bool
        A centre tap is brought out.
    conducting_paths : int
        2 for a centre-tapped HV (each half conducts in turn), else 1.
    rated_voltage : float
        Target RMS voltage at rated load per path (primary: the lowest mains voltage). [V]
    loaded_voltage : float
        RMS voltage at rated load per path as built, with integer turns (primary: as rated_voltage). [V]
    no_load_voltage : float
        RMS voltage per path with every winding unloaded (the primary still carries the core-loss
        current; the magnetising current, in quadrature, is neglected). [V]
    rms_current : float
        RMS current per path at rated load (primary: at the lowest mains voltage, total). [A]
    turns : float
        Turns of the whole winding (centre-tapped HV: both halves; primary: to the highest tap,
        dual: both windings). [-]
    turns_per_path : float
        Turns of one conducting path (primary: for the lowest voltage). [-]
    wire_label : str
        Wire size as ordered, e.g. ``"0.250 mm"`` or ``"AWG 30"``.
    wire_diameter : float
        Bare copper diameter. [m]
    wire_overall_diameter : float
        Diameter over the enamel (grade maximum). [m]
    current_density : float
        Actual RMS current density in the chosen wire. [A/m^2]
    turns_per_layer : float
        [-]
    layers : float
        [-]
    interlayer_thickness : float
        Paper between layers. [m]
    build : float
        Radial build including bulge allowance. [m]
    distance_from_former : float
        Where the winding starts, measured from the bobbin tube. [m]
    mean_turn_length : float
        [m]
    wire_length : float
        Length of copper wire in the whole winding. [m]
    resistance_20 : float
        DC resistance of one conducting path at 20 degC (primary: as connected for the lowest
        voltage). [ohm]
    resistance_hot : float
        The same at the computed winding temperature. [ohm]
    end_to_end_resistance_20 : float
        Whole winding at 20 degC (dual primary: each of the two windings). [ohm]
    copper_loss : float
        At rated load, hot. [W]
    copper_mass : float
        [kg]
    """

    name: str
    role: str
    centre_tapped: Any
    conducting_paths: Any
    rated_voltage: Any
    loaded_voltage: Any
    no_load_voltage: Any
    rms_current: Any
    turns: Any
    turns_per_path: Any
    wire_label: Any
    wire_diameter: Any
    wire_overall_diameter: Any
    current_density: Any
    turns_per_layer: Any
    layers: Any
    interlayer_thickness: Any
    build: Any
    distance_from_former: Any
    mean_turn_length: Any
    wire_length: Any
    resistance_20: Any
    resistance_hot: Any
    end_to_end_resistance_20: Any
    copper_loss: Any
    copper_mass: Any


@dataclass(frozen=True)
class WindingPopulation(_WindingFigures):
    __doc__ = "Figures of one winding over a population (numeric fields are arrays of shape (n,)).\n\n" + (
        _WindingFigures.__doc__ or ""
    )


@dataclass(frozen=True)
class WindingDesign(_WindingFigures):
    __doc__ = "Figures of one winding of one design (numeric fields are Python scalars).\n\n" + (
        _WindingFigures.__doc__ or ""
    )


@dataclass(frozen=True)
class _TransformerFigures:
    """Figures of a transformer design. In :class:`TransformerPopulation` every per-design field is an
    array of shape (n,) (``primary_tap_turns``: (taps, n)); in :class:`TransformerDesign` a scalar.

    Attributes
    ----------
    frequency : float
        Mains frequency (shared). [Hz]
    primary_voltages : tuple of float
        Mains voltages, ascending (shared). [V]
    primary_arrangement : str
        ``"taps"`` or ``"dual"`` (shared).
    winding_order : tuple of str
        From the tube outward, including ``"screen"`` when fitted (shared).
    insulation_class : str
        IEC 60085 letter (shared).
    ambient_temperature : float
        Stated ambient (shared). [degC]
    wire_system : str
        ``"metric"``, ``"awg"`` or ``"both"`` (shared).
    enamel_grade : int
        1 or 2 (shared).
    screen : bool
        Electrostatic screen fitted (shared).
    core_index, core_name, tongue_width [m], stack [m], steel_index, steel_name
        The core chosen.
    core_area : float
        Iron cross-section A_c. [m^2]
    window_area : float
        One window, 0.5a x 1.5a. [m^2]
    magnetic_path_length : float
        [m]
    winding_width : float
        Usable traverse between the flanges less the end margins. [m]
    available_build : float
        Usable radial space in the window. [m]
    total_build : float
        Radial space used by windings, insulation, screen and wrap. [m]
    build_ratio : float
        total_build / available_build (> 1 does not fit). [-]
    fill_factor : float
        Bare copper area over window area (McLyman's K_u). [-]
    flux_density : float
        Peak flux density at the lowest mains voltage with the integer primary turns. [T]
    flux_density_limit : float
        Maximum recommended for the steel. [T]
    primary_tap_turns : array
        Turns from the start of the primary to each tap (dual: of each winding). [-]
    windings : tuple
        Primary first, then HV, bias (if any) and heaters in the order given.
    primary_rms_current : float
        At rated load and the lowest mains voltage. [A]
    magnetising_current : float
        RMS estimate from the peak ampere-turns over sqrt 2 (sine assumption; the real current is
        peaky). [A]
    core_loss_current : float
        [A]
    no_load_current : float
        Primary current with no load, sqrt(I_m^2 + I_c^2). [A]
    copper_loss, core_loss, total_loss : float
        At rated load, hot. [W]
    surface_area : float
        Outline surface for cooling. [m^2]
    temperature_rise : float
        Average rise by McLyman's rule. [K]
    temperature_rise_limit : float
        Class temperature - ambient - hot-spot allowance. [K]
    winding_temperature : float
        Ambient + rise. [degC]
    secondary_va : float
        VA rating, sum of rated V x I_rms over every conducting path of every secondary (a
        centre-tapped HV counts both halves, as the trade rates it). [VA]
    primary_va : float
        Lowest mains voltage x primary RMS current. [VA]
    area_product : float
        W_a A_c of the chosen core. [m^4]
    copper_mass, steel_mass, mass : float
        mass = copper + core steel (bobbin, varnish and frame not included). [kg]
    cost : float
        From the price model. [cost units]
    hv_open_circuit_voltage : float
        Thevenin RMS voltage per HV conducting path with the other windings at rated load (the
        source the rectifier sees). [V]
    hv_series_resistance : float
        R_s per conducting path, hot: R_path + R_primary (N_path / N_primary)^2. [ohm]
    hv_series_resistance_20 : float
        The same at 20 degC. [ohm]
    hv_leakage_inductance : float
        Primary-to-HV leakage referred to one HV conducting path. [H]
    hv_loaded_voltage : float
        RMS per HV path at the rated current. [V]
    hv_regulation : float
        (hv_open_circuit_voltage - hv_loaded_voltage) / hv_loaded_voltage. [-]
    max_voltage_error : float
        Largest |loaded / rated - 1| over the secondaries: what integer turns leave (few turns per
        volt on large cores make low-voltage heaters coarse). No tolerance is imposed here. [-]
    current_density_used : float
        Current density the wire was chosen for. [A/m^2]
    fits_window, wire_available, flux_ok, temperature_ok, stack_in_range, regulation_solvable,
    resistance_target_met, converged, feasible : bool
        Feasibility flags; ``feasible`` is all of them.
    """

    frequency: float
    primary_voltages: tuple
    primary_arrangement: str
    winding_order: tuple
    insulation_class: str
    ambient_temperature: float
    wire_system: str
    enamel_grade: int
    screen: bool
    core_index: Any
    core_name: Any
    tongue_width: Any
    stack: Any
    steel_index: Any
    steel_name: Any
    core_area: Any
    window_area: Any
    magnetic_path_length: Any
    winding_width: Any
    available_build: Any
    total_build: Any
    build_ratio: Any
    fill_factor: Any
    flux_density: Any
    flux_density_limit: Any
    primary_tap_turns: Any
    windings: tuple
    primary_rms_current: Any
    magnetising_current: Any
    core_loss_current: Any
    no_load_current: Any
    copper_loss: Any
    core_loss: Any
    total_loss: Any
    surface_area: Any
    temperature_rise: Any
    temperature_rise_limit: Any
    winding_temperature: Any
    secondary_va: Any
    primary_va: Any
    area_product: Any
    copper_mass: Any
    steel_mass: Any
    mass: Any
    cost: Any
    hv_open_circuit_voltage: Any
    hv_series_resistance: Any
    hv_series_resistance_20: Any
    hv_leakage_inductance: Any
    hv_loaded_voltage: Any
    hv_regulation: Any
    max_voltage_error: Any
    current_density_used: Any
    fits_window: Any
    wire_available: Any
    flux_ok: Any
    temperature_ok: Any
    stack_in_range: Any
    regulation_solvable: Any
    resistance_target_met: Any
    converged: Any
    feasible: Any


_SHARED_FIELDS = (
    "frequency",
    "primary_voltages",
    "primary_arrangement",
    "winding_order",
    "insulation_class",
    "ambient_temperature",
    "wire_system",
    "enamel_grade",
    "screen",
)


def _scalar(value):
    return value.item() if isinstance(value, (np.ndarray, np.generic)) else value


@dataclass(frozen=True)
class TransformerDesign(_TransformerFigures):
    __doc__ = (
        "One transformer design: the fields of a population, as Python scalars, plus the build block it\n"
        "came from (``build``, None when taken from a population).\n\n" + (_TransformerFigures.__doc__ or "")
    )

    build: Any = None


@dataclass(frozen=True)
class TransformerPopulation(_TransformerFigures):
    __doc__ = (
        "A population of transformer designs: every per-design field is a numpy array of shape (n,).\n\n"
        + (_TransformerFigures.__doc__ or "")
    )

    @property
    def size(self) -> int:
        """Number of designs n."""
        return int(np.asarray(self.stack).shape[0])

    def __len__(self) -> int:
        return self.size

    def design(self, index: int, build=None) -> TransformerDesign:
        """Design ``index`` of the population as a :class:`TransformerDesign` of Python scalars."""
        if not -self.size <= index < self.size:
            raise IndexError(f"design index {index} out of range for a population of {self.size}")
        values = {}
        absent = {w.name for w in self.windings[2:] if w.rated_voltage[index] == 0}
        for f in dataclasses.fields(_TransformerFigures):
            value = getattr(self, f.name)
            if f.name == "winding_order":
                values[f.name] = tuple(name for name in value if name not in absent)
            elif f.name in _SHARED_FIELDS:
                values[f.name] = value
            elif f.name == "windings":
                values[f.name] = tuple(_take_winding(w, index) for w in value
                                       if w.name not in absent)
            elif f.name == "primary_tap_turns":
                values[f.name] = tuple(float(t) for t in value[:, index])
            else:
                values[f.name] = _scalar(value[index])
        return TransformerDesign(**values, build=build)


def _take_winding(winding: WindingPopulation, index: int) -> WindingDesign:
    values = {}
    for f in dataclasses.fields(_WindingFigures):
        value = getattr(winding, f.name)
        values[f.name] = value if f.name in ("name", "role") else _scalar(value[index])
    return WindingDesign(**values)
