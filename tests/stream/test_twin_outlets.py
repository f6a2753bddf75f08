"""Two live outlets that are equal in name, type, source_id and host (two copies of one
acquisition program on a computer), on real LSL loopback: bedside lists both and refuses
to pick one (exit 2), and opens exactly the outlet chosen by uid (the app's picker)."""

from __future__ import annotations

from collections.abc import Callable

import pytest
from outlets import Feeder, unique_name

from bedside.cli import main
from bedside.errors import IndistinguishableStreams
from bedside.stream.discovery import resolve_one, visible_streams
from bedside.stream.reader import LslSource

pytestmark = pytest.mark.lsl


def _twins(feeders: Callable[..., Feeder]) -> tuple[str, Feeder, Feeder]:
    name = unique_name("twin")
    a = feeders(name, source_id=f"sid-{name}", n_channels=4, labels=["Fz", "Cz", "Pz", "Oz"])
    b = feeders(name, source_id=f"sid-{name}", n_channels=4, labels=["Fz", "Cz", "Pz", "Oz"])
    return name, a, b


def test_equal_outlets_are_both_listed_and_refused(feeders: Callable[..., Feeder]) -> None:
    name, a, b = _twins(feeders)
    uids = {a.outlet.get_info().uid(), b.outlet.get_info().uid()}
    assert len(uids) == 2  # liblsl gives every outlet its own uid
    mine = [s for s in visible_streams(1.0) if s.name == name]
    assert len(mine) == 2 and mine[0] == mine[1]  # equal for the user, never collapsed
    assert {s.uid for s in mine} == uids
    with pytest.raises(IndistinguishableStreams) as exc:
        resolve_one(name, wait_s=1.0)
    text = str(exc.value)
    assert "cannot be told apart" in text and "same name, type, source_id and host" in text
    for uid in uids:
        assert uid[:8] in text
    assert len(exc.value.candidates) == 2
    # Pinning with every option there is does not help: still refused.
    with pytest.raises(IndistinguishableStreams):
        resolve_one(name, f"sid-{name}", mine[0].hostname, wait_s=1.0)


def test_check_refuses_equal_outlets_with_exit_2(feeders: Callable[..., Feeder],
                                                 capsys: pytest.CaptureFixture[str]) -> None:
    name, a, b = _twins(feeders)
    code = main(["check", "--stream", name, "--wait", "1", "--seconds", "3"])
    err = capsys.readouterr().err
    assert code == 2
    assert err.startswith("error: 2 EEG streams match") and "cannot be told apart" in err
    assert a.outlet.get_info().uid()[:8] in err and b.outlet.get_info().uid()[:8] in err
    assert "Traceback" not in err


def test_the_chosen_outlet_is_the_one_opened(feeders: Callable[..., Feeder]) -> None:
    name, a, b = _twins(feeders)
    seen = [s for s in visible_streams(1.0) if s.name == name]
    for feeder in (a, b, a, b):  # each in turn: never the first one found by chance
        uid = feeder.outlet.get_info().uid()
        chosen = next(s for s in seen if s.uid == uid)
        with LslSource(chosen) as src:
            assert src.identity.uid == uid


def test_streams_lists_both_and_says_they_cannot_be_told_apart(feeders: Callable[..., Feeder],
                                                               capsys: pytest.CaptureFixture[str]) -> None:
    name, _a, _b = _twins(feeders)
    assert main(["streams", "--wait", "1"]) == 0
    out, err = capsys.readouterr()
    assert [line.split()[0] for line in out.splitlines()].count(name) == 2
    assert "cannot be told apart" in err and name in err
