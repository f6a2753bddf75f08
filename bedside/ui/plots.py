"""Display-only views of the selected channel: derivations, a spectrum, text plots.

These never decide a level and feed no check; they only draw what the raw window
looks like, and they run in a worker thread. Arrays are (n_samples, n_channels) in µV.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Literal

import numpy as np

Derivation = Literal["referential", "average", "bipolar"]
DERIVATIONS: tuple[Derivation, ...] = ("referential", "average", "bipolar")
DERIVATION_LABEL = {"referential": "as recorded", "average": "average reference",
                    "bipolar": "longitudinal bipolar"}

_BLOCKS = " ▁▂▃▄▅▆▇█"


def derive(
    window_uv: np.ndarray,
    index: int,
    mode: Derivation,
    scalp_mask: np.ndarray,
    partner: int | None,
) -> np.ndarray:
    """One channel of ``window_uv`` (n_samples, n_channels, µV) in the chosen derivation.

    referential: the channel as recorded; average: minus the mean of the scalp
    channels; bipolar: minus ``partner`` (its partner in the standard longitudinal chains,
    bedside.montage.chain_partner), or as recorded
    when there is no partner.
    """
    x = window_uv[:, index]
    if mode == "average":
        mask = np.asarray(scalp_mask, dtype=bool)
        if mask.any():
            return x - window_uv[:, mask].mean(axis=1)
        return x.copy()
    if mode == "bipolar" and partner is not None:
        return x - window_uv[:, partner]
    return x.copy()


def amplitude_spectrum_db(x_uv: np.ndarray, rate_hz: float) -> tuple[np.ndarray, np.ndarray]:
    """Hann-windowed amplitude spectrum of ``x_uv`` (n_samples,) in dB re 1 µV.

    Returns (frequencies_hz, level_db). The mean is removed first so a DC offset does
    not swamp the picture.
    """
    x = np.asarray(x_uv, dtype=np.float64)
    n = x.shape[0]
    if n < 8 or rate_hz <= 0:
        return np.zeros(0), np.zeros(0)
    # Periodic Hann window (the DFT-even form used for spectra; Harris 1978).
    w = 0.5 - 0.5 * np.cos(2.0 * np.pi * np.arange(n) / n)
    spec = np.fft.rfft((x - x.mean()) * w)
    amp = 2.0 * np.abs(spec) / max(w.sum(), 1e-12)
    freqs = np.fft.rfftfreq(n, d=1.0 / rate_hz)
    return freqs, 20.0 * np.log10(np.maximum(amp, 1e-3))


def trace_lines(x_uv: np.ndarray, width: int, height: int) -> tuple[list[str], float]:
    """A waveform drawn in ``height`` text rows of ``width`` columns.

    Each column spans the min..max of its samples. Returns (rows, half_range_uv):
    the plot spans ± half_range_uv around the window's mean.
    """
    width, height = max(1, width), max(1, height)
    grid = [[" "] * width for _ in range(height)]
    x = np.asarray(x_uv, dtype=np.float64)
    x = x[np.isfinite(x)]
    if x.size < 2:
        return ["".join(r) for r in grid], 0.0
    x = x - x.mean()
    half = float(max(np.max(np.abs(x)), 1e-6))
    edges = np.linspace(0, x.size, width + 1).astype(int)
    for col in range(width):
        seg = x[edges[col] : max(edges[col + 1], edges[col] + 1)]
        lo, hi = float(seg.min()), float(seg.max())
        r_hi = int(round((1.0 - (hi / half + 1.0) / 2.0) * (height - 1)))
        r_lo = int(round((1.0 - (lo / half + 1.0) / 2.0) * (height - 1)))
        for r in range(min(r_hi, r_lo), max(r_hi, r_lo) + 1):
            grid[r][col] = "│" if r_hi != r_lo else "─"
    return ["".join(r) for r in grid], half


@dataclass(frozen=True)
class SpectrumPicture:
    """Rows of bars (top first), the frequency at the right edge, and the columns of marks."""

    rows: list[str]
    max_hz: float
    mark_columns: dict[float, int]
    peak_db: float


def spectrum_lines(
    freqs_hz: np.ndarray,
    level_db: np.ndarray,
    width: int,
    height: int,
    max_hz: float,
    marks_hz: tuple[float, ...] = (),
) -> SpectrumPicture:
    """Bars of the spectrum from 0 to ``max_hz`` in ``width`` columns, ``height`` rows.

    Each column shows the highest level among its bins; the scale runs from the
    lowest column to the highest (dB). ``marks_hz`` (e.g. mains and harmonics)
    are mapped to their columns so the widget can highlight them.
    """
    width, height = max(1, width), max(1, height)
    blank = [" " * width for _ in range(height)]
    if freqs_hz.size == 0:
        return SpectrumPicture(blank, max_hz, {}, 0.0)
    keep = freqs_hz <= max_hz
    f, d = freqs_hz[keep], level_db[keep]
    if f.size < 2:
        return SpectrumPicture(blank, max_hz, {}, 0.0)
    cols = np.minimum((f / max_hz * width).astype(int), width - 1)
    col_db = np.full(width, np.nan)
    for c in range(width):
        sel = d[cols == c]
        if sel.size:
            col_db[c] = sel.max()
    # Columns with no bin (fine display, short window) take their left neighbour.
    for c in range(width):
        if np.isnan(col_db[c]):
            col_db[c] = col_db[c - 1] if c > 0 and not np.isnan(col_db[c - 1]) else np.nanmin(col_db)
    lo, hi = float(np.min(col_db)), float(np.max(col_db))
    span = max(hi - lo, 1e-6)
    eighths = np.round((col_db - lo) / span * height * 8).astype(int)
    rows = []
    for r in range(height):
        level_from_bottom = height - 1 - r
        line = []
        for c in range(width):
            fill = int(np.clip(eighths[c] - level_from_bottom * 8, 0, 8))
            line.append(_BLOCKS[fill])
        rows.append("".join(line))
    mark_cols = {
        hz: min(int(hz / max_hz * width), width - 1) for hz in marks_hz if 0 < hz <= max_hz
    }
    return SpectrumPicture(rows, max_hz, mark_cols, hi)


# Braille cells hold 2 × 4 dots: the bit of each (dot row, dot column), Unicode's order.
_BRAILLE_BITS = ((0x01, 0x08), (0x02, 0x10), (0x04, 0x20), (0x40, 0x80))


def lane_lines(
    x_uv: np.ndarray, page_samples: int, width: int, rows: int, uv_per_row: float
) -> tuple[list[str], bool]:
    """One trace of the page at a fixed sensitivity, in braille dots.

    x_uv: the newest samples (n,) µV, drawn right-aligned on a page of ``page_samples``
    (older than the buffer: blank). The lane is ``rows`` text rows of ``width`` columns
    (2 × 4 dots a cell); ``uv_per_row`` µV move the trace one text row; the page's
    median sits mid-lane. Returns (rows, clipped): clipped when the trace left the lane.
    """
    width, rows = max(1, width), max(1, rows)
    if uv_per_row <= 0:
        raise ValueError(f"uv_per_row must be > 0, got {uv_per_row}")
    cells = np.zeros((rows, width), dtype=np.int32)
    x = np.asarray(x_uv, dtype=np.float64)[-page_samples:] if page_samples > 0 else np.zeros(0)
    finite = np.isfinite(x)
    if x.size < 2 or not finite.any():
        return [chr(0x2800) * width for _ in range(rows)], False
    x = np.where(finite, x, np.nan) - float(np.median(x[finite]))
    dots_w, dots_h = 2 * width, 4 * rows
    start = page_samples - x.size  # page index of x[0]
    edges = np.linspace(0, page_samples, dots_w + 1).round().astype(int) - start
    clipped = False
    for j in range(dots_w):
        lo_i, hi_i = max(edges[j], 0), max(edges[j + 1], edges[j] + 1)
        if hi_i <= 0 or lo_i >= x.size:
            continue
        seg = x[lo_i:min(hi_i, x.size)]
        seg = seg[np.isfinite(seg)]
        if seg.size == 0:
            continue
        # Dot row of a value: mid-lane at 0 µV, 4 dot rows per uv_per_row, up positive.
        top = dots_h / 2.0 - float(seg.max()) / uv_per_row * 4.0
        bottom = dots_h / 2.0 - float(seg.min()) / uv_per_row * 4.0
        r0, r1 = int(np.floor(top)), int(np.floor(bottom))
        if r0 < 0 or r1 > dots_h - 1:
            clipped = True
        for r in range(max(0, min(r0, dots_h - 1)), min(dots_h - 1, max(r1, 0)) + 1):
            cells[r // 4, j // 2] |= _BRAILLE_BITS[r % 4][j % 2]
    return ["".join(chr(0x2800 + int(v)) for v in line) for line in cells], clipped

