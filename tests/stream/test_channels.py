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
    chans, notes = build_channels(2, ["Cz", "Pz"], None, ["uV", "furlongs"], RULES)
    assert chans[1].scale_to_uv == 1.0 and "'furlongs' is not understood" in chans[1].note
    assert any(n.startswith("channel Pz:") for n in notes)


# --- issue 11 --------------------------------------------------------------------

import pytest  # noqa: E402

from bedside.errors import InputError, StreamFormatError  # noqa: E402
from bedside.stream.channels import (  # noqa: E402
    ChannelChoice,
    ChannelMetadata,
    ChannelOptions,
    StreamMetadata,
    apply_choices,
    kind_counts,
    setup_channels,
)

#: An amplifier-shaped stream (issue 11): 19 scalp channels of the 10-20 system
#: (ACNS Guideline 2) plus the extra inputs amplifiers carry.
SCALP_19 = ["Fp1", "Fp2", "F7", "F3", "Fz", "F4", "F8", "T3", "C3", "Cz", "C4", "T4",
            "T5", "P3", "Pz", "P4", "T6", "O1", "O2"]
EXTRA = ["VEOGU", "ECG", "EOGL", "EMGchin", "TRIG", "ACC_X"]
EXTRA_TYPES = ["VEOG", "ECG", "", "", "", ""]
EXTRA_UNITS = ["microvolts"] * 5 + ["g"]


def amplifier_meta(**kw: object) -> StreamMetadata:
    labels = SCALP_19 + EXTRA
    cm = ChannelMetadata(labels, ["EEG"] * 19 + EXTRA_TYPES, ["microvolts"] * 19 + EXTRA_UNITS)
    return StreamMetadata(cm, **kw)  # type: ignore[arg-type]


def test_amplifier_shaped_stream_is_typed() -> None:
    """Issue 11's stream; types as BIDS channels.tsv (VEOG, ECG, EOG, EMG, TRIG, MISC)."""
    setup = setup_channels(25, amplifier_meta(), RULES)
    kinds = [c.kind for c in setup.channels]
    assert kinds == ["EEG"] * 19 + ["VEOG", "ECG", "EOG", "EMG", "TRIG", "MISC"]
    assert sum(c.is_scalp for c in setup.channels) == 19
    assert kind_counts(setup.channels) == "19 scalp, 1 EOG, 1 VEOG, 1 ECG, 1 EMG, 2 not judged"
    assert any(n == "channels: 19 scalp, 1 EOG, 1 VEOG, 1 ECG, 1 EMG, 2 not judged" for n in setup.notes)


def test_integer_counts_need_a_scale() -> None:
    """Issue 11.6: int16 samples with no unit are counts; refused without a scale."""
    with pytest.raises(StreamFormatError, match=r"raw converter counts .* --uv-per-count"):
        build_channels(2, ["Cz", "Pz"], None, None, RULES, integer=True)
    with pytest.raises(StreamFormatError, match="unit counts"):
        build_channels(2, ["Cz", "Pz"], None, ["counts", "counts"], RULES)
    chans, _ = build_channels(2, ["Cz", "Pz"], None, None, RULES, integer=True, uv_per_count=0.1)
    assert [c.scale_to_uv for c in chans] == [0.1, 0.1]
    chans, _ = build_channels(2, ["Cz", "Pz"], None, ["counts"] * 2, RULES, count_scales=["0.5", "0.25"])
    assert [c.scale_to_uv for c in chans] == [0.5, 0.25]  # the outlet's own scale
    # An integer stream in µV is already µV; a trigger in counts needs no scale.
    chans, _ = build_channels(2, ["Cz", "TRIG"], None, ["uV", ""], RULES, integer=True)
    assert [c.scale_to_uv for c in chans] == [1.0, 1.0]


def test_reference_from_metadata_suffix_and_option() -> None:
    """XDF EEG meta-data convention: desc/reference/{label, subtracted, common_average};
    label suffixes "T3-A1" (EDF exports, common practice)."""
    setup = setup_channels(25, amplifier_meta(reference={"label": "Cz", "subtracted": "true"}), RULES)
    assert setup.reference.label == "Cz" and setup.reference.subtracted is True
    cz = next(c for c in setup.channels if c.name == "Cz")
    assert cz.kind == "REF" and not cz.is_scalp and "reference electrode" in cz.note
    avg = setup_channels(25, amplifier_meta(reference={"common_average": "true"}), RULES)
    assert avg.reference.engine_value == "average"
    assert sum(c.is_scalp for c in avg.channels) == 19
    cm = ChannelMetadata(["T3-A1", "C3-A1", "Cz-A1", "A1"], None, None)
    by_suffix = setup_channels(4, StreamMetadata(cm), RULES)
    assert by_suffix.reference.label == "A1" and by_suffix.reference.source == "label suffix"
    assert [c.kind for c in by_suffix.channels] == ["EEG", "EEG", "EEG", "REF"]
    opt = setup_channels(4, StreamMetadata(cm), RULES, ChannelOptions(reference="avg"))
    assert opt.reference.label == "average" and opt.reference.source == "--reference"


def test_technologist_choices() -> None:
    chans, _ = build_channels(3, ["Fp1", "E2", "Q3"], None, None, RULES)
    out = apply_choices(chans, {"E2": ChannelChoice("EOG", "LOC"), "Q3": ChannelChoice(name="X")})
    assert [(c.name, c.kind) for c in out] == [("Fp1", "EEG"), ("LOC", "EOG"), ("X", "EEG")]
    assert out[1].evidence == "technologist"
    with pytest.raises(InputError, match=r"names channel 'Nope', which the stream does not have.*Fp1, E2, Q3"):
        apply_choices(chans, {"Nope": ChannelChoice("EEG")})
    with pytest.raises(InputError, match="more than one channel"):
        apply_choices(chans, {"E2": ChannelChoice(name="Fp1")})
    with pytest.raises(InputError, match="accepted: EEG, EOG"):
        ChannelChoice("BRAIN")


def test_no_scalp_channel_is_refused() -> None:
    """Issue 11: a stream with no scalp channel at all."""
    cm = ChannelMetadata(["ECG", "TRIG", "ACC_X"], None, ["uV", "", "g"])
    with pytest.raises(StreamFormatError, match=r"no scalp EEG channel: the stream carries ECG \(ECG\), TRIG"):
        setup_channels(3, StreamMetadata(cm), RULES)


def test_two_thousand_channels_are_typed() -> None:
    """Issue 11 bad input: 2,000 channels (build_channels itself copes; the reader refuses
    more than max_channels, tests/stream/test_reader_lsl.py)."""
    labels = [f"E{i}" for i in range(2000)]
    chans, _ = build_channels(2000, labels, None, None, RULES)
    assert len({c.name for c in chans}) == 2000
