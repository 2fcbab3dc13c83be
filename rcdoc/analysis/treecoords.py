"""Tree-branch coordinates: a network's equations stamped so that values decades apart survive.

What it is for: the pole computation and the time march both need the
network's matrices free of the rounding that plain nodal stamping suffers.
A node's diagonal entry sums the conductances that meet there, so 1/(1 GΩ)
beside 1/(1 mΩ) is lost before any solver runs, and no diagonal scaling
brings it back: a Sallen-Key's Q came out 0.5 instead of 3.16, and its step
response blew up. Here the unknowns are the voltages across the branches of a
spanning tree chosen from the largest admittances at the network's
characteristic frequency (a node's voltage is the sum of the tree branches on
its path to ground), and each element is stamped in those coordinates
directly: a large conductance sits on its own branch's diagonal and no longer
swamps the small ones. The result is Tᵀ(G + sC)T of the nodal system, with
x = T·y, computed element by element so that nothing is rounded away.

What it must not do: know about stage kinds, parts or units, or loop in
Python over samples.
"""

from __future__ import annotations

import math
from typing import Mapping

import numpy as np

from rcdoc.analysis.assembly import SOURCE, System
from rcdoc.analysis.network import GROUND, Network

_ROOT = "\0root"


def characteristic_rate(network: Network, values: Mapping[str, np.ndarray]) -> float:
    """A rate (rad/s) in the middle of the network's time constants, from the nominal row.

    The geometric mean of R·C (or √(L·C), or L/R) over the parts: for a
    second-order section it is the natural frequency itself.
    """
    logs: dict[str, list[float]] = {"R": [], "C": [], "L": []}
    for e in network.elements:
        v = float(np.atleast_1d(values[e.name])[0])
        logs[e.kind].append(math.log(v))
    mean = {k: (sum(v) / len(v) if v else None) for k, v in logs.items()}
    if mean["R"] is not None and mean["C"] is not None:
        log_tau = mean["R"] + mean["C"]
    elif mean["L"] is not None and mean["C"] is not None:
        log_tau = 0.5 * (mean["L"] + mean["C"])
    elif mean["L"] is not None and mean["R"] is not None:
        log_tau = mean["L"] - mean["R"]
    else:
        return 1.0
    return math.exp(-log_tau)


def _admittance(kind: str, value: float, w: float) -> float:
    return {"R": 1.0 / value, "C": w * value, "L": 1.0 / (w * value)}[kind]


def admittance_spread(network: Network, values: Mapping[str, np.ndarray]) -> float:
    """Largest over smallest nominal element admittance at the characteristic rate."""
    w = characteristic_rate(network, values)
    y = [_admittance(e.kind, float(np.atleast_1d(values[e.name])[0]), w)
         for e in network.elements]
    return max(y) / min(y) if y else 1.0


def tree_paths(network: Network, nominal: Mapping[str, float], w: float,
               index: Mapping[str, int], *, driven_root: bool,
               tied: tuple[str, ...] = ()) -> dict[str, np.ndarray]:
    """Node -> its path to ground as a 0/±1 vector over the tree-branch coordinates.

    The spanning tree takes the largest admittances at ``w`` first (Kruskal).
    Op-amp outputs are tied to ground first: their voltage is set by the
    op-amp, an admittance without limit. With ``driven_root`` the driven node
    is ground too (the source held at 0 V, for natural frequencies);
    without it the driven node is tied to ground like an op-amp output and
    keeps a coordinate of its own (for responses to the source). Nodes in
    ``tied`` are tied to ground as well, so that each one's voltage is a
    coordinate by itself (the output, read by Cramer's rule). The branch
    ending at node n is coordinate ``index[n]``.
    """
    def name(n):
        return _ROOT if n == GROUND or (driven_root and n == network.drive) else n

    edges = [(math.inf, name(o.out), _ROOT) for o in network.opamps]
    if not driven_root:
        edges.append((math.inf, name(network.drive), _ROOT))
    edges += [(math.inf, name(n), _ROOT) for n in tied if n != GROUND]
    for e in network.elements:
        edges.append((_admittance(e.kind, nominal[e.name], w), name(e.a), name(e.b)))
    # Largest first; on a tie an edge to ground first (a capacitor to ground then
    # keeps its own coordinate, as in nodal form: the time march steps only the
    # coordinates that carry charge); otherwise stable, in the network's order.
    edges.sort(key=lambda t: (-t[0], _ROOT not in t[1:]))
    parent: dict[str, str] = {}

    def find(n):
        while parent.get(n, n) != n:
            n = parent[n]
        return n

    adj: dict[str, list[str]] = {}
    for _, a, b in edges:
        ra, rb = find(a), find(b)
        if ra != rb:
            parent[ra] = rb
            adj.setdefault(a, []).append(b)
            adj.setdefault(b, []).append(a)
    zero = np.zeros(len(index))
    path: dict[str, np.ndarray] = {_ROOT: zero}
    todo = [_ROOT]
    while todo:
        n = todo.pop()
        for m in adj.get(n, ()):
            if m not in path:
                path[m] = path[n].copy()
                path[m][index[m]] = 1.0
                todo.append(m)
    return {n: path.get(name(n), zero) for n in network.nodes() + [GROUND]}


