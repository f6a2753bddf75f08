"""The Watch view's head map draws a cap from the geometry its stream gives.

Outside reference: the digitised electrode positions of MNE-Python's sample recording
(60 EEG channels labelled ``EEG 001``..``EEG 060``, head frame: x towards the right
preauricular point, y towards the nasion, z up, origin between the preauricular points;
MNE-Python's coordinate-frame documentation), read by MNE-Python in ``tests/real_eeg.py``.
None of these labels is a 10-20 name, so only the positions can place them. The channels
come from the real ``bedside.stream.channels.setup_channels`` (the stream's per-channel
location, as an LSL outlet sends it) and the map's places from the real
``placement.layout.project_geometry``.
"""

from __future__ import annotations

import threading

import numpy as np
import pytest
import real_eeg
import standins as si

from bedside.stream.channels import ChannelMetadata, StreamMetadata, setup_channels
from bedside.stream.labels import load_labels
from bedside.stream.types import ChannelInfo, Chunk, StreamHealth, StreamIdentity
from bedside.ui.app import make_app
from bedside.ui.config import AppConfig
from bedside.ui.services import Services
from bedside.ui.widgets.head_map import HeadMap

pytestmark = pytest.mark.asyncio


def _sample_positions_mm() -> dict[str, tuple[float, float, float]]:
    rec = real_eeg.mne_sample().pick("EEG")
    assert rec.positions_m is not None
    return {n: (rec.positions_m[n][0] * 1e3, rec.positions_m[n][1] * 1e3, rec.positions_m[n][2] * 1e3)
            for n in rec.labels}


class CapSource:
    """The sample cap's 60 channels with their positions, then Oz (a 10-20 name, no
    position) and E61 (neither: a voltage channel bedside assumes is scalp EEG)."""

    def __init__(self, positions: dict[str, tuple[float, float, float]]) -> None:
        labels = [*positions, "Oz", "E61"]
        locations: list[tuple[float, float, float] | None] = [*positions.values(), None, None]
        meta = StreamMetadata(ChannelMetadata(labels, ["EEG"] * len(labels), ["microvolts"] * len(labels),
                                              locations_mm=locations))
        self._channels = setup_channels(len(labels), meta, load_labels()).channels
        self._identity = StreamIdentity("sample-cap", "EEG", "sample-cap-sid", "ward-pc", len(labels), 250.0)
        self._rng = np.random.default_rng(3)
        self._stop = threading.Event()

    @property
    def identity(self) -> StreamIdentity:
        return self._identity

    @property
    def channels(self) -> tuple[ChannelInfo, ...]:
        return self._channels

    def pull(self, timeout_s: float = 0.0) -> Chunk | None:
        self._stop.wait(min(timeout_s, 0.05))
        t = np.arange(25) / 250.0
        return Chunk(self._rng.normal(0.0, 10.0, (25, len(self._channels))), t)

    def health(self) -> StreamHealth:
        return si.health()

    def close(self) -> None:
        self._stop.set()


_until = si.until


async def test_a_cap_without_10_20_names_is_drawn_at_its_own_positions() -> None:
    positions = _sample_positions_mm()
    source = CapSource(positions)
    assert all(ch.is_scalp for ch in source.channels)
    assert source.channels[0].position_mm == pytest.approx(positions["EEG 001"])
    real = {k: v for k, v in vars(si.services()).items() if k not in ("positions_for", "project_2d")}
    services = Services(**{**real, "positions_for": Services().positions_for, "project_2d": Services().project_2d})
    app = make_app(AppConfig(discover=False), source=source, services=services)
    async with app.run_test(size=(100, 40)) as pilot:
        hm = app.screen.query_one("#head-map", HeadMap)
        assert await _until(pilot, lambda: len(hm.drawn) == len(positions) + 1), len(hm.drawn)
        assert set(hm.points) == {*positions, "Oz"} and hm.unplaced == ("E61",)
        # On screen: the electrode with no place is named, not silently left out.
        text = si.screen_text(app)
        assert HeadMap.UNPLACED_HEAD in text, text
        assert any(line.rstrip().endswith("▏E61") for line in text.splitlines()), text  # the map's own line
        mid_col = (hm.size.width - 1) / 2.0
        centre_row = (hm.size.height - 3) / 2.0 + 0.5  # the last two rows list the unplaced
        left = [n for n, p in positions.items() if p[0] < -30.0]
        right = [n for n, p in positions.items() if p[0] > 30.0]
        front = [n for n, p in positions.items() if p[1] > 60.0]
        back = [n for n, p in positions.items() if p[1] < -40.0]
        assert min(map(len, (left, right, front, back))) >= 8  # the test has something to judge
        # Left hemisphere by the digitised x (MNE head frame) → drawn left of the midline.
        assert all(hm.drawn[n][0] < mid_col for n in left), {n: hm.drawn[n] for n in left}
        assert all(hm.drawn[n][0] > mid_col for n in right), {n: hm.drawn[n] for n in right}
        # Nose up: frontal electrodes above the centre, posterior ones below.
        assert all(hm.drawn[n][1] < centre_row for n in front)
        assert all(hm.drawn[n][1] > centre_row for n in back)
        # Oz, placed by its name, sits at the back on the midline.
        assert hm.drawn["Oz"][1] > centre_row and abs(hm.drawn["Oz"][0] - mid_col) <= 2
