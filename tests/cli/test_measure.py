"""``bedside measure``: the table, JSON, CSV and BIDS outputs; clear errors; fuzzed options.

Expected distances are Jasper 1958's percentages applied by hand to our example head
(36/35/56 cm, not an example from the paper): Nz–Iz 36 cm -> Fz 10.8 cm; circumference
56 cm -> T7 14.0 cm from Fpz.
"""

from __future__ import annotations

import csv
import io
import json
import subprocess
import sys
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from bedside.cli import main

BASE = ["measure", "--nasion-inion", "36", "--preauricular", "35", "--circumference", "56"]


def _run(capsys: pytest.CaptureFixture[str], *argv: str) -> tuple[int, str, str]:
    try:
        code = main(list(argv))
    except SystemExit as exc:  # argparse's own errors exit through SystemExit(2)
        code = int(exc.code or 0)
    out, err = capsys.readouterr()
    return code, out, err


def test_table_in_walking_order(capsys: pytest.CaptureFixture[str]) -> None:
    code, out, err = _run(capsys, *BASE)
    assert code == 0 and err == ""
    blocks = [ln for ln in out.splitlines() if ln[:1].isdigit() and ". " in ln[:4]]
    assert [b.split(" — ")[0] for b in blocks] == [
        "1. midline", "2. coronal line", "3. circumference, left", "4. circumference, right",
        "5. between marks", "6. references",
    ]  # fmt: skip
    fz = next(ln for ln in out.splitlines() if ln.split()[:1] == ["Fz"])
    assert fz.split()[:5] == ["Fz", "Nz", "10.8", "7.2", "30"]
    assert "T7 (T3)" in out and "take the crossing" in out


def test_classic_names_and_other_unit(capsys: pytest.CaptureFixture[str]) -> None:
    code, out, _ = _run(
        capsys, "measure", "--nasion-inion", "360", "--preauricular", "350",
        "--circumference", "560", "--unit", "mm", "--names", "classic",
    )  # fmt: skip
    assert code == 0
    t3 = [ln.split() for ln in out.splitlines() if ln.strip().startswith("T3 (T7)")]
    # coronal: 10 % of 350 mm = 35 mm; circumference: 25 % of 560 mm = 140 mm
    assert ["T3", "(T7)", "LPA", "3.5", "3.5", "10", "35"] in t3
    assert ["T3", "(T7)", "Fpz", "14.0", "5.6", "25", "140"] in t3


def test_json_document(capsys: pytest.CaptureFixture[str]) -> None:
    code, out, _ = _run(capsys, *BASE, "--system", "10-10", "--format", "json")
    assert code == 0
    doc = json.loads(out)
    assert doc["system"] == "10-10" and doc["names"] == "modern"
    assert doc["measurements"]["circumference_cm"] == 56.0
    keys = {"name", "other_name", "line", "start", "distance_cm", "step_cm", "percent",
            "xyz_mm", "how", "arc_cm"}  # fmt: skip
    assert all(keys <= set(m) for m in doc["marks"])
    t7 = [m for m in doc["marks"] if m["name"] == "T7"]
    assert {m["line"] for m in t7} == {"coronal", "circumference-left"}
    assert next(m for m in t7 if m["line"] == "circumference-left")["distance_cm"] == 14.0
    assert len(doc["marks"][0]["xyz_mm"]) == 3
    assert ["C3", "Cz"] not in doc["neighbours"]  # 10-10: C1 sits between them
    assert ["C1", "C3"] in doc["neighbours"]


def test_csv_rows(capsys: pytest.CaptureFixture[str]) -> None:
    code, out, _ = _run(capsys, *BASE, "--format", "csv")
    assert code == 0
    rows = list(csv.DictReader(io.StringIO(out)))
    fz = next(r for r in rows if r["name"] == "Fz")
    assert (fz["line"], fz["start"], fz["distance_cm"], fz["percent"]) == (
        "midline",
        "Nz",
        "10.8",
        "30.0",
    )
    assert {"x_mm", "y_mm", "z_mm", "how", "arc_cm"} <= set(rows[0])


