"""Modified nodal analysis (MNA): a stage's Network as the matrices of (G + sC)·x = b·u.

What it is for: check a Network's topology and per-sample element values
(SI: ohm, F, H) and stamp them into ``System`` (G, C, b), vectorised over
Monte Carlo samples. The solvers live in ``ac`` (frequency responses),
``noise`` (thermal noise) and ``transient`` (time responses); ``engine``
re-exports the public names of all four.

What it must not do: know about stage kinds, parts, tolerances, units or the
project file, draw anything, or loop in Python over samples.

Conventions
-----------
Unknowns ``x``: the voltage of every non-ground node (``System.index``), then
the branch currents (``System.branch``): the ideal source ("__source__",
current it delivers into ``network.drive``), every inductor (current from its
terminal ``a`` to ``b``), every op-amp (current its output pushes into
``out``). Node rows are Kirchhoff's current law (currents leaving the node
through elements = currents injected); branch rows are the element laws:

* source:     V(drive) = u
* inductor:   V(a) − V(b) − sL·i = 0 (so L sits in C with a minus sign)
* op-amp:     (1/a0 + s/(2π·gbw))·V(out) − V(plus) + V(minus) = 0, i.e.
  V(out)/(V(plus) − V(minus)) = A(s) = a0/(1 + s·a0/(2π·gbw)) (single-pole
  model); ``a0`` = inf and ``gbw`` = inf give the ideal nullor.

Every result is "per 1 V of source" in the frequency domain. Large batches
are split into blocks so that no temporary exceeds a few tens of megabytes
(the arrays returned to the caller are, of course, as large as they are).
"""

from __future__ import annotations

import math
from collections import Counter
from dataclasses import dataclass
from typing import Mapping

import numpy as np

from rcdoc.errors import ProjectError
from rcdoc.analysis.network import GROUND, Network

__all__ = ["SOURCE", "System", "assemble"]

#: Name of the ideal source's current in ``System.branch``.
SOURCE = "__source__"

# Reciprocal condition number (after row/column equilibration) below which a
# matrix counts as singular. Common practice: a few decades above eps.
_SINGULAR_RCOND = 1e-12
# Angular frequencies (rad/s) at which assemble() looks for a unique solution:
# half-decade steps from 10 mrad/s to 10 Trad/s, off the imaginary axis so an
# undamped LC resonance cannot make a test point singular by accident.
_TEST_OMEGAS = np.logspace(-2, 13, 31) * (0.6 + 0.8j)


@dataclass(frozen=True, eq=False)
class System:
    """The MNA matrices of one network over S samples: (G + sC)·x = b·u.

    ``G`` and ``C`` have shape (S, N, N), ``b`` shape (N,). ``index`` maps
    node names to unknowns, ``branch`` maps "__source__", inductor names and
    op-amp names to their current unknowns.
    """

    G: np.ndarray
    C: np.ndarray
    b: np.ndarray
    index: dict[str, int]
    branch: dict[str, int]

    @property
    def samples(self) -> int:
        return int(self.G.shape[0])

    @property
    def size(self) -> int:
        return int(self.G.shape[1])

    def node(self, name: str) -> int | None:
        """Unknown of node ``name``; None for ground. Unknown names are a ProjectError."""
        if name == GROUND:
            return None
        try:
            return self.index[name]
        except KeyError:
            raise ProjectError(f"the network has no node '{name}'") from None


# --------------------------------------------------------------------------
# checks and assembly


