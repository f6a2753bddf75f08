"""Every sub-command's options, fuzzed through ``bedside.cli.main`` in this process (issue 8).

The property, for any list of options: the command gives a result (exit 0 or 1) or a
clear error (exit 2 with ``error: ...`` on stderr) — never a traceback, never another
exception, never a hang. Commands that look for streams look for a unique name that no
one publishes, with a short look; commands that publish stop after a fraction of a
second; the app (``watch``, ``demo``) is replaced by a stand-in that records what it was
asked to open, so what is checked is everything the command does before the screen.
``measure`` and ``report`` are fuzzed in tests/cli and tests/record already.
"""

from __future__ import annotations

import argparse
import contextlib
import dataclasses
import math
import re
import uuid
from collections.abc import Iterator
from pathlib import Path
from typing import Any

import pytest
from hypothesis import HealthCheck, event, given, settings
from hypothesis import strategies as st
from hypothesis.errors import InvalidArgument

from bedside.cli import build_parser, main, sub_names

_FIXTURES = [HealthCheck.function_scoped_fixture, HealthCheck.too_slow]
_LOG_LINE = re.compile(r"^(DEBUG|INFO|WARNING) ")
_UNIQUE = f"bedside-test-fuzz-{uuid.uuid4().hex[:8]}"
EDF_TEST_FILE = "test_generator.edf"  # shipped by pyedflib in pyedflib/data/ (600 s, 11 channels)


def _run(capsys: pytest.CaptureFixture[str], argv: list[str]) -> tuple[int, str, str]:
    parsed = True
    try:
        code = main(argv)
    except SystemExit as exc:  # argparse: --help (0) or a usage error (2)
        parsed = False
        code = exc.code if isinstance(exc.code, int) else (0 if exc.code is None else 2)
    out, err = capsys.readouterr()
    with contextlib.suppress(InvalidArgument):  # outside @given there is nothing to count
        event(f"exit {code}" + ("" if parsed else " (argparse)"))  # --hypothesis-show-statistics
    return code, out, err


def assert_clean(code: int, err: str, argv: list[str], codes: tuple[int, ...] = (0, 1, 2)) -> None:
    """Exit 0/1/2; on 2 the first line is ``error: ...`` (or argparse's usage, then the
    error); never a traceback."""
    assert code in codes, (argv, code, err)
    assert "Traceback" not in err, (argv, err)
    if code == 2:
        lines = [line for line in err.splitlines() if not _LOG_LINE.match(line)]
        assert lines, (argv, err)
        first = lines[0]
        assert first.startswith("error: ") or (
            first.startswith("usage: bedside") and any(line.startswith("error: ") for line in lines)
        ), (argv, err)


class _StandInApp:
    """Stands in for the Textual app: records the config and returns at once."""

    opened: list[Any] = []

    def __init__(self, config: Any) -> None:
        self.config = config
        self.return_code = 0
        _StandInApp.opened.append(config)

    def run(self) -> int:
        return 0


@pytest.fixture
def no_screen(monkeypatch: pytest.MonkeyPatch, tmp_path: Path) -> Iterator[list[Any]]:
    import bedside.ui.app as app_mod

    _StandInApp.opened = []
    monkeypatch.setattr(app_mod, "make_app", _StandInApp)
    monkeypatch.chdir(tmp_path)  # watch/demo keep liblsl's log in ./bedside-logs
    yield _StandInApp.opened


@pytest.fixture
def short_look(monkeypatch: pytest.MonkeyPatch) -> None:
    """Looking for streams lasts at least discovery_min_wait_s (1 s in configs/stream.yaml);
    0.1 s here so that each example is quick. Real LSL discovery still runs."""
    import bedside.stream.discovery as discovery
    from bedside.stream.settings import load_stream_settings

    quick = dataclasses.replace(load_stream_settings(), discovery_min_wait_s=0.1)
    monkeypatch.setattr(discovery, "load_stream_settings", lambda *a, **k: quick)


