"""Every shipped settings file and demo scenario, broken three ways (issue 8).

Each of ``configs/*.yaml`` and ``demo_streams/*.yaml`` is copied and damaged:

* malformed (a tab where YAML allows none),
* an unknown key (a near-miss of a real one),
* every range-checked number set outside its accepted range, one at a time.

The loader must raise :class:`~bedside.errors.ConfigError` naming the file, the line and
the key and saying what is accepted; the commands that read the file must refuse to
start (exit 2, ``error: ...`` on stderr, nothing printed on stdout, no stream looked for
or published, no app opened). The accepted ranges are the ones declared in the settings
dataclasses' ``metadata`` (the project's own contract, see bedside/config.py); what a
YAML parser must refuse is the YAML 1.1 spec ("tabs are never allowed as indentation").
"""

from __future__ import annotations

import dataclasses
import re
import typing
import uuid
from collections.abc import Callable, Iterator
from pathlib import Path
from typing import Any

import pytest

from bedside.checks.settings import QualitySettings, load_quality
from bedside.checks.taptest import TapSettings, load_tap_settings
from bedside.cli import main
from bedside.config import CONFIG_DIR, read_yaml
from bedside.errors import ConfigError
from bedside.sim.scenario import DEMO_DIR, Scenario, load_scenario
from bedside.sources import Bibliography, load_bibliography
from bedside.stream import labels as labels_mod
from bedside.stream import settings as stream_settings_mod
from bedside.stream.amplifier import AmplifierCatalogue, load_amplifiers
from bedside.stream.labels import LabelRules, load_labels
from bedside.stream.settings import StreamSettings, load_stream_settings

# file -> (schema, top-level section or None, loader)
Loader = Callable[[Path], object]
_CONFIGS: dict[str, tuple[type, str | None, Loader]] = {
    "quality.yaml": (QualitySettings, "quality", load_quality),
    "stream.yaml": (StreamSettings, "stream", load_stream_settings),
    "labels.yaml": (LabelRules, "labels", load_labels),
    "amplifiers.yaml": (AmplifierCatalogue, "amplifiers", load_amplifiers),
    "bibliography.yaml": (Bibliography, "bibliography", load_bibliography),
    "taptest.yaml": (TapSettings, "taptest", load_tap_settings),
}


def _all_files() -> list[tuple[Path, type, str | None, Loader]]:
    out: list[tuple[Path, type, str | None, Loader]] = []
    for path in sorted(CONFIG_DIR.glob("*.yaml")):
        assert path.name in _CONFIGS, f"{path.name} is shipped but this test does not know its schema"
        schema, section, loader = _CONFIGS[path.name]
        out.append((path, schema, section, loader))
    for path in sorted(DEMO_DIR.glob("*.yaml")):
        out.append((path, Scenario, None, load_scenario))
    return out


FILES = _all_files()
IDS = [f"{p.parent.name}/{p.name}" for p, *_ in FILES]


def _copy(src: Path, tmp_path: Path, text: str | None = None) -> Path:
    dst = tmp_path / src.name
    dst.write_text(src.read_text(encoding="utf-8") if text is None else text, encoding="utf-8")
    return dst


# --- where the keys are -------------------------------------------------------------


def _section_lines(path: Path, section: str | None) -> tuple[Any, int]:
    """The section's mapping (with its .lines) and the line of its first key."""
    data = read_yaml(path)
    if section is not None:
        data = data[section]
    first_key = next(iter(data))
    return data, data.lines[first_key]


@dataclasses.dataclass(frozen=True)
class Bad:
    key: str  # dotted path, as the loader names it
    name: str  # the field's own name
    line: int  # 1-based
    value: object


