"""The technologist's channel map: stream label → type and name.

File format (YAML, one entry per channel to change; channels not listed keep what
bedside inferred)::

    channels:
      "EXG1": {type: EOG, name: LOC}
      "E17": {type: EEG}
      "Aux 3": {type: MISC}

Types are BIDS channels.tsv types (:data:`bedside.stream.labels.KINDS`). A confirmed map
is saved per source_id under ``$XDG_STATE_HOME/bedside/channels/`` and used again
the next time the same amplifier (source_id) is read, unless another map is given.
"""

from __future__ import annotations

import hashlib
import logging
import os
from collections.abc import Mapping
from pathlib import Path

import yaml

from bedside.config import read_yaml
from bedside.errors import ConfigError, InputError, LogSaveError
from bedside.record.atomic import atomic_write_text
from bedside.stream.channels import ChannelChoice
from bedside.stream.labels import KINDS

log = logging.getLogger("bedside")

_KEYS = ("type", "name")


def parse_channel_map(data: object, where: str) -> dict[str, ChannelChoice]:
    """Channel choices from parsed YAML (``{"channels": {label: {type, name}}}``)."""
    if not isinstance(data, dict) or set(data) != {"channels"}:
        raise InputError(f"{where}: expected one top-level key 'channels' (label: {{type: …, name: …}})")
    entries = data["channels"]
    if not isinstance(entries, dict) or not entries:
        raise InputError(f"{where}: 'channels' must map stream labels to {{type, name}}")
    out: dict[str, ChannelChoice] = {}
    for label, entry in entries.items():
        if not isinstance(entry, dict) or not entry or set(entry) - set(_KEYS):
            raise InputError(f"{where}: channel {str(label)!r} must be a mapping with type and/or name "
                             f"(accepted keys: {', '.join(_KEYS)})")
        ctype, name = entry.get("type"), entry.get("name")
        if ctype is not None and (not isinstance(ctype, str) or ctype.upper() not in KINDS):
            raise InputError(f"{where}: channel {str(label)!r} has type {ctype!r}; accepted: {', '.join(KINDS)}")
        if name is not None and not isinstance(name, str | int):
            raise InputError(f"{where}: channel {str(label)!r} has a name that is not text")
        out[str(label)] = ChannelChoice(ctype.upper() if isinstance(ctype, str) else None,
                                        None if name is None else str(name))
    return out


def load_channel_map(path: Path | str) -> dict[str, ChannelChoice]:
    """Read a ``--channels`` file; any problem is an error naming the file."""
    try:
        data = read_yaml(path)
    except ConfigError as exc:
        raise InputError(f"--channels {exc}") from exc
    return parse_channel_map(data, f"--channels {path}")


def store_folder() -> Path:
    state = os.environ.get("XDG_STATE_HOME") or str(Path.home() / ".local" / "state")
    return Path(state) / "bedside" / "channels"


def _store_path(source_id: str) -> Path:
    digest = hashlib.sha256(source_id.encode("utf-8", "surrogateescape")).hexdigest()[:16]
    return store_folder() / f"{digest}.yaml"


def save_choices(source_id: str, choices: Mapping[str, ChannelChoice]) -> Path | None:
    """Remember ``choices`` for this source_id (atomic write); None when it cannot be saved
    (logged: the choice still holds for this session)."""
    entries = {label: {k: v for k, v in (("type", c.type), ("name", c.name)) if v is not None}
               for label, c in choices.items()}
    text = yaml.safe_dump({"source_id": source_id, "channels": entries}, allow_unicode=True, sort_keys=False)
    try:
        folder = store_folder()
        folder.mkdir(parents=True, exist_ok=True, mode=0o700)
        return atomic_write_text(_store_path(source_id), text)
    except (OSError, ValueError, LogSaveError) as exc:
        log.warning("the channel choices could not be saved (%s); they hold for this session only", exc)
        return None


def saved_choices(source_id: str) -> dict[str, ChannelChoice] | None:
    """The choices saved for this source_id, or None (none saved, or unreadable: logged)."""
    path = _store_path(source_id)
    if not path.is_file():
        return None
    try:
        data = read_yaml(path)
        if not isinstance(data, dict) or data.get("source_id") != source_id:
            return None
        return parse_channel_map({"channels": data.get("channels")}, str(path))
    except (ConfigError, InputError) as exc:
        log.warning("saved channel choices ignored: %s", exc)
        return None
