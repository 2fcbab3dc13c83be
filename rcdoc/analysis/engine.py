"""Modified nodal analysis (MNA) of a stage's Network, vectorised over Monte Carlo samples.

What it is for: turn a Network and per-sample element values (SI: ohm, F, H)
into the matrices of (G + sC)·x = b·u and solve them for frequency
responses, impedances, element voltages and currents, thermal noise, and
time responses (transient, step, periodic steady state).

What it must not do: know about stage kinds, parts, tolerances, units or the
project file, draw anything, or loop in Python over samples (loops run over
frequency blocks or time steps only, each step batched over all samples).

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
from typing import Iterator, Mapping, Sequence

import numpy as np

from rcdoc.errors import ProjectError
from rcdoc.analysis.network import GROUND, Network

__all__ = [
    "BOLTZMANN_J_PER_K",
    "SOURCE",
    "System",
    "assemble",
    "ac",
    "solve_ac",
    "node_voltage",
    "element_voltages",
    "element_currents",
    "source_current",
    "input_impedance",
    "transient",
    "step",
    "periodic_steady_state",
    "output_noise_psd",
]

#: Boltzmann constant, exact by definition of the kelvin in the revised SI
#: (BIPM, The International System of Units, 9th edition, 2019).
BOLTZMANN_J_PER_K = 1.380649e-23

#: Name of the ideal source's current in ``System.branch``.
SOURCE = "__source__"

# Largest temporary matrix block (bytes). LAPACK's batched solve copies its
# inputs a few times, so the working set stays near 4x this: well under 300 MB.
_BLOCK_BYTES = 48e6
# Working set for the time-domain loops (per-sample matrices and recorded probes).
_TIME_BYTES = 160e6
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
    few = slice(0, min(samples, 4))
    pencil = G[few, None] + _TEST_OMEGAS[None, :, None, None] * C[few, None]
    if np.any(np.max(_rcond(pencil), axis=1) < _SINGULAR_RCOND):
        raise ProjectError(
            "the network has no unique solution at any test frequency "
            "(check for an op-amp without feedback, a source shorted by an inductor "
            "or op-amp output, or two op-amps fighting over one node)"
        )
    return system


# --------------------------------------------------------------------------
# frequency domain


def _freqs(freqs_hz) -> np.ndarray:
    f = np.atleast_1d(np.asarray(freqs_hz, dtype=float))
    if f.ndim != 1 or not np.all(np.isfinite(f)):
        raise ProjectError("frequencies must be a 1-D array of finite numbers")
    return f


def _blocks(samples: int, nfreq: int, size: int) -> Iterator[tuple[slice, slice]]:
    """Split samples × frequencies into blocks whose complex N×N matrices fit _BLOCK_BYTES."""
    items = max(1, int(_BLOCK_BYTES // (16 * size * size)))
    nf = max(1, min(nfreq, items))
    ns = max(1, items // nf)
    for s0 in range(0, samples, ns):
        for f0 in range(0, nfreq, nf):
            yield slice(s0, s0 + ns), slice(f0, f0 + nf)


def _no_unique(f: np.ndarray) -> ProjectError:
    if f.size == 1:
        where = f"{f[0]:g} Hz"
    else:
        where = f"one of the frequencies {f.min():g} Hz to {f.max():g} Hz"
    return ProjectError(
        f"the network has no unique solution at {where} "
        "(a node isolated by capacitors at 0 Hz, or a lossless resonance exactly on a frequency)"
    )


def _solutions(
    system: System, f: np.ndarray, adjoint_of: int | None = None
) -> Iterator[tuple[slice, slice, np.ndarray]]:
    """Yield (samples, frequencies, X) blockwise, X of shape (s, f, N).

    Forward (``adjoint_of`` None): all unknowns per 1 V of source. Adjoint
    (``adjoint_of`` = unknown of node o): y with (G + sC)ᵀ·y = e_o and the
    source at 0 V, so that y_a − y_b is V(o) per ampere injected into a and
    drawn from b (reciprocity of the transposed system).

    The source's node voltage is known, so the drive node and the source
    current are eliminated before solving (a smaller system to factor); the
    source current follows from the drive node's KCL row afterwards.
    """
    n_all = system.size
    k = system.branch[SOURCE]
    d = int(np.flatnonzero(system.G[0, k])[0])  # the source row reads V(drive) = u
    keep = np.array([j for j in range(n_all) if j not in (d, k)], dtype=int)
    n = keep.size
    if adjoint_of is not None:
        e = np.zeros(n_all)
        e[adjoint_of] = 1.0
        r_adj = e[keep][:, None].astype(complex)
    for ss, fs in _blocks(system.samples, f.size, max(n, 1)):
        w = 2 * math.pi * f[fs]
        G, C = system.G[ss], system.C[ss]
        X = np.zeros((G.shape[0], w.size, n_all), dtype=complex)
        if adjoint_of is None:
            X[..., d] = 1.0
        if n:
            # G + jωC, filled part by part (no complex temporaries of full size).
            M = np.empty((G.shape[0], w.size, n, n), dtype=complex)
            M.real[...] = G[:, None][:, :, keep[:, None], keep]
            M.imag[...] = w[None, :, None, None] * C[:, None][:, :, keep[:, None], keep]
            if adjoint_of is None:
                r = -(G[:, None, keep, d] + 1j * w[None, :, None] * C[:, None, keep, d])[..., None]
            else:
                M = np.swapaxes(M, -1, -2)
                r = r_adj
            try:
                X[..., keep] = np.linalg.solve(M, r)[..., 0]
            except np.linalg.LinAlgError:
                raise _no_unique(f[fs]) from None
        if adjoint_of is None:
            # KCL at the drive node: the source delivers what the elements draw.
            g_row, c_row = G[:, d, :].copy(), C[:, d, :].copy()
            g_row[:, k] = 0.0
            c_row[:, k] = 0.0
            X[..., k] = np.einsum("sfn,sn->sf", X, g_row) + 1j * w[None, :] * np.einsum("sfn,sn->sf", X, c_row)
        if not np.all(np.isfinite(X)):
            raise _no_unique(f[fs])
        yield ss, fs, X


# Pole-zero evaluation: the fast path of ``ac`` and ``output_noise_psd``.
#
# By Cramer's rule one unknown x_o of (G + sC)·x = r0 + s·r1 is
# det(M_o(s)) / det(M(s)), where M_o is M with column o replaced by the
# right-hand side; both are matrix pencils, linear in s. With A = G + σC for
# a real shift σ > 0, det(G + sC) = det(A)·Π_k (1 + μ·d_k), μ = s − σ, d_k the
# eigenvalues of K = A⁻¹C (det(I + μK) = Π(1 + μ·d_k) holds for any matrix,
# defective or not), and likewise for M_o with eigenvalues e_k. Hence
#   x_o(s) = x_o(σ) · Π_k (1 + μ·e_k) / Π_k (1 + μ·d_k),
# the zero-pole-gain form of the rational transfer function: two small
# eigenvalue problems and one real solve per sample, then O(N) array
# operations per (sample, frequency) instead of an O(N³) factorisation.
# Products do not cancel, so the deep stopband keeps its relative accuracy
# (a sum of partial fractions would not). d_k = 0 are the infinite
# eigenvalues of a descriptor system; their factor is 1. Samples where A or
# A_o is near-singular at σ (a zero or pole on σ, or an output that does not
# depend on the input), or where anything comes out non-finite, are solved by
# the direct path instead.
_PZ_RCOND = 1e-10
# Elements of the (samples × frequencies) work arrays per block of samples.
_PZ_ITEMS = 1 << 15


def _shift(f: np.ndarray) -> float:
    """σ: the geometric middle of the swept angular frequencies (near the poles of interest)."""
    fa = np.abs(f[np.isfinite(f) & (f != 0)])
    if fa.size == 0:
        return 2 * math.pi
    return 2 * math.pi * math.sqrt(float(fa.min()) * float(fa.max()))


def _eliminated(system: System) -> tuple[int, np.ndarray]:
    """The drive node and the unknowns left once it and the source current are eliminated."""
    k = system.branch[SOURCE]
    d = int(np.flatnonzero(system.G[0, k])[0])  # the source row reads V(drive) = u
    keep = np.array([j for j in range(system.size) if j not in (d, k)], dtype=int)
    return d, keep


class _Pencil:
    """Per-sample poles of the reduced pencil (kept unknowns), shared by every ratio."""

    def __init__(self, system: System, f: np.ndarray):
        self.d_node, self.keep = _eliminated(system)
        self.sigma = _shift(f)
        self.G = system.G[:, self.keep[:, None], self.keep]
        self.C = system.C[:, self.keep[:, None], self.keep]
        A = self.G + self.sigma * self.C
        self.ok = _rcond(A) > _PZ_RCOND
        self.A = np.where(self.ok[:, None, None], A, np.eye(self.keep.size))
        with np.errstate(all="ignore"):
            self.poles = np.linalg.eigvals(np.linalg.solve(self.A, self.C))

    def zpk(self, o: int, r0: np.ndarray, r1: np.ndarray | None):
        """Gain x_o(σ) (S,), zeros as eigenvalues e (S, n) and usable rows for x_o of
        (G + sC)·x = r0 + s·r1 (r0, r1 of shape (S, n); r1 None for no s term)."""
        n = self.keep.size
        rhs = r0 if r1 is None else r0 + self.sigma * r1
        x_sigma = np.linalg.solve(self.A, rhs[..., None])[..., 0][:, o]
        Go, Co = self.G.copy(), self.C.copy()
        Go[:, :, o] = r0
        Co[:, :, o] = 0.0 if r1 is None else r1
        Ao = Go + self.sigma * Co
        ok = self.ok & (_rcond(Ao) > _PZ_RCOND)
        Ao = np.where(ok[:, None, None], Ao, np.eye(n))
        with np.errstate(all="ignore"):
            zeros = np.linalg.eigvals(np.linalg.solve(Ao, Co))
        return x_sigma, zeros, ok

    def product(self, gain: np.ndarray, eig: np.ndarray, jw: np.ndarray) -> np.ndarray:
        """gain · Π_k (1 + (jω − σ)·eig_k) for one block of samples: (s, F)."""
        acc = np.empty((eig.shape[0], jw.size), dtype=complex)
        acc[...] = gain[:, None]
        fac = np.empty_like(acc)
        for k in range(eig.shape[1]):
            np.multiply(eig[:, k, None], jw[None, :], out=fac)
            fac += (1.0 - self.sigma * eig[:, k])[:, None]
            acc *= fac
        return acc


def _pz_blocks(samples: int, nfreq: int) -> Iterator[slice]:
    """Sample blocks whose (samples × frequencies) work arrays stay small (cache-sized)."""
    ns = max(1, _PZ_ITEMS // max(nfreq, 1))
    for s0 in range(0, samples, ns):
        yield slice(s0, s0 + ns)


def _ac_fast(system: System, f: np.ndarray, out: int) -> np.ndarray:
    """V(out) per 1 V of source, (S, F): pole-zero form where it is safe, direct elsewhere."""
    pencil = _Pencil(system, f)
    if out == pencil.d_node:
        return np.ones((system.samples, f.size), dtype=complex)
    o = int(np.flatnonzero(pencil.keep == out)[0])
    d, keep = pencil.d_node, pencil.keep
    gain, zeros, ok = pencil.zpk(o, -system.G[:, keep, d], -system.C[:, keep, d])
    jw = 2j * math.pi * f
    H = np.empty((system.samples, f.size), dtype=complex)
    with np.errstate(all="ignore"):
        for ss in _pz_blocks(system.samples, f.size):
            H[ss] = pencil.product(gain[ss], zeros[ss], jw)
            H[ss] /= pencil.product(np.ones(H[ss].shape[0]), pencil.poles[ss], jw)
    ok &= np.all(np.isfinite(H), axis=1)
    if not np.all(ok):
        H[~ok] = _direct(system, f, ~ok, lambda X: X[..., out])
    return H


def _direct(system: System, f: np.ndarray, rows: np.ndarray, take, adjoint_of=None) -> np.ndarray:
    """The direct (one factorisation per sample and frequency) path for some samples."""
    sub = System(G=system.G[rows], C=system.C[rows], b=system.b, index=system.index,
                 branch=system.branch)
    out = None
    for ss, fs, X in _solutions(sub, f, adjoint_of=adjoint_of):
        val = take(X)
        if out is None:
            out = np.empty((sub.samples, f.size) + val.shape[2:], dtype=val.dtype)
        out[ss, fs] = val
    return out


def solve_ac(network: Network, values: Mapping[str, np.ndarray], freqs_hz) -> np.ndarray:
    """All unknowns (S, F, N) complex, per 1 V of source, at each frequency.

    The result holds S·F·N complex numbers: ask for few frequencies when S is
    large (``ac`` and ``output_noise_psd`` keep only what they need).
    """
    system = assemble(network, values)
    f = _freqs(freqs_hz)
    out = np.empty((system.samples, f.size, system.size), dtype=complex)
    for ss, fs, X in _solutions(system, f):
        out[ss, fs] = X
    return out


def _pick(network: Network, values, freqs_hz, unknown) -> np.ndarray:
    system = assemble(network, values)
    f = _freqs(freqs_hz)
    k = unknown(system)
    out = np.empty((system.samples, f.size), dtype=complex)
    for ss, fs, X in _solutions(system, f):
        out[ss, fs] = X[..., k]
    return out


def ac(network: Network, values: Mapping[str, np.ndarray], freqs_hz) -> np.ndarray:
    """Transfer function V(output)/V(source), shape (S, F) complex."""
    system = assemble(network, values)
    f = _freqs(freqs_hz)
    return _ac_fast(system, f, system.node(network.output))


def source_current(network: Network, values: Mapping[str, np.ndarray], freqs_hz) -> np.ndarray:
    """Current (A) the source delivers into the drive node per 1 V, shape (S, F) complex."""
    return _pick(network, values, freqs_hz, lambda s: s.branch[SOURCE])


def input_impedance(network: Network, values: Mapping[str, np.ndarray], freqs_hz) -> np.ndarray:
    """Impedance (ohm) the source sees, V_source / I_source, shape (S, F) complex.

    An input that draws no current gives an infinite impedance.
    """
    i = source_current(network, values, freqs_hz)
    with np.errstate(divide="ignore", invalid="ignore"):
        z = 1.0 / i
    return np.where(i == 0, complex(np.inf, 0.0), z)


def node_voltage(sol: np.ndarray, system: System, node: str) -> np.ndarray:
    """Voltage of ``node`` from a solution array (..., N); ground gives zeros."""
    k = system.node(node)
    if k is None:
        return np.zeros_like(sol[..., 0])
    return sol[..., k]


def _single_frequency(network: Network, values, freq_hz: float) -> tuple[System, np.ndarray, float]:
    system = assemble(network, values)
    f = _freqs(freq_hz)
    if f.size != 1:
        raise ProjectError("one frequency expected")
    X = np.empty((system.samples, system.size), dtype=complex)
    for ss, _, block in _solutions(system, f):
        X[ss] = block[:, 0]
    return system, X, float(f[0])


def element_voltages(network: Network, values: Mapping[str, np.ndarray], freq_hz: float) -> dict[str, np.ndarray]:
    """V(a) − V(b) of every element per 1 V of source at one frequency: name -> (S,) complex."""
    system, X, _ = _single_frequency(network, values, freq_hz)
    return {
        e.name: node_voltage(X, system, e.a) - node_voltage(X, system, e.b) for e in network.elements
    }


def element_currents(network: Network, values: Mapping[str, np.ndarray], freq_hz: float) -> dict[str, np.ndarray]:
    """Current from terminal a to b of every element per 1 V of source: name -> (S,) complex.

    Ohm's law V/R for resistors, sC·V for capacitors, the branch current for inductors.
    """
    system, X, f = _single_frequency(network, values, freq_hz)
    vals, _ = _element_values(network, values)
    s = 2j * math.pi * f
    out = {}
    for e in network.elements:
        v = node_voltage(X, system, e.a) - node_voltage(X, system, e.b)
        if e.kind == "R":
            out[e.name] = v / vals[e.name]
        elif e.kind == "C":
            out[e.name] = s * vals[e.name] * v
        else:
            out[e.name] = X[:, system.branch[e.name]]
    return out


def output_noise_psd(
    network: Network, values: Mapping[str, np.ndarray], freqs_hz, temperature_k=300.0
) -> np.ndarray:
    """Thermal noise at the output, one-sided PSD in V²/Hz, shape (S, F).

    Each resistor is a noise current source of PSD 4kT/R across it
    (Johnson–Nyquist), uncorrelated with the others; the source is an ideal
    (noiseless, zero-impedance) voltage source and op-amps are noiseless.
    Each resistor's transimpedance to the output is evaluated in zero-pole-
    gain form (see _Pencil); samples that form cannot serve take the adjoint
    path: (G + sC)ᵀ·y = e_out gives V(out) = y_a − y_b per ampere injected
    into a and drawn from b (reciprocity of the transposed system).
    ``temperature_k`` is a scalar or an (S,) array.
    """
    system = assemble(network, values)
    f = _freqs(freqs_hz)
    vals, samples = _element_values(network, values)
    temp = np.broadcast_to(np.asarray(temperature_k, dtype=float), (samples,))
    if not np.all(np.isfinite(temp) & (temp >= 0)):
        raise ProjectError("the noise temperature must be a non-negative number of kelvin")
    resistors = [(system.node(e.a), system.node(e.b), vals[e.name]) for e in network.elements if e.kind == "R"]
    psd = np.zeros((samples, f.size))
    out = system.index[network.output]

    def accumulate(Y, rs):
        acc = np.zeros(Y.shape[:2])
        for i, j, r in resistors:
            z = (Y[..., i] if i is not None else 0.0) - (Y[..., j] if j is not None else 0.0)
            acc += np.abs(z) ** 2 / r[rs, None]
        return acc

    pencil = _Pencil(system, f)
    if out == pencil.d_node:  # the output is the source node: no noise reaches it
        return psd
    pos = {int(u): m for m, u in enumerate(pencil.keep)}  # drive node and source: y = 0
    o = pos[out]
    jw = 2j * math.pi * f
    ok = pencil.ok.copy()
    terms = []
    for i, j, r in resistors:
        # Transimpedance to the output from 1 A injected into i and drawn from j.
        e = np.zeros((samples, pencil.keep.size))
        if i is not None and i in pos:
            e[:, pos[i]] += 1.0
        if j is not None and j in pos:
            e[:, pos[j]] -= 1.0
        if not e.any():
            continue
        gain, zeros, good = pencil.zpk(o, e, None)
        ok &= good
        terms.append((gain, zeros, r))
    with np.errstate(all="ignore"):
        for ss in _pz_blocks(samples, f.size):
            den = pencil.product(np.ones(pencil.poles[ss].shape[0]), pencil.poles[ss], jw)
            den2 = den.real ** 2 + den.imag ** 2
            acc = np.zeros(den.shape)
            for gain, zeros, r in terms:
                z = pencil.product(gain[ss], zeros[ss], jw)
                acc += (z.real ** 2 + z.imag ** 2) / r[ss, None]
            psd[ss] = acc / den2
    ok &= np.all(np.isfinite(psd), axis=1)
    if not np.all(ok):
        idx = np.flatnonzero(~ok)
        psd[idx] = _noise_direct(system, f, idx, accumulate, out)
    return 4.0 * BOLTZMANN_J_PER_K * temp[:, None] * psd


def _noise_direct(system: System, f: np.ndarray, idx: np.ndarray, accumulate, out: int) -> np.ndarray:
    sub = System(G=system.G[idx], C=system.C[idx], b=system.b, index=system.index,
                 branch=system.branch)
    psd = np.zeros((idx.size, f.size))
    for ss, fs, Y in _solutions(sub, f, adjoint_of=out):
        rows = idx[ss]
        psd[ss, fs] = accumulate(Y, rows)
    return psd


# --------------------------------------------------------------------------
# time domain


def _time_grid(t_s) -> tuple[np.ndarray, float]:
    t = np.asarray(t_s, dtype=float)
    if t.ndim != 1 or t.size < 2 or not np.all(np.isfinite(t)):
        raise ProjectError("the time grid must be a 1-D array of at least two finite instants")
    dt = np.diff(t)
    h = float(dt[0])
    if not (h > 0) or not np.allclose(dt, h, rtol=1e-6, atol=0.0):
        raise ProjectError("the time grid must be uniform and increasing")
    return t, h


def _input(u, samples: int, steps: int) -> np.ndarray:
    """The input as (S, T) or (1, T) floats."""
    arr = np.asarray(u, dtype=float)
    if arr.ndim == 1:
        arr = arr[None, :]
    if arr.ndim != 2 or arr.shape[1] != steps or arr.shape[0] not in (1, samples):
        raise ProjectError(f"the input must have shape ({steps},) or ({samples}, {steps}); got {np.shape(u)}")
    if not np.all(np.isfinite(arr)):
        raise ProjectError("the input signal holds non-finite values")
    return arr


@dataclass(frozen=True)
class _Probes:
    """Probes as linear functionals of x: row weights (S, P, N); capacitor currents need d/dt."""

    names: tuple[str, ...]
    weights: np.ndarray  # (S, P, N)
    derivative: dict[int, np.ndarray]  # probe -> capacitance (S,): current = C·dv/dt


def _probes(network: Network, system: System, vals: dict[str, np.ndarray], probes: Sequence[str]) -> _Probes:
    if isinstance(probes, str):
        probes = [probes]
    names = tuple(probes)
    W = np.zeros((system.samples, len(names), system.size))
    deriv: dict[int, np.ndarray] = {}

    def across(p: int, a: str, b: str, scale) -> None:
        i, j = system.node(a), system.node(b)
        if i is not None:
            W[:, p, i] += scale
        if j is not None:
            W[:, p, j] -= scale

    for p, name in enumerate(names):
        if name.startswith(("v:", "i:")):
            what, part = name[0], name[2:]
            if what == "i" and part in system.branch:  # inductor, op-amp or source
                W[:, p, system.branch[part]] = 1.0
                continue
            try:
                e = network.element(part)
            except KeyError:
                raise ProjectError(f"probe '{name}': the network has no element '{part}'") from None
            if what == "v":
                across(p, e.a, e.b, 1.0)
            elif e.kind == "R":
                across(p, e.a, e.b, 1.0 / vals[e.name])
            else:  # capacitor: record its voltage, differentiate afterwards
                across(p, e.a, e.b, 1.0)
                deriv[p] = vals[e.name]
        else:
            k = system.node(name)
            if k is not None:
                W[:, p, k] = 1.0
    return _Probes(names, W, deriv)


def _chunk(size: int, steps: int) -> int:
    """Samples per block in the time loops: per-sample matrices, their solver copies and
    factorisations, and the averaged input (the recorded probes are allocated once)."""
    per_sample = 8 * (16 * size * size + 2 * steps)
    return max(1, int(_TIME_BYTES // per_sample))


def _matvec(M: np.ndarray, x: np.ndarray) -> np.ndarray:
    return np.matmul(M, x[..., None])[..., 0]


def _march(
    M: np.ndarray,
    k0: np.ndarray,
    k1: np.ndarray,
    x: np.ndarray,
    u0: np.ndarray,
    u1: np.ndarray,
    W: np.ndarray | None = None,
    rec: np.ndarray | None = None,
) -> np.ndarray:
    """Run x <- M·x + k0·u0[:, n] + k1·u1[:, n] for every column n of u0; return the final x (s, N).

    With ``rec`` (P, s, >= n) given, W·x is recorded in rec[:, :, n] before
    each step. The loop runs over time only; each step is batched over the
    samples, which sit on the last, contiguous axis: numpy's small matrix
    products run several times faster that way than with samples first.
    """
    Mt = np.ascontiguousarray(np.moveaxis(M, 0, -1))  # (N, N, s)
    k0t, k1t = np.ascontiguousarray(k0.T), np.ascontiguousarray(k1.T)  # (N, s)
    xt = np.ascontiguousarray(x.T)
    Wt = None if W is None else np.ascontiguousarray(np.moveaxis(W, 0, -1))  # (P, N, s)
    steps = u0.shape[1]
    u0T, u1T = np.ascontiguousarray(u0.T), np.ascontiguousarray(u1.T)  # (T, s or 1)
    # States are kept for a run of steps and turned into probes by one product
    # per run, not one small product per step (same numbers, fewer calls).
    run = 256 if rec is not None else 0
    buf = np.empty((run, xt.shape[0], xt.shape[1])) if rec is not None else None
    for n0 in range(0, steps, run or steps or 1):
        m = min(run or steps, steps - n0)
        for l in range(m):
            if buf is not None:
                buf[l] = xt
            xt = np.einsum("ijs,js->is", Mt, xt)
            xt += k0t * u0T[n0 + l]
            xt += k1t * u1T[n0 + l]
        if buf is not None and m:
            rec[:, :, n0:n0 + m] = np.einsum("pjs,ljs->psl", Wt, buf[:m])
    return np.ascontiguousarray(xt.T)


# Radau IIA with three stages: order 5, L-stable and stiffly accurate (the last
# stage is the step's end). Coefficients from Hairer & Wanner, Solving Ordinary
# Differential Equations II, section IV.5, table 5.6.
_SQ6 = math.sqrt(6.0)
_RADAU_C = np.array([(4 - _SQ6) / 10, (4 + _SQ6) / 10, 1.0])
_RADAU_A = np.array([
    [(88 - 7 * _SQ6) / 360, (296 - 169 * _SQ6) / 1800, (-2 + 3 * _SQ6) / 225],
    [(296 + 169 * _SQ6) / 1800, (88 + 7 * _SQ6) / 360, (-2 - 3 * _SQ6) / 225],
    [(16 - _SQ6) / 36, (16 + _SQ6) / 36, 1 / 9],
])
#: How the input runs between grid instants: "linear" (straight line from
#: u[n] to u[n+1]) or "hold" (u[n] held until t[n+1], for square waves whose
#: edges lie on the grid).
INPUT_MODES = ("linear", "hold")


def _step_matrices(
    G: np.ndarray, C: np.ndarray, b: np.ndarray, h: float, hold: bool = False
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """One Radau IIA step of C·x' + G·x = b·u: x[n+1] = M·x[n] + k0·u[n] + k1·u[n+1].

    Stage values X_i at t[n] + c_i·h solve C·X_i = C·x[n] + h·Σ_j a_ij·(b·u_j − G·X_j),
    the charge balance in integral form, and x[n+1] = X_3. Hence x[n+1]
    depends on x[n] only through its charges and fluxes C·x[n]: algebraic
    parts (ideal op-amps, nodes without capacitors, capacitor loops through
    the source) are met at every step and never ring, and a fast pole is
    damped as it should be (the stability function is positive on the
    negative real axis and vanishes at infinity), whatever h·|pole| is.
    """
    S, N, _ = G.shape
    A, c = _RADAU_A, _RADAU_C
    # Weights of u[n] and u[n+1] in each stage's input term h·Σ_j a_ij·u_j.
    w0 = A @ (np.ones(3) if hold else 1.0 - c)
    w1 = np.zeros(3) if hold else A @ c
    big = np.zeros((S, 3 * N, 3 * N))
    rhs = np.zeros((S, 3 * N, N + 2))
    for i in range(3):
        rows = slice(i * N, (i + 1) * N)
        for j in range(3):
            big[:, rows, j * N:(j + 1) * N] = h * A[i, j] * G
        big[:, rows, rows] += C
        rhs[:, rows, :N] = C
        rhs[:, rows, N] = h * w0[i] * b
        rhs[:, rows, N + 1] = h * w1[i] * b
    # Equilibrate rows and columns: the unknowns mix volts and amperes, the
    # rows siemens and farads per step, over many decades for stiff networks.
    r = np.max(np.abs(big), axis=-1, keepdims=True)
    r = np.where(r > 0, r, 1.0)
    big, rhs = big / r, rhs / r
    col = np.max(np.abs(big), axis=-2, keepdims=True)
    col = np.where(col > 0, col, 1.0)
    try:
        sol = np.linalg.solve(big / col, rhs) / np.swapaxes(col, -1, -2)
    except np.linalg.LinAlgError:
        raise ProjectError("the network has no unique solution for this time step") from None
    last = sol[:, 2 * N:, :]
    return last[..., :N], last[..., N], last[..., N + 1]


def _dc_singular(system: System) -> bool:
    few = system.G[: min(system.samples, 4)]
    return bool(np.any(_rcond(few) < _SINGULAR_RCOND))


def _derivative(v: np.ndarray, h: float, periodic: bool) -> np.ndarray:
    """dv/dt along the last axis by central differences (second order, as the integrator)."""
    if periodic:
        return (np.roll(v, -1, axis=-1) - np.roll(v, 1, axis=-1)) / (2 * h)
    return np.gradient(v, h, axis=-1)


def transient(
    network: Network,
    values: Mapping[str, np.ndarray],
    t_s,
    u,
    probes: Sequence[str],
    *,
    initial: str = "dc",
    input_mode: str = "linear",
) -> dict[str, np.ndarray]:
    """Time response of C·x' + G·x = b·u(t) on a uniform grid, per sample.

    ``t_s`` (T,) must be uniform (the step is t_s[1] − t_s[0]); ``u`` is the
    source voltage (V) at those instants, (T,) or (S, T), taken as linear
    between samples (``input_mode="linear"``) or held from one sample to the
    next (``"hold"``). Stepped by Radau IIA (order 5, L-stable; see
    ``_step_matrices``): each sample's numbers depend on its own values and
    the grid only, never on the other samples of the batch.

    Initial state, ``initial="dc"``: the DC operating point for u[0]
    (G·x0 = b·u[0]); when G is singular (a node reached through capacitors
    only, or an inductor loop) the state at rest x0 = 0 is used instead.
    ``initial="rest"``: x0 = 0 whatever u[0] is (a step applied at t_s[0]).
    The first sample then shows the state at rest; the first step starts from
    its charges and fluxes (all zero), so a capacitive divider jumps at once,
    as charge conservation says.

    ``probes``: node names (voltage), "v:NAME" (element voltage a − b),
    "i:NAME" (element current a -> b; also op-amp output currents and
    "i:__source__"). Capacitor currents are C·dv/dt by central differences.
    Returns probe -> (S, T) float array.
    """
    if initial not in ("dc", "rest"):
        raise ValueError("initial must be 'dc' or 'rest'")
    if input_mode not in INPUT_MODES:
        raise ValueError(f"input_mode must be one of {INPUT_MODES}")
    system = assemble(network, values)
    vals, samples = _element_values(network, values)
    t, h = _time_grid(t_s)
    steps = t.size
    uu = _input(u, samples, steps)
    spec = _probes(network, system, vals, probes)
    out = np.empty((len(spec.names), samples, steps))
    use_dc = initial == "dc" and not _dc_singular(system)
    chunk = _chunk(system.size, steps)

    for s0 in range(0, samples, chunk):
        ss = slice(s0, s0 + chunk)
        G, C, W = system.G[ss], system.C[ss], spec.weights[ss]
        uc = uu if uu.shape[0] == 1 else uu[ss]
        M, k0, k1 = _step_matrices(G, C, system.b, h, hold=input_mode == "hold")
        x = np.zeros(G.shape[:2])
        if use_dc:
            try:
                x = np.linalg.solve(G, (system.b[None, :] * uc[:, :1])[..., None])[..., 0]
            except np.linalg.LinAlgError:
                x = np.zeros(G.shape[:2])
            if not np.all(np.isfinite(x)):
                x = np.zeros(G.shape[:2])
        rec = out[:, ss, :]
        x = _march(M, k0, k1, x, uc[:, :-1], uc[:, 1:], W, rec)
        rec[:, :, -1] = np.einsum("spn,sn->ps", W, x)

    result = {}
    for p, name in enumerate(spec.names):
        y = out[p]
        if p in spec.derivative:
            y = spec.derivative[p][:, None] * _derivative(y, h, periodic=False)
        result[name] = y
    return result


def step(network: Network, values: Mapping[str, np.ndarray], t_s, amplitude: float = 1.0) -> np.ndarray:
    """Output voltage (S, T) for a source step of ``amplitude`` volts applied at t_s[0] from rest.

    The first sample is the state at rest (0 V); the input holds ``amplitude``
    from then on. ``t_s`` must be uniform; normally it starts at 0.
    """
    t, _ = _time_grid(t_s)
    u = np.full(t.size, float(amplitude))
    return transient(network, values, t, u, [network.output], initial="rest")[network.output]


def _consistency_rows(G: np.ndarray, C: np.ndarray, b: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Rows (S, N, N) and right-hand sides (S, N) of the algebraic constraints wᵀ(G·x − b·u) = 0.

    The w span the left null space of C (equations without a derivative:
    the source, ideal op-amps, nodes without capacitors). Rows of directions
    that are not in the null space are zero.
    """
    r = np.max(np.abs(C), axis=-1, keepdims=True)
    rs = 1.0 / np.where(r > 0, r, 1.0)
    Ce = C * rs
    c = np.max(np.abs(Ce), axis=-2, keepdims=True)
    Ce = Ce / np.where(c > 0, c, 1.0)
    U, sv, _ = np.linalg.svd(Ce)
    null = sv < 1e-9 * np.maximum(sv[..., :1], np.finfo(float).tiny)
    Wt = np.swapaxes(U, -1, -2) * rs[..., 0][:, None, :]  # wᵀ = (D_r·u)ᵀ
    Wt = Wt * null[..., None]
    return Wt @ G, Wt @ b


