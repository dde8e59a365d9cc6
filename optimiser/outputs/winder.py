"""What a winder asks before quoting, worked out from a designed transformer: the operating
corners, insulation construction, wire in both systems, working voltages, a hi-pot figure per
winding pair, the lead and terminal scheme, a suggested primary fuse and the model's limits.

Used by :mod:`optimiser.outputs.ordersheet`; each function returns display data (strings).
"""

from __future__ import annotations

import math

from optimiser.formats.units import format_quantity
from optimiser.physics.transformer.corners import Corners
from optimiser.physics.transformer.data import TransformerData
from optimiser.physics.transformer.rating import WINDING_VOLTAGE_TOLERANCE

#: IEC 60127 style fuse current ratings (the R10 series as fuse makers list it). [A]
FUSE_RATINGS = (0.05, 0.063, 0.08, 0.1, 0.125, 0.16, 0.2, 0.25, 0.315, 0.4, 0.5, 0.63, 0.8, 1.0,
                1.25, 1.6, 2.0, 2.5, 3.15, 4.0, 5.0, 6.3, 8.0, 10.0, 12.5, 16.0)
#: Fuse rating over the primary RMS current at rated load; time-lag for the switch-on inrush.
FUSE_FACTOR = 1.6  # common practice, no source

MODEL_LIMITS = (
    "Voltages come from resistive drops only; the leakage reactance's share of the regulation is "
    "left to the rectifier simulation (it lowers the on-load voltages a little further).",
    "Temperature rise is C. W. T. McLyman's surface-dissipation estimate (dT = 450 psi^0.826, "
    "constants from memory — verify): an average over the whole transformer, not a hot-spot "
    "figure; the winding temperature in use depends on mounting, enclosure and ventilation.",
    "Magnetising current is the steel curve's peak ampere-turns over sqrt 2 (sine assumption; "
    "the real current is peaky) and core loss a Steinmetz fit to a few points of generic steel "
    "data, times a building factor: both are estimates.",
    "Insulation, creepage, clearance and the hi-pot test follow the winder's own practice and "
    "the safety standards that apply where the equipment is built and used; the figures here "
    "are the designer's suggestions and give way to them.",
)


def awg_equivalent(diameter: float) -> str:
    """Nearest AWG size to a bare diameter, by the ASTM B258 formula d = 0.127 mm 92^((36-n)/39)."""
    n = 36.0 - 39.0 * math.log(diameter / 0.127e-3) / math.log(92.0)
    return f"AWG {round(n)}"


def wire_both(winding) -> str:
    """A winding's wire as ordered, with its equivalent in the other system."""
    label = winding.wire_label
    bare = f"{winding.wire_diameter * 1e3:.3f} mm"
    if label.startswith("AWG"):
        return f"{label} ({bare} bare)"
    return f"{bare} ({awg_equivalent(winding.wire_diameter)} nearest)"


def corners_table(corners: Corners) -> dict:
    """Rows of the operating-corner table (one per primary connection and mains corner)."""
    rows = []
    T = len(corners.connections)
    for tap in range(T):
        for m in range(3):
            row = {
                "corner": corners.label(tap * 3 + m),
                "applied_voltage": format_quantity(float(corners.applied_voltage[tap, m, 0]), "V", 4),
                "flux_density": format_quantity(float(corners.flux_density[tap, m, 0]), "T", 3),
                "magnetising_current": format_quantity(float(corners.magnetising_current[tap, m, 0]), "A"),
                "core_loss": format_quantity(float(corners.core_loss[tap, m, 0]), "W"),
                "copper_loss": format_quantity(float(corners.copper_loss[tap, m, 0]), "W"),
                "temperature_rise": f"{float(corners.temperature_rise[tap, m, 0]):.0f} K",
            }
            for s, name in enumerate(corners.secondary_names):
                row[f"{name}_on_load"] = format_quantity(float(corners.loaded_voltage[s, tap, m, 0]), "V", 4)
                row[f"{name}_off_load"] = format_quantity(float(corners.no_load_voltage[s, tap, m, 0]), "V", 4)
            rows.append(row)
    return {"note": "Every primary connection at low, nominal and high mains, rated load (off "
                    "load: every winding open); secondary voltages are RMS per conducting path",
            "rows": rows}


def insulation_construction(design, data: TransformerData) -> dict:
    """The insulation the design was built with (the winder may use their own equivalent)."""
    practice = data.wire.winding_practice
    inter = practice.interwinding
    wrap = practice.outer_wrap
    material = data.material(inter.material)
    return {
        "between_windings": f"{inter.layers} layers of {material.description} "
        f"({format_quantity(material.thickness, 'm')} each, class {material.thermal_class})",
        "outer_wrap": f"{wrap.layers} layers of {data.material(wrap.material).description}",
        "end_margins": f"{format_quantity(practice.end_margin, 'm')} copper-free at each flange "
        "(a winder may use wider margin tape where the standard asks for creepage)",
        "interlayer": "; ".join(
            f"{w.name}: " + (f"{data.material(_interlayer_material(practice, w.wire_diameter)).description}, "
                             f"{format_quantity(w.interlayer_thickness, 'm')}"
                             if w.layers > 1 else "one layer, none")
            for w in design.windings),
        "enamel": f"grade {design.enamel_grade} (IEC 60317-0-1 {'thin' if design.enamel_grade == 1 else 'medium'} build)",
    }


def _interlayer_material(practice, diameter):
    for rule in practice.interlayer:
        if diameter <= rule.up_to_diameter:
            return rule.material
    return practice.interlayer[-1].material