def test_bids_dir(capsys: pytest.CaptureFixture[str], tmp_path: Path) -> None:
    folder = tmp_path / "sub-01" / "eeg"
    code, out, err = _run(capsys, *BASE, "--format", "json", "--bids-dir", str(folder))
    assert code == 0
    json.loads(out)  # stdout stays pure JSON; the note goes to stderr
    assert "electrodes.tsv" in err
    lines = (folder / "electrodes.tsv").read_text(encoding="utf-8").splitlines()
    assert lines[0].split("\t")[:4] == ["name", "x", "y", "z"]
    coords = json.loads((folder / "coordsystem.json").read_text(encoding="utf-8"))
    assert coords["EEGCoordinateSystem"] == "Other" and coords["EEGCoordinateUnits"] == "mm"


def test_bids_dir_that_is_a_file(capsys: pytest.CaptureFixture[str], tmp_path: Path) -> None:
    f = tmp_path / "x"
    f.write_text("", encoding="utf-8")
    code, _, err = _run(capsys, *BASE, "--bids-dir", str(f))
    assert code == 2 and "is a file, not a folder" in err


@pytest.mark.parametrize(
    ("args", "needle"),
    [
        (["--circumference", "560"], "looks like millimetres"),
        (["--circumference", "22"], "measured in inches"),
        (["--circumference", "abc"], "must be a number"),
        (["--system", "10-5"], "invalid choice: '10-5'"),
        (["--names", "old"], "invalid choice"),
        (["--unit", "ft"], "invalid choice"),
        (["--format", "xml"], "invalid choice"),
    ],
)
def test_bad_input_is_error_exit_2(
    capsys: pytest.CaptureFixture[str], args: list[str], needle: str
) -> None:
    code, out, err = _run(capsys, *BASE, *args)
    assert code == 2
    assert "error:" in err and needle in err and "Traceback" not in err


def test_inferior_circumference_marks_the_inferior_row(capsys: pytest.CaptureFixture[str]) -> None:
    """10-10 inferior row (F9 15 %, FT9 20 %, T9 25 %, TP9 30 %, P9 35 % of the tape through
    Nz, T9 and Iz from Nz; the nomenclature's halved steps, from memory). Hand arithmetic
    for a taped 57 cm: 8.55 -> 8.6, 11.4, 14.25 -> 14.3, 17.1, 19.95 -> 20.0 cm (halves
    up, as a tape is read)."""
    code, out, err = _run(
        capsys, *BASE, "--system", "10-10", "--inferior-circumference", "57", "--format", "json"
    )
    assert code == 0 and err == ""
    doc = json.loads(out)
    assert doc["measurements"]["inferior_circumference_cm"] == 57.0
    left = {m["name"]: m for m in doc["marks"] if m["line"] == "inferior-left"}
    assert {k: v["distance_cm"] for k, v in left.items()} == {
        "F9": 8.6, "FT9": 11.4, "T9": 14.3, "TP9": 17.1, "P9": 20.0,
    }  # fmt: skip
    assert all(v["arc_cm"] == 57.0 and "your tape: 57.0 cm" in v["how"] for v in left.values())
    right = {m["name"]: m["distance_cm"] for m in doc["marks"] if m["line"] == "inferior-right"}
    assert right == {"F10": 8.6, "FT10": 11.4, "T10": 14.3, "TP10": 17.1, "P10": 20.0}
    # the same in millimetres, like the other three
    code, out, _ = _run(
        capsys, "measure", "--nasion-inion", "360", "--preauricular", "350",
        "--circumference", "560", "--unit", "mm", "--system", "10-10",
        "--inferior-circumference", "570",
    )  # fmt: skip
    assert code == 0 and "inferior circumference 57.0 cm" in out and "your tape: 57.0 cm" in out


def test_without_the_inferior_tape_the_model_estimate_is_named(
    capsys: pytest.CaptureFixture[str],
) -> None:
    code, out, _ = _run(capsys, *BASE, "--system", "10-10")
    assert code == 0
    title = next(ln for ln in out.splitlines() if "inferior circumference, left" in ln)
    assert "model estimate" in title and "--inferior-circumference" in title
    code, out, _ = _run(capsys, *BASE, "--system", "10-10", "--format", "json")
    assert json.loads(out)["measurements"]["inferior_circumference_cm"] is None


