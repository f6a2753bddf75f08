"""Drift by coupling (issue 11, item 7): a DC-coupled amplifier's electrode offset and
slow settling are normal; its drift is judged as an AC-coupled amplifier would pass it.

Outside references: scipy.signal.lfilter for the first-order high-pass the block means go
through; the real EEGMMIDB recording (tests/data, Schalk et al. 2004 via PhysioNet) as the
background. The 0.16-Hz corner is the common hardware high-pass of AC-coupled clinical
amplifiers (common practice; ACNS Guideline 1 asks for a low-frequency filter ≤ 1 Hz).
"""

from __future__ import annotations

import numpy as np
import pytest
import real_eeg
from scipy.signal import lfilter

from bedside.checks.engine import Engine
from bedside.checks.settings import load_quality
from bedside.checks.window_stats import BlockStats
from bedside.errors import InputError

from .real_run import channels_of, index_of, run

SITES = ["Fp1", "Fp2", "F7", "F3", "Fz", "F4", "F8", "T7", "C3", "Cz", "C4", "T8",
         "P7", "P3", "Pz", "P4", "P8", "O1", "O2"]


def _ten_twenty(seconds: float) -> real_eeg.Recording:
    rec = real_eeg.eegmmidb()
    keep = index_of(rec, SITES)
    return real_eeg.Recording(rec.name, rec.data_uv[: int(seconds * rec.rate_hz), keep],
                              tuple(rec.labels[i] for i in keep), ("EEG",) * 19, rec.rate_hz)


def test_block_means_high_pass_equals_scipy_lfilter() -> None:
    """BlockStats' high-passed block means are y[n] = a·(y[n−1] + m[n] − m[n−1]), started
    settled (y[0] = 0): scipy.signal.lfilter([a, −a], [1, −a]) of the means less the
    first, over the whole stream, whose newest blocks the window holds."""
    rate, block, n_blocks, c = 250.0, 62, 16, 3
    bs = BlockStats(c, block, n_blocks, 100, rate, highpass_hz=0.16)
    rng = np.random.default_rng(3)
    t = np.arange(60 * block) / rate
    x = rng.normal(0, 5.0, (len(t), c)) + np.array([30000.0, -500.0, 0.0]) + 80.0 * t[:, None]
    means = []
    for k in range(0, len(t), block):
        bs.add_block(x[k : k + block], k)
        means.append(x[k : k + block].mean(axis=0))
    m = np.array(means)
    rc = 1.0 / (2 * np.pi * 0.16)
    a = rc / (rc + block / rate)
    ref = lfilter([a, -a], [1.0, -a], m - m[0], axis=0)
    stats = bs.stats()
    assert stats.block_means_hp_uv is not None
    np.testing.assert_allclose(stats.block_means_hp_uv, ref[-n_blocks:], rtol=1e-9, atol=1e-9)
    # Without a corner there is no high-passed copy.
    plain = BlockStats(c, block, n_blocks, 100, rate)
    plain.add_block(x[:block], 0)
    assert plain.stats().block_means_hp_uv is None


def _engine(rec: real_eeg.Recording, coupling: str | None) -> Engine:
    return Engine(load_quality(), channels_of(rec), rec.rate_hz, amplifier_range_uv=300000.0,
                  coupling=coupling)


def test_dc_settling_is_normal_on_a_dc_amplifier_and_a_fault_on_any() -> None:
    """C3 carries a 30-mV electrode offset settling at 200 µV/s (12 mV a minute: active
    electrodes on a DC-coupled amplifier), on the real recording. Unknown coupling: that
    is drift (its slope is above the 120 µV/s check threshold). DC-coupled: good — an
    AC amplifier's 0.16-Hz high-pass would hold it at a steady 200 µV·s × 1 s, no slope.
    Both still flag F4's wander of 600 µV at 0.5 Hz (above the corner: a DC amplifier
    passes it and so would an AC one), and the offset is judged against the range."""
    rec = _ten_twenty(40.0)
    x = rec.data_uv.copy()
    t = np.arange(len(x)) / rec.rate_hz
    c3, f4 = SITES.index("C3"), SITES.index("F4")
    x[:, c3] += 30000.0 + 200.0 * t
    x[:, f4] += 600.0 * np.sin(2 * np.pi * 0.5 * t)
    after = 10.0
    for coupling, c3_flagged in ((None, True), ("dc", False)):
        r = run(_engine(rec, coupling), x)
        c3_levels = {lv for tt, lv in r.check_level("C3", "drift") if tt > after}
        f4_levels = {lv for tt, lv in r.check_level("F4", "drift") if tt > after}
        assert (c3_levels != {"good"}) is c3_flagged, (coupling, c3_levels)
        assert "good" not in f4_levels, (coupling, f4_levels)
    # The offset is 10 % of a ±300 mV range: not flagged; at 95 % it is, whatever the coupling.
    x2 = rec.data_uv.copy()
    x2[:, c3] += 285000.0
    r = run(_engine(rec, "dc"), x2)
    assert {lv for tt, lv in r.check_level("C3", "drift") if tt > after} == {"bad"}


def test_dc_reason_says_what_was_judged() -> None:
    rec = _ten_twenty(20.0)
    x = rec.data_uv.copy()
    t = np.arange(len(x)) / rec.rate_hz
    x[:, SITES.index("F4")] += 600.0 * np.sin(2 * np.pi * 0.5 * t)
    frame = run(_engine(rec, "dc"), x).frames[-1]
    reason = next(c for c in frame.channels if c.name == "F4").reasons
    assert any("beyond a DC amplifier's slow settling" in r for r in reason), reason


def test_unknown_coupling_is_refused() -> None:
    rec = _ten_twenty(5.0)
    with pytest.raises(InputError, match="accepted: ac, dc"):
        Engine(load_quality(), channels_of(rec), rec.rate_hz, coupling="AC/DC")
