"""Electrode systems and their names: the 10-20 and 10-10 site lists, classic and modern.

Sources:

* 10-20: Jasper 1958 — 21 electrodes: the 19 scalp sites plus the ear references
  A1/A2. Fpz and Oz (10 % from each end of the midline) are measuring landmarks the
  circumference starts and ends at; they are marked on the way and listed here too.
  ACNS Guideline 2 (Acharya et al. 2016) keeps these names.
* 10-10: the modified combinatorial nomenclature (Chatrian 1985; AEEGS Guideline 13,
  1994; ACNS Guideline 2, 2016). The list below is from memory: each 20 % step of the
  10-20 system halved, plus the inferior row F9/FT9/T9/TP9/P9 (and the right side) at
  the level of the nasion, the preauricular points and the inion.
* Renamed in the modern nomenclature: T3 = T7, T4 = T8, T5 = P7, T6 = P8.
  M1/M2 (mastoids) are *not* A1/A2 (earlobes): they are different sites.
"""

from __future__ import annotations

from collections.abc import Iterable

SYSTEMS: tuple[str, ...] = ("10-20", "10-10")
NAMINGS: tuple[str, ...] = ("modern", "classic")

#: classic name -> modern name (the only four that changed).
CLASSIC_TO_MODERN: dict[str, str] = {"T3": "T7", "T4": "T8", "T5": "P7", "T6": "P8"}
MODERN_TO_CLASSIC: dict[str, str] = {v: k for k, v in CLASSIC_TO_MODERN.items()}

#: Reference sites: earlobes and mastoids are different places (not synonyms).
REFERENCES: tuple[str, ...] = ("A1", "A2", "M1", "M2")

#: The 19 scalp sites of the 10-20 system (modern names), front to back.
SCALP_10_20: tuple[str, ...] = (
    "Fp1", "Fp2",
    "F7", "F3", "Fz", "F4", "F8",
    "T7", "C3", "Cz", "C4", "T8",
    "P7", "P3", "Pz", "P4", "P8",
    "O1", "O2",
)  # fmt: skip

#: What the 10-20 plan marks (modern names), front to back: the 19 scalp sites and the
#: two measuring landmarks Fpz and Oz (21 names; the references come separately).
SITES_10_20: tuple[str, ...] = (
    "Fp1", "Fpz", "Fp2",
    "F7", "F3", "Fz", "F4", "F8",
    "T7", "C3", "Cz", "C4", "T8",
    "P7", "P3", "Pz", "P4", "P8",
    "O1", "Oz", "O2",
)  # fmt: skip

#: The 10-10 sites (modern names), front to back, left to right (from memory; see above).
SITES_10_10: tuple[str, ...] = (
    "Nz",
    "Fp1", "Fpz", "Fp2",
    "AF7", "AF3", "AFz", "AF4", "AF8",
    "F9", "F7", "F5", "F3", "F1", "Fz", "F2", "F4", "F6", "F8", "F10",
    "FT9", "FT7", "FC5", "FC3", "FC1", "FCz", "FC2", "FC4", "FC6", "FT8", "FT10",
    "T9", "T7", "C5", "C3", "C1", "Cz", "C2", "C4", "C6", "T8", "T10",
    "TP9", "TP7", "CP5", "CP3", "CP1", "CPz", "CP2", "CP4", "CP6", "TP8", "TP10",
    "P9", "P7", "P5", "P3", "P1", "Pz", "P2", "P4", "P6", "P8", "P10",
    "PO7", "PO3", "POz", "PO4", "PO8",
    "O1", "Oz", "O2",
    "Iz",
)  # fmt: skip

_ALL_MODERN: tuple[str, ...] = SITES_10_10 + REFERENCES
_BY_LOWER: dict[str, str] = {n.lower(): n for n in _ALL_MODERN}
_BY_LOWER.update({c.lower(): m for c, m in CLASSIC_TO_MODERN.items()})


def sites(system: str, *, references: bool = True) -> tuple[str, ...]:
    """The site names (modern) of ``system`` ("10-20" or "10-10"), references last."""
    if system == "10-20":
        base = SITES_10_20
    elif system == "10-10":
        base = SITES_10_10
    else:
        raise ValueError(f"system must be one of {', '.join(SYSTEMS)}, got {system!r}")
    return base + REFERENCES if references else base


def canonical_name(label: str) -> str | None:
    """The modern name of a 10-20/10-10 site or reference, or None if it is not one.

    Case-insensitive; classic names map to modern ones (``"t3" -> "T7"``); surrounding
    blanks and a leading ``"EEG "`` (common in amplifier labels) are ignored;
    ``"A1"`` stays ``"A1"`` (an earlobe is not a mastoid).
    """
    if not isinstance(label, str):
        return None
    text = label.strip()
    if text[:4].lower() == "eeg ":
        text = text[4:].strip()
    return _BY_LOWER.get(text.lower())


def display_name(modern: str, names: str) -> str:
    """The name of a site in the naming asked for ("modern" or "classic")."""
    if names == "classic":
        return MODERN_TO_CLASSIC.get(modern, modern)
    if names == "modern":
        return modern
    raise ValueError(f"names must be one of {', '.join(NAMINGS)}, got {names!r}")


def other_name(modern: str, names: str) -> str:
    """The site's name in the other naming where the two differ, else ""."""
    if modern not in MODERN_TO_CLASSIC:
        return ""
    return modern if names == "classic" else MODERN_TO_CLASSIC[modern]


def mirror(modern: str) -> str:
    """The site on the other side (odd numbers left, even right; z on the midline)."""
    if modern in ("LPA", "RPA"):
        return "RPA" if modern == "LPA" else "LPA"
    head = modern.rstrip("0123456789")
    digits = modern[len(head) :]
    if not digits:
        return modern
    n = int(digits)
    return f"{head}{n + 1 if n % 2 else n - 1}"


def side(modern: str) -> str:
    """Which side a site is on: "left", "right" or "midline" (by its number)."""
    digits = modern[len(modern.rstrip("0123456789")) :]
    if not digits:
        return "midline"
    return "left" if int(digits) % 2 else "right"


def known(names: Iterable[str]) -> list[str]:
    """The modern names of those labels that are sites, in input order, no repeats."""
    out: list[str] = []
    for label in names:
        name = canonical_name(label)
        if name is not None and name not in out:
            out.append(name)
    return out
