"""Thermal (Johnson–Nyquist) noise at a Network's output, vectorised over Monte Carlo samples.

What it is for: the one-sided output noise PSD from every resistor, through
the pole-zero form of ``ac`` where it is safe and the adjoint (transposed)
system elsewhere.

What it must not do: know about stage kinds, parts or units, draw anything,
or loop in Python over samples.
"""

from __future__ import annotations

import math
from typing import Mapping

import numpy as np

from rcdoc.errors import ProjectError
from rcdoc.analysis.assembly import System, _element_values
from rcdoc.analysis.ac import _Pencil, _freqs, _pz_blocks, _solutions, conditioned
from rcdoc.analysis.network import Network
from rcdoc.analysis.sweep_math import finite_rows

__all__ = ["BOLTZMANN_J_PER_K", "output_noise_psd", "resonant_columns", "integration_grid"]

#: Boltzmann constant, exact by definition of the kelvin in the revised SI
#: (BIPM, The International System of Units, 9th edition, 2019).
BOLTZMANN_J_PER_K = 1.380649e-23


# A pole whose resonance is narrower than this many sweep spacings gets points of its
# own in the noise integral: Q above 1 (half-width |Re p| against the spacing of 50
# points a decade, 4.7 % of the frequency; a Q of 10 already misses by 0.25 %).
_RESONANT_Q = 1.0
# Where, in half-widths |Re p|/2π from the pole's |p|/2π, the added points sit: 121
# evenly over ±10 (the top of the peak), then 24 a side spreading out to ±1536. For a
# second-order resonance of any Q from 1.5 to 1e5 the integral is then within 0.1 %
# in power of a 600 000-point one (0.2 % with 49 over ±6 and 16 a side; measured).
_WINDOW = np.concatenate([-np.geomspace(1536.0, 10.0, 24, endpoint=False),
                          np.linspace(-10.0, 10.0, 121),
                          np.geomspace(1536.0, 10.0, 24, endpoint=False)[::-1]])


def resonant_columns(poles_row: np.ndarray) -> tuple[int, ...]:
    """Columns of one row's poles (n,) that are resonant (Q above 1), one per pair."""
    p = np.asarray(poles_row)
    ok = np.isfinite(p) & (p.imag > 0) & (p.real < 0)
    q = np.abs(p) / (2.0 * np.maximum(np.abs(p.real), np.finfo(float).tiny))
    return tuple(int(k) for k in np.flatnonzero(ok & (q > _RESONANT_Q)))


def integration_grid(sweep_hz: np.ndarray, poles: np.ndarray,
                     columns: tuple[int, ...]) -> np.ndarray:
    """Per row (S, F + W): the sweep and points around each row's own pole in ``columns``,
    inside the sweep's range and sorted. A row whose pole there is missing or not
    resonant gets its points where the sweep has them already (no change to its sum
    but the order of terms)."""
    f = np.asarray(sweep_hz, dtype=float)
    rows = poles.shape[0]
    parts = [np.broadcast_to(f, (rows, f.size))]
    for k in columns:
        p = poles[:, k]
        centre = np.abs(p) / (2 * math.pi)
        half = np.abs(p.real) / (2 * math.pi)
        good = np.isfinite(centre) & np.isfinite(half) & (half > 0)
        pts = centre[:, None] + half[:, None] * _WINDOW[None, :]
        pts = np.where(good[:, None], pts, f[0])
        parts.append(np.clip(pts, f[0], f[-1]))
    return np.sort(np.concatenate(parts, axis=1), axis=1)


def _grid(freqs_hz, samples: int, shift_from_hz) -> tuple[np.ndarray, np.ndarray]:
    """Frequencies as (F,) or (S, F), and the frequencies whose span sets the shift σ."""
    f = np.asarray(freqs_hz, dtype=float)
    if f.ndim == 2:
        if f.shape[0] != samples or not np.all(np.isfinite(f)):
            raise ProjectError("per-row frequencies must be finite, one row per sample")
        if shift_from_hz is None:
            raise ProjectError("per-row frequencies need the sweep that sets the shift")
        return f, _freqs(shift_from_hz)
    f = _freqs(f)
    return f, (f if shift_from_hz is None else _freqs(shift_from_hz))


