"""Every command example in README.md runs as written (a person copies them).

The examples are read from the README itself: each line of a ```sh block and each
inline `bedside …` span. A placeholder is filled the way a person would (NAME → a
simulated stream published for the test, LOG → a log that `check --log` wrote, a file
name → a vendored recording copied under that name); nothing else is changed.
Commands that run until stopped (simulate, replay --loop, the app) are stopped as a
person stops them (Ctrl-C, or q in the app) and must exit cleanly (0).
"""

from __future__ import annotations

import os
import re
import shlex
import shutil
import signal
import subprocess
import sys
import time
import uuid
from pathlib import Path

import pytest

from bedside.sim.publish import Publisher

pytestmark = [pytest.mark.lsl, pytest.mark.slow]

ROOT = Path(__file__).resolve().parents[2]
README = ROOT / "README.md"
ENV = {**os.environ, "LSLAPICFG": str(ROOT / "tests" / "lsl_api.cfg")}
BEDSIDE = [sys.executable, "-m", "bedside"]


def readme_examples() -> list[str]:
    """The README's command examples, in order, without their comments, no duplicates."""
    text = README.read_text(encoding="utf-8")
    found: list[str] = []
    for block in re.findall(r"```sh\n(.*?)```", text, flags=re.S):
        for line in block.splitlines():
            cmd = line.split("  #")[0].split(" #")[0].strip()
            if cmd:
                found.append(cmd)
    # Inline spans that are a whole command: `bedside` or `bedside <word> …` (not a path).
    found += re.findall(r"`(bedside(?: [^`]*)?)`", text)
    return list(dict.fromkeys(found))


#: Run by the Makefile, not by bedside: `make demo` is `bedside demo` (run below) after the
#: install; `make test` is this suite itself. The test checks the Makefile says so.
MAKE_TARGETS = {"make demo": "bedside demo", "make test": "pytest"}

#: Until stopped by the person (Ctrl-C). Each must be running after SETTLE_S and then exit 0.
UNTIL_STOPPED = ("bedside simulate clean", "bedside simulate tap_swap", "bedside replay")
SETTLE_S = 3.0

#: The app: opened in a real terminal (tmux), then left with q.
APP = ("bedside", "bedside watch", "bedside watch --bell", "bedside watch --profile neonatal", "bedside demo",
       "bedside ward")

#: Spans that name a command in running text rather than show a use of it (the fault
#: table's Ctrl-C row): each must at least be a command that answers --help.
MENTIONS = ("bedside check",)


def test_the_readme_has_the_examples_this_test_knows() -> None:
    examples = readme_examples()
    assert "bedside measure --nasion-inion 36 --preauricular 35 --circumference 56" in examples
    assert "bedside check --stream NAME --seconds 8" in examples
    assert len(examples) >= 14, examples


def test_make_targets_are_what_the_readme_says() -> None:
    makefile = (ROOT / "Makefile").read_text(encoding="utf-8")
    for target, runs in MAKE_TARGETS.items():
        name = target.split()[1]
        body = makefile.split(f"\n{name}:", 1)[1].split("\n\n", 1)[0]
        assert runs in body, (target, body)


@pytest.fixture(scope="module")
def stream() -> object:
    """A short simulated ward stream under a name of its own (the README's NAME)."""
    name = f"readme-{uuid.uuid4().hex[:8]}"
    pub = Publisher("ward_demo", name=name, source_id=f"sid-{name}", duration_s=600.0, speed=1.0)
    with pub.start():
        yield name


@pytest.fixture
def tap_stream() -> object:
    """The tap test's NAME: the scripted tap_walk scenario, held until the command reads it
    (as `bedside simulate tap_walk --wait-for-reader 60` does), at 4× real time."""
    name = f"readme-tap-{uuid.uuid4().hex[:8]}"
    pub = Publisher("tap_walk", name=name, source_id=f"sid-{name}", duration_s=40.0, speed=4.0)
    with pub.start(wait_for_consumer_s=60.0):
        yield name


def _run(cmd: str, cwd: Path, timeout_s: float = 120.0) -> subprocess.CompletedProcess[str]:
    args = shlex.split(cmd)
    assert args[0] == "bedside"
    return subprocess.run([*BEDSIDE, *args[1:]], cwd=cwd, env=ENV, capture_output=True,
                          text=True, timeout=timeout_s)


def _fill(cmd: str, stream: str, workdir: Path) -> str:
    if "NAME" in cmd:
        cmd = cmd.replace("NAME", stream)
    if " LOG" in cmd:
        log = workdir / "W3-017.yaml"
        if not log.exists():
            made = _run(f"bedside check --stream {stream} --seconds 3 --log {log} --subject W3-017 "
                        "--technologist JMK", workdir)
            assert made.returncode in (0, 1), made.stderr
        cmd = cmd.replace(" LOG", f" {log}")
    for word in shlex.split(cmd):
        if word.endswith(".edf") and not (workdir / word).exists():
            # A person's own recording: a vendored one under that name (tests/data/README.md).
            shutil.copy(ROOT / "tests" / "data" / "S001R02.edf", workdir / word)
    return cmd


