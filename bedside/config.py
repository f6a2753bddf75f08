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
from collections.abc import Callable, Mapping
from dataclasses import dataclass
from pathlib import Path
from typing import Any, TypeVar

import yaml

from bedside.errors import BedsideError, ConfigError

T = TypeVar("T")

#: The configs/ folder beside the package (a clone or an editable install; a built wheel
#: does not carry it).
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


@dataclass(frozen=True)
class FileKind:
    """What :func:`read_guarded` expected to find, and how its refusals say so: each
    message follows ``<path>: `` (``too_large`` is given the size in bytes)."""

    error: type[BedsideError]
    max_bytes: int
    missing: str
    folder: str
    not_regular: str
    too_large: Callable[[int], str]


#: A settings file (``configs/*.yaml``, a profile, a scenario): ConfigError.
SETTINGS_FILE = FileKind(
    error=ConfigError,
    max_bytes=MAX_CONFIG_BYTES,
    missing="file not found",
    folder="a folder; a YAML settings file is needed",
    not_regular="not a regular file; a YAML settings file is needed",
    too_large=lambda size: (
        f"{size} bytes is too large for a settings file (at most {MAX_CONFIG_BYTES} bytes accepted)"
    ),
)


def read_guarded(path: Path | str, kind: FileKind) -> bytes:
    """The bytes of a file bedside reads whole (a settings file, a setup log), refused
    with ``kind.error`` and a message naming the path before anything is read when it
    is missing, a folder, not a regular file (a device such as /dev/zero, which would
    be read without end; a pipe), larger than ``kind.max_bytes``, unreadable, or named
    with a NUL byte (which no file can have). The one guarded read: the config loader
    and the setup log both read through it."""
    path = Path(path)
    try:
        info = path.stat()
        if stat.S_ISDIR(info.st_mode):
            raise kind.error(f"{path}: {kind.folder}")
        if not stat.S_ISREG(info.st_mode):
            raise kind.error(f"{path}: {kind.not_regular}")
        if info.st_size > kind.max_bytes:
            raise kind.error(f"{path}: {kind.too_large(info.st_size)}")
        return path.read_bytes()
    except FileNotFoundError as exc:
        raise kind.error(f"{path}: {kind.missing}") from exc
    except IsADirectoryError as exc:
        raise kind.error(f"{path}: {kind.folder}") from exc
    except OSError as exc:
        raise kind.error(f"{path}: cannot read ({exc.strerror})") from exc
    except ValueError as exc:  # a path with a NUL byte in it
        raise kind.error(f"{str(path)!r}: not a usable file name ({exc})") from exc


def read_yaml(path: Path | str) -> Any:
    """Parse a YAML file safely; errors name the file and line."""
    path = Path(path)
    raw = read_guarded(path, SETTINGS_FILE)
    try:
        text = raw.decode("utf-8")
    except UnicodeDecodeError as exc:
        raise ConfigError(f"{path}: not UTF-8 text ({exc.reason})") from exc
    try:
        return yaml.load(text, Loader=_LineLoader)  # noqa: S506 - _LineLoader is a SafeLoader
    except ConfigError as exc:
        raise ConfigError(f"{path}: {exc}") from exc
    except yaml.YAMLError as exc:
        raise ConfigError(f"{path}: {yaml_problem(exc)}") from exc


def yaml_problem(exc: yaml.YAMLError) -> str:
    """What is wrong with a YAML text, in words, with the line and column where known."""
    mark = getattr(exc, "problem_mark", None)
    if isinstance(exc, yaml.MarkedYAMLError) and mark is not None:
        return f"not valid YAML at line {mark.line + 1}, column {mark.column + 1}: {exc.problem}"
    return f"not valid YAML: {exc}"


def config_hash(*paths: Path | str) -> str:
    """SHA-256 over the bytes of the given config files (for the setup log), each read
    through the one guarded read (a folder, a device or a huge file is a ConfigError)."""
    digest = hashlib.sha256()
    for p in paths:
        digest.update(read_guarded(p, SETTINGS_FILE))
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
    """Build ``schema`` (a dataclass) from ``data`` with strict checking (ConfigError)."""
    return StrictReader(source).read(data, schema, prefix)


Converter = Callable[[Any, str], Any]


def describe(value: Any) -> str:
    """A value as an error message names it."""
    if value is None:
        return "nothing"
    if isinstance(value, dict):
        return "a mapping"
    if isinstance(value, list):
        return "a list"
    if isinstance(value, str):
        return f"the text {value!r}"
    return repr(value)


