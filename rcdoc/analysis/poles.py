"""Poles of a network per sample, computed on a well-conditioned problem, and the stability rule.

What it is for: the natural frequencies (where G + sC is singular, the
source held at 0 V) of every row of a batch, accurate whatever the spread of
the part values (1 mΩ next to 1 GΩ, 1 fF next to 10 mF), and the verdict
"unstable" drawn from them.

Why not the nodal matrices as the engine assembles them: a node's diagonal
entry sums the conductances that meet there, so 1/(1 GΩ) beside 1/(1 mΩ) is
lost to rounding before any solver runs (a Sallen-Key's Q came out 0.5
instead of 3.16), and no diagonal scaling can bring it back. Here the
unknowns are the voltages across the branches of a spanning tree chosen
from the largest admittances at the network's characteristic frequency
(node voltage = sum of the tree branches on its path to ground), and each
element is stamped in those coordinates directly: a large conductance sits
on its own branch's diagonal and no longer swamps the small ones. The pencil
is then scaled (frequency by the characteristic rate, rows and columns by
their largest entries) and its finite eigenvalues found by shift-invert.
"""

from __future__ import annotations

import math
from typing import Mapping

import numpy as np

from rcdoc.analysis.network import GROUND, Network

# A pole p makes a sample unstable when Re p >= -STABILITY_RTOL·|p|: in the
# right half-plane, on the imaginary axis, or so close to it (Q above 5e8)
# that rounding of the pole computation could put it on either side. A pole
# at s = 0 (a node reached through capacitors only) counts as on the axis.
STABILITY_RTOL = 1e-9
# Eigenvalues of the shift-inverted pencil below this share of the largest are
# infinite poles (algebraic equations: ideal op-amps, nodes without capacitors).
_INFINITE_RTOL = 1e-12
# Rounds of alternating row/column scaling (converges in a few).
_BALANCE_ROUNDS = 6


def characteristic_rate(network: Network, values: Mapping[str, np.ndarray]) -> float:
    """A rate (rad/s) in the middle of the network's time constants, from the nominal row.

    The geometric mean of R·C (or √(L·C), or L/R) over the parts: for a
    second-order section it is the natural frequency itself.
    """
    logs = {"R": [], "C": [], "L": []}
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


def _tree(network: Network, nominal: dict[str, float], w: float):
    """Spanning tree of largest admittance at w: node -> (parent, branch index, sign).

    Ground and the driven node are the root (the source holds it at 0 V for
    the natural response). Op-amp outputs are tied to the root first: their
    voltage is set by the op-amp, an admittance without limit.
    """
    root = "\0root"

    def name(n):
        return root if n in (GROUND, network.drive) else n

    edges = [(math.inf, name(o.out), root) for o in network.opamps]
    for e in network.elements:
        v = nominal[e.name]
        y = {"R": 1.0 / v, "C": w * v, "L": 1.0 / (w * v)}[e.kind]
        edges.append((y, name(e.a), name(e.b)))
    edges.sort(key=lambda t: -t[0])           # stable: ties keep the network's order
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
    # Walk from the root: each tree branch is one coordinate, V(child) − V(parent).
    path: dict[str, np.ndarray] = {}
    nodes = [n for n in network.nodes() if name(n) != root]
    index = {n: k for k, n in enumerate(nodes)}
    zero = np.zeros(len(nodes))
    path[root] = zero
    todo = [root]
    while todo:
        n = todo.pop()
        for m in adj.get(n, ()):
            if m not in path:
                path[m] = path[n].copy()
                path[m][index[m]] = 1.0
                todo.append(m)
    return {n: path.get(name(n), zero) for n in network.nodes() + [GROUND]}, len(nodes)


