"""Time responses of a Network, vectorised over Monte Carlo samples.

What it is for: the transient from a DC operating point or from rest, the
step response and the periodic steady state of a repeating input, stepped by
Radau IIA (order 5, L-stable) on a uniform grid, with probes on node
voltages and element voltages and currents.

What it must not do: know about stage kinds, parts or units, draw anything,
or loop in Python over samples (loops run over time steps, each batched over
all samples).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Mapping, Sequence

import numpy as np

from rcdoc.errors import ProjectError
from rcdoc.analysis.assembly import _SINGULAR_RCOND, System, _element_values, _rcond, assemble
from rcdoc.analysis.network import Network
from rcdoc.analysis.recording import RUN, Reduce, Recorder
from rcdoc.analysis.treecoords import driven_system

__all__ = ["INPUT_MODES", "Reduce", "transient", "step", "periodic_steady_state"]

# Working set for the time-domain loops (per-sample matrices and recorded probes).
_TIME_BYTES = 160e6


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


def _conditioned(network: Network, values: Mapping[str, np.ndarray], probes: Sequence[str]):
    """The system in tree-branch coordinates with the probes rewritten for them.

    Why: nodal stamping rounds 1/(1 GΩ) away beside 1/(1 mΩ), and the step
    matrices built from such G and C had eigenvalues of modulus 2500 where
    exp(p·h) is 0.99 (a Sallen-Key's step response blew up to 1e35 V). In
    tree coordinates each element keeps its own digits (see ``treecoords``).
    """
    nodal = assemble(network, values)
    vals, samples = _element_values(network, values)
    spec = _probes(network, nodal, vals, probes)
    system, T = driven_system(network, values, nodal)
    return system, _Probes(spec.names, spec.weights @ T, spec.derivative), vals, samples


def _prepare(network: Network, values: Mapping[str, np.ndarray], t_s, u, probes, reduce):
    """What transient and periodic_steady_state both start from: the conditioned system
    and probes, the step h, the input (S or 1, T), the reductions and the outputs."""
    system, spec, _, samples = _conditioned(network, values, probes)
    t, h = _time_grid(t_s)
    uu = _input(u, samples, t.size)
    reduce = dict(reduce or {})
    return system, spec, h, uu, reduce, _allocate(spec, reduce, samples, t.size)


def _chunk(size: int, steps: int, per_sample_input: bool) -> int:
    """Samples per block in the time loops: per-sample matrices, their solver copies and
    factorisations, a run of states, and the input where each sample has its own (the
    recorded probes are allocated once, the reduced ones are a few columns)."""
    per_sample = 8 * (16 * size * size + (RUN + 1) * size + (2 * steps if per_sample_input else 0))
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
    sink=None,
) -> np.ndarray:
    """Run x <- M·x + k0·u0[:, n] + k1·u1[:, n] for every column n of u0; return the final x (s, N).

    Only the states that carry charge or flux (the columns D of M with a
    nonzero; for one capacitor, one state of three) enter the next step, so
    only they are marched, z <- M[D, D]·z + forcing; the other states are
    M[:, D]·z plus input terms and are formed only at the end. With ``sink``
    given, sink.bind(D, M[:, D], k0, k1, u0, u1) (sample-last layouts) comes
    first, then sink(n0, zs) per run: zs (m+1, d, s) holds z at steps n0 .. n0+m.
    The loop runs over time only; each step is batched over the samples, which
    sit on the last, contiguous axis (numpy's small products run several times
    faster that way than with samples first).
    """
    steps = u0.shape[1]
    if steps == 0:
        return x
    Mt = np.ascontiguousarray(np.moveaxis(M, 0, -1))  # (N, N, s)
    k0t, k1t = np.ascontiguousarray(k0.T), np.ascontiguousarray(k1.T)  # (N, s)
    u0T, u1T = np.ascontiguousarray(u0.T), np.ascontiguousarray(u1.T)  # (T, s or 1)
    dyn = [j for j in range(Mt.shape[1]) if np.any(Mt[:, j, :] != 0)] or [0]
    mcols = np.ascontiguousarray(Mt[:, dyn, :])                       # (N, d, s)
    md = [np.ascontiguousarray(mcols[dyn, i, :]) for i in range(len(dyn))]  # (d, s) each
    kd0, kd1 = k0t[dyn], k1t[dyn]
    if sink is not None:
        sink.bind(dyn, mcols, k0t, k1t, u0T, u1T)
    # Runs of RUN steps with or without a sink: a run's states are rows of one
    # buffer, so a step reads the row the step before wrote (no copy per step).
    run = RUN
    buf = np.empty((run + 1, len(dyn), k0t.shape[1]))
    # The d products M_DD[:, i]·z_i of a step as one multiplication into `prod`
    # (d, d, s), then summed in the order i = 0, 1, ... as before: the same numbers.
    stack = np.ascontiguousarray(np.stack(md)) if len(md) > 1 else None   # (d, d, s)
    prod = np.empty_like(stack) if stack is not None else None
    home = getattr(sink, "home", None)
    forcing = _Forcing(kd0, kd1, u0T, u1T)
    shared = forcing.terms(steps) if forcing.shared else None
    z, prev = x.T[dyn], None
    for n0 in range(0, steps, run):
        m = min(run, steps - n0)
        b = home(n0, m) if home is not None else None
        b = buf if b is None else b         # a recorded probe's own rows, or a buffer
        b[0] = z
        for l in range(m):
            nxt, cur = b[l + 1], b[l]
            if stack is None:
                np.multiply(md[0], cur[0], out=nxt)
            else:
                np.multiply(stack, cur[:, None, :], out=prod)
                np.add(prod[0], prod[1], out=nxt)
                for i in range(2, len(md)):
                    nxt += prod[i]
            if shared is not None:
                nxt += shared[n0 + l]
            else:
                forcing.add(nxt, n0 + l)
        if sink is not None:
            sink(n0, b[:m + 1])
        if n0 + m == steps:
            prev = b[m - 1].copy()
        z = b[m]
    # The final state in full: the other states from the last step's dynamic ones.
    full = np.einsum("kjs,js->ks", mcols, prev) + k0t * u0T[-1] + k1t * u1T[-1]
    full[dyn] = z
    return np.ascontiguousarray(full.T)


def _constant_march(M: np.ndarray, k0: np.ndarray, k1: np.ndarray, x: np.ndarray, u: float,
                    weights: np.ndarray, outs: list, ss: slice, steps: int) -> None:
    """The recorded probes of a march whose input holds u at every step (a step drive),
    written into outs (T, S) rows 1 .. steps for the samples ``ss``; row 0 is the caller's.

    With g = (k0 + k1)·u the recursion z[n+1] = M_DD·z[n] + g_D of the marched states
    gives z[n0+l] = P_l·z[n0] + Q_l with P_l = M_DD^l and Q_l = (I + ... + M_DD^(l−1))·g_D,
    and a probe w·x[n0+l] = (w·M[:, D]·P_(l−1))·z[n0] + (w·M[:, D]·Q_(l−1) + w·g) (the
    other states are M[:, D]·z + g of the step before). Those rows and constants are
    formed once for l = 1 .. RUN; a run of RUN instants of a probe is then one sum of
    d + 1 products per instant and sample, and the d marched states are stepped once
    per run (the per-step march costs d² + d products per step, and forms the probe
    after). The same recursion regrouped: equal to rounding (tests/test_march.py)."""
    Mt = np.moveaxis(M, 0, -1)                                      # (N, N, s)
    dyn = [j for j in range(Mt.shape[1]) if np.any(Mt[:, j, :] != 0)] or [0]
    d, s, R = len(dyn), Mt.shape[2], min(RUN, steps)
    mcols = np.ascontiguousarray(Mt[:, dyn, :])                     # (N, d, s)
    g = np.ascontiguousarray(k0.T + k1.T) * u                      # (N, s)
    mdd, gd = mcols[dyn], g[dyn]                                    # (d, d, s), (d, s)
    P = np.zeros((R + 1, d, d + 1, s))          # columns 0..d−1: P_l; column d: Q_l
    for j in range(d):
        P[0, j, j] = 1.0
    for l in range(1, R + 1):
        P[l] = _mix(mdd, P[l - 1])
        P[l, :, d] += gd
    wt = np.ascontiguousarray(np.moveaxis(weights, 0, -1))         # (probes, N, s)
    A = _mix(wt, mcols)                                              # (probes, d, s)
    c = _mix(wt, g[:, None, :])[:, 0]                                # (probes, s)
    rows = np.stack([_mix(A, P[l]) for l in range(R)])               # (R, probes, d+1, s)
    rows[:, :, d] += c
    z = np.ones((d + 1, 1, s))                  # the states and a row of ones
    z[:d, 0] = x.T[dyn]
    tmp = np.empty((R, s))
    for n0 in range(0, steps, R):
        m = min(R, steps - n0)
        for p, out in enumerate(outs):
            y = out[n0 + 1:n0 + 1 + m, ss]
            np.multiply(rows[:m, p, 0], z[0, 0], out=y)
            for j in range(1, d):
                np.multiply(rows[:m, p, j], z[j, 0], out=tmp[:m])
                y += tmp[:m]
            y += rows[:m, p, d]
        z[:d] = _mix(P[m], z)


def _mix(A: np.ndarray, B: np.ndarray) -> np.ndarray:
    """Σ_i A[:, i]·B[i] per sample: A (k, n, s), B (n, j, s) -> (k, j, s), summed over
    i in order by elementwise products (numpy's einsum may change the order with the
    layout, e.g. for a block of one sample; a row's numbers must not depend on its
    block)."""
    out = A[:, 0, None, :] * B[0][None]
    for i in range(1, A.shape[1]):
        out += A[:, i, None, :] * B[i][None]
    return out


class _Forcing:
    """The input terms of the marched states at each step: k0·u0[n] + k1·u1[n]. One
    input for all samples (a step, a PWM wave) changes rarely: its two terms are
    then added as one, computed where the input changes."""

    def __init__(self, kd0, kd1, u0T, u1T):
        self.kd0, self.kd1, self.u0T, self.u1T = kd0, kd1, u0T, u1T
        self.shared = u0T.shape[1] == 1
        if self.shared:
            pair = np.concatenate([u0T, u1T], axis=1)
            new = np.flatnonzero(np.r_[True, np.any(pair[1:] != pair[:-1], axis=1)])
            self.at = {int(n): kd0 * u0T[n] + kd1 * u1T[n] for n in new}
            self.g = None

    def terms(self, steps: int) -> list:
        """The shared input's term at every step, as references to the few arrays
        computed where it changes (the march adds them: the same numbers as ``add``)."""
        out, g = [], None
        for n in range(steps):
            g = self.at.get(n, g)
            out.append(g)
        return out

    def add(self, nxt: np.ndarray, n: int) -> None:
        if self.shared:
            self.g = self.at.get(n, self.g)
            nxt += self.g
        else:
            nxt += self.kd0 * self.u0T[n]
            nxt += self.kd1 * self.u1T[n]


def _allocate(spec: "_Probes", reduce: Mapping[str, Reduce], samples: int, steps: int) -> dict:
    for name in reduce:
        if name not in spec.names:
            raise ValueError(f"reduced probe {name!r} is not among the probes")
        if spec.names.index(name) in spec.derivative:
            raise ValueError(f"a capacitor current ({name!r}) cannot be reduced on the fly")
    # Recorded probes are stored time-major (T, S) and handed out as (S, T) views:
    # the march writes whole runs at once, and searches along time read
    # contiguous blocks.
    return {name: (np.zeros((samples, reduce[name].width)) if name in reduce
                   else np.empty((steps, samples))) for name in spec.names}


def _results(spec: "_Probes", out: dict, reduce: Mapping[str, Reduce], h: float,
             periodic: bool) -> dict[str, np.ndarray]:
    result = {}
    for p, name in enumerate(spec.names):
        y = out[name] if name in reduce else out[name].T
        if p in spec.derivative and name not in reduce:
            y = spec.derivative[p][:, None] * _derivative(y, h, periodic=periodic)
        result[name] = y
    return result


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
    reduce: Mapping[str, Reduce] | None = None,
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
    Returns probe -> (S, T) float array; a probe named in ``reduce`` is not
    recorded but kept as its running reductions, an (S, width) array (see
    ``Reduce``; not for capacitor currents).
    """
    if initial not in ("dc", "rest"):
        raise ValueError("initial must be 'dc' or 'rest'")
    if input_mode not in INPUT_MODES:
        raise ValueError(f"input_mode must be one of {INPUT_MODES}")
    system, spec, h, uu, reduce, out = _prepare(network, values, t_s, u, probes, reduce)
    samples, steps = system.samples, uu.shape[1]
    use_dc = initial == "dc" and not _dc_singular(system)
    chunk = _chunk(system.size, steps, uu.shape[0] != 1)
    # One input held at every instant (a step) and every probe recorded: in closed form.
    constant = uu.shape[0] == 1 and not reduce and bool(np.all(uu == uu[0, 0]))

    for s0 in range(0, samples, chunk):
        ss = slice(s0, s0 + chunk)
        G, C = system.G[ss], system.C[ss]
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
        sink = Recorder(spec, reduce, out, ss, steps)
        sink.initial(x)
        if constant:
            _constant_march(M, k0, k1, x, float(uc[0, 0]), spec.weights[ss],
                            [out[name] for name in spec.names], ss, steps - 1)
        else:
            _march(M, k0, k1, x, uc[:, :-1], uc[:, 1:], sink)
    return _results(spec, out, reduce, h, periodic=False)


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
    *, input_mode: str = "linear", reduce: Mapping[str, Reduce] | None = None,
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
    minimum-norm value. Probes and ``reduce`` as for ``transient``.
    """
    if input_mode not in INPUT_MODES:
        raise ValueError(f"input_mode must be one of {INPUT_MODES}")
    system, spec, h, uu, reduce, out = _prepare(network, values, t_s, u, probes, reduce)
    samples, steps = system.samples, uu.shape[1]
    chunk = _chunk(system.size, steps, uu.shape[0] != 1)
    N = system.size

    for s0 in range(0, samples, chunk):
        ss = slice(s0, s0 + chunk)
        G, C = system.G[ss], system.C[ss]
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
        sink = Recorder(spec, reduce, out, ss, steps)
        sink.initial(x)
        _march(M, k0, k1, x, uc, u1, sink)
    return _results(spec, out, reduce, h, periodic=True)
