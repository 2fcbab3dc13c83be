"""The time march of the dynamic states against the full-state march it replaced.

rcdoc.analysis.transient marches only the states that carry charge or flux
and forms each probe from them with regrouped weights (A = w·M[:, D],
a0 = w·k0, a1 = w·k1). That is the same algebra as stepping every state,
x[n+1] = M·x[n] + k0·u[n] + k1·u[n+1], and reading y = w·x: both must agree
to rounding (relative to each probe's own size) on random networks, on
single-state networks (the output marched in place) and on an unstable one,
for shared and per-sample inputs, both input modes, from rest and from the
DC point, with and without on-the-fly reductions (common practice: two
formulations of one recurrence agree). Outside references for the march as a
whole: scipy.signal.lsim on the same transfer function for a Q of 0.5 and 300
and for values decades apart, and the textbook step response of a repeated
real pole, 1 − e^(−t/τ)·(1 + t/τ).
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy import signal

from rcdoc.analysis import engine
from rcdoc.analysis import poles as polemod
from rcdoc.analysis import transient as tr
from rcdoc.analysis.network import Element, Network, OpAmp
from rcdoc.analysis.transient import Reduce

from test_stability import _random_network


def _full_march(network, values, t, u, probes, initial="rest", input_mode="linear"):
    """Every state stepped by the Radau IIA step matrices, every probe w·x (no state skipped)."""
    system, spec, _, samples = tr._conditioned(network, values, probes)
    h = t[1] - t[0]
    M, k0, k1 = tr._step_matrices(system.G, system.C, system.b, h, hold=input_mode == "hold")
    uu = np.broadcast_to(np.atleast_2d(np.asarray(u, dtype=float)), (samples, t.size))
    x = np.zeros((samples, system.size))
    if initial == "dc":
        x = np.linalg.solve(system.G, (system.b[None, :] * uu[:, :1])[..., None])[..., 0]
    xs = [x]
    for n in range(t.size - 1):
        x = np.einsum("sij,sj->si", M, x) + k0 * uu[:, n:n + 1] + k1 * uu[:, n + 1:n + 2]
        xs.append(x)
    y = np.einsum("spn,snt->spt", spec.weights, np.stack(xs, axis=-1))
    out = {}
    for p, name in enumerate(spec.names):
        out[name] = y[:, p]
        if p in spec.derivative:
            out[name] = spec.derivative[p][:, None] * tr._derivative(y[:, p], h, periodic=False)
    return out


def _spread(vals, samples, rng):
    return {k: v * rng.uniform(0.8, 1.25, samples) for k, v in vals.items()}


def _probes(net):
    names = [net.output] + [f"v:{e.name}" for e in net.elements]
    return names + [f"i:{e.name}" for e in net.elements if e.kind in ("R", "L")]


def _close(a, b, rel=1e-11):
    """Equal to rounding: within rel of the larger of the two rows' largest magnitudes."""
    scale = np.maximum(np.max(np.abs(a), axis=-1, keepdims=True),
                       np.max(np.abs(b), axis=-1, keepdims=True))
    err = np.abs(a - b)
    np.testing.assert_array_less(err, np.broadcast_to(rel * scale + 1e-300, err.shape))


def _single_rc():
    """One capacitor behind a source resistance: one marched state, the output itself
    (recorded in place), the resistor voltages affine in it."""
    net = Network(elements=(Element("rs", "R", "src", "in"), Element("r", "R", "in", "out"),
                            Element("c", "C", "out", "0")), drive="src", output="out")
    return net, {"rs": np.array([50.0]), "r": np.array([4.7e3]), "c": np.array([1e-8])}


def _single_hp():
    """A high-pass: one marched state, probes with other weights than 1 on it."""
    net = Network(elements=(Element("rs", "R", "src", "in"), Element("c", "C", "in", "out"),
                            Element("r", "R", "out", "0")), drive="src", output="out")
    return net, {"rs": np.array([50.0]), "r": np.array([1e4]), "c": np.array([1e-8])}


def _growing_rc():
    """An unstable sample: a capacitor fed back through R from an amplifier of gain
    1 + rf/rg = 3 that reads it; C·v' = (u − v)/Rin + (3v − v)/R grows as e^(t/RC)
    (textbook nodal equation). The march must carry its numbers as the full march
    does; the metrics then mark such rows missing."""
    net = Network(elements=(Element("rin", "R", "in", "a"), Element("r", "R", "out", "a"),
                            Element("c", "C", "a", "0"), Element("rf", "R", "out", "m"),
                            Element("rg", "R", "m", "0")), drive="in", output="out",
                  opamps=(OpAmp("u1", plus="a", minus="m", out="out"),))
    return net, {"rin": np.array([1e3]), "r": np.array([1e3]), "c": np.array([1e-7]),
                 "rf": np.array([2e3]), "rg": np.array([1e3])}


