"""Channel units to µV.

The stream metadata convention (XDF EEG meta-data: ``desc/channels/channel/unit``)
writes "microvolts"; amplifiers also send SI symbols. Scale factors are SI prefixes
(BIPM SI Brochure, 9th ed., table 7): V = 1e6 µV, mV = 1e3 µV, nV = 1e-3 µV.
"""

from __future__ import annotations

import unicodedata

#: Accepted spellings (compared after case-folding; the micro sign U+00B5 and the
#: Greek mu U+03BC are both accepted) and their factor to µV.
UNIT_TO_UV: dict[str, float] = {
    "v": 1e6,
    "volt": 1e6,
    "volts": 1e6,
    "mv": 1e3,
    "millivolt": 1e3,
    "millivolts": 1e3,
    "uv": 1.0,
    "microvolt": 1.0,
    "microvolts": 1.0,
    "nv": 1e-3,
    "nanovolt": 1e-3,
    "nanovolts": 1e-3,
}

ACCEPTED_UNITS = "V, mV, µV (uV, microvolts), nV"


def _key(unit: str) -> str:
    # NFKC maps the micro sign U+00B5 to Greek mu U+03BC; both then read as "u".
    return unicodedata.normalize("NFKC", unit).strip().casefold().replace("\u03bc", "u")


def scale_to_uv(unit: str | None) -> tuple[float, str]:
    """Factor that turns values in ``unit`` into µV, and a note ("" when all is clear).

    Missing unit → 1.0 (assumed µV, and the note says so). A unit that is not a voltage
    or not understood → 1.0 with a note: the values are shown as they are, never dropped.
    """
    if unit is None or not unit.strip():
        return 1.0, "no unit in the stream metadata; assumed µV"
    factor = UNIT_TO_UV.get(_key(unit))
    if factor is None:
        return 1.0, f"unit {unit.strip()!r} is not understood (accepted: {ACCEPTED_UNITS}); values used as if µV"
    return factor, ""
