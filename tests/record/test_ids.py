"""What may be typed into the log: IDs that can never escape a folder, no names by default."""

from __future__ import annotations

from pathlib import Path

import pytest
from hypothesis import given
from hypothesis import strategies as st

from bedside.errors import InputError
from bedside.record.ids import (
    validate_electrode,
    validate_impedance,
    validate_initials,
    validate_note,
    validate_subject_id,
)


@pytest.mark.parametrize(
    "bad",
    ["../W3-017", "W3/017", "W3\\017", "..", "a..b1", "/etc/passwd1", "W3\x00017", ".hidden1"],
)
def test_path_traversal_and_separators_are_refused(bad: str) -> None:
    with pytest.raises(InputError, match="subject ID"):
        validate_subject_id(bad)


@pytest.mark.parametrize(
    ("bad", "match"),
    [
        ("JaneDoe", "no digit.*never the patient's name"),
        ("Jane Doe 1", "not allowed"),
        ("W" * 33 + "1", "33|34 characters"),
        ("-W3", "not allowed"),
        ("Zoë-1", "not allowed"),
    ],
)
def test_names_and_odd_ids_are_refused(bad: str, match: str) -> None:
    with pytest.raises(InputError, match=match):
        validate_subject_id(bad)


def test_good_ids_pass_unchanged() -> None:
    for ok in ("W3-017", "wardB_4", "2026001", ""):
        assert validate_subject_id(ok) == ok
    assert validate_subject_id("ABCD", allow_letters_only=True) == "ABCD"


@given(st.text(max_size=40))
def test_any_accepted_id_stays_inside_its_folder(text: str) -> None:
    """Property: whatever is accepted, f"sub-{id}" is one path component inside the base."""
    try:
        subject = validate_subject_id(text, allow_letters_only=True)
    except InputError:
        return
    if not subject:
        return
    base = Path("/data/bids")
    target = base / f"sub-{subject}" / f"{subject}.yaml"
    assert target.resolve().parent.parent == base
    assert len(Path(f"sub-{subject}").parts) == 1


def test_initials_electrodes_impedances_notes() -> None:
    assert validate_initials("j.m.k.") == "JMK"
    assert validate_initials("") == ""
    for bad in ("J1", "ABCDEF", "J/K"):
        with pytest.raises(InputError, match="accepted: 1 to 5 letters"):
            validate_initials(bad)
    assert validate_electrode(" Fp1 ") == "Fp1"
    with pytest.raises(InputError, match="electrode name"):
        validate_electrode("Fp1\tCz")
    assert validate_impedance("Fp1", "4.5") == 4.5
    for bad in (-1, float("nan"), float("inf"), 20_000, "low", True):
        with pytest.raises(InputError, match="impedance for Fp1"):
            validate_impedance("Fp1", bad)  # type: ignore[arg-type]
    assert validate_note("  ok\nline two ") == "ok\nline two"
    with pytest.raises(InputError, match="empty"):
        validate_note("   ")
    with pytest.raises(InputError, match="control characters"):
        validate_note("bell\x07")