def _until_stopped(cmd: str, workdir: Path) -> None:
    import select

    args = shlex.split(cmd)
    proc = subprocess.Popen([*BEDSIDE, *args[1:]], cwd=workdir, env=ENV, stdout=subprocess.PIPE,
                            stderr=subprocess.PIPE, text=True)
    try:
        # Running once it says what it publishes (its first line), however slow this
        # machine is to start it; a Ctrl-C during start-up is "interrupted" (130) instead.
        assert proc.stdout is not None
        ready, _, _ = select.select([proc.stdout], [], [], 90.0)
        assert ready and proc.stdout.readline().strip(), f"{cmd} never started: {proc.poll()}"
        time.sleep(SETTLE_S)
        assert proc.poll() is None, f"{cmd} stopped by itself: {proc.communicate()[1]}"
        proc.send_signal(signal.SIGINT)
        _, err = proc.communicate(timeout=20)
    finally:
        if proc.poll() is None:
            proc.kill()
    assert proc.returncode == 0, (cmd, err)
    assert "Traceback" not in err


def _in_the_app(cmd: str, workdir: Path, ready: str = "") -> str:
    """Open the app in tmux, wait until a view shows (and ``ready``), leave with q."""
    if shutil.which("tmux") is None:
        pytest.skip("tmux is not installed (apt-get install tmux)")
    sock = f"readme-{uuid.uuid4().hex[:8]}"
    base = ["tmux", "-L", sock]
    done = workdir / f"exit-{sock}.txt"
    args = shlex.split(cmd)
    line = (f"cd {shlex.quote(str(workdir))} && unset COLUMNS LINES && "
            f"LSLAPICFG={shlex.quote(ENV['LSLAPICFG'])} "
            f"{shlex.join([*BEDSIDE, *args[1:]])}; echo EXIT=$? > {shlex.quote(str(done))}")
    subprocess.run([*base, "new-session", "-d", "-s", "s", "-x", "100", "-y", "40", line], check=True)
    shown = ""
    try:
        end = time.monotonic() + 30
        while time.monotonic() < end:
            shown = subprocess.run([*base, "capture-pane", "-p", "-t", "s"], capture_output=True,
                                   text=True).stdout
            if ("Watch" in shown or "Measure" in shown) and ready in shown:
                break
            time.sleep(0.3)
        assert "Watch" in shown or "Measure" in shown, shown
        time.sleep(1.0)
        # A picker (several streams visible on this machine) takes Escape first.
        subprocess.run([*base, "send-keys", "-t", "s", "Escape"], check=True)
        time.sleep(0.3)
        subprocess.run([*base, "send-keys", "-t", "s", "q"], check=True)
        end = time.monotonic() + 20
        while not done.exists() and time.monotonic() < end:
            time.sleep(0.2)
        assert done.exists() and done.read_text().strip() == "EXIT=0", shown
    finally:
        subprocess.run([*base, "kill-server"], capture_output=True)
    return shown


def _kind(cmd: str) -> str:
    if cmd in MAKE_TARGETS:
        return "make"
    if cmd in APP:
        return "app"
    if cmd in MENTIONS:
        return "mention"
    if cmd.startswith(UNTIL_STOPPED):
        return "until-stopped"
    return "once"


@pytest.mark.parametrize("example", [e for e in readme_examples() if e.startswith("bedside taptest")])
def test_readme_tap_test_runs(example: str, tap_stream: str, tmp_path: Path) -> None:
    """The tap test against the scripted walk: every electrode confirmed, exit 0."""
    import json

    done = _run(_fill(example, tap_stream, tmp_path), tmp_path)
    assert done.returncode == 0, done.stderr
    assert "Traceback" not in done.stderr
    if "--format json" in example:
        report = json.loads(done.stdout)
        assert report["passed"] and all(r["outcome"] == "confirmed" for r in report["results"])


@pytest.mark.parametrize("example", [e for e in readme_examples() if not e.startswith("bedside taptest")])
def test_readme_example_runs(example: str, stream: str, tmp_path: Path) -> None:
    kind = _kind(example)
    if kind == "make":
        return  # the Makefile's targets: test_make_targets_are_what_the_readme_says
    cmd = _fill(example, stream, tmp_path)
    if kind == "mention":
        cmd += " --help"
    if kind == "until-stopped":
        _until_stopped(cmd, tmp_path)
        return
    if kind == "app":
        # The demo's own stream: wait until it is live, so the log has something in it.
        _in_the_app(cmd, tmp_path, ready="◉ live" if example == "bedside demo" else "")
        if example == "bedside demo":
            # The README says where the demo's log goes.
            assert list((tmp_path / "bedside-logs").glob("DEMO-001-*.yaml")), list(tmp_path.rglob("*"))
        return
    if example == "bedside bench":
        cmd += " --quick"  # the full run takes minutes; --quick is the same figures, fewer rounds
    done = _run(cmd, tmp_path, timeout_s=300)
    assert "Traceback" not in done.stderr, done.stderr
    if example.startswith("bedside check --stream"):
        # The ward demo has a bridge from the start: attention needed (exit 1), each channel named.
        assert done.returncode == 1, done.stderr
        assert "O1" in done.stdout and "Oz" in done.stdout
    elif example.startswith("bedside ward"):
        # The ward demo stream is one bed, with a bridge from the start: attention needed.
        assert done.returncode == 1, done.stderr
        assert stream in done.stdout
    elif example == "bedside streams":
        assert done.returncode == 0, done.stderr
        assert stream in done.stdout
    elif example.startswith("bedside measure --nasion"):
        assert done.returncode == 0, done.stderr
        assert "18.0" in done.stdout  # Cz at 50 % of 36 cm (Jasper 1958)
        if "--inferior-circumference 57" in example:
            # F9 at 15 % of the taped 57 cm from Nz (hand arithmetic: 8.55 -> 8.6, halves up)
            assert "your tape: 57.0 cm" in done.stdout
            assert any(ln.split()[:3] == ["F9", "Nz", "8.6"] for ln in done.stdout.splitlines())
    else:
        assert done.returncode == 0, (example, done.stderr)
        assert done.stdout.strip(), example