def output_noise_psd(
    network: Network, values: Mapping[str, np.ndarray], freqs_hz, temperature_k=300.0,
    shift_from_hz=None, reuse=None,
) -> np.ndarray:
    """Thermal noise at the output, one-sided PSD in V²/Hz, shape (S, F).

    ``freqs_hz`` is (F,), or (S, F) for frequencies of each sample's own
    (then ``shift_from_hz``, the sweep, sets the pencil's shift, so that a
    sample's numbers do not depend on the others').

    Each resistor is a noise current source of PSD 4kT/R across it
    (Johnson–Nyquist), uncorrelated with the others; the source is an ideal
    (noiseless, zero-impedance) voltage source and op-amps are noiseless.
    Each resistor's transimpedance to the output is evaluated in zero-pole-
    gain form (see _Pencil); samples that form cannot serve take the adjoint
    path: (G + sC)ᵀ·y = e_out gives V(out) = y_a − y_b per ampere injected
    into a and drawn from b (reciprocity of the transposed system).
    ``temperature_k`` is a scalar or an (S,) array. ``reuse``: ((system, T), pencil)
    already built for these values and this shift (the Evaluator's), or None.
    """
    (system, T), pencil = reuse if reuse is not None else (conditioned(network, values), None)
    vals, samples = _element_values(network, values)
    f, f_shift = _grid(freqs_hz, samples, shift_from_hz)
    temp = np.broadcast_to(np.asarray(temperature_k, dtype=float), (samples,))
    if not np.all(np.isfinite(temp) & (temp >= 0)):
        raise ProjectError("the noise temperature must be a non-negative number of kelvin")
    # 1 A injected into a resistor's terminal a and drawn from b, in tree
    # coordinates: the difference of the two nodes' paths to ground (Tᵀ of the
    # nodal injection; T's rows are those paths).
    def path(node):
        k = system.node(node)
        return np.zeros(system.size) if k is None else T[k]
    resistors = [(path(e.a) - path(e.b), vals[e.name]) for e in network.elements if e.kind == "R"]
    psd = np.zeros((samples, f.shape[-1]))
    out = system.index[network.output]

    def accumulate(Y, rs):
        acc = np.zeros(Y.shape[:2])
        for inj, r in resistors:
            acc += np.abs(Y @ inj) ** 2 / r[rs, None]
        return acc

    pencil = pencil if pencil is not None else _Pencil(system, f_shift)
    if out == pencil.d_node:  # the output is the source node: no noise reaches it
        return psd
    pos = {int(u): m for m, u in enumerate(pencil.keep)}  # drive node and source: y = 0
    o = pos[out]
    w = 2 * math.pi * f
    ok = pencil.ok.copy()
    terms = []
    for inj, r in resistors:
        # Transimpedance to the output from 1 A injected into a and drawn from b
        # (the drive's row is the source's: an injection there flows into it).
        e = np.broadcast_to(inj[pencil.keep], (samples, pencil.keep.size))
        if not e.any():
            continue
        gain, zeros, good = pencil.zpk(o, e, None)
        ok &= good
        # A column of exact zeros in every row is a factor of exactly 1: left out.
        zeros = zeros[:, np.any(zeros != 0, axis=0)]
        terms.append((np.abs(gain) ** 2 / r, zeros))
    _pz_psd(pencil, terms, w, psd)
    ok &= finite_rows(psd)
    if not np.all(ok):
        idx = np.flatnonzero(~ok)
        if f.ndim == 2:
            psd[idx] = _noise_direct_rows(system, pencil.keep, f[idx], idx, accumulate, out)
        else:
            psd[idx] = _noise_direct(system, f, idx, accumulate, out)
    psd *= (4.0 * BOLTZMANN_J_PER_K * temp)[:, None]     # in place: the same products
    return psd


