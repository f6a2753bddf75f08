"""Bridging on real recordings, with MNE-Python as the outside reference (issue 12.4, 12.8).

Recordings (tests/data/README.md, read by tests/real_eeg.py with outside readers):
MNE-Python's sample EEG (60 ch, 600.6 Hz, 24 s, digitised positions) and EEGMMIDB
S001R02 (64 ch, 160 Hz, 61 s). Reference: ``mne.preprocessing.compute_bridged_electrodes``
with its defaults, run on exactly the samples the detector was given (the whole
span; where it is stable, also the detector's own trailing span of 5 s). MNE-Python
flags any pair; bedside reports neighbour pairs, so MNE's pairs are compared on those.

Injected bridges (on the real backgrounds): two leads replaced by their average plus
1 µV independent white noise each ("gel"), the same plus a 6 µV 0.2 Hz drift on one
lead ("gel + drift", the borderline case of issue 12), and both leads equal to their
average ("short"). Where MNE-Python does not flag a case, the test says so and asserts
agreement with it, not what we might wish.
"""

from __future__ import annotations

import warnings
from functools import cache

import mne
import numpy as np
import pytest
import real_eeg
from mne.preprocessing import compute_bridged_electrodes
from scipy.signal import resample_poly

from bedside.checks.bridging import BridgeDetector
from bedside.checks.settings import load_quality
from bedside.placement.layout import geometry_neighbours, neighbours_for
from bedside.stream.labels import load_labels, read_label

from .helpers import feed, make_engine

Pair = tuple[str, str]
SETTINGS = load_quality().bridging


@cache
def _sample() -> tuple[np.ndarray, list[str], float, list[Pair]]:
    rec = real_eeg.mne_sample().pick("EEG")
    assert rec.positions_m is not None
    pos = {n: tuple(v * 1000.0 for v in rec.positions_m[n]) for n in rec.labels}
    pairs, _note = geometry_neighbours(list(rec.labels), pos)  # type: ignore[arg-type]
    assert pairs
    return rec.data_uv, list(rec.labels), rec.rate_hz, list(pairs)


@cache
def _mmidb() -> tuple[np.ndarray, list[str], float, list[Pair]]:
    rec = real_eeg.eegmmidb()
    rules = load_labels()
    names = [read_label(label, rules).name for label in rec.labels]  # "Af7." → "AF7"
    return rec.data_uv, names, rec.rate_hz, list(neighbours_for(names))


def _key(a: str, b: str) -> Pair:
    return (a, b) if a < b else (b, a)


def _mne(x: np.ndarray, names: list[str], rate: float, pairs: list[Pair]) -> set[Pair]:
    """MNE-Python's bridged pairs (defaults) on these samples, among the neighbour pairs."""
    raw = mne.io.RawArray(x.T * 1e-6, mne.create_info(names, rate, "eeg"), verbose="error")
    with warnings.catch_warnings():
        # On a 5-s span MNE-Python warns that its 0.5-Hz FIR (6.6 s) is longer than the
        # signal (it pads); its verdict there is still the reference for that span.
        warnings.filterwarnings("ignore", "filter_length .* is longer than the signal", RuntimeWarning)
        idx, _ed = compute_bridged_electrodes(raw, verbose="error")
    found = {_key(names[i], names[j]) for i, j in idx}
    return found & {_key(*p) for p in pairs}


def _ours(x: np.ndarray, names: list[str], rate: float, pairs: list[Pair]) -> list[tuple[float, int, set[Pair]]]:
    """The detector fed x in 0.25-s blocks: (end s, epochs voting, bridged pairs) per epoch."""
    ix = {n: i for i, n in enumerate(names)}
    p = np.array(sorted({(min(ix[a], ix[b]), max(ix[a], ix[b])) for a, b in pairs}))
    det = BridgeDetector(len(names), rate, p, SETTINGS)
    block, out, seen = max(1, int(rate / 4)), [], -1
    for k in range(0, len(x), block):
        det.add(x[k : k + block])
        if det.epochs_done != seen:
            seen = det.epochs_done
            _ed, _r, bridged, _lm, _c = det.decide(np.ones(len(names), dtype=bool))
            found = {_key(names[p[q, 0]], names[p[q, 1]]) for q in np.flatnonzero(bridged)}
            out.append((min(k + block, len(x)) / rate, det.n_epochs, found))
    return out


def _voting(history: list[tuple[float, int, set[Pair]]]) -> list[tuple[float, int, set[Pair]]]:
    """Only the epochs with a full vote (n_epochs of them)."""
    return [h for h in history if h[1] == SETTINGS.n_epochs]


