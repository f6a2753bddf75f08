"""An EDF+ clip of the last seconds of signal, with the findings as annotations (edfio).

EDF+ rules that matter here (EDF+ specification, Kemp & Olivan 2003; edfio 0.4):
header text is ASCII (so the unit is written "uV", never "µV"); a signal label is at
most 16 characters; every signal fills whole data records, so the clip is cut to a
whole number of records — keeping the newest samples, since it is "the last N
seconds" — and the result says how many samples were dropped. Each channel gets its own
symmetric physical range (the next whole µV above its largest magnitude) over the
16-bit digital range, so the quantisation step is 2·range/65535 µV.

NaN/±Inf samples cannot be stored in EDF: they are written as 0 and an annotation at
the clip start says how many, in which channel — never silently.

:func:`annotations_for_clip` turns the setup log's timeline, findings and stream events
inside the clip into EDF+ annotations.
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Sequence
from dataclasses import dataclass
from datetime import datetime, timedelta
from pathlib import Path
from typing import BinaryIO

import numpy as np

from bedside import __version__
from bedside.errors import InputError, RecordError
from bedside.record.atomic import atomic_write
from bedside.record.ids import validate_subject_id
from bedside.record.log import SetupLog

LABEL_MAX = 16
DIGITAL_RANGE = (-32768, 32767)
#: Largest magnitude whose range still fits the 8-character header field (µV).
PHYSICAL_MAX_UV = 9_999_999.0
#: Candidate data-record durations (s), shortest first among the usual ones.
_RECORD_DURATIONS_S = (1.0, 0.5, 0.25, 0.2, 0.1, 2.0, 4.0, 5.0, 10.0)


@dataclass(frozen=True)
class EdfClipResult:
    """What was written: samples per channel, the samples dropped from the start to fill
    whole data records, the record duration, and each channel's physical range (µV)."""

    path: Path
    n_samples: int
    dropped_samples: int
    record_duration_s: float
    physical_range_uv: tuple[float, ...]
    notes: tuple[str, ...]


def record_duration_for(rate_hz: float) -> float:
    """The data-record duration (s) that holds a whole number of samples at ``rate_hz``."""
    for duration in _RECORD_DURATIONS_S:
        per_record = rate_hz * duration
        if abs(per_record - round(per_record)) < 1e-9 and round(per_record) >= 1:
            return duration
    raise InputError(
        f"a rate of {rate_hz:g} Hz gives no whole number of samples per EDF data record "
        "(tried 0.1 to 10 s); accepted: rates such as 128, 250, 256, 500, 512 or 1000 Hz"
    )


def _check_labels(labels: Sequence[str], n_channels: int) -> list[str]:
    if len(labels) != n_channels:
        raise InputError(f"{len(labels)} labels for {n_channels} channels; give one label per channel")
    out = []
    for label in labels:
        if not isinstance(label, str) or not label.strip():
            raise InputError(f"channel label {label!r} is empty; every EDF signal needs a label")
        text = label.strip()
        if len(text) > LABEL_MAX:
            raise InputError(f"channel label {text!r} is {len(text)} characters; EDF allows at most {LABEL_MAX}")
        if not text.isascii() or not text.isprintable():
            raise InputError(f"channel label {text!r} is not printable ASCII, which EDF headers require")
        out.append(text)
    dupes = sorted({x for x in out if out.count(x) > 1})
    if dupes:
        raise InputError(f"channel labels repeat ({', '.join(dupes)}); EDF signals need distinct labels")
    return out


