"""The strict config loader: unknown keys, types, ranges, lines named."""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

import pytest

from bedside.config import config_hash, from_mapping, load_config
from bedside.errors import ConfigError


@dataclass(frozen=True)
class Inner:
    bandwidth_hz: float = field(default=1.0, metadata={"min": 0.1, "max": 5})


@dataclass(frozen=True)
class Outer:
    window_s: float = field(default=4.0, metadata={"min": 1, "max": 30})
    mode: str = field(default="auto", metadata={"choices": ("auto", "50", "60")})
    inner: Inner = field(default_factory=Inner)
    names: tuple[str, ...] = ()


def _write(tmp_path: Path, text: str) -> Path:
    p = tmp_path / "quality.yaml"
    p.write_text(text, encoding="utf-8")
    return p


def test_defaults_and_values(tmp_path: Path) -> None:
    p = _write(tmp_path, "window_s: 2\ninner:\n  bandwidth_hz: 2.5\nnames: [a, b]\n")
    cfg = load_config(p, Outer)
    assert cfg == Outer(window_s=2.0, inner=Inner(2.5), names=("a", "b"))


def test_unknown_key_names_file_line_and_suggests(tmp_path: Path) -> None:
    p = _write(tmp_path, "window_s: 2\ninner:\n  bandwith_hz: 2.5\n")
    with pytest.raises(ConfigError, match=r"quality\.yaml, line 3: 'inner\.bandwith_hz' is not a known setting; did you mean 'bandwidth_hz'"):
        load_config(p, Outer)


def test_out_of_range_value(tmp_path: Path) -> None:
    p = _write(tmp_path, "window_s: 100\n")
    with pytest.raises(ConfigError, match=r"line 1: 'window_s' is 100.0; accepted: 1 to 30"):
        load_config(p, Outer)


def test_wrong_type_and_choice() -> None:
    with pytest.raises(ConfigError, match="must be a number"):
        from_mapping({"window_s": "four"}, Outer)
    with pytest.raises(ConfigError, match="accepted: auto, 50, 60"):
        from_mapping({"mode": "55"}, Outer)
    with pytest.raises(ConfigError, match="must be a number"):
        from_mapping({"window_s": True}, Outer)


def test_malformed_yaml_names_line(tmp_path: Path) -> None:
    p = _write(tmp_path, "window_s: 2\ninner: [unclosed\n")
    with pytest.raises(ConfigError, match=r"not valid YAML at line \d"):
        load_config(p, Outer)


def test_duplicate_key_and_missing_file(tmp_path: Path) -> None:
    p = _write(tmp_path, "window_s: 2\nwindow_s: 3\n")
    with pytest.raises(ConfigError, match="appears twice"):
        load_config(p, Outer)
    with pytest.raises(ConfigError, match="file not found"):
        load_config(tmp_path / "nope.yaml", Outer)


def test_yaml_objects_are_refused(tmp_path: Path) -> None:
    p = _write(tmp_path, "window_s: !!python/object/apply:os.system ['true']\n")
    with pytest.raises(ConfigError, match="not valid YAML"):
        load_config(p, Outer)


def test_config_hash_changes_with_content(tmp_path: Path) -> None:
    p = _write(tmp_path, "window_s: 2\n")
    h1 = config_hash(p)
    p.write_text("window_s: 3\n", encoding="utf-8")
    assert config_hash(p) != h1 and len(h1) == 64


def test_config_hash_refuses_a_folder_or_a_missing_file_clearly(tmp_path: Path) -> None:
    """The hash reads through the one guarded read: a folder or a missing file is a
    ConfigError naming the path, never an OSError traceback (common practice)."""
    from bedside.errors import ConfigError

    with pytest.raises(ConfigError, match="a folder"):
        config_hash(tmp_path)
    with pytest.raises(ConfigError, match="file not found"):
        config_hash(tmp_path / "absent.yaml")
