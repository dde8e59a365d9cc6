"""The order sheet for a transformer winder: what to make, with nothing left to guess.

Part of :mod:`optimiser.physics.transformer`; see the package docstring for the method.
"""

from __future__ import annotations


from optimiser.formats.units import format_quantity
from optimiser.physics.transformer.physics import (
    mean_turn_length,
)
from optimiser.physics.transformer.data import (
    TransformerData,
    load_transformer_data,
)
from optimiser.physics.transformer.population import (
    TransformerDesign,
    TransformerPopulation,
    WindingDesign,
)
from optimiser.inputs.build import (
    build_from_block,
)
from optimiser.physics.transformer.corners import operating_corners
from optimiser.physics.transformer.rating import (
    primary_va,
    turns_either_side,
    va_rating,
    winding_ratings,
)
from optimiser.outputs import winder


# --------------------------------------------------------------------------------------------
# Order sheet
# --------------------------------------------------------------------------------------------

_CAUTIONS = (
    "This sheet specifies a transformer for a qualified transformer winder. It is not an instruction "
    "for mains wiring.",
    "Mains wiring, protective earthing, fusing, creepage and clearance distances and the insulation "
    "system are governed by the safety standards and wiring codes that apply where the equipment is "
    "built and used; they take precedence over anything on this sheet.",
    "The hi-pot figures on this sheet are a common rule for basic insulation (2 U + 1000 V), recalled "
    "from memory, not taken from a standard: the dielectric-strength test, its voltages and the "
    "insulation construction are set by the applicable safety standard and the winder's own practice.",
    "The primary fuse is a suggestion from the primary current; fusing is governed by local codes "
    "and the equipment's safety standard. Fuse the live conductor, before the switch if the code asks.",
    "The high-voltage secondary and the charged supply it feeds can kill. Only people competent to "
    "work on high-voltage equipment should build, test or service it.",
    "Voltages, resistances, temperature rise and weight are design estimates (resistive drops only, "
    "temperature rise by a surface-dissipation rule, parts data partly from memory); confirm them on "
    "the finished transformer.",
)


def _number(value: float) -> str:
    return f"{value:.4g}"


def _volts(value: float, centre_tapped: bool, halves: bool) -> str:
    if halves:
        return f"{_number(value)}-0-{_number(value)} V"
    return format_quantity(value, "V", 4) + (", centre-tapped" if centre_tapped else "")


def _primary_section(design: TransformerDesign) -> dict:
    primary = design.windings[0]
    voltages = design.primary_voltages
    shown = " / ".join(format_quantity(v, "V", 4) for v in voltages)
    if design.primary_arrangement == "dual":
        arrangement = (
            f"two identical {format_quantity(voltages[0], 'V', 4)} windings, in parallel for "
            f"{format_quantity(voltages[0], 'V', 4)} and in series for {format_quantity(voltages[1], 'V', 4)}"
        )
        resistance = f"{format_quantity(primary.end_to_end_resistance_20, 'ohm')} each winding"
    elif len(voltages) > 1:
        arrangement = "one winding with taps at " + ", ".join(["0 V"] + [format_quantity(v, "V", 4) for v in voltages])
        per_turn = primary.end_to_end_resistance_20 / primary.turns
        resistance = "; ".join(
            f"0 to {format_quantity(v, 'V', 4)}: {format_quantity(per_turn * t, 'ohm')}"
            for v, t in zip(voltages, design.primary_tap_turns)
        )
    else:
        arrangement = "single winding, no taps"
        resistance = format_quantity(primary.end_to_end_resistance_20, "ohm")
    return {
        "voltages": shown,
        "arrangement": arrangement,
        "frequency": format_quantity(design.frequency, "Hz", 3),
        "rms_current_at_rated_load": f"{format_quantity(primary.rms_current, 'A')} "
        f"at {format_quantity(voltages[0], 'V', 4)}",
        "no_load_current_estimate": format_quantity(design.no_load_current, "A"),
        "maximum_dc_resistance_at_20C": resistance,
    }


