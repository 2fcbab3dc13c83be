"""Frequency responses of a Network, vectorised over Monte Carlo samples.

What it is for: transfer functions (zero-pole-gain form where it is safe, one
factorisation per sample and frequency elsewhere), all unknowns, element
voltages and currents at one frequency, the source current and the input
impedance. Every result is per 1 V of source; large batches are split into
blocks so that no temporary exceeds a few tens of megabytes.

What it must not do: know about stage kinds, parts or units, draw anything,
or loop in Python over samples (loops run over frequency blocks only).
"""

from __future__ import annotations

import math
from typing import Iterator, Mapping

import numpy as np

from rcdoc.errors import ProjectError
from rcdoc.analysis.assembly import SOURCE, System, _element_values, assemble
from rcdoc.analysis import small_linalg
from rcdoc.analysis.sweep_math import finite_rows
from rcdoc.analysis.network import Network
from rcdoc.analysis.treecoords import admittance_spread, driven_system

__all__ = [
    "ac",
    "solve_ac",
    "node_voltage",
    "element_voltages",
    "element_currents",
    "source_current",
    "input_impedance",
]

# Largest temporary matrix block (bytes). LAPACK's batched solve copies its
# inputs a few times, so the working set stays near 4x this: well under 300 MB.
_BLOCK_BYTES = 48e6


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


