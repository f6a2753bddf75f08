"""The amplifier profile: coupling (AC with its high-pass corner, or DC) and input range.

Evidence in this order: the stream's metadata (``desc/acquisition/coupling``,
``highpass_hz`` and ``input_range_uv`` — bedside's own keys beside the XDF EEG
meta-data convention's ``desc/acquisition/{manufacturer, model}``, read when an outlet
writes them), then the profile named with ``--amplifier`` (``configs/amplifiers.yaml``),
else unknown: then the offset-against-range and rail checks do not run, and the
drift thresholds are the coupling-neutral ones.
"""

from __future__ import annotations

import difflib
import math
from collections.abc import Mapping
from dataclasses import dataclass, field
from pathlib import Path
from typing import Literal

from bedside.config import CONFIG_DIR, load_config
from bedside.errors import ConfigError, InputError

AMPLIFIERS_CONFIG = CONFIG_DIR / "amplifiers.yaml"

Coupling = Literal["ac", "dc"]


@dataclass(frozen=True)
class ProfileSpec:
    """One entry of configs/amplifiers.yaml (µV, Hz)."""

    coupling: Coupling
    input_range_uv: float = field(metadata={"min": 1.0, "max": 1e7})
    highpass_hz: float | None = field(default=None, metadata={"min": 0.0, "max": 10.0})

    def __post_init__(self) -> None:
        if self.coupling == "dc" and self.highpass_hz:
            raise ValueError("a DC-coupled amplifier has no hardware high-pass (remove highpass_hz)")


@dataclass(frozen=True)
class AmplifierCatalogue:
    profiles: dict[str, ProfileSpec] = field(default_factory=dict)


@dataclass(frozen=True)
class AmplifierProfile:
    """What bedside knows of the amplifier: coupling ("ac", "dc" or None), the AC
    high-pass corner (Hz), the ± input range (µV), and where each came from."""

    coupling: Coupling | None = None
    highpass_hz: float | None = None
    input_range_uv: float | None = None
    source: str = ""
    notes: tuple[str, ...] = ()

    def as_dict(self) -> dict[str, object]:
        return {"coupling": self.coupling, "highpass_hz": self.highpass_hz,
                "input_range_uv": self.input_range_uv, "source": self.source}


def load_amplifiers(path: Path | str = AMPLIFIERS_CONFIG) -> AmplifierCatalogue:
    cat = load_config(path, AmplifierCatalogue, "amplifiers")
    if not isinstance(cat, AmplifierCatalogue):  # pragma: no cover
        raise ConfigError(f"{path}: could not build the amplifier profiles")
    return cat


def _number(text: str, what: str, notes: list[str]) -> float | None:
    if not text.strip():
        return None
    try:
        value = float(text)
    except ValueError:
        value = math.nan
    if not math.isfinite(value) or value <= 0:
        notes.append(f"the metadata's {what} {text.strip()!r} is not a positive number; ignored")
        return None
    return value


def decide_profile(
    acquisition: Mapping[str, str],
    name: str | None = None,
    catalogue: AmplifierCatalogue | None = None,
) -> AmplifierProfile:
    """The profile from the metadata's ``acquisition`` fields, filled from ``--amplifier``
    ``name``. An unknown name is an InputError listing the known ones."""
    notes: list[str] = []
    spec: ProfileSpec | None = None
    if name is not None:
        cat = catalogue or load_amplifiers()
        spec = cat.profiles.get(name.strip())
        if spec is None:
            close = difflib.get_close_matches(name.strip(), list(cat.profiles), n=1)
            hint = f" (did you mean {close[0]!r}?)" if close else ""
            raise InputError(f"--amplifier {name!r} is not a known profile{hint}; "
                             f"accepted: {', '.join(cat.profiles)} (configs/amplifiers.yaml)")
    coupling_text = acquisition.get("coupling", "").strip().casefold()
    meta_coupling: Coupling | None = None
    if coupling_text in ("ac", "dc"):
        meta_coupling = "ac" if coupling_text == "ac" else "dc"
    elif coupling_text:
        notes.append(f"the metadata's coupling {coupling_text!r} is not AC or DC; ignored")
    meta_hp = _number(acquisition.get("highpass_hz", ""), "highpass_hz", notes)
    meta_range = _number(acquisition.get("input_range_uv", ""), "input_range_uv", notes)
    if meta_coupling is None and meta_range is None and spec is None:
        return AmplifierProfile(notes=tuple(notes))
    coupling = meta_coupling or (spec.coupling if spec else None)
    rng = meta_range or (spec.input_range_uv if spec else None)
    hp = meta_hp if meta_hp is not None else (spec.highpass_hz if spec else None)
    if coupling == "dc":
        hp = None
    if spec is not None and meta_coupling is not None and meta_coupling != spec.coupling:
        notes.append(f"the metadata says {meta_coupling.upper()}-coupled, --amplifier {name} says "
                     f"{spec.coupling.upper()}; the metadata is used")
    parts = (["metadata"] if (meta_coupling or meta_range) else []) + ([f"--amplifier {name}"] if spec else [])
    return AmplifierProfile(coupling, hp, rng, " + ".join(parts), tuple(notes))