@pytest.fixture(scope="module")
def files(tmp_path_factory: pytest.TempPathFactory) -> dict[str, str]:
    """Real, damaged and impossible inputs for FILE/--config/scenario options."""
    import pyedflib
    d = tmp_path_factory.mktemp("fuzz-files")
    edf = Path(pyedflib.__file__).parent / "data" / EDF_TEST_FILE
    (d / "truncated.edf").write_bytes(edf.read_bytes()[:3000])
    (d / "header_only.edf").write_bytes(edf.read_bytes()[:256])
    (d / "noise.bdf").write_bytes(bytes(range(256)) * 8)
    (d / "empty.edf").write_bytes(b"")
    (d / "folder.edf").mkdir()
    (d / "broken.yaml").write_text("quality:\n\twindow_s: 4\n", encoding="utf-8")
    (d / "scenario_list.yaml").write_text("- just\n- a list\n", encoding="utf-8")
    return {
        "edf": str(edf),
        **{p.stem: str(p) for p in d.iterdir()},
        "missing": str(d / "missing.edf"),
    }


_NUMBERS = ["0", "-1", "nan", "inf", "-inf", "abc", "", "1e-9", "0.001", "1e309"]


def _flags(*names: str) -> st.SearchStrategy[tuple[str, ...]]:
    return st.sampled_from(names).map(lambda n: (n,))


def _opt(
    name: str, values: list[str] | st.SearchStrategy[str], bad: list[str] | None = None
) -> st.SearchStrategy[tuple[str, ...]]:
    """``(name, value)``; with ``bad`` given, half the values come from it."""
    vals = st.sampled_from(values) if isinstance(values, list) else values
    if bad:
        vals = st.one_of(vals, st.sampled_from(bad))
    return st.tuples(st.just(name), vals)


def _options(
    option: st.SearchStrategy[tuple[str, ...]], max_size: int = 4
) -> st.SearchStrategy[list[tuple[str, ...]]]:
    """A few options, and sometimes one junk word or option among them."""
    return st.tuples(st.lists(option, max_size=max_size), st.lists(_JUNK, max_size=1), st.integers(0, 9)).map(
        lambda t: t[0][: t[2]] + t[1] + t[0][t[2]:]
    )


_JUNK = st.one_of(
    _flags("--bogus", "-x", "--", "-", "--help-me"),
    st.text(alphabet=st.characters(codec="utf-8"), max_size=6).map(lambda t: (t,)),
)
_TEXT = st.one_of(
    # "\udcff": a byte that is not UTF-8, as Python hands it over from the command line.
    st.sampled_from(["", " ", "a b", "é" * 3, "x" * 300, "../../etc", "-dash", "\t", "a\udcff"]),
    st.text(alphabet=st.characters(blacklist_categories=("Cs", "Cc")), max_size=10),
)


def _argv(options: list[tuple[str, ...]]) -> list[str]:
    return [part for opt in options for part in opt]


def _last_value(argv: list[str], option: str) -> str | None:
    """The value argparse keeps for ``option`` (the last one given)."""
    at = [i for i, a in enumerate(argv[:-1]) if a == option]
    return argv[at[-1] + 1] if at else None


# --- --help ------------------------------------------------------------------------------


def test_every_command_has_help_that_names_all_its_options(capsys: pytest.CaptureFixture[str]) -> None:
    parser = build_parser()
    names = sub_names(parser)
    assert {"measure", "simulate", "replay", "streams", "check", "watch", "demo", "report"} <= set(names)
    sub = next(a for a in parser._actions if isinstance(a, argparse._SubParsersAction))
    for name in names:
        code, out, err = _run(capsys, [name, "--help"])
        assert code == 0 and err == "", (name, err)
        assert out.startswith(f"usage: bedside {name}"), name
        for action in sub.choices[name]._actions:
            for opt in action.option_strings:
                assert opt in out, f"bedside {name} --help does not show {opt}"
            if not action.option_strings and action.dest != "help":
                assert (action.metavar or action.dest) in out, (name, action.dest)


# --- top level ---------------------------------------------------------------------------


