"""Channel units to µV.

The stream metadata convention (XDF EEG meta-data: ``desc/channels/channel/unit``)
writes "microvolts"; amplifiers also send SI symbols. Scale factors are SI prefixes
(BIPM SI Brochure, 9th ed., table 7): V = 1e6 µV, mV = 1e3 µV, nV = 1e-3 µV.
"""

from __future__ import annotations

import unicodedata

import numpy as np

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

#: Units that are not a voltage, and the channel type they imply (BIDS channels.tsv
#: types): a channel in g, %, Ω or °C is never an EEG electrode. Spellings as CMIXF
#: (BIDS units) and SI symbols (SI Brochure, 9th ed.), compared like UNIT_TO_UV.
NON_VOLTAGE_UNITS: dict[str, str] = {
    "g": "MISC",  # acceleration in units of standard gravity
    "m/s^2": "MISC",
    "m/s2": "MISC",
    "deg/s": "MISC",
    "rad/s": "MISC",
    "%": "MISC",  # e.g. oxygen saturation, battery
    "percent": "MISC",
    "\u03c9": "MISC",  # Ω (ohm sign and Greek capital omega, after NFKC and case-folding)
    "ohm": "MISC",
    "ohms": "MISC",
    "k\u03c9": "MISC",
    "kohm": "MISC",
    "\u00b0c": "TEMP",
    "degc": "TEMP",
    "celsius": "TEMP",
    "us": "GSR",  # microsiemens (µS): skin conductance
    "microsiemens": "GSR",
    "bpm": "MISC",
    "mmhg": "MISC",
    "lux": "MISC",
}

#: Spellings that mean "raw converter counts" (no physical unit): an integer stream in
#: these needs a scale (µV per count) before it can be judged.
COUNT_UNITS = frozenset({"counts", "count", "adu", "adc", "lsb", "digital", "raw"})


def _key(unit: str) -> str:
    # NFKC maps the micro sign U+00B5 to Greek mu U+03BC; both then read as "u".
    return unicodedata.normalize("NFKC", unit).strip().casefold().replace("\u03bc", "u")


def unit_kind(unit: str | None) -> str | None:
    """The channel type a unit that is not a voltage implies ("MISC", "TEMP", "GSR"),
    or None for a voltage, counts, a missing or an unknown unit."""
    if unit is None or not unit.strip():
        return None
    return NON_VOLTAGE_UNITS.get(_key(unit))


def is_counts(unit: str | None) -> bool:
    """True for a unit that means raw converter counts ("counts", "ADU", "LSB"…)."""
    return unit is not None and _key(unit) in COUNT_UNITS


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


def unit_suspicion(samples_uv: np.ndarray, mask: np.ndarray, millivolts_below_uv: float,
                   volts_below_uv: float) -> str:
    """A note when µV-labelled values look like volts or millivolts, else "".

    samples_uv: (n_samples, n_channels) as read (already scaled by the unit);
    mask: the channels to judge (scalp EEG in a voltage unit). The median over those
    channels of each one's RMS about its mean is compared with the two limits
    (configs/stream.yaml); channels that do not move at all are left out."""
    x = np.asarray(samples_uv, dtype=np.float64)[:, np.asarray(mask, dtype=bool)]
    if x.shape[0] < 2 or x.shape[1] == 0:
        return ""
    with np.errstate(invalid="ignore"):
        rms = np.nanstd(x, axis=0)
    rms = rms[np.isfinite(rms) & (rms > 0)]
    if rms.size == 0:
        return ""
    med = float(np.median(rms))
    if med < volts_below_uv:
        what = "volts"
    elif med < millivolts_below_uv:
        what = "millivolts"
    else:
        return ""
    return (f"values look like {what}: the unit says µV, but the median RMS of the scalp "
            f"channels is {med:.2g} µV, far below any EEG; check the unit the amplifier sends")
