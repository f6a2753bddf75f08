"""Every configured value names its source, as a key of configs/bibliography.yaml.

The format is bedside/sources.py's (and DEVELOPERS.md, "how to add a check", step 1):
a ``[src: key, …]`` token in the setting's own comment; the keys are entries of the
bibliography, read by the strict loader. This replaces a regular-expression lint that
any year or the word "ours" satisfied.
"""

from __future__ import annotations

import dataclasses
from pathlib import Path

import pytest

from bedside.config import CONFIG_DIR
from bedside.errors import ConfigError
from bedside.sources import SPECIAL_KEYS, load_bibliography, setting_sources, tokens_in
from bedside.stream.settings import StreamSettings

#: The config files checked, and whether a token on a table covers its entries.
CONFIG_FILES: dict[str, bool] = {
    "stream.yaml": False,
    "labels.yaml": True,
    "amplifiers.yaml": True,
    "quality.yaml": False,
    "taptest.yaml": False,
    # The department profiles (bedside/checks/profiles.py): one source per value.
    "profiles/adult.yaml": False,
    "profiles/paediatric.yaml": False,
    "profiles/neonatal.yaml": False,
    "profiles/icu-long-term.yaml": False,
    "profiles/research-high-density.yaml": False,
}

#: Bibliography entries cited only in words, not by a config's token: where, and which.
AWAITING: dict[str, frozenset[str]] = {
    # The standard montages' chains are facts of display, not settings (bedside/montage.py).
    "bedside/montage.py": frozenset({"acharya-2016-acns-guideline-3"}),
}

BIBLIOGRAPHY = load_bibliography().entries


@pytest.mark.parametrize("name", sorted(CONFIG_FILES))
def test_every_setting_names_a_source_in_the_bibliography(name: str) -> None:
    settings = setting_sources(CONFIG_DIR / name, tables=CONFIG_FILES[name])
    assert settings, f"{name}: no settings found"
    missing = [f"{name}, line {s.line}: {s.path}" for s in settings if not s.keys]
    assert missing == [], "no [src: key] token for these"
    unknown = [
        f"{name}, line {s.line}: {s.path} names {k!r}"
        for s in settings
        for k in s.keys
        if k not in BIBLIOGRAPHY
    ]
    assert unknown == [], "keys not in configs/bibliography.yaml"


def test_every_bibliography_entry_is_used() -> None:
    used = {
        k
        for name, tables in CONFIG_FILES.items()
        for s in setting_sources(CONFIG_DIR / name, tables=tables)
        for k in s.keys
    }
    waiting = frozenset().union(*AWAITING.values())
    assert sorted(waiting & used) == [], "used now: remove these from AWAITING"
    assert sorted(set(BIBLIOGRAPHY) - used - waiting) == [], "entries no config names"
    assert sorted(waiting - set(BIBLIOGRAPHY)) == []


def test_the_parser_sees_every_setting_the_loader_reads() -> None:
    """No value escapes the check: stream.yaml's settings are StreamSettings' fields."""
    found = {s.path.removeprefix("stream.") for s in setting_sources(CONFIG_DIR / "stream.yaml", tables=False)}
    assert found == {f.name for f in dataclasses.fields(StreamSettings)}


def test_every_entry_is_a_full_citation() -> None:
    for key in SPECIAL_KEYS:
        assert BIBLIOGRAPHY[key].kind == "special" and BIBLIOGRAPHY[key].note
    for key, ref in BIBLIOGRAPHY.items():
        if ref.kind == "special":
            continue
        assert ref.authors and ref.title and (ref.year or ref.kind == "web"), key
        assert ref.doi or ref.url or ref.venue, key
    nuwer = BIBLIOGRAPHY["nuwer-1998-ifcn"].citation()
    assert nuwer.startswith("Nuwer MR") and "(1998)" in nuwer and "doi:10.1016/" in nuwer


# --- the token format -----------------------------------------------------------------


def _write(tmp_path: Path, text: str) -> Path:
    path = tmp_path / "some.yaml"
    path.write_text(text, encoding="utf-8")
    return path


def test_tokens_are_read_with_their_keys() -> None:
    assert tokens_in("# 4 s, long enough [src: ours] and [src: welch-1967, common-practice]") == (
        "ours", "welch-1967", "common-practice",
    )  # fmt: skip
    assert tokens_in("# from memory (2016), ours") == (), "free words are not a source"


