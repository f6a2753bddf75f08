"""Benchmark (prints figures; not a test): applying one frame at 256 channels.

Run: .venv/bin/python tests/ui/bench_watch_256.py
Measures, headless at 100×40: the time to apply a frame to the channel table (every
row's cells compared with its last ones, the changed rows marked for drawing; drawing
them is left to the screen update, which ``bedside bench`` times with the rest), to
render the head map, and the whole frame handler.
"""

from __future__ import annotations

import asyncio
import math
import statistics
import sys
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).parent))

import standins as si  # noqa: E402

from bedside.checks.types import ChannelQuality, Level, QualityFrame  # noqa: E402
from bedside.stream.types import ChannelInfo, StreamIdentity  # noqa: E402
from bedside.ui.app import make_app  # noqa: E402
from bedside.ui.config import AppConfig  # noqa: E402
from bedside.ui.widgets.channel_table import ChannelTable  # noqa: E402
from bedside.ui.widgets.head_map import HeadMap  # noqa: E402

N = 256


def frames(k: int) -> list[QualityFrame]:
    names = [f"E{i + 1}" for i in range(N)]
    out = []
    for j in range(k):
        chans = tuple(
            ChannelQuality(n, (Level.GOOD, Level.CHECK, Level.BAD)[(i + j) % 3],
                           {"mains_uv": float(i + j), "ptp_uv": 50.0, "drift_uv_per_s": 1.0,
                            "bridge_corr": 0.3, "pops": 0.0, "clip_fraction": 0.0,
                            "muscle_ratio": 0.1, "rms_uv": 12.0},
                           ("mains 12 dB over EEG band — re-seat",), True,
                           {"line_noise": "bad" if (i + j) % 3 == 2 else "good"})
            for i, n in enumerate(names))
        out.append(QualityFrame(float(j), float(j), chans, (), si.health(), 4.0))
    return out


class Quiet(si.FixedSource):
    def __init__(self) -> None:
        super().__init__()
        self._channels = tuple(ChannelInfo(f"E{i + 1}", f"E{i + 1}", "EEG", "microvolts", 1.0, True)
                               for i in range(N))
        self._identity = StreamIdentity("bench", "EEG", "bench-sid", "lab", N, 1000.0)

    def pull(self, timeout_s: float = 0.0):  # type: ignore[no-untyped-def]
        return None


def spiral(names):  # type: ignore[no-untyped-def]
    n = len(names)
    return {nm: (0.95 * math.sqrt((i + .5) / n) * math.cos(i * 2.39996),
                 0.95 * math.sqrt((i + .5) / n) * math.sin(i * 2.39996), 0.0) for i, nm in enumerate(names)}


async def main() -> None:
    fs = frames(60)
    services = si.services(frames=fs[:1], positions_for=spiral,
                           make_monitor=lambda *a: si.ScriptedMonitor(a[0], fs[:1], a[2], 0.2))
    app = make_app(AppConfig(discover=False), source=Quiet(), services=services)
    async with app.run_test(size=(100, 40)) as pilot:
        await pilot.pause(1.0)
        watch = app.views["watch"]
        table, hmap = watch.query_one(ChannelTable), watch.query_one(HeadMap)
        t_table, t_map, t_all = [], [], []
        for f in fs:
            p = app.tracker.update(f)
            t0 = time.perf_counter()
            table.show(f, True, p.time_to_good_s)
            t1 = time.perf_counter()
            hmap.render()
            t2 = time.perf_counter()
            watch.show_frame(f, p, live=True)
            t3 = time.perf_counter()
            await pilot.pause(0)
            t_table.append(t1 - t0)
            t_map.append(t2 - t1)
            t_all.append(t3 - t2)
        await pilot.pause(0.1)
    for label, xs in (("channel table, one frame (changed rows marked)", t_table),
                      ("head map render", t_map), ("whole frame handler", t_all)):
        print(f"{label:48s} median {1000 * statistics.median(xs):6.1f} ms  "
              f"max {1000 * max(xs):6.1f} ms  ({N} channels, {len(xs)} frames)")


if __name__ == "__main__":
    asyncio.run(main())
