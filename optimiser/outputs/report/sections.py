"""One design's section of the report page: the short answer, the plots with their captions,
the tables (B+ nodes, checks, rectifier and power figures, life, parts), the transformer's order
sheet or equivalent source, and the cautions with the design's own voltages."""

from __future__ import annotations

from pathlib import Path

import numpy as np

from optimiser.formats.units import format_quantity
from optimiser.outputs.report.markup import (_Cell, _e, _markdown_html, _ms, _num, _pretty, _q,
                                             _slug, _table)
from optimiser.outputs.report.plots import (HALF, WIDE, _check, _figure_html, _sag_plot,
                                            _switch_on_plot, _waveform_plot)

#: A passing check whose ratio is at least this is shown as "close" rather than "pass": within
#: 10 % of its rating (a presentation choice; common practice, no source).
MARGIN_BAND = 0.9


def _verdict(check) -> _Cell:
    if not check.passed:
        return _Cell("\u2717 FAIL", 2, "verdict fail")
    if check.ratio >= MARGIN_BAND:
        return _Cell("! close", 1, "verdict close")
    return _Cell("\u2713 pass", 0, "verdict pass")


def _ratio_cell(check) -> _Cell:
    r = check.ratio
    shown = "n/a" if not np.isfinite(r) else f"{r:.2f}"
    width = 0 if not np.isfinite(r) else min(r, 1.2) / 1.2 * 100
    kind = "fail" if not check.passed else "close" if r >= MARGIN_BAND else "pass"
    bar = (f'<span class="bar" title="1 = at the rating"><span class="fill {kind}" '
           f'style="width:{width:.0f}%"></span></span>')
    return _Cell(f'<span class="ratio">{shown}</span>{bar}', r if np.isfinite(r) else None,
                 "ratio-cell")


def _rating_ratio_cell(check) -> _Cell:
    """The figure over the rating itself (the ratio to the derated limit times the derating)."""
    r = getattr(check, "rating_ratio", check.ratio)
    return _Cell("n/a" if not np.isfinite(r) else f"{r:.2f}", r if np.isfinite(r) else None)


def _check_q(value, unit) -> str:
    """A check's figure or rating; a dimensionless one (a fill factor) as a percentage."""
    if unit in ("-", "") and value is not None and np.isfinite(value):
        return f"{100 * value:.0f}\u00a0%"
    return _q(value, unit)


def _check_name(check) -> str:
    name = _e(check.name).replace(".", ".<wbr>")  # narrow columns break at the dots
    return (f'<span class="check-name">{name}</span>'
            f'<span class="what">{_e(check.what)}</span>')


def _order_checks(checks):
    """Failures first, then closest to the rating."""
    return sorted(checks, key=lambda c: (c.passed, -c.ratio if np.isfinite(c.ratio) else 0))


def _sources_list(checks):
    """Number each distinct rating source once: (number per source, the list as HTML)."""
    numbers = {}
    for c in checks:
        numbers.setdefault(c.source, len(numbers) + 1)
    items = "".join(f"<li>{_e(src)}</li>" for src in numbers)
    return numbers, f'<p class="note">Ratings from:</p><ol class="sources note">{items}</ol>'


def _checks_table(positions) -> str:
    """The verdicts: one column group per switch position; rating sources as numbered notes."""
    every = [c for p in positions for c in _order_checks(p[2].checks)]
    numbers, notes = _sources_list(every)
    if len(positions) == 1:
        a = positions[0][2]
        rows = [[_verdict(c), _Cell(_check_name(c), c.name), _Cell(_e(_check_q(c.value, c.unit)),
                 c.value), _Cell(_e(_check_q(c.limit, c.unit)), c.limit), _ratio_cell(c),
                 _rating_ratio_cell(c), _Cell(f"[{numbers[c.source]}]", numbers[c.source])]
                for c in _order_checks(a.checks)]
        return _table(["verdict", "check (what is compared)", "worst figure",
                       "limit (derated rating)", "ratio to limit [-]", "ratio to rating [-]",
                       "from [note]"], rows, cls="data checks") + notes
    names = [p[0] for p in positions]
    by_name = [{c.name: c for c in p[2].checks} for p in positions]
    order = []
    for c in _order_checks(every):
        if c.name not in order:
            order.append(c.name)
    rows = []
    for name in order:
        first = next(b[name] for b in by_name if name in b)
        row = [_Cell(_check_name(first), name)]
        for b in by_name:
            c = b.get(name)
            if c is None:
                row += [_Cell("does not apply", cls="na"), "", "", "", ""]
            else:
                row += [_verdict(c), _Cell(_e(_check_q(c.value, c.unit)), c.value),
                        _Cell(_e(_check_q(c.limit, c.unit)), c.limit), _ratio_cell(c),
                        _rating_ratio_cell(c)]
        notes_here = sorted({numbers[b[name].source] for b in by_name if name in b})
        row.append(_Cell(", ".join(f"[{n}]" for n in notes_here), notes_here[0]))
        rows.append(row)
    headers = (["check (what is compared)"]
               + ["verdict", "worst figure", "limit (derated rating)", "ratio to limit [-]",
                  "ratio to rating [-]"] * len(names)
               + ["from [note]"])
    groups = [("", 1)] + [(f"position '{n}'", 5) for n in names] + [("", 1)]
    return _table(headers, rows, cls="data checks", group_row=groups) + notes


