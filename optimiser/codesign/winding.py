"""The HV winding sized as a winder sizes it, on the search's screen: a repair and two moves on
rows of the encoding.

- :func:`sized` raises each design's HV current rating to what the winding carries at high
  mains and full power. A winder sizes the wire for the current it will carry, and a design
  below that fails ``transformer.hv_rms_current`` whatever else it gets right. The search
  applies it to every design it evaluates (:meth:`optimiser.codesign.problem.CoDesign.repair`).
- :func:`thinnest` winds the HV winding in the thinnest wire that carries its current and adds
  the secondary volts that keep the B+ up: one of the local search's moves
  (:mod:`optimiser.codesign.refine`).
- :func:`topped_up` adds those volts to designs a move left short only of B+: the local
  search's next step after such a move.

All three read the screen's figures (:meth:`optimiser.codesign.screening.Screen.score`) and leave
those of the rows they return with it (:meth:`~optimiser.codesign.screening.Screen.remember`),
so the evaluation that follows does not screen them again.
"""

from __future__ import annotations

import numpy as np

from optimiser.codesign.encoding import CURRENT_COLUMN, VOLTAGE_COLUMN
from optimiser.codesign.objective_table import row_worst

__all__ = ["sized", "thinnest", "topped_up", "SIZING_ROUNDS", "SIZING_MARGIN"]

#: Rounds of :func:`sized` and of the voltage raise of :func:`thinnest` and :func:`topped_up`. [-]
SIZING_ROUNDS = 3
#: Margin of :func:`sized` over the current the screen finds. [-]
SIZING_MARGIN = 0.002


def sized(screen, X, rounds=SIZING_ROUNDS):
    """X with each design's HV current rating raised, where the screen finds the winding
    carrying more than its rating at high mains and full power, to what it carries (times
    1 + :data:`SIZING_MARGIN`). A rating above the need is left alone (a larger wire is a real
    choice: less resistance, less sag). The current depends on the winding's resistance and so
    on the rating, so the raise is repeated ``rounds`` times on the designs still short (it
    converges: a larger wire raises the current far less than in proportion).

    Parameters
    ----------
    screen : Screen
    X : ndarray (B, n_var)
        Rows of the encoding (the rating in column ``CURRENT_COLUMN``, log10 [A]).
    """
    X = np.array(np.atleast_2d(X), float, copy=True)
    upper = screen.b.variables[CURRENT_COLUMN].upper
    rows = np.arange(len(X))
    for _ in range(rounds):
        if not len(rows):
            break
        F, G, ratios = screen.score(X[rows])
        ratio = row_worst(np.column_stack(
            [v for name, v in ratios.items() if name.endswith("transformer.hv_rms_current")]
            or [np.full(len(rows), np.nan)]))
        short = np.isfinite(ratio) & (ratio > 1.0)
        screen.remember(X[rows[~short]], F[~short], G[~short])
        rows = rows[short]
        X[rows, CURRENT_COLUMN] = np.minimum(
            X[rows, CURRENT_COLUMN] + np.log10(ratio[short] * (1 + SIZING_MARGIN)), upper)
    return X


def thinnest(screen, X, rounds=SIZING_ROUNDS):
    """X with each design's HV winding in the thinnest wire that carries its current and
    enough secondary voltage for its B+.

    The rating is brought down to the least and sized up to what the winding carries
    (:func:`sized`). Then, where a node's DC falls below its lower limit on the screen (eased as
    the search's evaluation eases it), the secondary voltage is raised by the shortfall over
    the node's DC per secondary volt, and the rating sized again, ``rounds`` times at most.
    Taking the DC in proportion to the secondary slightly overestimates the step, since the
    drops do not grow with it.

    A designer's move: a thinner winding sags more and costs less, and a few more volts put the
    B+ back where it was. One step in one variable at a time cannot make it, since the thinner
    wire alone fails the B+.

    Parameters
    ----------
    screen : Screen
    X : ndarray (B, n_var)
        Rows of the encoding.
    """
    X = np.array(np.atleast_2d(X), float, copy=True)
    X[:, CURRENT_COLUMN] = screen.b.variables[CURRENT_COLUMN].lower
    X = sized(screen, X, rounds)
    return _lifted(screen, X, screen.evaluate(X)[1], rounds) if len(X) else X


def topped_up(screen, X, G, rounds=SIZING_ROUNDS):
    """Of designs the screen has judged (``G`` as the search's evaluation gives it), those that
    fail only a node's lower DC limit, with the secondary voltage raised by the shortfall and
    the rating sized again, as :func:`thinnest` raises it (``rounds`` times at most); the
    others are left out.

    A move that saves money in the filter (a smaller capacitor behind a larger resistor, a
    thinner winding) often costs a volt or two of B+, and the same move with those volts wound
    on is the designer's next step. [rows of the encoding]
    """
    X = np.atleast_2d(np.asarray(X, float))
    G = np.atleast_2d(np.asarray(G, float))
    low = _low_columns(screen)
    if not low or not len(X):
        return X[:0]
    others = np.ones(G.shape[1], bool)
    others[low] = False
    only = np.all(G[:, others] <= 0, axis=1) & np.any(G[:, low] > 0, axis=1)
    out = _lifted(screen, X[only], G[only], rounds)
    return out[out[:, VOLTAGE_COLUMN] > X[only, VOLTAGE_COLUMN]]


def _lifted(screen, X, G, rounds):
    """X (with its constraints G) with the secondary raised where a node is short of B+ and the
    rating sized again, judged again and repeated, ``rounds`` times at most."""
    X = np.array(X, float, copy=True)
    rows = np.arange(len(X))
    for round_ in range(rounds):
        if round_:
            G = screen.evaluate(X[rows])[1]
        voltage = _raised(screen, X[rows], G)
        short = voltage > X[rows, VOLTAGE_COLUMN]
        rows = rows[short]
        if not len(rows):
            break
        X[rows, VOLTAGE_COLUMN] = voltage[short]
        X[rows] = sized(screen, X[rows], rounds)
    return X


def _low_columns(screen):
    """Columns of G that hold a node's lower DC limit."""
    return [j for j, c in enumerate(screen.b.constraints) if c.name.endswith(".dc_voltage.low")]


def _raised(screen, X, G):
    """Each design's secondary voltage index raised by its largest B+ shortfall (from its
    constraints G, eased as the search's evaluation eases them) over that node's DC per
    secondary volt, within the grid; its own index where no node is short. (B,)"""
    b = screen.b
    low = _low_columns(screen)
    grid = b.options.voltage_grid
    index = np.rint(X[:, VOLTAGE_COLUMN])
    if not low or len(grid) < 2 or not len(X):
        return index
    limits = np.array([ns.dc_voltage - ns.window for ns in screen.spec.nodes])
    shortfall = G[:, low] * np.array([b.constraints[j].scale for j in low])  # [V]
    secondary = grid[np.clip(index.astype(int), 0, len(grid) - 1)]
    with np.errstate(all="ignore"):
        per_volt = (limits - shortfall) / secondary[:, None]  # node DC per secondary volt
        needed = row_worst(np.where(shortfall > 0, shortfall / per_volt, np.nan))
    steps = np.where(np.isfinite(needed) & (needed > 0), np.ceil(needed / (grid[1] - grid[0])), 0)
    return np.minimum(index + steps, len(grid) - 1)
