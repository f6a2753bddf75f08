"""Checks on what people type into the log before it is stored or becomes part of a file name.

The subject/study ID is pseudonymous: a code such as ``W3-017``, never a name. It may
end up in file names (BIDS ``sub-<label>``, report names), so it is limited to
letters, digits, ``-`` and ``_``, never holds a path separator or ``..``, and is short.
By default it must also contain a digit: codes have digits, names do not — a guard
against typing the patient's name into the ID box (``allow_letters_only=True`` lifts it
for studies whose codes are letters only).
"""

from __future__ import annotations

import re
import unicodedata

from bedside.checks.impedance import PLAUSIBLE_MAX_KOHM, accepted_words, implausible
from bedside.errors import InputError

SUBJECT_ID_MAX = 32
INITIALS_MAX = 5
ELECTRODE_MAX = 32
NOTE_MAX = 2000
#: Impedances above this are not a measurement but an open lead or a slip (kΩ); the
#: one value, from bedside.checks.impedance (common practice).
IMPEDANCE_MAX_KOHM = PLAUSIBLE_MAX_KOHM

_SUBJECT_RE = re.compile(r"[A-Za-z0-9][A-Za-z0-9_-]*")
_INITIALS_RE = re.compile(r"[A-Za-z]+")


def validate_subject_id(text: str, *, allow_letters_only: bool = False) -> str:
    """Return the ID unchanged if acceptable ("" means not set yet); else raise InputError."""
    if not isinstance(text, str):
        raise InputError(f"subject ID must be text, got {type(text).__name__}")
    if text == "":
        return ""
    accepted = (
        f"accepted: 1 to {SUBJECT_ID_MAX} letters, digits, '-' or '_', starting with a "
        "letter or digit, e.g. W3-017"
    )
    if "/" in text or "\\" in text or ".." in text or "\x00" in text:
        raise InputError(f"subject ID {text!r} contains a path separator or '..'; {accepted}")
    if len(text) > SUBJECT_ID_MAX:
        raise InputError(f"subject ID is {len(text)} characters long; {accepted}")
    if not _SUBJECT_RE.fullmatch(text):
        raise InputError(f"subject ID {text!r} has characters that are not allowed; {accepted}")
    if not allow_letters_only and not any(c.isdigit() for c in text):
        raise InputError(
            f"subject ID {text!r} has no digit: use the pseudonymous study code "
            "(e.g. W3-017), never the patient's name"
        )
    return text


def validate_initials(text: str) -> str:
    """Technologist initials: 1-5 letters (dots and spaces dropped), returned upper-case."""
    if not isinstance(text, str):
        raise InputError(f"initials must be text, got {type(text).__name__}")
    cleaned = text.replace(".", "").replace(" ", "")
    if cleaned == "" and text.strip() == "":
        return ""
    if not _INITIALS_RE.fullmatch(cleaned) or len(cleaned) > INITIALS_MAX:
        raise InputError(
            f"initials {text!r} are not acceptable; accepted: 1 to {INITIALS_MAX} letters, "
            "e.g. JMK"
        )
    return cleaned.upper()


def validate_electrode(name: str) -> str:
    """An electrode or channel name: 1-32 printable characters, no tab or line break."""
    if not isinstance(name, str):
        raise InputError(f"electrode name must be text, got {type(name).__name__}")
    name = name.strip()
    if not name or len(name) > ELECTRODE_MAX or any(
        unicodedata.category(c).startswith("C") for c in name
    ):
        raise InputError(
            f"electrode name {name!r} is not acceptable; accepted: 1 to {ELECTRODE_MAX} "
            "printable characters, e.g. Fp1"
        )
    return name


def validate_impedance(electrode: str, kohm: float | str) -> float:
    """An impedance in kΩ: a finite number above 0 and at most IMPEDANCE_MAX_KOHM
    (0 or less, or above, is no contact on skin: refused with the reason)."""
    try:
        value = float(kohm)
    except (TypeError, ValueError):
        raise InputError(
            f"impedance for {electrode} must be a number in kΩ, got {kohm!r}; {accepted_words()}"
        ) from None
    why = "not a number of kΩ" if isinstance(kohm, bool) else implausible(value)
    if why:
        raise InputError(f"impedance for {electrode} is {kohm!r}: {why}; {accepted_words()}")
    return value


def validate_note(text: str) -> str:
    """A note: non-empty free text up to NOTE_MAX characters (line breaks allowed)."""
    if not isinstance(text, str):
        raise InputError(f"note must be text, got {type(text).__name__}")
    text = text.strip()
    if not text:
        raise InputError("note is empty; type some text")
    if len(text) > NOTE_MAX:
        raise InputError(f"note is {len(text)} characters long; accepted: up to {NOTE_MAX}")
    if any(unicodedata.category(c) in ("Cc", "Cs") and c not in "\n\t" for c in text):
        raise InputError("note contains control characters; accepted: printable text and line breaks")
    return text