def _nodes_table(positions) -> str:
    pair = len(positions) > 1
    headers = (["position"] if pair else []) + [
        "node", "B+ idle [V]", "B+ full power [V]", "static drop [V]", "drop [%]",
        "ripple p-p [V]", "worst ripple p-p [V]", "B+ window, low-high mains [V]",
        "sag depth [V]", "attack [ms]", "recovery [ms]", "switch-on highest [V]",
        "below safe voltage after switch-off [s]"]
    rows = []
    for k in range(len(positions[0][2].nodes)):
        for name, design, a in positions:
            n = a.nodes[k]
            ripple = a.steady.nodes[k].ripple_pp
            t_safe = n["discharge_time"]
            row = ([name] if pair else []) + [
                n["name"],
                _Cell(_num(n["idle_voltage"]), n["idle_voltage"]),
                _Cell(_num(n["full_power_voltage"]), n["full_power_voltage"]),
                _Cell(_num(n["static_drop"]), n["static_drop"]),
                _Cell(_num(n["static_drop_percent"]), n["static_drop_percent"]),
                _Cell(_num(ripple, 2), ripple),
                _Cell(_num(n["ripple_pp_worst"], 2), n["ripple_pp_worst"]),
                _Cell(f"{n['window_min']:.0f}\u2013{n['window_max']:.0f}", n["window_min"]),
                _Cell(_num(n["depth"]), n["depth"]),
                _Cell(_ms(n["attack_time"]), n["attack_time"]),
                _Cell(_ms(n["recovery_time"]), n["recovery_time"]),
                _Cell(_num(n["switch_on_peak"], 0), n["switch_on_peak"]),
                _Cell(_num(t_safe) if np.isfinite(t_safe) else "never",
                      t_safe if np.isfinite(t_safe) else 1e300)]
            rows.append(row)
    return _table(headers, rows, cls="data nodes")


def _figures_table(positions) -> str:
    """Rectifier, winding and power figures at nominal mains, full power."""
    spec = [("rectifier peak current per element", "rectifier_peak_current", "A"),
            ("rectifier average current per element", "rectifier_average_current", "A"),
            ("rectifier RMS current per element", "rectifier_rms_current", "A"),
            ("conduction, part of the mains cycle", "conduction_angle", "\u00b0"),
            ("peak inverse voltage", "piv", "V"),
            ("HV winding RMS current", "secondary_rms_current", "A"),
            ("power from the winding", "input_power", "W"),
            ("power into the loads", "load_power", "W"),
            ("rectifier loss", "rectifier_loss", "W"),
            ("winding-path loss", "winding_loss", "W"),
            ("feed and ESR loss", "ladder_loss", "W")]
    rows = []
    for label, attr, unit in spec:
        row = [label]
        for _, _, a in positions:
            value = getattr(a.steady, attr)
            text = f"{value:.0f}\u00b0" if unit == "\u00b0" else _q(value, unit)
            row.append(_Cell(_e(text), value))
        rows.append(row)
    row = ["rectifier stress, the worst rectifier check ratio [-]"]
    for _, _, a in positions:
        row.append(_Cell(_e(_q(a.rectifier_stress, "-")), a.rectifier_stress))
    rows.append(row)
    row = ["switch-on surge current at the mains crest"]
    for _, _, a in positions:
        row.append(_Cell(_e(_q(a.switch_on["surge_current"], "A")),
                         a.switch_on["surge_current"]))
    rows.append(row)
    heads = ["figure"] + ([f"position '{p[0]}'" for p in positions] if len(positions) > 1
                          else ["value"])
    return _table(heads, rows, cls="data figures kv")


