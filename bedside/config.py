"""Load ``configs/*.yaml`` into typed, frozen dataclasses — strictly.

Each package defines its settings as frozen dataclasses (``bedside.checks.settings``,
``bedside.stream.settings`` …); this module turns a YAML file into one of them:

* ``yaml.safe_load`` semantics only (no arbitrary objects);
* unknown keys are rejected, with the closest valid key suggested;
* values are checked against the field's type and its ``metadata``
  (``min``, ``max``, ``choices``), and errors name the file, the line and the key;
* a missing key takes the dataclass default; a field with no default is required.

Nothing is ever half-loaded: any problem raises :class:`~bedside.errors.ConfigError`.
"""

from __future__ import annotations

import dataclasses
import difflib
import hashlib
import stat
import types
import typing
from pathlib import Path
from typing import Any, TypeVar

import yaml

from bedside.errors import ConfigError

T = TypeVar("T")

#: The configs/ folder shipped with the project (and installed beside the package).
CONFIG_DIR = Path(__file__).resolve().parent.parent / "configs"

#: Larger than any settings file could be (the shipped ones are a few kB): refused unread,
#: so a device such as /dev/zero given as a config cannot fill the memory.
MAX_CONFIG_BYTES = 1_000_000


class _LineDict(dict):  # type: ignore[type-arg]
    """A mapping that remembers the line (1-based) of each key."""

    lines: dict[Any, int]
    start_line: int


class _LineLoader(yaml.SafeLoader):
    """SafeLoader whose mappings remember where their keys were."""


def _construct_mapping(loader: _LineLoader, node: yaml.MappingNode) -> _LineDict:
    loader.flatten_mapping(node)
    result = _LineDict()
    result.lines = {}
    result.start_line = node.start_mark.line + 1
    for key_node, value_node in node.value:
        key = loader.construct_object(key_node, deep=True)
        if key in result:
            raise ConfigError(
                f"line {key_node.start_mark.line + 1}: key '{key}' appears twice"
            )
        result[key] = loader.construct_object(value_node, deep=True)
        result.lines[key] = key_node.start_mark.line + 1
    return result


_LineLoader.add_constructor(
    yaml.resolver.BaseResolver.DEFAULT_MAPPING_TAG, _construct_mapping  # type: ignore[arg-type]
)


def read_yaml(path: Path | str) -> Any:
    """Parse a YAML file safely; errors name the file and line."""
    path = Path(path)
    try:
        info = path.stat()
        if not stat.S_ISREG(info.st_mode):
            kind = "a folder" if stat.S_ISDIR(info.st_mode) else "not a regular file"
            raise ConfigError(f"{path}: {kind}; a YAML settings file is needed")
        if info.st_size > MAX_CONFIG_BYTES:
            raise ConfigError(
                f"{path}: {info.st_size} bytes is too large for a settings file "
                f"(at most {MAX_CONFIG_BYTES} bytes accepted)"
            )
        text = path.read_text(encoding="utf-8")
    except FileNotFoundError as exc:
        raise ConfigError(f"{path}: file not found") from exc
    except OSError as exc:
        raise ConfigError(f"{path}: cannot read ({exc.strerror})") from exc
    except UnicodeDecodeError as exc:
        raise ConfigError(f"{path}: not UTF-8 text ({exc.reason})") from exc
    except ValueError as exc:  # a path with a NUL byte in it, which no file can have
        raise ConfigError(f"{str(path)!r}: not a usable file name ({exc})") from exc
    try:
        return yaml.load(text, Loader=_LineLoader)  # noqa: S506 - _LineLoader is a SafeLoader
    except ConfigError as exc:
        raise ConfigError(f"{path}: {exc}") from exc
    except yaml.MarkedYAMLError as exc:
        mark = exc.problem_mark
        where = f"line {mark.line + 1}, column {mark.column + 1}" if mark else "somewhere"
        raise ConfigError(f"{path}: not valid YAML at {where}: {exc.problem}") from exc
    except yaml.YAMLError as exc:
        raise ConfigError(f"{path}: not valid YAML: {exc}") from exc


def config_hash(*paths: Path | str) -> str:
    """SHA-256 over the bytes of the given config files (for the setup log)."""
    digest = hashlib.sha256()
    for p in paths:
        digest.update(Path(p).read_bytes())
    return digest.hexdigest()


def load_config(path: Path | str, schema: type[T], section: str | None = None) -> T:
    """Load ``path`` (optionally only its top-level ``section``) into ``schema``."""
    data = read_yaml(path)
    where = str(path)
    if section is not None:
        if not isinstance(data, dict) or section not in data:
            raise ConfigError(f"{where}: missing top-level section '{section}'")
        data = data[section]
    return from_mapping(data, schema, source=where, prefix=section or "")


def from_mapping(data: Any, schema: type[T], *, source: str = "<config>", prefix: str = "") -> T:
    """Build ``schema`` (a dataclass) from ``data`` with strict checking."""
    return typing.cast(T, _build(data, schema, source, prefix, None))


