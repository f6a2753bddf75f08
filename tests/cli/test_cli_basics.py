"""The command line: help, version, bad sub-commands — never a traceback."""

from __future__ import annotations

import subprocess
import sys

import pytest


def _run(*args: str) -> subprocess.CompletedProcess[str]:
    return subprocess.run(
        [sys.executable, "-m", "bedside", *args], capture_output=True, text=True, timeout=60
    )


def test_help_and_version() -> None:
    proc = _run("--help")
    assert proc.returncode == 0
    assert "does not diagnose" in proc.stdout
    proc = _run("--version")
    assert proc.returncode == 0 and proc.stdout.startswith("bedside ")


def test_unknown_command_is_a_clear_error() -> None:
    proc = _run("frobnicate")
    assert proc.returncode == 2
    assert "error:" in proc.stderr and "Traceback" not in proc.stderr


def test_messages_that_echo_an_undecodable_argument_print_under_a_strict_stream(
    monkeypatch: pytest.MonkeyPatch,
) -> None:
    """A byte that is not UTF-8 reaches Python as a lone surrogate (PEP 383). argparse's
    usage and error messages, and bedside's own, must print it escaped under a stream
    that encodes strictly (even ASCII), never raise UnicodeEncodeError."""
    import io

    from bedside.cli import main

    for encoding in ("utf-8", "ascii"):
        raw = io.BytesIO()
        strict = io.TextIOWrapper(raw, encoding=encoding, errors="strict")
        monkeypatch.setattr("sys.stderr", strict)
        # argparse: an unknown option that holds the byte.
        with pytest.raises(SystemExit) as exc:
            main(["measure", "--bogus-\udcff"])
        assert exc.value.code == 2
        # bedside's own message: a value that echoes the byte.
        code = main(["measure", "--nasion-inion", "3\udcff6", "--preauricular", "35",
                     "--circumference", "56"])
        assert code == 2 or code is None
        strict.flush()
        text = raw.getvalue().decode(encoding)
        assert "error: " in text and "\\udcff" in text, text