def _inject(x: np.ndarray, rate: float, ia: int, ib: int, case: str, seed: int = 1,
            start_s: float = 0.0, end_s: float | None = None) -> np.ndarray:
    rng = np.random.default_rng(seed)
    y = x.copy()
    s0 = int(start_s * rate)
    s1 = len(x) if end_s is None else int(end_s * rate)
    n = s1 - s0
    avg = (x[s0:s1, ia] + x[s0:s1, ib]) / 2.0
    if case == "short":
        y[s0:s1, ia] = avg
        y[s0:s1, ib] = avg
    else:
        y[s0:s1, ia] = avg + rng.normal(0.0, 1.0, n)
        y[s0:s1, ib] = avg + rng.normal(0.0, 1.0, n)
        if case == "gel+drift":
            y[s0:s1, ia] += 6.0 * np.sin(2 * np.pi * 0.2 * np.arange(n) / rate)
    return y


# --------------------------------------------------------------- clean recordings
def test_mne_sample_clean_no_bridge() -> None:
    """MNE-Python finds no bridge in its sample EEG; neither do we, at any epoch, and MNE
    agrees on each trailing 5-s span the detector votes over. (Measured: the lowest
    neighbour ED is 2.5 µV², EEG 054–EEG 057; MNE's local minimum is ≈ 0 µV².)"""
    x, names, rate, pairs = _sample()
    assert _mne(x, names, rate, pairs) == set()
    history = _ours(x, names, rate, pairs)
    assert len(history) >= 20 and all(found == set() for _t, _n, found in history)
    span = int((SETTINGS.n_epochs - 1) * SETTINGS.hop_s * rate + SETTINGS.epoch_s * rate)
    for t_end, _n, found in _voting(history)[::6]:
        end = int(round(t_end * rate))
        assert _mne(x[end - span : end], names, rate, pairs) == found


def test_eegmmidb_clean_no_bridge() -> None:
    """MNE-Python finds no bridge in EEGMMIDB S001R02 (61 s); neither do we, at any full
    vote. AF7–AF3 is the one close pair (measured here: in-band ED 4.6 µV² median,
    r 0.999; every other neighbour pair ≥ 28 µV²), yet MNE's local minimum lands near
    0 µV² and it is not flagged — a possible natural bridge MNE-Python does not call."""
    x, names, rate, pairs = _mmidb()
    assert _mne(x, names, rate, pairs) == set()
    history = _voting(_ours(x, names, rate, pairs))
    assert len(history) >= 55 and all(found == set() for _t, _n, found in history)


# ------------------------------------------------------------ injected, agreement
def test_mne_sample_injected_bridges_agree() -> None:
    """On the sample EEG (600 Hz), MNE-Python flags the short but NOT the gel bridge, with
    or without the drift: 1 µV of white noise at 600 Hz leaves about 0.2 µV² in band
    (0.4–1.4 µV² with the drift), well under the natural 2–4 µV², but MNE's
    local-minimum search ends at ≈ 0 µV² for this distribution. We agree with MNE at
    every full vote, on the whole span and on the detector's own 5-s span."""
    x, names, rate, pairs = _sample()
    ia, ib = names.index("EEG 019"), names.index("EEG 020")
    pair = _key("EEG 019", "EEG 020")
    assert pair in {_key(*p) for p in pairs}
    span = int((SETTINGS.n_epochs - 1) * SETTINGS.hop_s * rate + SETTINGS.epoch_s * rate)
    expected = {"gel": set(), "gel+drift": set(), "short": {pair}}
    for case, want in expected.items():
        y = _inject(x, rate, ia, ib, case)
        assert _mne(y, names, rate, pairs) == want, case
        history = _voting(_ours(y, names, rate, pairs))
        assert all(found == want for _t, _n, found in history), case
        t_end = history[-1][0]
        end = int(round(t_end * rate))
        assert _mne(y[end - span : end], names, rate, pairs) == want, case


