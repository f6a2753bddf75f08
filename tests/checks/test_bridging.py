"""Bridging against MNE-Python and against the definition of electrical distance.

Outside references: MNE-Python's mne.preprocessing.compute_bridged_electrodes (a
test-only dependency) on the same recording must find the same pairs; the electrical
distance of Tenke & Kayser (2001) is var(V_i − V_j), checked with numpy.var on the
band-passed epoch (scipy.signal.sosfilt over the whole signal at once); MNE-Python's
default band-pass (mne.filter.create_filter) for the analysis band's response.
Real recordings: tests/checks/test_bridging_real.py.
"""

from __future__ import annotations

import mne
import numpy as np
import pytest
from mne.preprocessing import compute_bridged_electrodes
from scipy.signal import sosfilt, sosfilt_zi, sosfreqz

from bedside.checks.bridging import BridgeDetector, design_band, local_minimum
from bedside.checks.settings import load_quality

from .helpers import TEN_TWENTY, eeg_like, feed, make_engine

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
    """MNE-Python compute_bridged_electrodes on the same 60 s finds the same pairs."""
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
    """With the placement's neighbour graph (the default) the adjacent bridges are found too
    (the pairs MNE-Python finds in test_same_bridged_pairs_as_mne)."""
    x = _bridged_recording(20.0, seed=9)
    frames = feed(make_engine(), x)
    assert _pairs_from_frame(frames[-1]) == {tuple(sorted(p)) for p in BRIDGES}


def test_epoch_distance_is_variance_of_the_filtered_difference() -> None:
    """Fed in uneven chunks, each epoch's ED equals numpy.var (ddof=0, as MNE-Python's
    compute_bridged_electrodes uses) of the difference of the band-passed signals, the
    band-pass run by scipy.signal.sosfilt over the whole signal at once."""
    s = load_quality().bridging
    x = _bridged_recording(9.0, seed=3)
    x[:, 5] += 400.0
    pairs = np.array([(3, 4), (0, 18), (5, 6), (15, 18)])
    det = BridgeDetector(x.shape[1], RATE, pairs, s)
    pos, sizes = 0, [7, 300, 1, 64, 129]
    k = 0
    while pos < len(x):
        det.add(x[pos : pos + sizes[k % len(sizes)]])
        pos += sizes[k % len(sizes)]
        k += 1
    sos = design_band(RATE, s.l_freq_hz, s.h_freq_hz)
    y = sosfilt(sos, x, axis=0, zi=sosfilt_zi(sos)[:, :, None] * x[0][None, None, :])[0]
    hop, epoch = int(s.hop_s * RATE), int(s.epoch_s * RATE)
    ends = [e for e in range(epoch, len(x) + 1, hop)][-s.n_epochs :]
    ref = np.array([[np.var(y[e - epoch : e, i] - y[e - epoch : e, j]) for i, j in pairs] for e in ends])
    assert det.n_epochs == s.n_epochs == len(ends)
    np.testing.assert_allclose(det.pair_ed(), ref, rtol=1e-7)


def test_band_follows_mnes_default_filter() -> None:
    """Against MNE-Python's default 0.5–30 Hz FIR (mne.filter.create_filter), at several
    rates (the response is set in Hz, not in samples): the same half-amplitude point at
    0.25 Hz (within 0.02); gain within 0.1 from 1 to 31 Hz; below 1 Hz our first-order
    high-pass is gentler (measured: 0.42 against 0.32 at 0.2 Hz, 0.75 against 1.0 at
    0.5 Hz), within 0.26; both stop 50/60 Hz mains (< 0.01)."""
    low = np.array([0.2, 0.3, 0.5])
    band = np.array([1.0, 2.0, 10.0, 25.0, 30.0, 31.0])
    for rate in (160.0, 250.0, 600.0, 2048.0):
        h = mne.filter.create_filter(None, rate, 0.5, 30.0, verbose="error")
        spectrum = np.abs(np.fft.rfft(h, 1 << 18))

        def ref(f: np.ndarray, spectrum: np.ndarray = spectrum, rate: float = rate) -> np.ndarray:
            return spectrum[np.rint(f / rate * (1 << 18)).astype(int)]

        sos = design_band(rate, 0.5, 30.0)

        def ours(f: np.ndarray, sos: np.ndarray = sos, rate: float = rate) -> np.ndarray:
            return np.abs(sosfreqz(sos, worN=f, fs=rate)[1])

        half = np.array([0.25])
        np.testing.assert_allclose(ours(half), ref(half), atol=0.02)
        np.testing.assert_allclose(ours(band), ref(band), atol=0.1)
        np.testing.assert_allclose(ours(low), ref(low), atol=0.26)
        assert ours(np.array([50.0, 60.0])).max() < 0.01


