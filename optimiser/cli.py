"""Command line: ``railwright evaluate | transformer | optimise | report``.

Only parses arguments, calls the library and prints. Bad input exits with status 2 and one
line per problem, never a traceback.
"""

from __future__ import annotations

import argparse
import json
import sys

from .design import DesignError
from .units import format_quantity

EXIT_BAD_INPUT = 2

CAUTION = ("CAUTION: valve amplifier supplies carry lethal voltages and their capacitors hold "
           "charge after switch-off. Fit bleeders, fuse and earth the chassis, and follow local "
           "electrical codes and licensed practice.")


def _parser() -> argparse.ArgumentParser:
    p = argparse.ArgumentParser(
        prog="railwright",
        description="Co-design a valve amplifier's power transformer and HV supply.")
    sub = p.add_subparsers(dest="command", required=True)
    ev = sub.add_parser("evaluate", help="steady state and checks of one concrete supply")
    ev.add_argument("design", help="design file (YAML)")
    ev.add_argument("--json", action="store_true", help="print one JSON object instead of tables")
    return p


def _evaluate(args) -> int:
    from .evaluation import evaluate

    result = evaluate(args.design)
    if args.json:
        print(json.dumps(result.to_dict(), indent=2))
        return 0
    print(render_supply(result))
    return 0


def render_supply(result) -> str:
    """A plain-text view of a :class:`~optimiser.evaluation.SupplyResult`."""
    f = format_quantity
    lines = ["B+ nodes at steady state (nominal mains)", ""]
    header = f"  {'node':<14}{'DC':>10}{'ripple p-p':>13}{'ripple rms':>13}{'cap. I rms':>13}"
    lines += [header, "  " + "-" * (len(header) - 2)]
    for n in result.nodes:
        lines.append(f"  {n.name:<14}{f(n.dc_voltage, 'V', 4):>10}{f(n.ripple_pp, 'V'):>13}"
                     f"{f(n.ripple_rms, 'V'):>13}{f(n.capacitor_rms_current, 'A'):>13}")
    r = result
    lines += [
        "",
        "Rectifier (per element) and winding",
        f"  peak current        {f(r.rectifier_peak_current, 'A')}",
        f"  average current     {f(r.rectifier_average_current, 'A')}",
        f"  RMS current         {f(r.rectifier_rms_current, 'A')}",
        f"  conduction          {r.conduction_angle:.0f} degrees of the mains cycle",
        f"  peak inverse volts  {f(r.piv, 'V')}",
        f"  winding RMS current {f(r.secondary_rms_current, 'A')}",
        "",
        "Power",
        f"  from the winding    {f(r.input_power, 'W')}",
        f"  into the loads      {f(r.load_power, 'W')}",
        f"  rectifier loss      {f(r.rectifier_loss, 'W')}",
        f"  winding-path loss   {f(r.winding_loss, 'W')}",
        f"  feeds and ESR loss  {f(r.ladder_loss, 'W')}",
    ]
    if not r.converged:
        lines += ["", "WARNING: the periodic solution did not reach its tolerance."]
    lines += ["", CAUTION]
    return "\n".join(lines)


COMMANDS = {"evaluate": _evaluate}


def main(argv=None) -> int:
    args = _parser().parse_args(argv)
    try:
        return COMMANDS[args.command](args)
    except DesignError as exc:
        for line in exc.problems:
            print(f"error: {line}", file=sys.stderr)
        return EXIT_BAD_INPUT
    except LookupError as exc:
        print(f"error: {exc.args[0] if exc.args else exc}", file=sys.stderr)
        return EXIT_BAD_INPUT