def _check_topology(network: Network) -> list[str]:
    """Raise ProjectError for a network that cannot have a unique solution; return its nodes."""
    if not network.elements:
        raise ProjectError("the network has no elements")
    seen: set[str] = set()
    for e in network.elements:
        if e.kind not in ("R", "C", "L"):
            raise ProjectError(f"element '{e.name}' has unknown kind '{e.kind}' (expected R, C or L)")
    for name in [e.name for e in network.elements] + [o.name for o in network.opamps]:
        if name in seen:
            raise ProjectError(f"two parts of the network are both named '{name}'")
        if name == SOURCE:
            raise ProjectError(f"the name '{SOURCE}' is reserved for the source")
        seen.add(name)
    for o in network.opamps:
        if o.out == GROUND:
            raise ProjectError(f"the output of op-amp '{o.name}' is tied to ground")
        for label, v in (("gbw", o.gbw_hz), ("open-loop gain", o.a0)):
            if not (v > 0):  # also rejects NaN
                raise ProjectError(f"op-amp '{o.name}': {label} must be positive (got {v!r})")
    if network.drive == GROUND:
        raise ProjectError("the source drives ground; the input node must not be '0'")

    nodes = network.nodes()
    if network.output == GROUND:
        raise ProjectError("the output node is ground ('0'); its voltage is zero by definition")
    if network.output not in nodes:
        raise ProjectError(f"the output node '{network.output}' is not connected to anything")

    # Dangling: a node touched by one terminal only carries no current and its
    # voltage is not fixed by anything, unless an op-amp output drives it.
    terminals: Counter[str] = Counter()
    for e in network.elements:
        terminals.update((e.a, e.b))
    for o in network.opamps:
        terminals.update((o.plus, o.minus, o.out))
    terminals[network.drive] += 1
    driven = {o.out for o in network.opamps}
    for n in nodes:
        if terminals[n] == 1 and n not in driven:
            raise ProjectError(f"node '{n}' connects to a single terminal (a dangling node)")

    # Floating: every node needs a path to ground through elements, the source
    # or an op-amp output (op-amp inputs draw no current, so they are no path).
    parent = {n: n for n in nodes + [GROUND]}

    def find(n: str) -> str:
        while parent[n] != n:
            parent[n] = parent[parent[n]]
            n = parent[n]
        return n

    edges = [(e.a, e.b) for e in network.elements]
    edges += [(network.drive, GROUND)] + [(o.out, GROUND) for o in network.opamps]
    for a, b in edges:
        parent[find(a)] = find(b)
    for n in nodes:
        if find(n) != find(GROUND):
            raise ProjectError(f"node '{n}' has no path to ground or to the source (a floating node)")
    return nodes


def _element_values(network: Network, values: Mapping[str, np.ndarray]) -> tuple[dict[str, np.ndarray], int]:
    """Values of every element as float arrays of one common length S (length-1 inputs broadcast)."""
    raw: dict[str, np.ndarray] = {}
    for e in network.elements:
        if e.name not in values:
            raise ProjectError(f"no value given for element '{e.name}'")
        try:
            arr = np.atleast_1d(np.asarray(values[e.name], dtype=float))
        except (TypeError, ValueError):
            raise ProjectError(f"the value of element '{e.name}' is not a number") from None
        if arr.ndim != 1 or arr.size == 0:
            raise ProjectError(f"the values of element '{e.name}' must be a 1-D array of samples")
        raw[e.name] = arr
    sizes = {a.size for a in raw.values()}
    samples = max(sizes)
    if not sizes <= {1, samples}:
        raise ProjectError(f"element values have different numbers of samples: {sorted(sizes)}")
    out = {}
    for name, arr in raw.items():
        if not np.all(np.isfinite(arr) & (arr > 0)):
            bad = arr[~(np.isfinite(arr) & (arr > 0))][0]
            raise ProjectError(f"the value of element '{name}' must be positive and finite (got {float(bad):g})")
        out[name] = np.broadcast_to(arr, (samples,))
    return out, samples


def _stamp(M: np.ndarray, i: int | None, j: int | None, y: np.ndarray) -> None:
    """Add a two-terminal admittance y (S,) between unknowns i and j (None = ground)."""
    if i is not None:
        M[:, i, i] += y
    if j is not None:
        M[:, j, j] += y
    if i is not None and j is not None:
        M[:, i, j] -= y
        M[:, j, i] -= y


def _rcond(A: np.ndarray) -> np.ndarray:
    """Reciprocal 2-norm condition number of each matrix in a stack, after equilibration.

    Rows and then columns are scaled to unit max so that mixed units (volts,
    amperes, siemens, farads) do not pass for ill-conditioning.
    """
    r = np.max(np.abs(A), axis=-1, keepdims=True)
    A = A / np.where(r > 0, r, 1.0)
    c = np.max(np.abs(A), axis=-2, keepdims=True)
    A = A / np.where(c > 0, c, 1.0)
    sv = np.linalg.svd(A, compute_uv=False)
    return np.where(sv[..., 0] > 0, sv[..., -1] / np.where(sv[..., 0] > 0, sv[..., 0], 1.0), 0.0)


