"""Bench: the vectorised Monte Carlo spread against a per-sample scipy.signal loop.

Three stages, written as a project file and loaded by rcdoc itself: an RC
low-pass, a two-section RC ladder and a unity-gain Sallen-Key low-pass (ideal
op-amp), each with a mark and a step drive. For N Monte Carlo samples
(default 20 000, the rows rcdoc's spread draws for the stage) both sides
compute the same answers for every sample:

* the Bode data over the stage's sweep (3 decades either side of its
  characteristic frequency, 50 points per decade): gain in dB and unwrapped
  phase in degrees;
* the corner frequency (gain 3.01 dB below the DC gain);
* gain (dB) and phase (degrees) at the mark;
* the step response on the tool's time grid (4000 points), its 10-90 % rise
  time and its settling time to 12 bits (error below 2^-13 of the final value).

Vectorised side: what ``rcdoc build`` runs for the stage -- the Evaluator of
rcdoc.analysis.evaluate over the batch, in chunks of rcdoc.analysis.analyse.CHUNK_ROWS rows with
the time grid shared by all rows, as rcdoc.analysis.analyse.analyse_stage does it
(nodal analysis of the stage's network: zero-pole-gain frequency response,
bisection for the corner, trapezoidal time stepping). Timed end to end,
including the time grid; split into the frequency-domain part (Bode data,
corner, mark) and the time-domain part (step, rise, settling).

Per-sample side: for each sample, the stage's textbook transfer function
b(s)/a(s) from its part values and scipy.signal, as one would script it:
``freqs(b, a, w)`` over the sweep (dB, numpy.unwrap of the angle);
``scipy.optimize.brentq`` on |H(j2πf)| − |H(0)|/√2 between the sweep points
that bracket the crossing; ``freqs`` at the mark; ``scipy.signal.step`` on the
same time grid, then the 10 % and 90 % crossings and the last sample outside
the 12-bit band, each interpolated linearly between samples.

scipy.signal.step costs about 50 ms per sample (lsim steps through the grid in
Python), so by default the loop runs over the first ``--loop-samples`` samples
(400) and its time is scaled to N (the loop has no shared work, so its time is
linear in the number of samples); ``--loop-samples 0`` runs it over all N.
The answers are compared on the samples the loop ran; the largest differences
are printed (the trapezoidal rule's error, ~ (h/τ)²/12, bounds the time-domain
ones). Run:  python bench/spread_speed.py [--samples N] [--loop-samples M]
"""

from __future__ import annotations

import argparse
import math
import sys
import tempfile
import time
from pathlib import Path

import numpy as np
import scipy.optimize as so
import scipy.signal as sg

sys.path.insert(0, str(Path(__file__).resolve().parent.parent))

from rcdoc.analysis import spread  # noqa: E402
from rcdoc.analysis.analyse import CHUNK_ROWS, passband_of, _char_from_poles  # noqa: E402
from rcdoc.kinds import kind_of  # noqa: E402
from rcdoc.analysis.evaluate import DB3, Evaluator, sweep_for  # noqa: E402
from rcdoc.kinds import load_project  # noqa: E402

SETTLE_BITS = 12

PROJECT = '''[board]
name = "Spread bench"
revision = "A"
date = "2026-01-01"

[analysis]
samples = 2000
seed = 1

[[stage]]
id = "rc-lowpass"
title = "RC low-pass"
kind = "rc-lowpass"
marks = ["20 kHz"]
drive = { step = "3.3 V" }
parts.r = { value = "4k7", tolerance = "1%" }
parts.c = { value = "10 nF", tolerance = "5%", dielectric = "C0G" }

[[stage]]
id = "rc-ladder"
title = "Two-section RC ladder"
kind = "rc-ladder"
marks = ["500 Hz"]
drive = { step = "3.3 V" }
parts.r1 = { value = "10k", tolerance = "1%" }
parts.c1 = { value = "220 nF", tolerance = "10%", dielectric = "C0G" }
parts.r2 = { value = "10k", tolerance = "1%" }
parts.c2 = { value = "220 nF", tolerance = "10%", dielectric = "C0G" }

[[stage]]
id = "sallen-key"
title = "Sallen-Key low-pass"
kind = "sallen-key-lowpass"
marks = ["5 kHz"]
drive = { step = "3.3 V" }
parts.r1 = { value = "11k", tolerance = "1%" }
parts.r2 = { value = "11k", tolerance = "1%" }
parts.c1 = { value = "20 nF", tolerance = "5%", dielectric = "C0G" }
parts.c2 = { value = "10 nF", tolerance = "5%", dielectric = "C0G" }
'''


