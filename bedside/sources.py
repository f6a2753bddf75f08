"""Where each configured number comes from: ``configs/bibliography.yaml`` and the
``[src: …]`` tokens in the comments of ``configs/*.yaml``.

The format (DEVELOPERS.md, "how to add a check", step 1):

* ``configs/bibliography.yaml`` maps a key (lower case, digits, hyphens:
  ``nuwer-1998-ifcn``) to an entry (:class:`Reference`). Four special keys carry no
  publication: ``ours``, ``common-practice``, ``from-memory``, ``measured-here``.
* A setting names its sources in its own comment with a token ``[src: key]`` or
  ``[src: key1, key2]``, beside free words that say what the source supports. Its own
  comment is the block of comment lines directly above the key (no blank line between)
  and the comment at the end of its line; for a value written over several lines (a
  flow list), comments inside the value count too.
* In a file read with ``tables=True`` a token on a key whose value is a mapping of
  plain values (a table: ``aliases:``, ``type_kinds:``, an amplifier profile) also
  covers each entry of that table that names no source of its own. The top-level
  section key (``stream:``, ``labels:``) never covers anything, and a mapping of
  mappings (``profiles:``) only groups. With ``tables=False`` (threshold files such as
  quality.yaml) every value names its own source.

:func:`setting_sources` lists every setting of a file with the keys it names, and
:func:`load_bibliography` reads the bibliography through the strict loader.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field
from pathlib import Path
from typing import Literal

import yaml

from bedside.config import CONFIG_DIR, StrictReader, read_yaml, yaml_problem
from bedside.errors import ConfigError

BIBLIOGRAPHY = CONFIG_DIR / "bibliography.yaml"

#: Keys that name no publication; the words beside the token give the reason.
SPECIAL_KEYS = ("ours", "common-practice", "from-memory", "measured-here")

#: ``[src: key]`` or ``[src: key1, key2]``.
SOURCE_TOKEN = re.compile(r"\[src:([^\]]*)\]")
KEY_PATTERN = re.compile(r"[a-z0-9]+(?:-[a-z0-9]+)*")

Kind = Literal["article", "guideline", "standard", "book", "report", "software", "web", "special"]


@dataclass(frozen=True)
class Reference:
    """One entry of the bibliography: a publication, or a special key (kind "special"
    with only a ``note``)."""

    kind: Kind
    note: str = ""
    authors: str = ""
    year: int | None = field(default=None, metadata={"min": 1800, "max": 2100})
    title: str = ""
    venue: str = ""
    doi: str = ""
    url: str = ""

    def __post_init__(self) -> None:
        if self.kind == "special":
            given = [n for n in ("authors", "year", "title", "venue", "doi", "url") if getattr(self, n)]
            if given:
                raise ValueError(f"a special key has only a note; remove {', '.join(given)}")
            if not self.note.strip():
                raise ValueError("a special key needs a note saying what it means")
            return
        missing = [n for n in ("authors", "title") if not getattr(self, n).strip()]
        if self.year is None and self.kind != "web":
            missing.append("year")
        if not (self.venue.strip() or self.doi.strip() or self.url.strip()):
            missing.append("venue, doi or url")
        if missing:
            article = "an" if self.kind[0] in "aeiou" else "a"
            raise ValueError(f"{article} {self.kind} entry needs {', '.join(missing)}")
        if self.doi and not re.fullmatch(r"10\.\d{4,9}/\S+", self.doi):
            raise ValueError(f"doi {self.doi!r} is not a DOI; accepted: 10.NNNN/… without a prefix")
        if self.url and not re.match(r"https?://\S+$", self.url):
            raise ValueError(f"url {self.url!r} must start with http:// or https://")

    def citation(self) -> str:
        """The entry as one line of text (special keys: their note)."""
        if self.kind == "special":
            return self.note
        parts = [self.authors, f"({self.year})" if self.year else "", self.title, self.venue]
        text = ". ".join(p.rstrip(".") for p in parts if p)
        if self.doi:
            text += f". doi:{self.doi}"
        elif self.url:
            text += f". {self.url}"
        return text


@dataclass(frozen=True)
class Bibliography:
    """The contents of configs/bibliography.yaml: key → entry."""

    entries: dict[str, Reference]

    def __getitem__(self, key: str) -> Reference:
        return self.entries[key]


def load_bibliography(path: Path | str = BIBLIOGRAPHY) -> Bibliography:
    """The bibliography, read strictly (ConfigError names the file, line and key)."""
    data = read_yaml(path)
    if not isinstance(data, dict) or "bibliography" not in data:
        raise ConfigError(f"{path}: missing top-level section 'bibliography'")
    if len(data) > 1:
        extra = ", ".join(str(k) for k in data if k != "bibliography")
        raise ConfigError(f"{path}: only the section 'bibliography' is accepted, not {extra}")
    reader = StrictReader(str(path))
    result = reader.read(data["bibliography"], Bibliography, "bibliography")
    section = data["bibliography"]
    entries = section.get("entries") if isinstance(section, dict) else None
    lines = getattr(entries, "lines", {})
    for key, ref in result.entries.items():
        where = reader.where(f"bibliography.entries.{key}", lines.get(key))
        if not KEY_PATTERN.fullmatch(key):
            raise ConfigError(f"{where}: a key is lower-case letters, digits and hyphens (e.g. nuwer-1998-ifcn)")
        if (key in SPECIAL_KEYS) != (ref.kind == "special"):
            raise ConfigError(
                f"{where}: kind 'special' is for the keys {', '.join(SPECIAL_KEYS)} only"
                if ref.kind == "special"
                else f"{where}: '{key}' is a special key; give it kind: special"
            )
    return result


@dataclass(frozen=True)
class SettingSource:
    """One setting of a config file and the source keys its comments name."""

    path: str  # dotted: "stream.buffer_s", "labels.aliases.T3"
    line: int  # 1-based
    keys: tuple[str, ...]
    inherited: bool = False  # the keys come from the table the setting sits in


def tokens_in(text: str) -> tuple[str, ...]:
    """The keys named by every ``[src: …]`` token in ``text`` (in order, as written)."""
    keys: list[str] = []
    for match in SOURCE_TOKEN.finditer(text):
        keys += [k.strip() for k in match.group(1).split(",")]
    return tuple(keys)


def _comment_of(line: str, start_col: int) -> str:
    """The comment at the end of ``line`` after column ``start_col`` ('' if none)."""
    rest = line[start_col:]
    at = rest.find("#")
    return rest[at:] if at >= 0 else ""


def _block_above(lines: list[str], index: int) -> str:
    """The comment lines directly above line ``index`` (0-based), nearest last."""
    out: list[str] = []
    i = index - 1
    while i >= 0 and lines[i].lstrip().startswith("#"):
        out.append(lines[i])
        i -= 1
    return "\n".join(reversed(out))


def _is_table(node: yaml.Node) -> bool:
    return isinstance(node, yaml.MappingNode) and all(
        not isinstance(v, yaml.MappingNode) for _k, v in node.value
    )


def setting_sources(path: Path | str, *, tables: bool = True) -> list[SettingSource]:
    """Every setting of ``path`` (a key whose value is not itself a mapping) with the
    source keys its comments name (see the module docstring for which comments count).
    A setting that names none has ``keys == ()``."""
    path = Path(path)
    read_yaml(path)  # the same checks (size, UTF-8, YAML) and messages as the loaders
    text = path.read_text(encoding="utf-8")
    lines = text.splitlines()
    try:
        root = yaml.compose(text, Loader=yaml.SafeLoader)
    except yaml.YAMLError as exc:
        raise ConfigError(f"{path}: {yaml_problem(exc)}") from exc
    out: list[SettingSource] = []

    def own(key: yaml.Node, value: yaml.Node) -> tuple[str, ...]:
        first = key.start_mark.line
        found = _block_above(lines, first)
        if isinstance(value, yaml.MappingNode) or (
            isinstance(value, yaml.SequenceNode) and not value.flow_style
        ):
            found += "\n" + _comment_of(lines[first], key.end_mark.column)
        else:
            last = value.end_mark.line
            if value.end_mark.column == 0 and last > first:
                last -= 1  # a flow value's end mark may sit at the start of the next line
            found += "\n" + _comment_of(lines[first], key.end_mark.column)
            for i in range(first + 1, last + 1):
                found += "\n" + _comment_of(lines[i], 0)
        return tokens_in(found)

    def walk(node: yaml.Node, prefix: str, depth: int, inherited: tuple[str, ...]) -> None:
        if not isinstance(node, yaml.MappingNode):
            return
        for key, value in node.value:
            name = f"{prefix}.{key.value}" if prefix else str(key.value)
            keys = own(key, value)
            if isinstance(value, yaml.MappingNode):
                passes = keys or inherited
                covers = tables and depth >= 1 and _is_table(value)
                walk(value, name, depth + 1, passes if covers else ())
                continue
            if keys:
                out.append(SettingSource(name, key.start_mark.line + 1, keys))
            else:
                out.append(SettingSource(name, key.start_mark.line + 1, inherited, bool(inherited)))

    if root is not None:
        walk(root, "", 0, ())
    return out
