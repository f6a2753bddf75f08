"""``bedside check`` judges the impedances an amplifier publishes and the department
profile's limits, end to end on real LSL (issue 13, items 3 and 4).

The outlet is the simulator's invented "clean" cap sent by bedside's publisher, with a
per-channel ``impedance`` in its metadata (the XDF EEG meta-data convention,
``desc/channels/channel/impedance`` in kΩ; sccn/xdf wiki "EEG Meta Data"). The limits
are the profiles' (their sources are in configs/profiles/ and are checked in
tests/checks/test_impedance_limits.py); these tests check the command's plumbing.
"""

from __future__ import annotations

import dataclasses
import json
import uuid
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path

import pytest

from bedside.cli import main
from bedside.record.log import load_log
from bedside.sim.generator import SignalGenerator
from bedside.sim.publish import StreamPublisher, scenario_spec
from bedside.sim.scenario import load_scenario

pytestmark = pytest.mark.lsl


@contextmanager
def _cap(impedances: dict[str, float], default: float = 1.5) -> Iterator[str]:
    scenario = load_scenario("clean")
    name = f"imp-{uuid.uuid4().hex[:10]}"
    spec = scenario_spec(scenario, name=name)
    chans = tuple(dataclasses.replace(c, impedance_kohm=impedances.get(c.label, default)) for c in spec.channels)
    gen = SignalGenerator(scenario)
    pub = StreamPublisher(dataclasses.replace(spec, channels=chans), gen.generate).start(wait_for_consumer_s=10)
    try:
        yield name
    finally:
        pub.stop()


def _json(capsys: pytest.CaptureFixture[str]) -> dict:  # type: ignore[type-arg]
    return json.loads(capsys.readouterr().out)


def test_published_impedances_are_judged_by_the_profile(capsys: pytest.CaptureFixture[str], tmp_path: Path) -> None:
    """Cz at 8 kΩ: over the adult 5 kΩ limit (exit 1); within the ICU profile's 10 kΩ but
    unbalanced against 1.5 kΩ elsewhere (still exit 1, "check")."""
    log = tmp_path / "W3-017.yaml"
    with _cap({"Cz": 8.0}) as name:
        code = main(["check", "--stream", name, "--wait", "1", "--seconds", "3", "--format", "json",
                     "--log", str(log), "--subject", "W3-017"])
        adult = _json(capsys)
        code_icu = main(["check", "--stream", name, "--wait", "1", "--seconds", "3", "--format", "json",
                         "--profile", "icu-long-term"])
        icu = _json(capsys)
    assert code == 1 and code_icu == 1
    cz = next(c for c in adult["channels"] if c["name"] == "Cz")
    assert cz["impedance"]["kohm"] == 8.0 and cz["impedance"]["source"] == "amplifier"
    assert cz["impedance"]["level"] == "bad" and "over the 5 kΩ limit" in cz["impedance"]["reason"]
    assert adult["impedance"]["over_limit"] == ["Cz"] and adult["impedance"]["judged"] == 19
    assert adult["profile"]["name"] == "adult" and len(adult["profile"]["sha256"]) == 64
    ecg = next(c for c in adult["channels"] if c["name"] == "ECG")
    assert ecg["impedance"] is None  # scalp electrodes only
    assert icu["impedance"]["over_limit"] == [] and icu["impedance"]["unbalanced"] == ["Cz"]
    assert icu["profile"]["recheck_h"] == 12.0
    saved = load_log(log)
    assert saved.profile is not None and saved.profile.name == "adult"
    assert ("Cz", 8.0, "amplifier") in [(e.electrode, e.kohm, e.source) for e in saved.impedances]


def test_the_gate_holds_an_electrode_over_the_limit_unless_accepted(capsys: pytest.CaptureFixture[str]) -> None:
    with _cap({"Cz": 12.0}) as name:
        held = main(["check", "--stream", name, "--wait", "1", "--seconds", "7", "--until-good", "2",
                     "--format", "json"])
        report = _json(capsys)
        accepted = main(["check", "--stream", name, "--wait", "1", "--seconds", "9", "--until-good", "2",
                         "--format", "json", "--accept", "Cz=thick hair, re-prepared twice; signal clean"])
        ok = _json(capsys)
    assert held == 1 and report["ready"] is None and "Cz" in report["ready_waiting"]
    assert accepted == 0 and ok["ready"]["accepted"][0]["electrode"] == "Cz"


def test_a_clean_cap_within_the_limit_is_good(capsys: pytest.CaptureFixture[str]) -> None:
    with _cap({}, default=2.0) as name:
        code = main(["check", "--stream", name, "--wait", "1", "--seconds", "4"])
    out = capsys.readouterr().out
    assert code == 0, out
    assert "impedances (19 judged, profile adult, limit 5 kΩ); all within the limit and balanced" in out


def test_an_unknown_profile_is_refused_before_looking(capsys: pytest.CaptureFixture[str]) -> None:
    code = main(["check", "--stream", "nowhere", "--wait", "0.2", "--profile", "kids"])
    err = capsys.readouterr().err
    assert code == 2
    assert "'kids' is not a department profile; accepted: adult, icu-long-term, neonatal" in err
