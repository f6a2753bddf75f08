"""bedside's BIDS output against the BIDS standard's own machine-readable schema.

Outside reference: the BIDS schema (BIDS 1.11) as the BIDS project ships it in
``bidsschematools`` 2.x, offline — file names through the package's own validator,
sidecar fields, TSV columns and their values and the schema's checks through the rules
in the schema (see bids_schema_rules.py for how they are applied and why). Nothing here
restates a BIDS rule from our side: every expectation is read from the schema.
"""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any

import jsonschema
import pytest
from bids_schema_rules import SCHEMA, Evaluator, Report, filename_matches, validate_folder
from record_factories import SCALP, FakeClock, make_frame, make_identity, make_plan

from bedside.checks.types import Level
from bedside.record.bids import CHANNEL_TYPES, write_bids
from bedside.record.log import SetupLog
from bedside.record.session import SessionRecorder
from bedside.stream.labels import KINDS
from bedside.stream.types import ChannelInfo

#: An amplifier's extra inputs beside the scalp channels (as issue 11 lists them).
EXTRA = (
    ChannelInfo("T3-A1", "T7", "EEG", "microvolts", 1.0, True, reference="A1"),
    ChannelInfo("HEOG", "HEOG", "HEOG", "microvolts", 1.0, False),
    ChannelInfo("VEOGU", "VEOGU", "VEOG", "", 1.0, False),
    ChannelInfo("EOGL", "EOGL", "EOG", "microvolts", 1.0, False),
    ChannelInfo("ECG", "ECG", "ECG", "microvolts", 1.0, False),
    ChannelInfo("EMGchin", "EMGchin", "EMG", "microvolts", 1.0, False),
    ChannelInfo("TRIG", "TRIG", "TRIG", "", 1.0, False),
    ChannelInfo("ACC_X", "ACC_X", "MISC", "g", 1.0, False),
    ChannelInfo("GSR", "GSR", "GSR", "uS", 1.0, False),
    ChannelInfo("REF", "REF", "REF", "microvolts", 1.0, False),
)
CHANNELS = tuple(ChannelInfo(n, n, "EEG", "microvolts", 1.0, True) for n in SCALP) + EXTRA

#: Warnings the schema gives that a setup check cannot answer: the rest of the dataset
#: (README, authors, events) belongs to whoever assembles it from the recording.
OUT_OF_SCOPE = {"README_FILE_MISSING", "TOO_FEW_AUTHORS", "EVENTS_TSV_MISSING"}


def _log(tmp_path: Path, clock: FakeClock) -> SetupLog:
    rec = SessionRecorder.open(tmp_path / "log.yaml", subject_id="W3-017", clock=clock)
    rec.set_plan(make_plan())
    rec.set_stream(make_identity(len(CHANNELS)), CHANNELS)
    rec.set_reference("Cz", "AFz")
    levels: dict[str, Level | None] = {ch.name: Level.GOOD for ch in CHANNELS}
    levels.update({"Fp1": Level.BAD, "O2": Level.CHECK, "P4": None})
    rec.on_frame(make_frame(clock.now, levels))
    rec.set_impedance("Fp1", 22.0)
    rec.close()
    return rec.snapshot()


def _folder(tmp_path: Path, clock: FakeClock, **kwargs: Any) -> Path:
    out = tmp_path / "bids"
    write_bids(_log(tmp_path, clock), out, **{"power_line_hz": 50, "session": "bed4", **kwargs})
    return out


def _codes(report: Report, level: str) -> list[str]:
    return [str(f) for f in report.findings if f.level == level]


@pytest.mark.parametrize(
    "case", list(SCHEMA.meta.expression_tests), ids=lambda c: str(c["expression"])[:40]
)
def test_the_evaluator_gives_the_schemas_own_expression_results(case: Any) -> None:
    """Outside reference: the schema's meta.expression_tests (expression → result)."""
    got = Evaluator({"sidecar": {}})(case["expression"])
    assert got == case["result"] and isinstance(got, bool) == isinstance(case["result"], bool)


def test_file_names_match_the_schemas_file_rules(tmp_path: Path, clock: FakeClock) -> None:
    """bidsschematools.validator: every written file matches one of the schema's
    file rules (entities in order, suffix, extension, the eeg datatype folder)."""
    out = _folder(tmp_path, clock)
    unmatched, matches = filename_matches(out)
    assert unmatched == []
    by_suffix = {m.get("suffix"): m for m in matches if m.get("suffix")}
    assert set(by_suffix) == {"channels", "eeg", "electrodes", "coordsystem"}
    assert by_suffix["eeg"]["task"] == "clinical" and by_suffix["eeg"]["session"] == "bed4"
    assert all(m["datatype"] == "eeg" and m["subject"] == "W3017" for m in by_suffix.values())
    # The check can fail: a name the schema has no rule for is left unmatched.
    wrong = out / "sub-W3017" / "ses-bed4" / "eeg" / "sub-W3017_ses-bed4_task-clinical_chans.tsv"
    wrong.write_text("name\ttype\tunits\n", encoding="utf-8")
    assert [Path(p).name for p in filename_matches(out)[0]] == [wrong.name]