def _out_of_range(data: Any, schema: type, prefix: str = "") -> Iterator[Bad]:
    """One out-of-range value for every range-checked scalar present in the file."""
    hints = typing.get_type_hints(schema)
    for f in dataclasses.fields(schema):
        if f.name not in data:
            continue
        value, line = data[f.name], data.lines[f.name]
        full = f"{prefix}.{f.name}" if prefix else f.name
        tp = hints[f.name]
        args = [a for a in typing.get_args(tp) if a is not type(None)]
        inner = args[0] if typing.get_origin(tp) in (tuple, list) and args else None
        if dataclasses.is_dataclass(tp) and isinstance(value, dict):
            yield from _out_of_range(value, tp, full)  # type: ignore[arg-type]
        elif inner is not None and dataclasses.is_dataclass(inner) and isinstance(value, list):
            for i, item in enumerate(value):
                if isinstance(item, dict):
                    yield from _out_of_range(item, inner, f"{full}[{i}]")  # type: ignore[arg-type]
        elif isinstance(value, int | float) and not isinstance(value, bool):
            lo, hi = f.metadata.get("min"), f.metadata.get("max")
            if hi is not None:
                yield Bad(full, f.name, line, hi * 10 + 1 if hi > 0 else hi + 1)
            elif lo is not None:
                yield Bad(full, f.name, line, lo - 1)
            elif "choices" in f.metadata:
                yield Bad(full, f.name, line, max(f.metadata["choices"]) + 1)


def _replace_value(text: str, line: int, name: str, value: object) -> str:
    lines = text.split("\n")
    pat = re.compile(rf"(\b{re.escape(name)}\s*:\s*)([^,}}\]#\s]+)")
    new, n = pat.subn(lambda m: m.group(1) + repr(value), lines[line - 1], count=1)
    assert n == 1, (line, name, lines[line - 1])
    lines[line - 1] = new
    return "\n".join(lines)


def _insert_after(text: str, line: int, new_line: str) -> str:
    lines = text.split("\n")
    lines.insert(line, new_line)
    return "\n".join(lines)


def _indent_of(text: str, line: int) -> str:
    row = text.split("\n")[line - 1]
    return row[: len(row) - len(row.lstrip(" "))]


# --- the loaders -----------------------------------------------------------------------


@pytest.mark.parametrize(("path", "schema", "section", "loader"), FILES, ids=IDS)
def test_shipped_file_loads(path: Path, schema: type, section: str | None, loader: Loader) -> None:
    """The control for the tests below: the undamaged copy loads (so each error below is
    caused by the one change made)."""
    assert isinstance(loader(path), schema)


@pytest.mark.parametrize(("path", "schema", "section", "loader"), FILES, ids=IDS)
def test_malformed_file_names_the_file_and_line(
    tmp_path: Path, path: Path, schema: type, section: str | None, loader: Loader
) -> None:
    """A tab at the start of a line, just before the first setting (YAML 1.1 forbids tabs
    as indentation)."""
    text = path.read_text(encoding="utf-8")
    _, first = _section_lines(path, section)
    broken = _copy(path, tmp_path, _insert_after(text, first - 1, "\tbroken: 1"))
    with pytest.raises(ConfigError) as info:
        loader(broken)
    msg = str(info.value)
    assert msg.startswith(str(broken)), msg
    assert f"not valid YAML at line {first}" in msg, msg


@pytest.mark.parametrize(("path", "schema", "section", "loader"), FILES, ids=IDS)
def test_unknown_key_is_named_with_line_and_a_suggestion(
    tmp_path: Path, path: Path, schema: type, section: str | None, loader: Loader
) -> None:
    text = path.read_text(encoding="utf-8")
    data, first = _section_lines(path, section)
    real = next(iter(data))
    typo = real + "x"  # a near miss of the first real key, on a new line before it
    broken = _copy(path, tmp_path, _insert_after(text, first - 1, f"{_indent_of(text, first)}{typo}: 1"))
    with pytest.raises(ConfigError) as info:
        loader(broken)
    msg = str(info.value)
    full = f"{section}.{typo}" if section else typo
    assert msg.startswith(f"{broken}, line {first}: '{full}' is not a known setting"), msg
    assert f"did you mean '{real}'" in msg and "accepted here:" in msg, msg


@pytest.mark.parametrize(("path", "schema", "section", "loader"), FILES, ids=IDS)
def test_every_bounded_value_out_of_range_is_named(
    tmp_path: Path, path: Path, schema: type, section: str | None, loader: Loader
) -> None:
    text = path.read_text(encoding="utf-8")
    data, _ = _section_lines(path, section)
    bads = list(_out_of_range(data, schema, section or ""))
    # labels.yaml holds names only, no numbers; amplifiers.yaml keeps its numbers under
    # profile names (a mapping this walker does not enter): tests/stream/test_amplifier.py;
    # bibliography.yaml's years sit under entry keys: tests/test_config_sources.py.
    if schema not in (LabelRules, AmplifierCatalogue, Bibliography):
        assert bads, f"{path.name}: no range-checked number found to damage"
    for bad in bads:
        broken = _copy(path, tmp_path, _replace_value(text, bad.line, bad.name, bad.value))
        with pytest.raises(ConfigError) as info:
            loader(broken)
        msg = str(info.value)
        assert msg.startswith(f"{broken}, line {bad.line}: '{bad.key}' is "), (bad, msg)
        assert "accepted:" in msg, (bad, msg)