def _rows(network: Network, values: Mapping[str, np.ndarray]):
    rows = max(np.atleast_1d(values[e.name]).size for e in network.elements)
    vals = {e.name: np.broadcast_to(np.asarray(values[e.name], dtype=float), (rows,))
            for e in network.elements}
    return vals, rows


def stamp(network: Network, vals: Mapping[str, np.ndarray], path, n: int,
          branch: Mapping[str, int], size: int, w: float = 1.0):
    """G and w·C (S, size, size) in tree coordinates; ``branch`` places the current unknowns."""
    rows = next(iter(vals.values())).shape[0]
    G = np.zeros((rows, size, size))
    C = np.zeros((rows, size, size))
    for e in network.elements:
        u = path[e.a] - path[e.b]
        v = vals[e.name]
        if e.kind == "R":
            G[:, :n, :n] += (1.0 / v)[:, None, None] * np.outer(u, u)
        elif e.kind == "C":
            C[:, :n, :n] += (w * v)[:, None, None] * np.outer(u, u)
        else:
            k = branch[e.name]
            G[:, :n, k] += u               # KCL: the current leaves a, enters b
            G[:, k, :n] += u               # V(a) − V(b) − sL·i = 0
            C[:, k, k] -= w * v
    for o in network.opamps:
        k = branch[o.name]
        G[:, :n, k] -= path[o.out]     # the output current is injected into out
        G[:, k, :n] += path[o.out] / o.a0 - path[o.plus] + path[o.minus]
        C[:, k, :n] += w * path[o.out] / (2.0 * math.pi * o.gbw_hz)
    return G, C


def natural_pencil(network: Network, values: Mapping[str, np.ndarray], w: float):
    """G and w·C (S, N, N) with the source held at 0 V: the pencil of the natural frequencies."""
    vals, _ = _rows(network, values)
    nominal = {k: float(v[0]) for k, v in vals.items()}
    nodes = [n for n in network.nodes() if n != network.drive]
    index = {n: k for k, n in enumerate(nodes)}
    path = tree_paths(network, nominal, w, index, driven_root=True)
    n = len(nodes)
    names = [e.name for e in network.elements if e.kind == "L"] + [o.name for o in network.opamps]
    branch = {name: n + k for k, name in enumerate(names)}
    return stamp(network, vals, path, n, branch, n + len(branch), w)


def driven_system(network: Network, values: Mapping[str, np.ndarray],
                  system: System, tied: tuple[str, ...] = ()) -> tuple[System, np.ndarray]:
    """``system`` restamped in tree coordinates, and T (N, N) with x = T·y.

    Same unknown count and the same branch currents at the same places as
    ``system``; the node unknowns become tree-branch voltages (the driven
    node's and those of ``tied`` are their node voltages). A probe w·x of
    the nodal system is (w·T)·y here (exact: T holds only 0 and ±1).
    """
    vals, _ = _rows(network, values)
    nominal = {k: float(v[0]) for k, v in vals.items()}
    w = characteristic_rate(network, values)
    path = tree_paths(network, nominal, w, system.index, driven_root=False, tied=tied)
    n, N = len(system.index), system.size
    G, C = stamp(network, vals, path, n, system.branch, N)
    k = system.branch[SOURCE]
    d = path[network.drive]
    G[:, :n, k] -= d          # the source's current is injected into the drive node
    G[:, k, :n] += d          # V(drive) = u
    T = np.eye(N)
    for node, i in system.index.items():
        T[i, :n] = path[node]
    return System(G=G, C=C, b=system.b, index=system.index, branch=system.branch), T
