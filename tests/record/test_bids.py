"""BIDS sidecars checked against the BIDS specification 1.11 (EEG section, "channels.tsv",
"electrodes.tsv", "coordsystem.json", "_eeg.json"):

* channels.tsv: ``name``, ``type``, ``units`` REQUIRED and in that order; ``type``
  upper-case from the BIDS list; ``status`` one of good/bad/n/a with
  ``status_description`` free text; missing values are ``n/a``.
* _eeg.json: TaskName, EEGReference, SamplingFrequency, PowerLineFrequency,
  SoftwareFilters REQUIRED; EEGGround, EEGPlacementScheme, HeadCircumference (cm)
  RECOMMENDED. SoftwareFilters is an object or "n/a" (BIDS FAQ on filter fields).
* File names: ``sub-<label>[_ses-<label>]_task-<label>_<suffix>``; labels alphanumeric.
"""

from __future__ import annotations

import csv
import json
import stat
from pathlib import Path

import pytest
from record_factories import FakeClock, make_channels, make_frame, make_identity, make_plan

from bedside.checks.types import Level
from bedside.errors import InputError, RecordError
from bedside.record.bids import CHANNEL_TYPES, write_bids
from bedside.record.log import SetupLog
from bedside.record.session import SessionRecorder

BIDS_SPEC = "BIDS 1.11.0"


def _log(tmp_path: Path, clock: FakeClock, *, plan: bool = True) -> SetupLog:
    rec = SessionRecorder.open(tmp_path / "log.yaml", subject_id="W3-017", clock=clock)
    if plan:
        rec.set_plan(make_plan())
    rec.set_stream(make_identity(), make_channels())
    rec.set_reference("Cz", "AFz")
    levels: dict[str, Level | None] = {ch.name: Level.GOOD for ch in make_channels()}
    levels.update({"Fp1": Level.BAD, "O2": Level.CHECK, "P4": None})
    rec.on_frame(make_frame(clock.now, levels))
    rec.set_impedance("Fp1", 22.0)
    rec.close()
    return rec.snapshot()


def _tsv(path: Path) -> list[dict[str, str]]:
    with path.open(newline="", encoding="utf-8") as fh:
        return list(csv.DictReader(fh, delimiter="\t"))


def test_channels_tsv_columns_order_and_values(tmp_path: Path, clock: FakeClock) -> None:
    res = write_bids(_log(tmp_path, clock), tmp_path / "bids", power_line_hz=50)
    path = tmp_path / "bids" / "sub-W3017" / "eeg" / "sub-W3017_task-clinical_channels.tsv"
    assert path in res.files
    header = path.read_text(encoding="utf-8").splitlines()[0].split("\t")
    assert header[:3] == ["name", "type", "units"], BIDS_SPEC + ": required columns first, in order"
    assert header[3:] == ["reference", "status", "status_description"]
    rows = _tsv(path)
    assert [r["name"] for r in rows] == [c.label for c in make_channels()], "stream order"
    assert all(r["type"] in CHANNEL_TYPES and r["type"].isupper() for r in rows)
    assert {r["units"] for r in rows} == {"uV"}  # "microvolts" → CMIXF "uV"
    assert all(r["status"] in ("good", "bad", "n/a") for r in rows), BIDS_SPEC
    by_name = {r["name"]: r for r in rows}
    assert by_name["Fp1"]["status"] == "bad" and "line noise" in by_name["Fp1"]["status_description"]
    assert by_name["Cz"]["status"] == "good"
    assert by_name["O2"]["status"] == "n/a" and "setup check verdict check at" in by_name["O2"]["status_description"]
    assert by_name["P4"]["status"] == "n/a" and "no live verdict" in by_name["P4"]["status_description"]
    assert by_name["ECG"]["type"] == "ECG"
    assert all(v for r in rows for v in r.values()), "empty cells are written n/a"


def test_eeg_json_required_and_recommended_fields(tmp_path: Path, clock: FakeClock) -> None:
    res = write_bids(_log(tmp_path, clock), tmp_path / "bids", power_line_hz=50, session="bed4")
    path = tmp_path / "bids" / "sub-W3017" / "ses-bed4" / "eeg" / "sub-W3017_ses-bed4_task-clinical_eeg.json"
    sidecar = json.loads(path.read_text(encoding="utf-8"))
    for key in ("TaskName", "EEGReference", "SamplingFrequency", "PowerLineFrequency", "SoftwareFilters"):
        assert key in sidecar, f"{BIDS_SPEC}: {key} is REQUIRED"
    assert sidecar["TaskName"] == "clinical" and sidecar["EEGReference"] == "Cz"
    assert sidecar["SamplingFrequency"] == 256.0 and sidecar["PowerLineFrequency"] == 50
    assert sidecar["SoftwareFilters"] == "n/a"
    assert sidecar["EEGGround"] == "AFz" and sidecar["EEGPlacementScheme"] == "10-20"
    assert sidecar["HeadCircumference"] == 56.0
    assert sidecar["EEGChannelCount"] == 11 and sidecar["ECGChannelCount"] == 1
    desc = json.loads((tmp_path / "bids" / "dataset_description.json").read_text(encoding="utf-8"))
    assert desc["BIDSVersion"] == "1.11.0" and desc["Name"]
    for p in res.files:
        assert stat.S_IMODE(p.stat().st_mode) == 0o600


