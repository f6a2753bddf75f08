"""Channel lists from metadata: duplicates, empty labels, counts that disagree (issue 8).

The expected names are worked out by hand from the rules stated in
bedside/stream/channels.py; unit factors from the SI prefixes (BIPM SI Brochure, table 7).
"""

from __future__ import annotations

from bedside.stream.channels import build_channels
from bedside.stream.labels import load_labels

RULES = load_labels()


def test_duplicate_and_empty_labels_are_made_unique_with_notes() -> None:
    chans, notes = build_channels(
        5, ["Fp1", "T3", "T7", "", "Fp1"], ["EEG"] * 5, ["uV"] * 5, RULES
    )
    assert [c.name for c in chans] == ["Fp1", "T7", "T7#2", "ch4", "Fp1#2"]
    assert [c.label for c in chans] == ["Fp1", "T3", "T7", "", "Fp1"]  # originals kept
    assert "repeats the name T7" in chans[2].note
    assert "empty label" in chans[3].note
    assert any("channel 3" in n for n in notes) and any("channel 4" in n for n in notes)
    assert len({c.name for c in chans}) == 5


def test_fewer_labels_than_channels() -> None:
    chans, notes = build_channels(4, ["Cz", "Pz"], None, ["V", "V"], RULES)
    assert [c.name for c in chans] == ["Cz", "Pz", "ch3", "ch4"]
    assert any("describes 2 channels but the stream carries 4" in n for n in notes)
    assert chans[0].scale_to_uv == 1e6 and chans[2].scale_to_uv == 1.0  # ch3 has no unit


def test_more_labels_than_channels() -> None:
    chans, notes = build_channels(2, ["Cz", "Pz", "Oz"], None, None, RULES)
    assert [c.name for c in chans] == ["Cz", "Pz"]
    assert any("extra descriptions are ignored" in n for n in notes)


def test_no_metadata_at_all() -> None:
    chans, notes = build_channels(3, None, None, None, RULES)
    assert [c.name for c in chans] == ["ch1", "ch2", "ch3"]
    assert all(c.is_scalp for c in chans)
    assert any("no channel labels" in n for n in notes)
    assert any("3 of 3 channels have no unit" in n for n in notes)


def test_non_scalp_channels_are_kept_but_not_scalp() -> None:
    chans, _ = build_channels(
        4, ["Fp1", "ECG", "EOG L", "Status"], ["EEG", "ECG", "EOG", ""], ["uV"] * 4, RULES
    )
    assert [c.kind for c in chans] == ["EEG", "ECG", "EOG", "TRIG"]
    assert [c.is_scalp for c in chans] == [True, False, False, False]


def test_unknown_unit_is_noted_per_channel() -> None:
    chans, notes = build_channels(2, ["Cz", "Pz"], None, ["uV", "counts"], RULES)
    assert chans[1].scale_to_uv == 1.0 and "'counts' is not understood" in chans[1].note
    assert any(n.startswith("channel Pz:") for n in notes)