@settings(max_examples=60, suppress_health_check=_FIXTURES)
@given(argv=st.lists(st.one_of(_JUNK, _flags("--version", "-v", "--verbose", "-h")), min_size=1, max_size=4))
def test_top_level_gives_a_result_or_a_clear_error(
    capsys: pytest.CaptureFixture[str], no_screen: list[Any], argv: list[tuple[str, ...]]
) -> None:
    """Unknown words and options before any command; bare ``-v`` opens the (stand-in) app."""
    flat = _argv(argv)
    code, out, err = _run(capsys, flat)
    assert_clean(code, err, flat, codes=(0, 2))
    if code == 0 and "--version" not in flat and "-h" not in flat:
        assert no_screen, flat  # no command: the app opens


# --- stream-reading commands -------------------------------------------------------------

_WAITS = ["0.2", "0.15", "1e-9"]  # never a long look
_BAD_WAITS = _NUMBERS[:7]


@settings(max_examples=60, suppress_health_check=_FIXTURES)
@given(data=st.data())
def test_check_options_give_a_clear_error_when_nothing_matches(
    capsys: pytest.CaptureFixture[str], short_look: None, files: dict[str, str], data: st.DataObject
) -> None:
    """No stream carries the pinned name, so every run ends in exit 2 — with the reason."""
    from bedside.config import CONFIG_DIR

    configs = [str(CONFIG_DIR / "quality.yaml"), files["broken"], files["missing"], "/dev/zero",
               files["folder"], "", "nul\x00.yaml"]
    option = st.one_of(
        _opt("--wait", _WAITS, _BAD_WAITS), _opt("--seconds", ["1", "3", "8", "1e9"], _NUMBERS),
        _opt("--format", ["table", "json"], ["yaml", "", "JSON"]), _opt("--config", configs),
        _opt("--source-id", _TEXT), _opt("--host", _TEXT),
    )
    options = data.draw(_options(option))
    argv = ["check", "--stream", _UNIQUE, "--wait", "0.2", *_argv(options)]
    code, out, err = _run(capsys, argv)
    assert_clean(code, err, argv, codes=(2,))
    assert out == "" or out.startswith("usage"), (argv, out)


@settings(max_examples=25, suppress_health_check=_FIXTURES)
@given(options=_options(st.one_of(_opt("--wait", _WAITS, _BAD_WAITS),
                                  _opt("--format", ["table", "json"], ["csv", ""]), _flags("--all"))))
def test_streams_options_give_a_list_or_a_clear_error(
    capsys: pytest.CaptureFixture[str], short_look: None, options: list[tuple[str, ...]]
) -> None:
    """Run for real (the parser alone is fuzzed in tests/stream): exit 0 with a listing
    (or "no ... streams"), or a clear error."""
    argv = ["streams", "--wait", "0.2", *_argv(options)]  # the default look is 2 s
    code, out, err = _run(capsys, argv)
    assert_clean(code, err, argv, codes=(0, 2))
    if code == 0 and _last_value(argv, "--format") == "json":
        import json

        assert isinstance(json.loads(out), list)
    elif code == 0:
        assert out.strip() or err.strip(), argv


# --- publishing commands -----------------------------------------------------------------


@settings(max_examples=30, suppress_health_check=_FIXTURES)
@given(data=st.data())
def test_simulate_options_publish_briefly_or_give_a_clear_error(
    capsys: pytest.CaptureFixture[str], files: dict[str, str], data: st.DataObject
) -> None:
    scenarios = ["clean", "mains_60hz", "nope", "", "../x.yaml", files["broken"], files["scenario_list"],
                 files["folder"], "/dev/null", "nul\x00.yaml"]
    option = st.one_of(
        st.one_of(st.sampled_from(scenarios[:2]), st.sampled_from(scenarios[2:])).map(lambda s: (s,)),
        _opt("--speed", ["2", "1000", "1e300"], _NUMBERS),
        _opt("--duration", ["0.05", "0.02", "1e-9"], _NUMBERS[:7]),  # never a long run
        _opt("--name", _TEXT.map(lambda t: f"{_UNIQUE}-{t}"), ["", "\x00"]),
        _opt("--source-id", _TEXT, ["\x00"]),
        _flags("--list"),
    )
    options = data.draw(_options(option))
    argv = ["simulate", "--duration", "0.05", "--name", _UNIQUE, *_argv(options)]
    code, out, err = _run(capsys, argv)
    assert_clean(code, err, argv, codes=(0, 2))
    if code == 0 and "--list" not in argv:
        assert "publishing '" in out and "done: sent" in out, (argv, out)


