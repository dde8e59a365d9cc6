"""Whether an assessed design's figures describe a working supply at all.

A periodic solution that did not reach its tolerance, or a B+ node driven below 0 V or far
above anything the winding can give (a load that draws more than the supply can deliver makes
the solution run away), yields numbers that are not a supply's: they must be refused with their
cause, never printed as figures or ranked by a search.
"""

from __future__ import annotations

import math
from pathlib import Path

from optimiser.formats.yamlfile import DesignError

__all__ = ["UnworkableDesign", "problems", "per_design", "refused", "HINT"]

#: Highest believable B+ over the winding's peak EMF: a capacitor-input supply charges at
#: most to the peak, and the high-mains corner adds its tolerance (below 50 %). [-]
#: Common practice, no source.
_OVERSHOOT = 1.6

HINT = ("check that the loads do not draw more than the winding can give (load currents and "
        "resistances against the secondary voltage and the feed resistances), and that no "
        "value carries a wrong prefix")


class UnworkableDesign(DesignError):
    """A design whose steady state did not converge or has a collapsed node."""


def problems(assessment, design) -> list[str]:
    """Why an :class:`~optimiser.assessment.full.Assessment` is not a working supply.

    Parameters
    ----------
    assessment : Assessment
        One fixed rectifier's (or one switch position's) assessment.
    design : Design
        The design it came from (for the winding's EMF).

    Returns
    -------
    list of str
        One reason per problem (the last ends with a hint); empty when the figures are a supply's.
    """
    out = []
    for label, result in (("at full power", assessment.steady), ("at idle", assessment.idle)):
        if not result.converged:
            out.append(f"the steady state {label} did not converge")
    emf = design.transformer.secondary_voltage * math.sqrt(2.0)
    for node in assessment.nodes:
        for key, label in (("idle_voltage", "at idle"), ("full_power_voltage", "at full power"),
                           ("window_min", "at low mains"), ("window_max", "at high mains")):
            v = node[key]
            if not math.isfinite(v) or v <= 0.0:
                out.append(f"node '{node['name']}' collapses {label} ({v:.4g} V DC)")
                break
            if v > _OVERSHOOT * emf:
                out.append(f"node '{node['name']}' runs away {label} ({v:.4g} V DC, above the "
                           f"winding's {emf:.0f} V peak)")
                break
    if out:
        out[-1] += f" ({HINT})"
    return out


def per_design(count, owner, assessments, designs) -> list[str]:
    """:func:`problems` of each switch position, gathered per design and joined by "; "
    ("" for a working design; ``owner`` is [(design index, position name or None)] of each
    position)."""
    out = [[] for _ in range(count)]
    for (i, name), a, d in zip(owner, assessments, designs):
        out[i] += [f"{'' if name is None else f'position {name}: '}{p}" for p in problems(a, d)]
    return ["; ".join(reasons) for reasons in out]


def refused(table, source):
    """Return an assessment table of one design, or raise :class:`UnworkableDesign` with one
    line per reason when its ``unworkable`` column holds any."""
    reasons = table.frame["unworkable"].iloc[0]
    if not reasons:
        return table
    where = f"{source}: " if isinstance(source, (str, Path)) else ""
    raise UnworkableDesign([f"{where}no working supply: {r}" for r in reasons.split("; ")])
