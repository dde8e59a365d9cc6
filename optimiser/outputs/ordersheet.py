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


# --------------------------------------------------------------------------------------------
# Order sheet
# --------------------------------------------------------------------------------------------

_CAUTIONS = (
    "This sheet specifies a transformer for a qualified transformer winder. It is not an instruction "
    "for mains wiring.",
    "Mains wiring, protective earthing, fusing, creepage and clearance distances and the insulation "
    "system are governed by the safety standards and wiring codes that apply where the equipment is "
    "built and used; they take precedence over anything on this sheet.",
    "The dielectric-strength (hi-pot) test and the insulation construction are set by the applicable "
    "safety standard; this sheet states no test voltage.",
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
        arrangement = "single winding"
        resistance = format_quantity(primary.end_to_end_resistance_20, "ohm")
    return {
        "voltages": shown,
        "arrangement": arrangement,
        "frequency": format_quantity(design.frequency, "Hz", 3),
        "rms_current_at_rated_load": f"{format_quantity(primary.rms_current, 'A')} "
        f"at {format_quantity(voltages[0], 'V', 4)}",
        "no_load_current_estimate": format_quantity(design.no_load_current, "A"),
        "maximum_dc_resistance_at_20C": resistance,
        "lead_colours": "",
        "terminal_markings": "",
    }


def _secondary_section(winding: WindingDesign, hv_open_circuit=None) -> dict:
    halves = winding.conducting_paths == 2
    per = " per half" if halves else ""
    kind = {"hv": "high voltage (rectifier)", "bias": "bias supply", "heater": "heater"}[winding.role]
    entry = {
        "name": winding.name,
        "purpose": kind,
        "voltage_at_rated_load": _volts(winding.rated_voltage, winding.centre_tapped, halves),
        "voltage_at_no_load": _volts(winding.no_load_voltage, winding.centre_tapped, halves) + " (design estimate)",
        "rms_current_rating": format_quantity(winding.rms_current, "A") + per,
        "centre_tap": bool(winding.centre_tapped),
        "maximum_dc_resistance_at_20C": format_quantity(winding.resistance_20, "ohm")
        + (" per half (average of the two halves)" if halves else ""),
        "lead_colours": "",
        "terminal_markings": "",
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
        "wire": f"{winding.wire_label} enamelled copper",
        "turns_per_layer": str(int(winding.turns_per_layer)),
        "layers": str(int(winding.layers)),
        "interlayer": format_quantity(winding.interlayer_thickness, "m") if winding.layers > 1 else "none (one layer)",
        "estimated_voltage_at_rated_load": _volts(winding.loaded_voltage, winding.centre_tapped, halves),
        "mean_turn_length": format_quantity(winding.mean_turn_length, "m"),
        "wire_length": format_quantity(winding.wire_length, "m"),
    }


def order_sheet(design: TransformerDesign, data: TransformerData | None = None) -> dict:
    """The data of an order sheet for a transformer winder: what to make, with nothing left to guess.

    Values are display strings with units (booleans for yes/no fields). Lead colours and terminal
    markings are left blank for builder and winder to agree; the hi-pot test defers to the applicable
    safety standard and carries no number.

    Parameters
    ----------
    design : TransformerDesign
        From :func:`build_from_block` or :meth:`TransformerPopulation.design`.
    data : TransformerData, optional
        The parts data the design was made with; the packaged data files when omitted.

    Returns
    -------
    dict
    """
    data = data if data is not None else load_transformer_data()
    mounting = design.build.mounting if design.build is not None else ""
    class_temperature = data.class_temperature(design.insulation_class)
    allowance = data.wire.winding_practice.hot_spot_allowance
    steel = next((s for s in data.steels if s.name == design.steel_name), None)
    screen_text = (
        "yes: an electrostatic screen (foil, ends insulated from each other, not a shorted turn) between "
        "primary and secondaries, with its own lead for connection to protective earth"
        if design.screen
        else "no"
    )
    return {
        "title": "Mains power transformer: specification for the winder",
        "primary": _primary_section(design),
        "secondaries": [_secondary_section(w, design.hv_open_circuit_voltage if w.role == "hv" else None)
                        for w in design.windings[1:]],
        "va_rating": format_quantity(design.secondary_va, "VA"),
        "core": {
            "lamination": f"{design.core_name}: scrapless EI, tongue {format_quantity(design.tongue_width, 'm')}",
            "stack": format_quantity(design.stack, "m"),
            "steel": f"{design.steel_name}" + (f" ({steel.description})" if steel else ""),
            "maximum_flux_density": f"{format_quantity(design.flux_density, 'T')} at "
            f"{format_quantity(design.primary_voltages[0], 'V', 4)}, {format_quantity(design.frequency, 'Hz', 3)}",
        },
        "insulation": {
            "class": f"{design.insulation_class} ({class_temperature:.0f} degC, IEC 60085)",
            "ambient": f"{design.ambient_temperature:.0f} degC",
            "permitted_temperature_rise": f"{design.temperature_rise_limit:.0f} K average winding rise "
            f"(class temperature - ambient - {allowance:.0f} K hot-spot allowance)",
            "estimated_temperature_rise": f"{design.temperature_rise:.0f} K",
        },
        "electrostatic_screen": screen_text,
        "winding_order": " / ".join(design.winding_order) + " (from the core outward)",
        "hipot_test": "as required by the safety standard that applies to the finished equipment and "
        "its insulation class (for example IEC 61558-1 for the transformer); test voltage, duration and "
        "test points to be stated by the winder. No value is set by this sheet.",
        "mounting": mounting or "to be agreed between builder and winder",
        "lead_colours_and_terminal_markings": "to be agreed between builder and winder",
        "estimated_weight": f"{format_quantity(design.mass, 'kg')} (copper and core steel; bobbin, varnish, "
        "frame and leads extra)",
        "design_reference": {
            "note": "The designer's construction, for reference; the winder may substitute an equivalent "
            "construction that meets every rating above",
            "windings": [_winding_reference(w) for w in design.windings],
            "window_fill": f"{design.build_ratio * 100:.0f} % of the usable build",
            "hv_series_resistance_per_path_hot": format_quantity(design.hv_series_resistance, "ohm"),
            "hv_leakage_inductance_per_path": format_quantity(design.hv_leakage_inductance, "H"),
        },
        "cautions": list(_CAUTIONS),
    }


_CONSTRUCTION_KEYS = (
    "electrostatic_screen",
    "winding_order",
    "hipot_test",
    "mounting",
    "lead_colours_and_terminal_markings",
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
    "hipot_test": "Hi-pot (dielectric strength) test",
    "hv_series_resistance_per_path_hot": "HV series resistance per conducting path, hot (R_s)",
    "hv_leakage_inductance_per_path": "HV leakage inductance per conducting path",
    "estimated_voltage_at_rated_load": "Estimated V at rated load",
}


def _markdown_title(key: str) -> str:
    text = _TITLES.get(key, key.replace("_", " "))
    return text[:1].upper() + text[1:]


def order_sheet_markdown(sheet: dict) -> str:
    """Render :func:`order_sheet` data as Markdown for printing or sending to a winder."""
    lines = [f"# {sheet['title']}", ""]
    lines += ["## Primary", ""] + [f"- {_markdown_title(k)}: {_markdown_value(v)}" for k, v in sheet["primary"].items()]
    lines += ["", "## Secondaries", ""]
    for winding in sheet["secondaries"]:
        lines += [f"### {winding['name']}", ""]
        lines += [f"- {_markdown_title(k)}: {_markdown_value(v)}" for k, v in winding.items() if k != "name"]
        lines += [""]
    lines += ["## Rating and construction", "", f"- {_markdown_title('va_rating')}: {sheet['va_rating']}"]
    lines += [f"- {_markdown_title(k)}: {v}" for k, v in sheet["core"].items()]
    lines += [f"- Insulation, {_markdown_title(k).lower()}: {v}" for k, v in sheet["insulation"].items()]
    for key in _CONSTRUCTION_KEYS:
        lines.append(f"- {_markdown_title(key)}: {sheet[key]}")
    reference = sheet["design_reference"]
    lines += ["", "## Design reference", "", f"_{reference['note']}._", ""]
    columns = list(reference["windings"][0].keys())
    lines.append("| " + " | ".join(_markdown_title(c) for c in columns) + " |")
    lines.append("|" + "---|" * len(columns))
    for row in reference["windings"]:
        lines.append("| " + " | ".join(str(row[c]) for c in columns) + " |")
    lines += [""] + [f"- {_markdown_title(k)}: {v}" for k, v in reference.items() if k not in ("note", "windings")]
    lines += ["", "## Cautions", ""] + [f"- {c}" for c in sheet["cautions"]]
    return "\n".join(lines) + "\n"
