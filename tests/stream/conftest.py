"""Fixtures for the LSL tests: real outlets on loopback, each with a unique name."""

from __future__ import annotations

import sys
from collections.abc import Callable, Iterator
from pathlib import Path

import pytest

sys.path.insert(0, str(Path(__file__).parent))

import pylsl  # noqa: E402
from outlets import Feeder, make_info, unique_name  # noqa: E402

from bedside.stream.discovery import identity_of  # noqa: E402
from bedside.stream.types import StreamIdentity  # noqa: E402


def wait_for_identity(name: str, source_id: str | None = None, timeout_s: float = 3.0) -> StreamIdentity:
    """Our own test stream, found by its unique source_id (returns as soon as it answers;
    the product's discovery always looks for the full discovery_min_wait_s)."""
    found = pylsl.resolve_byprop("source_id", source_id or f"sid-{name}", 1, timeout_s)
    mine = [identity_of(i) for i in found if i.name() == name]
    if not mine:
        raise AssertionError(f"test stream {name} never became visible")
    return mine[0]


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