def test_which_comments_belong_to_a_setting(tmp_path: Path) -> None:
    path = _write(
        tmp_path,
        "# file header [src: ours]\n"
        "section:\n"
        "  # above, directly [src: nuwer-1998-ifcn]\n"
        "  a: 1\n"
        "  b: 2  # at the end of its line [src: welch-1967]\n"
        "  # a comment split from its key by a blank line does not count [src: ours]\n"
        "\n"
        "  c: 3\n"
        "  d: [x,\n"
        "      y]  # inside a flow list [src: common-practice]\n"
        "  # the table's source [src: from-memory]\n"
        "  table:\n"
        "    k1: v1\n"
        "    k2: v2  # its own [src: ours]\n"
        "  group:\n"
        "    # [src: measured-here]\n"
        "    inner:\n"
        "      p: 1\n",
    )
    with_tables = {s.path: s.keys for s in setting_sources(path)}
    assert with_tables == {
        "section.a": ("nuwer-1998-ifcn",),
        "section.b": ("welch-1967",),
        "section.c": (),
        "section.d": ("common-practice",),
        "section.table.k1": ("from-memory",),
        "section.table.k2": ("ours",),
        "section.group.inner.p": ("measured-here",),
    }
    strict = {s.path: s.keys for s in setting_sources(path, tables=False)}
    assert strict["section.table.k1"] == () and strict["section.group.inner.p"] == ()
    assert strict["section.table.k2"] == ("ours",)


def test_a_section_key_covers_nothing(tmp_path: Path) -> None:
    path = _write(tmp_path, "# [src: ours]\nsection:\n  a: 1\n")
    assert [s.keys for s in setting_sources(path)] == [()]


# --- the bibliography is read strictly ------------------------------------------------


def _bib(tmp_path: Path, body: str) -> Path:
    indented = "".join("  " + line for line in body.splitlines(keepends=True))
    return _write(tmp_path, "bibliography:\n  entries:\n" + indented)


GOOD = (
    "  ours:\n    kind: special\n    note: chosen by us\n"
    "  welch-1967:\n    kind: article\n    authors: Welch PD\n    year: 1967\n"
    "    title: The use of fast Fourier transform\n    doi: 10.1109/TAU.1967.1161901\n"
)


@pytest.mark.parametrize(
    ("body", "message"),
    [
        (GOOD + "    jounral: IEEE\n", r"some\.yaml, line 12: 'bibliography.entries.welch-1967.jounral' is not a known setting; did you mean"),
        (GOOD.replace("    year: 1967\n", ""), r"line 6: 'bibliography.entries.welch-1967': an article entry needs year"),
        (GOOD.replace("    note: chosen by us\n", "    note: chosen\n    year: 2020\n"), r"a special key has only a note; remove year"),
        (GOOD.replace("welch-1967", "Welch_1967"), r"a key is lower-case letters, digits and hyphens"),
        (GOOD.replace("welch-1967", "ours").replace("  ours:\n    kind: special\n    note: chosen by us\n", ""), r"'ours' is a special key; give it kind: special"),
        (GOOD.replace("ours:", "mine:"), r"kind 'special' is for the keys ours, common-practice"),
        (GOOD.replace("10.1109/", "doi:10.1109/"), r"is not a DOI"),
        (GOOD.replace("    year: 1967\n", "    year: 1967\n    kind: book\n"), r"key 'kind' appears twice"),
        (GOOD.replace("    kind: article\n", "    kind: paper\n"), r"accepted: 'article', 'guideline'"),
        (GOOD.replace("year: 1967", "year: 3000"), r"'bibliography.entries.welch-1967.year' is 3000; accepted: 1800 to 2100"),
    ],
)
def test_a_bad_bibliography_is_a_clear_error(tmp_path: Path, body: str, message: str) -> None:
    with pytest.raises(ConfigError, match=message):
        load_bibliography(_bib(tmp_path, body))


def test_the_good_example_loads(tmp_path: Path) -> None:
    refs = load_bibliography(_bib(tmp_path, GOOD)).entries
    assert refs["welch-1967"].citation() == "Welch PD. (1967). The use of fast Fourier transform. doi:10.1109/TAU.1967.1161901"
    with pytest.raises(ConfigError, match="missing top-level section 'bibliography'"):
        load_bibliography(_write(tmp_path, "other: {}\n"))
