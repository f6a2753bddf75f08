"""Bridging on real recordings, with MNE-Python as the outside reference (issue 12.4, 12.8).

Recordings (tests/data/README.md, read by tests/real_eeg.py with outside readers):
MNE-Python's sample EEG (60 ch, 600.6 Hz, 24 s, digitised positions) and EEGMMIDB
S001R02 (64 ch, 160 Hz, 61 s). Reference: ``mne.preprocessing.compute_bridged_electrodes``
with its defaults, run on exactly the samples the detector was given: the whole span,
and the span each verdict rests on (the detector's density of 12 epochs: 13 s).
MNE-Python flags any pair; bedside reports neighbour pairs, so MNE's pairs are compared
on those.

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
    """Only the epochs with a full vote and a full density (the detector's whole span)."""
    return [h for h in history if h[1] == SETTINGS.n_epochs and h[0] >= SPAN_S - 1e-9]


#: The span of data one verdict of the detector rests on: its density's epochs (12 epochs
#: of 2 s, one a second: 13 s); MNE-Python is run on exactly these samples.
SPAN_S = (SETTINGS.density_epochs - 1) * SETTINGS.hop_s + SETTINGS.epoch_s


def _same_span(y: np.ndarray, names: list[str], rate: float, pairs: list[Pair], t_end: float) -> set[Pair]:
    """MNE-Python on the samples of the detector's span that ends at t_end."""
    end = int(round(t_end * rate))
    return _mne(y[end - int(round(SPAN_S * rate)) : end], names, rate, pairs)


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
    """MNE-Python finds no bridge in its sample EEG, on the whole 24 s and on every span
    the detector judges; neither do we, at any epoch. (Measured: the lowest neighbour
    ED is 2.2 µV² median, EEG 054–EEG 057; MNE's local minimum is ≈ 1e-11 µV².)"""
    x, names, rate, pairs = _sample()
    assert _mne(x, names, rate, pairs) == set()
    history = _ours(x, names, rate, pairs)
    assert len(history) >= 20 and all(found == set() for _t, _n, found in history)
    for t_end, _n, found in _voting(history)[::2]:
        assert _same_span(x, names, rate, pairs, t_end) == found == set()


def test_eegmmidb_clean_no_bridge() -> None:
    """MNE-Python finds no bridge in EEGMMIDB S001R02 (61 s), nor on the detector's spans;
    neither do we, at any full vote. AF7–AF3 is the one close pair (measured: in-band
    ED 5.3 µV² median, r 0.999; every other neighbour pair ≥ 28 µV²), yet with nothing
    lower MNE's local minimum lands near 0 µV² and it is not flagged — a possible
    natural bridge that MNE-Python does not call, and neither do we."""
    x, names, rate, pairs = _mmidb()
    assert _mne(x, names, rate, pairs) == set()
    everything = _ours(x, names, rate, pairs)
    # From the first epoch on (before the vote and the density are full), too; MNE-Python
    # on those first 4–6 s agrees (on 2–3 s it cannot run: one ED under 16 µV²).
    assert len(everything) >= 58 and all(found == set() for _t, _n, found in everything)
    for t_end, _n, _found in everything[3:6]:
        assert _mne(x[: int(round(t_end * rate))], names, rate, pairs) == set()
    for t_end, _n, _found in _voting(everything)[::8]:
        assert _same_span(x, names, rate, pairs, t_end) == set()


# ------------------------------------------------------------ injected, agreement
def test_mne_sample_injected_bridges_agree() -> None:
    """On the sample EEG (600 Hz), MNE-Python flags the short but NOT the gel bridge, with
    or without the drift: 1 µV of white noise at 600 Hz leaves 0.17–0.23 µV² in band
    (0.5–2.7 µV² with the drift), under the natural 2–4 µV², but for this distribution
    (about 170 EDs under 16 µV² per epoch, most of them natural pairs at 2–4 µV²) MNE's
    local-minimum search ends at ≈ 0 µV², so only an exactly zero ED passes.

    We agree with MNE-Python where it flags (the short, at every full vote and on each
    span the detector judges). The gel bridge MNE-Python misses is found by our own rule
    beside it (configs/quality.yaml bridging.short_ed_uv2: closer than any natural pair
    of the real recordings, r ≥ 0.995), at every vote; with the drift its ED straddles
    that floor, and no other pair is ever named."""
    x, names, rate, pairs = _sample()
    ia, ib = names.index("EEG 019"), names.index("EEG 020")
    pair = _key("EEG 019", "EEG 020")
    assert pair in {_key(*p) for p in pairs}
    mne_says = {"gel": set(), "gel+drift": set(), "short": {pair}}
    for case, want in mne_says.items():
        y = _inject(x, rate, ia, ib, case)
        assert _mne(y, names, rate, pairs) == want, case
        history = _voting(_ours(y, names, rate, pairs))
        assert len(history) >= 10, case
        if case == "short":
            assert all(found == want for _t, _n, found in history), case
            for t_end, _n, _found in history[::5]:
                assert _same_span(y, names, rate, pairs, t_end) == want, (case, t_end)
        elif case == "gel":  # ours finds what MNE-Python's search cannot here
            assert all(found == {pair} for _t, _n, found in history), case
        else:
            assert all(found <= {pair} for _t, _n, found in history), case


def test_eegmmidb_injected_bridges_agree() -> None:
    """EEGMMIDB (160 Hz), a bridge injected on C6–FT8 for the whole 61 s; MNE-Python on
    the same 13-s span as each of our verdicts (every fourth one here).

    MNE on the whole span: the short → {C6–FT8}; the gel → {C6–FT8, AF3–AF7} (the
    injected pair's low EDs, 0.5–0.9 µV², move the local minimum above AF7–AF3's
    5.3 µV²); gel + drift → nothing (here the drift on one lead keeps the pair's ED at
    1–3 µV²; MNE-Python does not flag it, and neither do we). Measured at all 49 full
    votes against MNE on the same span: injected pair 49/49 (short), 46/49 (gel),
    49/49 (gel + drift); the whole set of pairs 38/49, 26/49, 49/49 — the differences
    are AF7–AF3 (and F2–F4, ED 29 µV² median, twice), on which MNE-Python itself
    changes its mind from one span to the next: its local minimum comes from a density
    of a few dozen values."""
    x, names, rate, pairs = _mmidb()
    ia, ib = names.index("C6"), names.index("FT8")
    inj, af = _key("C6", "FT8"), _key("AF3", "AF7")
    whole = {"short": {inj}, "gel": {inj, af}, "gel+drift": set()}
    min_inj = {"short": 1.0, "gel": 0.85, "gel+drift": 1.0}
    min_all = {"short": 0.6, "gel": 0.4, "gel+drift": 1.0}
    for case, want in whole.items():
        y = _inject(x, rate, ia, ib, case)
        assert _mne(y, names, rate, pairs) == want, case
        history = _voting(_ours(y, names, rate, pairs))[::4]
        ref = [_same_span(y, names, rate, pairs, t_end) for t_end, _n, _f in history]
        got = [found for _t, _n, found in history]
        inj_agree = np.mean([(inj in m) == (inj in g) for m, g in zip(ref, got, strict=True)])
        all_agree = np.mean([m == g for m, g in zip(ref, got, strict=True)])
        assert inj_agree >= min_inj[case], (case, inj_agree)
        assert all_agree >= min_all[case], (case, all_agree)
        differ = set().union(*(m ^ g for m, g in zip(ref, got, strict=True)))
        assert differ <= {inj, af, _key("F2", "F4")}, (case, differ)
        if case == "short":  # MNE-Python's own verdict on AF7–AF3 flips between spans
            assert {af in m for m in ref} == {True, False}


# --------------------------------------------------------------- latency, rate
def _bridge_times(frames: list, rate_s: float) -> list[tuple[float, set[Pair]]]:  # type: ignore[type-arg]
    out = []
    for k, fr in enumerate(frames):
        found = {_key(*f.electrodes[:2]) for f in fr.findings if f.kind == "bridge"}
        out.append(((k + 1) * rate_s, found))
    return out


#: Gel bridges (and one short) injected into EEGMMIDB, starting at several phases of
#: the detector's 1-s epochs; C6–FT8 from 20.0 s is the one MNE-Python flags over the
#: whole recording (test above), the others are the same kind of fault.
FAULTS = (
    (("C6", "FT8"), "gel", 20.0, 40.0),
    (("C6", "FT8"), "gel", 20.3, 40.6),
    (("O1", "Oz"), "gel", 10.6, 30.2),
    (("C3", "C1"), "gel", 30.6, 45.2),
    (("FC3", "FC1"), "short", 5.8, 25.1),
)


@cache
def _engine_run(fault: tuple[Pair, str, float, float]) -> tuple[Pair, list[tuple[float, set[Pair]]]]:
    x, names, rate, pairs = _mmidb()
    (a, b), case, t0, t1 = fault
    y = _inject(x, rate, names.index(a), names.index(b), case, start_s=t0, end_s=t1)
    eng = make_engine(names, rate, neighbours=pairs)
    chunk = int(round(rate / 4))
    frames = feed(eng, y[: int(min(t1 + 8.0, len(x) / rate) * rate)], chunk=chunk)
    return _key(a, b), _bridge_times(frames, chunk / rate)


def test_bridge_clears_within_5_s() -> None:
    """Issue 12's target "≤ 5 s back to good", through the engine (its hold included):
    after each injected bridge is removed, its pair is no longer named within 5 s
    (measured: 0.6–2.7 s), and it was never named before the fault began."""
    for fault in FAULTS:
        pair, times = _engine_run(fault)
        _p, _case, t0, t1 = fault
        named = [t for t, f in times if pair in f]
        assert named and min(named) > t0, fault
        assert max(named) - t1 <= 5.0, (fault, max(named))
        # While it lasts, once found, it stays found (measured: 98–100 % of updates).
        assert np.mean([pair in f for t, f in times if min(named) <= t <= t1]) >= 0.9, fault


def test_bridge_found_within_5_s() -> None:
    """Issue 12's latency target for bridges (≤ 5 s from the fault's start), through the
    engine, for the faults above. Measured: 4.0, 4.7, 4.4, 3.4 and 3.2 s. MNE-Python's
    rule alone took 4.0–10.4 s (its local-minimum search moves off ~0 µV² only once the
    new pair's low EDs outweigh the natural ones in the density); our close-pair rule
    beside it (bridging.short_ed_uv2) names them once two of three epochs are close."""
    for fault in FAULTS:
        pair, times = _engine_run(fault)
        t0 = fault[2]
        found_at = next(t for t, f in times if t > t0 and pair in f)
        assert found_at - t0 <= 5.0, (fault, found_at)


def test_same_pairs_at_any_rate() -> None:
    """The same physical signal — the sample EEG with a short on EEG 019–EEG 020 and a gel
    bridge on EEG 041–EEG 042 (MNE-Python flags the short, not the gel; our close-pair
    rule names the gel too) — resampled with scipy.signal.resample_poly from 600.6 Hz to
    250.3, 500.5, 2002 and 8008 Hz gives the same pairs at every full vote; MNE-Python
    gives its same answer at 250.3, 500.5 and 2002 Hz."""
    x, names, rate, pairs = _sample()
    y = _inject(x, rate, names.index("EEG 019"), names.index("EEG 020"), "short")
    y = _inject(y, rate, names.index("EEG 041"), names.index("EEG 042"), "gel", seed=3)
    want = {_key("EEG 019", "EEG 020"), _key("EEG 041", "EEG 042")}  # the gel by our close-pair rule
    mne_want = {_key("EEG 019", "EEG 020")}
    for up, down in ((5, 12), (5, 6), (10, 3), (40, 3)):
        z = resample_poly(y, up, down, axis=0)
        r = rate * up / down
        if r < 3000:
            assert _mne(z, names, r, pairs) == mne_want, r
        history = [h for h in _ours(z, names, r, pairs) if h[1] == SETTINGS.n_epochs]
        assert len(history) >= 20 and all(found == want for _t, _n, found in history), r