@pytest.mark.parametrize("seed", [-3, -2, -1] + list(range(10)))
def test_march_of_the_dynamic_states_equals_the_full_march(seed):
    rng = np.random.default_rng(100 + seed)
    single = {-1: _single_rc, -2: _single_hp, -3: _growing_rc}
    net, vals = single[seed]() if seed < 0 else _random_network(rng, int(rng.integers(2, 6)))
    vals = _spread(vals, 5, rng)
    poles = polemod.poles(net, vals)
    assert polemod.unstable(poles).all() == (seed == -3)
    slow = np.nanmin(np.abs(poles.real[np.isfinite(poles)]))
    t = np.linspace(0.0, 12.0 / slow, 301)
    probes = _probes(net)
    cases = [
        (np.full(t.size, 2.5), "rest", "linear"),                           # a step
        (np.where(t < t[-1] / 3, 1.0, -0.5), "dc", "hold"),                  # edges on the grid
        (np.sin(t / t[-1] * 7.0), "dc", "linear"),                            # changes every step
        (rng.normal(size=(5, t.size)), "rest", "linear"),                     # one input per sample
    ]
    for u, initial, mode in cases:
        got = engine.transient(net, vals, t, u, probes, initial=initial, input_mode=mode)
        ref = _full_march(net, vals, t, u, probes, initial, mode)
        for name in probes:
            _close(got[name], ref[name])


@pytest.mark.parametrize("step", [False, True])
def test_reductions_of_the_dynamic_march_equal_those_of_the_full_march(step):
    # The reductions (numpy max, sum, indexing: a general-purpose library) of the full
    # march's probes, against the ones folded on the fly from the marched states (for
    # a step, from the closed-form runs).
    rng = np.random.default_rng(7)
    net, vals = _random_network(rng, 4)
    vals = _spread(vals, 6, rng)
    t = np.linspace(0.0, 1e-3, 203)
    u = np.full(t.size, 3.0) if step else np.where(t < 4e-4, 3.0, 0.0)
    names = [e for e in _probes(net) if e.startswith("v:")]
    red = Reduce(windows=((1, 100), (100, t.size)), at=(0, 1, 2, 3, 99, t.size - 1))
    got = engine.transient(net, vals, t, u, names, initial="rest", input_mode="hold",
                           reduce={n: red for n in names[1:]})
    ref = _full_march(net, vals, t, u, names, "rest", "hold")
    _close(got[names[0]], ref[names[0]])
    for name in names[1:]:
        y, a = ref[name], got[name]
        size = np.max(np.abs(y), axis=1)
        np.testing.assert_allclose(red.absmax(a), np.abs(y).max(axis=1), rtol=1e-11, atol=0)
        for lo, hi in red.windows:
            np.testing.assert_allclose(red.sumsq(a, (lo, hi)), (y[:, lo:hi] ** 2).sum(axis=1),
                                       rtol=0, atol=1e-10 * (hi - lo) * np.max(size ** 2))
        for i in red.at:
            np.testing.assert_array_less(np.abs(red.value(a, i) - y[:, i]), 1e-11 * size + 1e-300)


def _series_rlc(q: np.ndarray, w0: float = 2 * np.pi * 1e3):
    """Series R–L into C (output across C): H(s) = w0²/(s² + s·w0/Q + w0²)."""
    c = np.full(q.shape, 1e-7)
    ind = 1.0 / (w0 ** 2 * c)
    r = np.sqrt(ind / c) / q
    net = Network(elements=(Element("r", "R", "in", "a"), Element("l", "L", "a", "b"),
                            Element("c", "C", "b", "0")), drive="in", output="b")
    return net, {"r": r, "l": ind, "c": c}


@pytest.mark.parametrize("q", [0.5, 0.7071, 5.0, 300.0])
@pytest.mark.slow
def test_second_order_step_from_q_half_to_300_matches_scipy(q):
    # Source: scipy.signal.lsim of w0²/(s² + s·w0/Q + w0²) on a fine grid, sampled.
    w0 = 2 * np.pi * 1e3
    net, vals = _series_rlc(np.array([q, q * 1.01]))
    t = np.linspace(0.0, 8e-3, 8001)
    y = engine.step(net, vals, t)
    for row in range(2):
        qq = q * (1.0, 1.01)[row]
        _, ref, _ = signal.lsim(([w0 ** 2], [1.0, w0 / qq, w0 ** 2]), np.ones(t.size), t)
        np.testing.assert_allclose(y[row], ref, atol=2e-6 * max(1.0, np.max(np.abs(ref))))


