"""Our level palette stays readable under the common colour-vision deficiencies.

The symbols (● ▲ ✖ ?) carry the meaning first; the colours are a second carrier, so
the three levels must stay apart from each other, and each must stand off its
background, for a reader with deuteranopia or protanopia as well as normal vision.

How: each colour (``Level.colour`` on the app's dark background, ``Level.print_colour``
on the report's white page) is passed through the full-severity (100) deuteranomaly
and protanomaly simulation of Machado, Oliveira and Fernandes 2009 ("A
physiologically-based model for simulation of color vision deficiency", IEEE TVCG
15(6):1291-1298), as implemented by colorspacious (an outside package, test-only).
Then, on the simulated colours:
- distinctness between levels: the colour difference ΔE in CAM02-UCS (Luo, Cui and Li
  2006, colorspacious's ``deltaE``); about 1 is a just-noticeable difference, and we
  ask ≥ 15 between every two levels (ours: well apart at a glance, not side by side);
- against the background: the WCAG 2 contrast ratio of relative luminances (W3C,
  Web Content Accessibility Guidelines 2.1, 1.4.3: ≥ 4.5 for text), so a symbol in
  its level's colour reads as text does.
"""

from __future__ import annotations

import itertools

import numpy as np
import pytest
from colorspacious import cspace_convert, deltaE

from bedside.checks.types import NO_DATA_COLOUR, NO_DATA_PRINT_COLOUR, Level

#: The app's background behind the map and table: the pinned Textual 8.2's textual-dark
#: screen fill, as the accepted snapshot SVGs draw it (tests/ui/__snapshots__); the
#: lighter panel fill #1e1e1e is checked too.
SCREEN_BACKGROUNDS = ("#121212", "#1e1e1e")
PRINT_BACKGROUND = "#ffffff"
VISIONS = ("normal", "deuteranomaly", "protanomaly")
MIN_DELTA_E = 15.0
MIN_CONTRAST = 4.5


def _rgb(hex_colour: str) -> np.ndarray:
    assert len(hex_colour) == 7 and hex_colour[0] == "#", hex_colour
    return np.array([int(hex_colour[i:i + 2], 16) / 255.0 for i in (1, 3, 5)])


def simulate(hex_colour: str, vision: str) -> np.ndarray:
    """The colour as seen with this vision (sRGB in 0..1), Machado et al. 2009 at severity 100."""
    rgb = _rgb(hex_colour)
    if vision == "normal":
        return rgb
    cvd = {"name": "sRGB1+CVD", "cvd_type": vision, "severity": 100}
    return np.clip(cspace_convert(rgb, cvd, "sRGB1"), 0.0, 1.0)


def contrast(a: np.ndarray, b: np.ndarray) -> float:
    """WCAG 2.1 contrast ratio (relative luminance from linearised sRGB, IEC 61966-2-1)."""
    def lum(c: np.ndarray) -> float:
        lin = np.where(c <= 0.04045, c / 12.92, ((c + 0.055) / 1.055) ** 2.4)
        return float(0.2126 * lin[0] + 0.7152 * lin[1] + 0.0722 * lin[2])
    hi, lo = sorted((lum(a), lum(b)), reverse=True)
    return (hi + 0.05) / (lo + 0.05)


PALETTES = {
    "screen": ({lv.key: lv.colour for lv in Level}, NO_DATA_COLOUR, SCREEN_BACKGROUNDS[0]),
    "screen panel": ({lv.key: lv.colour for lv in Level}, NO_DATA_COLOUR, SCREEN_BACKGROUNDS[1]),
    "print": ({lv.key: lv.print_colour for lv in Level}, NO_DATA_PRINT_COLOUR, PRINT_BACKGROUND),
}


@pytest.mark.parametrize("vision", VISIONS)
@pytest.mark.parametrize("where", sorted(PALETTES))
def test_levels_stay_apart(where: str, vision: str) -> None:
    colours, _grey, _bg = PALETTES[where]
    seen = {k: simulate(c, vision) for k, c in colours.items()}
    for a, b in itertools.combinations(seen, 2):
        d = float(deltaE(seen[a], seen[b], input_space="sRGB1"))
        assert d >= MIN_DELTA_E, f"{where}, {vision}: {a} and {b} only ΔE {d:.1f} apart"


@pytest.mark.parametrize("vision", VISIONS)
@pytest.mark.parametrize("where", sorted(PALETTES))
def test_levels_stand_off_the_background(where: str, vision: str) -> None:
    colours, grey, bg = PALETTES[where]
    back = simulate(bg, vision)
    for key, c in {**colours, "no_data": grey}.items():
        ratio = contrast(simulate(c, vision), back)
        assert ratio >= MIN_CONTRAST, f"{where}, {vision}: {key} {c} contrast {ratio:.2f}"


def test_the_old_traffic_light_fails_the_same_check() -> None:
    """The check can fail: pure green and red collapse under deuteranopia (a known
    property of red-green deficiency, from memory)."""
    d = float(deltaE(simulate("#00ff00", "deuteranomaly"), simulate("#ffff00", "deuteranomaly"),
                     input_space="sRGB1"))
    assert d < MIN_DELTA_E


def test_levels_keep_their_symbols() -> None:
    assert [lv.symbol for lv in Level] == ["●", "▲", "✖"]
