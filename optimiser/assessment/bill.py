"""The parts list of a design, with estimated costs from the catalogue's price data.

Costs are in currency-neutral cost units (see the price files under ``optimiser/parts/data``); they
rank designs and are estimates, not quotations. A part whose price the data cannot give is
listed with ``cost`` NaN and a note saying why.
"""

from __future__ import annotations

from dataclasses import asdict, dataclass
from functools import lru_cache
from pathlib import Path

import numpy as np
import yaml

from optimiser.parts import catalogue as parts
from optimiser.parts.catalogue import DATA_DIR
from optimiser.formats.units import format_quantity
from optimiser.physics.transformer.rating import va_rating

__all__ = ["PartLine", "parts_list", "cost_breakdown", "price_of"]

PRICE_FILE = DATA_DIR / "part_prices.yaml"


@dataclass(frozen=True)
class PartLine:
    """One line of a parts list.

    Attributes
    ----------
    group : str
        transformer, rectifier, capacitor, choke, resistor, hardware.
    reference : str
        Where it goes, e.g. ``plates reservoir``.
    quantity : int
    description : str
    rating : str
    unit_cost, cost : float
        Estimated price of one and of all. [cost units]
    source : str
        Where the price comes from.
    """

    group: str
    reference: str
    quantity: int
    description: str
    rating: str
    unit_cost: float
    cost: float
    source: str

    def to_dict(self) -> dict:
        return asdict(self)


@lru_cache(maxsize=1)
def _prices() -> dict:
    raw = yaml.safe_load(PRICE_FILE.read_text(encoding="utf-8"))
    table = {}
    for group, entries in raw.items():
        for entry in entries:
            table[(group, entry["name"].lower())] = (float(entry["cost"]), entry["provenance"])
    return table


def price_of(group: str, name: str):
    """(cost, provenance) of a listed valve, diode or hardware item, or (NaN, reason)."""
    return _prices().get((group, name.lower()), (float("nan"), f"no price listed for {name}"))


def _line(group, reference, quantity, description, rating, unit_cost, source):
    return PartLine(group, reference, quantity, description, rating, float(unit_cost),
                    float(unit_cost) * quantity, source)


def _rectifier_lines(design, label=""):
    r = design.rectifier
    lines = []
    n_diodes = {"bridge": 4, "hybrid-bridge": 2, "centre-tap": 0 if r.valve is not None else 2}
    count = n_diodes[r.topology]
    where = f"{label}rectifier"
    if count:
        name = r.diode if isinstance(r.diode, str) or r.diode is None else None
        if name is None:
            lines.append(_line("rectifier", where, count, "silicon diode (given by parameters)",
                               "", np.nan, "no part named: price unknown"))
        else:
            from optimiser.assessment.steady_state import DEFAULT_DIODE

            part = parts.find_part("diode", name or DEFAULT_DIODE)
            cost, source = price_of("diodes", part.name)
            lines.append(_line("rectifier", where, count, f"silicon rectifier {part.name}",
                               f"{format_quantity(part.v_rrm, 'V')} "
                               f"{format_quantity(part.i_f_avg, 'A')}", cost, source))
    if design.valve_path:
        if isinstance(r.valve, str):
            part = parts.find_part("valve", r.valve)
            cost, source = price_of("valves", part.name)
            lines.append(_line("rectifier", where, 1, f"rectifier valve {part.name} with socket",
                               f"{format_quantity(part.max_dc_current, 'A')} DC", cost, source))
        else:
            lines.append(_line("rectifier", where, 1, "rectifier valve (given by perveance)", "",
                               np.nan, "no part named: price unknown"))
    return lines


