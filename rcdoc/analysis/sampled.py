"""A converter's sampling input behind an RC: the physics of the sampled-input kind.

Model (one row per Monte Carlo sample): an ideal source at ``level`` behind
R_t = source resistance + r feeds the pin node, which carries C_f = c + pin_c
to ground and a leakage current drawn out of it. Through the switch (switch_r)
the pin charges the sampling capacitor C_s. Each period 1/f_s starts with the
switch closing for the acquisition time; the sampling capacitor then holds
(open switch) until the next period. At the start of each acquisition it is
at ``start`` (a multiplexer's previous channel: a reset x_s := start, which
keeps the period map affine) or at its own previous sample.

States: pin voltage v_p, sampled voltage v_s, and w = ∫(V − v_p)/(R_t·C_f) dt
(the charge drawn from the source over C_f, in volts; reset to 0 at each
period start), so the average input current is C_f·w(T)/T without assuming
charge balance. The periodic steady state comes from rcdoc.analysis.switched.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace

import numpy as np

from rcdoc.analysis import switched

P, S, W = 0, 1, 2                     # state indices
GRID_POINTS = 48                      # search grid over the acquisition (geometric)
GRID_FIRST = 1e-7                     # first grid time, as a share of the acquisition
REFINE_STEPS = 40                     # golden-section / bisection steps after the grid
RATE_STEPS = 50                       # bisection steps in log-rate for max_sample_rate
RATE_FLOOR = 1e-9                     # lowest rate searched, as a share of 1/acquisition
CURVE_POINTS = 61                     # points of the error-against-rate and -capacitance curves
WAVE_POINTS = 120                     # points per interval of the waveform figure
WAVE_PERIODS = 3
GOLDEN = (math.sqrt(5.0) - 1) / 2


@dataclass(frozen=True)
class Params:
    """Everything the sampled input depends on; arrays are (S,) or broadcast to it."""

    r_t: np.ndarray            # source resistance + r
    c_f: np.ndarray            # c + pin_c
    c_s: float
    r_sw: float
    t_acq: float
    rate: np.ndarray           # sample rate (per row for the rate sweep)
    level: float
    start: float | None        # None: the previous sample of this input
    leakage: float
    lsb: float

    @property
    def rows(self) -> int:
        return int(np.broadcast(self.r_t, self.c_f, self.rate).shape[0])

    def full(self, v) -> np.ndarray:
        return np.broadcast_to(np.asarray(v, dtype=float), (self.rows,)).astype(float)


def params(r: np.ndarray, c: np.ndarray, source_r, conv: dict, level: float) -> Params:
    """From the parts' rows and the converter's keys (rcdoc.kinds.sampled_input)."""
    r, c = np.asarray(r, dtype=float), np.asarray(c, dtype=float)
    return Params(r_t=r + source_r, c_f=c + conv["pin_c"], c_s=conv["sampling_c"],
                  r_sw=conv["switch_r"], t_acq=conv["acquisition"],
                  rate=np.full(len(r), conv["sample_rate"]), level=level,
                  start=conv["start"], leakage=conv["leakage"],
                  lsb=conv["full_scale"] / 2.0 ** conv["bits"])


def matrices(p: Params, closed: bool):
    """dx/dt = A x + b for the states (v_p, v_s, w), switch closed or open."""
    n = p.rows
    r_t, c_f = p.full(p.r_t), p.full(p.c_f)
    a = np.zeros((n, 3, 3))
    b = np.zeros((n, 3))
    g_t = 1.0 / r_t
    a[:, P, P] = -g_t / c_f
    b[:, P] = (p.level * g_t - p.leakage) / c_f
    a[:, W, P] = -g_t / c_f
    b[:, W] = p.level * g_t / c_f
    if closed:
        g_sw = 1.0 / p.r_sw
        a[:, P, P] -= g_sw / c_f
        a[:, P, S] = g_sw / c_f
        a[:, S, P] = g_sw / p.c_s
        a[:, S, S] = -g_sw / p.c_s
    return a, b


def _start_reset(p: Params, n_states: int) -> switched.Affine:
    values = {W: 0.0} if n_states > W else {}
    if p.start is not None:
        values[S] = p.start
    return switched.reset(p.rows, n_states, values)


def steady(p: Params, n_states: int = 3) -> dict:
    """Periodic steady state: the states at the period's boundaries, (S, n) each.

    ``n_states`` = 2 leaves out the charge integral (faster, for searches).
    """
    a1, b1 = matrices(p, closed=True)
    a0, b0 = matrices(p, closed=False)
    k = slice(0, n_states)
    closed = switched.interval(a1[:, k, k], b1[:, k], p.t_acq)
    hold = switched.interval(a0[:, k, k], b0[:, k], 1.0 / p.full(p.rate) - p.t_acq)
    maps = [_start_reset(p, n_states), closed, hold]
    x_end = switched.periodic_state(maps)
    x_reset, x_acq, _ = switched.boundary_states(maps, x_end)
    return {"end": x_end, "reset": x_reset, "acquired": x_acq, "a": a1[:, k, k], "b": b1[:, k]}


def sample_error(p: Params, st: dict | None = None) -> np.ndarray:
    """Sampled value at the end of the acquisition minus the level, in LSB."""
    st = steady(p, 2) if st is None else st
    return (st["acquired"][:, S] - p.level) / p.lsb


def input_current(p: Params, st: dict) -> np.ndarray:
    """Average current from the source: C_f·w(T) per period."""
    return p.full(p.c_f) * st["end"][:, W] * p.full(p.rate)


def _grid(p: Params) -> np.ndarray:
    return np.concatenate([[0.0], np.geomspace(GRID_FIRST * p.t_acq, p.t_acq, GRID_POINTS - 1)])


def _at(st: dict, dt: np.ndarray) -> np.ndarray:
    """(v_p, v_s) at the grid times ``dt`` (T,) into the acquisition: (S, T, 2)."""
    return switched.waveform(st["a"][:, :2, :2], st["b"][:, :2], st["reset"][:, :2], dt)


def _on_grid(p: Params, st: dict) -> tuple[np.ndarray, np.ndarray]:
    """The search grid and (v_p, v_s) on it, kept in ``st`` for the next search."""
    if "grid" not in st:
        t = _grid(p)
        st["grid"] = (t, _at(st, t))
    return st["grid"]


def kickback(p: Params, st: dict) -> np.ndarray:
    """Largest drop of the pin below its value when the switch closes, during the acquisition."""
    t, x = _on_grid(p, st)
    vp = x[:, :, P]
    rows = np.arange(len(vp))
    j = np.argmin(vp, axis=1)
    lo = t[np.maximum(j - 1, 0)]
    hi = t[np.minimum(j + 1, len(t) - 1)]
    # Golden-section search for the minimum between the grid's neighbours.
    c, d = hi - GOLDEN * (hi - lo), lo + GOLDEN * (hi - lo)
    fc, fd = _pin(st, c), _pin(st, d)
    for _ in range(REFINE_STEPS):
        left = fc <= fd
        hi, lo = np.where(left, d, hi), np.where(left, lo, c)
        x = np.where(left, hi - GOLDEN * (hi - lo), lo + GOLDEN * (hi - lo))
        fx = _pin(st, x)
        c, d, fc, fd = (np.where(left, x, d), np.where(left, c, x),
                        np.where(left, fx, fd), np.where(left, fc, fx))
    lowest = np.minimum(vp[rows, j], np.minimum(fc, fd))
    return np.maximum(vp[:, 0] - lowest, 0.0)


def _pin(st: dict, dt: np.ndarray) -> np.ndarray:
    return _per_row(st, dt)[:, P]


def _per_row(st: dict, dt: np.ndarray) -> np.ndarray:
    a, b = st["a"][:, :2, :2], st["b"][:, :2]
    return switched.waveform(a, b, st["reset"][:, :2], dt[:, None])[:, 0, :]


def acquisition_settling(p: Params, st: dict) -> np.ndarray:
    """Time from the switch closing until v_s stays within ½ LSB of the level; NaN if never.

    After the acquisition the sampling capacitor holds, so "stays" means until
    the end of the acquisition.
    """
    t, x = _on_grid(p, st)
    vs = x[:, :, S]
    outside = np.abs(vs - p.level) > 0.5 * p.lsb
    last = len(t) - 1 - np.argmax(outside[:, ::-1], axis=1)
    never_out = ~outside.any(axis=1)
    lo, hi = t[last], t[np.minimum(last + 1, len(t) - 1)]
    for _ in range(REFINE_STEPS):
        mid = 0.5 * (lo + hi)
        out = np.abs(_per_row(st, mid)[:, S] - p.level) > 0.5 * p.lsb
        lo, hi = np.where(out, mid, lo), np.where(out, hi, mid)
    ts = np.where(outside[:, -1], np.nan, hi)
    return np.where(never_out, 0.0, ts)


def max_sample_rate(p: Params) -> np.ndarray:
    """Highest rate (same acquisition time) with |sample_error| ≤ ½ LSB; NaN if none.

    Bisection in log-rate per row between a rate where the filter fully
    recovers and 1/acquisition (no hold time left); returns the passing side.
    """
    f_top = 1.0 / p.t_acq
    rows = p.rows

    def ok(f):
        return np.abs(sample_error(replace(p, rate=f))) <= 0.5

    hi = np.full(rows, f_top * (1 - 1e-9))
    lo = np.full(rows, f_top * RATE_FLOOR)
    ok_hi, ok_lo = ok(hi), ok(lo)
    for _ in range(RATE_STEPS):
        mid = np.sqrt(lo * hi)
        good = ok(mid)
        lo, hi = np.where(good, mid, lo), np.where(good, hi, mid)
    return np.where(ok_hi, f_top, np.where(ok_lo, lo, np.nan))


def curves(p: Params, c_nominal: float, pin_c: float) -> dict:
    """Arrays for the note, for the first row of ``p`` (the nominal design)."""
    one = replace(p, r_t=p.full(p.r_t)[:1], c_f=p.full(p.c_f)[:1], rate=p.full(p.rate)[:1])
    f_top = 1.0 / p.t_acq
    f0 = float(one.rate[0])
    rates = np.geomspace(min(f0 / 100, f_top / 1e3), f_top * 0.999, CURVE_POINTS)
    err_rate = sample_error(replace(one, r_t=np.full(CURVE_POINTS, one.r_t[0]),
                                    c_f=np.full(CURVE_POINTS, one.c_f[0]), rate=rates))
    cs = np.geomspace(c_nominal / 100, c_nominal * 100, CURVE_POINTS)
    sub = replace(one, r_t=np.full(CURVE_POINTS, one.r_t[0]), c_f=cs + pin_c,
                  rate=np.full(CURVE_POINTS, f0))
    st_c = steady(sub, 2)
    err_c = sample_error(sub, st_c)
    kick_c = kickback(sub, st_c)
    return {"rates": rates, "error_rate": err_rate, "c": cs, "error_c": err_c,
            "kickback_c": kick_c, **_wave(one)}


def _wave(one: Params) -> dict:
    """Pin and sampled voltage over a few periods in the steady state (nominal row)."""
    st = steady(one, 2)
    period = 1.0 / float(one.rate[0])
    a0, b0 = matrices(one, closed=False)
    t_acq = np.linspace(0.0, one.t_acq, WAVE_POINTS)
    t_hold = np.linspace(0.0, period - one.t_acq, WAVE_POINTS)
    x_acq = _at(st, t_acq)[0]
    x_hold = switched.waveform(a0[:, :2, :2], b0[:, :2], st["acquired"][:, :2], t_hold)[0]
    t1 = np.concatenate([t_acq, one.t_acq + t_hold])
    x1 = np.concatenate([x_acq, x_hold])
    t = np.concatenate([t1 + k * period for k in range(WAVE_PERIODS)])
    x = np.concatenate([x1] * WAVE_PERIODS)
    return {"t": t, "pin": x[:, P], "sampled": x[:, S], "period": period}
