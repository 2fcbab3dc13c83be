"""numpy.linalg's eigenvalues and inverses of a stack of 1×1 matrices, without a
LAPACK call per matrix.

What it is for: a first-order stage's pencils are 1×1 in every row of the batch,
and numpy.linalg runs LAPACK's general routine on each (eigvals: a third of a
millisecond per thousand). The eigenvalue of [a] is a and its inverse 1/a: the
same numbers LAPACK returns (dgeev leaves a matrix alone unless its norm is
outside about 1e-138…1e138, where it scales and rounds; dgesv's one division
is 1/a), so the short path is taken only inside 1e-130…1e130 (and at zero for the
eigenvalues: a noise source's numerator pencil often is [0]), and anything else
goes to numpy.linalg itself.

What it must not do: change a number (tests/test_small_linalg.py compares with
numpy.linalg bit for bit) or swallow numpy's errors (a singular matrix still
raises LinAlgError).
"""

from __future__ import annotations

import numpy as np

# Inside this band of magnitudes dgeev neither scales nor balances a 1×1 matrix.
_SAFE_LOW, _SAFE_HIGH = 1e-130, 1e130


def _plain(M: np.ndarray, zero: bool = False) -> bool:
    """A real stack of 1×1 matrices whose entries are finite and within the band, or
    (``zero``) exactly zero: dgeev leaves a zero matrix unscaled too."""
    if M.ndim < 2 or M.shape[-1] != 1 or M.shape[-2] != 1 or np.iscomplexobj(M):
        return False
    a = np.abs(M)
    with np.errstate(invalid="ignore"):
        inside = (a >= _SAFE_LOW) & (a <= _SAFE_HIGH)
        return bool(np.all(inside | (a == 0) if zero else inside))


def eigvals(M: np.ndarray) -> np.ndarray:
    """np.linalg.eigvals(M)."""
    if _plain(M, zero=True):
        return M[..., 0].copy()          # real eigenvalues: numpy's real dtype too
    return np.linalg.eigvals(M)


def inv(M: np.ndarray) -> np.ndarray:
    """np.linalg.inv(M)."""
    if _plain(M):
        return 1.0 / M
    return np.linalg.inv(M)