def test_values_decades_apart_match_scipy():
    # Two RC sections, 1 Ω / 1 µF beside 1 MΩ / 10 pF (time constants 1e-6 s and 1e-5 s,
    # impedances six decades apart), against scipy.signal.lsim of the textbook ladder
    # H(s) = 1/(s²·R1C1R2C2 + s(R1C1 + R2C2 + R1C2) + 1).
    r1, c1, r2, c2 = 1.0, 1e-6, 1e6, 1e-11
    net = Network(elements=(Element("r1", "R", "in", "a"), Element("c1", "C", "a", "0"),
                            Element("r2", "R", "a", "out"), Element("c2", "C", "out", "0")),
                  drive="in", output="out")
    t = np.linspace(0.0, 2e-4, 4001)
    y = engine.step(net, {"r1": r1, "c1": c1, "r2": r2, "c2": c2}, t)[0]
    den = [r1 * c1 * r2 * c2, r1 * c1 + r2 * c2 + r1 * c2, 1.0]
    _, ref, _ = signal.lsim(([1.0], den), np.ones(t.size), t)
    np.testing.assert_allclose(y, ref, atol=1e-6)


def test_repeated_pole_matches_the_textbook():
    # Two equal RC sections with a unity buffer between them: a double pole at −1/τ.
    # Textbook: the step response of 1/(1 + sτ)² is 1 − e^(−t/τ)·(1 + t/τ).
    tau = 1e-3
    net = Network(elements=(Element("r1", "R", "in", "a"), Element("c1", "C", "a", "0"),
                            Element("r2", "R", "b", "out"), Element("c2", "C", "out", "0")),
                  drive="in", output="out",
                  opamps=(OpAmp("u1", plus="a", minus="b", out="b"),))
    t = np.linspace(0.0, 20 * tau, 4001)
    y = engine.step(net, {"r1": 1e3, "c1": 1e-6, "r2": 1e3, "c2": 1e-6}, t)[0]
    np.testing.assert_allclose(y, 1 - np.exp(-t / tau) * (1 + t / tau), atol=1e-9)


def _two_sections(r1, c1, r2, c2, buffered=False):
    """Two RC sections (a unity buffer between them if ``buffered``: then the poles are
    −1/(r1·c1) and −1/(r2·c2), repeated where those are equal)."""
    if buffered:
        return Network(elements=(Element("r1", "R", "in", "a"), Element("c1", "C", "a", "0"),
                                 Element("r2", "R", "b", "out"), Element("c2", "C", "out", "0")),
                       drive="in", output="out", opamps=(OpAmp("u1", plus="a", minus="b", out="b"),)
                       ), {"r1": r1, "c1": c1, "r2": r2, "c2": c2}
    return Network(elements=(Element("r1", "R", "in", "a"), Element("c1", "C", "a", "0"),
                             Element("r2", "R", "a", "out"), Element("c2", "C", "out", "0")),
                   drive="in", output="out"), {"r1": r1, "c1": c1, "r2": r2, "c2": c2}


def _constant_cases():
    a = np.array
    yield "decades apart", _two_sections(a([1.0, 1.2]), a([1e-6, 1e-6]), a([1e6, 1e6]), a([1e-11, 1e-8]))
    yield "stiff", _two_sections(a([1.0, 10.0]), a([1e-9, 1e-9]), a([1e5, 1e5]), a([1e-6, 1e-6]))
    yield "repeated", _two_sections(a([1e3, 1e3]), a([1e-6, 1e-6]), a([1e3, 1e3 * (1 + 1e-7)]),
                                    a([1e-6, 1e-6]), buffered=True)
    for q in (0.5, 300.0):
        yield f"Q {q}", _series_rlc(np.array([q, q * 1.01]))
    yield "unstable", _growing_rc()
    yield "single", _single_rc()


@pytest.mark.parametrize("case", list(range(7)))
def test_step_in_closed_form_runs_equals_the_per_step_march(case):
    # The step drive's march in closed form per run (z[n0+l] = M^l·z[n0] + S_l·g) is the
    # per-step recursion regrouped: on the production grid length (4000 instants), for
    # time constants decades apart, a stiff pair, nearly repeated poles, Q of 0.5 and 300
    # and a growing (unstable) sample, every probe agrees with the full march to about
    # 1e-12 of its own size (common practice: two formulations of one recurrence).
    name, (net, vals) = list(_constant_cases())[case]
    poles = polemod.poles(net, vals)
    decay = np.abs(poles.real[np.isfinite(poles)])
    t = np.linspace(0.0, 24.0 / np.min(decay[decay > 0]), 4000)
    if name == "unstable":
        t = t[:400]                                 # e^(t/RC) grows; keep it finite
    probes = _probes(net)
    got = engine.transient(net, vals, t, np.full(t.size, 3.3), probes, initial="rest")
    ref = _full_march(net, vals, t, np.full(t.size, 3.3), probes, "rest")
    for p in probes:
        _close(got[p], ref[p], rel=2e-12)
    if name == "repeated":
        # Textbook: the step response of 1/(1 + sτ)² is 1 − e^(−t/τ)·(1 + t/τ).
        tau = 1e-3
        np.testing.assert_allclose(got[net.output][0] / 3.3,
                                   1 - np.exp(-t / tau) * (1 + t / tau), atol=1e-9)


