"""The vendored real recordings are what tests/data/README.md says they are."""

from __future__ import annotations

import hashlib

import numpy as np
import real_eeg


def test_eegmmidb_file_is_the_published_one() -> None:
    """md5 as given in tests/data/README.md (the file inside biosignalsnotebooks 0.6.14)."""
    digest = hashlib.md5(real_eeg.EEGMMIDB_EDF.read_bytes()).hexdigest()
    assert digest == "23ab41a3fa1cb522aac21aa2e4c35a70"
    rec = real_eeg.eegmmidb()
    # 61 one-second records (9760 samples) of which the last 128 samples are zero
    # padding on every channel; the loader keeps the 9632 recorded samples (60.2 s).
    assert rec.data_uv.shape == (9632, 64) and rec.rate_hz == 160.0
    assert rec.labels[:3] == ("Fc5.", "Fc3.", "Fc1.")  # BCI2000's dotted labels
    assert rec.physical_range_uv is not None and rec.physical_range_uv[0] == (-8092.0, 8092.0)
    # 1-µV steps (EDF integers over a ±8092 µV physical range): quantised data.
    steps = np.diff(rec.data_uv[:, 0])
    assert np.allclose(steps, np.round(steps), atol=0.02)


def test_mne_sample_has_eeg_eog_trigger_and_positions() -> None:
    rec = real_eeg.mne_sample()
    assert rec.types.count("EEG") == 60 and rec.types.count("EOG") == 1 and rec.types.count("TRIG") == 1
    assert abs(rec.rate_hz - 600.615) < 0.01
    assert rec.positions_m is not None and len(rec.positions_m) == 60
    eeg = rec.pick("EEG")
    std = eeg.data_uv.std(axis=0)
    # EEG 053: the channel MNE-Python's tutorials mark bad (std about 4.6 µV vs about 12).
    assert eeg.labels[52] == "EEG 053" and std[52] < 6 < np.median(std)