def _secondary_section(winding: WindingDesign, rating, hv_open_circuit=None) -> dict:
    halves = winding.conducting_paths == 2
    per = " per half" if halves else ""
    kind = {"hv": "high voltage (rectifier)", "bias": "bias supply", "heater": "heater"}[winding.role]
    entry = {
        "name": winding.name,
        "purpose": kind,
        "voltage_at_rated_load": _volts(rating.voltage, winding.centre_tapped, halves),
        "target_voltage": f"{_volts(rating.target, winding.centre_tapped, halves)} "
        f"(as built {rating.error * 100:+.1f} %)",
        "voltage_at_no_load": _volts(winding.no_load_voltage, winding.centre_tapped, halves) + " (design estimate)",
        "rms_current_rating": format_quantity(rating.current, "A") + per,
        "va": format_quantity(rating.va, "VA"),
        "centre_tap": bool(winding.centre_tapped),
        "maximum_dc_resistance_at_20C": format_quantity(winding.resistance_20, "ohm")
        + (" per half (average of the two halves)" if halves else ""),
    }
    if hv_open_circuit is not None:
        # what the rectifier sees: the HV winding open while the heaters carry their load
        entry["voltage_open_circuit_heaters_loaded"] = (
            _volts(hv_open_circuit, winding.centre_tapped, halves) + " (design estimate)")
    return entry


def _winding_reference(winding: WindingDesign) -> dict:
    halves = winding.conducting_paths == 2
    half_turns = round(winding.turns_per_path)
    return {
        "winding": winding.name,
        "turns": f"{half_turns} + {half_turns}" if halves else str(round(winding.turns)),
        "wire": f"{winder.wire_both(winding)} enamelled copper",
        "turns_per_layer": str(int(winding.turns_per_layer)),
        "layers": str(int(winding.layers)),
        "interlayer": format_quantity(winding.interlayer_thickness, "m") if winding.layers > 1 else "none (one layer)",
        "estimated_voltage_at_rated_load": _volts(winding.loaded_voltage, winding.centre_tapped, halves),
        "mean_turn_length": format_quantity(winding.mean_turn_length, "m"),
        "wire_length": format_quantity(winding.wire_length, "m"),
    }