def _pz_psd(pencil: _Pencil, terms: list, w: np.ndarray, psd: np.ndarray) -> None:
    """Σ_R |Z_R|²/R over |Π(1 + μd)|² into ``psd`` (S, F), block by block; ``terms``
    are (|g|²/R, zeros) per resistor. A term without zeros is |g|²/R, one number a
    row, and those are summed before they meet the frequencies."""
    samples = psd.shape[0]
    flat = sum((scale for scale, zeros in terms if zeros.shape[1] == 0), np.zeros(samples))
    shaped = [(scale, zeros) for scale, zeros in terms if zeros.shape[1]]
    with np.errstate(all="ignore"):
        for ss in _pz_blocks(samples, psd.shape[1]):
            ws = w[ss] if w.ndim == 2 else w[None, :]
            if shaped:
                acc = np.empty((psd[ss].shape[0], psd.shape[1]))
                acc[...] = flat[ss, None]
                for scale, zeros in shaped:
                    acc += _abs2_product(pencil.sigma, scale[ss], zeros[ss], ws)
            else:                    # the flat sum, broadcast: the same quotients
                acc = flat[ss, None]
            np.divide(acc, _abs2_product(pencil.sigma, None, pencil.poles[ss], ws), out=psd[ss])


def _abs2_product(sigma: float, scale: np.ndarray | None, eig: np.ndarray,
                  w: np.ndarray) -> np.ndarray:
    """scale · Π_k |1 + (jω − σ)·e_k|² (s, F) in real arithmetic, ω = ``w`` (1, F) or (s, F),
    ``scale`` (s,) or None for 1: the squared modulus of _Pencil.product without its
    complex products. With a = 1 − σe, a factor is (a_r − ω·e_i)² + (a_i + ω·e_r)²,
    for a real e a_r² + e_r²·ω² (one term each: no cancellation of large terms)."""
    rows, n = eig.shape
    acc = np.empty((rows, w.shape[-1]))
    if scale is not None or n == 0:
        acc[...] = 1.0 if scale is None else scale[:, None]
    tmp = tmp2 = None
    for k in range(n):
        # An unscaled product's first factor is made in ``acc`` itself (1·x is x).
        first = k == 0 and scale is None
        if not first and tmp is None:
            tmp = np.empty_like(acc)
        t = acc if first else tmp
        e = eig[:, k]
        a = 1.0 - sigma * e
        if not np.any(e.imag):
            np.multiply(w, (e.real * e.real)[:, None], out=t)
            t *= w
            t += (a.real * a.real)[:, None]
        else:
            tmp2 = np.empty_like(acc) if tmp2 is None else tmp2
            np.multiply(w, -e.imag[:, None], out=t)
            t += a.real[:, None]
            t *= t
            np.multiply(w, e.real[:, None], out=tmp2)
            tmp2 += a.imag[:, None]
            tmp2 *= tmp2
            t += tmp2
        if not first:
            acc *= t
    return acc


def _noise_direct(system: System, f: np.ndarray, idx: np.ndarray, accumulate, out: int) -> np.ndarray:
    sub = System(G=system.G[idx], C=system.C[idx], b=system.b, index=system.index,
                 branch=system.branch)
    psd = np.zeros((idx.size, f.size))
    for ss, fs, Y in _solutions(sub, f, adjoint_of=out):
        rows = idx[ss]
        psd[ss, fs] = accumulate(Y, rows)
    return psd


def _noise_direct_rows(system: System, keep: np.ndarray, f: np.ndarray, idx: np.ndarray,
                       accumulate, out: int) -> np.ndarray:
    """The adjoint path for rows with frequencies of their own (r, F): one solve per row and
    frequency column, batched over the rows (the loop runs over the columns)."""
    G = system.G[idx][:, keep[:, None], keep]
    C = system.C[idx][:, keep[:, None], keep]
    e = np.zeros(keep.size)
    e[int(np.flatnonzero(keep == out)[0])] = 1.0
    psd = np.zeros(f.shape)
    for j in range(f.shape[1]):
        s = 2j * math.pi * f[:, j]
        M = np.swapaxes(G + s[:, None, None] * C, -1, -2)
        try:
            y = np.linalg.solve(M, np.broadcast_to(e, (idx.size, keep.size))[..., None])[..., 0]
        except np.linalg.LinAlgError:
            y = np.full((idx.size, keep.size), np.nan + 0j)
        Y = np.zeros((idx.size, 1, system.size), dtype=complex)
        Y[:, 0, keep] = y
        psd[:, j] = accumulate(Y, idx)[:, 0]
    return psd
