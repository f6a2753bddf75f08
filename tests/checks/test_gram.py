"""The block scatter through BLAS syrk (bedside/checks/gram.py) against NumPy's product."""

from __future__ import annotations

import numpy as np
import pytest

from bedside.checks.gram import add_gram, symmetrize


@pytest.mark.parametrize("n,c", [(1, 3), (64, 256), (17, 21)])
def test_add_gram_is_numpy_product_in_the_lower_triangle(n: int, c: int) -> None:
    # Reference: NumPy's general product x.T @ x (BLAS gemm); syrk computes the same sums.
    rng = np.random.default_rng(3)
    x = rng.standard_normal((n, c))
    out = np.zeros((c, c))
    add_gram(out, x, accumulate=False)
    ref = x.T @ x
    lower = np.tril_indices(c)
    np.testing.assert_allclose(out[lower], ref[lower], rtol=1e-12, atol=1e-12)
    assert not np.triu(out, 1).any()  # the strict upper triangle is left as it was (zero)
    y = rng.standard_normal((n + 5, c))
    add_gram(out, y, accumulate=True)
    np.testing.assert_allclose(symmetrize(out), ref + y.T @ y, rtol=1e-12, atol=1e-12)


def test_add_gram_of_a_view_and_refusal_of_a_copying_layout() -> None:
    rng = np.random.default_rng(4)
    ring = np.zeros((3, 8, 8))
    x = rng.standard_normal((10, 8))
    add_gram(ring[1], x[2:], accumulate=False)  # a slot of a ring, a row slice of the input
    np.testing.assert_allclose(symmetrize(ring[1]), x[2:].T @ x[2:], rtol=1e-12)
    assert not ring[0].any() and not ring[2].any()
    with pytest.raises(ValueError, match="C-ordered"):
        symmetrize(np.zeros((8, 8)).T[:, :])  # Fortran order: reshape would copy