def test_local_minimum_is_mnes() -> None:
    """On MNE-Python's own ED matrix of a bridged recording, local_minimum puts the cutoff
    where compute_bridged_electrodes does: the pairs under it are MNE-Python's pairs."""
    x = _bridged_recording(30.0, seed=5)
    raw = mne.io.RawArray(x.T * 1e-6, mne.create_info(list(TEN_TWENTY), RATE, "eeg"), verbose="error")
    idx, ed = compute_bridged_electrodes(raw, verbose="error")
    lm = local_minimum(ed, ed.shape[0], 16.0, 0.5)
    assert lm is not None
    iu = np.triu_indices(len(TEN_TWENTY), 1)
    ours = {(int(i), int(j)) for i, j in zip(*iu, strict=True)
            if (ed[:, i, j] < lm).sum() / ed.shape[0] > 0.5}
    assert ours == {(int(i), int(j)) for i, j in idx} and len(ours) == 2
    # Too few values under the ceiling: no cutoff at all (MNE-Python returns no pair).
    assert local_minimum(np.full((3, 10), 40.0), 3, 16.0, 0.5) is None


def test_two_flat_leads_are_not_a_bridge() -> None:
    """Two dead channels have ED ≈ 0 and are the flat check's business, not a bridge."""
    x = eeg_like(int(8 * RATE), len(TEN_TWENTY), RATE, seed=4)
    x[:, 3] = 0.0
    x[:, 4] = 0.0
    frame = feed(make_engine(), x)[-1]
    assert not _pairs_from_frame(frame)
    assert {c.name for c in frame.channels if c.checks.get("flat") == "bad"} == {"F3", "Fz"}


def test_two_noise_only_leads_are_not_a_bridge() -> None:
    """Two leads carrying the same sub-µV signal (below min_rms_uv in band) are not
    called bridged, even though their ED is tiny: the guard, ours."""
    s = load_quality().bridging
    rng = np.random.default_rng(2)
    x = eeg_like(int(8 * RATE), 4, RATE, seed=6)
    common = rng.normal(0, 0.3, len(x))
    x[:, 0] = common
    x[:, 1] = common
    det = BridgeDetector(4, RATE, np.array([(0, 1), (1, 2), (2, 3)]), s)
    det.add(x)
    _ed, _r, bridged, _lm, carrying = det.decide(np.ones(4, dtype=bool))
    assert not bridged.any() and carrying.tolist() == [False, False, True, True]


def test_binned_density_finds_the_same_cutoff(monkeypatch: pytest.MonkeyPatch) -> None:
    """Beyond EXACT_KDE_MAX values the density is summed over a histogram; on MNE-Python's
    own ED matrix of its sample EEG with a short injected (compute_bridged_electrodes,
    about 1900 values under 16 µV²) the binned cutoff selects the same pairs as
    scipy's gaussian_kde, and lies within one bin of it where the density has a valley."""
    import real_eeg

    import bedside.checks.bridging as bridging

    rec = real_eeg.mne_sample().pick("EEG")
    x = rec.data_uv.copy()
    avg = (x[:, 18] + x[:, 19]) / 2.0
    x[:, 18] = avg + np.random.default_rng(0).normal(0, 0.05, len(x))
    x[:, 19] = avg
    raw = mne.io.RawArray(x.T * 1e-6, mne.create_info(list(rec.labels), rec.rate_hz, "eeg"), verbose="error")
    idx, ed = compute_bridged_electrodes(raw, verbose="error")
    exact = local_minimum(ed, ed.shape[0], 16.0, 0.5)
    monkeypatch.setattr(bridging, "EXACT_KDE_MAX", 100)
    binned = local_minimum(ed, ed.shape[0], 16.0, 0.5)
    assert exact is not None and binned is not None
    assert abs(binned - exact) <= 16.0 / 100 or (exact < 1e-6 and binned < 1e-6)
    iu = np.triu_indices(ed.shape[1], 1)

    def pairs(lm: float) -> set[tuple[int, int]]:
        return {(int(i), int(j)) for i, j in zip(*iu, strict=True) if (ed[:, i, j] < lm).sum() / ed.shape[0] > 0.5}

    assert pairs(binned) == pairs(exact) == {(int(i), int(j)) for i, j in idx}
