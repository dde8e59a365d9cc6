"""The full tier's mains and tolerance corners of a batch of designs (the table is in
:mod:`optimiser.assessment.full`): each corner's EMF and capacitance scale and its loads."""

from __future__ import annotations

import numpy as np

from optimiser.parts import catalogue as parts
from optimiser.inputs.design import Design
from optimiser.assessment.steady_state import Batch


def _tolerances(design: Design):
    """(capacitance minus, plus) from the conditions, else from the capacitor series."""
    c = design.conditions
    if c.capacitor_minus is not None and c.capacitor_plus is not None:
        return c.capacitor_minus, c.capacitor_plus
    series = parts.find_part("capacitor", design.nodes[0].capacitor_series or c.capacitor_series)
    minus = c.capacitor_minus if c.capacitor_minus is not None else series.tolerance.minus
    plus = c.capacitor_plus if c.capacitor_plus is not None else series.tolerance.plus
    return minus, plus


def _corner_batches(designs):
    """One :class:`Batch` per corner name (``CORNERS`` of :mod:`optimiser.assessment.full`)."""
    low = np.array([(1 - d.conditions.mains_low) * (1 - d.conditions.transformer_tolerance)
                    for d in designs])
    high = np.array([(1 + d.conditions.mains_high) * (1 + d.conditions.transformer_tolerance)
                     for d in designs])
    tol = np.array([_tolerances(d) for d in designs])
    c_low, c_high = 1 - tol[:, 0], 1 + tol[:, 1]
    spec = {
        "nominal_idle": (1.0, 1.0, "idle"),
        "nominal_full": (1.0, 1.0, "full"),
        "low_full": (low, c_low, "full"),
        "high_idle": (high, c_high, "idle"),
        "high_full": (high, c_high, "full"),
        "high_none": (high, c_high, "none"),
    }
    made = {}  # coinciding corners (a sampled build's, its bands collapsed) are built once
    for name, (m, c, loads) in spec.items():
        key = (np.broadcast_to(m, low.shape).tobytes(), np.broadcast_to(c, low.shape).tobytes())
        spec[name] = made[key + (loads,)] = made.get(key + (loads,)) or Batch.from_designs(
            designs, m, c, loads)
    return spec