# --- the commands refuse to start --------------------------------------------------------


def _broken_variants(path: Path, section: str | None) -> dict[str, str]:
    text = path.read_text(encoding="utf-8")
    data, first = _section_lines(path, section)
    schema = _CONFIGS[path.name][0] if path.parent == CONFIG_DIR else Scenario
    variants = {
        "malformed": _insert_after(text, first - 1, "\tbroken: 1"),
        "unknown_key": _insert_after(text, first - 1, f"{_indent_of(text, first)}{next(iter(data))}x: 1"),
    }
    bads = list(_out_of_range(data, schema, section or ""))
    if bads:
        variants["out_of_range"] = _replace_value(text, bads[0].line, bads[0].name, bads[0].value)
    return variants


def _no_discovery(monkeypatch: pytest.MonkeyPatch) -> list[object]:
    """Record any attempt to look for a stream (there must be none)."""
    import bedside.stream.discovery as discovery

    calls: list[object] = []

    def spy(*args: object, **kwargs: object) -> object:
        calls.append(args)
        raise AssertionError("a stream was looked for although the settings are broken")

    monkeypatch.setattr(discovery, "resolve_one", spy)
    return calls


@pytest.mark.parametrize("kind", ["malformed", "unknown_key", "out_of_range"])
def test_check_refuses_to_start_with_a_broken_quality_file(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch, capsys: pytest.CaptureFixture[str], kind: str
) -> None:
    broken = _copy(CONFIG_DIR / "quality.yaml", tmp_path,
                   _broken_variants(CONFIG_DIR / "quality.yaml", "quality")[kind])
    calls = _no_discovery(monkeypatch)
    code = main(["check", "--config", str(broken), "--wait", "0.2"])
    out, err = capsys.readouterr()
    assert code == 2 and out == "" and calls == []
    assert err.startswith(f"error: {broken}"), err
    assert "Traceback" not in err


@pytest.mark.parametrize("kind", ["malformed", "unknown_key", "out_of_range"])
def test_stream_commands_refuse_a_broken_stream_file(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch, capsys: pytest.CaptureFixture[str], kind: str
) -> None:
    """configs/stream.yaml has no command-line override; the shipped path is swapped for
    the damaged copy (the real loader reads the real file)."""
    broken = _copy(CONFIG_DIR / "stream.yaml", tmp_path,
                   _broken_variants(CONFIG_DIR / "stream.yaml", "stream")[kind])
    monkeypatch.setattr(stream_settings_mod.load_stream_settings, "__defaults__", (broken,))
    for argv in (["check", "--stream", f"bedside-test-{uuid.uuid4().hex[:8]}", "--wait", "0.2"],
                 ["streams", "--wait", "1"]):
        code = main(argv)
        out, err = capsys.readouterr()
        assert code == 2 and out == "", (argv, out, err)
        assert err.startswith(f"error: {broken}"), (argv, err)


@pytest.mark.lsl
def test_check_refuses_a_broken_labels_file_before_judging(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch, capsys: pytest.CaptureFixture[str]
) -> None:
    """labels.yaml is read when the stream is opened: a real simulated stream is visible,
    and `bedside check` still stops with the file named, printing no verdicts."""
    from bedside.sim.publish import run_in_background

    broken = _copy(CONFIG_DIR / "labels.yaml", tmp_path,
                   _broken_variants(CONFIG_DIR / "labels.yaml", "labels")["unknown_key"])
    monkeypatch.setattr(labels_mod.load_labels, "__defaults__", (broken,))
    name = f"bedside-test-robust-{uuid.uuid4().hex[:8]}"
    pub = run_in_background("clean", name=name, speed=1.0)
    try:
        code = main(["check", "--stream", name, "--wait", "1", "--seconds", "2"])
    finally:
        pub.stop()
    out, err = capsys.readouterr()
    assert code == 2 and out == "", (out, err)
    assert err.startswith(f"error: {broken}, line"), err
    assert "is not a known setting" in err