def test_sidecars_columns_and_checks_pass_the_schemas_rules(tmp_path: Path, clock: FakeClock) -> None:
    report = validate_folder(_folder(tmp_path, clock))
    assert _codes(report, "error") == []
    # The rules that matter were applied (the test cannot pass by selecting nothing).
    for rule in (
        "sidecars.eeg.EEGRequired", "sidecars.eeg.EEGRecommended", "tabular_data.eeg.EEGChannels",
        "tabular_data.eeg.EEGElectrodes", "json.eeg.EEGCoordsystemPositions",
        "json.dataset.dataset_description", "checks.eeg.EEGChannelCountReq",
        "checks.eeg.EOGChannelCountReq", "checks.eeg.MiscChannelCountReq",
        "checks.eeg.TriggerChannelCountReq", "checks.channels.RequiredCoordsystem",
        "checks.channels.ElectrodeSpecificity",
    ):  # fmt: skip
        assert rule in report.rules_applied, rule
    # Warnings: only RECOMMENDED fields bedside cannot know (cap maker, institution …)
    # and the dataset-level hints above; never a count that disagrees with channels.tsv.
    for finding in report.warnings():
        assert "is recommended" in finding.what or finding.what.split(":")[0] in OUT_OF_SCOPE, finding
    recommended_missing = {f.what.split()[0] for f in report.warnings() if "is recommended" in f.what}
    written = {"EEGGround", "EEGPlacementScheme", "HeadCircumference", "EEGChannelCount",
               "EOGChannelCount", "ECGChannelCount", "EMGChannelCount", "MiscChannelCount",
               "TriggerChannelCount", "SoftwareVersions"}  # fmt: skip
    assert not recommended_missing & written


def test_channel_types_and_units(tmp_path: Path, clock: FakeClock) -> None:
    """objects.columns.type__channels is the schema's list of channel types."""
    allowed = set(SCHEMA.objects.columns.type__channels.enum)
    assert set(CHANNEL_TYPES) <= allowed, set(CHANNEL_TYPES) - allowed
    assert set(KINDS) <= set(CHANNEL_TYPES), "every kind the stream package gives is written as itself"
    out = _folder(tmp_path, clock)
    rows = (out / "sub-W3017" / "ses-bed4" / "eeg" / "sub-W3017_ses-bed4_task-clinical_channels.tsv")
    lines = [line.split("\t") for line in rows.read_text(encoding="utf-8").splitlines()]
    table = {r[0]: dict(zip(lines[0], r, strict=True)) for r in lines[1:]}
    # The schema's `unit` format accepts any string ("Currently this matches any string")
    # and recommends CMIXF; µV in CMIXF is "uV". HEOG/VEOG are voltage leads like EOG.
    assert {k: table[k]["type"] for k in ("HEOG", "VEOGU", "GSR")} == {"HEOG": "HEOG", "VEOGU": "VEOG", "GSR": "GSR"}
    assert table["HEOG"]["units"] == "uV" and table["VEOGU"]["units"] == "uV"
    assert table["ACC_X"]["units"] == "n/a" and table["TRIG"]["units"] == "n/a"
    # The reference each voltage lead is recorded against (objects.columns.reference__eeg).
    assert table["T3-A1"]["reference"] == "A1" and table["Cz"]["reference"] == "Cz"
    assert table["HEOG"]["reference"] == "Cz" and table["TRIG"]["reference"] == "n/a"
    sidecar = json.loads((rows.parent / "sub-W3017_ses-bed4_task-clinical_eeg.json").read_text(encoding="utf-8"))
    # The schema counts exactly type EOG for EOGChannelCount, MISC for MiscChannelCount.
    assert sidecar["EOGChannelCount"] == 1 and sidecar["MiscChannelCount"] == 1
    assert sidecar["EEGChannelCount"] == len(SCALP) + 1


