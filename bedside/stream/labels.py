"""Stream channel labels → 10-20 / 10-10 names and channel kinds.

Naming: bedside shows the **modern** name (T7, not T3) and keeps the label the stream
sent in ``ChannelInfo.label``. Labels are matched without case after removing a type
prefix ("EEG ") and a reference suffix ("-REF", "-A1", "_M2", " AVG"…), all listed in
``configs/labels.yaml``. A label that is not a known site is kept exactly as it came.

Kinds: "EEG" (scalp, ear and mastoid sites, and unknown labels of EEG type), "ECG",
"EOG", "EMG", "TRIG", "MISC", "REF". A non-EEG channel type in the metadata decides;
otherwise the label does (ECG…, EOG…, TRIG…, Status…). Only "EEG" takes part in scalp
checks.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field
from pathlib import Path

from bedside.config import CONFIG_DIR, load_config
from bedside.errors import ConfigError

LABELS_CONFIG = CONFIG_DIR / "labels.yaml"
KINDS = ("EEG", "ECG", "EOG", "EMG", "TRIG", "MISC", "REF")


@dataclass(frozen=True)
class LabelRules:
    """The contents of configs/labels.yaml (see that file for the sources)."""

    scalp_names: tuple[str, ...]
    aliases: dict[str, str] = field(default_factory=dict)
    prefixes: tuple[str, ...] = ("EEG ",)
    reference_suffixes: tuple[str, ...] = ()
    non_scalp_labels: dict[str, str] = field(default_factory=dict)
    type_kinds: dict[str, str] = field(default_factory=dict)

    def __post_init__(self) -> None:
        canon = {n.upper(): n for n in self.scalp_names}
        for old, new in self.aliases.items():
            if new.upper() not in canon:
                raise ValueError(f"alias {old!r} -> {new!r}: {new!r} is not in scalp_names")
        for where, mapping in (("non_scalp_labels", self.non_scalp_labels), ("type_kinds", self.type_kinds)):
            for key, kind in mapping.items():
                if kind not in KINDS:
                    raise ValueError(f"{where}.{key} is {kind!r}; accepted kinds: {', '.join(KINDS)}")
        # Lookup tables, built once (the dataclass is frozen, so via object.__setattr__).
        lookup = dict(canon)
        for old, new in self.aliases.items():
            lookup[old.upper()] = canon[new.upper()]
        object.__setattr__(self, "_lookup", lookup)
        suffixes = "|".join(re.escape(s.upper()) for s in sorted(self.reference_suffixes, key=len, reverse=True))
        object.__setattr__(
            self, "_suffix_re", re.compile(rf"^(.+?)[-_ ]+(?:{suffixes})$") if suffixes else None
        )
        object.__setattr__(
            self,
            "_non_scalp",
            sorted(((k.upper(), v) for k, v in self.non_scalp_labels.items()), key=lambda kv: -len(kv[0])),
        )

    def modern_name(self, key: str) -> str | None:
        """The modern name of an upper-case, cleaned label, or None if it is not a site."""
        return self._lookup.get(key)  # type: ignore[attr-defined, no-any-return]


def load_labels(path: Path | str = LABELS_CONFIG) -> LabelRules:
    """Read the label rules (section ``labels``); problems are ConfigErrors naming the file."""
    rules = load_config(path, LabelRules, "labels")
    if not isinstance(rules, LabelRules):  # pragma: no cover
        raise ConfigError(f"{path}: could not build the label rules")
    return rules


def _clean(label: str, rules: LabelRules) -> str:
    key = " ".join(label.split()).upper()
    for prefix in rules.prefixes:
        p = prefix.upper()
        if key.startswith(p) and len(key) > len(p):
            key = key[len(p):].strip()
            break
    return key


def _strip_reference(key: str, rules: LabelRules) -> str:
    pattern = rules._suffix_re  # type: ignore[attr-defined]
    if pattern is None:
        return key
    m = pattern.match(key)
    return m.group(1) if m else key


def _kind_from_label(key: str, rules: LabelRules) -> str | None:
    for prefix, kind in rules._non_scalp:  # type: ignore[attr-defined]
        if key.startswith(prefix):
            rest = key[len(prefix):]
            # "ECG", "ECG2", "ECG-L", "STI 014" — but never a letter run like "REFX".
            if not rest or not rest[0].isalpha() or prefix in ("STI", "TRIG", "MARKER", "EVENT"):
                return kind
    return None


def normalise_label(
    label: str, aliases: LabelRules, channel_type: str | None = None
) -> tuple[str, str]:
    """``(name, kind)`` for one channel label.

    name: the modern 10-20/10-10 name when the label is a known site (after case,
    prefix, reference suffix and classic-name aliases), else the label unchanged
    (surrounding spaces removed). kind: one of KINDS (see the module docstring).
    ``channel_type``: the channel's type from the stream metadata, if any.
    """
    rules = aliases
    text = label.strip()
    key = _clean(text, rules)
    site = rules.modern_name(key) or rules.modern_name(_strip_reference(key, rules))
    name = site or text
    ctype = (channel_type or "").strip().upper()
    if ctype and ctype != "EEG":
        return name, rules.type_kinds.get(ctype, "MISC")
    if site is not None:
        return name, "EEG"
    label_kind = _kind_from_label(key, rules) or _kind_from_label(text.upper(), rules)
    return name, label_kind or "EEG"