def _inverse(A: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """A⁻¹ per matrix and whether it is safe to use: (S, n, n), (S,) bool.

    Safe means a reciprocal condition number above _PZ_RCOND after rows and
    columns are scaled to unit maximum (mixed units do not count as
    ill-conditioning). The 1-norm estimate ‖A‖₁·‖A⁻¹‖₁ lies within a factor n
    of the 2-norm one (Golub & Van Loan, Matrix Computations, 2.3.2) and
    comes with the inverse that the poles and zeros need anyway: a singular
    value decomposition per matrix cost as much as everything else in a
    Sallen-Key's sweep.
    """
    n = A.shape[-1]
    if n == 0:
        return A.copy(), np.ones(A.shape[0], dtype=bool)
    r = _abs_max(A, -1)                                    # row maxima, (S, n, 1)
    r = np.where(r > 0, r, 1.0)
    Ae = A / r
    c = _abs_max(Ae, -2)                                   # column maxima of A / r
    c = np.where(c > 0, c, 1.0)
    Ae = Ae / c
    with np.errstate(all="ignore"):
        try:
            inv = small_linalg.inv(Ae)
        except np.linalg.LinAlgError:       # an exactly singular row: estimate row by row
            inv = np.full_like(Ae, np.nan)
            sv = np.linalg.svd(Ae, compute_uv=False)
            good = sv[..., -1] > _PZ_RCOND * sv[..., 0]
            inv[good] = np.linalg.inv(Ae[good])
        norm, norm_inv = _norm1(Ae), _norm1(inv)
        ok = np.isfinite(norm_inv) & (norm * norm_inv < 1.0 / _PZ_RCOND)
    # A = D_r·Ae·D_c, so A⁻¹ = D_c⁻¹·Ae⁻¹·D_r⁻¹.
    inv = inv / np.swapaxes(c, -1, -2) / np.swapaxes(r, -1, -2)
    return np.where(ok[:, None, None], inv, np.eye(n)), ok


# From this many matrices on, maxima and sums over a row or a column are taken with
# samples last (contiguous copies, (n, n, S)): elementwise over long arrays, the
# same numbers in the same order as along the small trailing axes, three times
# faster at 2000 matrices (slower below about 150: the copies).
_SAMPLES_LAST = 150


def _abs_max(A: np.ndarray, axis: int) -> np.ndarray:
    """max |A| along a row (axis −1) or a column (−2) of each (S, n, n) matrix, keepdims."""
    if A.shape[0] < _SAMPLES_LAST:
        return np.max(np.abs(A), axis=axis, keepdims=True)
    m = np.max(np.abs(np.ascontiguousarray(np.moveaxis(A, 0, -1))), axis=axis + 2,
               keepdims=True)
    return np.moveaxis(m, -1, 0)


def _norm1(A: np.ndarray) -> np.ndarray:
    """The 1-norm (largest column sum of |A|) of each (S, n, n) matrix, (S,)."""
    if A.shape[0] < _SAMPLES_LAST:
        return np.max(np.sum(np.abs(A), axis=-2), axis=-1)
    return np.max(np.sum(np.abs(np.ascontiguousarray(np.moveaxis(A, 0, -1))), axis=0), axis=0)


class _Pencil:
    """Per-sample poles of the reduced pencil (kept unknowns), shared by every ratio."""

    def __init__(self, system: System, f: np.ndarray, poles: np.ndarray | None = None):
        """``poles``: the network's finite poles per row (rad/s, NaN-padded; those of
        rcdoc.analysis.poles), when known: the eigenvalues λ = 1/(σ − p) of A⁻¹C are
        then taken from them (infinite poles: λ = 0) instead of solved for again."""
        self.d_node, self.keep = _eliminated(system)
        self.sigma = _shift(f)
        self.G = system.G[:, self.keep[:, None], self.keep]
        self.C = system.C[:, self.keep[:, None], self.keep]
        self.A_inv, self.ok = _inverse(self.G + self.sigma * self.C)
        n = self.keep.size
        if poles is not None and poles.shape[1] <= n:
            with np.errstate(all="ignore"):
                lam = 1.0 / (self.sigma - poles)
            self.poles = np.zeros((poles.shape[0], n), dtype=complex)
            self.poles[:, :poles.shape[1]] = np.where(np.isnan(poles), 0.0, lam)
            self.found = np.count_nonzero(np.isfinite(poles), axis=1)
            return
        self.found = None
        with np.errstate(all="ignore"):
            self.poles = small_linalg.eigvals(self.A_inv @ self.C)

    def solve_rows(self, rows: np.ndarray) -> None:
        """The eigenvalues of A⁻¹C of the rows ``rows`` (an index array) solved for."""
        with np.errstate(all="ignore"):
            self.poles[rows] = small_linalg.eigvals(self.A_inv[rows] @ self.C[rows])

    def zpk(self, o: int, r0: np.ndarray, r1: np.ndarray | None, eigen: bool | float = True):
        """Gain x_o(σ) (S,), zeros as eigenvalues e (S, n) and usable rows for x_o of
        (G + sC)·x = r0 + s·r1 (r0, r1 of shape (S, n); r1 None for no s term).
        ``eigen`` False: the caller knows there is no finite zero; e is (S, 0). A
        number: the first row's largest pole eigenvalue; when every eigenvalue of
        that row is at most 1e-16 of it (no finite zero: response._finite would drop
        them all), the structure is every row's and e is (S, 0) without the others'."""
        rhs = r0 if r1 is None else r0 + self.sigma * r1
        x_sigma = np.einsum("sj,sj->s", self.A_inv[:, o, :], rhs)
        Go, Co = self.G.copy(), self.C.copy()
        Go[:, :, o] = r0
        Co[:, :, o] = 0.0 if r1 is None else r1
        Ao_inv, ok_o = _inverse(Go + self.sigma * Co)
        ok = self.ok & ok_o
        none = np.zeros((x_sigma.shape[0], 0), dtype=complex)
        if eigen is False:
            return x_sigma, none, ok
        with np.errstate(all="ignore"):
            if eigen is not True and ok[0]:
                first = small_linalg.eigvals(Ao_inv[0] @ Co[0])
                if np.all(np.abs(first) <= 1e-16 * eigen):
                    return x_sigma, none, ok
            zeros = small_linalg.eigvals(Ao_inv @ Co)
        return x_sigma, zeros, ok

    def product(self, gain: np.ndarray | None, eig: np.ndarray, jw: np.ndarray) -> np.ndarray:
        """gain · Π_k (1 + (jω − σ)·eig_k) for one block of samples: (s, F); jω is (F,) or
        (s, F) per row; ``gain`` None for 1. The first factor is written in place and
        then scaled (a product commutes bit for bit): no pass that multiplies by 1."""
        jw = jw if jw.ndim == 2 else jw[None, :]      # (F,) shared or (s, F) per row
        acc = np.empty((eig.shape[0], jw.shape[-1]), dtype=complex)
        if eig.shape[1] == 0:
            acc[...] = 1.0 if gain is None else gain[:, None]
            return acc
        np.multiply(eig[:, 0, None], jw, out=acc)
        acc += (1.0 - self.sigma * eig[:, 0])[:, None]
        if gain is not None:
            acc *= gain[:, None]
        fac = np.empty_like(acc) if eig.shape[1] > 1 else None
        for k in range(1, eig.shape[1]):
            np.multiply(eig[:, k, None], jw, out=fac)
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
            H[ss] /= pencil.product(None, pencil.poles[ss], jw)
    ok &= finite_rows(H)
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


# Spread of the nominal element admittances (largest / smallest, at the
# network's characteristic rate) above which frequency responses are solved
# in tree-branch coordinates. Below it nodal stamping rounds away at most six
# of sixteen digits, and the nodal pencil keeps its infinite zeros exactly
# zero: in tree coordinates a defective zero eigenvalue splits into ±√ε pairs
# (1e-8 of the poles) that the zero-pole-gain form then carries as factors.
_TREE_SPREAD = 1e6


def conditioned(network: Network, values: Mapping[str, np.ndarray]) -> tuple[System, np.ndarray]:
    """The system for frequency responses, and T with x = T·y.

    Nodal when the element values lie within _TREE_SPREAD of each other;
    otherwise in tree-branch coordinates with the output's voltage a
    coordinate of its own (``treecoords``: values decades apart keep their
    digits). Either way the drive node's unknown is its voltage, the source
    row reads it alone and the output's unknown is V(out), so every solver
    here takes either.
    """
    nodal = assemble(network, values)
    if admittance_spread(network, values) < _TREE_SPREAD:
        return nodal, np.eye(nodal.size)
    return driven_system(network, values, nodal, tied=(network.output,))


def ac(network: Network, values: Mapping[str, np.ndarray], freqs_hz) -> np.ndarray:
    """Transfer function V(output)/V(source), shape (S, F) complex."""
    system, _ = conditioned(network, values)
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