# Every sixth test frequency first: a regular system passes there already, and the
# others are then not needed (the verdict is the same as over all of them).
_FIRST_OMEGAS = np.zeros(len(_TEST_OMEGAS), dtype=bool)
_FIRST_OMEGAS[::6] = True


def _singular_everywhere(G: np.ndarray, C: np.ndarray) -> bool:
    """Whether a row's G + jωC has rcond below _SINGULAR_RCOND at every test frequency
    (the largest over the frequencies, NaN propagating as np.max does)."""
    def best(omegas):
        return np.max(_rcond(G[:, None] + omegas[None, :, None, None] * C[:, None]), axis=1)
    first = best(_TEST_OMEGAS[_FIRST_OMEGAS])
    if np.all((first >= _SINGULAR_RCOND) | np.isnan(first)):
        return False
    return bool(np.any(np.maximum(first, best(_TEST_OMEGAS[~_FIRST_OMEGAS])) < _SINGULAR_RCOND))


def assemble(network: Network, values: Mapping[str, np.ndarray]) -> System:
    """Check ``network`` and build its MNA matrices for every sample of ``values``.

    Raises ProjectError for a dangling or floating node, a missing output
    node, missing or non-positive values, or a system with no unique solution
    at any of a set of test frequencies (e.g. an op-amp without feedback).
    """
    nodes = _check_topology(network)
    vals, samples = _element_values(network, values)

    index = {n: i for i, n in enumerate(nodes)}
    branch: dict[str, int] = {SOURCE: len(index)}
    for e in network.elements:
        if e.kind == "L":
            branch[e.name] = len(index) + len(branch)
    for o in network.opamps:
        branch[o.name] = len(index) + len(branch)
    n = len(index) + len(branch)

    G = np.zeros((samples, n, n))
    C = np.zeros((samples, n, n))
    b = np.zeros(n)

    def at(node: str) -> int | None:
        return None if node == GROUND else index[node]

    for e in network.elements:
        i, j, v = at(e.a), at(e.b), vals[e.name]
        if e.kind == "R":
            _stamp(G, i, j, 1.0 / v)
        elif e.kind == "C":
            _stamp(C, i, j, v)
        else:
            k = branch[e.name]
            for node, sign in ((i, 1.0), (j, -1.0)):
                if node is not None:
                    G[:, node, k] += sign  # KCL: the inductor current leaves a, enters b
                    G[:, k, node] += sign  # V(a) − V(b) ...
            C[:, k, k] -= v  # ... − sL·i = 0

    k = branch[SOURCE]
    d = index[network.drive]
    G[:, d, k] -= 1.0  # the source's current is injected into the drive node
    G[:, k, d] += 1.0  # V(drive) = u
    b[k] = 1.0

    for o in network.opamps:
        k = branch[o.name]
        out = index[o.out]
        G[:, out, k] -= 1.0  # the output current is injected into node out
        # (1/A(s))·V(out) − V(plus) + V(minus) = 0; 1/inf = 0 gives the nullor.
        G[:, k, out] += 1.0 / o.a0
        C[:, k, out] += 1.0 / (2.0 * math.pi * o.gbw_hz)
        if at(o.plus) is not None:
            G[:, k, index[o.plus]] -= 1.0
        if at(o.minus) is not None:
            G[:, k, index[o.minus]] += 1.0

    system = System(G=G, C=C, b=b, index=index, branch=branch)
    # A structurally singular system is singular at every frequency; a regular
    # one is well conditioned at most of them. Check a few samples only: the
    # structure is the same for all.
    if _singular_everywhere(G[:min(samples, 4)], C[:min(samples, 4)]):
        raise ProjectError(
            "the network has no unique solution at any test frequency "
            "(check for an op-amp without feedback, a source shorted by an inductor "
            "or op-amp output, or two op-amps fighting over one node)"
        )
    return system