def textbook(kind: str, v: dict[str, float]) -> tuple[list[float], list[float]]:
    """Numerator and denominator of V(out)/V(in), highest power of s first."""
    if kind == "rc-lowpass":
        # H = 1 / (1 + sRC): first-order low-pass (any circuits textbook).
        return [1.0], [v["r"] * v["c"], 1.0]
    if kind == "rc-ladder":
        # Loaded two-section ladder, nodal analysis (textbook result):
        # den = R1C1R2C2 s² + (R1C1 + R2C2 + R1C2) s + 1.
        r1, c1, r2, c2 = v["r1"], v["c1"], v["r2"], v["c2"]
        return [1.0], [r1 * c1 * r2 * c2, r1 * c1 + r2 * c2 + r1 * c2, 1.0]
    # Unity-gain Sallen-Key low-pass, C1 from the middle node to the output and
    # C2 to ground: H = 1 / (s²R1R2C1C2 + s·C2(R1 + R2) + 1) (the standard result).
    r1, r2, c1, c2 = v["r1"], v["r2"], v["c1"], v["c2"]
    return [1.0], [r1 * r2 * c1 * c2, c2 * (r1 + r2), 1.0]


def _cross(y: np.ndarray, t: np.ndarray, level: float) -> float:
    """First time y reaches level, linear between samples."""
    j = int(np.argmax(y >= level))
    if j == 0:
        return math.nan
    return t[j - 1] + (level - y[j - 1]) / (y[j] - y[j - 1]) * (t[j] - t[j - 1])


def per_sample(kind: str, v: dict[str, float], f: np.ndarray, mark_hz: float,
               t: np.ndarray, amp: float) -> dict[str, object]:
    """Every answer for one sample with scipy.signal, from the textbook transfer function."""
    b, a = textbook(kind, v)
    w = 2 * np.pi * f
    _, h = sg.freqs(b, a, worN=w)
    gain_db = 20 * np.log10(np.abs(h))
    phase_deg = np.degrees(np.unwrap(np.angle(h)))
    dc = b[-1] / a[-1]
    target = abs(dc) / math.sqrt(2.0)

    def excess(fhz: float) -> float:
        return abs(sg.freqs(b, a, worN=[2 * np.pi * fhz])[1][0]) - target

    j = int(np.argmax(gain_db < 20 * math.log10(abs(dc)) - DB3))
    corner = so.brentq(excess, f[j - 1], f[j], xtol=1e-12 * f[j], rtol=1e-14)
    _, hm = sg.freqs(b, a, worN=[2 * np.pi * mark_hz])
    _, y = sg.step((b, a), T=t)
    y = amp * y
    fin = amp * dc
    rise = _cross(y / fin, t, 0.9) - _cross(y / fin, t, 0.1)
    band = 2.0 ** -(SETTLE_BITS + 1)
    err = np.abs(y - fin) / abs(fin)
    last = len(t) - 1 - int(np.argmax(err[::-1] > band))
    settle = t[last] + (err[last] - band) / (err[last] - err[last + 1]) * (t[last + 1] - t[last])
    return {"gain_db": gain_db, "phase_deg": phase_deg, "corner": corner,
            "gain_mark": 20 * math.log10(abs(hm[0])), "phase_mark": math.degrees(np.angle(hm[0])),
            "rise": rise, "settle": settle, "step": y}


