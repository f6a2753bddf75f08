"""Bridging against MNE-Python and against the definition of electrical distance.

Outside references: MNE-Python's mne.preprocessing.compute_bridged_electrodes (a
test-only dependency) on the same synthetic bridged recording must find the same
pairs; the electrical distance of Tenke & Kayser (2001) is var(V_i − V_j), checked
with numpy.var on the raw window.
"""

from __future__ import annotations

import mne
import numpy as np
from mne.preprocessing import compute_bridged_electrodes

from bedside.checks.bridging import pair_metrics, window_pair_metrics

from .helpers import TEN_TWENTY, analysis_copy, eeg_like, feed, make_engine

RATE = 256.0
BRIDGES = {("F3", "Fz"), ("O2", "P4")}


def _bridged_recording(seconds: float, seed: int = 7) -> np.ndarray:
    rng = np.random.default_rng(seed)
    n = int(seconds * RATE)
    x = eeg_like(n, len(TEN_TWENTY), RATE, seed=seed)
    x += eeg_like(n, 1, RATE, seed=seed + 1, rms_uv=5.0)  # a little shared activity
    idx = {name: i for i, name in enumerate(TEN_TWENTY)}
    for a, b in BRIDGES:
        # A gel bridge: both electrodes see one signal plus a little independent noise.
        x[:, idx[b]] = x[:, idx[a]] + rng.normal(0, 0.5, n)
    return x


def _pairs_from_frame(frame) -> set[tuple[str, str]]:  # type: ignore[no-untyped-def]
    return {tuple(sorted(f.electrodes)) for f in frame.findings if f.kind == "bridge"}  # type: ignore[misc]


def test_same_bridged_pairs_as_mne() -> None:
    x = _bridged_recording(60.0)
    info = mne.create_info(list(TEN_TWENTY), RATE, ch_types="eeg")
    raw = mne.io.RawArray(x.T * 1e-6, info, verbose="error")  # MNE holds volts, (C, n)
    bridged_idx, _ed = compute_bridged_electrodes(raw, verbose="error")
    mne_pairs = {tuple(sorted((TEN_TWENTY[i], TEN_TWENTY[j]))) for i, j in bridged_idx}
    all_pairs = [(a, b) for i, a in enumerate(TEN_TWENTY) for b in TEN_TWENTY[i + 1 :]]
    eng = make_engine(neighbours=all_pairs)
    frames = feed(eng, x)
    ours = _pairs_from_frame(frames[-1])
    assert mne_pairs == {tuple(sorted(p)) for p in BRIDGES}
    assert ours == mne_pairs
    # Both channels of each pair are red, and the reason names the partner.
    f3 = next(c for c in frames[-1].channels if c.name == "F3")
    assert f3.level_key == "bad" and any("Fz" in r for r in f3.reasons)


def test_placement_neighbours_find_the_same_pairs() -> None:
    """With the placement's neighbour graph (the default) the adjacent bridges are found too."""
    x = _bridged_recording(20.0, seed=9)
    frames = feed(make_engine(), x)
    assert _pairs_from_frame(frames[-1]) == {tuple(sorted(p)) for p in BRIDGES}


def test_electrical_distance_is_variance_of_difference() -> None:
    """ED_ij from the streaming covariance == numpy.var(x_i − x_j, ddof=1) over the window
    (Tenke & Kayser 2001 definition); correlation == numpy.corrcoef."""
    x = _bridged_recording(12.0, seed=3)
    x[:, 5] += 400.0  # a DC offset must not matter
    eng = make_engine()
    feed(eng, x, chunk=50)
    stats = eng.window_stats()
    assert stats is not None
    end = eng.analysis_samples  # the window is the newest complete blocks of the analysis copy
    window = analysis_copy(eng, x)[end - stats.n_samples : end]
    pairs = np.array([(3, 4), (0, 18), (5, 6), (15, 18)])
    ed, r = pair_metrics(stats.cov_uv2, pairs)
    ref_ed = [np.var(window[:, i] - window[:, j], ddof=1) for i, j in pairs]
    ref_r = [np.corrcoef(window[:, i], window[:, j])[0, 1] for i, j in pairs]
    np.testing.assert_allclose(ed, ref_ed, rtol=1e-8)
    np.testing.assert_allclose(r, ref_r, rtol=1e-8)
    # The engine's own path (pair entries only, no full matrix) gives the same numbers.
    ed2, r2 = window_pair_metrics(stats, pairs)
    np.testing.assert_allclose(ed2, ref_ed, rtol=1e-8)
    np.testing.assert_allclose(r2, ref_r, rtol=1e-8)


def test_two_flat_leads_are_not_a_bridge() -> None:
    """Two dead channels have ED ≈ 0 and are the flat check's business, not a bridge."""
    x = eeg_like(int(8 * RATE), len(TEN_TWENTY), RATE, seed=4)
    x[:, 3] = 0.0
    x[:, 4] = 0.0
    frame = feed(make_engine(), x)[-1]
    assert not _pairs_from_frame(frame)
    assert {c.name for c in frame.channels if c.checks.get("flat") == "bad"} == {"F3", "Fz"}
