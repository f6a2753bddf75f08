"""The two real recordings in tests/data, as plain arrays (see tests/data/README.md).

Sample arrays are (n_samples, n_channels) in µV, as everywhere in bedside. Each
loader reads its file with an outside reader — pyEDFlib for the EDF, MNE-Python for
the FIF — never with bedside's own code, so the tests compare bedside against data
it did not prepare. Results are cached per process (the files are read once).
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import cache
from pathlib import Path

import numpy as np

DATA = Path(__file__).parent / "data"
EEGMMIDB_EDF = DATA / "S001R02.edf"
MNE_SAMPLE_FIF = DATA / "sample_eeg_raw.fif"


@dataclass(frozen=True)
class Recording:
    """A real recording: data_uv (n_samples, n_channels) µV; labels as the file has
    them; types in BIDS spelling (EEG, EOG, TRIG); rate_hz; physical_range_uv per
    channel (min, max) where the file declares one; positions_m: label → (x, y, z)
    in metres (head frame) where the file has digitised positions."""

    name: str
    data_uv: np.ndarray
    labels: tuple[str, ...]
    types: tuple[str, ...]
    rate_hz: float
    physical_range_uv: tuple[tuple[float, float], ...] | None = None
    positions_m: dict[str, tuple[float, float, float]] | None = None

    def pick(self, kind: str = "EEG") -> Recording:
        """Only the channels of one type (default: the scalp EEG)."""
        keep = [i for i, t in enumerate(self.types) if t == kind]
        return Recording(
            self.name,
            self.data_uv[:, keep],
            tuple(self.labels[i] for i in keep),
            tuple(self.types[i] for i in keep),
            self.rate_hz,
            None if self.physical_range_uv is None else tuple(self.physical_range_uv[i] for i in keep),
            self.positions_m,
        )


@cache
def eegmmidb() -> Recording:
    """EEGMMIDB S001R02 (eyes closed, 64 ch, 160 Hz), read with pyEDFlib."""
    import pyedflib

    with pyedflib.EdfReader(str(EEGMMIDB_EDF)) as f:
        n = f.signals_in_file
        labels = tuple(f.getLabel(i) for i in range(n))
        rate = float(f.getSampleFrequency(0))
        data = np.column_stack([f.readSignal(i) for i in range(n)])
        ranges = tuple((float(f.getPhysicalMinimum(i)), float(f.getPhysicalMaximum(i))) for i in range(n))
        dims = {f.getPhysicalDimension(i) for i in range(n)}
    assert dims == {"uV"}, dims  # the file's own unit: µV
    # The last data record is padded with zeros on every channel after the recording
    # ended (0.8 s here): that is no EEG, and a flat tail on all 64 channels would be a
    # fault of the file, not of the electrodes. Keep what was recorded.
    recorded = np.flatnonzero(np.any(data != 0.0, axis=1))
    data = data[: int(recorded[-1]) + 1]
    return Recording("EEGMMIDB S001R02", data, labels, ("EEG",) * n, rate, ranges)


@cache
def mne_sample() -> Recording:
    """MNE-Python's sample EEG (60 EEG + 1 EOG + STI 014, 600.6 Hz), read with MNE-Python."""
    import mne

    raw = mne.io.read_raw_fif(MNE_SAMPLE_FIF, preload=True, verbose="error")
    kinds = {"eeg": "EEG", "eog": "EOG", "stim": "TRIG"}
    types = tuple(kinds[t] for t in raw.get_channel_types())
    data = raw.get_data().T.copy()
    volts = np.array([t != "TRIG" for t in types])
    data[:, volts] *= 1e6  # V → µV; the trigger channel keeps its codes
    positions = {
        ch["ch_name"]: tuple(float(v) for v in ch["loc"][:3])
        for ch in raw.info["chs"]
        if ch["kind"] == mne.io.constants.FIFF.FIFFV_EEG_CH
    }
    return Recording(
        "MNE-Python sample", data, tuple(raw.ch_names), types, float(raw.info["sfreq"]),
        None, positions,  # type: ignore[arg-type]
    )