def vectorised(stage, analysis, values: dict[str, np.ndarray], keep: int):
    """The Evaluator over the batch as the pipeline runs it; answers and (freq, time) seconds.

    Step waveforms are kept for the first ``keep`` rows only (the ones the loop checks)."""
    kind = kind_of(stage)
    network = kind.build(stage)
    passband = passband_of(stage, kind)
    char_hz, poles_hz = kind.characteristic_hz(stage), None
    if char_hz is None:
        nominal = {k: v[:1] for k, v in values.items()}
        char_hz, poles_hz = _char_from_poles(stage, network, nominal, passband)
    freqs = sweep_for(char_hz, analysis, poles_hz)      # as rcdoc.analysis.analyse._setup
    mark = stage.marks_hz[0]
    rows = len(next(iter(values.values())))
    keys = ("gain_db", "phase_deg", "corner", "gain_mark", "phase_mark", "rise", "settle", "step")
    out: dict[str, list] = {k: [] for k in keys}
    t_freq = t_time = 0.0
    t0 = time.perf_counter()
    time_s = Evaluator(stage, network, values, freqs, passband, char_hz).time_s
    t_time += time.perf_counter() - t0
    for start in range(0, rows, CHUNK_ROWS):
        vals = {k: v[start:start + CHUNK_ROWS] for k, v in values.items()}
        t0 = time.perf_counter()
        ev = Evaluator(stage, network, vals, freqs, passband, char_hz, time_s=time_s)
        out["gain_db"].append(ev.gain_db)
        out["phase_deg"].append(np.degrees(np.unwrap(np.angle(ev.h), axis=1)))
        out["corner"].append(ev.corner())
        out["gain_mark"].append(ev.gain(mark))
        out["phase_mark"].append(ev.phase(mark))
        t1 = time.perf_counter()
        out["step"].append(ev.step[: max(0, keep - start)].copy())
        out["rise"].append(ev.rise_time())
        out["settle"].append(ev.settling(bits=SETTLE_BITS))
        t2 = time.perf_counter()
        t_freq += t1 - t0
        t_time += t2 - t1
    res = {k: np.concatenate(v) for k, v in out.items()}
    return res, freqs, time_s, mark, t_freq, t_time


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--samples", type=int, default=20000)
    ap.add_argument("--loop-samples", type=int, default=400,
                    help="samples the per-sample loop runs over (0: all); its time is scaled to --samples")
    args = ap.parse_args(argv)
    n = args.samples
    m = n if args.loop_samples <= 0 else min(args.loop_samples, n)
    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / "bench.toml"
        path.write_text(PROJECT, encoding="utf-8")
        project = load_project(path, samples=n)
    print(f"{n} samples per stage; per-sample loop timed on {m} samples"
          f"{'' if m == n else f' and scaled by {n / m:g}'}")
    print(f"{'stage':11s} {'vec freq':>9s} {'vec time':>9s} {'vec all':>9s} {'loop all':>10s} "
          f"{'x freq':>7s} {'x time':>7s} {'x all':>7s}")
    tot_vec = tot_loop = 0.0
    diffs = []
    for stage in project.stages:
        batch = spread.build_batch(stage, project.analysis)
        values = {k: np.ascontiguousarray(v[batch.mc]) for k, v in batch.values.items()}
        res, f, t, mark, tv_f, tv_t = vectorised(stage, project.analysis, values, m)
        amp = stage.drive.amplitude_v

        loop: dict[str, list] = {}
        t0 = time.perf_counter()
        for i in range(m):
            v = {k: float(a[i]) for k, a in values.items()}
            r = per_sample(stage.kind, v, f, mark, t, amp)
            for k, x in r.items():
                loop.setdefault(k, []).append(x)
        tl_m = time.perf_counter() - t0
        # Split the loop's time: the frequency part alone again on up to 200 samples.
        k_f = min(m, 200)
        t0 = time.perf_counter()
        for i in range(k_f):
            v = {k: float(a[i]) for k, a in values.items()}
            b, a = textbook(stage.kind, v)
            _, h = sg.freqs(b, a, worN=2 * np.pi * f)
            g = 20 * np.log10(np.abs(h))
            np.degrees(np.unwrap(np.angle(h)))
            dc = b[-1] / a[-1]
            j = int(np.argmax(g < 20 * math.log10(abs(dc)) - DB3))
            so.brentq(lambda x: abs(sg.freqs(b, a, worN=[2 * np.pi * x])[1][0]) - abs(dc) / math.sqrt(2),
                      f[j - 1], f[j], xtol=1e-12 * f[j], rtol=1e-14)
            sg.freqs(b, a, worN=[2 * np.pi * mark])
        freq_share = (time.perf_counter() - t0) / k_f * m / tl_m
        scale = n / m
        tl_all = tl_m * scale
        tl_fr = tl_all * freq_share
        tl_tm = tl_all - tl_fr
        tv_all = tv_f + tv_t
        tot_vec += tv_all
        tot_loop += tl_all
        print(f"{stage.id:11s} {tv_f:8.2f}s {tv_t:8.2f}s {tv_all:8.2f}s {tl_all:9.1f}s "
              f"{tl_fr / tv_f:6.1f}x {tl_tm / tv_t:6.1f}x {tl_all / tv_all:6.1f}x")

        L = {k: np.array(x) for k, x in loop.items()}
        V = {k: x[:m] for k, x in res.items()}
        rel = lambda a, b: float(np.nanmax(np.abs(a - b) / np.abs(b)))  # noqa: E731
        diffs.append((stage.id, {
            "gain dB": float(np.max(np.abs(V["gain_db"] - L["gain_db"]))),
            "phase deg": float(np.max(np.abs(V["phase_deg"] - L["phase_deg"]))),
            "corner rel": rel(V["corner"], L["corner"]),
            "mark dB": float(np.max(np.abs(V["gain_mark"] - L["gain_mark"]))),
            "mark deg": float(np.max(np.abs(V["phase_mark"] - L["phase_mark"]))),
            "step V": float(np.max(np.abs(V["step"] - L["step"]))),
            "rise rel": rel(V["rise"], L["rise"]),
            "settle rel": rel(V["settle"], L["settle"]),
        }))
    print(f"{'all':11s} {'':9s} {'':9s} {tot_vec:8.2f}s {tot_loop:9.1f}s {'':7s} {'':7s} "
          f"{tot_loop / tot_vec:6.1f}x")
    print(f"largest differences, vectorised vs loop (over the {m} samples the loop ran):")
    names = list(diffs[0][1])
    print(f"{'stage':11s} " + " ".join(f"{k:>10s}" for k in names))
    for sid, d in diffs:
        print(f"{sid:11s} " + " ".join(f"{d[k]:10.1e}" for k in names))
    print(f"speed-up of the spread over the per-sample scipy.signal loop: {tot_loop / tot_vec:.1f}x")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