def write_edf_clip(
    path: Path | str,
    samples_uv: np.ndarray,
    rate_hz: float,
    labels: Sequence[str],
    annotations: Iterable[tuple[float, float | None, str]] = (),
    *,
    subject_id: str = "",
    start: datetime | None = None,
    technologist: str = "",
) -> EdfClipResult:
    """Write ``samples_uv`` (shape (n_samples, n_channels), µV) as an EDF+ file.

    annotations: (onset_s from the first sample given, duration_s or None, text).
    subject_id: the pseudonymous ID for the EDF+ patient field ("X" when empty).
    start: the wall-clock time of the first sample given (default: now minus the clip).
    technologist: initials for the EDF+ investigator/technician field ("X" when empty).
    Raises InputError for unusable input, RecordError/LogSaveError if writing fails.
    """
    import edfio

    data = np.asarray(samples_uv, dtype=float)
    if data.ndim != 2 or data.shape[1] < 1:
        raise InputError(f"samples must be (n_samples, n_channels); got shape {data.shape}")
    if isinstance(rate_hz, bool) or not isinstance(rate_hz, int | float) or not math.isfinite(rate_hz) or rate_hz <= 0:
        raise InputError(f"rate {rate_hz!r} Hz is not acceptable; accepted: a positive number")
    names = _check_labels(labels, data.shape[1])
    code = validate_subject_id(subject_id, allow_letters_only=True) or "X"
    duration = record_duration_for(float(rate_hz))
    per_record = round(rate_hz * duration)
    n_total = data.shape[0]
    n_keep = (n_total // per_record) * per_record
    if n_keep == 0:
        raise InputError(
            f"{n_total} samples at {rate_hz:g} Hz are less than one EDF data record "
            f"({per_record} samples, {duration:g} s)"
        )
    dropped = n_total - n_keep
    data = data[dropped:]
    shift_s = dropped / rate_hz
    notes: list[str] = []
    edf_annotations = []
    if dropped:
        notes.append(f"first {dropped} samples dropped to fill whole {duration:g} s data records")
    signals = []
    ranges = []
    for i, name in enumerate(names):
        column = data[:, i].copy()
        bad = ~np.isfinite(column)
        if bad.any():
            column[bad] = 0.0
            text = f"{name}: {int(bad.sum())} missing samples (NaN/Inf) written as 0"
            notes.append(text)
            edf_annotations.append(edfio.EdfAnnotation(0.0, None, text))
        peak = float(np.max(np.abs(column))) if column.size else 0.0
        if peak > PHYSICAL_MAX_UV:
            raise InputError(
                f"channel {name} reaches {peak:.3g} µV; EDF headers hold at most ±{PHYSICAL_MAX_UV:.0f} µV"
            )
        limit = float(max(1, math.ceil(peak)))
        ranges.append(limit)
        signals.append(
            edfio.EdfSignal(
                column,
                float(rate_hz),
                label=name,
                physical_dimension="uV",
                physical_range=(-limit, limit),
                digital_range=DIGITAL_RANGE,
            )
        )
    clip_s = n_keep / rate_hz
    for onset_s, dur_s, text in annotations:
        onset = float(onset_s) - shift_s
        label = str(text)
        if onset < 0:
            label += f" (at {onset:.2f} s, before the clip)"
            onset = 0.0
        if onset > clip_s:
            raise InputError(f"annotation {text!r} at {onset_s} s is after the clip's end ({clip_s:g} s)")
        if dur_s is not None and (not math.isfinite(float(dur_s)) or float(dur_s) < 0):
            raise InputError(f"annotation {text!r} has duration {dur_s!r}; accepted: none or ≥ 0 s")
        edf_annotations.append(edfio.EdfAnnotation(round(onset, 4), None if dur_s is None else float(dur_s), label))
    if start is None:
        first = datetime.fromtimestamp(datetime.now().timestamp() - clip_s)
    else:
        first = (start.astimezone() if start.tzinfo else start) + timedelta(seconds=shift_s)
    try:
        edf = edfio.Edf(
            signals,
            patient=edfio.Patient(code=code),
            recording=edfio.Recording(
                startdate=first.date(), equipment_code=f"bedside-{__version__}",
                # EDF+ (Kemp & Olivan 2003, 2.1.3.2): a field without spaces, "X" if unknown.
                investigator_technician_code=technologist.strip().replace(" ", "_") or "X",
            ),
            starttime=first.time().replace(microsecond=0, tzinfo=None),
            data_record_duration=duration,
            annotations=edf_annotations,
        )
    except (ValueError, UnicodeEncodeError) as exc:
        raise InputError(f"EDF clip not possible: {exc}") from exc

    def write(fh: BinaryIO) -> None:
        edf.write(fh)  # type: ignore[arg-type]

    try:
        written = atomic_write(path, write)
    except (ValueError, UnicodeEncodeError) as exc:
        raise RecordError(f"EDF clip not written: {exc}") from exc
    return EdfClipResult(written, n_keep, dropped, duration, tuple(ranges), tuple(notes))


def annotations_for_clip(log: SetupLog, start: datetime, duration_s: float) -> list[tuple[float, float | None, str]]:
    """The log's findings for a clip that starts at ``start`` (wall clock) and lasts
    ``duration_s``: each electrode's level at the clip start (when not good), every level
    change, finding and stream event inside the clip. Onsets in s from the clip start."""
    if start.tzinfo is None:
        start = start.astimezone()
    out: list[tuple[float, float | None, str]] = []
    level_at_start: dict[str, tuple[str, tuple[str, ...]]] = {}
    # Electrodes changing the same way for the same reason at the same moment (the checks
    # starting: every channel "collecting data") make one annotation naming them all.
    same: dict[tuple[float, str, str, tuple[str, ...]], list[str]] = {}
    for change in log.timeline:
        onset = (change.at - start).total_seconds()
        if onset <= 0:
            level_at_start[change.electrode] = (change.to_level, change.reasons)
        elif onset <= duration_s:
            key = (round(onset, 3), change.from_level, change.to_level, change.reasons)
            same.setdefault(key, []).append(change.electrode)
    for (onset, from_level, to_level, reasons), names in same.items():
        out.append((onset, None, _grouped(names, f"{from_level} -> {to_level}", reasons)))
    at_start: dict[tuple[str, tuple[str, ...]], list[str]] = {}
    for name, (level, reasons) in level_at_start.items():
        if level != "good":
            at_start.setdefault((level, reasons), []).append(name)
    for (level, reasons), names in at_start.items():
        out.append((0.0, None, _grouped(names, f"{level} at clip start", reasons)))
    for f in log.findings:
        onset = (f.at - start).total_seconds()
        if 0 <= onset <= duration_s:
            out.append((round(onset, 3), None, f"{f.kind} {'-'.join(f.electrodes)} {f.change} ({f.level}): {f.reason}"))
    for e in log.events:
        onset = (e.at - start).total_seconds()
        if e.kind.startswith("stream_") and 0 <= onset <= duration_s:
            out.append((round(onset, 3), None, f"{e.kind.replace('_', ' ')}: {e.detail}"))
    out.sort(key=lambda a: a[0])
    return out


def _grouped(names: Sequence[str], what: str, reasons: tuple[str, ...]) -> str:
    who = names[0] if len(names) == 1 else f"{len(names)} channels ({', '.join(names)})"
    return f"{who}: {what}" + (" (" + "; ".join(reasons) + ")" if reasons else "")
