"""Endurance benchmarks of ``bedside bench``: memory over a simulated hour, and the soak.

* :func:`memory_run` — RSS after the first simulated minute and at the end of a
  scenario run faster than real time (the engine alone);
* :func:`soak_run` — a simulated day through the real setup-log recorder and its
  journal (``bedside bench --soak``; bench/README.md gives its targets).
"""

from __future__ import annotations

import gc
import os
import time
from pathlib import Path
from typing import Any

import numpy as np

from bedside.bench.simrun import scenario_channels
from bedside.checks.engine import Engine
from bedside.checks.settings import QualitySettings, load_quality
from bedside.checks.types import QualityFrame


def rss_mb() -> float:
    """Resident set size of this process, MB (Linux /proc; psutil elsewhere)."""
    try:
        with open("/proc/self/statm", encoding="ascii") as fh:
            pages = int(fh.read().split()[1])
        return pages * os.sysconf("SC_PAGE_SIZE") / 2**20
    except (OSError, ValueError, IndexError):
        import psutil

        return float(psutil.Process().memory_info().rss / 2**20)


def memory_run(simulated_s: float = 3600.0, scenario: str = "ward_demo",
               settings: QualitySettings | None = None) -> dict[str, Any]:
    """RSS after the first simulated minute and at the end of ``simulated_s`` of the
    scenario, run as fast as the engine goes (the simulator's samples are made once
    per scenario loop and replayed, so the engine is what is measured)."""
    from bedside.sim.generator import SignalGenerator
    from bedside.sim.scenario import load_scenario

    settings = settings or load_quality()
    sc = load_scenario(scenario)
    rate = float(sc.rate_hz)
    engine = Engine(settings, scenario_channels(sc), rate)
    loop_n = int(round(float(sc.duration_s) * rate))
    data = SignalGenerator(sc).generate(0, loop_n)
    step = int(round(rate / settings.update_hz))
    total = int(round(simulated_s * rate))
    t_start = time.perf_counter()
    rss_first = None
    pos = 0
    samples: list[tuple[float, float]] = []
    while pos < total:
        a = pos % loop_n
        part = data[a : min(a + step, loop_n)]
        engine.push(part, (pos + np.arange(len(part))) / rate)
        engine.evaluate()
        pos += len(part)
        if rss_first is None and pos >= 60 * rate:
            gc.collect()
            rss_first = rss_mb()
        if pos % int(600 * rate) < len(part):
            samples.append((pos / rate, rss_mb()))
    gc.collect()
    rss_end = rss_mb()
    wall = time.perf_counter() - t_start
    return {
        "scenario": scenario, "channels": len(sc.channels), "rate_hz": rate,
        "simulated_s": simulated_s, "wall_s": wall, "speedup": simulated_s / wall if wall else None,
        "rss_after_60s_mb": rss_first, "rss_end_mb": rss_end,
        "rss_growth_mb": rss_end - (rss_first or rss_end), "rss_trace": samples,
    }


# ---------------------------------------------------------------- soak
def soak_run(hours: float = 24.0, n_channels: int = 32, seed: int = 11) -> dict[str, Any]:
    """A long recording through the real setup-log recorder and its journal, accelerated
    (no sleeping, a simulated clock): a frame and an autosave every 2 simulated seconds,
    ``n_channels`` electrodes whose faults come and go (each electrode, on average, a
    fault every 30 min lasting 1-10 min, some bad, some check), a note every hour, and
    the log folded into one file at the end. Reports the autosave's median time in the
    first and the last simulated hour, RSS growth after the first hour, and the log's
    size per simulated day (journal and base while open; the one file after closing)."""
    import tempfile

    from bedside.checks.types import ChannelQuality, Level
    from bedside.record.log import journal_path
    from bedside.record.session import SessionRecorder
    from bedside.stream.types import StreamHealth

    rng = np.random.default_rng(seed)
    names = [f"E{i + 1}" for i in range(n_channels)]
    step_s = 2.0
    n_frames = int(hours * 3600 / step_s)
    t0 = 1_796_000_000.0
    now = [t0]
    fault_until = np.zeros(n_channels)
    fault_level: list[Level] = [Level.GOOD] * n_channels
    p_start = step_s / 1800.0
    health = StreamHealth("live", 256.0, 256.0)
    first_h, last_h, rss_first = [], [], None
    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / "SOAK-001.yaml"
        rec = SessionRecorder.open(path, subject_id="SOAK-001", technologist="BNC", clock=lambda: now[0])
        wall0 = time.perf_counter()
        try:
            for k in range(n_frames):
                now[0] = t0 + k * step_s
                sim_s = k * step_s
                start = rng.random(n_channels) < p_start
                for i in np.flatnonzero(start & (fault_until <= sim_s)):
                    fault_until[i] = sim_s + rng.uniform(60.0, 600.0)
                    fault_level[i] = Level.BAD if rng.random() < 0.5 else Level.CHECK
                chans = tuple(
                    ChannelQuality(n, fault_level[i] if fault_until[i] > sim_s else Level.GOOD,
                                   {"rms_uv": float(20.0 + rng.normal()), "mains_uv": float(abs(rng.normal())),
                                    "drift_uv_per_s": float(rng.normal(0, 5))},
                                   ("a fault of the soak (invented)",) if fault_until[i] > sim_s else ())
                    for i, n in enumerate(names)
                )
                rec.on_frame(QualityFrame(now[0], now[0], chans, (), health, 4.0))
                if k and k % 1800 == 0:
                    rec.add_note(f"hour {k // 1800}: skin checked at the electrode sites (invented)")
                t = time.perf_counter()
                rec.save_now()
                dt = time.perf_counter() - t
                if sim_s < 3600.0:
                    first_h.append(dt)
                elif sim_s >= hours * 3600.0 - 3600.0:
                    last_h.append(dt)
                if rss_first is None and sim_s >= 3600.0:
                    rss_first = rss_mb()
            open_bytes = path.stat().st_size + journal_path(path).stat().st_size
            rss_end = rss_mb()
        finally:
            rec.close()
        closed_bytes = path.stat().st_size
        wall = time.perf_counter() - wall0
    per_day = 24.0 / hours
    return {
        "simulated_h": hours, "channels": n_channels, "frames": n_frames, "wall_s": wall,
        "autosave_ms_first_h": float(np.median(first_h) * 1e3),
        "autosave_ms_last_h": float(np.median(last_h) * 1e3) if last_h else None,
        "rss_growth_mb": rss_end - (rss_first or rss_end),
        "log_mb": open_bytes / 1e6 * per_day, "log_closed_mb": closed_bytes / 1e6 * per_day,
    }
