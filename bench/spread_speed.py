"""Bench: the vectorised Monte Carlo frequency response against a per-sample scipy.signal loop.

For three stages (RC low-pass, two-section RC ladder, unity-gain Sallen-Key
low-pass with an ideal op-amp) and N Monte Carlo samples (default 20 000),
both sides compute the Bode data of every sample over the same sweep
(1 Hz .. 1 MHz shifted to each stage, 50 points per decade, 301 points):
gain in dB and unwrapped phase in degrees.

* vectorised: rcdoc.engine.ac on the stage's network, all samples at once
  (nodal analysis, zero-pole-gain evaluation), then dB and phase as arrays;
* per-sample loop: for each sample, the stage's textbook transfer function
  (coefficients from the part values) through scipy.signal's
  TransferFunction(...).bode(w) -- the usual way to get a Bode plot from
  scipy.signal. For reference the loop is also timed with the cheaper
  scipy.signal.freqs(b, a, w) plus dB and phase by hand.

The two sides are compared (largest difference in dB and degrees) so the
speed-up is for the same answer. Run:  python bench/spread_speed.py [--samples N]
"""

from __future__ import annotations

import argparse
import math
import sys
import time
from pathlib import Path

import numpy as np
import scipy.signal as sg

sys.path.insert(0, str(Path(__file__).resolve().parent.parent))

from rcdoc import engine  # noqa: E402
from rcdoc.network import Element, Network, OpAmp  # noqa: E402

POINTS_PER_DECADE = 50


def stages(rng: np.random.Generator, n: int):
    """(name, network, values, coefficient function, sweep) for each stage."""
    def tol(nominal, t):
        return nominal * (1 + rng.uniform(-t, t, n))

    out = []
    # RC low-pass: H = 1 / (1 + sRC) (first-order low-pass, any circuits textbook).
    r, c = tol(4.7e3, 0.01), tol(10e-9, 0.05)
    net = Network(elements=(Element("r", "R", "in", "out"), Element("c", "C", "out", "0")),
                  drive="in", output="out")
    out.append(("rc-lowpass", net, {"r": r, "c": c},
                lambda i: ([1.0], [r[i] * c[i], 1.0]), 1 / (2 * math.pi * 4.7e3 * 10e-9)))
    # Two-section RC ladder: den = R1C1R2C2 s² + (R1C1 + R2C2 + R1C2) s + 1
    # (nodal analysis of the loaded ladder, textbook result).
    r1, c1, r2, c2 = tol(10e3, 0.01), tol(220e-9, 0.1), tol(10e3, 0.01), tol(220e-9, 0.1)
    net = Network(elements=(Element("r1", "R", "in", "m"), Element("c1", "C", "m", "0"),
                            Element("r2", "R", "m", "out"), Element("c2", "C", "out", "0")),
                  drive="in", output="out")
    out.append(("rc-ladder", net, {"r1": r1, "c1": c1, "r2": r2, "c2": c2},
                lambda i: ([1.0], [r1[i] * c1[i] * r2[i] * c2[i],
                                   r1[i] * c1[i] + r2[i] * c2[i] + r1[i] * c2[i], 1.0]),
                1 / (2 * math.pi * 10e3 * 220e-9)))
    # Unity-gain Sallen-Key low-pass: H = 1 / (s²R1R2C1C2 + s·C2(R1 + R2) + 1)
    # (C1 from the middle node to the output, C2 to ground; the standard result).
    sr1, sr2, sc1, sc2 = tol(11e3, 0.01), tol(11e3, 0.01), tol(20e-9, 0.05), tol(10e-9, 0.05)
    net = Network(elements=(Element("r1", "R", "in", "a"), Element("r2", "R", "a", "b"),
                            Element("c1", "C", "a", "out"), Element("c2", "C", "b", "0")),
                  drive="in", output="out", opamps=(OpAmp("u1", plus="b", minus="out", out="out"),))
    out.append(("sallen-key", net, {"r1": sr1, "r2": sr2, "c1": sc1, "c2": sc2},
                lambda i: ([1.0], [sr1[i] * sr2[i] * sc1[i] * sc2[i], sc2[i] * (sr1[i] + sr2[i]), 1.0]),
                1e3))
    return out


def _unwrap(a: np.ndarray) -> np.ndarray:
    """Phase unwrapped along each row: cumulative sum of the steps wrapped into (−π, π]
    (what numpy.unwrap does, with fewer temporaries)."""
    d = np.diff(a, axis=1)
    d -= (2 * np.pi) * np.round(d / (2 * np.pi))
    out = np.empty_like(a)
    out[:, 0] = a[:, 0]
    np.cumsum(d, axis=1, out=out[:, 1:])
    out[:, 1:] += a[:, :1]
    return out


def sweep(f0: float) -> np.ndarray:
    return np.logspace(math.log10(f0) - 3, math.log10(f0) + 3, 6 * POINTS_PER_DECADE + 1)


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--samples", type=int, default=20000)
    ap.add_argument("--seed", type=int, default=1)
    args = ap.parse_args(argv)
    rng = np.random.default_rng(args.seed)
    total_vec = total_bode = total_freqs = 0.0
    print(f"{args.samples} samples per stage, {6 * POINTS_PER_DECADE + 1} frequencies")
    print(f"{'stage':12s} {'vectorised':>11s} {'loop bode':>11s} {'loop freqs':>11s} "
          f"{'x bode':>7s} {'x freqs':>8s} {'max |dB|':>9s} {'max |deg|':>9s}")
    for name, net, values, coeffs, f0 in stages(rng, args.samples):
        f = sweep(f0)
        w = 2 * math.pi * f
        t = time.perf_counter()
        h = engine.ac(net, values, f)
        gain = 20 * np.log10(np.abs(h))
        phase = np.degrees(_unwrap(np.angle(h)))
        t_vec = time.perf_counter() - t

        t = time.perf_counter()
        g_loop = np.empty_like(gain)
        p_loop = np.empty_like(phase)
        for i in range(args.samples):
            b, a = coeffs(i)
            _, g_loop[i], p_loop[i] = sg.TransferFunction(b, a).bode(w=w)
        t_bode = time.perf_counter() - t

        t = time.perf_counter()
        for i in range(args.samples):
            b, a = coeffs(i)
            _, hh = sg.freqs(b, a, worN=w)
            20 * np.log10(np.abs(hh)), np.degrees(np.unwrap(np.angle(hh)))
        t_freqs = time.perf_counter() - t

        dg = float(np.max(np.abs(gain - g_loop)))
        dp = float(np.max(np.abs(phase - p_loop)))
        total_vec, total_bode, total_freqs = total_vec + t_vec, total_bode + t_bode, total_freqs + t_freqs
        print(f"{name:12s} {t_vec:10.3f}s {t_bode:10.3f}s {t_freqs:10.3f}s "
              f"{t_bode / t_vec:6.1f}x {t_freqs / t_vec:7.1f}x {dg:9.1e} {dp:9.1e}")
    print(f"{'all':12s} {total_vec:10.3f}s {total_bode:10.3f}s {total_freqs:10.3f}s "
          f"{total_bode / total_vec:6.1f}x {total_freqs / total_vec:7.1f}x")
    print(f"speed-up over the per-sample scipy.signal loop (TransferFunction.bode): "
          f"{total_bode / total_vec:.1f}x")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
