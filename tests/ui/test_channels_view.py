"""The channels screen: what bedside inferred, confirmed or changed by the technologist.

The stream is invented for the test and shaped like a real amplifier's: the 19 sites
of the 10-20 system (Jasper 1958) plus the extra inputs amplifiers carry — VEOGU and
ECG typed in the metadata, EOGL and EMGchin with only a label, a TRIG channel, an
accelerometer ACC_X in g, and E5, a voltage channel whose label names no site.
Types are the BIDS channels.tsv vocabulary (BIDS 1.11, EEG chapter: EEG, EOG, ECG,
EMG, TRIG, MISC). Counted by hand: 20 scalp (the 19 sites and E5, which bedside
assumes is EEG), 2 EOG, 1 ECG, 1 EMG, and TRIG and ACC_X not judged.

Real core on every step but the transport: the channels come from
``bedside.stream.channels.setup_channels`` with the options the app itself builds
(``ui.services.source_options``: the choices just made, else the ones saved for the
source_id), the real engine (configs/quality.yaml) and monitor judge the samples, and
the choices are saved by ``bedside.stream.channel_map.save_choices`` (the same code
``bedside check --channels`` saves with) under a per-test XDG_STATE_HOME.
"""

from __future__ import annotations

import threading
from pathlib import Path
from typing import Any

import numpy as np
import pytest
import standins as si
from textual.widgets import DataTable

from bedside.errors import BedsideError
from bedside.stream.channel_map import saved_choices, store_folder
from bedside.stream.channels import ChannelMetadata, ChannelOptions, StreamMetadata, setup_channels
from bedside.stream.labels import load_labels
from bedside.stream.types import ChannelInfo, Chunk, StreamHealth, StreamIdentity
from bedside.ui.app import make_app
from bedside.ui.config import AppConfig
from bedside.ui.screens.channels import ChannelsScreen
from bedside.ui.services import Services, source_options

pytestmark = pytest.mark.asyncio

SITES = ["Fp1", "Fp2", "F7", "F3", "Fz", "F4", "F8", "T7", "C3", "Cz", "C4", "T8",
         "P7", "P3", "Pz", "P4", "P8", "O1", "O2"]
LABELS = [*SITES, "VEOGU", "EOGL", "ECG", "EMGchin", "TRIG", "ACC_X", "E5"]
TYPES = ["EEG"] * 19 + ["EOG", "", "ECG", "", "", "", ""]
UNITS = ["microvolts"] * 25 + ["microvolts"]
UNITS[LABELS.index("ACC_X")] = "g"
RATE = 250.0
E5 = LABELS.index("E5")