@pytest.mark.parametrize("kind", ["malformed", "unknown_key", "out_of_range"])
def test_simulate_refuses_a_broken_scenario_and_publishes_nothing(
    tmp_path: Path, capsys: pytest.CaptureFixture[str], kind: str
) -> None:
    src = DEMO_DIR / "ward_demo.yaml"
    broken = _copy(src, tmp_path, _broken_variants(src, None)[kind])
    code = main(["simulate", str(broken), "--duration", "0.1", "--name", f"bedside-test-{uuid.uuid4().hex[:8]}"])
    out, err = capsys.readouterr()
    assert code == 2 and out == "", out  # no "publishing ..." line: no outlet was made
    assert err.startswith(f"error: {broken}"), err


def test_demo_refuses_a_broken_scenario_before_the_app_opens(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch, capsys: pytest.CaptureFixture[str]
) -> None:
    import bedside.ui.app as app_mod

    opened: list[object] = []
    monkeypatch.setattr(app_mod, "make_app", lambda config: opened.append(config))
    monkeypatch.chdir(tmp_path)
    src = DEMO_DIR / "clean.yaml"
    broken = _copy(src, tmp_path, _broken_variants(src, None)["out_of_range"])
    code = main(["demo", str(broken), "--no-log"])
    out, err = capsys.readouterr()
    assert code == 2 and opened == [] and out == ""
    assert err.startswith(f"error: {broken}, line"), err


@pytest.mark.parametrize("bad", ["/dev/zero", "/dev/null", ".", "with\x00nul.yaml"])
def test_a_config_that_is_not_a_file_is_refused_unread(
    monkeypatch: pytest.MonkeyPatch, capsys: pytest.CaptureFixture[str], bad: str
) -> None:
    """A device (/dev/zero would never end), a folder or a NUL in the name: a clear
    error, never a hang or a ValueError traceback (found by this audit)."""
    calls = _no_discovery(monkeypatch)
    code = main(["check", "--config", bad, "--wait", "0.2"])
    out, err = capsys.readouterr()
    assert code == 2 and out == "" and calls == []
    assert err.startswith("error: ") and ("regular file" in err or "folder" in err or "file name" in err), err


@pytest.mark.parametrize(("bad", "words"), [("/dev/zero", "is not a regular file"), ("/", "is a folder")])
def test_a_scenario_path_that_is_not_a_file_says_what_it_is(
    capsys: pytest.CaptureFixture[str], bad: str, words: str
) -> None:
    """It used to say "not found" for a path that exists (a device, a folder)."""
    code = main(["simulate", bad, "--duration", "0.05"])
    out, err = capsys.readouterr()
    assert code == 2 and out == ""
    assert err.startswith(f"error: {bad} {words}"), err


@pytest.mark.parametrize(("target", "words"), [("/dev/zero", "not a regular file"), ("folder", "is a folder")])
def test_a_replay_path_that_is_not_a_file_says_what_it_is(
    tmp_path: Path, capsys: pytest.CaptureFixture[str], target: str, words: str
) -> None:
    """A recording named .edf that is a device or a folder: said, never read."""
    path = tmp_path / "night.edf"
    if target == "folder":
        path.mkdir()
    else:
        path.symlink_to(target)
    code = main(["replay", str(path)])
    out, err = capsys.readouterr()
    assert code == 2 and out == ""
    assert err.startswith(f"error: {path}: {words}"), err


def test_a_log_that_is_a_device_is_refused_unread(tmp_path) -> None:
    """`bedside report /dev/zero` must not read forever (a device has st_size 0)."""
    import subprocess
    import sys

    proc = subprocess.run(
        [sys.executable, "-m", "bedside", "report", "/dev/zero"],
        capture_output=True, text=True, timeout=30,
    )
    assert proc.returncode == 2
    assert "not a regular file" in proc.stderr and "Traceback" not in proc.stderr


def test_the_apps_own_log_file_is_owner_only(tmp_path) -> None:
    """While the screen is up, log lines go to a file: created 0600 like the setup log."""
    import logging
    import stat as _stat

    from bedside.commands.watch import logs_off_the_screen

    path = tmp_path / "bedside.log"
    with logs_off_the_screen(path):
        logging.getLogger("bedside").warning("stream W3-017 went stale")
    assert _stat.S_IMODE(path.stat().st_mode) == 0o600
    assert "went stale" in path.read_text(encoding="utf-8")
