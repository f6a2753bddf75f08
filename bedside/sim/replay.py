"""Replay a recorded EDF/EDF+ or XDF file on LSL, in real time or faster, optionally looping.

``load_recording(path)`` reads the file into a :class:`Recording` (samples
(n_samples, n_channels) in the file's own units, labels and units from the file);
``replay_publisher(recording, ...)`` returns a
:class:`~bedside.sim.publish.StreamPublisher` that plays it.

* EDF/EDF+ (and 24-bit BDF) is read with edfio (a main dependency). EDF+ annotation signals are not
  samples and are left out. LSL carries one rate per stream: when signals differ in
  rate, the largest group of same-rate signals is played and the others are named in
  a warning (never dropped silently).
* XDF is read with pyxdf (the optional ``xdf`` extra); the first EEG stream is
  played (or the only numeric stream), with labels/units/types from its metadata.

Voltage units are sent in the XDF spelling ("microvolts", "millivolts", "volts",
"nanovolts"); any other unit text is passed on as the file has it.
"""

from __future__ import annotations

import logging
import math
import socket
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np

from bedside.errors import ScenarioError
from bedside.sim.publish import ChannelSpec, OutletSpec, StreamPublisher
from bedside.sim.scenario import channel_type
from bedside.stream.units import scale_to_uv, unit_kind

log = logging.getLogger("bedside")

#: File suffixes and the reader for each.
FORMATS = {".edf": "EDF", ".bdf": "EDF", ".xdf": "XDF", ".xdfz": "XDF"}

_UNITS = {
    "uv": "microvolts", "µv": "microvolts", "μv": "microvolts", "microvolt": "microvolts",
    "microvolts": "microvolts", "mv": "millivolts", "millivolts": "millivolts",
    "v": "volts", "volt": "volts", "volts": "volts", "nv": "nanovolts", "nanovolts": "nanovolts",
}
# EDF+ labels start with the signal type ("EEG Fz-Cz"; EDF+ specification, Kemp &
# Olivan 2003); these types are recognised.
_EDF_TYPES = {"EEG", "ECG", "EOG", "EMG", "MEG", "MCG", "EP", "RESP", "TEMP", "SAO2", "LIGHT", "SOUND", "EVENT"}


def xdf_unit(unit: str) -> str:
    """A unit as the XDF convention spells it (voltage units), else the text unchanged."""
    return _UNITS.get(unit.strip().lower(), unit.strip())


def _type_of(label: str) -> str:
    first = label.strip().split(" ")[0].upper()
    if first in _EDF_TYPES and " " in label.strip():
        return first
    return channel_type(label.strip())


@dataclass(frozen=True)
class Recording:
    """A file's samples, ready to publish: ``data`` is (n_samples, n_channels) in each
    channel's unit (``channels[i].unit``), at ``rate_hz``."""

    path: Path
    format: str
    rate_hz: float
    channels: tuple[ChannelSpec, ...]
    data: np.ndarray
    skipped: tuple[str, ...] = ()
    #: ± input range in µV where the file declares one (EDF/BDF: the physical minimum and
    #: maximum, the smallest over the voltage channels); published so that clipping at the
    #: file's limits is judged against them.
    input_range_uv: float | None = None

    @property
    def n_samples(self) -> int:
        return int(self.data.shape[0])

    @property
    def duration_s(self) -> float:
        return self.n_samples / self.rate_hz


def load_recording(path: str | Path) -> Recording:
    """Read an EDF/EDF+ (``.edf``, ``.bdf``) or XDF (``.xdf``, ``.xdfz``) file.

    Raises :class:`~bedside.errors.ScenarioError` naming the file and the problem.
    """
    path = Path(path)
    kind = FORMATS.get(path.suffix.lower())
    if kind is None:
        raise ScenarioError(
            f"{path}: cannot replay a '{path.suffix or 'no suffix'}' file; accepted: "
            + ", ".join(sorted(FORMATS))
        )
    if not path.is_file():
        if path.is_dir():
            raise ScenarioError(f"{path}: is a folder, not a recording")
        if path.exists():
            raise ScenarioError(f"{path}: not a regular file (a device or a pipe); give a recording file")
        raise ScenarioError(f"{path}: file not found")
    rec = _load_edf(path) if kind == "EDF" else _load_xdf(path)
    if rec.n_samples == 0:
        raise ScenarioError(f"{path}: the file holds no samples")
    if rec.skipped:
        log.warning(
            "%s: signals at other rates are not replayed (one rate per LSL stream): %s",
            path, ", ".join(rec.skipped),
        )
    return rec


def _load_edf(path: Path) -> Recording:
    import edfio  # lazy, measured: 0.14 s to import (python -X importtime), for EDF/BDF only

    bdf = path.suffix.lower() == ".bdf"
    signals: list[Any]
    try:
        edf: Any = edfio.read_bdf(path) if bdf else edfio.read_edf(path)
        signals = list(edf.signals)
    except (ValueError, OSError, UnicodeDecodeError, IndexError, KeyError) as exc:
        kind = "BDF" if bdf else "EDF/EDF+"
        raise ScenarioError(f"{path}: not a readable {kind} file ({exc})") from exc
    if not signals:
        raise ScenarioError(f"{path}: the file has no signals to replay")
    rates = [float(s.sampling_frequency) for s in signals]
    # The largest group of signals sharing a rate (ties: the higher rate).
    best = max(set(rates), key=lambda r: (rates.count(r), r))
    keep = [s for s, r in zip(signals, rates, strict=True) if r == best]
    skipped = tuple(f"{s.label.strip()} ({r:g} Hz)" for s, r in zip(signals, rates, strict=True) if r != best)
    n = min(len(s.data) for s in keep)
    try:
        data = np.column_stack([np.asarray(s.data[:n], dtype=np.float64) for s in keep])
    except (ValueError, OSError) as exc:
        raise ScenarioError(f"{path}: the signals could not be read ({exc})") from exc
    channels = tuple(
        ChannelSpec(s.label.strip(), xdf_unit(s.physical_dimension), _type_of(s.label)) for s in keep
    )
    return Recording(path, "BDF" if bdf else "EDF", best, channels, data, skipped,
                     _physical_range_uv(keep, channels))


