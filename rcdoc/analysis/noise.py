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

__all__ = ["BOLTZMANN_J_PER_K", "output_noise_psd"]

#: Boltzmann constant, exact by definition of the kelvin in the revised SI
#: (BIPM, The International System of Units, 9th edition, 2019).
BOLTZMANN_J_PER_K = 1.380649e-23


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
    system, T = conditioned(network, values)
    f = _freqs(freqs_hz)
    vals, samples = _element_values(network, values)
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
    psd = np.zeros((samples, f.size))
    out = system.index[network.output]

    def accumulate(Y, rs):
        acc = np.zeros(Y.shape[:2])
        for inj, r in resistors:
            acc += np.abs(Y @ inj) ** 2 / r[rs, None]
        return acc

    pencil = _Pencil(system, f)
    if out == pencil.d_node:  # the output is the source node: no noise reaches it
        return psd
    pos = {int(u): m for m, u in enumerate(pencil.keep)}  # drive node and source: y = 0
    o = pos[out]
    jw = 2j * math.pi * f
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
