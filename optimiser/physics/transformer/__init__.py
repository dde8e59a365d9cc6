"""Physical design of a valve amplifier's mains power transformer on a scrapless EI core.

The supply simulation sees the transformer as an equivalent source: the open-circuit RMS voltage of
each conducting path of the high-voltage (HV) secondary, the series resistance per conducting path
referred to the secondary, and the leakage inductance. This module makes that equivalent physical —
core, turns, wire, layers, losses, temperature, mass and cost — so a search can trade cost against
regulation. It works on whole populations: every per-design input is an array, every figure an array.

Method, in the order it is applied
----------------------------------
1. Core geometry of a scrapless EI lamination (window 0.5a x 1.5a, outline 3a x 2.5a).
2. Turns from Faraday's law, V = 4.44 f N B A_c, at the lowest primary voltage.
3. Wire from the current density, snapped up to a real size (ASTM B258 AWG and/or IEC 60317 metric),
   with enamel build, turns per layer, layers, interlayer paper and tape between windings.
4. Mean length of turn of each winding from its place on the bobbin (Steiner's parallel-set formula).
5. Secondary turns raised so the voltage at rated load meets the target, solved in closed form for
   the winding resistances of the previous pass, iterated together with 6. to a fixed point; then
   whole turns, the lowest-voltage winding's rounded up setting the volts per turn and the
   primary's and every other winding's turns from it (:mod:`.turns`), and the fixed point again.
6. Temperature rise by McLyman's surface-dissipation rule, dT = 450 psi^0.826, hot resistance by
   IEC 60028, checked against the IEC 60085 class temperature at the stated ambient.
7. The equivalent the rectifier sees: R_s = R_path + R_primary (N_path / N_primary)^2, the leakage
   inductance of two concentric layered windings, and the Thevenin open-circuit voltage.

Conventions
-----------
- SI inside (m, m^2, V, A, ohm, H, W, kg, T, Hz); temperatures in degC, rises in K.
- "Voltage at rated load" of a winding is its Thevenin value V_oc - I_rms R_s with resistive drops only
  (leakage reactance is left to the rectifier simulation, which models L_s).
- HV ``centre_tapped``: the voltage and current are per conducting half (a "300-0-300 V" winding has
  voltage 300 V); a heater's or the bias winding's centre tap is only a tap (voltage end to end).
- Primary ``taps``: one winding with a tap at every listed voltage, one wire size throughout, sized for
  the lowest voltage, where the current is largest. Primary ``dual``: two identical windings of the lower
  voltage for parallel or series connection (voltages [V, 2V]).
- Infeasible designs give flags, never exceptions; only malformed input raises ``ValueError``.
"""

from optimiser.physics.transformer.physics import (
    COPPER_RESISTIVITY_20C,
    COPPER_TEMPERATURE_COEFFICIENT_20C,
    COPPER_DENSITY,
    copper_resistivity,
    awg_diameter,
    resistance_per_length,
    turns_for_voltage,
    ei_window,
    ei_core_area,
    ei_magnetic_path_length,
    ei_steel_volume,
    ei_outline_surface_area,
    mean_turn_length,
    steinmetz_fit,
    steinmetz_loss,
    magnetising_field,
    mclyman_temperature_rise,
    leakage_inductance_layered,
    area_product_required,
    ei_area_product,
)
from optimiser.physics.transformer.data import (
    TransformerData,
    load_transformer_data,
    use_user_folder,
)
from optimiser.physics.transformer.population import (
    wire_size_for_current,
    AuxiliaryWinding,
    WindingPopulation,
    WindingDesign,
    TransformerPopulation,
    TransformerDesign,
    design_population,
)

__all__ = [
    "COPPER_RESISTIVITY_20C",
    "COPPER_TEMPERATURE_COEFFICIENT_20C",
    "COPPER_DENSITY",
    "TransformerData",
    "load_transformer_data",
    "use_user_folder",
    "copper_resistivity",
    "awg_diameter",
    "resistance_per_length",
    "wire_size_for_current",
    "turns_for_voltage",
    "ei_window",
    "ei_core_area",
    "ei_magnetic_path_length",
    "ei_steel_volume",
    "ei_outline_surface_area",
    "mean_turn_length",
    "steinmetz_fit",
    "steinmetz_loss",
    "magnetising_field",
    "mclyman_temperature_rise",
    "leakage_inductance_layered",
    "area_product_required",
    "ei_area_product",
    "AuxiliaryWinding",
    "WindingPopulation",
    "WindingDesign",
    "TransformerPopulation",
    "TransformerDesign",
    "design_population",
]
