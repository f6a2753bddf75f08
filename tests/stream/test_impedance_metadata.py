"""Per-channel ``impedance`` from a stream's metadata (the XDF EEG meta-data convention,
sccn/xdf wiki "EEG Meta Data": ``desc/channels/channel/impedance``, in kΩ) becomes
``ChannelInfo.impedance_kohm``; text that is no number is left out, never guessed."""

from __future__ import annotations

from bedside.stream.channels import ChannelMetadata, ChannelOptions, StreamMetadata, setup_channels
from bedside.stream.labels import load_labels


def test_impedances_are_read_per_channel_in_kohm() -> None:
    meta = StreamMetadata(ChannelMetadata(
        labels=["Fp1", "Fp2", "Cz", "O1", "ECG"], types=["EEG", "EEG", "EEG", "EEG", "ECG"],
        units=["microvolts"] * 5, impedances_kohm=["4.5", "n/a", "12 kOhm", "", "3"]))
    setup = setup_channels(5, meta, load_labels(), ChannelOptions())
    got = {c.name: c.impedance_kohm for c in setup.channels}
    assert got == {"Fp1": 4.5, "Fp2": None, "Cz": 12.0, "O1": None, "ECG": 3.0}


def test_a_stream_without_impedances_has_none() -> None:
    meta = StreamMetadata(ChannelMetadata(labels=["Fp1", "Cz"], types=["EEG", "EEG"], units=["microvolts"] * 2))
    assert [c.impedance_kohm for c in setup_channels(2, meta, load_labels()).channels] == [None, None]