def periodic_steady_state(
    network: Network, values: Mapping[str, np.ndarray], t_s, u, probes: Sequence[str],
    *, input_mode: str = "linear",
) -> dict[str, np.ndarray]:
    """Probes (S, T) over one period in the periodic steady state of a repeating input.

    ``t_s`` is a uniform grid over exactly one period with the endpoint
    excluded (period = T·dt); ``u`` (T,) or (S, T) repeats with that period,
    between samples as ``input_mode`` says (see ``transient``). With the
    step x[n+1] = M·x[n] + k0·u[n] + k1·u[n+1] the state after one period is
    Φ·x0 + κ with Φ = M^T (repeated squaring) and κ the response from rest;
    the periodic state solves (I − Φ)·x0 = κ, together with the algebraic
    constraints at t = 0, in the least-squares sense. A charge that nothing
    can drain (a node reached through capacitors only) is left at its
    minimum-norm value. Probes as for ``transient``.
    """
    if input_mode not in INPUT_MODES:
        raise ValueError(f"input_mode must be one of {INPUT_MODES}")
    system = assemble(network, values)
    vals, samples = _element_values(network, values)
    t, h = _time_grid(t_s)
    steps = t.size
    uu = _input(u, samples, steps)
    spec = _probes(network, system, vals, probes)
    out = np.empty((len(spec.names), samples, steps))
    chunk = _chunk(system.size, steps)
    N = system.size

    for s0 in range(0, samples, chunk):
        ss = slice(s0, s0 + chunk)
        G, C, W = system.G[ss], system.C[ss], spec.weights[ss]
        uc = uu if uu.shape[0] == 1 else uu[ss]
        u1 = np.roll(uc, -1, axis=1)  # the last step wraps to u[0]
        M, k0, k1 = _step_matrices(G, C, system.b, h, hold=input_mode == "hold")
        phi = np.linalg.matrix_power(M, steps)
        kappa = _march(M, k0, k1, np.zeros(G.shape[:2]), uc, u1)
        rows, rhs_b = _consistency_rows(G, C, system.b)
        A = np.concatenate([np.eye(N)[None] - phi, rows], axis=1)
        # The state at t = 0 meets the constraints for the input arriving there:
        # u[0], or the held u[T−1] (the last step ends at the period's end).
        u_at0 = uc[:, -1:] if input_mode == "hold" else uc[:, :1]
        rhs = np.concatenate([kappa, rhs_b * u_at0], axis=1)
        # Equilibrate rows and columns: the state mixes volts and amperes.
        r = np.max(np.abs(A), axis=-1, keepdims=True)
        r = np.where(r > 0, r, 1.0)
        A, rhs = A / r, rhs / r[..., 0]
        c = np.max(np.abs(A), axis=-2, keepdims=True)
        c = np.where(c > 0, c, 1.0)
        x = _matvec(np.linalg.pinv(A / c, rtol=1e-10), rhs) / c[:, 0, :]
        _march(M, k0, k1, x, uc, u1, W, out[:, ss, :])

    result = {}
    for p, name in enumerate(spec.names):
        y = out[p]
        if p in spec.derivative:
            y = spec.derivative[p][:, None] * _derivative(y, h, periodic=True)
        result[name] = y
    return result