def test_unknown_values_are_n_a_with_a_warning(tmp_path: Path, clock: FakeClock) -> None:
    log = _log(tmp_path, clock)
    log.reference = ""
    res = write_bids(log, tmp_path / "bids")
    sidecar = json.loads(
        (tmp_path / "bids" / "sub-W3017" / "eeg" / "sub-W3017_task-clinical_eeg.json").read_text(encoding="utf-8")
    )
    assert sidecar["PowerLineFrequency"] == "n/a" and sidecar["EEGReference"] == "n/a"
    assert any("PowerLineFrequency" in w for w in res.warnings)
    assert any("EEGReference" in w for w in res.warnings)


def test_existing_files_are_not_replaced(tmp_path: Path, clock: FakeClock) -> None:
    log = _log(tmp_path, clock)
    write_bids(log, tmp_path / "bids", power_line_hz=60)
    eeg_json = tmp_path / "bids" / "sub-W3017" / "eeg" / "sub-W3017_task-clinical_eeg.json"
    eeg_json.write_text('{"TaskName": "from the acquisition system"}', encoding="utf-8")
    with pytest.raises(RecordError, match="exist already and are not replaced.*--overwrite"):
        write_bids(log, tmp_path / "bids", power_line_hz=60)
    assert "acquisition system" in eeg_json.read_text(encoding="utf-8")
    write_bids(log, tmp_path / "bids", power_line_hz=60, overwrite=True)
    assert json.loads(eeg_json.read_text(encoding="utf-8"))["PowerLineFrequency"] == 60


def test_bad_labels_and_line_frequency_are_clear_errors(tmp_path: Path, clock: FakeClock) -> None:
    log = _log(tmp_path, clock)
    with pytest.raises(InputError, match="task '--' gives no BIDS label"):
        write_bids(log, tmp_path / "b", task="--")
    with pytest.raises(InputError, match="accepted: 50 or 60"):
        write_bids(log, tmp_path / "b", power_line_hz=55)
    (tmp_path / "afile").write_text("x")
    with pytest.raises(RecordError, match="is a file"):
        write_bids(log, tmp_path / "afile")


def test_electrodes_and_coordsystem_from_the_plan(tmp_path: Path, clock: FakeClock) -> None:
    """electrodes.tsv: name, x, y, z REQUIRED (then impedance in kΩ, RECOMMENDED);
    coordsystem.json REQUIRED with electrodes.tsv: EEGCoordinateSystem, EEGCoordinateUnits."""
    res = write_bids(_log(tmp_path, clock), tmp_path / "bids", power_line_hz=50)
    folder = tmp_path / "bids" / "sub-W3017" / "eeg"
    electrodes = folder / "sub-W3017_electrodes.tsv"
    coords = folder / "sub-W3017_coordsystem.json"
    assert electrodes in res.files and coords in res.files
    header = electrodes.read_text(encoding="utf-8").splitlines()[0].split("\t")
    assert header[:4] == ["name", "x", "y", "z"], BIDS_SPEC
    rows = {r["name"]: r for r in _tsv(electrodes)}
    assert float(rows["Cz"]["z"]) == pytest.approx(90.0, abs=0.1)
    # Only the electrodes in use (stream channels, reference, ground), no ECG.
    assert set(rows) == {c.name for c in make_channels() if c.kind == "EEG"}
    assert header[-1] == "impedance" and float(rows["Fp1"]["impedance"]) == 22.0
    assert rows["Cz"]["impedance"] == "n/a"
    system = json.loads(coords.read_text(encoding="utf-8"))
    assert "EEGCoordinateSystem" in system and system["EEGCoordinateUnits"] in ("m", "mm", "cm")


def test_without_plan_or_stream_the_missing_files_are_named(tmp_path: Path, clock: FakeClock) -> None:
    res = write_bids(SetupLog(subject_id="W3-017"), tmp_path / "bids")
    assert any("channels.tsv not written" in w for w in res.warnings)
    assert any("electrodes.tsv and coordsystem.json not written" in w for w in res.warnings)
    assert any("SamplingFrequency unknown" in w for w in res.warnings)
