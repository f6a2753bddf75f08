"""The block IIR (bedside/checks/blockfilter.py) against scipy.signal.sosfilt itself."""

from __future__ import annotations

import numpy as np
import pytest
from scipy.signal import sosfilt, sosfilt_zi

from bedside.checks.blockfilter import PIECE, BlockIIR
from bedside.checks.bridging import design_band


@pytest.mark.parametrize("rate_hz", [160.0, 256.0, 600.0])
def test_blocks_of_any_length_give_sosfilts_output(rate_hz: float) -> None:
    # Reference: SciPy's sosfilt over the whole signal at once, from the same steady state.
    sos = design_band(rate_hz, 0.5, 30.0)
    rng = np.random.default_rng(5)
    c = 7
    x = np.cumsum(rng.standard_normal((3000, c)), axis=0) + 40.0 * rng.standard_normal((3000, c))
    zi = sosfilt_zi(sos)[:, :, None] * x[0][None, None, :]
    ref, _ = sosfilt(sos, x, axis=0, zi=zi)
    f = BlockIIR(sos, c)
    f.start_at(x[0])
    lengths = [64, 64, 1, 17, PIECE + 1, 3 * PIECE + 5, 64, 0, 2]
    out, pos = [], 0
    while pos < len(x):
        n = lengths[len(out) % len(lengths)]
        out.append(f.filter(x[pos : pos + n]))
        pos += n
    got = np.concatenate(out, axis=0)
    assert got.shape == ref.shape
    np.testing.assert_allclose(got, ref, rtol=0, atol=1e-9 * np.abs(ref).max())


def test_filter_before_start_is_refused() -> None:
    f = BlockIIR(design_band(256.0, 0.5, 30.0), 2)
    with pytest.raises(RuntimeError, match="start_at"):
        f.filter(np.zeros((4, 2)))