def working_voltages(design, corners: Corners, direct_heated: set) -> dict:
    """RMS working voltage of each winding to the core (earthed) at high mains, off load.

    The HV winding: its centre tap is taken at 0 V (centre-tap rectifier), else one end swings the
    whole winding (a bridge). A heater feeding a directly heated rectifier sits at B+: the HV
    peak off load at high mains. Other heaters and the bias winding: their own voltage.
    """
    volts = {}
    volts["primary"] = float(corners.applied_voltage[..., 2, 0].max())
    hv_peak = 0.0
    for s, w in enumerate(design.windings[1:]):
        off = float(corners.no_load_voltage[s, :, 2, 0].max())
        if w.role == "hv":
            volts[w.name] = off  # per path: CT at 0 V, or a bridge end at about V_rms
            hv_peak = math.sqrt(2.0) * off
        elif w.name in direct_heated:
            volts[w.name] = hv_peak + off
        else:
            volts[w.name] = off
    return volts


def hipot_table(volts: dict) -> list:
    """A suggested hi-pot figure per winding pair and each winding to core: 2 U + 1000 V RMS for
    60 s, U the larger working voltage of the pair plus the smaller (they may add).

    Source: an often-quoted figure for basic insulation (IEC 61558-1 / IEC 62368-1 set the real
    values by insulation grade and working voltage) — from memory — verify; the standard governs.
    """
    names = list(volts)
    rows = []
    for i, a in enumerate(names):
        rows.append({"between": f"{a} and core/screen", "working_voltage": f"{volts[a]:.0f} V",
                     "suggested_test": f"{2 * volts[a] + 1000:.0f} V RMS, 60 s"})
        for b in names[i + 1:]:
            u = volts[a] + volts[b]
            rows.append({"between": f"{a} and {b}", "working_voltage": f"{u:.0f} V",
                         "suggested_test": f"{2 * u + 1000:.0f} V RMS, 60 s"})
    return rows


_COLOURS = {"primary": ("black", "brown", "orange", "yellow", "violet", "grey", "white", "pink"),
            "hv": ("red", "red/yellow", "red"), "bias": ("blue", "blue/white", "blue")}
_HEATER_COLOURS = (("green", "green/yellow", "green"), ("white", "white/black", "white"),
                   ("brown/white", "brown/black", "brown/white"))


def lead_scheme(design, overrides: dict) -> dict:
    """Terminal numbers and lead colours of our own default scheme, each replaceable by the build
    block's ``leads:`` (``{"hv": "..."}``)."""
    out = {}
    taps = design.primary_voltages
    if design.primary_arrangement == "dual":
        out["primary"] = "1 (start) - 2 (finish) black - brown; 3 (start) - 4 (finish) orange - yellow"
    else:
        c = _COLOURS["primary"]
        out["primary"] = ", ".join([f"1: 0 V ({c[0]})"] + [f"{k + 2}: {v:.0f} V ({c[(k + 1) % len(c)]})"
                                                           for k, v in enumerate(taps)])
    terminal = 10
    heater = 0
    for w in design.windings[1:]:
        if w.role == "heater":
            colours = _HEATER_COLOURS[heater % len(_HEATER_COLOURS)]
            heater += 1
        else:
            colours = _COLOURS[w.role]
        if w.centre_tapped:
            out[w.name] = (f"{terminal}: start ({colours[0]}), {terminal + 1}: centre tap ({colours[1]}), "
                           f"{terminal + 2}: finish ({colours[2]})")
        else:
            out[w.name] = f"{terminal}: start ({colours[0]}), {terminal + 1}: finish ({colours[2]}, sleeved)"
        terminal += 10
    if design.screen:
        out["screen"] = "E: screen lead (green/yellow sleeve), to protective earth"
    for name, text in overrides.items():
        out[name] = text + " (the design's own)"
    out["note"] = "Our default scheme; any lead of the build block's leads: replaces its default"
    return out


def fuse_suggestion(design, corners: Corners) -> list:
    """A primary fuse per connection: FUSE_FACTOR x the primary RMS current at rated load and
    nominal mains, rounded up to the next rating of :data:`FUSE_RATINGS`, time-lag (T) for the
    switch-on inrush of a transformer (several times its rated current for a few cycles).

    Source: common practice, no source.
    """
    out = []
    for tap, label in enumerate(corners.connections):
        current = float(corners.primary_current[tap, 1, 0])
        wanted = FUSE_FACTOR * current
        rating = next((r for r in FUSE_RATINGS if r >= wanted), FUSE_RATINGS[-1])
        out.append(f"{label}: {format_quantity(rating, 'A', 3)} time-lag (T) "
                   f"(primary {format_quantity(current, 'A')} RMS at rated load)")
    return out


def voltage_notes(design, ratings, turns_either_side) -> list:
    """Windings whose whole turns miss the target by more than the check
    ``transformer.winding_voltage`` allows (:data:`WINDING_VOLTAGE_TOLERANCE`, the same rating
    figure), with the turns either side."""
    notes = []
    for w, r in zip(design.windings[1:], ratings):
        if abs(r.error) > WINDING_VOLTAGE_TOLERANCE:
            (n_low, v_low), (n_high, v_high) = turns_either_side(design, w)
            notes.append(
                f"{w.name}: {r.voltage:.4g} V at rated load against a target of {r.target:.4g} V "
                f"({r.error * 100:+.1f} %, over the {WINDING_VOLTAGE_TOLERANCE:.0%} the check "
                f"transformer.winding_voltage allows): whole turns cannot make {r.target:.4g} V "
                f"on this core (about {v_high / n_high:.3g} V a turn). Nearest: {n_low} turns give "
                f"{v_low:.4g} V, {n_high} turns give {v_high:.4g} V (per conducting path)")
    return notes
