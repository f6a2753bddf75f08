"""Stream channel labels → 10-20 / 10-10 names and channel types.

Naming: bedside shows the **modern** name (T7, not T3) and keeps the label the stream
sent in ``ChannelInfo.label``. Labels are matched without case after removing an EDF+
type word ("EEG "), BCI2000's padding dots ("Fc5." → FC5, "Cz.." → Cz) and a
reference suffix ("-REF", "-A1", "_M2", " AVG"…), all listed in
``configs/labels.yaml``. A label that is not a known site is kept as it came.

Types are BIDS channels.tsv types (:data:`KINDS`). The evidence, in this order:

1. the channel's ``type`` in the stream metadata, when it is not "EEG" (many outlets
   write "EEG" for every channel, so that one value is weak evidence);
2. the unit: a unit that is not a voltage (g, %, Ω, °C, µS…) is never EEG;
3. the label: the patterns of ``label_patterns`` ("VEOGU", "EOGL", "EMGchin",
   "STI 014", "ACC_X", "DC01", "X1"…);
4. the EDF+ "Type Location" convention: the type word before the location
   ("EOG ROC", "EEG Fp1-REF", "Resp chest");
5. otherwise a voltage channel is judged as scalp EEG — said so in the channel's
   note when its label is not a known site.

Only "EEG" takes part in scalp checks.
"""

from __future__ import annotations

import re
import unicodedata
from dataclasses import dataclass, field
from pathlib import Path

from bedside.config import CONFIG_DIR, load_config
from bedside.errors import ConfigError

LABELS_CONFIG = CONFIG_DIR / "labels.yaml"

#: Channel types, as BIDS channels.tsv spells them (BIDS 1.11, EEG chapter).
KINDS = (
    "EEG", "EOG", "HEOG", "VEOG", "ECG", "EMG", "TRIG", "MISC", "REF",
    "GSR", "RESP", "PPG", "TEMP", "EYEGAZE", "PUPIL", "SYSCLOCK", "AUDIO",
)  # fmt: skip

#: Longest name bedside shows; a longer label is cut (and the note says so). Longer
#: than any label an amplifier writes (EDF+ allows 16 characters; common practice).
MAX_NAME_CHARS = 40

_CONTROL = re.compile(r"[\x00-\x1f\x7f-\x9f]")


@dataclass(frozen=True)
class LabelRules:
    """The contents of configs/labels.yaml (see that file for the sources)."""

    scalp_names: tuple[str, ...]
    aliases: dict[str, str] = field(default_factory=dict)
    local_sites: dict[str, str] = field(default_factory=dict)
    type_prefixes: dict[str, str] = field(default_factory=dict)
    reference_suffixes: tuple[str, ...] = ()
    label_patterns: dict[str, str] = field(default_factory=dict)
    type_kinds: dict[str, str] = field(default_factory=dict)

    def __post_init__(self) -> None:
        canon = {n.upper(): n for n in self.scalp_names}
        for old, new in self.aliases.items():
            if new.upper() not in canon:
                raise ValueError(f"alias {old!r} -> {new!r}: {new!r} is not in scalp_names")
        for local, at in self.local_sites.items():
            if at.upper() not in canon:
                raise ValueError(f"local_sites.{local} -> {at!r}: {at!r} is not in scalp_names")
        for where, mapping in (
            ("label_patterns", self.label_patterns),
            ("type_kinds", self.type_kinds),
            ("type_prefixes", self.type_prefixes),
        ):
            for key, kind in mapping.items():
                if kind not in KINDS:
                    raise ValueError(f"{where}.{key} is {kind!r}; accepted kinds: {', '.join(KINDS)}")
        patterns = []
        for text, kind in self.label_patterns.items():
            try:
                patterns.append((re.compile(text, re.IGNORECASE), kind))
            except re.error as exc:
                raise ValueError(f"label_patterns: {text!r} is not a regular expression ({exc})") from None
        # Lookup tables, built once (the dataclass is frozen, so via object.__setattr__).
        lookup = dict(canon)
        for old, new in self.aliases.items():
            lookup[old.upper()] = canon[new.upper()]
        for local in self.local_sites:
            lookup[local.upper()] = local
        object.__setattr__(self, "_lookup", lookup)
        object.__setattr__(self, "_patterns", tuple(patterns))
        suffixes = "|".join(re.escape(s.upper()) for s in sorted(self.reference_suffixes, key=len, reverse=True))
        object.__setattr__(
            self, "_suffix_re", re.compile(rf"^(.+?)[-_ ]+({suffixes})$") if suffixes else None
        )

    def modern_name(self, key: str) -> str | None:
        """The modern name of an upper-case, cleaned label, or None if it is not a site."""
        return self._lookup.get(key)  # type: ignore[attr-defined, no-any-return]

    def position_site(self, name: str) -> str:
        """The 10-10 site whose position ``name`` takes (itself, or a local name's site)."""
        return self.local_sites.get(name, name)