def test_power_line_frequency_may_be_n_a(tmp_path: Path, clock: FakeClock) -> None:
    """objects.metadata.PowerLineFrequency: a number > 0 or "n/a" (confirmed from the
    schema); SamplingFrequency has no "n/a" form."""
    definition = SCHEMA.objects.metadata.PowerLineFrequency.to_dict()
    jsonschema.validate("n/a", definition)
    with pytest.raises(jsonschema.ValidationError):
        jsonschema.validate(0, definition)
    with pytest.raises(jsonschema.ValidationError):
        jsonschema.validate("n/a", SCHEMA.objects.metadata.SamplingFrequency.to_dict())
    out = tmp_path / "bids"
    write_bids(_log(tmp_path, clock), out)  # no line frequency given
    sidecar = json.loads(
        (out / "sub-W3017" / "eeg" / "sub-W3017_task-clinical_eeg.json").read_text(encoding="utf-8")
    )
    assert sidecar["PowerLineFrequency"] == "n/a"
    assert _codes(validate_folder(out), "error") == []


def test_without_a_rate_no_eeg_json_is_written(tmp_path: Path) -> None:
    res = write_bids(SetupLog(subject_id="W3-017"), tmp_path / "bids")
    assert not list((tmp_path / "bids").rglob("*_eeg.json"))
    assert any("SamplingFrequency unknown" in w and "_eeg.json not written" in w for w in res.warnings)
    assert _codes(validate_folder(tmp_path / "bids"), "error") == []


def _edit_tsv(path: Path, column: str, row: int, value: str) -> None:
    lines = [line.split("\t") for line in path.read_text(encoding="utf-8").splitlines()]
    lines[row + 1][lines[0].index(column)] = value
    path.write_text("\n".join("\t".join(r) for r in lines) + "\n", encoding="utf-8")


@pytest.mark.parametrize(
    ("damage", "level", "expected"),
    [
        ("type-lower", "error", "column type"),
        ("status-word", "error", "column status"),
        ("extra-column", "error", "not defined by the schema"),
        ("no-power-line", "error", "PowerLineFrequency is required"),
        ("rate-n/a", "error", "SamplingFrequency='n/a'"),
        ("misc-count", "warning", "MISC_CHANNEL_COUNT_MISMATCH"),
        ("no-coordsystem", "error", "coordsystem"),
        ("impedance-text", "error", "column impedance"),
    ],
)
def test_the_schema_rules_catch_damaged_files(
    tmp_path: Path, clock: FakeClock, damage: str, level: str, expected: str
) -> None:
    """Each damaged copy is reported by the rule that governs it (the checks can fail)."""
    out = _folder(tmp_path, clock)
    folder = out / "sub-W3017" / "ses-bed4" / "eeg"
    channels = folder / "sub-W3017_ses-bed4_task-clinical_channels.tsv"
    eeg_json = folder / "sub-W3017_ses-bed4_task-clinical_eeg.json"
    sidecar = json.loads(eeg_json.read_text(encoding="utf-8"))
    if damage == "type-lower":
        _edit_tsv(channels, "type", 0, "eeg")
    elif damage == "status-word":
        _edit_tsv(channels, "status", 0, "check")
    elif damage == "extra-column":
        text = channels.read_text(encoding="utf-8").splitlines()
        channels.write_text("\n".join(t + "\tx" for t in text) + "\n", encoding="utf-8")
    elif damage == "impedance-text":
        _edit_tsv(folder / "sub-W3017_ses-bed4_electrodes.tsv", "impedance", 0, "22 kOhm")
    elif damage == "no-coordsystem":
        (folder / "sub-W3017_ses-bed4_coordsystem.json").unlink()
    else:
        if damage == "no-power-line":
            del sidecar["PowerLineFrequency"]
        elif damage == "rate-n/a":
            sidecar["SamplingFrequency"] = "n/a"
        elif damage == "misc-count":
            sidecar["MiscChannelCount"] += 1
        eeg_json.write_text(json.dumps(sidecar), encoding="utf-8")
    found = _codes(validate_folder(out), level)
    assert any(expected in f for f in found), found


def test_the_coordsystem_with_landmarks_passes_the_schema(tmp_path: Path) -> None:
    """What `bedside measure --bids-dir` writes (coordsystem.json with NAS/LPA/RPA), as a
    subject's files in a dataset."""
    from bedside.placement.bids import write_coordsystem_json, write_electrodes_tsv

    (tmp_path / "dataset_description.json").write_text(
        json.dumps({"Name": "measure", "BIDSVersion": "1.11.0"}), encoding="utf-8"
    )
    folder = tmp_path / "sub-W3017" / "eeg"
    folder.mkdir(parents=True)
    write_electrodes_tsv(folder / "sub-W3017_electrodes.tsv", {"Cz": (0.0, 0.0, 90.0)})
    landmarks = {"NAS": (0.0, 90.0, 0.0), "LPA": (-70.0, 0.0, 0.0), "RPA": (70.0, 0.0, 0.0)}
    write_coordsystem_json(folder / "sub-W3017_coordsystem.json", landmarks_mm=landmarks)
    assert filename_matches(tmp_path)[0] == []
    assert _codes(validate_folder(tmp_path), "error") == []