def order_sheet(design: TransformerDesign, data: TransformerData | None = None, *,
                mains_low: float = 0.10, mains_high: float = 0.10,
                direct_heated: tuple = ()) -> dict:
    """The data of an order sheet for a transformer winder: what to make, with nothing left to guess.

    Values are display strings with units (booleans for yes/no fields). Every winding's rated
    voltage, current and VA come from :mod:`optimiser.physics.transformer.rating`; the operating
    corners (each primary connection at low, nominal and high mains) from
    :func:`optimiser.physics.transformer.corners.operating_corners`.

    Parameters
    ----------
    design : TransformerDesign
        From :func:`build_from_block` or :meth:`TransformerPopulation.design`.
    data : TransformerData, optional
        The parts data the design was made with; the packaged data files when omitted.
    mains_low, mains_high : float
        The mains tolerance the corners cover. [-]
    direct_heated : tuple of str
        Heater windings that feed a directly heated valve rectifier (their filament sits at B+).

    Returns
    -------
    dict
    """
    data = data if data is not None else load_transformer_data()
    block = design.build
    mounting = block.mounting if block is not None else ""
    class_temperature = data.class_temperature(design.insulation_class)
    allowance = data.wire.winding_practice.hot_spot_allowance
    steel = next((s for s in data.steels if s.name == design.steel_name), None)
    corners = operating_corners(design, mains_low, mains_high, data)
    ratings = winding_ratings(design)
    flux, where = corners.worst("flux_density")
    rise, rise_where = corners.worst("temperature_rise")
    volts = winder.working_voltages(design, corners, set(direct_heated))
    screen_text = (
        "yes: an electrostatic screen (foil, ends insulated from each other, not a shorted turn) between "
        "primary and secondaries, with its own lead for connection to protective earth"
        if design.screen
        else "no"
    )
    warnings = winder.voltage_notes(design, ratings, turns_either_side)
    warnings += [f"{name}: feeds a directly heated valve rectifier, whose filament sits at B+: insulate "
                 f"this winding from the primary, the core and every other winding for about "
                 f"{volts[name]:.0f} V (the HV peak off load at high mains plus its own voltage)"
                 for name in direct_heated if name in volts]
    if flux[0] > design.flux_density_limit:
        warnings.append(f"peak flux density {flux[0]:.3g} T at {where[0]} is above the steel's "
                        f"{design.flux_density_limit:.3g} T")
    return {
        "title": "Mains power transformer: specification for the winder",
        "primary": _primary_section(design),
        "secondaries": [_secondary_section(w, r, design.hv_open_circuit_voltage if w.role == "hv" else None)
                        for w, r in zip(design.windings[1:], ratings)],
        "va_rating": format_quantity(va_rating(design), "VA"),
        "va_definition": "rated voltage x RMS current, summed over every secondary winding and half",
        "primary_va": f"{format_quantity(primary_va(design), 'VA')} at "
        f"{format_quantity(design.primary_voltages[0], 'V', 4)} and rated load (the VA rating plus "
        "losses and magnetising current)",
        "core": {
            "lamination": f"{design.core_name}: scrapless EI, tongue {format_quantity(design.tongue_width, 'm')}",
            "stack": format_quantity(design.stack, "m"),
            "steel": f"{design.steel_name}" + (f" ({steel.description})" if steel else ""),
            "maximum_flux_density": f"{format_quantity(float(flux[0]), 'T', 3)} at the worst corner, {where[0]} "
            f"({format_quantity(design.flux_density, 'T', 3)} at {format_quantity(design.primary_voltages[0], 'V', 4)} "
            f"nominal; steel limit {format_quantity(design.flux_density_limit, 'T', 3)}), "
            f"{format_quantity(design.frequency, 'Hz', 3)}",
        },
        "insulation": {
            "class": f"{design.insulation_class} ({class_temperature:.0f} degC, IEC 60085)",
            "ambient": f"{design.ambient_temperature:.0f} degC",
            "permitted_temperature_rise": f"{design.temperature_rise_limit:.0f} K average winding rise "
            f"(class temperature - ambient - {allowance:.0f} K hot-spot allowance)",
            "estimated_temperature_rise": f"{design.temperature_rise:.0f} K at nominal mains; "
            f"{float(rise[0]):.0f} K at the worst corner, {rise_where[0]}",
            **winder.insulation_construction(design, data),
        },
        "electrostatic_screen": screen_text,
        "winding_order": " / ".join(design.winding_order) + " (from the core outward)",
        "working_voltages": {name: f"{v:.0f} V RMS to core at high mains, off load" for name, v in volts.items()},
        "hipot_test": {
            "note": "Suggested: 2 U + 1000 V RMS for 60 s, U the working voltage (between two windings "
            "the sum of theirs), a figure often quoted for basic insulation — from memory — verify; "
            "the applicable standard (e.g. IEC 61558-1) and the winder's practice set the real test",
            "rows": winder.hipot_table(volts),
        },
        "primary_fuse": winder.fuse_suggestion(design, corners),
        "operating_corners": winder.corners_table(corners),
        "mounting": mounting or "to be agreed between builder and winder",
        "lead_colours_and_terminal_markings": winder.lead_scheme(design, dict(block.leads) if block is not None else {}),
        "estimated_weight": f"{format_quantity(design.mass, 'kg')} (copper and core steel; bobbin, varnish, "
        "frame and leads extra)",
        "warnings": warnings,
        "design_reference": {
            "note": "The designer's construction, for reference; the winder may substitute an equivalent "
            "construction that meets every rating above",
            "windings": [_winding_reference(w) for w in design.windings],
            "window_fill": f"{design.build_ratio * 100:.0f} % of the usable build",
            "hv_series_resistance_per_path_hot": format_quantity(design.hv_series_resistance, "ohm"),
            "hv_leakage_inductance_per_path": format_quantity(design.hv_leakage_inductance, "H"),
        },
        "model_limits": list(winder.MODEL_LIMITS),
        "cautions": list(_CAUTIONS),
    }


def order_sheet_for(design) -> dict:
    """:func:`order_sheet` of a design file's physical transformer, with the design's mains
    tolerance and its directly heated rectifier (if any); None without a build."""
    built = design.transformer_design
    if built is None:
        return None
    direct = ()
    valve = getattr(design.rectifier, "valve", None)
    if isinstance(valve, str):
        from optimiser.parts import catalogue

        part = catalogue.find_part("valve", valve)
        names = [w.name for w in built.windings if w.role == "heater"]
        if part.heating == "direct" and "rectifier-heater" in names:
            direct = ("rectifier-heater",)
    return order_sheet(built, mains_low=design.conditions.mains_low,
                       mains_high=design.conditions.mains_high, direct_heated=direct)


