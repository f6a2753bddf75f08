"""configs/quality.yaml: every setting written in the file, and strict loading.

That every threshold names its source (a key of configs/bibliography.yaml) is checked
by tests/test_config_sources.py for all config files.
"""

from __future__ import annotations

import dataclasses
import re
from pathlib import Path

import pytest

from bedside.checks.settings import DEFAULT_PATH, QualitySettings, load_quality
from bedside.errors import ConfigError

SETTING = re.compile(r"^\s*([a-z_]+):\s*(\S.*?)\s*(#.*)?$")


def _setting_lines() -> list[tuple[int, str, str, str]]:
    out = []
    for no, line in enumerate(DEFAULT_PATH.read_text(encoding="utf-8").splitlines(), 1):
        if line.lstrip().startswith("#"):
            continue
        m = SETTING.match(line)
        if m:
            out.append((no, m.group(1), m.group(2), m.group(3) or ""))
    return out


def test_every_setting_is_written_in_the_file() -> None:
    """No threshold hides as a code default: each dataclass field is in the YAML."""
    keys = {key for _no, key, _v, _c in _setting_lines()}
    text = DEFAULT_PATH.read_text(encoding="utf-8")

    def fields(tp: type) -> set[str]:
        names = set()
        for f in dataclasses.fields(tp):
            names.add(f.name)
            default = f.default_factory() if f.default_factory is not dataclasses.MISSING else None  # type: ignore[misc]
            if dataclasses.is_dataclass(default):
                names |= fields(type(default))
        return names

    absent = sorted(n for n in fields(QualitySettings) if n not in keys and f"{n}:" not in text)
    assert absent == []


def test_file_matches_code_defaults() -> None:
    assert load_quality() == QualitySettings()


def _write(tmp_path: Path, body: str) -> Path:
    p = tmp_path / "quality.yaml"
    p.write_text(body, encoding="utf-8")
    return p


def test_unknown_key_names_file_line_and_suggestion(tmp_path: Path) -> None:
    p = _write(tmp_path, "quality:\n  window_s: 4.0\n  line_noise:\n    bad_dbb: 12\n")
    with pytest.raises(ConfigError, match=r"quality\.yaml, line 4: 'quality.line_noise.bad_dbb' is not a known setting; did you mean 'bad_db'"):
        load_quality(p)


def test_out_of_range_names_key_and_accepted(tmp_path: Path) -> None:
    p = _write(tmp_path, "quality:\n  update_hz: 500\n")
    with pytest.raises(ConfigError, match=r"line 2: 'quality.update_hz' is 500.*accepted: 0.2 to 50"):
        load_quality(p)


def test_malformed_yaml(tmp_path: Path) -> None:
    p = _write(tmp_path, "quality:\n  window_s: [4.0\n")
    with pytest.raises(ConfigError, match=r"quality\.yaml: not valid YAML at line"):
        load_quality(p)


def test_wrong_type_and_bad_choice(tmp_path: Path) -> None:
    with pytest.raises(ConfigError, match=r"'quality.window_s' must be a number"):
        load_quality(_write(tmp_path, "quality:\n  window_s: four\n"))
    with pytest.raises(ConfigError, match=r"'quality.line_noise.mains' is 55; accepted: 'auto', 50, 60"):
        load_quality(_write(tmp_path, "quality:\n  line_noise:\n    mains: 55\n"))


def test_check_above_bad_is_refused(tmp_path: Path) -> None:
    p = _write(tmp_path, "quality:\n  line_noise:\n    check_db: 20\n    bad_db: 10\n")
    with pytest.raises(ConfigError, match=r"'line_noise.check_db' \(20.0\) must not be above 'line_noise.bad_db'"):
        load_quality(p)


def test_window_must_be_whole_blocks(tmp_path: Path) -> None:
    with pytest.raises(ConfigError, match=r"'window_s' must be a whole number of 'block_s'"):
        load_quality(_write(tmp_path, "quality:\n  window_s: 4.1\n"))


def test_missing_section_and_file(tmp_path: Path) -> None:
    with pytest.raises(ConfigError, match=r"missing top-level section 'quality'"):
        load_quality(_write(tmp_path, "other: 1\n"))
    with pytest.raises(ConfigError, match=r"file not found"):
        load_quality(tmp_path / "nope.yaml")