class AmplifierLikeSource:
    """A Source with the amplifier-like channels above, decided by the real
    ``setup_channels``; samples: seeded noise, 100 µV of 50 Hz on E5 (a lead that
    picks up mains), a silent trigger line. Up to five times real time."""

    labels = LABELS

    def __init__(self, sid: str, options: ChannelOptions) -> None:
        self._identity = StreamIdentity("amp-like", "EEG", sid, "ward-pc", len(LABELS), RATE)
        setup = setup_channels(len(LABELS), StreamMetadata(ChannelMetadata(self.labels, TYPES, UNITS)),
                               load_labels(), options)
        self._channels = setup.channels
        self.profile = setup.profile
        self._rng = np.random.default_rng(7)
        self._n = 0
        self._stop = threading.Event()
        self.closed = False

    @property
    def identity(self) -> StreamIdentity:
        return self._identity

    @property
    def channels(self) -> tuple[ChannelInfo, ...]:
        return self._channels

    def pull(self, timeout_s: float = 0.0) -> Chunk | None:
        if self.closed:
            return None
        self._stop.wait(timeout_s)
        n = int(RATE // 4)
        t = (self._n + np.arange(n)) / RATE
        self._n += n
        x = self._rng.normal(0.0, 8.0, (n, len(LABELS)))
        x[:, E5] += 100.0 * np.sin(2 * np.pi * 50.0 * t)
        x[:, LABELS.index("TRIG")] = 0.0
        return Chunk(x, t)

    def health(self) -> StreamHealth:
        return StreamHealth("live", RATE, RATE)

    def close(self) -> None:
        self.closed = True
        self._stop.set()


@pytest.fixture
def state_home(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> Path:
    """Saved choices go to this test's own folder."""
    monkeypatch.setenv("XDG_STATE_HOME", str(tmp_path / "state"))
    return tmp_path / "state"


class Opened:
    """The app's open_source for the test: records every source it opened."""

    def __init__(self, sid: str) -> None:
        self.sid = sid
        self.sources: list[AmplifierLikeSource] = []

    def __call__(self, identity: StreamIdentity, choices: Any) -> AmplifierLikeSource:
        src = AmplifierLikeSource(identity.source_id, source_options(identity.source_id, choices))
        self.sources.append(src)
        return src


def _app(sid: str, opened: Opened, start_view: Any = "watch") -> Any:
    from bedside.checks.monitor import Monitor

    # Everything real but discovery and the transport (see the module docstring).
    services = Services(open_source=opened, make_monitor=Monitor, open_recorder=None)
    ident = StreamIdentity("amp-like", "EEG", sid, "ward-pc", len(LABELS), RATE)
    return make_app(AppConfig(discover=False, confirm_channels=True, update_hz=4.0, start_view=start_view),
                    source=opened(ident, None), services=services)


async def _until(pilot: Any, cond: Any, tries: int = 150) -> bool:
    return await si.until(pilot, cond, tries)


def _e5(app: Any) -> Any:
    frame = app.latest_frame
    if frame is None or len(frame.channels) != len(LABELS):
        return None
    return frame.channels[E5]


async def test_summary_line_and_table_at_connect(state_home: Path) -> None:
    opened = Opened("amp-1")
    app = _app("amp-1", opened)
    async with app.run_test(size=(110, 40)) as pilot:
        assert await _until(pilot, lambda: si.confirm_open(app))
        # Counted by hand from the stream above (module docstring).
        assert await _until(pilot, lambda: "20 scalp, 2 EOG, 1 ECG, 1 EMG, 2 not judged" in si.screen_text(app))
        table = app.screen.query_one(DataTable)
        assert table.row_count == len(LABELS)
        row = table.get_row(str(E5))
        assert row[1] == "E5" and row[3].plain == "EEG" and "assumed" in row[4]
        assert table.get_row(str(LABELS.index("ACC_X")))[3].plain == "MISC"  # a unit in g: not a voltage
        assert table.get_row(str(LABELS.index("VEOGU")))[4] == "stream's type"


async def test_eeg_to_eog_takes_the_channel_out_of_electrode_verdicts_and_is_saved(state_home: Path) -> None:
    opened = Opened("amp-2")
    app = _app("amp-2", opened)
    async with app.run_test(size=(110, 40)) as pilot:
        assert await _until(pilot, lambda: si.confirm_open(app))
        # Before: E5 is judged as a scalp electrode, and its mains makes it not good.
        assert await _until(pilot, lambda: _e5(app) is not None and _e5(app).level is not None
                            and app.progress is not None and "E5" in app.progress.not_good)
        assert _e5(app).is_scalp and app.progress.total == 20
        first = app.connection
        await si.edit_channel(pilot, E5, kind="EOG")
        assert await _until(pilot, lambda: "19 scalp, 3 EOG, 1 ECG, 1 EMG, 2 not judged" in si.screen_text(app))
        await pilot.press("a")
        assert await _until(pilot, lambda: app.connection is not None and app.connection is not first)
        # The engine was rebuilt on the new channel set; the old source was stopped.
        assert opened.sources[0].closed and len(opened.sources) == 2
        assert [c.kind for c in app.connection.channels][E5] == "EOG"
        assert await _until(pilot, lambda: _e5(app) is not None and _e5(app).level is not None)
        e5 = _e5(app)
        assert not e5.is_scalp
        assert app.progress is not None and app.progress.total == 19 and "E5" not in app.progress.not_good
        assert not any(r.startswith("mains") for r in e5.reasons)  # no electrode check on an EOG lead
        # Saved per source_id, by the code `check --channels` saves with.
        saved = saved_choices("amp-2")
        assert saved is not None and saved["E5"].type == "EOG" and saved["Cz"].type == "EEG"
        assert not isinstance(app.screen, ChannelsScreen)


async def test_saved_choice_is_used_on_reconnect(state_home: Path) -> None:
    opened = Opened("amp-3")
    app = _app("amp-3", opened)
    async with app.run_test(size=(110, 40)) as pilot:
        assert await _until(pilot, lambda: si.confirm_open(app))
        await si.edit_channel(pilot, E5, name="LOC", kind="EOG")
        await pilot.press("a")
        assert await _until(pilot, lambda: app.connection is not None and len(opened.sources) == 2
                            and app.connection.channels[E5].name == "LOC")
    # Next time, the same amplifier (source_id): the choice is used, and not asked again.
    again = Opened("amp-3")
    app2 = _app("amp-3", again)
    async with app2.run_test(size=(110, 40)) as pilot:
        assert await _until(pilot, lambda: app2.connection is not None)
        ch = app2.connection.channels[E5]
        assert (ch.name, ch.kind, ch.evidence) == ("LOC", "EOG", "technologist")
        await pilot.pause(0.3)
        assert not isinstance(app2.screen, ChannelsScreen)
        assert "19 scalp, 3 EOG" in app2.connection.summary
        # Another amplifier (another source_id) does not get this choice.
    other = Opened("amp-4")
    app3 = _app("amp-4", other)
    async with app3.run_test(size=(110, 40)) as pilot:
        assert await _until(pilot, lambda: app3.connection is not None)
        assert app3.connection.channels[E5].kind == "EEG"
        assert await _until(pilot, lambda: si.confirm_open(app3))


async def test_invalid_edits_are_said_on_screen_and_nothing_is_applied(state_home: Path) -> None:
    opened = Opened("amp-5")
    app = _app("amp-5", opened)
    async with app.run_test(size=(110, 40)) as pilot:
        assert await _until(pilot, lambda: si.confirm_open(app))
        first = app.connection
        screen = app.screen
        # A type that is not a BIDS channel type: named, with what is accepted.
        await si.edit_channel(pilot, E5, kind="EGG")
        assert await _until(pilot, lambda: "'EGG' is not known" in si.screen_text(app))
        assert "accepted: EEG, EOG" in si.screen_text(app)
        await pilot.press("a")
        assert await _until(pilot, lambda: "nothing was applied" in si.screen_text(app))
        assert app.screen is screen and app.connection is first
        # A name another channel already has.
        await si.edit_channel(pilot, E5, name="Cz", kind="EOG")
        assert await _until(pilot, lambda: "gives the name 'Cz' to more than one channel" in si.screen_text(app))
        # Back to a valid set: the message goes; confirmed as it is.
        await si.edit_channel(pilot, E5, name="E5", kind="EEG")
        assert await _until(pilot, lambda: "more than one channel" not in si.screen_text(app))
        await pilot.press("a")
        assert await _until(pilot, lambda: not isinstance(app.screen, ChannelsScreen))
        # Unchanged and confirmed: saved, the running engine kept.
        assert app.connection is first and len(opened.sources) == 1
        assert await _until(pilot, lambda: saved_choices("amp-5") is not None)


async def test_cancel_leaves_everything_as_it_was(state_home: Path) -> None:
    opened = Opened("amp-6")
    app = _app("amp-6", opened)
    async with app.run_test(size=(110, 40)) as pilot:
        assert await _until(pilot, lambda: si.confirm_open(app))
        first = app.connection
        channels = first.channels
        await si.edit_channel(pilot, E5, name="LOC", kind="EOG")
        assert await _until(pilot, lambda: "1 changed, not applied yet" in si.screen_text(app))
        await pilot.press("escape")
        assert await _until(pilot, lambda: not isinstance(app.screen, ChannelsScreen))
        await pilot.pause(0.3)
        assert app.connection is first and app.connection.channels == channels
        assert len(opened.sources) == 1 and not opened.sources[0].closed
        assert saved_choices("amp-6") is None and not store_folder().exists()
        # From Watch, c opens it again, as it was.
        await pilot.press("c")
        assert await _until(pilot, lambda: si.confirm_open(app))
        assert app.screen.query_one(DataTable).get_row(str(E5))[3].plain == "EEG"


class RepeatedLabelSource(AmplifierLikeSource):
    """The same, but the sending program gives two channels the label "Cz"."""

    labels = [*LABELS[:E5], "Cz"]


async def test_a_label_sent_twice_cannot_be_changed_and_says_why(state_home: Path) -> None:
    def opened(identity: StreamIdentity, choices: Any) -> AmplifierLikeSource:
        return RepeatedLabelSource(identity.source_id, source_options(identity.source_id, choices))

    from bedside.checks.monitor import Monitor

    ident = StreamIdentity("amp-like", "EEG", "amp-10", "ward-pc", len(LABELS), RATE)
    app = make_app(AppConfig(discover=False, confirm_channels=True),
                   source=opened(ident, None), services=Services(open_source=opened, make_monitor=Monitor,
                                                                 open_recorder=None))
    async with app.run_test(size=(110, 40)) as pilot:
        assert await _until(pilot, lambda: si.confirm_open(app))
        assert app.connection.channels[E5].name == "Cz#2"  # bedside keeps names unique
        assert "label repeats" in str(app.screen.query_one(DataTable).get_row(str(E5))[4])
        await si.edit_channel(pilot, E5, kind="EOG")
        assert await _until(pilot, lambda: "to more than one channel (or none)" in si.screen_text(app))
        assert app.screen.query_one(DataTable).get_row(str(E5))[3].plain == "EEG"  # unchanged


async def test_while_measuring_the_screen_waits_for_watch(state_home: Path) -> None:
    """Someone typing measurements keeps the keys: the channels wait, said in a note."""
    opened = Opened("amp-9")
    app = _app("amp-9", opened, start_view="measure")
    async with app.run_test(size=(110, 40)) as pilot:
        assert await _until(pilot, lambda: app.connection is not None)
        await pilot.pause(0.3)
        assert not isinstance(app.screen, ChannelsScreen)
        said = [n.message for n in app._notifications]  # Textual 8.2 keeps the app's notifications here
        assert any("20 scalp, 2 EOG" in m and "confirm or change them in Watch (F3)" in m for m in said)
        await pilot.press("f3")
        assert await _until(pilot, lambda: si.confirm_open(app))


async def test_the_app_engine_gets_the_same_options_as_check(state_home: Path) -> None:
    """Amplifier range and geometry neighbours reach the app's engine as they reach
    ``bedside check``'s (one function, ``bedside.engine_setup.engine_options``)."""
    from bedside.checks.settings import load_quality
    from bedside.engine_setup import engine_options
    from bedside.ui.live import engine_neighbours

    src = AmplifierLikeSource("amp-7", ChannelOptions(amplifier="ac-passive"))
    engine, note = Services().make_engine(load_quality(), src)
    kwargs, check_note = engine_options(src)
    assert note == check_note and "10-10 names" in note
    # configs/amplifiers.yaml: the ac-passive profile's input range is ±5 mV.
    assert engine.amplifier_range_uv == 5000.0 == kwargs["amplifier_range_uv"]
    pairs = engine_neighbours(engine)
    assert pairs and {frozenset(p) for p in pairs} == {frozenset(p) for p in kwargs["neighbours"]}
    # Neighbours are scalp electrodes only (E5 has no position; the leads are no electrodes).
    named = {n for p in pairs for n in p}
    assert named <= set(SITES) and "Cz" in named


async def test_no_scalp_channel_left_is_refused() -> None:
    """Every channel given a type that is no electrode: nothing would be judged."""
    src = AmplifierLikeSource("amp-8", ChannelOptions())
    edits = {c.label: ("MISC", c.name) for c in src.channels}
    with pytest.raises(BedsideError, match="no channel is scalp EEG"):
        Services().preview_channels(src.channels, edits)
