"""Rectifier branches: the builder's solid-state-or-valve decision, kept apart in the search.

A *branch* is one rectifier option the spec allows: a silicon bridge with its diode, a silicon
centre-tap with its diode, a valve centre-tap per valve type, a hybrid bridge per valve and
diode, a switchable pair per pair of positions (two options that differ only in their diode are
two branches, so the builder sees what the diode choice costs). Each gets its own non-dominated
set (the search keeps each branch alive as a niche, :class:`optimiser.codesign.nsga.NicheSurvival`);
the overall front is the non-dominated set of their union. A branch no design of which met the
spec is reported with its binding constraints, not dropped.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

__all__ = ["Branch", "branch_key", "kind_of", "branches_of", "option_branches", "niche_of",
           "branch_fronts", "union_front", "binding_constraints", "branch_rows",
           "with_dynamics"]


def _name(part):
    return part if isinstance(part, str) or part is None else getattr(part, "name", "?")


def branch_key(rectifier) -> str:
    """The branch of a rectifier option or a design's rectifier (anything with ``topology``,
    ``valve``, ``diode`` and, for a switchable pair, ``positions``): e.g.
    ``"silicon bridge 1N5408"``, ``"valve centre-tap 5U4G"``, ``"hybrid bridge 5AR4 + 1N5408"``."""
    if rectifier.topology == "switchable":
        return "switchable: " + " / ".join(f"{name} {branch_key(p)}"
                                           for name, p in rectifier.positions.items())
    valve, diode = _name(rectifier.valve), _name(rectifier.diode)
    if rectifier.topology == "hybrid-bridge":
        return " ".join(["hybrid bridge", valve or "valve"] + (["+", diode] if diode else []))
    if valve is not None:
        return f"valve {rectifier.topology} {valve}"
    return " ".join([f"silicon {rectifier.topology}"] + ([diode] if diode else []))


def kind_of(key: str) -> str:
    """"silicon", "valve", "hybrid" or "switchable" of a branch key."""
    return key.split(" ", 1)[0].rstrip(":")


@dataclass(frozen=True)
class Branch:
    """One branch of a spec.

    Attributes
    ----------
    key : str
        E.g. ``"silicon bridge 1N5408"``, ``"valve centre-tap 5U4G"``.
    options : tuple of int
        Its rectifier options (indices into ``spec.choices.rectifiers``).
    """

    key: str
    options: tuple

    @property
    def kind(self) -> str:
        return kind_of(self.key)


def branches_of(spec) -> list:
    """The spec's branches, in the order their first option is listed."""
    keys = {}
    for i, option in enumerate(spec.choices.rectifiers):
        keys.setdefault(branch_key(option), []).append(i)
    return [Branch(k, tuple(v)) for k, v in keys.items()]


def option_branches(spec) -> np.ndarray:
    """Per rectifier option, the index of its branch in :func:`branches_of`. (n_options,)"""
    out = np.empty(len(spec.choices.rectifiers), int)
    for b, branch in enumerate(branches_of(spec)):
        out[list(branch.options)] = b
    return out


def niche_of(spec, rectifier_column) -> np.ndarray:
    """The branch index of each row of a population, from its rectifier column. (B,)"""
    table = option_branches(spec)
    index = np.clip(np.rint(np.asarray(rectifier_column, float)).astype(int), 0, len(table) - 1)
    return table[index]


def branch_fronts(F, feasible, keys, front_of) -> dict:
    """{branch key: rows of its feasible non-dominated designs} (every key present, empty
    where none of the branch is feasible).

    Parameters
    ----------
    F : ndarray (B, m)
    feasible : ndarray of bool (B,)
    keys : sequence of str (B,) or dict-order list
        Each row's branch key.
    front_of : callable (F, mask) -> rows
        The non-dominated rows among a mask (e.g. :func:`optimiser.codesign.run.reported_front`).
    """
    keys = np.asarray(keys, object)
    out = {}
    for key in dict.fromkeys(keys.tolist()):
        out[key] = np.asarray(front_of(F, feasible & (keys == key)), int)
    return out


def union_front(F, fronts: dict, front_of) -> np.ndarray:
    """The non-dominated rows of the union of branch fronts."""
    mask = np.zeros(len(F), bool)
    for rows in fronts.values():
        mask[rows] = True
    return np.asarray(front_of(F, mask), int)


def binding_constraints(G, infos, rows):
    """What keeps a branch off the spec: [(ConstraintInfo, least value)] of the constraints no
    design of the branch met (> 0), or, when each was met by some design but never all at once,
    those the nearest design missed."""
    if len(rows) == 0:
        return []
    sub = G[rows]
    best = sub.min(axis=0)
    unmet = [(info, float(b)) for info, b in zip(infos, best) if b > 0]
    if unmet:
        return unmet
    nearest = int(np.argmin(np.maximum(sub, 0).sum(axis=1)))
    return [(info, float(g)) for info, g in zip(infos, sub[nearest]) if g > 0]


