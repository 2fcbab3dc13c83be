"""rcdoc.analysis.switched: exact interval maps and the periodic steady state of switched networks."""

import numpy as np
import pytest
from scipy.integrate import solve_ivp
from scipy.linalg import expm as scipy_expm

from rcdoc.analysis import switched


def _rc_like(rng, rows, n, scale):
    """Stable matrices of the kind RC networks give: −(symmetric positive) + small skew."""
    q = rng.standard_normal((rows, n, n))
    return -(q @ q.transpose(0, 2, 1) + 0.1 * np.eye(n)) * scale[:, None, None]


def test_expm_matches_scipy_over_many_scales():
    # Source: scipy.linalg.expm (Al-Mohy & Higham scaling and squaring).
    rng = np.random.default_rng(3)
    scale = np.geomspace(1e-4, 1e7, 60)
    a = _rc_like(rng, 60, 4, scale)
    mine = switched.expm(a)
    for k in range(60):
        ref = scipy_expm(a[k])
        assert np.allclose(mine[k], ref, rtol=1e-9, atol=1e-12), k


def test_interval_is_the_textbook_rc_charge():
    # Textbook first-order RC: x(h) = V + (x0 − V)·e^(−h/τ), τ = RC; the rows use
    # different τ and h.
    tau = np.array([1e-6, 2e-3, 5.0])
    h = np.array([3e-7, 1e-3, 20.0])
    v, x0 = 2.5, np.array([[0.3], [-1.0], [4.0]])
    step = switched.interval((-1 / tau)[:, None, None], (v / tau)[:, None], h)
    got = step.apply(x0)[:, 0]
    assert got == pytest.approx(v + (x0[:, 0] - v) * np.exp(-h / tau), rel=1e-12)


@pytest.mark.slow
def test_periodic_state_matches_a_long_simulation():
    # Reference: scipy.integrate.solve_ivp marching many periods of a two-node RC
    # ladder driven by a square wave until it repeats.
    r1, r2, c1, c2, v, period, duty = 1e3, 2e3, 1e-9, 0.5e-9, 1.0, 3e-6, 0.3
    a = np.array([[-(1 / r1 + 1 / r2) / c1, 1 / (r2 * c1)], [1 / (r2 * c2), -1 / (r2 * c2)]])
    b_on = np.array([v / (r1 * c1), 0.0])
    maps = [switched.interval(a[None], b_on[None], duty * period),
            switched.interval(a[None], np.zeros((1, 2)), (1 - duty) * period)]
    x0 = switched.periodic_state(maps)[0]
    x = np.zeros(2)
    for _ in range(60):
        for b, h in ((b_on, duty * period), (np.zeros(2), (1 - duty) * period)):
            sol = solve_ivp(lambda t, y, b=b: a @ y + b, (0, h), x, method="DOP853",
                            rtol=1e-11, atol=1e-14)
            x = sol.y[:, -1]
    assert x0 == pytest.approx(x, abs=1e-8)
    after = switched.boundary_states(maps, x0[None])
    assert after[-1][0] == pytest.approx(x0, abs=1e-12)       # it does repeat


def test_reset_keeps_the_map_affine_and_an_undamped_state_is_missing():
    # Common practice: x_i := value is x ↦ R x + r with row i of R zeroed.
    m = switched.reset(2, 3, {1: 4.0})
    x = np.array([[1.0, 2.0, 3.0], [5.0, 6.0, 7.0]])
    assert m.apply(x).tolist() == [[1.0, 4.0, 3.0], [5.0, 4.0, 7.0]]
    # A state with dx/dt = 0 and no reset never forgets its start: no periodic
    # solution is singled out, so the row is NaN rather than a number.
    held = switched.interval(np.zeros((1, 1, 1)), np.zeros((1, 1)), 1.0)
    assert np.isnan(switched.periodic_state([held])).all()


def test_waveform_per_row_times():
    # Textbook first-order RC again, at per-row times.
    tau = np.array([1.0, 2.0])
    dt = np.array([[0.5, 1.0, 2.0], [0.1, 4.0, 8.0]])
    w = switched.waveform((-1 / tau)[:, None, None], (1 / tau)[:, None],
                          np.zeros((2, 1)), dt)[..., 0]
    assert w == pytest.approx(1 - np.exp(-dt / tau[:, None]), rel=1e-12)
