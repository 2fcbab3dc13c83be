"""rcdoc.analysis.small_linalg against numpy.linalg itself, bit for bit: the
eigenvalues and inverses of stacks of 1×1 matrices (a first-order stage's
pencils), at magnitudes decades apart and at the edges where numpy's LAPACK
scales (about 1e-138 and 1e138) or refuses (a singular or non-finite matrix)."""

import numpy as np
import pytest

from rcdoc.analysis import small_linalg


def _stack(rng, lo, hi, n=20000):
    return rng.standard_normal((n, 1, 1)) * 10.0 ** rng.uniform(lo, hi, (n, 1, 1))


@pytest.mark.parametrize("lo,hi", [(-3, 3), (-130, 130), (-160, -120), (120, 160), (-310, 308)])
def test_one_by_one_is_numpys(lo, hi):
    rng = np.random.default_rng(abs(lo) + hi)
    M = _stack(rng, lo, hi)
    for fn in ("eigvals", "inv"):
        got, ref = getattr(small_linalg, fn)(M), getattr(np.linalg, fn)(M)
        assert got.dtype == ref.dtype and got.shape == ref.shape
        assert np.array_equal(got, ref), fn


def test_edges_and_other_shapes_go_to_numpy():
    rng = np.random.default_rng(1)
    M = _stack(rng, -3, 3, 10)
    for bad in (0.0, np.nan, np.inf):
        X = M.copy()
        X[4, 0, 0] = bad
        assert not small_linalg._plain(X)
    zeros = M.copy()
    zeros[[1, 3], 0, 0] = [0.0, -0.0]               # eigenvalues 0 and -0, as numpy's
    got, ref = small_linalg.eigvals(zeros), np.linalg.eigvals(zeros)
    assert small_linalg._plain(zeros, zero=True)
    assert np.array_equal(got, ref) and np.array_equal(np.signbit(got), np.signbit(ref))
    singular = M.copy()
    singular[2, 0, 0] = 0.0
    with pytest.raises(np.linalg.LinAlgError):
        small_linalg.inv(singular)                      # as numpy.linalg.inv
    with pytest.raises(np.linalg.LinAlgError):
        small_linalg.eigvals(np.where(M > 0, np.nan, M))   # as numpy.linalg.eigvals
    two = rng.standard_normal((50, 2, 2))
    assert np.array_equal(small_linalg.eigvals(two), np.linalg.eigvals(two))
    assert np.array_equal(small_linalg.inv(two), np.linalg.inv(two))
    cplx = M + 1j * M
    assert np.array_equal(small_linalg.eigvals(cplx), np.linalg.eigvals(cplx))
    assert small_linalg.eigvals(np.ones((1, 1))).tolist() == [1.0]