@pytest.mark.parametrize(
    ("value", "needle"),
    [
        ("abc", "inferior circumference must be a number"),
        ("0", "inferior circumference must be greater than zero"),
        ("nan", "inferior circumference must be a finite number"),
        ("570", "looks like millimetres"),
        ("90", "outside what heads measure (18–70 cm"),
        ("36", "is 64% of the circumference"),  # an arc taped instead: 36/56
        ("70", "90%–115%"),
    ],
)
def test_bad_inferior_circumference_is_error_exit_2(
    capsys: pytest.CaptureFixture[str], value: str, needle: str
) -> None:
    code, out, err = _run(capsys, *BASE, "--system", "10-10", "--inferior-circumference", value)
    assert code == 2 and out == ""
    assert err.startswith("error: ") and needle in err and "Traceback" not in err


def test_inferior_circumference_with_10_20_is_noted(capsys: pytest.CaptureFixture[str]) -> None:
    """10-20 has no site on the inferior line: the value is checked, kept in the plan's
    measurements, and a note says it places nothing (never dropped silently)."""
    code, out, err = _run(capsys, *BASE, "--inferior-circumference", "57", "--format", "json")
    assert code == 0 and "note:" in err and "10-10" in err
    assert json.loads(out)["measurements"]["inferior_circumference_cm"] == 57.0


def test_missing_measurement(capsys: pytest.CaptureFixture[str]) -> None:
    code, _, err = _run(capsys, "measure", "--nasion-inion", "36")
    assert code == 2 and "required" in err and "--preauricular" in err


def test_help_shows_cautions_and_example() -> None:
    """The usual cautions (ASET skin safety, infection control) are in --help."""
    proc = subprocess.run(
        [sys.executable, "-m", "bedside", "measure", "--help"],
        capture_output=True, text=True, timeout=60,
    )  # fmt: skip
    assert proc.returncode == 0
    assert "Skin preparation" in proc.stdout and "Neonates" in proc.stdout
    assert "local policy" in proc.stdout and "--nasion-inion 36" in proc.stdout


def test_subprocess_error_has_no_traceback() -> None:
    proc = subprocess.run(
        [sys.executable, "-m", "bedside", *BASE[:-1], "0"],
        capture_output=True, text=True, timeout=60,
    )  # fmt: skip
    assert proc.returncode == 2
    assert proc.stderr.startswith("error: ") and "Traceback" not in proc.stderr


_token = st.one_of(
    st.sampled_from(["36", "35", "56", "0", "-1", "360", "22", "nan", "1e400", "36,5", "", "x"]),
    st.text(max_size=8),
    st.floats(allow_nan=True).map(str),
)
_option = st.one_of(
    st.tuples(
        st.sampled_from(
            ["--nasion-inion", "--preauricular", "--circumference", "--inferior-circumference"]
        ),
        _token,
    ),
    st.tuples(st.just("--system"), st.sampled_from(["10-20", "10-10", "10-5", ""])),
    st.tuples(st.just("--names"), st.sampled_from(["modern", "classic", "MODERN"])),
    st.tuples(st.just("--unit"), st.sampled_from(["cm", "mm", "in", "m"])),
    st.tuples(st.just("--format"), st.sampled_from(["table", "json", "csv", "yaml"])),
    st.tuples(st.sampled_from(["--bogus", "-x", "--help-me"]), _token),
)


@settings(max_examples=120, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(options=st.lists(_option, max_size=7))
def test_fuzzed_options_give_result_or_clear_error(
    capsys: pytest.CaptureFixture[str], options: list[tuple[str, str]]
) -> None:
    """Property (issue 8, measure): any option list gives output (exit 0) or
    "error: ..." (exit 2) — never a traceback or another exception."""
    argv = ["measure", *[part for opt in options for part in opt]]
    code, out, err = _run(capsys, *argv)
    assert code in (0, 2), argv
    if code == 0:
        assert out.strip()
    else:
        assert "error:" in err and "Traceback" not in err
