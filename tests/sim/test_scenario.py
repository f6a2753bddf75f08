"""Scenario files: strict loading, the plain fault list, the timeline."""

from __future__ import annotations

from pathlib import Path

import pytest

from bedside.errors import ConfigError, ScenarioError
from bedside.sim.scenario import (
    DEFAULT_SCENARIO,
    FAULT_KINDS,
    list_scenarios,
    load_scenario,
)

MINIMAL = """\
ward: Test Ward (invented)
bed: "Bed 1"
patient: "P-1 (invented)"
stream_name: test
channels: [Fp1, Fp2, C3, CP1, O1, O2, ECG]
rate_hz: 250
duration_s: 60
seed: 1
mains_hz: 50
"""


def _write(tmp_path: Path, text: str) -> Path:
    p = tmp_path / "scn.yaml"
    p.write_text(text, encoding="utf-8")
    return p


def test_shipped_scenarios_load_and_cover_the_required_set() -> None:
    names = list_scenarios()
    for required in (DEFAULT_SCENARIO, "clean", "bad_reference", "mains_60hz", "cap64_1010"):
        assert required in names
    for name in names:
        s = load_scenario(name)
        assert s.name == name
        assert "invented" in s.note.lower()  # the demo people and places are made up
        for f in s.faults:
            assert f.kind in FAULT_KINDS


def test_required_scenario_shapes() -> None:
    """ward_demo: 21-32 channels at 500 Hz, 50 Hz mains, the five demo faults;
    mains_60hz at 60 Hz; cap64_1010 has 64 scalp electrodes; clean has no faults."""
    demo = load_scenario("ward_demo")
    assert 21 <= len(demo.scalp_channels) <= 32 and demo.rate_hz == 500 and demo.mains_hz == 50
    assert {f.kind for f in demo.faults} >= {"line_noise", "flat", "drift", "bridge", "pop"}
    loose = next(f for f in demo.faults if f.kind == "line_noise")
    assert loose.end_s is not None and loose.end_s < demo.duration_s  # fixed later
    assert load_scenario("mains_60hz").mains_hz == 60
    cap = load_scenario("cap64_1010")
    assert len(cap.scalp_channels) == 62 and cap.n_channels == 64
    assert load_scenario("clean").faults == ()
    kinds = {f.kind for f in load_scenario("bad_reference").faults}
    assert "reference" in kinds


def test_active_faults_follow_the_timeline_and_loop() -> None:
    s = load_scenario("ward_demo")
    loose = {f.electrodes[0] for f in s.active_faults(20.0) if f.kind == "line_noise"}
    assert loose == {"T7"}
    assert not [f for f in s.active_faults(100.0) if f.kind == "line_noise"]  # fixed at 95 s
    assert s.active_faults(20.0) == s.active_faults(20.0 + s.duration_s)  # loops
    assert {"O1", "Oz"} <= s.faulty_electrodes(5.0)


def test_bridge_names_two_electrodes(tmp_path: Path) -> None:
    s = load_scenario(_write(tmp_path, MINIMAL + "faults:\n  - {electrode: [C3, CP1], kind: bridge}\n"))
    assert s.faults[0].electrodes == ("C3", "CP1")
    with pytest.raises(ConfigError, match="a bridge names two different electrodes"):
        load_scenario(_write(tmp_path, MINIMAL + "faults:\n  - {electrode: C3, kind: bridge}\n"))
    with pytest.raises(ConfigError, match="names one electrode"):
        load_scenario(_write(tmp_path, MINIMAL + "faults:\n  - {electrode: [C3, O1], kind: flat}\n"))


def test_unknown_key_named_with_line_and_suggestion(tmp_path: Path) -> None:
    p = _write(tmp_path, MINIMAL + "rate_hzz: 3\n")
    with pytest.raises(ConfigError, match=r"scn\.yaml, line 10: 'rate_hzz' is not a known setting; did you mean 'rate_hz'"):
        load_scenario(p)
    p = _write(tmp_path, MINIMAL + "faults:\n  - electrode: C3\n    kind: flat\n    strat_s: 3\n")
    with pytest.raises(ConfigError, match=r"line 13: 'faults\[0\]\.strat_s' is not a known setting; did you mean 'start_s'"):
        load_scenario(p)