def _where(source: str, key: str, line: int | None) -> str:
    loc = f"{source}, line {line}" if line else source
    return f"{loc}: '{key}'" if key else loc


def _build(data: Any, tp: Any, source: str, key: str, line: int | None) -> Any:
    if dataclasses.is_dataclass(tp) and isinstance(tp, type):
        return _build_dataclass(data, tp, source, key, line)
    origin = typing.get_origin(tp)
    args = typing.get_args(tp)
    if origin in (typing.Union, types.UnionType):
        if data is None and type(None) in args:
            return None
        options = [a for a in args if a is not type(None)]
        errors = []
        for option in options:
            try:
                return _build(data, option, source, key, line)
            except ConfigError as exc:
                errors.append(str(exc))
        raise ConfigError(errors[0] if len(errors) == 1 else " / ".join(errors))
    if origin is typing.Literal:
        if data not in args:
            allowed = ", ".join(repr(a) for a in args)
            raise ConfigError(f"{_where(source, key, line)} is {data!r}; accepted: {allowed}")
        return data
    if origin in (tuple, list):
        if not isinstance(data, list):
            raise ConfigError(f"{_where(source, key, line)} must be a list, got {data!r}")
        item_tp = args[0] if args else Any
        items = [_build(v, item_tp, source, f"{key}[{i}]", line) for i, v in enumerate(data)]
        return tuple(items) if origin is tuple else items
    if origin is dict:
        if not isinstance(data, dict):
            raise ConfigError(f"{_where(source, key, line)} must be a mapping, got {data!r}")
        k_tp, v_tp = args if args else (Any, Any)
        lines = getattr(data, "lines", {})
        return {
            _build(k, k_tp, source, f"{key}.{k}", lines.get(k, line)): _build(
                v, v_tp, source, f"{key}.{k}", lines.get(k, line)
            )
            for k, v in data.items()
        }
    if tp is Any:
        return data
    if tp is bool:
        if not isinstance(data, bool):
            raise ConfigError(f"{_where(source, key, line)} must be true or false, got {data!r}")
        return data
    if tp is float:
        if isinstance(data, bool) or not isinstance(data, int | float):
            raise ConfigError(f"{_where(source, key, line)} must be a number, got {data!r}")
        return float(data)
    if tp is int:
        if isinstance(data, bool) or not isinstance(data, int):
            raise ConfigError(f"{_where(source, key, line)} must be a whole number, got {data!r}")
        return data
    if tp is str:
        if not isinstance(data, str):
            raise ConfigError(f"{_where(source, key, line)} must be text, got {data!r}")
        return data
    raise ConfigError(f"{_where(source, key, line)}: unsupported setting type {tp!r}")


def _build_dataclass(data: Any, tp: type, source: str, key: str, line: int | None) -> Any:
    if data is None:
        data = {}
    if not isinstance(data, dict):
        raise ConfigError(f"{_where(source, key, line)} must be a mapping of settings, got {data!r}")
    hints = typing.get_type_hints(tp)
    fields = {f.name: f for f in dataclasses.fields(tp) if f.init}
    lines: dict[Any, int] = getattr(data, "lines", {})
    for name in data:
        if name not in fields:
            close = difflib.get_close_matches(str(name), list(fields), n=1)
            hint = f"; did you mean '{close[0]}'?" if close else ""
            full = f"{key}.{name}" if key else str(name)
            accepted = ", ".join(sorted(fields))
            raise ConfigError(
                f"{_where(source, full, lines.get(name, line))} is not a known setting{hint} "
                f"(accepted here: {accepted})"
            )
    values: dict[str, Any] = {}
    for name, f in fields.items():
        full = f"{key}.{name}" if key else name
        if name not in data:
            if f.default is dataclasses.MISSING and f.default_factory is dataclasses.MISSING:
                raise ConfigError(f"{_where(source, full, line)} is required but missing")
            continue
        where_line = lines.get(name, line)
        value = _build(data[name], hints[name], source, full, where_line)
        _check_range(value, f.metadata, source, full, where_line)
        values[name] = value
    try:
        obj = tp(**values)
    except (TypeError, ValueError) as exc:
        raise ConfigError(f"{_where(source, key, line)}: {exc}") from exc
    return obj


def _check_range(value: Any, meta: typing.Mapping[str, Any], source: str, key: str, line: int | None) -> None:
    if value is None:
        return
    lo, hi = meta.get("min"), meta.get("max")
    if isinstance(value, int | float) and not isinstance(value, bool):
        if lo is not None and value < lo:
            raise ConfigError(f"{_where(source, key, line)} is {value}; accepted: {lo} to {hi if hi is not None else 'any'}")
        if hi is not None and value > hi:
            raise ConfigError(f"{_where(source, key, line)} is {value}; accepted: {lo if lo is not None else 'any'} to {hi}")
    choices = meta.get("choices")
    if choices is not None and value not in choices:
        raise ConfigError(f"{_where(source, key, line)} is {value!r}; accepted: {', '.join(map(str, choices))}")