@settings(max_examples=30, suppress_health_check=_FIXTURES)
@given(data=st.data())
def test_replay_options_publish_briefly_or_give_a_clear_error(
    capsys: pytest.CaptureFixture[str], files: dict[str, str], data: st.DataObject
) -> None:
    """Real, truncated, header-only, empty, random and missing files; --loop is left out
    (it runs until Ctrl-C; tests/sim checks it)."""
    paths = [files[k] for k in ("edf", "truncated", "header_only", "noise", "empty", "folder", "missing")]
    paths += ["/etc/passwd", "x.xdf", "", "nul\x00.edf"]
    option = st.one_of(
        _opt("--speed", ["100000", "1e300"], _NUMBERS),  # valid speeds are all fast
        _opt("--name", _TEXT.map(lambda t: f"{_UNIQUE}-{t}"), [""]),
        _opt("--source-id", _TEXT),
    )
    path = data.draw(st.one_of(st.just(paths[0]), st.sampled_from(paths[1:])))
    options = data.draw(_options(option, max_size=3))
    argv = ["replay", path, "--speed", "100000", "--name", _UNIQUE, *_argv(options)]
    code, out, err = _run(capsys, argv)
    assert_clean(code, err, argv, codes=(0, 2))
    if code == 0:
        assert "replaying " in out and "done: sent 120000 samples" in out, (argv, out)


# --- the app commands --------------------------------------------------------------------

_APP_OPTIONS = st.one_of(
    _opt("--log", ["setup.yaml", "/nonexistent/dir/x.yaml", "", "/dev/null"]),
    _flags("--no-log"),
    _opt("--technologist", ["JMK", ""], ["jmk", "J", "JMKLMNOP", "J/K", "12", "José"]),
    _opt("--subject", ["W3-017", ""], ["../../etc", "John Smith", "W3/017", "a" * 80, "7"]),
    _opt("--view", ["measure", "watch", "log"], ["", "setup"]),
    _opt("--system", ["10-20", "10-10"], ["10-5"]),
    _opt("--names", ["modern", "classic"], ["old"]),
    _opt("--unit", ["cm", "mm", "in"], ["m"]),
    _opt("--update-hz", ["4", "1", "60"], _NUMBERS),
    _opt("--export-dir", [".", "/nonexistent", ""]),
)


def _assert_app_config(config: Any, argv: list[str]) -> None:
    assert math.isfinite(config.update_hz) and config.update_hz > 0, argv
    assert config.system in ("10-20", "10-10") and config.names in ("modern", "classic"), argv
    if "--no-log" in argv:
        assert config.log_path is None, argv


@settings(max_examples=50, suppress_health_check=_FIXTURES)
@given(data=st.data())
def test_watch_options_open_the_app_or_give_a_clear_error(
    capsys: pytest.CaptureFixture[str], no_screen: list[Any], data: st.DataObject
) -> None:
    """Bad initials or subject IDs (names, path traversal) must be refused before the
    screen opens (exit 2), not inside it."""
    options = data.draw(_options(st.one_of(_APP_OPTIONS, _opt("--wait", _WAITS, _BAD_WAITS),
                                           _opt("--source-id", _TEXT), _opt("--host", _TEXT)), max_size=5))
    argv = ["watch", "--stream", _UNIQUE, *_argv(options)]
    code, out, err = _run(capsys, argv)
    assert_clean(code, err, argv, codes=(0, 2))
    if code == 0:
        assert len(no_screen) == 1, argv
        _assert_app_config(no_screen[0], argv)
    else:
        assert no_screen == [], argv
    no_screen.clear()


