"""Label normalisation against outside references.

* Renamed temporal sites T3 = T7, T4 = T8, T5 = P7, T6 = P8: ACNS Guideline 2 (2016),
  American EEG Society nomenclature (1991); cross-checked against MNE-Python's
  ``colin27_1020`` template montage, which places each classic name exactly where its
  modern name is.
* Every scalp name bedside knows is a position in MNE-Python's 10-05/10-20 templates
  (Oostenveld & Praamstra 2001 naming), or the nasion (a fiducial there).
* Label forms "EEG Fp1-REF", "EEG T3-LE": EDF exports of clinical systems (EDF+
  signal type prefix; common practice for the suffixes).
* Labels of pyEDFlib's shipped ``pyedflib/data/test_generator.edf`` ("squarewave",
  "sine 8 Hz", …) are not sites and must be kept exactly as they are.
"""

from __future__ import annotations

import os
from pathlib import Path

import mne
import numpy as np
import pyedflib
import pytest

from bedside.errors import ConfigError
from bedside.stream.labels import (
    KINDS,
    MAX_NAME_CHARS,
    clean_text,
    load_labels,
    normalise_label,
    read_label,
)
from bedside.stream.units import unit_kind

RULES = load_labels()


def test_every_scalp_name_is_a_template_position() -> None:
    """Source: MNE-Python template montages colin27_1005 and colin27_1020 (and its nasion)."""
    known = set(mne.channels.make_standard_montage("colin27_1005").ch_names)
    known |= set(mne.channels.make_standard_montage("colin27_1020").ch_names)
    known.add("Nz")  # a fiducial in the templates
    missing = [n for n in RULES.scalp_names if n not in known]
    assert missing == []


@pytest.mark.parametrize(("classic", "modern"), [("T3", "T7"), ("T4", "T8"), ("T5", "P7"), ("T6", "P8")])
def test_classic_names_become_modern_at_the_same_place(classic: str, modern: str) -> None:
    """Source: ACNS Guideline 2 (2016) renaming; MNE colin27_1020 puts both names at one point."""
    pos = mne.channels.make_standard_montage("colin27_1020").get_positions()["ch_pos"]
    assert np.allclose(pos[classic], pos[modern])
    assert normalise_label(classic, RULES) == (modern, "EEG")
    assert normalise_label(classic.lower(), RULES) == (modern, "EEG")


@pytest.mark.parametrize(
    ("label", "expected"),
    [
        ("Fp1", ("Fp1", "EEG")),
        ("FP1", ("Fp1", "EEG")),  # case (common practice: upper-case EDF labels)
        ("fpz", ("Fpz", "EEG")),
        ("EEG Fp1-REF", ("Fp1", "EEG")),
        ("EEG T3-LE", ("T7", "EEG")),
        ("T5-A1", ("P7", "EEG")),
        ("T6_M2", ("P8", "EEG")),
        ("Cz AVG", ("Cz", "EEG")),
        ("  O2  ", ("O2", "EEG")),
        ("A1", ("A1", "EEG")),
        ("M2-REF", ("M2", "EEG")),
        ("ECG", ("ECG", "ECG")),
        ("EKG2", ("EKG2", "ECG")),
        ("EEG ECG-REF", ("EEG ECG-REF", "ECG")),
        ("LOC", ("LOC", "EOG")),
        ("VEOG", ("VEOG", "VEOG")),
        ("EMG chin", ("EMG chin", "EMG")),
        ("TRIGGER", ("TRIGGER", "TRIG")),
        ("STI 014", ("STI 014", "TRIG")),  # MNE's name for the Neuromag trigger line
        ("Status", ("Status", "TRIG")),  # the trigger channel of BDF files (common practice)
        ("Resp", ("Resp", "RESP")),
        ("GND", ("GND", "REF")),
        ("Fp1-F7", ("Fp1-F7", "EEG")),  # a bipolar derivation is not a site: kept as is
        ("X17", ("X17", "MISC")),  # an amplifier's auxiliary input X1…X8 (issue 11)
        ("E17", ("E17", "EEG")),  # unknown voltage label: kept as is, judged as scalp
        ("LOCATION", ("LOCATION", "EEG")),  # starts like "LOC" but is not it
    ],
)
def test_normalise(label: str, expected: tuple[str, str]) -> None:
    """Common practice (EDF exports, BIDS channel types), except where noted."""
    assert normalise_label(label, RULES) == expected


