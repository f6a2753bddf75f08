"""Units → µV.

Source for the factors: SI prefixes, BIPM "The International System of Units" (SI
Brochure, 9th ed., 2019), table 7: milli = 1e-3, micro = 1e-6, nano = 1e-9. Hence
1 V = 1e6 µV, 1 mV = 1e3 µV, 1 nV = 1e-3 µV. The spelling "microvolts" is the
unit written by the XDF EEG meta-data convention (desc/channels/channel/unit).
"""

from __future__ import annotations

import pytest

from bedside.stream.units import scale_to_uv


@pytest.mark.parametrize(
    ("unit", "factor"),
    [
        ("V", 1e6),
        ("volts", 1e6),
        ("mV", 1e3),
        ("millivolts", 1e3),
        ("µV", 1.0),  # U+00B5 micro sign
        ("\u03bcV", 1.0),  # U+03BC Greek small letter mu
        ("uV", 1.0),
        ("microvolts", 1.0),  # XDF meta-data convention
        (" Microvolts ", 1.0),
        ("nV", 1e-3),
        ("nanovolts", 1e-3),
    ],
)
def test_si_prefix_factors(unit: str, factor: float) -> None:
    got, note = scale_to_uv(unit)
    assert got == pytest.approx(factor, rel=1e-12)
    assert note == ""


@pytest.mark.parametrize("unit", [None, "", "   "])
def test_missing_unit_is_assumed_microvolts_and_said(unit: str | None) -> None:
    factor, note = scale_to_uv(unit)
    assert factor == 1.0
    assert "assumed µV" in note


@pytest.mark.parametrize("unit", ["counts", "ADU", "%", "mmHg"])
def test_unknown_unit_is_kept_and_said(unit: str) -> None:
    factor, note = scale_to_uv(unit)
    assert factor == 1.0
    assert repr(unit) in note and "accepted: V, mV" in note