def test_eegmmidb_injected_bridges_agree() -> None:
    """EEGMMIDB (160 Hz), a bridge injected on C6–FT8 for the whole 61 s.

    MNE-Python on the whole span: the short → {C6–FT8}; the gel → {C6–FT8, AF3–AF7} (the
    injected pair's low EDs move the local minimum above AF7–AF3's 4.6 µV²); gel + drift
    → nothing. On the injected pair, our verdict at each full vote agrees with that in
    (measured) 57/57 epochs for the short, 52/57 for the gel, 49/57 for gel + drift (the
    drift keeps the pair at the edge: ED 0.9–1.6 µV² against a cutoff that moves).

    AF7–AF3 has no stable reference: MNE-Python itself, run on the detector's own 5-s
    spans of the same data, calls it bridged on some spans and not on others, because
    its local minimum comes from a density of a handful of values; our verdict on it
    follows the same procedure and flips likewise (not asserted pair by pair)."""
    x, names, rate, pairs = _mmidb()
    ia, ib = names.index("C6"), names.index("FT8")
    inj, af = _key("C6", "FT8"), _key("AF3", "AF7")
    expected = {"short": {inj}, "gel": {inj, af}, "gel+drift": set()}
    min_agree = {"short": 1.0, "gel": 0.85, "gel+drift": 0.8}
    span = int((SETTINGS.n_epochs - 1) * SETTINGS.hop_s * rate + SETTINGS.epoch_s * rate)
    for case, want in expected.items():
        y = _inject(x, rate, ia, ib, case)
        assert _mne(y, names, rate, pairs) == want, case
        history = _voting(_ours(y, names, rate, pairs))
        agree = np.mean([(inj in found) == (inj in want) for _t, _n, found in history])
        assert agree >= min_agree[case], (case, agree)
        if case != "short":  # the short: we end with AF7–AF3 too, MNE's whole span without
            assert history[-1][2] == want, (case, history[-1])
        # Never a pair other than the injected one and AF7–AF3.
        assert set().union(*(found for _t, _n, found in history)) <= {inj, af}, case
        if case == "short":
            spans = {af in _mne(y[int(round(t * rate)) - span : int(round(t * rate))], names, rate, pairs)
                     for t, _n, _f in history[::4]}
            assert spans == {True, False}  # MNE-Python's own verdict on AF7–AF3 flips


# --------------------------------------------------------------- latency, rate
def _bridge_times(frames: list, rate_s: float) -> list[tuple[float, set[Pair]]]:  # type: ignore[type-arg]
    out = []
    for k, fr in enumerate(frames):
        found = {_key(*f.electrodes[:2]) for f in fr.findings if f.kind == "bridge"}
        out.append(((k + 1) * rate_s, found))
    return out


@pytest.mark.xfail(strict=True, reason=(
    "not met yet (measured): a short on the sample EEG from 8 s is never flagged — after the "
    "onset its in-band ED decays (0.4, 0.25, 0.01, 0.005, 0.003 µV²) but never reaches the "
    "≈1e-11 µV² 'local minimum' MNE-Python's search gives for this distribution, which only an "
    "exactly zero ED passes; a gel bridge on EEGMMIDB from 20 s is flagged at 28 s (ED under "
    "1.5 µV² from 24 s, the local minimum ≈0 until 28 s)"))
def test_short_found_within_5_s_and_clears_within_5_s() -> None:
    """Issue 12's latency targets (≤ 5 s to a bridge, ≤ 5 s back to good), through the
    engine, on both recordings: a short on the sample EEG from 8 to 16 s, a gel bridge on
    EEGMMIDB from 20 to 40 s (both cases MNE-Python flags when they last the whole span,
    tests above)."""
    cases = (
        (_sample(), ("EEG 019", "EEG 020"), "short", 8.0, 16.0),
        (_mmidb(), ("C6", "FT8"), "gel", 20.0, 40.0),
    )
    for (x, names, rate, pairs), (a, b), case, t0, t1 in cases:
        y = _inject(x, rate, names.index(a), names.index(b), case, start_s=t0, end_s=t1)
        eng = make_engine(names, rate, neighbours=pairs)
        chunk = int(round(rate / 4))
        frames = feed(eng, y[: int((t1 + 8.0) * rate)], chunk=chunk)
        times = _bridge_times(frames, chunk / rate)
        pair = _key(a, b)
        found_at = next(t for t, f in times if t > t0 and pair in f)
        assert found_at - t0 <= 5.0, (case, found_at)
        held = [pair in f for t, f in times if found_at <= t <= t1]
        assert np.mean(held) >= 0.9, case
        clear_at = next(t for t, f in times if t > t1 and pair not in f and
                        all(pair not in g for u, g in times if u >= t))
        assert clear_at - t1 <= 5.0, (case, clear_at)
        # Before the fault: no bridge named with this pair.
        assert not any(pair in f for t, f in times if t < t0), case


def test_same_pairs_at_250_and_500_hz() -> None:
    """The same physical signal — the sample EEG with a short on EEG 019–EEG 020 and a gel
    bridge on EEG 041–EEG 042 (the one MNE-Python flags, the other it does not) —
    resampled with scipy.signal.resample_poly from 600.6 Hz to 250.3 and 500.5 Hz gives
    the same pairs at every full vote; MNE-Python agrees at each rate."""
    x, names, rate, pairs = _sample()
    y = _inject(x, rate, names.index("EEG 019"), names.index("EEG 020"), "short")
    y = _inject(y, rate, names.index("EEG 041"), names.index("EEG 042"), "gel", seed=3)
    want = {_key("EEG 019", "EEG 020")}
    for up, down in ((5, 12), (5, 6)):
        z = resample_poly(y, up, down, axis=0)
        r = rate * up / down
        assert _mne(z, names, r, pairs) == want, r
        history = _voting(_ours(z, names, r, pairs))
        assert len(history) >= 18 and all(found == want for _t, _n, found in history), r