def test_channel_type_from_metadata_decides_kind() -> None:
    """BIDS channels.tsv types (EEG, EOG, ECG, EMG, MISC, TRIG, REF)."""
    assert normalise_label("Fp1", RULES, "EOG") == ("Fp1", "EOG")
    assert normalise_label("C3", RULES, "eeg") == ("C3", "EEG")
    assert normalise_label("ECG", RULES, "EEG") == ("ECG", "ECG")  # label says non-scalp
    assert normalise_label("acc-x", RULES, "ACCELEROMETER") == ("acc-x", "MISC")  # unknown type


def test_labels_of_a_shipped_edf_file_are_kept_exactly() -> None:
    """Source: pyEDFlib's test file pyedflib/data/test_generator.edf (its signal labels)."""
    path = Path(os.path.dirname(pyedflib.__file__)) / "data" / "test_generator.edf"
    with pyedflib.EdfReader(str(path)) as f:
        labels = f.getSignalLabels()
    assert "sine 8 Hz" in labels
    for label in labels:
        name, kind = normalise_label(label, RULES)
        assert name == label.strip()
        assert kind in KINDS


def test_bad_label_file_is_a_clear_error(tmp_path: Path) -> None:
    bad = tmp_path / "labels.yaml"
    bad.write_text("labels:\n  scalp_names: [Cz]\n  aliasses: {T3: T7}\n", encoding="utf-8")
    with pytest.raises(ConfigError, match=r"labels.yaml, line 3: 'labels.aliasses'.*did you mean 'aliases'"):
        load_labels(bad)
    bad.write_text("labels:\n  scalp_names: [Cz]\n  aliases: {T3: T7}\n", encoding="utf-8")
    with pytest.raises(ConfigError, match="'T7' is not in scalp_names"):
        load_labels(bad)
    bad.write_text("labels:\n  scalp_names: [Cz]\n  type_kinds: {EEG: BRAIN}\n", encoding="utf-8")
    with pytest.raises(ConfigError, match="accepted kinds"):
        load_labels(bad)


from hypothesis import given  # noqa: E402
from hypothesis import strategies as st  # noqa: E402

from bedside.stream.channels import build_channels  # noqa: E402


@given(st.text(max_size=30), st.one_of(st.none(), st.text(max_size=10)))
def test_any_label_gives_a_name_and_a_kind(label: str, ctype: str | None) -> None:
    """Fuzzed (issue 8): any label and type give a result, never an exception."""
    name, kind = normalise_label(label, RULES, ctype)
    assert kind in KINDS
    assert name == clean_text(label)[0] or name in RULES.scalp_names or name in RULES.local_sites
    assert "\x00" not in name and len(name) <= MAX_NAME_CHARS


@given(st.lists(st.sampled_from(["Cz", "cz", "T3", "T7", "", " ", "ECG", "X", "Cz#2", "ch2", "T7#2"]), max_size=12), st.integers(1, 14))
def test_channel_names_are_always_unique(labels: list[str], n: int) -> None:
    chans, _ = build_channels(n, labels, None, None, RULES)
    names = [c.name.upper() for c in chans]
    assert len(chans) == n and len(set(names)) == n


# --- issue 11: channel types ------------------------------------------------------

#: Channel types of BIDS channels.tsv (BIDS specification 1.11, EEG chapter, "type"
#: column: the allowed values for EEG datasets).
BIDS_EEG_TYPES = {
    "AUDIO", "EEG", "EOG", "ECG", "EMG", "EYEGAZE", "GSR", "HEOG", "MISC", "PPG", "PUPIL",
    "REF", "RESP", "SYSCLOCK", "TEMP", "TRIG", "VEOG",
}


def test_every_kind_is_a_bids_channel_type() -> None:
    """Source: BIDS 1.11 channels.tsv types (EEG)."""
    assert set(KINDS) <= BIDS_EEG_TYPES
    used = set(RULES.label_patterns.values()) | set(RULES.type_kinds.values()) | set(RULES.type_prefixes.values())
    assert used <= BIDS_EEG_TYPES


