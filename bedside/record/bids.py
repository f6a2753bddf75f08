"""BIDS-EEG sidecars from a setup log (BIDS specification 1.11, EEG section).

Written into ``OUT/sub-<label>/[ses-<label>/]eeg/``:

* ``…_task-<label>_channels.tsv``: ``name``, ``type``, ``units`` (required, in that
  order), then ``reference`` (what a voltage channel is referred to: the reference its
  label names, e.g. A1 in ``T3-A1``, else the setup's reference; ``n/a`` when unknown or
  not a voltage channel), ``status`` (good/bad/n/a) and ``status_description``, one row
  per stream channel in stream order, named as the stream labels them (as the recording
  will);
* ``…_electrodes.tsv`` and ``…_coordsystem.json``: the plan's positions, written by
  :mod:`bedside.placement.bids`;
* ``…_task-<label>_eeg.json``: ``TaskName``, ``EEGReference``, ``SamplingFrequency``,
  ``PowerLineFrequency``, ``SoftwareFilters`` (required) and, when known, ``EEGGround``,
  ``EEGPlacementScheme``, ``HeadCircumference`` (cm), channel counts. The BIDS schema
  lets ``PowerLineFrequency`` and ``SoftwareFilters`` be ``"n/a"`` but requires
  ``SamplingFrequency`` to be a number, so without a stream (no rate) this file is not
  written and a warning says so. Each count is the number of channels.tsv rows of
  exactly that type (the schema's checks count ``EOG`` rows for EOGChannelCount, not
  HEOG/VEOG; ``MISC`` rows for MiscChannelCount);
* ``OUT/dataset_description.json`` if the folder has none yet.

These describe the recording made after the setup; the EEG data file itself comes from
the acquisition system. Status mapping: good → good, bad → bad; check and no
data → ``n/a`` by default (quality not settled at setup), with the level's word
(``checks.types.LEVEL_WORDS``) and reasons in
``status_description``. Existing files are never replaced unless ``overwrite=True``.
Every file is written atomically, owner-only (0600).
"""

from __future__ import annotations

import inspect
import json
import logging
import re
from dataclasses import dataclass
from pathlib import Path
from typing import Any, Literal

from bedside import __version__
from bedside.checks.types import LEVEL_WORDS
from bedside.errors import InputError, RecordError
from bedside.record.atomic import atomic_write_text
from bedside.record.log import SetupLog

log = logging.getLogger("bedside")

BIDS_VERSION = "1.11.0"
#: channels.tsv ``type`` values of BIDS 1.11 that bedside can produce (upper-case): every
#: kind the stream package gives a channel (bedside.stream.labels.KINDS). Checked against
#: the BIDS schema's own list in tests/record/test_bids_schema.py.
CHANNEL_TYPES = (
    "EEG", "EOG", "HEOG", "VEOG", "ECG", "EMG", "TRIG", "MISC", "REF",
    "GSR", "RESP", "PPG", "TEMP", "EYEGAZE", "PUPIL", "SYSCLOCK", "AUDIO",
)  # fmt: skip
CHANNEL_COLUMNS = ("name", "type", "units", "reference", "status", "status_description")

_UNIT_WORDS = {
    # stream unit text (lower-case) → BIDS/CMIXF unit. XDF meta-data says "microvolts".
    "microvolts": "uV", "microvolt": "uV", "uv": "uV", "µv": "uV", "μv": "uV",
    "millivolts": "mV", "millivolt": "mV", "mv": "mV",
    "volts": "V", "volt": "V", "v": "V",
    "nanovolts": "nV", "nv": "nV",
}  # fmt: skip
#: Kinds measured in volts (electrodes on the skin); their units default to µV.
_VOLTAGE_KINDS = {"EEG", "EOG", "HEOG", "VEOG", "ECG", "EMG", "REF"}
_LABEL_RE = re.compile(r"[A-Za-z0-9]+")


@dataclass(frozen=True)
class BidsResult:
    """The files written, and what had to be left as n/a or skipped (plain words)."""

    files: tuple[Path, ...]
    warnings: tuple[str, ...]


def bids_label(text: str, what: str) -> str:
    """A BIDS entity label: letters and digits only (``W3-017`` → ``W3017``)."""
    label = "".join(_LABEL_RE.findall(text or ""))
    if not label:
        raise InputError(
            f"{what} {text!r} gives no BIDS label; accepted: letters and digits (e.g. W3017)"
        )
    return label


def _tsv_cell(value: object) -> str:
    text = str(value).replace("\t", " ").replace("\r", " ").replace("\n", " ").strip()
    return text or "n/a"


def _bids_type(kind: str) -> str:
    """The channels.tsv type of a stream kind (upper-case; MISC for one BIDS lacks)."""
    return kind.upper() if kind.upper() in CHANNEL_TYPES else "MISC"


