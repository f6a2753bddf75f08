"""Bridging neighbours from geometry (issue 11.8, 11.9).

* Geometry reference: the digitised electrode positions of MNE-Python's sample
  recording (60 EEG channels "EEG 001".."EEG 060", head frame, metres), with
  MNE-Python's own ``find_ch_adjacency`` (a Delaunay triangulation of the positions)
  as the outside neighbour graph.
* Sparse montage: the neonatal set of ACNS Guideline 5 (Fp1 Fp2 C3 Cz C4 T3 T4 O1 O2).
"""

from __future__ import annotations

from pathlib import Path

import mne
import pytest
import real_eeg

from bedside.errors import InputError
from bedside.placement.layout import geometry_neighbours, neighbours_for, read_electrodes_tsv

NEONATAL = ["Fp1", "Fp2", "C3", "Cz", "C4", "T3", "T4", "O1", "O2"]


def _sample_positions_mm() -> dict[str, tuple[float, float, float]]:
    rec = real_eeg.mne_sample().pick("EEG")
    assert rec.positions_m is not None
    return {n: tuple(v * 1000.0 for v in rec.positions_m[n]) for n in rec.labels}  # type: ignore[misc]


def test_neighbours_from_the_sample_recordings_positions_agree_with_mne() -> None:
    """Source: MNE sample recording positions; MNE find_ch_adjacency (Delaunay)."""
    pos = _sample_positions_mm()
    names = list(pos)
    pairs, note = geometry_neighbours(names, pos)
    assert pairs is not None and "from the electrode positions" in note
    rec = real_eeg.mne_sample().pick("EEG")
    info = mne.create_info(list(rec.labels), rec.rate_hz, "eeg")
    raw = mne.io.RawArray(rec.data_uv[:10].T * 1e-6, info, verbose="error")
    raw.set_montage(mne.channels.make_dig_montage(ch_pos=dict(rec.positions_m or {}), coord_frame="head"))
    adj, ch_names = mne.channels.find_ch_adjacency(raw.info, "eeg")
    a = adj.toarray()
    ref = {tuple(sorted((ch_names[i], ch_names[j]))) for i in range(len(ch_names))
           for j in range(i + 1, len(ch_names)) if a[i, j]}
    ours = set(pairs)
    recall = len(ours & ref) / len(ref)
    precision = len(ours & ref) / len(ours)
    # Measured here: 169 pairs against MNE's 162, recall 0.90, precision 0.86.
    assert recall >= 0.8, (recall, precision)
    assert precision >= 0.8, (recall, precision)
    per_site = {n: sum(n in p for p in ours) for n in names}
    assert min(per_site.values()) >= 2


def test_no_geometry_says_so() -> None:
    pairs, note = geometry_neighbours(["E1", "E2", "E3"], {})
    assert pairs is None and "compares all pairs" in note


def test_neonatal_montage_gets_fp_c_c_o_and_t_o_pairs() -> None:
    """ACNS Guideline 5 neonatal set: every electrode has its nearest one or two; the
    Fp–C, C–O and T–O pairs, between which no electrode lies, are tested."""
    pairs = set(neighbours_for(NEONATAL))
    for pair in [("C3", "Fp1"), ("C4", "Fp2"), ("C3", "O1"), ("C4", "O2"), ("O1", "T3"), ("O2", "T4")]:
        assert pair in pairs, pair
    assert ("Fp1", "O1") not in pairs and ("T3", "T4") not in pairs  # across the head
    assert all(sum(n in p for p in pairs) >= 2 for n in NEONATAL)


def test_neonatal_fp3_naming_is_placed() -> None:
    """Fp3/Fp4: the neonatal naming (configs/labels.yaml local_sites, from memory)."""
    names = ["Fp3", "Fp4", "C3", "Cz", "C4", "T3", "T4", "O1", "O2"]
    pairs, note = geometry_neighbours(names, {}, {"Fp3": "AF3", "Fp4": "AF4"})
    assert pairs is not None and "unplaced" not in note
    assert ("C3", "Fp3") in pairs and ("C4", "Fp4") in pairs


def test_electrodes_tsv(tmp_path: Path) -> None:
    """BIDS-EEG electrodes.tsv (name, x, y, z) with EEGCoordinateUnits from coordsystem.json."""
    tsv = tmp_path / "sub-01_electrodes.tsv"
    tsv.write_text("name\tx\ty\tz\nCz\t0\t0\t0.1\nFz\t0\t0.07\t0.07\nX\tn/a\tn/a\tn/a\n", encoding="utf-8")
    (tmp_path / "sub-01_coordsystem.json").write_text('{"EEGCoordinateUnits": "m"}', encoding="utf-8")
    pos = read_electrodes_tsv(str(tsv))
    assert pos == {"Cz": (0.0, 0.0, 100.0), "Fz": (0.0, 70.0, 70.0)}
    tsv.write_text("label\tx\ty\tz\n", encoding="utf-8")
    with pytest.raises(InputError, match="name, x, y, z"):
        read_electrodes_tsv(str(tsv))


def test_10_10_names_without_a_row_are_placed_midway_or_reported() -> None:
    """10-10 halving rule (Chatrian 1985; ACNS Guideline 2; from memory): AF1 lies
    midway between AF3 and AFz, PO5 between PO7 and PO3. Checked against MNE-Python's
    colin27_1005 montage: there too AF1 is nearer the midpoint of AF3–AFz than either."""
    from bedside.placement.layout import positions_for

    pos = positions_for(["AF3", "AFz", "AF1", "PO7", "PO3", "PO5"])
    for mid, (a, b) in {"AF1": ("AF3", "AFz"), "PO5": ("PO7", "PO3")}.items():
        da, db = (sum((p - q) ** 2 for p, q in zip(pos[mid], pos[x], strict=True)) ** 0.5 for x in (a, b))
        assert abs(da - db) < 1.0 and da > 5.0  # mm (the head is an ellipsoid): halfway
    std = mne.channels.make_standard_montage("colin27_1005").get_positions()["ch_pos"]
    mid = (std["AF3"] + std["AFz"]) / 2
    assert ((std["AF1"] - mid) ** 2).sum() < min(((std["AF1"] - std[k]) ** 2).sum() for k in ("AF3", "AFz"))
    _pairs, note = geometry_neighbours(["Cz", "C3", "C4", "AF1", "I1"], {})
    assert "unplaced" in note and "I1" in note and "AF1" not in note