def _march_per_step(M, k0, k1, x, u0, u1):
    """The march written plainly, one step at a time over the whole run of states:
    each step's products M_DD[:, i]·z_i summed in the order i = 0, 1, ..., then the
    forcing added (k0·u0 + k1·u1 as one term for a shared input, else in turn)."""
    Mt = np.ascontiguousarray(np.moveaxis(M, 0, -1))
    k0t, k1t = np.ascontiguousarray(k0.T), np.ascontiguousarray(k1.T)
    u0T, u1T = np.ascontiguousarray(u0.T), np.ascontiguousarray(u1.T)
    dyn = [j for j in range(Mt.shape[1]) if np.any(Mt[:, j, :] != 0)] or [0]
    mcols = np.ascontiguousarray(Mt[:, dyn, :])
    md = [np.ascontiguousarray(mcols[dyn, i, :]) for i in range(len(dyn))]
    stack = np.ascontiguousarray(np.stack(md)) if len(md) > 1 else None
    prod = np.empty_like(stack) if stack is not None else None
    kd0, kd1 = k0t[dyn], k1t[dyn]
    z = x.T[dyn]
    zs = [z]
    for n in range(u0T.shape[0]):
        nxt = np.empty_like(z)
        if stack is None:
            np.multiply(md[0], z[0], out=nxt)
        else:
            np.multiply(stack, z[:, None, :], out=prod)
            np.add(prod[0], prod[1], out=nxt)
            for i in range(2, len(md)):
                nxt += prod[i]
        if u0T.shape[1] == 1:
            nxt += kd0 * u0T[n] + kd1 * u1T[n]
        else:
            nxt += kd0 * u0T[n]
            nxt += kd1 * u1T[n]
        z = nxt
        zs.append(z)
    return np.stack(zs)


class _Keep:
    """A sink that keeps every run of marched states it is handed."""

    def __init__(self):
        self.runs = {}

    def bind(self, *args):
        pass

    def __call__(self, n0, zs):
        self.runs[n0] = zs.copy()


@pytest.mark.parametrize("case", list(range(6)))
def test_march_steps_equal_the_per_step_loop_bit_for_bit(case):
    # The march's runs, buffers and sink change no operation nor its order (common
    # practice: bookkeeping apart from arithmetic): every marched state equal, not
    # just close. A period's response from rest summed in closed form instead (4e-12
    # relative from the march, as close to a long-double march as it) moved the
    # example's pinned worst-case ripple by 2e-9: the ripple needs the march as it is.
    rng = np.random.default_rng(300 + case)
    net, vals = (_single_rc() if case == 0 else _random_network(rng, int(rng.integers(2, 6))))
    vals = _spread(vals, 7, rng)
    system, _, _, _ = tr._conditioned(net, vals, [net.output])
    h = 1e-6 * 10.0 ** rng.uniform(-2, 1)
    M, k0, k1 = tr._step_matrices(system.G, system.C, system.b, h, hold=bool(case % 2))
    steps = 100 + tr.RUN // 2                 # a last run shorter than the others
    if case in (2, 5):                        # one input per sample
        u = rng.normal(size=(7, steps + 1))
    else:                                     # a shared input with edges (a PWM wave)
        u = np.where(np.arange(steps + 1) % 40 < 17, 3.3, 0.0)[None, :]
    x = rng.normal(size=k0.shape)
    ref = _march_per_step(M, k0, k1, x, u[:, :-1], u[:, 1:])
    sink = _Keep()
    final = tr._march(M, k0, k1, x, u[:, :-1], u[:, 1:], sink)
    got = np.concatenate([sink.runs[n0][:-1] for n0 in sorted(sink.runs)])   # z[0 .. steps-1]
    assert got.shape == ref[:-1].shape and np.array_equal(got, ref[:-1])
    dyn = [j for j in range(M.shape[2]) if np.any(M[:, :, j] != 0)] or [0]
    assert np.array_equal(final[:, dyn], ref[-1].T)
