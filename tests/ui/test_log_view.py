"""The Log view with the real setup log (bedside.record.session.SessionRecorder).

Checked against the file on disk, read back with yaml.safe_load (PyYAML), not against
the UI's own state.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

import pytest
import standins as si
import yaml

from bedside.record.log import load_log
from bedside.ui.app import make_app
from bedside.ui.config import AppConfig

pytestmark = pytest.mark.asyncio


_until = si.until


async def _type(pilot: Any, text: str) -> None:
    for ch in text:
        await pilot.press(ch if ch != " " else "space")


def _flat(obj: Any) -> str:
    return yaml.safe_dump(obj, allow_unicode=True)


async def test_note_impedance_sign_off_and_save(tmp_path: Path) -> None:
    log_path = tmp_path / "W3-017.yaml"
    cfg = AppConfig(discover=False, start_view="log", log_path=log_path, subject_id="W3-017")
    app = make_app(cfg)
    async with app.run_test(size=(100, 40)) as pilot:
        assert await _until(pilot, lambda: app.recorder is not None)
        await _type(pilot, "JM")  # initials field has focus
        await pilot.press("enter")
        await pilot.press("tab", "tab")  # subject ID → note
        await _type(pilot, "Fp1 re-gelled after abrasion check")
        await pilot.press("enter")
        await pilot.press("tab")  # note → electrode
        await _type(pilot, "Cz")
        await pilot.press("enter")
        await _type(pilot, "abc")
        await pilot.press("enter")
        assert await _until(pilot, lambda: "impedance must be a number of kΩ" in si.screen_text(app))
        await pilot.press("ctrl+a", "backspace")
        app.screen.query_one("#imp-kohm").value = ""
        await _type(pilot, "4.5")
        await pilot.press("enter")
        assert await _until(pilot, lambda: "impedance Cz 4.5 kΩ" in si.screen_text(app))
        await pilot.press("ctrl+o")  # sign off (initials JM) and save
        ok = await _until(pilot, lambda: "signed off by JM" in si.screen_text(app))
        assert ok, si.screen_text(app)
        assert "✖" not in si.screen_text(app)
        await pilot.press("ctrl+s")
        await pilot.pause(0.3)
        await pilot.resize_terminal(80, 24)
        assert await _until(pilot, lambda: app.size == (80, 24) and "note" in si.screen_text(app))
        await pilot.press("ctrl+q")
        await _until(pilot, lambda: app.return_code is not None)
    assert app.return_code == 0
    data = yaml.safe_load(log_path.read_text(encoding="utf-8"))
    text = _flat(data)
    assert "Fp1 re-gelled after abrasion check" in text
    assert "W3-017" in text and "JM" in text
    assert "4.5" in text and "Cz" in text
    assert data.get("sign_off"), "the sign-off reached the file"


async def test_bad_subject_id_is_refused_with_the_rule(tmp_path: Path) -> None:
    """A name instead of a code is refused (the log's own rule), and said on screen."""
    cfg = AppConfig(discover=False, start_view="log", log_path=tmp_path / "x.yaml")
    app = make_app(cfg)
    async with app.run_test(size=(100, 40)) as pilot:
        assert await _until(pilot, lambda: app.recorder is not None)
        await pilot.press("tab")
        await _type(pilot, "Smith")
        await pilot.press("enter")
        assert await _until(pilot, lambda: "no digit" in si.screen_text(app))
        await pilot.press("ctrl+q")
        await _until(pilot, lambda: app.return_code is not None)


async def test_unwritable_log_is_reported_not_hidden(tmp_path: Path) -> None:
    """A log folder that cannot be created: the status line says 'not saved', the app goes on."""
    blocker = tmp_path / "file"
    blocker.write_text("not a folder", encoding="utf-8")
    cfg = AppConfig(discover=False, start_view="log", log_path=blocker / "sub" / "log.yaml")
    app = make_app(cfg)
    async with app.run_test(size=(100, 40)) as pilot:
        assert await _until(pilot, lambda: app.recorder is not None)
        await pilot.press("ctrl+s")
        assert await _until(pilot, lambda: "not saved" in si.screen_text(app))
        await pilot.press("f3")
        assert app.screen.name == "watch"


async def test_opened_and_left_keeps_no_empty_log_and_says_where_a_log_went(tmp_path: Path) -> None:
    """`bedside`, Esc, q with nothing measured, watched or written: the log bedside named
    itself is not left behind empty; once something is recorded, the app says where it went."""
    empty = tmp_path / "setup-20261203-090000.yaml"
    app = make_app(AppConfig(discover=False, start_view="watch", log_path=empty, discard_empty_log=True))
    async with app.run_test(size=(100, 40)) as pilot:
        assert await _until(pilot, lambda: app.recorder is not None)
        await pilot.press("escape", "q")
        await _until(pilot, lambda: app.return_code is not None)
    assert app.return_code == 0
    assert not empty.exists() and not list(tmp_path.glob("*.yaml"))
    assert app.log_outcome == "nothing was recorded, so no setup log was kept"

    kept = tmp_path / "W3-017-20261203-090100.yaml"
    app = make_app(AppConfig(discover=False, start_view="log", log_path=kept, subject_id="W3-017",
                             discard_empty_log=True))
    async with app.run_test(size=(100, 40)) as pilot:
        assert await _until(pilot, lambda: app.recorder is not None)
        await pilot.press("tab", "tab")
        await _type(pilot, "cap applied")
        await pilot.press("enter")
        assert await _until(pilot, lambda: "cap applied" in si.screen_text(app))
        await pilot.press("ctrl+q")
        await _until(pilot, lambda: app.return_code is not None)
    assert kept.exists() and "cap applied" in kept.read_text(encoding="utf-8")
    assert app.log_outcome == f"setup log saved to {kept}"


async def test_impedance_for_an_electrode_not_in_the_stream_is_refused(tmp_path: Path) -> None:
    """Fpz is on the measured plan but not in the stream: its impedance is refused with the
    reason (it would only ever read "no data"); Fp1, in the stream, is taken."""
    app = make_app(AppConfig(discover=False, start_view="log", log_path=tmp_path / "W3-017.yaml",
                             subject_id="W3-017"), source=si.FixedSource(), services=si.services())
    async with app.run_test(size=(100, 40)) as pilot:
        assert await _until(pilot, lambda: app.connection is not None)
        app.plan_changed(si.plan_placement(si.parse_measurements("36", "35", "56", "cm"), "10-20", "modern"))
        assert "Fpz" not in {ch.name for ch in app.connection.channels}
        app.screen.query_one("#imp-electrode").value = "Fpz"
        app.screen.query_one("#imp-kohm").value = "6"
        app.screen.query_one("#imp-kohm").focus()
        await pilot.press("enter")
        assert await _until(pilot, lambda: "not in the stream being watched" in si.screen_text(app))
        assert "Fpz" not in app.views["log"].impedances
        app.screen.query_one("#imp-electrode").value = "Fp1"
        app.screen.query_one("#imp-kohm").focus()
        await pilot.press("enter")
        assert await _until(pilot, lambda: "Fp1" in app.views["log"].impedances)
        await pilot.press("ctrl+q")
        await _until(pilot, lambda: app.return_code is not None)


async def test_the_log_bedside_named_follows_a_new_subject_id(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    """`bedside demo` names its log DEMO-001-<time>.yaml; once the technologist types the
    real code W3-017 the file becomes W3-017-<time>.yaml, the Log view shows the new path
    and "saved to" on exit names it. A file already under the new name is left as it is
    and the log takes the next free name (-2). Checked on the disk, not the app's state."""
    monkeypatch.chdir(tmp_path)  # the app's own default folder is relative: bedside-logs/
    folder = Path("bedside-logs")
    folder.mkdir()
    start = folder / "DEMO-001-20261204-090000.yaml"
    taken = folder / "W3-017-20261204-090000.yaml"
    taken.write_text("someone else's file\n", encoding="utf-8")
    cfg = AppConfig(discover=False, start_view="log", log_path=start, subject_id="DEMO-001",
                    discard_empty_log=True, rename_log_with_subject=True)
    app = make_app(cfg)
    final = folder / "W3-017-20261204-090000-2.yaml"
    async with app.run_test(size=(80, 24)) as pilot:
        assert await _until(pilot, lambda: app.recorder is not None)
        assert await _until(pilot, lambda: f"log file  {start}" in si.screen_text(app))
        await pilot.press("tab", "tab", "tab")  # subject → note → … back round to the subject
        subject = app.screen.query_one("#subject")
        subject.focus()
        subject.value = ""
        await _type(pilot, "W3-017")
        await pilot.press("enter")
        assert await _until(pilot, lambda: f"log file  {final}" in si.screen_text(app)), si.screen_text(app)
        assert final.exists() and not start.exists()
        app.screen.query_one("#note").focus()
        await _type(pilot, "cap applied")
        await pilot.press("enter")
        assert await _until(pilot, lambda: any(n.text == "cap applied" for n in load_log(final).notes))
        await pilot.press("ctrl+q")
        await _until(pilot, lambda: app.return_code is not None)
    assert app.return_code == 0
    assert app.log_outcome == f"setup log saved to {final}"
    assert taken.read_text(encoding="utf-8") == "someone else's file\n"
    data = yaml.safe_load(final.read_text(encoding="utf-8"))
    assert data["subject_id"] == "W3-017"
    events = _flat(data["events"])
    assert "DEMO-001 → W3-017" in events and "DEMO-001-20261204-090000.yaml → W3-017-20261204-090000-2.yaml" in events
    assert sorted(p.name for p in folder.iterdir()) == sorted([taken.name, final.name]), "no lock or temp file left"


async def test_a_log_the_technologist_named_keeps_its_name(tmp_path: Path) -> None:
    """With --log FILE the name is the technologist's: a new subject ID changes the log's
    subject only."""
    chosen = tmp_path / "bed3-night.yaml"
    app = make_app(AppConfig(discover=False, start_view="log", log_path=chosen, subject_id="DEMO-001"))
    async with app.run_test(size=(80, 24)) as pilot:
        assert await _until(pilot, lambda: app.recorder is not None)
        subject = app.screen.query_one("#subject")
        subject.focus()
        subject.value = ""
        await _type(pilot, "W3-017")
        await pilot.press("enter")
        assert await _until(pilot, lambda: "subject ID set" in si.screen_text(app))
        await pilot.press("ctrl+q")
        await _until(pilot, lambda: app.return_code is not None)
    assert yaml.safe_load(chosen.read_text(encoding="utf-8"))["subject_id"] == "W3-017"
    assert [p.name for p in tmp_path.iterdir()] == [chosen.name]
    assert app.log_outcome == f"setup log saved to {chosen}"
