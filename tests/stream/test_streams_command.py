"""``bedside streams`` as a user runs it (a subprocess), with real outlets."""

from __future__ import annotations

import json
import os
import subprocess
import sys
import time
from pathlib import Path

import pytest
from outlets import unique_name

pytestmark = pytest.mark.lsl
ROOT = Path(__file__).resolve().parents[2]


def run(*args: str, cfg: Path | None = None) -> subprocess.CompletedProcess[str]:
    env = dict(os.environ)
    env["LSLAPICFG"] = str(cfg or ROOT / "tests" / "lsl_api.cfg")
    return subprocess.run(
        [sys.executable, "-m", "bedside", "streams", *args],
        capture_output=True, text=True, timeout=60, env=env, cwd=ROOT,
    )


def test_json_lists_a_visible_stream(feeders) -> None:  # type: ignore[no-untyped-def]
    name = unique_name()
    feeders(name, n_channels=8, rate_hz=500, source_id=f"sid-{name}")
    time.sleep(0.2)
    proc = run("--format", "json", "--wait", "1")
    assert proc.returncode == 0, proc.stderr
    rows = json.loads(proc.stdout)
    mine = [r for r in rows if r["name"] == name]
    assert mine == [{
        "name": name, "type": "EEG", "source_id": f"sid-{name}",
        "hostname": mine[0]["hostname"], "n_channels": 8, "nominal_rate_hz": 500.0,
    }]
    assert mine[0]["hostname"]


def test_table_lists_a_visible_stream(feeders) -> None:  # type: ignore[no-untyped-def]
    name = unique_name()
    feeders(name, n_channels=3)
    time.sleep(0.2)
    proc = run("--wait", "1")
    assert proc.returncode == 0
    assert proc.stdout.splitlines()[0].split() == ["name", "type", "source_id", "host", "channels", "rate", "(Hz)"]
    assert any(line.startswith(name) and " 3 " in line for line in proc.stdout.splitlines())


def test_none_visible_exits_0_and_says_so(tmp_path: Path) -> None:
    """A private LSL session (liblsl [lab] SessionID) sees no stream at all."""
    cfg = tmp_path / "lsl_api.cfg"
    cfg.write_text(
        "[multicast]\nResolveScope = machine\n[lab]\nSessionID = " + unique_name() + "\n[log]\nlevel = -3\n",
        encoding="utf-8",
    )
    proc = run("--format", "json", "--wait", "0.5", cfg=cfg)
    assert proc.returncode == 0
    assert json.loads(proc.stdout) == []
    assert "no EEG streams visible" in proc.stderr


@pytest.mark.parametrize(
    ("args", "message"),
    [(["--wait", "-2"], "--wait must be greater than zero"), (["--format", "xml"], "invalid choice: 'xml'"),
     (["--wait", "soon"], "--wait must be a number")],
)
def test_bad_options_are_clear_errors(args: list[str], message: str) -> None:
    proc = run(*args)
    assert proc.returncode == 2
    assert message in proc.stderr and "Traceback" not in proc.stderr


def test_all_lists_other_types_and_the_hint_points_to_it(tmp_path: Path) -> None:
    """In a private LSL session only our marker stream exists: EEG listing is empty and
    says other types are there; --all shows it."""
    cfg = tmp_path / "lsl_api.cfg"
    session = unique_name()
    cfg.write_text(
        f"[multicast]\nResolveScope = machine\n[lab]\nSessionID = {session}\n[log]\nlevel = -3\n",
        encoding="utf-8",
    )
    name = unique_name()
    outlet_code = (
        "import pylsl, time\n"
        f"o = pylsl.StreamOutlet(pylsl.StreamInfo('{name}', 'Markers', 1, 0, 'string', 'm-{name}'))\n"
        "print('up', flush=True)\n"
        "time.sleep(20)\n"
    )
    env = dict(os.environ, LSLAPICFG=str(cfg))
    outlet = subprocess.Popen([sys.executable, "-c", outlet_code], stdout=subprocess.PIPE, text=True, env=env)
    try:
        assert outlet.stdout is not None and outlet.stdout.readline().strip() == "up"
        proc = run("--format", "json", "--wait", "1.5", cfg=cfg)
        assert proc.returncode == 0 and json.loads(proc.stdout) == []
        assert "1 stream(s) of other types are visible (--all lists them)" in proc.stderr
        proc = run("--format", "json", "--wait", "1.5", "--all", cfg=cfg)
        rows = json.loads(proc.stdout)
        assert [(r["name"], r["type"], r["nominal_rate_hz"]) for r in rows] == [(name, "Markers", 0.0)]
    finally:
        outlet.kill()
        outlet.communicate()


from hypothesis import given  # noqa: E402
from hypothesis import strategies as st  # noqa: E402


@given(st.lists(st.one_of(st.sampled_from(["--format", "--wait", "--all", "json", "table", "-1", "0", "nan", "inf", "1e9", "2"]), st.text(max_size=8)), max_size=5))
def test_fuzzed_options_parse_or_fail_cleanly(argv: list[str]) -> None:
    """Fuzzed (issue 8): any option list either parses into a valid request or exits 2
    with a message — the parser never raises anything else."""
    import contextlib
    import io
    import math

    from bedside.cli import build_parser

    err = io.StringIO()
    try:
        with contextlib.redirect_stderr(err), contextlib.redirect_stdout(io.StringIO()):
            args = build_parser().parse_args(["streams", *argv])
    except SystemExit as exc:
        assert exc.code in (0, 2)  # 0: --help-like, 2: a clear usage error
        if exc.code == 2:
            assert "error:" in err.getvalue()
        return
    assert args.format in ("table", "json")
    assert math.isfinite(args.wait) and args.wait > 0