_CONSTRUCTION_KEYS = (
    "electrostatic_screen",
    "winding_order",
    "mounting",
    "estimated_weight",
)


def _markdown_value(value) -> str:
    if isinstance(value, bool):
        return "yes" if value else "no"
    return str(value) if value != "" else "(to be agreed)"


_TITLES = {
    "rms_current_at_rated_load": "RMS current at rated load",
    "rms_current_rating": "RMS current rating",
    "maximum_dc_resistance_at_20C": "Maximum DC resistance at 20 degC",
    "va_rating": "VA rating",
    "va": "VA",
    "hipot_test": "Hi-pot (dielectric strength) test",
    "hv_series_resistance_per_path_hot": "HV series resistance per conducting path, hot (R_s)",
    "hv_leakage_inductance_per_path": "HV leakage inductance per conducting path",
    "estimated_voltage_at_rated_load": "Estimated V at rated load",
}


def _markdown_title(key: str) -> str:
    text = _TITLES.get(key, key.replace("_", " "))
    return text[:1].upper() + text[1:]


def _table_lines(rows: list) -> list:
    columns = list(rows[0].keys())
    lines = ["| " + " | ".join(_markdown_title(c) for c in columns) + " |", "|" + "---|" * len(columns)]
    return lines + ["| " + " | ".join(str(row[c]) for c in columns) + " |" for row in rows]


def order_sheet_markdown(sheet: dict) -> str:
    """Render :func:`order_sheet` data as Markdown for printing or sending to a winder."""
    lines = [f"# {sheet['title']}", ""]
    if sheet["warnings"]:
        lines += ["## Warnings", ""] + [f"- **{w}**" for w in sheet["warnings"]] + [""]
    lines += ["## Primary", ""] + [f"- {_markdown_title(k)}: {_markdown_value(v)}" for k, v in sheet["primary"].items()]
    lines += ["", "## Secondaries", ""]
    for winding in sheet["secondaries"]:
        lines += [f"### {winding['name']}", ""]
        lines += [f"- {_markdown_title(k)}: {_markdown_value(v)}" for k, v in winding.items() if k != "name"]
        lines += [""]
    lines += ["## Rating and construction", "", f"- {_markdown_title('va_rating')}: {sheet['va_rating']} "
              f"({sheet['va_definition']})", f"- Primary VA: {sheet['primary_va']}"]
    lines += [f"- {_markdown_title(k)}: {v}" for k, v in sheet["core"].items()]
    lines += [f"- Insulation, {_markdown_title(k).lower()}: {v}" for k, v in sheet["insulation"].items()]
    for key in _CONSTRUCTION_KEYS:
        lines.append(f"- {_markdown_title(key)}: {sheet[key]}")
    lines += ["", "## Leads and terminals", ""]
    lines += [f"- {k}: {v}" for k, v in sheet["lead_colours_and_terminal_markings"].items()]
    lines += ["", "## Working voltages", ""] + [f"- {k}: {v}" for k, v in sheet["working_voltages"].items()]
    hipot = sheet["hipot_test"]
    lines += ["", "## Hi-pot (dielectric strength) test", "", f"_{hipot['note']}._", ""]
    lines += _table_lines(hipot["rows"])
    lines += ["", "## Primary fuse (suggestion)", ""] + [f"- {f}" for f in sheet["primary_fuse"]]
    lines += ["- A transformer draws several times its rated current for a few cycles at switch-on: "
              "use a time-lag fuse, and follow the equipment's safety standard and local codes."]
    corners = sheet["operating_corners"]
    lines += ["", "## Operating corners", "", f"_{corners['note']}._", ""] + _table_lines(corners["rows"])
    reference = sheet["design_reference"]
    lines += ["", "## Design reference", "", f"_{reference['note']}._", ""]
    lines += _table_lines(reference["windings"])
    lines += [""] + [f"- {_markdown_title(k)}: {v}" for k, v in reference.items() if k not in ("note", "windings")]
    lines += ["", "## Model limits", ""] + [f"- {c}" for c in sheet["model_limits"]]
    lines += ["", "## Cautions", ""] + [f"- {c}" for c in sheet["cautions"]]
    return "\n".join(lines) + "\n"