def _units(kind: str, unit: str) -> str:
    mapped = _UNIT_WORDS.get(unit.strip().lower())
    if mapped:
        return mapped
    # The stream package converts voltage channels to µV; with no unit sent, that is
    # what bedside assumed (ChannelInfo.note says so).
    return "uV" if kind in _VOLTAGE_KINDS and not unit.strip() else "n/a"


def channels_rows(
    log_: SetupLog, *, check_status: Literal["n/a", "bad", "good"] = "n/a"
) -> list[tuple[str, str, str, str, str, str]]:
    """The channels.tsv rows (name, type, units, reference, status, status_description)."""
    if log_.stream is None:
        return []
    rows = []
    for ch in log_.stream.channels:
        kind = _bids_type(ch.kind)
        final = log_.final.get(ch.name)
        if final is None:
            status, description = "n/a", "no live verdict during the setup check"
        else:
            status = {"good": "good", "bad": "bad", "check": check_status}.get(final.level, "n/a")
            word = LEVEL_WORDS[final.level]
            description = f"setup check verdict {word} at {final.at.strftime('%H:%M:%S')}"
            if final.reasons:
                description += ": " + "; ".join(final.reasons)
        reference = (ch.reference or log_.reference) if kind in _VOLTAGE_KINDS - {"REF"} else ""
        rows.append(
            (
                _tsv_cell(ch.label or ch.name),
                kind,
                _units(kind, ch.unit),
                _tsv_cell(reference),
                status,
                _tsv_cell(description),
            )
        )
    return rows


def eeg_sidecar(
    log_: SetupLog,
    *,
    task: str,
    reference: str | None = None,
    ground: str | None = None,
    power_line_hz: float | None = None,
    placement_scheme: str | None = None,
) -> tuple[dict[str, Any], list[str]]:
    """The ``_eeg.json`` content and the warnings about fields left ``n/a``."""
    warnings: list[str] = []
    ref = reference or log_.reference
    if not ref:
        warnings.append("EEGReference unknown (set it with --reference): written as n/a")
    rate: float | str = "n/a"
    if log_.stream is not None and log_.stream.identity.nominal_rate_hz > 0:
        rate = float(log_.stream.identity.nominal_rate_hz)
    else:
        warnings.append(
            "SamplingFrequency unknown (no stream with a regular rate in the log): "
            "_eeg.json not written (BIDS requires a number there)"
        )
    # The BIDS schema (objects.metadata.PowerLineFrequency) accepts a number > 0 or "n/a".
    mains: float | str = power_line_hz or log_.power_line_hz or "n/a"
    if mains == "n/a":
        warnings.append("PowerLineFrequency unknown (set it with --line-freq 50 or 60): written as n/a")
    sidecar: dict[str, Any] = {
        "TaskName": task,
        "EEGReference": ref or "n/a",
        "SamplingFrequency": rate,
        "PowerLineFrequency": mains,
        # bedside filters only its own displays, never the recording.
        "SoftwareFilters": "n/a",
    }
    gnd = ground or log_.ground
    if gnd:
        sidecar["EEGGround"] = gnd
    scheme = placement_scheme or (log_.plan.system if log_.plan is not None else "")
    if scheme:
        sidecar["EEGPlacementScheme"] = scheme
    if log_.plan is not None:
        sidecar["HeadCircumference"] = float(log_.plan.measurements.circumference_cm)
    if log_.stream is not None:
        # The types exactly as channels.tsv writes them: the schema checks each count
        # against count(channels.type, TYPE).
        kinds = [_bids_type(c.kind) for c in log_.stream.channels]
        for key, kind in (
            ("EEGChannelCount", "EEG"),
            ("EOGChannelCount", "EOG"),
            ("ECGChannelCount", "ECG"),
            ("EMGChannelCount", "EMG"),
            ("TriggerChannelCount", "TRIG"),
            ("MiscChannelCount", "MISC"),
        ):
            sidecar[key] = kinds.count(kind)
    sidecar["SoftwareVersions"] = f"bedside {log_.software_version or __version__} (setup check)"
    return sidecar, warnings