class StrictReader:
    """Turns parsed YAML (or JSON-like data) into frozen dataclasses, strictly.

    Shared by the configs (errors: ConfigError, "setting") and the setup log
    (errors: RecordError, "key", with a converter for zone-aware times). Field
    ``metadata`` may give ``min``, ``max`` and ``choices``. Mappings parsed by
    :func:`read_yaml` carry their keys' lines, which every message then names.
    """

    def __init__(
        self,
        source: str,
        *,
        error: type[BedsideError] = ConfigError,
        noun: str = "setting",
        converters: Mapping[type, Converter] | None = None,
        quote_choices: bool = True,
        none_is_empty: bool = True,
    ) -> None:
        self.source = source
        self.quote_choices = quote_choices
        self.none_is_empty = none_is_empty
        self.error = error
        self.noun = noun
        self.converters = dict(converters or {})
        self._hints: dict[type, dict[str, Any]] = {}

    def read(self, data: Any, schema: type[T], key: str = "") -> T:
        return typing.cast(T, self._build(data, schema, key, None))

    def where(self, key: str, line: int | None = None) -> str:
        loc = f"{self.source}, line {line}" if line else self.source
        return f"{loc}: '{key}'" if key else loc

    def _fail(self, message: str) -> BedsideError:
        return self.error(message)

    def _build(self, data: Any, tp: Any, key: str, line: int | None) -> Any:
        if dataclasses.is_dataclass(tp) and isinstance(tp, type):
            return self._build_dataclass(data, tp, key, line)
        if tp in self.converters:
            return self.converters[tp](data, self.where(key, line))
        origin = typing.get_origin(tp)
        args = typing.get_args(tp)
        where = self.where(key, line)
        if origin in (typing.Union, types.UnionType):
            if data is None and type(None) in args:
                return None
            options = [a for a in args if a is not type(None)]
            if len(options) == 1:
                return self._build(data, options[0], key, line)
            errors: list[str] = []
            for option in options:
                try:
                    return self._build(data, option, key, line)
                except self.error as exc:
                    if str(exc) not in errors:
                        errors.append(str(exc))
            raise self._fail(" / ".join(errors))
        if origin is typing.Literal:
            if data not in args:
                shown = map(repr if self.quote_choices else str, args)
                raise self._fail(f"{where} is {data!r}; accepted: {', '.join(shown)}")
            return data
        if origin in (tuple, list):
            if not isinstance(data, list):
                raise self._fail(f"{where} must be a list, got {describe(data)}")
            if origin is tuple and args and not (len(args) == 2 and args[1] is Ellipsis):
                if len(data) != len(args):
                    raise self._fail(f"{where} must have {len(args)} items, got {len(data)}")
                items = [self._build(v, a, f"{key}[{i}]", line) for i, (v, a) in enumerate(zip(data, args, strict=True))]
            else:
                item_tp = args[0] if args else Any
                items = [self._build(v, item_tp, f"{key}[{i}]", line) for i, v in enumerate(data)]
            return tuple(items) if origin is tuple else items
        if origin is dict:
            if not isinstance(data, dict):
                raise self._fail(f"{where} must be a mapping, got {describe(data)}")
            k_tp, v_tp = args if args else (Any, Any)
            lines = getattr(data, "lines", {})
            return {
                self._build(k, k_tp, f"{key}.{k}", lines.get(k, line)): self._build(
                    v, v_tp, f"{key}.{k}", lines.get(k, line)
                )
                for k, v in data.items()
            }
        if tp is Any or tp is object:
            return data
        if tp is bool:
            if not isinstance(data, bool):
                raise self._fail(f"{where} must be true or false, got {describe(data)}")
            return data
        if tp is float:
            if isinstance(data, bool) or not isinstance(data, int | float):
                raise self._fail(f"{where} must be a number, got {describe(data)}")
            return float(data)
        if tp is int:
            if isinstance(data, bool) or not isinstance(data, int):
                raise self._fail(f"{where} must be a whole number, got {describe(data)}")
            return data
        if tp is str:
            if not isinstance(data, str):
                raise self._fail(f"{where} must be text, got {describe(data)}")
            return data
        raise self._fail(f"{where}: cannot read a value of type {tp!r}")

    def _build_dataclass(self, data: Any, tp: type, key: str, line: int | None) -> Any:
        if data is None and self.none_is_empty:
            data = {}  # an empty section (e.g. "hold:" alone) takes every default
        if not isinstance(data, dict):
            raise self._fail(f"{self.where(key, line)} must be a mapping, got {describe(data)}")
        hints = self._hints.get(tp)
        if hints is None:
            hints = self._hints[tp] = typing.get_type_hints(tp)
        fields = {f.name: f for f in dataclasses.fields(tp) if f.init}
        lines: dict[Any, int] = getattr(data, "lines", {})
        for name in data:
            if name not in fields:
                close = difflib.get_close_matches(str(name), list(fields), n=1)
                hint = f"; did you mean '{close[0]}'?" if close else ""
                full = f"{key}.{name}" if key else str(name)
                raise self._fail(
                    f"{self.where(full, lines.get(name, line))} is not a known {self.noun}{hint} "
                    f"(accepted here: {', '.join(fields)})"
                )
        values: dict[str, Any] = {}
        for name, f in fields.items():
            full = f"{key}.{name}" if key else name
            if name not in data:
                if f.default is dataclasses.MISSING and f.default_factory is dataclasses.MISSING:
                    raise self._fail(f"{self.where(full, line)} is missing (it is required)")
                continue
            where_line = lines.get(name, line)
            value = self._build(data[name], hints[name], full, where_line)
            self._check_range(value, f.metadata, self.where(full, where_line))
            values[name] = value
        try:
            return tp(**values)
        except (TypeError, ValueError) as exc:
            raise self._fail(f"{self.where(key, line)}: {exc}") from exc

    def _check_range(self, value: Any, meta: Mapping[str, Any], where: str) -> None:
        if value is None or not meta:
            return
        lo, hi = meta.get("min"), meta.get("max")
        numeric = isinstance(value, int | float) and not isinstance(value, bool)
        if numeric and ((lo is not None and value < lo) or (hi is not None and value > hi)):
            lo_s = lo if lo is not None else "any"
            hi_s = hi if hi is not None else "any"
            raise self._fail(f"{where} is {value}; accepted: {lo_s} to {hi_s}")
        choices = meta.get("choices")
        if choices is not None and value not in choices:
            raise self._fail(f"{where} is {value!r}; accepted: {', '.join(map(str, choices))}")