@pytest.mark.parametrize(
    ("label", "kind"),
    [
        # The labels named in issue 11: the extra inputs amplifiers carry.
        ("EOGL", "EOG"), ("VEOGU", "VEOG"), ("HEOGR", "HEOG"), ("LOC", "EOG"), ("ROC", "EOG"),
        ("ECGL", "ECG"), ("EKG", "ECG"), ("EMGchin", "EMG"), ("STI 014", "TRIG"),
        ("TRIG", "TRIG"), ("ACC_X", "MISC"), ("AUX1", "MISC"), ("GSR", "GSR"),
        ("RESP", "RESP"), ("SpO2", "MISC"), ("Photic", "MISC"), ("DC01", "MISC"), ("X1", "MISC"),
        # EDF+ "Type Location" labels (EDF+ specification, standard texts; from memory).
        ("EOG ROC", "EOG"), ("EEG Fp1-REF", "EEG"), ("Resp chest", "RESP"),
        ("Temp rectal", "TEMP"), ("EMG Chin", "EMG"), ("EEG 001", "EEG"),
    ],
)
def test_label_patterns_give_bids_types(label: str, kind: str) -> None:
    """Issue 11 labels; kinds as BIDS 1.11 channels.tsv types; EDF+ type words."""
    r = read_label(label, RULES)
    assert r.kind == kind
    assert r.kind in BIDS_EEG_TYPES


def test_order_of_evidence() -> None:
    """Metadata type first (XDF EEG meta-data: desc/channels/channel/type), then the unit
    (g, %, °C are not voltages: SI Brochure), then the label, then the EDF+ type word."""
    assert read_label("Fp1", RULES, "EOG").kind == "EOG"  # the metadata's type decides
    assert read_label("Fp1", RULES, "EOG").evidence == "type"
    assert read_label("Cz", RULES, None, unit_kind("g")).kind == "MISC"  # an axis in g on "Cz"
    assert read_label("Body", RULES, None, unit_kind("°C")).kind == "TEMP"
    assert read_label("Resp", RULES, None, unit_kind("%")).kind == "RESP"  # the label is more specific
    r = read_label("ECG", RULES, "EEG")  # typed EEG for every channel, the label says ECG
    assert r.kind == "ECG" and "label says ECG" in r.note
    unknown = read_label("Q7", RULES)
    assert unknown.kind == "EEG" and "judged as scalp EEG" in unknown.note
    assert read_label("EEG 017", RULES).note == ""  # the EDF+ type word says EEG


def test_bci2000_labels_match_mne_standardize() -> None:
    """Source: mne.datasets.eegbci.standardize on the real EEGMMIDB S001R02 labels
    (BCI2000 pads labels with dots: "Fc5.", "Cz..")."""
    import mne.datasets.eegbci
    import real_eeg

    rec = real_eeg.eegmmidb()
    info = mne.create_info(list(rec.labels), rec.rate_hz, "eeg")
    raw = mne.io.RawArray(np.zeros((len(rec.labels), 2)), info, verbose="error")
    mne.datasets.eegbci.standardize(raw)
    ours = [read_label(label, RULES) for label in rec.labels]
    assert [r.name for r in ours] == raw.ch_names
    assert all(r.kind == "EEG" and r.evidence == "site" for r in ours)


def test_mne_sample_channel_types() -> None:
    """Source: MNE-Python's sample recording, whose channel types (eeg, eog, stim) are
    the recording's own (BIDS spelling EEG, EOG, TRIG via real_eeg)."""
    import real_eeg

    rec = real_eeg.mne_sample()
    assert [read_label(label, RULES).kind for label in rec.labels] == list(rec.types)


def test_hostile_labels_are_cleaned() -> None:
    """Issue 11 bad input: a 10,000-character label and NUL bytes."""
    r = read_label("x" * 10_000, RULES)
    assert len(r.name) <= MAX_NAME_CHARS and "10000 characters" in r.note
    r = read_label("C\x00z", RULES)
    assert r.name == "Cz" and "NUL" in r.note
    r = read_label("\x00\x00", RULES)
    assert r.name == ""