@pytest.mark.parametrize(
    ("fault", "message"),
    [
        ("{electrode: Cz, kind: flat}", "electrode 'Cz' is not one of the channels"),
        ("{electrode: C3, kind: wobble}", "accepted: 'line_noise', 'flat'"),
        ("{electrode: C3, kind: flat, start_s: 30, end_s: 10}", "must be after start_s"),
        ("{electrode: C3, kind: flat, end_s: 100}", "after the end of the scenario"),
        ("{electrode: C3, kind: flat, amplitude_uv: 5}", "'amplitude_uv' does not apply to a flat fault"),
        ("{electrode: C3, kind: reference}", "a reference fault is on electrode REF"),
        ("{electrode: GND, kind: drift}", "only line_noise applies to GND"),
        ("{electrode: [C3, ECG], kind: bridge}", "'ECG' is not one"),
    ],
)
def test_bad_faults_are_named(tmp_path: Path, fault: str, message: str) -> None:
    with pytest.raises(ConfigError, match=message):
        load_scenario(_write(tmp_path, MINIMAL + f"faults:\n  - {fault}\n"))


def test_bad_values_and_names(tmp_path: Path) -> None:
    with pytest.raises(ConfigError, match="'mains_hz' is 55.0; accepted: 50.0, 60.0"):
        load_scenario(_write(tmp_path, MINIMAL.replace("mains_hz: 50", "mains_hz: 55")))
    with pytest.raises(ConfigError, match="appears twice"):
        load_scenario(_write(tmp_path, MINIMAL.replace("O2, ECG", "O1, ECG")))
    with pytest.raises(ScenarioError, match="no scenario named 'nope'; the scenarios are: .*ward_demo"):
        load_scenario("nope")
    with pytest.raises(ScenarioError, match="not found"):
        load_scenario(tmp_path / "missing.yaml")


def test_channel_types_from_labels() -> None:
    s = load_scenario("ward_demo")
    types = dict(zip(s.channels, s.channel_types, strict=True))
    assert types["ECG"] == "ECG" and types["EOG"] == "EOG" and types["Cz"] == "EEG"


def test_reference_and_ground_faults_affect_every_scalp_channel() -> None:
    s = load_scenario("bad_reference")
    assert s.faulty_electrodes(30.0) == frozenset()  # no electrode of its own
    assert s.affected_channels(30.0) == frozenset(s.scalp_channels)
    assert s.affected_channels(130.0) == frozenset(s.scalp_channels)  # the poor ground
    assert s.affected_channels(95.0) == frozenset()
    assert "ECG" not in s.affected_channels(30.0)


def test_non_looping_scenario_ends() -> None:
    import dataclasses

    s = dataclasses.replace(load_scenario("ward_demo"), loop=False)
    assert s.active_faults(20.0) and not s.active_faults(20.0 + s.duration_s)


def test_tap_and_swap_faults(tmp_path: Path) -> None:
    """The tap test's kinds: a swap names two channels; a tap one electrode or REF; a
    tap's schedule is one tap at start_s, then one per interval_s while it fits."""
    s = load_scenario(_write(tmp_path, MINIMAL + "faults:\n"
                             "  - {electrode: [Fp1, Fp2], kind: swap}\n"
                             "  - {electrode: C3, kind: tap, start_s: 2, end_s: 7, interval_s: 2, width_s: 0.05}\n"
                             "  - {electrode: REF, kind: tap, start_s: 10, end_s: 11}\n"))
    assert s.faults[0].electrodes == ("Fp1", "Fp2")
    # Peaks 2·width after each tap; the tap at 6 s would end at 6.2 s, inside 7 s.
    assert s.faults[1].tap_peaks_s(s.duration_s) == pytest.approx((2.1, 4.1, 6.1))
    assert s.faults[2].tap_peaks_s(s.duration_s) == pytest.approx((10.08,))
    assert {"Fp1", "Fp2", "C3"} <= s.affected_channels(3.0)
    with pytest.raises(ConfigError, match="a swap names two different electrodes"):
        load_scenario(_write(tmp_path, MINIMAL + "faults:\n  - {electrode: Fp1, kind: swap}\n"))
    with pytest.raises(ConfigError, match="cannot be on REF"):
        load_scenario(_write(tmp_path, MINIMAL + "faults:\n  - {electrode: [REF, Fp1], kind: swap}\n"))
    with pytest.raises(ConfigError, match="'width_s' does not apply to a pop"):
        load_scenario(_write(tmp_path, MINIMAL + "faults:\n  - {electrode: C3, kind: pop, width_s: 0.1}\n"))
