"""Fixtures of the record tests (builders live in record_factories.py)."""

from __future__ import annotations

from pathlib import Path

import pytest
from record_factories import FakeClock


@pytest.fixture
def clock() -> FakeClock:
    return FakeClock()


@pytest.fixture(autouse=True)
def _rescue_copies_stay_in_tmp(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    """A failed close writes a rescue copy under XDG_STATE_HOME: keep it out of $HOME."""
    monkeypatch.setenv("XDG_STATE_HOME", str(tmp_path / "xdg-state"))