def _life_table(positions) -> str:
    pair = len(positions) > 1
    rows = []
    for name, _, a in positions:
        for cap in a.life["capacitors"]:
            hours = cap["life_hours"]
            core = cap["core_temperature"]
            rows.append(([name] if pair else []) + [
                cap["name"], cap["series"],
                _Cell(_num(core) if core is not None else "n/a", core),
                _Cell(f"{hours:,.0f}" if hours is not None else "n/a (no rated voltage)",
                      hours),
                _Cell(f"{hours / 8766:.0f}" if hours is not None else "n/a", hours)])
    heads = (["position"] if pair else []) + [
        "capacitor at node", "series", "core temperature [\u00b0C]", "estimated life [h]",
        "estimated life, always on [years]"]
    out = [_table(heads, rows, cls="data life")]
    for name, _, a in positions:
        v = a.life["rectifier_valve"]
        if v:
            where = f" (position '{name}')" if pair else ""
            out.append(f"<p>Rectifier valve {_e(v['name'])}{_e(where)}: cathode loading "
                       f"{100 * v['cathode_loading']:.0f} % of its DC rating; relative life "
                       f"index {v['relative_life']:.1f} (1 = at its full rating).</p>")
    out.append(f'<p class="note">{_e(positions[0][2].life["source"])}.</p>')
    return "\n".join(out)


def _parts_table(design) -> str:
    from optimiser.assessment.bill import parts_list

    lines = parts_list(design)
    rows = []
    for line in lines:
        rows.append([line.group, line.reference, _Cell(str(line.quantity), line.quantity),
                     _Cell(_e(_pretty(line.description))), _pretty(line.rating),
                     _Cell(_num(line.unit_cost, 2), line.unit_cost),
                     _Cell(_num(line.cost, 2) if np.isfinite(line.cost) else "unknown",
                           line.cost),
                     _Cell(_e(line.source), cls="source")])
    known = [line.cost for line in lines if np.isfinite(line.cost)]
    missing = len(lines) - len(known)
    total = _num(sum(known), 2)
    total_text = total if not missing else f"{total} + {missing} unpriced"
    foot = [[_Cell("<strong>total</strong>"), "", "", "", "", "",
             _Cell(f"<strong>{_e(total_text)}</strong>"),
             "estimates, not quotations" + ("" if not missing else
                                           "; ask for the unpriced parts")]]
    return _table(["group", "where", "quantity [pcs]", "part", "rating", "unit cost [cost units]",
                   "cost [cost units]", "price from"], rows, cls="data parts", foot=foot)


def _transformer_html(design) -> str:
    from optimiser.outputs.ordersheet import order_sheet_for, order_sheet_markdown

    built = design.transformer_design
    if built is not None:
        sheet = order_sheet_markdown(order_sheet_for(design))
        return (f'<div class="order-sheet">{_markdown_html(sheet, top=4)}</div>')
    t = design.transformer
    topologies = ([p.topology for p in design.rectifier.positions.values()] if design.switchable
                  else [design.rectifier.topology])
    per = " per half-winding" if "centre-tap" in topologies else ""
    rows = [["HV secondary, RMS, open circuit" + per, _q(t.secondary_voltage, "V", 4)],
            ["series resistance per conducting path", _q(t.secondary_resistance, "ohm")],
            ["leakage inductance per conducting path", _q(t.leakage_inductance, "H")],
            ["rated HV current, RMS", _q(t.rated_current, "A") if t.rated_current else
             "not given"]]
    return ("<p>This design gives the transformer as an equivalent source, not a physical "
            "build, so there is no order sheet. These are the figures a winder must meet; "
            "add a <code>build</code> block to the design file for a full order sheet "
            "(see <code>specs/demo-design-build.yaml</code>).</p>"
            + _table(["figure", "value"], rows, cls="data equivalent kv"))


