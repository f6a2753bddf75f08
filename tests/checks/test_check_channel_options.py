"""`bedside check` channel options (issue 11): --channels, bad maps, no scalp channel.

Real LSL loopback outlets (the demo Publisher, and tests/stream/outlets.py's
make_info); types are BIDS channels.tsv types.
"""

from __future__ import annotations

import json
import sys
import uuid
from pathlib import Path

import pylsl
import pytest

sys.path.insert(0, str(Path(__file__).parent.parent / "stream"))
from outlets import make_info  # noqa: E402

from bedside.cli import main  # noqa: E402
from bedside.sim.publish import Publisher  # noqa: E402
from bedside.stream.channel_map import saved_choices  # noqa: E402


def _name() -> str:
    return f"chopt-{uuid.uuid4().hex[:10]}"


def test_channel_map_is_applied_and_saved(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    name = _name()
    cmap = tmp_path / "map.yaml"
    cmap.write_text("channels:\n  Fp1: {type: EOG, name: LOC}\n", encoding="utf-8")
    with Publisher("ward_demo", name=name, source_id=f"sid-{name}", duration_s=30.0).start():
        main(["check", "--stream", name, "--seconds", "3", "--wait", "1.5", "--format", "json",
              "--channels", str(cmap)])
    out = json.loads(capsys.readouterr().out)
    ch = {c["label"]: c for c in out["channels"]}
    assert ch["Fp1"]["name"] == "LOC" and ch["Fp1"]["type"] == "EOG"
    assert out["channel_setup"]["summary"].startswith("27 scalp")
    saved = saved_choices(f"sid-{name}")
    assert saved is not None and saved["Fp1"].type == "EOG"


def test_channel_map_naming_a_missing_channel_is_an_error(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    name = _name()
    cmap = tmp_path / "map.yaml"
    cmap.write_text("channels:\n  Nowhere: {type: EOG}\n", encoding="utf-8")
    with Publisher("ward_demo", name=name, source_id=f"sid-{name}", duration_s=30.0).start():
        code = main(["check", "--stream", name, "--seconds", "3", "--wait", "1.5", "--channels", str(cmap)])
    err = capsys.readouterr().err
    assert code == 2
    assert "error: " in err and "names channel 'Nowhere', which the stream does not have" in err


def test_stream_with_no_scalp_channel_is_refused(capsys: pytest.CaptureFixture[str]) -> None:
    name = _name()
    info = make_info(name, n_channels=3, labels=["ECG", "TRIG", "ACC_X"], units=["uV", "", "g"], types=None)
    outlet = pylsl.StreamOutlet(info)
    try:
        code = main(["check", "--stream", name, "--seconds", "3", "--wait", "1.5"])
    finally:
        del outlet
    err = capsys.readouterr().err
    assert code == 2 and "error: " in err and "no scalp EEG channel:" in err


def test_unknown_amplifier_is_refused(capsys: pytest.CaptureFixture[str]) -> None:
    name = _name()
    with Publisher("ward_demo", name=name, source_id=f"sid-{name}", duration_s=30.0).start():
        code = main(["check", "--stream", name, "--seconds", "3", "--wait", "1.5", "--amplifier", "brandx"])
    err = capsys.readouterr().err
    assert code == 2 and "accepted: dc-active, dc-passive, ac-passive" in err
