"""The QR triangle in row blocks against numpy's own QR (reference library)."""

from __future__ import annotations

import numpy as np
import pytest

from engine.fitting.triangle import qr_triangle


@pytest.mark.parametrize("n", [50, 4096, 4097, 9001])
def test_equals_numpys_triangle_up_to_row_signs(n):
    rng = np.random.default_rng(n)
    A = rng.normal(size=(n, 12)) * np.logspace(0, 6, 12)  # columns of very different scale
    R = qr_triangle(A)
    want = np.linalg.qr(A, mode="r")
    assert R.shape == want.shape == (12, 12)
    assert np.allclose(np.triu(R), R)
    signs = np.sign(np.diag(R)) * np.sign(np.diag(want))
    np.testing.assert_allclose(R * signs[:, None], want, rtol=1e-9, atol=1e-9 * np.abs(want).max())


def test_least_squares_on_the_triangle_equal_numpys_lstsq():
    # |b - A c| and |Q'b - R c| differ by a constant: same minimizer, last diagonal entry the
    # residual length
    rng = np.random.default_rng(1)
    A = np.column_stack([np.ones(10000), rng.normal(size=(10000, 5))])
    b = A @ rng.normal(size=6) + rng.normal(size=10000)
    R = qr_triangle(np.column_stack([A, b]))
    coef = np.linalg.solve(R[:6, :6], R[:6, 6])
    want, resid, *_ = np.linalg.lstsq(A, b, rcond=None)
    np.testing.assert_allclose(coef, want, rtol=1e-10)
    assert R[6, 6] ** 2 == pytest.approx(resid[0], rel=1e-9)
