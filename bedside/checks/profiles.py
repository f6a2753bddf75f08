"""Department profiles (``configs/profiles/<name>.yaml``): thresholds and limits for a
kind of recording — adult, paediatric, neonatal, ICU long-term, research high-density.

A profile file has one top-level section ``profile:`` (read strictly: an unknown key is
an error naming the file and line, with "did you mean")::

    profile:
      title: words shown in the picker
      impedance: {limit_kohm, balance_ratio, balance_min_kohm, balance_min_electrodes}
      recheck_h: hours between impedance re-checks in a long recording (null: none)
      montage: the electrodes this kind of recording expects ([] : any)
      quality: overrides of configs/quality.yaml, the same keys (e.g. artifacts.rms_check_uv)

Every value carries a ``[src: key]`` token (tests/test_config_sources.py). The
overrides are read twice through the strict loader: alone, so a misspelt or
out-of-range key names the profile's file and line; then laid over quality.yaml, so the
relations between settings (check below bad …) hold for the whole. The profile's hash
(SHA-256 of its bytes) goes into the setup log with its name.
"""

from __future__ import annotations

import copy
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from bedside.checks.impedance import ImpedanceLimits
from bedside.checks.settings import DEFAULT_PATH, QualitySettings
from bedside.config import CONFIG_DIR, StrictReader, config_hash, from_mapping, read_yaml
from bedside.errors import ConfigError, InputError

PROFILE_DIR = CONFIG_DIR / "profiles"
#: The profile used when none is chosen.
DEFAULT_PROFILE = "adult"


@dataclass(frozen=True)
class ProfileFile:
    """The ``profile:`` section as written (quality overrides checked separately)."""

    title: str
    impedance: ImpedanceLimits = field(default_factory=ImpedanceLimits)
    recheck_h: float | None = field(default=None, metadata={"min": 0.25, "max": 168.0})
    montage: tuple[str, ...] = ()
    quality: Any = None


@dataclass(frozen=True)
class Profile:
    """A loaded profile. sha256: of the file's bytes (the log records it with the name);
    quality: quality.yaml with the profile's overrides laid over it."""

    name: str
    title: str
    path: Path
    sha256: str
    impedance: ImpedanceLimits
    recheck_h: float | None
    montage: tuple[str, ...]
    quality: QualitySettings
    overrides: dict[str, Any]

    def as_dict(self) -> dict[str, object]:
        """For reports (check's JSON)."""
        lim = self.impedance
        return {"name": self.name, "title": self.title, "sha256": self.sha256,
                "impedance_limit_kohm": lim.limit_kohm, "balance_ratio": lim.balance_ratio,
                "balance_min_kohm": lim.balance_min_kohm, "recheck_h": self.recheck_h,
                "montage": list(self.montage)}

    def missing_from(self, names: list[str] | tuple[str, ...]) -> tuple[str, ...]:
        """Electrodes of the profile's montage the stream does not carry (case not minded;
        "Fp1/Fp3" is met by either name; the classic temporal names count for the modern
        ones and back)."""
        have = {n.casefold() for n in names}
        twins = {"t3": "t7", "t4": "t8", "t5": "p7", "t6": "p8"}
        twins.update({v: k for k, v in list(twins.items())})

        def met(entry: str) -> bool:
            return any(a.casefold() in have or twins.get(a.casefold(), "") in have
                       for a in entry.split("/"))

        return tuple(m for m in self.montage if not met(m))


def profile_names(folder: Path | None = None) -> tuple[str, ...]:
    """The profiles shipped (file names without .yaml), sorted."""
    folder = folder or PROFILE_DIR
    return tuple(sorted(p.stem for p in folder.glob("*.yaml")))


def _merge(base: dict[str, Any], over: dict[str, Any]) -> dict[str, Any]:
    out = copy.deepcopy(base)
    for k, v in over.items():
        if isinstance(v, dict) and isinstance(out.get(k), dict):
            out[k] = _merge(out[k], v)
        else:
            out[k] = copy.deepcopy(v)
    return out


#: Loaded profiles by (file, quality file, both files' size and change time): the app
#: reads the profile for every connection, and YAML parsing in pure Python is slow
#: enough to hold up the screen's thread; a changed file is read again.
_LOADED: dict[tuple[object, ...], Profile] = {}


def _stamp(path: Path) -> tuple[int, int]:
    try:
        st = path.stat()
    except (OSError, ValueError):
        return (-1, -1)  # read_yaml says what is wrong
    return (st.st_size, st.st_mtime_ns)


def load_profile(name: str | None = None, quality_path: Path | str | None = None,
                 folder: Path | None = None) -> Profile:
    """The profile ``name`` (default :data:`DEFAULT_PROFILE`), its overrides laid over
    ``quality_path`` (default: the shipped quality.yaml).

    InputError naming the accepted profiles for an unknown name; ConfigError naming the
    file and line for anything wrong inside it."""
    folder = folder or PROFILE_DIR
    name = DEFAULT_PROFILE if name is None else name
    names = profile_names(folder)
    if name not in names:
        raise InputError(f"--profile {name!r} is not a department profile; accepted: "
                         f"{', '.join(names) or 'none (configs/profiles/ is empty)'}")
    path = folder / f"{name}.yaml"
    qpath = Path(quality_path) if quality_path is not None else DEFAULT_PATH
    if "\x00" in str(qpath):
        raise ConfigError(f"{str(qpath)!r}: a file name cannot hold a NUL byte; give the path of a quality.yaml")
    key = (str(path.resolve()), str(qpath.resolve()), _stamp(path), _stamp(qpath))
    cached = _LOADED.get(key)
    if cached is None:
        cached = _LOADED[key] = _read_profile(name, path, qpath)
    return cached


def _read_profile(name: str, path: Path, qpath: Path) -> Profile:
    data = read_yaml(path)
    if not isinstance(data, dict) or "profile" not in data:
        raise ConfigError(f"{path}: missing top-level section 'profile'")
    extra = [k for k in data if k != "profile"]
    if extra:
        raise ConfigError(f"{path}: only the section 'profile' is read here, found {', '.join(map(str, extra))}")
    reader = StrictReader(str(path))
    spec = reader.read(data["profile"], ProfileFile, "profile")
    overrides = spec.quality if spec.quality is not None else {}
    if not isinstance(overrides, dict):
        raise ConfigError(f"{path}: 'profile.quality' must be a mapping of quality.yaml's keys")
    reader.read(overrides, QualitySettings, "profile.quality")  # names this file and line
    # The quality file on its own first: its own faults are named as its own (file, line).
    from bedside.checks.settings import load_quality

    load_quality(qpath)
    base = read_yaml(qpath)
    if not isinstance(base, dict) or "quality" not in base:
        raise ConfigError(f"{qpath}: missing top-level section 'quality'")
    merged = _merge(base["quality"] or {}, overrides)
    try:
        quality = from_mapping(merged, QualitySettings, source=f"{qpath} with profile {name} ({path})",
                               prefix="quality")
    except ConfigError as exc:
        raise ConfigError(f"profile {name}: {exc}") from exc
    return Profile(name, spec.title, path, config_hash(path), spec.impedance, spec.recheck_h,
                   spec.montage, quality, overrides)