def write_bids(
    log_: SetupLog,
    out_dir: Path | str,
    *,
    task: str = "clinical",
    session: str | None = None,
    subject: str | None = None,
    reference: str | None = None,
    ground: str | None = None,
    power_line_hz: float | None = None,
    check_status: Literal["n/a", "bad", "good"] = "n/a",
    overwrite: bool = False,
) -> BidsResult:
    """Write the BIDS sidecars for ``log_`` under ``out_dir`` (see the module docstring).

    Raises InputError for labels that give no BIDS label or a bad line frequency,
    RecordError when files exist (and ``overwrite`` is False) or cannot be written.
    """
    sub = bids_label(subject if subject is not None else log_.subject_id, "subject ID")
    task_label = bids_label(task, "task")
    ses = bids_label(session, "session") if session else None
    if power_line_hz is not None and power_line_hz not in (50, 60):
        raise InputError(f"power line frequency is {power_line_hz!r} Hz; accepted: 50 or 60")
    out = Path(out_dir)
    if out.exists() and not out.is_dir():
        raise RecordError(f"{out} is a file; --bids-dir needs a folder")
    folder = out / f"sub-{sub}" / (f"ses-{ses}" if ses else "") / "eeg"
    stem = f"sub-{sub}" + (f"_ses-{ses}" if ses else "")
    task_stem = f"{stem}_task-{task_label}"

    warnings: list[str] = []
    planned: dict[Path, str] = {}
    rows = channels_rows(log_, check_status=check_status)
    if rows:
        lines = ["\t".join(CHANNEL_COLUMNS)] + ["\t".join(r) for r in rows]
        planned[folder / f"{task_stem}_channels.tsv"] = "\n".join(lines) + "\n"
    else:
        warnings.append("no stream in the log: channels.tsv not written")
    sidecar, more = eeg_sidecar(
        log_, task=task, reference=reference, ground=ground, power_line_hz=power_line_hz
    )
    warnings += more
    if sidecar["SamplingFrequency"] != "n/a":
        planned[folder / f"{task_stem}_eeg.json"] = json.dumps(sidecar, indent=2, ensure_ascii=False) + "\n"
    electrodes = folder / f"{stem}_electrodes.tsv"
    coordsystem = folder / f"{stem}_coordsystem.json"
    positions = _electrode_positions(log_)
    placement_writers = _placement_writers() if positions else None
    if not positions:
        warnings.append("no head measurements in the log: electrodes.tsv and coordsystem.json not written")
    elif placement_writers is None:
        warnings.append("electrode positions writer unavailable: electrodes.tsv and coordsystem.json not written")
    description = out / "dataset_description.json"

    targets = list(planned)
    if positions and placement_writers is not None:
        targets += [electrodes, coordsystem]
    existing = [p for p in targets if p.exists()]
    if existing and not overwrite:
        raise RecordError(
            "these BIDS files exist already and are not replaced: "
            + ", ".join(str(p) for p in existing)
            + " (use --overwrite to replace them)"
        )
    try:
        folder.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise RecordError(f"cannot create {folder} ({exc.strerror})") from exc
    written: list[Path] = []
    try:
        if not description.exists():
            text = json.dumps(
                {
                    "Name": "EEG setup checks (bedside)",
                    "BIDSVersion": BIDS_VERSION,
                    "DatasetType": "raw",
                    "GeneratedBy": [{"Name": "bedside", "Version": __version__}],
                },
                indent=2,
            )
            written.append(atomic_write_text(description, text + "\n"))
        for path, text in planned.items():
            written.append(atomic_write_text(path, text))
    except RecordError as exc:
        raise RecordError(f"BIDS export stopped: {exc}") from exc
    if positions and placement_writers is not None:
        write_electrodes_tsv, write_coordsystem_json = placement_writers
        impedances = log_.latest_impedances_kohm()
        try:
            write_electrodes_tsv(electrodes, positions, impedances_kohm=impedances or None)
            write_coordsystem_json(coordsystem)
        except RecordError as exc:
            raise RecordError(f"BIDS export stopped: {exc}") from exc
        except OSError as exc:
            raise RecordError(f"BIDS export stopped: cannot write {exc.filename} ({exc.strerror})") from exc
        written += [electrodes, coordsystem]
    for w in warnings:
        log.info("BIDS export: %s", w)
    return BidsResult(tuple(written), tuple(warnings))


def _electrode_positions(log_: SetupLog) -> dict[str, tuple[float, float, float]]:
    """The plan's positions (mm) of the electrodes in use: the stream's channels plus the
    reference and ground; every planned site when the log has no stream (or no name
    matches)."""
    if log_.plan is None:
        return {}
    positions = log_.plan_positions_mm()  # keyed as the stream names them (T7 for a classic T3)
    if log_.stream is None:
        return positions
    used = {c.name for c in log_.stream.channels} | {c.label for c in log_.stream.channels}
    used |= {log_.reference, log_.ground}
    chosen = {k: v for k, v in positions.items() if k in used}
    return chosen or positions


def _placement_writers() -> tuple[Any, Any] | None:
    """bedside.placement.bids's writers, when that module is present."""
    try:
        from bedside.placement import bids as placement_bids
    except ImportError:
        return None
    w1 = getattr(placement_bids, "write_electrodes_tsv", None)
    w2 = getattr(placement_bids, "write_coordsystem_json", None)
    if not (callable(w1) and callable(w2)):
        return None
    if "impedances_kohm" not in inspect.signature(w1).parameters:
        return None
    return w1, w2
