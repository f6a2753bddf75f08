"""Choosing a stream: never guess (issue 3: "two beds side by side both publish EEG")."""

from __future__ import annotations

import pytest
from conftest import wait_for_identity
from outlets import unique_name

from bedside.errors import AmbiguousStream, StreamNotFound
from bedside.stream.discovery import find_streams, resolve_one, select_stream
from bedside.stream.types import StreamIdentity


def ident(name: str, sid: str, host: str = "ward-pc") -> StreamIdentity:
    return StreamIdentity(name, "EEG", sid, host, 21, 256.0)


BED3 = ident("Amp", "bed3-amp")
BED4 = ident("Amp", "bed4-amp", "ward-pc-2")
OTHER = ident("Other", "x1", "lab-pc")


def test_single_candidate_needs_no_pin() -> None:
    assert select_stream([BED3]) == BED3


def test_two_candidates_and_no_pin_lists_both() -> None:
    with pytest.raises(AmbiguousStream, match="will not guess") as err:
        select_stream([BED3, BED4, OTHER], name="Amp")
    assert set(err.value.candidates) == {BED3, BED4}
    assert "bed3-amp" in str(err.value) and "bed4-amp" in str(err.value)
    assert "--source-id" in str(err.value)


@pytest.mark.parametrize(
    ("kwargs", "expected"),
    [({"source_id": "bed4-amp"}, BED4), ({"host": "ward-pc"}, BED3), ({"name": "Other"}, OTHER)],
)
def test_pins_select_exactly_one(kwargs: dict[str, str], expected: StreamIdentity) -> None:
    assert select_stream([BED3, BED4, OTHER], **kwargs) == expected


def test_not_found_says_what_was_visible() -> None:
    with pytest.raises(StreamNotFound, match=r"no EEG stream matches --stream 'Amp2'; visible:") as err:
        select_stream([BED3, OTHER], name="Amp2")
    assert "bed3-amp" in str(err.value) and "'Other'" in str(err.value)
    with pytest.raises(StreamNotFound, match="no EEG streams visible"):
        select_stream([])


def test_same_source_id_on_two_hosts_asks_for_the_host() -> None:
    twin = ident("Amp", "bed3-amp", "other-pc")
    with pytest.raises(AmbiguousStream, match="Pin one with --host"):
        select_stream([BED3, twin], source_id="bed3-amp")


@pytest.mark.lsl
def test_two_real_streams_with_one_name(feeders) -> None:  # type: ignore[no-untyped-def]
    name = unique_name()
    feeders(name, source_id=f"bed1-{name}")
    feeders(name, source_id=f"bed2-{name}")
    wait_for_identity(name, f"bed1-{name}")
    wait_for_identity(name, f"bed2-{name}")
    with pytest.raises(AmbiguousStream) as err:
        resolve_one(name=name, wait_s=1.0)
    assert {c.source_id for c in err.value.candidates} == {f"bed1-{name}", f"bed2-{name}"}  # type: ignore[attr-defined]
    got = resolve_one(name=name, source_id=f"bed2-{name}", wait_s=1.0)
    assert got.source_id == f"bed2-{name}" and got.n_channels == 4 and got.nominal_rate_hz == 250.0
    listed = [s for s in find_streams(wait_s=1.0) if s.name == name]
    assert len(listed) == 2 and all(s.type == "EEG" for s in listed)


def test_wait_must_be_positive() -> None:
    with pytest.raises(ValueError, match="wait_s"):
        find_streams(wait_s=0)


@pytest.mark.lsl
def test_open_stream_selects_and_opens(feeders) -> None:  # type: ignore[no-untyped-def]
    from bedside.stream.reader import open_stream

    name = unique_name()
    feeders(name, n_channels=2, labels=["C3", "C4"])
    wait_for_identity(name)
    with open_stream(name=name, wait_s=1.0) as src:
        assert src.identity.name == name
        assert [c.name for c in src.channels] == ["C3", "C4"]
    with pytest.raises(StreamNotFound, match=f"--stream '{name}-nobody'"):
        open_stream(name=f"{name}-nobody", wait_s=1.0)
