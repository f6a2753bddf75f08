"""A stream that carries everything an amplifier should not send, read by ``bedside check``
end to end on real LSL (issue 8: NaN, ±Inf, all zero, numeric limits, duplicate and
empty labels, unknown units).

The outlet is bedside's own publisher (bedside.sim.publish.StreamPublisher) sending the
invented "clean" scenario with some channels damaged on the way out:

* F7: NaN every 50th sample; F8: +Inf every 50th sample (IEEE 754 special values),
* T7: all zero (a dead channel),
* T8: constant at the float32 maximum, 3.4028235e38 (numpy.finfo(np.float32).max),
* P4 labelled "Cz" again (a duplicate), O2 with an empty label, P8 in "furlongs" (no unit
  bedside knows).

Expected: no crash and no traceback; exit 1 (something needs attention); each damaged
channel is ``bad`` with a reason that names what is wrong; the duplicate and the empty
label are kept under names of their own; the unit is read as it is and said; the
undamaged channels are still judged (none of them ``bad``) — one bad lead never
spoils the others.

Also: streams bedside cannot use (1 Hz, 100 kHz, type Markers) are refused at once with
the reason and what is accepted (exit 2); a one-channel stream is judged, with a note.
"""

from __future__ import annotations

import dataclasses
import json
import uuid
from typing import Any

import numpy as np
import pytest

from bedside.cli import main
from bedside.sim.generator import SignalGenerator
from bedside.sim.publish import OutletSpec, StreamPublisher, scenario_spec
from bedside.sim.scenario import load_scenario

pytestmark = pytest.mark.lsl
F32_MAX = float(np.finfo(np.float32).max)


def test_check_on_a_hostile_stream_names_each_damaged_channel(capsys: pytest.CaptureFixture[str]) -> None:
    scenario = load_scenario("clean")
    labels = list(scenario.channels)
    idx = {label: i for i, label in enumerate(labels)}
    name = f"bedside-test-robust-{uuid.uuid4().hex[:8]}"
    spec = scenario_spec(scenario, name=name)
    chans = list(spec.channels)
    chans[idx["P4"]] = dataclasses.replace(chans[idx["P4"]], label="Cz")
    chans[idx["O2"]] = dataclasses.replace(chans[idx["O2"]], label="")
    chans[idx["P8"]] = dataclasses.replace(chans[idx["P8"]], unit="furlongs")
    spec = dataclasses.replace(spec, channels=tuple(chans))
    gen = SignalGenerator(scenario)

    def read(start: int, n: int) -> np.ndarray:
        x = gen.generate(start, n).astype(np.float64)  # (n_samples, n_channels) µV
        every = (start + np.arange(n)) % 50 == 0
        x[every, idx["F7"]] = np.nan
        x[every, idx["F8"]] = np.inf
        x[:, idx["T7"]] = 0.0
        x[:, idx["T8"]] = F32_MAX
        return x

    with StreamPublisher(spec, read):
        code = main(["check", "--stream", name, "--wait", "1", "--seconds", "5", "--format", "json"])
    out, err = capsys.readouterr()
    assert "Traceback" not in err
    assert code == 1, err
    constants: list[str] = []  # NaN/Infinity tokens are not JSON (RFC 8259 section 6)
    report = json.loads(out, parse_constant=constants.append)
    assert constants == [], constants
    chans_out = {c["name"]: c for c in report["channels"]}

    def bad_because(channel: str, words: str) -> None:
        c = chans_out[channel]
        assert c["level"] == "bad", (channel, c)
        assert any(words in r for r in c["reasons"]), (channel, c["reasons"])

    bad_because("F7", "not numbers (NaN/Inf)")
    bad_because("F8", "not numbers (NaN/Inf)")
    bad_because("T7", "flat")
    bad_because("T8", "beyond any EEG value")

    # The duplicate keeps a name of its own; the empty label gets one; nothing dropped.
    assert "Cz" in chans_out and "Cz#2" in chans_out
    assert len(report["channels"]) == len(labels)
    notes = " | ".join(report["stream"]["health"]["notes"])
    assert "repeats the name Cz" in notes, notes
    assert "'furlongs' is not understood" in notes, notes

    damaged = {"F7", "F8", "T7", "T8"}
    others = [c for n, c in chans_out.items() if n not in damaged]
    assert all(c["level"] != "bad" for c in others), [(c["name"], c["level"], c["reasons"]) for c in others]
    assert all(c["level"] in ("good", "check") for c in others)


def _spec_with(name: str, **changes: Any) -> OutletSpec:
    return dataclasses.replace(scenario_spec(load_scenario("clean"), name=name), **changes)


@pytest.mark.parametrize(
    ("changes", "words"),
    [
        ({"rate_hz": 1.0}, "accepted: 128 to 20000 Hz"),  # configs/stream.yaml min/max_rate_hz
        ({"rate_hz": 100_000.0}, "accepted: 128 to 20000 Hz"),
        ({"stream_type": "Markers"}, "of type 'Markers', not EEG"),
    ],
    ids=["1 Hz", "100 kHz", "wrong type"],
)
def test_check_refuses_an_unusable_stream_and_says_why(
    capsys: pytest.CaptureFixture[str], changes: dict[str, Any], words: str
) -> None:
    name = f"bedside-test-robust-{uuid.uuid4().hex[:8]}"
    spec = _spec_with(name, **changes)
    # A few samples only: the stream must be refused from its metadata, before reading.
    with StreamPublisher(spec, lambda start, k: np.zeros((k, spec.n_channels)), total_samples=10):
        code = main(["check", "--stream", name, "--wait", "1", "--seconds", "3"])
    out, err = capsys.readouterr()
    assert code == 2 and out == "", (out, err)
    assert err.startswith("error: ") and words in err, err


def test_check_on_a_one_channel_stream_judges_it_and_says_so(capsys: pytest.CaptureFixture[str]) -> None:
    scenario = load_scenario("clean")
    name = f"bedside-test-robust-{uuid.uuid4().hex[:8]}"
    full = scenario_spec(scenario, name=name)
    cz = scenario.channels.index("Cz")
    spec = dataclasses.replace(full, channels=(full.channels[cz],))
    gen = SignalGenerator(scenario)
    with StreamPublisher(spec, lambda start, k: gen.generate(start, k)[:, cz : cz + 1]):
        code = main(["check", "--stream", name, "--wait", "1", "--seconds", "4", "--format", "json"])
    out, err = capsys.readouterr()
    assert code in (0, 1) and "Traceback" not in err, err
    report = json.loads(out)
    assert [c["name"] for c in report["channels"]] == ["Cz"]
    assert report["channels"][0]["level"] in ("good", "check", "bad")  # judged, not "no data"
    assert any("one channel only" in n for n in report["stream"]["health"]["notes"])