def _cautions_html(positions, design) -> str:
    """The safety cautions, with this design's own voltages and discharge times."""
    safe = design.conditions.safe_voltage
    highest = max(n["switch_on_peak"] for _, _, a in positions for n in a.nodes)
    working = max(n["window_max"] for _, _, a in positions for n in a.nodes)
    discharge = []
    for name, d, a in positions:
        where = f" (position '{name}')" if name else ""
        for k, n in enumerate(a.nodes):
            bleeder = d.nodes[k].bleeder
            via = (f"its {_pretty(format_quantity(bleeder, 'ohm'))} bleeder" if bleeder else
                   "the bleeders elsewhere in the ladder (none of its own)")
            t = n["discharge_time"]
            if np.isfinite(t):
                discharge.append(f"{n['name']}{where}: below {safe:.0f} V about {t:.0f} s after "
                                 f"switch-off, through {via}")
            else:
                discharge.append(f"{n['name']}{where}: never falls below {safe:.0f} V by itself "
                                 "\u2014 fit a bleeder")
    items = [
        f"<strong>High voltage.</strong> This supply reaches about {highest:.0f} V at switch-on "
        f"and up to {working:.0f} V in use at high mains. These voltages can kill. Work on it "
        "only if you are competent with high-voltage equipment, with the mains plug out.",
        "<strong>Stored charge.</strong> The capacitors stay charged after switch-off. With the "
        "bleeders fitted and intact (valves drawing nothing):<ul>"
        + "".join(f"<li>{_e(x)}</li>" for x in discharge) + "</ul>"
        "Measure every capacitor with a meter before you touch anything; a failed bleeder leaves "
        "the full charge in place.",
        "<strong>Bleeders.</strong> Rate each bleeder for the voltage across it and for the "
        "dissipation in the check table; do not leave them out to save power.",
        "<strong>Mains wiring.</strong> Fuse the primary, bond the chassis to the protective "
        "earth, use mains-rated switches (a rectifier changeover switch must be rated for the "
        "voltage it switches) and insulation rated for the working voltages.",
        "<strong>Local codes.</strong> Mains wiring, earthing, fusing and insulation are "
        "governed by local electrical codes and safety standards. These figures are "
        "engineering estimates, not a certification; the order sheet is a specification for a "
        "qualified winder. Defer to local codes and licensed practice.",
    ]
    return '<ul class="cautions">' + "".join(f"<li>{i}</li>" for i in items) + "</ul>"


def _glance(positions, design, extra=None) -> str:
    """The short answer: does it pass, what it costs, where B+ lands."""
    from optimiser.assessment.bill import cost_breakdown

    total = cost_breakdown(design)["total"]
    failed = [f"{name + '/' if name else ''}{c.name}" for name, _, a in positions
              for c in a.checks if not c.passed]
    close = [c for _, _, a in positions for c in a.checks if c.passed and c.ratio >= MARGIN_BAND]
    if failed:
        verdict = (f'<span class="verdict fail">\u2717 fails {len(failed)} check'
                   f'{"s" if len(failed) > 1 else ""}</span> {_e(", ".join(failed))}')
    else:
        verdict = '<span class="verdict pass">\u2713 every check passes</span>'
        if close:
            verdict += (f" ({len(close)} within {100 * (1 - MARGIN_BAND):.0f} % of "
                        "its rating)")
    items = [("verdict", verdict),
             ("estimated cost", _e(f"{total:,.2f} cost units" if np.isfinite(total) else
                                   "unknown (a part has no price; see the parts list)"))]
    for name, _, a in positions:
        where = f" ({name})" if name else ""
        bplus = ", ".join(f"{n['name']} {n['idle_voltage']:.0f}\u2192"
                          f"{n['full_power_voltage']:.0f} V" for n in a.nodes)
        items.append((f"B+ idle \u2192 full power{where}", _e(bplus)))
        first = a.nodes[0]
        items.append((f"reservoir{where}", _e(
            f"ripple {a.steady.nodes[0].ripple_pp:.1f} V p-p, sag {first['depth']:.1f} V "
            f"({first['depth'] / first['idle_voltage'] * 100:.1f} %), rectifier stress "
            f"{_q(a.rectifier_stress, '-')}")))
    for label, value in (extra or []):
        items.append((label, _e(value)))
    return ('<dl class="glance">' + "".join(f"<dt>{_e(k)}</dt><dd>{v}</dd>" for k, v in items)
            + "</dl>")


def _positions(design, assessment):
    """[(position name or None, Design, Assessment)] in the design's order."""
    if hasattr(assessment, "positions"):
        return [(name, d, assessment.positions[name]) for name, d in design.positions()]
    return [(None, design, assessment)]


