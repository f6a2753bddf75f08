"""``bedside check`` end to end on real LSL loopback streams from the simulator.

Not an outside reference: the streams come from our simulator, and the expected faults
are its own scripted fault list (ward_demo bridges O1–Oz from the start). These tests
check the command's plumbing — the JSON shape and the exit codes the checks issue asks
for — not whether a check is right; the checks are judged against outside sources
elsewhere (for example MNE-Python's bridged-electrode measure in test_bridging.py).
"""

from __future__ import annotations

import json
import uuid

import numpy as np
import pytest

from bedside.checks.types import Level
from bedside.cli import main
from bedside.commands.check import as_json, as_table, exit_code
from bedside.sim.publish import Publisher
from bedside.stream.types import StreamIdentity

from .helpers import feed, make_engine

pytestmark = pytest.mark.lsl


def _name() -> str:
    return f"chk-{uuid.uuid4().hex[:10]}"


def test_json_report_on_the_demo_stream(capsys: pytest.CaptureFixture[str]) -> None:
    name = _name()
    with Publisher("ward_demo", name=name, source_id=f"sid-{name}", duration_s=30.0).start():
        # 4 s: bridging votes over 2-s epochs of the analysis copy, one a second, and
        # needs two of them (one ED alone is no distribution for its cutoff).
        code = main(["check", "--stream", name, "--seconds", "4", "--wait", "1.5", "--format", "json"])
    out = json.loads(capsys.readouterr().out)
    assert code == 1  # the O1–Oz bridge is there from the start
    assert set(out) >= {"channels", "findings", "stream"}
    assert set(out["stream"]) == {"identity", "health"}
    assert out["stream"]["identity"]["name"] == name
    assert out["stream"]["identity"]["source_id"] == f"sid-{name}"
    ch = {c["name"]: c for c in out["channels"]}
    assert set(ch["O1"]) == {"name", "label", "type", "level", "reasons", "metrics",
                             "worst_level", "worst_reason", "not_good_s", "events", "impedance"}
    assert ch["O1"]["impedance"] is None  # the simulator publishes no impedances
    assert out["profile"]["name"] == "adult" and out["impedance"]["judged"] == 0
    assert ch["O1"]["type"] == "EEG" and ch["O1"]["label"] == "O1"
    assert out["channel_setup"]["summary"].startswith("28 scalp")
    assert ch["O1"]["level"] == "bad" and "Oz" in ch["O1"]["reasons"][0]
    assert ch["Cz"]["level"] == "good"
    assert "rms_uv" in ch["Cz"]["metrics"]
    bridges = [f for f in out["findings"] if f["kind"] == "bridge"]
    assert [sorted(f["electrodes"]) for f in bridges] == [["O1", "Oz"]]
    assert set(bridges[0]) == {"kind", "electrodes", "level", "reason"}


def test_several_streams_match_is_an_error_listing_them(capsys: pytest.CaptureFixture[str]) -> None:
    name = _name()
    with Publisher("clean", name=name, source_id=f"a-{name}", duration_s=20.0).start(), \
         Publisher("clean", name=name, source_id=f"b-{name}", duration_s=20.0).start():
        code = main(["check", "--stream", name, "--seconds", "3", "--wait", "1.5"])
    err = capsys.readouterr().err
    assert code == 2
    assert "error: 2 EEG streams match" in err
    assert f"a-{name}" in err and f"b-{name}" in err and "--source-id" in err


def test_no_stream_is_an_error(capsys: pytest.CaptureFixture[str]) -> None:
    code = main(["check", "--stream", _name(), "--seconds", "3", "--wait", "0.5"])
    assert code == 2
    assert "error: no EEG stream" in capsys.readouterr().err


@pytest.mark.parametrize("argv, message", [
    (["check", "--seconds", "0"], "--seconds must be greater than zero"),
    (["check", "--seconds", "abc"], "--seconds must be a number"),
    (["check", "--format", "xml"], "invalid choice"),
])
def test_bad_options_are_clear(argv: list[str], message: str, capsys: pytest.CaptureFixture[str]) -> None:
    with pytest.raises(SystemExit) as exc:
        main(argv)
    assert exc.value.code == 2
    assert message in capsys.readouterr().err


def test_too_few_seconds_and_bad_config(tmp_path, capsys: pytest.CaptureFixture[str]) -> None:  # type: ignore[no-untyped-def]
    assert main(["check", "--seconds", "1"]) == 2
    assert "--seconds must be at least 2" in capsys.readouterr().err
    cfg = tmp_path / "q.yaml"
    cfg.write_text("quality:\n  windw_s: 4\n", encoding="utf-8")
    assert main(["check", "--config", str(cfg)]) == 2
    assert "did you mean 'window_s'" in capsys.readouterr().err


def test_exit_codes_and_table_without_lsl() -> None:
    """0 when all good; 1 for any check/bad/no-data or a lost stream (the issue's rule)."""
    from .helpers import eeg_like

    ident = StreamIdentity("s", "EEG", "sid", "host", 19, 256.0)
    x = eeg_like(8 * 256, 19, 256.0)
    frame = feed(make_engine(), x)[-1]
    assert all(c.level is Level.GOOD for c in frame.channels)
    good = as_json(frame, ident, 8.0, lost=False)
    assert exit_code(good) == 0
    assert exit_code({**good, "stream_lost": True}) == 1
    x[:, 4] = 0.0
    flat = as_json(feed(make_engine(), x)[-1], ident, 8.0, lost=False)
    assert exit_code(flat) == 1
    table = as_table(flat)
    assert "✖ bad" in table and "flat" in table and "● good" in table
    json.dumps(flat, allow_nan=False)  # NaN metrics become null
    assert np.isfinite([v for c in flat["channels"] for v in c["metrics"].values() if v is not None]).all()
