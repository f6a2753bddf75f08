"""Fixtures for the LSL tests: real outlets on loopback, each with a unique name."""

from __future__ import annotations

import sys
from collections.abc import Callable, Iterator
from pathlib import Path

import pytest

sys.path.insert(0, str(Path(__file__).parent))

from outlets import Feeder, make_info, unique_name  # noqa: E402

from bedside.stream.discovery import find_streams, select_stream  # noqa: E402
from bedside.stream.types import StreamIdentity  # noqa: E402


def wait_for_identity(name: str, source_id: str | None = None, tries: int = 4) -> StreamIdentity:
    """Resolve our own test stream (short waits, a few tries)."""
    for _ in range(tries):
        mine = [s for s in find_streams(wait_s=0.3, stream_type=None) if s.name == name]
        if mine and (source_id is None or any(s.source_id == source_id for s in mine)):
            return select_stream(mine, name=name, source_id=source_id)
    raise AssertionError(f"test stream {name} never became visible")


@pytest.fixture
def feeders() -> Iterator[Callable[..., Feeder]]:
    """Make Feeders (outlets) that are closed after the test: ``feeders(**make_info kwargs)``."""
    made: list[Feeder] = []

    def make(name: str | None = None, **kwargs: object) -> Feeder:
        f = Feeder(make_info(name or unique_name(), **kwargs))  # type: ignore[arg-type]
        made.append(f)
        return f

    yield make
    for f in made:
        f.close()