def _plots_html(positions, anchor, kind, plot, caption) -> str:
    width = WIDE if len(positions) == 1 else HALF
    figs = []
    for name, d, a in positions:
        key = f"{anchor}-{kind}-{_slug(name or 'one')}"
        title = f"<strong>Position '{_e(name)}'.</strong> " if name else ""
        figs.append(_figure_html(plot(d, a, key, width), title + caption(d, a), key))
    cls = "side-by-side" if len(positions) > 1 else "single"
    return f'<div class="{cls}">' + "".join(figs) + "</div>"


def _waveform_caption(d, a):
    c = _check(a, "valve.peak_plate_current")
    worst = (f" At high mains the peak plate current reaches {_q(c.value, 'A')}, "
             f"{100 * c.ratio:.0f} % of its rating." if c is not None else "")
    silicon = ("" if _check(a, "diode.surge") is None else
               " The diode data give no repetitive peak rating; the non-repetitive surge rating "
               "(I_FSM) is shown for scale, and the switch-on surge is checked against it.")
    return ("One mains cycle at nominal mains and full power: the winding's open-circuit EMF, "
            "the reservoir voltage and the current in each rectifying element, with the rating "
            f"the data gives.{worst}{silicon}")


def _sag_caption(d, a):
    return (f"Cycle-averaged B+ per node for a step from idle to full power held "
            f"{d.conditions.sag_hold:.2f} s (shaded), then back to idle. Attack and recovery "
            "are the times to 63 % of the change (the first-order convention).")


def _switch_on_caption(d, a):
    return ("B+ per node over the first minute at nominal mains: nothing until the rectifier "
            "conducts, the charge-up with the output valves cold, then the idle load once they "
            "warm. Red dashed: the capacitor's rated voltage; red dotted: its surge rating; "
            "grey: the highest voltage at high mains with the valves cold, which the checks "
            "compare with the ratings.")


def _design_section(design, assessment, anchor, title, *, subtitle="", extra=None,
                    design_file=None, badge="") -> str:
    positions = _positions(design, assessment)
    pair = len(positions) > 1
    parts = [f'<section class="design" id="{_e(anchor)}">',
             f"<h2>{_e(title)}{badge}</h2>"]
    if subtitle:
        parts.append(f'<p class="subtitle">{subtitle}</p>')
    if pair:
        names = " and ".join(f"'{p[0]}'" for p in positions)
        parts.append(f"<p>A switchable pair of rectifier branches: positions {_e(names)}, "
                     "each with its own rectifier and reservoir, shown side by side.</p>")
    parts.append(_glance(positions, design, extra))

    def sub(key, heading, body):
        parts.append(f'<section class="part" id="{_e(anchor)}-{key}"><h3>{_e(heading)}</h3>'
                     f"{body}</section>")

    sub("waveforms", "Waveforms over one mains cycle",
        _plots_html(positions, anchor, "waveforms", _waveform_plot, _waveform_caption))
    sub("sag", "Sag: the step from idle to full power",
        _plots_html(positions, anchor, "sag", _sag_plot, _sag_caption))
    sub("switch-on", "Switch-on: B+ over the first minute",
        _plots_html(positions, anchor, "switch-on", _switch_on_plot, _switch_on_caption))
    sub("nodes", "B+ nodes", _nodes_table(positions)
        + '<p class="note">B+ idle and full power, ripple and sag at nominal mains; worst '
          "ripple at low mains and full power; the window spans low mains at full power to "
          "high mains at idle.</p>")
    sub("checks", "Checks against the parts' ratings",
        f'<p class="note">Worst corner of mains, winding and capacitor tolerance. Ratio = '
        f"worst figure / rating (rating / figure for a least value), so at most 1 is inside "
        f"the rating. \u2713 pass: ratio below {MARGIN_BAND:.2f}; ! close: {MARGIN_BAND:.2f} "
        f"to 1; \u2717 FAIL: above 1.</p>" + _checks_table(positions))
    sub("figures", "Rectifier, winding and power (nominal mains, full power)",
        _figures_table(positions))
    sub("life", "Life estimates", _life_table(positions))
    sub("transformer", "Transformer", _transformer_html(design))
    sub("parts", "Parts list", _parts_table(design))
    sub("cautions", "Cautions", _cautions_html(positions, design))
    if design_file is not None:
        try:
            text = Path(design_file).read_text(encoding="utf-8")
        except OSError:
            text = None
        if text is not None:
            parts.append(f"<details><summary>The design file ({_e(Path(design_file).name)})"
                         f"</summary><pre>{_e(text)}</pre></details>")
    parts.append("</section>")
    return "\n".join(parts)
