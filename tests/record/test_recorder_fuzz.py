"""Property (hypothesis): whatever a person types into the log — notes, impedances,
electrode names, initials, IDs — the recorder either takes it or raises a clear
InputError, and what it took loads back identical from disk."""

from __future__ import annotations

import math

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from record_factories import FakeClock

from bedside.errors import InputError
from bedside.record.log import load_log
from bedside.record.session import SessionRecorder

_text = st.text(max_size=40)
_ops = st.lists(
    st.one_of(
        st.tuples(st.just("add_note"), _text),
        st.tuples(st.just("set_impedance"), _text, st.one_of(st.floats(allow_nan=True), st.integers(), _text)),
        st.tuples(st.just("set_technologist"), _text),
        st.tuples(st.just("set_subject"), _text),
        st.tuples(st.just("set_reference"), _text, _text),
        st.tuples(st.just("sign_off"), _text),
    ),
    max_size=12,
)


@settings(max_examples=60)
@given(ops=_ops)
def test_typed_input_is_taken_or_refused_clearly(tmp_path_factory: pytest.TempPathFactory, ops: list[tuple]) -> None:
    path = tmp_path_factory.mktemp("fuzz") / "f.yaml"
    clock = FakeClock()
    rec = SessionRecorder.open(path, subject_id="W3-017", clock=clock)
    taken = {"add_note": 0, "set_impedance": 0}
    try:
        for op, *args in ops:
            clock.advance(1.0)
            try:
                getattr(rec, op)(*args)
            except InputError as exc:
                assert str(exc), "an error says what was wrong"
                continue
            taken[op] = taken.get(op, 0) + 1
            if op == "set_impedance":
                assert math.isfinite(rec.snapshot().impedances[-1].kohm)
    finally:
        rec.close()
    saved = load_log(path)
    assert saved == rec.snapshot()
    assert len(saved.notes) == taken["add_note"] and len(saved.impedances) == taken["set_impedance"]