def load_labels(path: Path | str = LABELS_CONFIG) -> LabelRules:
    """Read the label rules (section ``labels``); problems are ConfigErrors naming the file."""
    rules = load_config(path, LabelRules, "labels")
    if not isinstance(rules, LabelRules):  # pragma: no cover
        raise ConfigError(f"{path}: could not build the label rules")
    return rules


@dataclass(frozen=True)
class Reading:
    """What one label (with its metadata type and unit) says.

    name: shown name; kind: one of KINDS; evidence: what decided the kind ("type",
    "unit", "label", "EDF+ type", "site", "assumed"); reference: the reference a
    suffix names ("A1" in "T3-A1"), "" when none; note: what had to be assumed.
    """

    name: str
    kind: str
    evidence: str
    reference: str = ""
    note: str = ""


def _split_prefix(key: str, rules: LabelRules) -> tuple[str | None, str]:
    """(kind of the EDF+ type word or None, the rest of the label)."""
    head, _, rest = key.partition(" ")
    kind = rules.type_prefixes.get(head) if rest.strip() else None
    return (kind, rest.strip()) if kind is not None else (None, key)


def _strip_reference(key: str, rules: LabelRules) -> tuple[str, str]:
    pattern = rules._suffix_re  # type: ignore[attr-defined]
    if pattern is None:
        return key, ""
    m = pattern.match(key)
    return (m.group(1), m.group(2)) if m else (key, "")


def kind_from_label(key: str, rules: LabelRules) -> str | None:
    """The kind a non-scalp label pattern gives (upper-case, cleaned key), or None."""
    for pattern, kind in rules._patterns:  # type: ignore[attr-defined]
        if pattern.fullmatch(key):
            return str(kind)
    return None


def clean_text(label: str) -> tuple[str, str]:
    """(label fit to show, note): control characters (NUL…) removed, blanks trimmed,
    cut at MAX_NAME_CHARS. The note says what was changed ("" when nothing)."""
    notes = []
    text = label
    if _CONTROL.search(text):
        text = _CONTROL.sub("", text)
        notes.append("control characters (such as NUL) removed from the label")
    text = text.strip()
    if len(text) > MAX_NAME_CHARS:
        notes.append(f"label of {len(label)} characters cut to {MAX_NAME_CHARS}")
        text = text[: MAX_NAME_CHARS - 1].rstrip() + "…"
    return text, "; ".join(notes)


def read_label(
    label: str,
    rules: LabelRules,
    channel_type: str | None = None,
    unit_kind: str | None = None,
) -> Reading:
    """What ``label`` says (see the module docstring for the order of evidence).

    channel_type: the metadata's type for the channel (or None); unit_kind: the kind
    the channel's unit implies when it is not a voltage (from
    :func:`bedside.stream.units.unit_kind`), None for a voltage or no unit.
    """
    text, note = clean_text(label)
    key = unicodedata.normalize("NFKC", " ".join(text.split())).upper()
    prefix_kind, rest = _split_prefix(key, rules)
    bare = rest.rstrip(".") or rest  # BCI2000 pads labels with dots to 4 characters
    site_key, reference = _strip_reference(bare, rules)
    site = rules.modern_name(bare) or rules.modern_name(site_key)
    if site is not None and rules.modern_name(bare) is not None:
        reference = ""
    name = site or text
    notes = [note] if note else []
    ctype = unicodedata.normalize("NFKC", channel_type or "").strip().upper()
    label_kind = kind_from_label(rest, rules) or kind_from_label(key, rules)

    def done(kind: str, evidence: str) -> Reading:
        return Reading(name, kind, evidence, reference if kind in ("EEG",) else "", "; ".join(notes))

    if ctype and ctype != "EEG":
        kind = rules.type_kinds.get(ctype)
        if kind is None:
            notes.append(f"type {channel_type!r} in the metadata is not a known channel type; not judged")
            return done("MISC", "type")
        return done(kind, "type")
    if unit_kind is not None:
        return done(label_kind if label_kind not in (None, "EEG") else unit_kind, "unit")
    if site is not None:
        if prefix_kind not in (None, "EEG"):
            return done(prefix_kind, "EDF+ type")
        return done("EEG", "site")
    if label_kind is not None:
        if ctype == "EEG":
            notes.append(f"typed EEG in the metadata, but the label says {label_kind}")
        return done(label_kind, "label")
    if prefix_kind is not None:
        return done(prefix_kind, "EDF+ type")
    if ctype == "EEG":
        return done("EEG", "type")
    if text:
        notes.append(f"label {text!r} is not a 10-20/10-10 site; judged as scalp EEG")
    return done("EEG", "assumed")


def normalise_label(
    label: str, aliases: LabelRules, channel_type: str | None = None
) -> tuple[str, str]:
    """``(name, kind)`` for one channel label (see :func:`read_label`)."""
    r = read_label(label, aliases, channel_type)
    return r.name, r.kind