def _pencil(network: Network, values: Mapping[str, np.ndarray], w: float):
    """G and C (S, N, N) in tree-branch coordinates, C already multiplied by w."""
    rows = max(np.atleast_1d(values[e.name]).size for e in network.elements)
    vals = {e.name: np.broadcast_to(np.asarray(values[e.name], dtype=float), (rows,))
            for e in network.elements}
    nominal = {k: float(v[0]) for k, v in vals.items()}
    path, n = _tree(network, nominal, w)
    inductors = [e for e in network.elements if e.kind == "L"]
    size = n + len(inductors) + len(network.opamps)
    G = np.zeros((rows, size, size))
    C = np.zeros((rows, size, size))
    for e in network.elements:
        u = path[e.a] - path[e.b]
        if e.kind == "R":
            G[:, :n, :n] += (1.0 / vals[e.name])[:, None, None] * np.outer(u, u)
        elif e.kind == "C":
            C[:, :n, :n] += (w * vals[e.name])[:, None, None] * np.outer(u, u)
    for k, e in enumerate(inductors, start=n):
        u = path[e.a] - path[e.b]
        G[:, :n, k] += u               # KCL: the current leaves a, enters b
        G[:, k, :n] += u               # V(a) − V(b) − sL·i = 0
        C[:, k, k] -= w * vals[e.name]
    for k, o in enumerate(network.opamps, start=n + len(inductors)):
        G[:, :n, k] -= path[o.out]     # the output current is injected into out
        G[:, k, :n] += path[o.out] / o.a0 - path[o.plus] + path[o.minus]
        C[:, k, :n] += w * path[o.out] / (2.0 * math.pi * o.gbw_hz)
    return G, C


def _balance(G: np.ndarray, C: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Scale rows and columns of the pencil so that |G| + |C| has largest entries near 1."""
    G, C = G.copy(), C.copy()
    for _ in range(_BALANCE_ROUNDS):
        for axis in (-1, -2):
            m = np.max(np.abs(G) + np.abs(C), axis=axis, keepdims=True)
            m = np.where(m > 0, np.sqrt(m), 1.0)   # square roots: converge without overshoot
            G /= m
            C /= m
    return G, C


def poles(network: Network, values: Mapping[str, np.ndarray], rate: float | None = None) -> np.ndarray:
    """Finite poles (rad/s, complex) per row, (S, n) sorted by magnitude, NaN-padded.

    ``rate`` (rad/s) scales frequency; by default ``characteristic_rate``.
    """
    w = float(rate) if rate else characteristic_rate(network, values)
    G, C = _balance(*_pencil(network, values, w))
    rows, size = G.shape[:2]
    if size == 0:
        return np.zeros((rows, 0), dtype=complex)
    # Shift-invert at z = σ: eigenvalues λ of (G + σC)⁻¹C give z = σ − 1/λ. A real
    # shift that happens to be a pole is replaced by a second, unrelated one.
    lam = np.zeros((rows, size), dtype=complex)
    todo = np.ones(rows, dtype=bool)
    for sigma in (1.0, 0.6180339887, 2.718281828):
        A = G[todo] + sigma * C[todo]
        with np.errstate(all="ignore"):
            good = np.linalg.cond(A) < 1e13
        if np.any(good):
            idx = np.flatnonzero(todo)[good]
            K = np.linalg.solve(A[good], C[idx])
            lam[idx] = _to_poles(np.linalg.eigvals(K), np.full(idx.size, sigma))
            todo[idx] = False
        if not np.any(todo):
            break
    lam[todo] = np.nan
    p = lam * w
    order = np.argsort(np.where(np.isnan(p.real), np.inf, np.abs(p)), axis=1, kind="stable")
    return np.take_along_axis(p, order, axis=1)


def _to_poles(lam: np.ndarray, sigma: np.ndarray) -> np.ndarray:
    """z = σ − 1/λ for the finite eigenvalues; NaN for the infinite ones (λ ≈ 0)."""
    scale = np.max(np.abs(lam), axis=1, keepdims=True)
    finite = np.abs(lam) > _INFINITE_RTOL * np.where(scale > 0, scale, 1.0)
    with np.errstate(divide="ignore", invalid="ignore"):
        z = sigma[:, None] - 1.0 / np.where(finite, lam, 1.0)
    return np.where(finite, z, np.nan + 0j)


def unstable(p: np.ndarray) -> np.ndarray:
    """Rows (S,) with a pole in the right half-plane or on the imaginary axis."""
    bad = np.isfinite(p) & (p.real >= -STABILITY_RTOL * np.abs(p))
    return np.any(bad, axis=1)


def offending(p: np.ndarray) -> np.ndarray:
    """The poles of one row (n,) that break the rule (for the note's caution)."""
    p = p[np.isfinite(p)]
    return p[p.real >= -STABILITY_RTOL * np.abs(p)]
