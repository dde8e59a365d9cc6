"""The decision vector: the search's variables, and population rows decoded into choices.

A population matrix ``X`` has one row per candidate and one column per :class:`Variable`,
all floats; an integer column holds an index into one of the tables of
:class:`~optimiser.codesign.options.Options`. The columns, in order:

=================================  ==========================================================
``secondary_voltage``              index into the HV voltage grid
``hv_current``                     log10 of the HV RMS current rating [A]
``core_stack``                     index into the cores and stacks
``current_density``                index into the current-density grid
``rectifier``                      index into the spec's rectifier options
``<node>.capacitance`` per node    index into the node's capacitor values
``<node>.rating_step`` per node    0: the lowest voltage rating above the crest, 1: the next
``<node>.feed`` per node but 1st   index into the node's feed options
=================================  ==========================================================

:meth:`Encoding.choices` decodes a whole population into arrays, :meth:`Encoding.decode` into
:class:`Candidate` objects, :meth:`Encoding.encode` turns a candidate back into its row.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from optimiser.codesign.nsga import Variable
from optimiser.codesign.options import RATING_CHOICES, Options
from optimiser.formats.units import round_significant

__all__ = ["VOLTAGE_COLUMN", "RECTIFIER_COLUMN", "CURRENT_COLUMN", "Candidate", "Encoding"]

#: Column of the HV secondary voltage (index into the voltage grid).
VOLTAGE_COLUMN = 0
#: Column of the rectifier option (the columns before it are the transformer's).
RECTIFIER_COLUMN = 4
#: Column of the HV current rating (log10 [A]).
CURRENT_COLUMN = 1


@dataclass(frozen=True)
class Candidate:
    """The decoded choices of one design.

    Attributes
    ----------
    hv_voltage : float
        HV RMS voltage at rated load per conducting path. [V]
    hv_current : float
        HV RMS current rating per conducting path. [A]
    core_stack : int
        Index into :attr:`Options.core_stacks`.
    current_density : float
        Wire current density of every winding. [A/m^2]
    rectifier : int
        Index into ``spec.choices.rectifiers``.
    capacitance : tuple of float
        Per node. [F]
    rating_steps : tuple of int
        Per node: 0 the lowest voltage rating above the crest, 1 the next.
    feeds : tuple of int
        Per node after the first: index into :attr:`Options.feed_options`.
    """

    hv_voltage: float
    hv_current: float
    core_stack: int
    current_density: float
    rectifier: int
    capacitance: tuple
    rating_steps: tuple
    feeds: tuple


class Encoding:
    """The variables of one spec's options, and rows decoded and encoded (see module docstring).

    Parameters
    ----------
    options : Options
    """

    def __init__(self, options: Options):
        self.options = options
        self.n = len(options.node_names)
        self.variables = self._variables()

    def feed_column(self, node: int) -> int:
        """Column of a node's feed choice (node >= 1)."""
        return RECTIFIER_COLUMN + 1 + 2 * self.n + node - 1

    def _variables(self):
        o = self.options
        lo, hi = o.hv_current_range
        out = [
            Variable("secondary_voltage", 0, len(o.voltage_grid) - 1, integer=True),
            Variable("hv_current", math.log10(lo), math.log10(hi)),
            Variable("core_stack", 0, len(o.core_stacks) - 1, integer=True),
            Variable("current_density", 0, len(o.density_grid) - 1, integer=True),
            Variable("rectifier", 0, len(o.rectifiers) - 1, integer=True),
        ]
        for name, values in zip(o.node_names, o.capacitor_values):
            out.append(Variable(f"{name}.capacitance", 0, len(values) - 1, integer=True))
        for name in o.node_names:
            out.append(Variable(f"{name}.rating_step", 0, RATING_CHOICES - 1, integer=True))
        for name, options in zip(o.node_names[1:], o.feed_options[1:]):
            out.append(Variable(f"{name}.feed", 0, len(options) - 1, integer=True))
        return out

    def choices(self, X) -> dict:
        """The choices of a population matrix as arrays (integer columns taken as indices):
        ``hv_voltage``, ``hv_current``, ``core_stack``, ``current_density``, ``rectifier`` (B,);
        ``capacitance``, ``rating_steps`` (B, N); ``feeds`` (B, N - 1)."""
        o = self.options
        X = np.atleast_2d(np.asarray(X, float))
        n = self.n
        first = RECTIFIER_COLUMN + 1

        def index(col, count):
            return np.clip(np.rint(X[:, col]).astype(int), 0, count - 1)

        return {
            "hv_voltage": o.voltage_grid[index(0, len(o.voltage_grid))],
            "hv_current": round_significant(10.0 ** X[:, 1], 3),
            "core_stack": index(2, len(o.core_stacks)),
            "current_density": o.density_grid[index(3, len(o.density_grid))],
            "rectifier": index(RECTIFIER_COLUMN, len(o.rectifiers)),
            "capacitance": np.column_stack([
                o.capacitor_values[k][index(first + k, len(o.capacitor_values[k]))]
                for k in range(n)]),
            "rating_steps": np.column_stack([index(first + n + k, RATING_CHOICES)
                                             for k in range(n)]),
            "feeds": np.array([index(self.feed_column(k), len(o.feed_options[k]))
                               for k in range(1, n)], int).reshape(n - 1, len(X)).T,
        }

    def decode(self, X) -> list[Candidate]:
        """Candidates from a population matrix (integer columns are taken as indices)."""
        c = self.choices(X)
        return [Candidate(float(c["hv_voltage"][b]), float(c["hv_current"][b]),
                          int(c["core_stack"][b]), float(c["current_density"][b]),
                          int(c["rectifier"][b]), tuple(float(v) for v in c["capacitance"][b]),
                          tuple(int(v) for v in c["rating_steps"][b]),
                          tuple(int(v) for v in c["feeds"][b]))
                for b in range(len(c["rectifier"]))]

    def encode(self, candidate: Candidate) -> np.ndarray:
        """The population row of a candidate (the inverse of :meth:`decode`)."""
        o = self.options
        row = [int(np.argmin(np.abs(o.voltage_grid - candidate.hv_voltage))),
               math.log10(candidate.hv_current), candidate.core_stack,
               int(np.argmin(np.abs(o.density_grid - candidate.current_density))),
               candidate.rectifier]
        for k, c in enumerate(candidate.capacitance):
            row.append(int(np.argmin(np.abs(np.log(o.capacitor_values[k] / c)))))
        row += list(candidate.rating_steps) + list(candidate.feeds)
        return np.array(row, float)