@settings(max_examples=25, suppress_health_check=_FIXTURES)
@given(data=st.data())
def test_demo_options_open_the_app_or_give_a_clear_error(
    capsys: pytest.CaptureFixture[str], no_screen: list[Any], files: dict[str, str], data: st.DataObject
) -> None:
    """``demo`` also publishes the scenario (for real) while the stand-in app runs."""
    scenario = st.one_of(st.just("clean"), st.sampled_from(["nope", files["broken"], ""])).map(lambda s: (s,))
    options = data.draw(_options(st.one_of(_APP_OPTIONS, scenario, _opt("--speed", ["2", "100"], _NUMBERS))))
    argv = ["demo", "--no-log", *_argv(options)]
    code, out, err = _run(capsys, argv)
    assert_clean(code, err, argv, codes=(0, 2))
    if code == 0:
        assert len(no_screen) == 1 and no_screen[0].stream_name.startswith("bedside-demo-"), argv
        _assert_app_config(no_screen[0], argv)
    else:
        assert no_screen == [], argv
    no_screen.clear()


@settings(max_examples=60, suppress_health_check=_FIXTURES)
@given(options=st.lists(st.one_of(_flags("--quick"), _opt("--format", ["table", "json", "yaml", ""]), _JUNK),
                        max_size=4))
def test_bench_options_parse_or_fail_clearly(
    capsys: pytest.CaptureFixture[str], options: list[tuple[str, ...]]
) -> None:
    """The benchmark itself takes a minute, so only its options are fuzzed (parser)."""
    argv = ["bench", *_argv(options)]
    try:
        args = build_parser().parse_args(argv)
    except SystemExit as exc:
        _, err = capsys.readouterr()
        assert_clean(int(exc.code or 0), err, argv, codes=(0, 2))
        return
    assert args.format in ("table", "json") and isinstance(args.quick, bool)


@pytest.mark.parametrize("cmd", ["simulate", "replay"])
def test_a_crawling_speed_is_refused_not_run_for_hours(capsys: pytest.CaptureFixture[str], cmd: str) -> None:
    """Found by this audit: ``--speed 1e-5 --duration 0.1`` used to be accepted and ran for
    10 000 s. The slowest accepted speed is said."""
    argv = [cmd, "--speed", "0.001", *(["--duration", "0.1"] if cmd == "simulate" else ["x.edf"])]
    code, out, err = _run(capsys, argv)
    assert code == 2 and out == ""
    assert "--speed must be at least 0.01, got '0.001'" in err


@pytest.mark.parametrize("bad", ["a\x00b", "bed\udcff"])
@pytest.mark.parametrize("option", ["--name", "--source-id"])
def test_a_stream_name_liblsl_cannot_take_is_refused_in_plain_words(
    capsys: pytest.CaptureFixture[str], option: str, bad: str
) -> None:
    """Found by this audit: a NUL or a non-UTF-8 byte in --name/--source-id failed inside
    pylsl ("could not create stream description object", a stray deletion error)."""
    argv = ["simulate", "clean", "--duration", "0.05", option, bad]
    code, out, err = _run(capsys, argv)
    assert code == 2 and out == ""
    what = "name" if option == "--name" else "source_id"
    assert err.startswith(f"error: the stream's {what} ") and "use letters, digits" in err, err
    assert "StreamInfo" not in err


def test_demo_refuses_a_speed_too_slow_to_ever_send(tmp_path, monkeypatch) -> None:
    """--speed below the shared minimum is an error, and nothing is created on disk."""
    import pytest as _pytest

    from bedside.cli import main

    monkeypatch.chdir(tmp_path)
    with _pytest.raises(SystemExit) as exc:
        main(["demo", "--speed", "1e-300", "--no-log"])
    assert exc.value.code == 2
    assert main(["demo", "no-such-scenario", "--no-log"]) == 2
    assert not (tmp_path / "bedside-logs").exists()