def _capacitor_line(design, node, reference):
    series = parts.find_part("capacitor", node.capacitor_series or
                             design.conditions.capacitor_series)
    value = format_quantity(node.capacitance, "F")
    if node.rated_voltage is None:
        return _line("capacitor", reference, 1, f"{value} capacitor ({series.name})",
                     "rated voltage not given", np.nan, "no rated voltage: price unknown")
    try:
        series.rating(node.rated_voltage)
    except (LookupError, ValueError):
        return _line("capacitor", reference, 1, f"{value} capacitor ({series.name})",
                     format_quantity(node.rated_voltage, "V"), np.nan,
                     f"{series.name} has no {node.rated_voltage:g} V rating")
    cost = float(series.cost(node.capacitance, node.rated_voltage))
    return _line("capacitor", reference, 1, f"{value} {series.name}",
                 format_quantity(node.rated_voltage, "V"), cost, f"{series.name} price model "
                 "(estimate)")


def _resistor_line(reference, resistance, power, ambient):
    value = format_quantity(resistance, "ohm")
    if power is None:
        return _line("resistor", reference, 1, f"{value} resistor", "power rating not given",
                     np.nan, "no power rating: price unknown")
    classes = sorted(parts.load_catalogue("resistor").values(), key=lambda c: c.power)
    fitting = [c for c in classes if c.power >= power]
    if not fitting:
        return _line("resistor", reference, 1, f"{value} resistor",
                     format_quantity(power, "W"), np.nan, "no resistor class that large")
    c = fitting[0]
    return _line("resistor", reference, 1, f"{value} {c.name}", format_quantity(c.power, "W"),
                 c.cost, f"{c.name} price (estimate)")


def _choke_line(reference, feed):
    chokes = parts.load_catalogue("choke").values()
    need_current = feed.current_rating or 0.0
    fitting = [c for c in chokes if c.inductance >= feed.inductance * 0.999
               and c.rated_current >= need_current]
    desc = (f"{format_quantity(feed.inductance, 'H')} choke, "
            f"{format_quantity(feed.resistance, 'ohm')} DCR")
    rating = format_quantity(feed.current_rating, "A") if feed.current_rating else ""
    if not fitting:
        return _line("choke", reference, 1, desc, rating, np.nan,
                     "no catalogue choke that large: price unknown")
    c = min(fitting, key=lambda c: c.cost)
    return _line("choke", reference, 1, desc, rating, c.cost,
                 f"priced as catalogue {c.name} (estimate)")


def parts_list(design) -> list:
    """Every part of a design's HV supply, with estimated costs. [cost units]"""
    lines = []
    t = design.transformer_design
    if t is not None:
        lines.append(_line("transformer", "mains transformer", 1, "custom power transformer to "
                           "the order sheet", format_quantity(va_rating(t), "VA"), float(t.cost),
                           "transformer price model (estimate)"))
    else:
        lines.append(_line("transformer", "mains transformer", 1, "power transformer "
                           f"{format_quantity(design.transformer.secondary_voltage, 'V')} "
                           "equivalent", "", np.nan, "no physical build: ask a winder"))
    for name, position in design.positions():
        label = "" if name is None else f"{name} "
        lines += _rectifier_lines(position, label)
        if name is not None:
            lines.append(_capacitor_line(position, position.nodes[0],
                                         f"{label}reservoir ({position.nodes[0].name})"))
    if design.switchable:
        cost, source = price_of("hardware", "changeover-switch")
        lines.append(_line("hardware", "rectifier switch", 1, "changeover switch", "mains rated",
                           cost, source))
    for k, node in enumerate(design.nodes):
        if not (design.switchable and k == 0):
            lines.append(_capacitor_line(design, node, f"{node.name} capacitor"))
        if node.feed is not None:
            if node.feed.inductance > 0:
                lines.append(_choke_line(f"{node.name} feed", node.feed))
            else:
                lines.append(_resistor_line(f"{node.name} feed", node.feed.resistance,
                                            node.feed.power_rating, design.conditions.ambient))
        if node.bleeder is not None:
            lines.append(_resistor_line(f"{node.name} bleeder", node.bleeder,
                                        node.bleeder_power_rating, design.conditions.ambient))
    return lines


def cost_breakdown(design) -> dict:
    """Estimated cost per group and in total (NaN where a price is unknown). [cost units]"""
    out = {}
    for line in parts_list(design):
        out[line.group] = out.get(line.group, 0.0) + line.cost
    out["total"] = float(sum(out.values()))
    return out
