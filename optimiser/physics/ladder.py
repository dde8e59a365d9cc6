"""The filter ladder as a linear network: reservoir, RC/LC sections, loads -> state-space model.

The network between the rectifier and the loads is linear. It is stamped by modified nodal
analysis (MNA) and reduced to an ordinary state-space model ``dx/dt = A x + B u`` whose states are
capacitor voltages and inductor currents, with inputs ``u = [e, I_1, ..., I_N]``: ``e`` the voltage
driving the rectifier path (source minus the elements' drop) and ``I_k`` the constant-current sink
at node ``k``. Every array has the batch (design) dimension first.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

__all__ = [
    "LadderStructure",
    "LadderValues",
    "StateSpace",
    "state_space",
]


@dataclass(frozen=True)
class LadderStructure:
    """The shape shared by a batch of ladders (designs of one shape are solved together).

    Attributes
    ----------
    n_nodes : int
        Number of B+ nodes, the first holding the reservoir capacitor.
    esr : tuple of bool
        Per node, whether its capacitor has a series resistance.
    inductive_feed : tuple of bool
        Per node, whether its feed holds an inductance; entry 0 is the rectifier path
        (winding leakage plus a choke-input choke).
    """

    n_nodes: int
    esr: tuple
    inductive_feed: tuple


@dataclass(frozen=True)
class LadderValues:
    """Element values of a batch of ladders; arrays of shape (B,) or (B, n_nodes).

    Attributes
    ----------
    path_resistance : ndarray (B,)
        Series resistance of the rectifier path outside its elements: winding plus a first-node
        feed. [ohm]
    path_inductance : ndarray (B,)
        Winding leakage plus a choke-input choke. [H]
    capacitance, esr : ndarray (B, N)
        Each node's capacitor and its series resistance. [F], [ohm]
    feed_resistance, feed_inductance : ndarray (B, N)
        Feed from the previous node (column 0 unused: folded into the path). [ohm], [H]
    load_conductance, load_current : ndarray (B, N)
        Resistive load as a conductance and constant-current sink at each node. [S], [A]
    """

    path_resistance: np.ndarray
    path_inductance: np.ndarray
    capacitance: np.ndarray
    esr: np.ndarray
    feed_resistance: np.ndarray
    feed_inductance: np.ndarray
    load_conductance: np.ndarray
    load_current: np.ndarray


@dataclass(frozen=True)
class StateSpace:
    """Reduced model ``dx/dt = A x + B u`` and linear output maps ``y = C x + D u``.

    Attributes
    ----------
    A : ndarray (B, n, n)
    B : ndarray (B, n, m)
        Inputs m = 1 + N: the path drive e [V], then the load sinks I_k [A].
    node_voltage : tuple (C, D) of shapes (B, N, n), (B, N, m)
        Node voltages. [V]
    capacitor_current : tuple (C, D)
        Current into each node's capacitor. [A]
    feed_current : tuple (C, D)
        Current in each node's feed, column 0 the rectifier path current. [A]
    capacitor_voltage_index : ndarray (N,)
        Which state is each capacitor's own voltage.
    inductor_index : list of (int, int)
        (node, state index) for each inductive feed; node 0 is the rectifier path.
    """

    A: np.ndarray
    B: np.ndarray
    node_voltage: tuple
    capacitor_current: tuple
    feed_current: tuple
    capacitor_voltage_index: np.ndarray
    inductor_index: list


def _stamp_conductance(G, a, b, g):
    G[:, a, a] += g
    if b is not None:
        G[:, b, b] += g
        G[:, a, b] -= g
        G[:, b, a] -= g


def state_space(structure: LadderStructure, values: LadderValues) -> StateSpace:
    """Stamp the ladder by modified nodal analysis and reduce it to state-space form.

    Parameters
    ----------
    structure : LadderStructure
    values : LadderValues

    Returns
    -------
    StateSpace

    References
    ----------
    .. [1] C.-W. Ho, A. E. Ruehli, P. A. Brennan, "The modified nodal approach to network
       analysis," IEEE Trans. Circuits Syst., vol. 22, no. 6, 1975.
    """
    n_nodes = structure.n_nodes
    batch = values.capacitance.shape[0]
    # unknowns: ladder nodes, then capacitor nodes behind an ESR, then inductor branch currents
    cap_node = []
    n_unknown = n_nodes
    for k in range(n_nodes):
        if structure.esr[k]:
            cap_node.append(n_unknown)
            n_unknown += 1
        else:
            cap_node.append(k)
    branch = {}
    for k in range(n_nodes):
        if structure.inductive_feed[k]:
            branch[k] = n_unknown
            n_unknown += 1
    m = 1 + n_nodes
    G = np.zeros((batch, n_unknown, n_unknown))
    E = np.zeros((batch, n_unknown))
    Bu = np.zeros((batch, n_unknown, m))

    for k in range(n_nodes):
        E[:, cap_node[k]] = values.capacitance[:, k]
        if structure.esr[k]:
            _stamp_conductance(G, k, cap_node[k], 1.0 / values.esr[:, k])
        G[:, k, k] += values.load_conductance[:, k]
        Bu[:, k, 1 + k] = -1.0
    # the rectifier path: e -> (R, L) -> node 0
    if 0 in branch:
        j = branch[0]
        E[:, j] = values.path_inductance
        G[:, j, j] = values.path_resistance
        G[:, j, 0] += 1.0
        G[:, 0, j] -= 1.0
        Bu[:, j, 0] = 1.0
    else:
        g = 1.0 / values.path_resistance
        G[:, 0, 0] += g
        Bu[:, 0, 0] = g
    for k in range(1, n_nodes):
        if k in branch:
            j = branch[k]
            E[:, j] = values.feed_inductance[:, k]
            G[:, j, j] = values.feed_resistance[:, k]
            G[:, j, k - 1] -= 1.0
            G[:, j, k] += 1.0
            G[:, k - 1, j] += 1.0
            G[:, k, j] -= 1.0
        else:
            _stamp_conductance(G, k - 1, k, 1.0 / values.feed_resistance[:, k])

    dyn = np.array(sorted(set(cap_node) | set(branch.values())))
    alg = np.array([i for i in range(n_unknown) if i not in set(dyn.tolist())], dtype=int)
    n = dyn.size
    # E_d dz_d/dt = -G_dd z_d - G_da z_a + B_d u ;  0 = -G_ad z_d - G_aa z_a + B_a u
    G_dd = G[:, dyn][:, :, dyn]
    B_d = Bu[:, dyn]
    if alg.size:
        G_da = G[:, dyn][:, :, alg]
        G_ad = G[:, alg][:, :, dyn]
        G_aa = G[:, alg][:, :, alg]
        B_a = Bu[:, alg]
        solve_x = np.linalg.solve(G_aa, -G_ad)          # z_a = solve_x @ x + solve_u @ u
        solve_u = np.linalg.solve(G_aa, B_a)
        A_un = -G_dd - G_da @ solve_x
        B_un = B_d - G_da @ solve_u
    else:
        A_un, B_un = -G_dd, B_d
    inv_e = 1.0 / E[:, dyn]
    A = A_un * inv_e[:, :, None]
    B = B_un * inv_e[:, :, None]

    # full unknown vector z = P_x x + P_u u
    P_x = np.zeros((batch, n_unknown, n))
    P_u = np.zeros((batch, n_unknown, m))
    P_x[:, dyn, np.arange(n)] = 1.0
    if alg.size:
        P_x[:, alg] = solve_x
        P_u[:, alg] = solve_u
    position = {int(s): i for i, s in enumerate(dyn)}

    node_v = (P_x[:, :n_nodes], P_u[:, :n_nodes])
    cap_c = np.zeros((batch, n_nodes, n))
    cap_d = np.zeros((batch, n_nodes, m))
    for k in range(n_nodes):
        if structure.esr[k]:
            g = (1.0 / values.esr[:, k])[:, None]
            cap_c[:, k] = g * (P_x[:, k] - P_x[:, cap_node[k]])
            cap_d[:, k] = g * (P_u[:, k] - P_u[:, cap_node[k]])
        else:
            row = position[cap_node[k]]
            c = values.capacitance[:, k][:, None]
            cap_c[:, k] = c * A[:, row]
            cap_d[:, k] = c * B[:, row]
    feed_c = np.zeros((batch, n_nodes, n))
    feed_d = np.zeros((batch, n_nodes, m))
    for k in range(n_nodes):
        if k in branch:
            feed_c[:, k, position[branch[k]]] = 1.0
        elif k == 0:
            g = (1.0 / values.path_resistance)[:, None]
            feed_c[:, 0] = -g * P_x[:, 0]
            feed_d[:, 0] = -g * P_u[:, 0]
            feed_d[:, 0, 0] += g[:, 0]
        else:
            g = (1.0 / values.feed_resistance[:, k])[:, None]
            feed_c[:, k] = g * (P_x[:, k - 1] - P_x[:, k])
            feed_d[:, k] = g * (P_u[:, k - 1] - P_u[:, k])
    return StateSpace(
        A=A,
        B=B,
        node_voltage=node_v,
        capacitor_current=(cap_c, cap_d),
        feed_current=(feed_c, feed_d),
        capacitor_voltage_index=np.array([position[c] for c in cap_node]),
        inductor_index=[(k, position[branch[k]]) for k in sorted(branch)],
    )