def branch_rows(opt, ids_of) -> list:
    """One dict per branch of the spec for ``branches.csv`` and the "Silicon or valve?" table.

    Parameters
    ----------
    opt : Optimisation
    ids_of : dict of int -> str
        Design id of a listed row of ``opt.scored``.
    """
    fr = opt.scored.frame
    spec = opt.spec
    cheapest_all = min((float(fr["cost"].iloc[r].min()) for r in opt.branch_fronts.values()
                        if len(r)), default=np.nan)
    closeness = "sag_error" if spec.sag is not None else "regulation"
    out = []
    for branch in branches_of(spec):
        rows = opt.branch_fronts.get(branch.key, np.array([], int))
        row = {"branch": branch.key, "kind": branch.kind,
               "options": "; ".join(_option_text(spec.choices.rectifiers[i])
                                    for i in branch.options),
               "feasible": bool(len(rows)), "designs": int(len(rows))}
        if not len(rows):
            members = np.flatnonzero(fr["branch"].to_numpy(object) == branch.key)
            missed = binding_constraints(opt.scored.G, opt.binding.constraints, members)
            row["binding_constraints"] = ("; ".join(f"{i.description}: {i.miss(g)}"
                                                    for i, g in missed)
                                          or "the search kept no design of this branch")
            out.append(row)
            continue
        sub = fr.iloc[rows]
        cheap = rows[int(np.argmin(sub["cost"].to_numpy(float)))]
        close = rows[int(np.nanargmin(sub[closeness].to_numpy(float)))]
        life = sub["life"].to_numpy(float)
        longest = rows[int(np.nanargmax(life))] if np.isfinite(life).any() else cheap
        c = fr.iloc[cheap]
        row.update({
            "cheapest": ids_of.get(cheap, ""), "cheapest_cost": float(c["cost"]),
            "closest_to_target" if spec.sag is not None else "stiffest": ids_of.get(close, ""),
            "longest_life": ids_of.get(longest, ""),
            "cost_premium": float(c["cost"]) - cheapest_all,
            "sag_depth_pct": 100 * float(c["regulation"]),
            "attack_time_s": float(c["attack_time"]), "recovery_time_s": float(c["recovery_time"]),
            "shortest_life_h": float(c["life"]), "rectifier_stress": float(c["rectifier_stress"]),
            "life_range_h": f"{np.nanmin(life):.3g}-{np.nanmax(life):.3g}",
            "binding_constraints": ""})
        if "yield" in fr:  # the spec's robustness: each listed design's yield of sampled builds
            row.update({"yield": float(c["yield"]),
                        "best_yield": float(np.nanmax(sub["yield"].to_numpy(float)))})
        out.append(row)
    return out


def _option_text(option) -> str:
    if option.topology == "switchable":
        return "switchable " + " / ".join(f"{n} {_option_text(p)}"
                                          for n, p in option.positions.items())
    names = " + ".join(p for p in (option.valve, option.diode) if p)
    return f"{option.topology} {names}".strip()


def with_dynamics(binding, scored, rows):
    """``scored`` with the sag step (attack and recovery times) simulated for ``rows`` too,
    where the search did without it (the spec sets no attack or recovery window): the branch
    table and ``pareto.csv`` give them. Objectives and constraints are unchanged (the static
    figures do not depend on the step)."""
    from dataclasses import replace

    rows = np.asarray(rows, int)
    if binding.needs_sag_dynamics or not len(rows):
        return scored
    again = binding.score([scored.designs[r] for r in rows], dynamics=True)
    frame = scored.frame.copy()
    for column in again.frame.columns:
        if column not in frame.columns:
            frame[column] = np.nan
        if frame[column].dtype != again.frame[column].dtype:
            frame[column] = frame[column].astype(object)
        frame.iloc[rows, frame.columns.get_loc(column)] = again.frame[column].to_numpy()
    table = scored.table
    assessments = list(table.assessments)
    for j, r in enumerate(rows):
        assessments[r] = again.table.assessments[j]
    tframe = table.frame.copy()
    for column in again.table.frame.columns:
        if column not in tframe.columns:
            tframe[column] = np.nan
        tframe[column] = tframe[column].astype(object)
        tframe.iloc[rows, tframe.columns.get_loc(column)] = again.table.frame[column].to_numpy()
    return replace(scored, frame=frame, table=replace(table, frame=tframe,
                                                      assessments=assessments))
