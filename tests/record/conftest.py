"""Fixtures of the record tests (builders live in record_factories.py)."""

from __future__ import annotations

import pytest
from record_factories import FakeClock


@pytest.fixture
def clock() -> FakeClock:
    return FakeClock()