def _physical_range_uv(signals: list[Any], channels: tuple[ChannelSpec, ...]) -> float | None:
    """The smallest ±range (µV) over the voltage signals' physical minimum and maximum."""
    ranges = []
    for sig, ch in zip(signals, channels, strict=True):
        if unit_kind(ch.unit) is not None or not ch.unit:
            continue  # not a voltage, or no unit to scale by
        try:
            scale, note = scale_to_uv(ch.unit)
            if note:
                continue  # a unit not understood: no range to trust
            lo, hi = float(sig.physical_min), float(sig.physical_max)
        except (AttributeError, TypeError, ValueError):
            continue
        r = min(abs(lo), abs(hi)) * scale
        if math.isfinite(r) and r > 0:
            ranges.append(r)
    return min(ranges) if ranges else None


def _load_xdf(path: Path) -> Recording:
    try:
        import pyxdf  # lazy: an optional extra ('bedside[xdf]'); missing, it is said below
    except ImportError as exc:
        raise ScenarioError(
            "replaying XDF needs pyxdf, which is not installed: pip install 'bedside[xdf]' "
            "(EDF/EDF+ files replay without it)"
        ) from exc
    try:
        with path.open("rb") as fh:
            magic = fh.read(4)
    except OSError as exc:
        raise ScenarioError(f"{path}: cannot read ({exc.strerror})") from exc
    if magic != b"XDF:" and magic[:2] != b"\x1f\x8b":  # XDF magic, or gzip for .xdfz
        raise ScenarioError(f"{path}: not a readable XDF file (it does not start with 'XDF:')")
    try:
        streams, _ = pyxdf.load_xdf(str(path))
    except Exception as exc:  # pyxdf raises many kinds on a damaged file; translated here
        raise ScenarioError(f"{path}: not a readable XDF file ({exc})") from exc
    numeric = [s for s in streams if _is_numeric(s)]
    if not numeric:
        raise ScenarioError(f"{path}: no stream with numeric samples to replay")
    eeg = [s for s in numeric if _first(s["info"].get("type"), "").upper() == "EEG"]
    chosen = (eeg or numeric)[0]
    if len(eeg or numeric) > 1:
        log.warning("%s: several streams; replaying the first (%s)", path, _first(chosen["info"].get("name"), "?"))
    info = chosen["info"]
    try:
        rate = float(_first(info.get("nominal_srate"), "0"))
    except ValueError:
        rate = 0.0
    if rate <= 0:
        raise ScenarioError(f"{path}: the stream has an irregular rate; only regularly sampled streams replay")
    data = np.asarray(chosen["time_series"], dtype=np.float64)
    if data.ndim == 1:
        data = data[:, None]
    labels, units, types = _xdf_channels(info, data.shape[1])
    channels = tuple(
        ChannelSpec(lbl, xdf_unit(u) if u else "", t or channel_type(lbl))
        for lbl, u, t in zip(labels, units, types, strict=True)
    )
    return Recording(path, "XDF", rate, channels, data)


def _first(value: Any, default: str) -> str:
    if isinstance(value, list):
        return str(value[0]) if value else default
    return default if value is None else str(value)


def _is_numeric(stream: dict[str, Any]) -> bool:
    ts = stream.get("time_series")
    return isinstance(ts, np.ndarray) and ts.size > 0 and np.issubdtype(ts.dtype, np.number)


def _xdf_channels(info: dict[str, Any], n: int) -> tuple[list[str], list[str], list[str]]:
    labels = [f"Ch{i + 1}" for i in range(n)]
    units = [""] * n
    types = [""] * n
    try:
        desc = info["desc"][0]
        chans = desc["channels"][0]["channel"]
    except (KeyError, IndexError, TypeError):
        return labels, units, types
    for i, ch in enumerate(chans[:n]):
        if not isinstance(ch, dict):
            continue
        labels[i] = _first(ch.get("label"), labels[i])
        units[i] = _first(ch.get("unit"), "")
        types[i] = _first(ch.get("type"), "")
    return labels, units, types


def recording_spec(rec: Recording, name: str | None = None, source_id: str | None = None) -> OutletSpec:
    stream_name = name or f"bedside-replay-{rec.path.stem}"
    sid = source_id or f"bedside-replay-{stream_name}-{socket.gethostname()}"
    return OutletSpec(
        name=stream_name,
        source_id=sid,
        rate_hz=rec.rate_hz,
        channels=rec.channels,
        manufacturer="bedside",
        model=f"replay of {rec.format}",
        extra=(("file", rec.path.name), ("format", rec.format)),
        input_range_uv=rec.input_range_uv,
    )


def replay_publisher(
    recording: Recording | str | Path,
    name: str | None = None,
    speed: float = 1.0,
    loop: bool = False,
    source_id: str | None = None,
) -> StreamPublisher:
    """A (not yet started) publisher that plays ``recording`` once, or endlessly if ``loop``."""
    rec = recording if isinstance(recording, Recording) else load_recording(recording)
    data = rec.data
    total = rec.n_samples

    def read(start: int, n: int) -> np.ndarray:
        if start + n <= total:
            return data[start : start + n]
        return data[np.arange(start, start + n) % total]

    return StreamPublisher(
        recording_spec(rec, name, source_id), read, total_samples=None if loop else total, speed=speed
    )
