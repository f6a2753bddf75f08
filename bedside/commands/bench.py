"""``bedside bench``: how fast the quality engine is, how soon it reacts, how flat its memory.

Prints, for 21/64/128/256 channels × 256/512/1024/2048 Hz: engine_ms, floor_ms,
naive_ms, reference_ms (MNE-Python, when installed), the ratios engine/floor,
naive/engine, reference/engine and core_share; then fault → verdict latency per
fault kind on the simulator; then RSS over a simulated hour (``--quick``: ten
simulated minutes, fewer repetitions, MNE only at the two corner sizes); then the
time for the app to apply one frame at 256 channels and refresh, headless
(see ui_frame).

Measurements run in a child process with one BLAS thread (OPENBLAS_NUM_THREADS=1
and friends), so every figure is a share of one core. JSON (``--format json``):
``{"machine": {...}, "speed": [rows with channels, rate_hz, engine_ms, engine_mean_ms, floor_ms,
naive_ms, reference_ms, engine/floor, naive/engine, reference/engine, core_share],
"latency": [...], "memory": {...}, "ui": {channels, size, frames, ui_frame_ms,
ui_frame_cpu_ms, handler_ms, max_ms, idle_settle_ms, settle} or null, "targets": {...}}``.
"""

from __future__ import annotations

import argparse
import json
import os
import platform
import subprocess
import sys
import tempfile
from pathlib import Path
from typing import Any

from bedside.commands._common import positive_float
from bedside.errors import BedsideError

NAME = "bench"
ORDER = 90
FORMATS = ("table", "json")
_THREAD_VARS = ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS")
_CHILD_FLAG = "BEDSIDE_BENCH_CHILD"


def register(sub: argparse._SubParsersAction) -> None:  # type: ignore[type-arg]
    p = sub.add_parser(
        NAME,
        help="measure the quality engine's speed, latency and memory, and the UI frame time",
        description="Benchmark the live quality checks: time per update against the "
        "least possible work, a naive full recompute and MNE-Python; fault-to-verdict "
        "latency on the simulator; memory over a simulated hour; the time to apply one frame "
        "at 256 channels in the app, headless. --quick finishes in "
        "well under a minute; the full run takes a few minutes.",
    )
    p.add_argument("--quick", action="store_true", help="fewer repetitions, ten simulated minutes")
    p.add_argument("--soak", action="store_true",
                   help="instead: a day of a 32-channel recording (faults coming and going) through the "
                   "setup log's recorder and journal, accelerated: autosave time in the first and last "
                   "hour, memory growth, log size (about two minutes)")
    p.add_argument("--hours", metavar="H", type=positive_float("--hours"), default=24.0,
                   help="with --soak: simulated hours (default 24, at least 2)")
    p.add_argument("--format", choices=FORMATS, default="table", help="table (default) or json")
    p.set_defaults(func=run)


def machine() -> dict[str, Any]:
    model = ""
    try:
        for line in Path("/proc/cpuinfo").read_text(encoding="utf-8").splitlines():
            if line.startswith("model name"):
                model = line.split(":", 1)[1].strip()
                break
    except OSError:
        model = platform.processor()
    return {"cpu": model or "unknown", "cores": os.cpu_count(), "python": platform.python_version(),
            "platform": platform.platform(), "blas_threads": os.environ.get("OPENBLAS_NUM_THREADS")}


UI_CHANNELS = 256
UI_SIZE = (160, 60)


def ui_frame(quick: bool, n_channels: int = UI_CHANNELS, size: tuple[int, int] = UI_SIZE) -> dict[str, Any]:
    """Time to apply one QualityFrame to the app and refresh the screen, headless.

    The real app (make_app, Watch view) runs under Textual's headless test driver at
    ``size``; frames come from the real engine at ``n_channels`` (benchmark data with
    faults that come and go, bedside.bench.engine.engine_frames) and are handed
    to the app's own frame handler (what a FrameArrived message runs), then the app
    is left to settle: every widget handles what the frame posted, then the screen's
    update runs (layout when needed, render, repaint to the driver), twice over, so
    whatever the first update posted is handled too. Per frame: wall time of handler +
    settle, the thread's CPU time of the same, and the handler alone; and, for scale,
    one more settle with no new frame (what the harness itself costs). The head map
    gets a sunflower layout for the invented names E1…En. Medians over the frames.

    The settle is what ``Pilot.pause()`` does minus its wait for the process to go
    idle, which sleeps at least 1/50 s each time (textual._wait.SLEEP_GRANULARITY):
    that sleep is the test driver's, not the app's work. For comparison the same frames
    are run a second time with ``Pilot.pause()`` as the settle: ``pause_frame_ms``,
    ``pause_frame_cpu_ms`` and ``pause_idle_settle_ms`` (its settle with no new frame).
    """
    import asyncio
    import math
    import statistics
    import time

    from bedside.bench.engine import engine_frames
    from bedside.ui.app import make_app
    from bedside.ui.config import AppConfig
    from bedside.ui.feed import FrameArrived

    n_frames = 12 if quick else 40
    frames = engine_frames(n_channels, 256.0, n_frames + 2)
    names = [ch.name for ch in frames[0].channels]
    n = len(names)
    points = {
        nm: (0.95 * math.sqrt((i + 0.5) / n) * math.cos(i * 2.39996),
             0.95 * math.sqrt((i + 0.5) / n) * math.sin(i * 2.39996))
        for i, nm in enumerate(names)
    }
    figures: dict[str, dict[str, list[float]]] = {
        way: {"wall": [], "cpu": [], "handler": [], "idle": []} for way in ("settle", "pause")
    }

    settled_by: set[str] = set()

    async def drive() -> None:
        app = make_app(AppConfig(discover=False, start_view="watch"))
        async with app.run_test(size=size) as pilot:

            async def settle() -> None:
                # Textual 8.2's own way to let the screen lay out and paint without the
                # driver's sleep (private members of the test driver, so looked up: a
                # later 8.x without them measures with Pilot.pause() instead).
                wait_screen = getattr(pilot, "_wait_for_screen", None)
                paint = getattr(app.screen, "_on_timer_update", None)
                if wait_screen is None or paint is None:
                    settled_by.add("pause")
                    await pilot.pause()
                    return
                settled_by.add("direct")
                for _ in range(2):
                    await wait_screen()
                    paint()

            await pilot.pause()
            app.views["watch"].set_points(points)
            await pilot.pause()
            for way, wait in (("settle", settle), ("pause", pilot.pause)):
                out = figures[way]
                for k, frame in enumerate(frames):
                    c0, t0 = time.thread_time(), time.perf_counter()
                    app.on_frame_arrived(FrameArrived(frame))
                    t1 = time.perf_counter()
                    await wait()
                    if k >= 2:  # the first two frames build the table (first pass)
                        out["wall"].append(time.perf_counter() - t0)
                        out["cpu"].append(time.thread_time() - c0)
                        out["handler"].append(t1 - t0)
                        t2 = time.perf_counter()
                        await wait()  # settling with no new frame: the harness's own cost
                        out["idle"].append(time.perf_counter() - t2)
                await pilot.pause()

    asyncio.run(drive())
    main, paused = figures["settle"], figures["pause"]
    return {
        "channels": n_channels, "size": list(size), "frames": len(main["wall"]),
        "settle": "+".join(sorted(settled_by)),
        "ui_frame_ms": statistics.median(main["wall"]) * 1e3,
        "ui_frame_cpu_ms": statistics.median(main["cpu"]) * 1e3,
        "handler_ms": statistics.median(main["handler"]) * 1e3,
        "max_ms": max(main["wall"]) * 1e3,
        "idle_settle_ms": statistics.median(main["idle"]) * 1e3,
        "pause_frame_ms": statistics.median(paused["wall"]) * 1e3,
        "pause_frame_cpu_ms": statistics.median(paused["cpu"]) * 1e3,
        "pause_max_ms": max(paused["wall"]) * 1e3,
        "pause_idle_settle_ms": statistics.median(paused["idle"]) * 1e3,
    }


def measure(quick: bool) -> dict[str, Any]:
    import numpy as np

    from bedside.bench.endurance import memory_run
    from bedside.bench.engine import (
        TARGETS,
        fault_latency,
        latency_scenario_path,
        speed_table,
        ward_share,
    )

    speed = speed_table(quick=quick)
    with tempfile.TemporaryDirectory() as tmp:
        latency = fault_latency(latency_scenario_path(Path(tmp)))
    memory = memory_run(600.0 if quick else 3600.0)
    ward = ward_share(seconds=10.0 if quick else 30.0)
    try:
        ui: dict[str, Any] | None = ui_frame(quick)
    except ImportError as exc:  # the UI's packages are not installed: the rest still counts
        print(f"WARNING: UI frame not measured: {exc}", file=sys.stderr)
        ui = None
    import scipy

    return {"machine": {**machine(), "numpy": np.__version__, "scipy": scipy.__version__},
            "quick": quick, "speed": speed, "latency": latency, "memory": memory, "ui": ui, "ward": ward,
            "targets": TARGETS}


def _f(v: object, spec: str) -> str:
    return "-" if v is None else format(v, spec)


def as_table(report: dict[str, Any]) -> str:
    m = report["machine"]
    lines = [f"machine: {m['cpu']}, {m['cores']} cores, Python {m['python']}, one BLAS thread",
             "", "speed (one update of new samples; ms; engine: median, mean: its amortised mean)"]
    head = f"{'ch':>4} {'Hz':>5} {'engine':>8} {'mean':>7} {'floor':>7} {'naive':>8} {'MNE':>9} {'eng/floor':>9} {'naive/eng':>9} {'MNE/eng':>8} {'core_share':>10}"
    lines.append(head)
    for r in report["speed"]:
        lines.append(
            f"{r['channels']:>4} {r['rate_hz']:>5.0f} {r['engine_ms']:>8.2f} {_f(r.get('engine_mean_ms'), '7.2f'):>7} "
            f"{r['floor_ms']:>7.2f} "
            f"{r['naive_ms']:>8.2f} {_f(r['reference_ms'], '9.1f'):>9} {_f(r['engine/floor'], '9.1f'):>9} "
            f"{_f(r['naive/engine'], '9.1f'):>9} {_f(r['reference/engine'], '8.0f'):>8} {r['core_share']:>10.4f}"
        )
    t = report["targets"]
    big = next((r for r in report["speed"] if r["channels"] == 256 and r["rate_hz"] == 2048.0), None)
    if big:
        lines.append(
            f"targets at 256 ch × 2048 Hz: core_share {big['core_share']:.3f} (≤ {t['core_share_256ch_2048hz']}), "
            f"engine/floor {big['engine/floor']:.1f} (≤ {t['engine_over_floor']}), "
            f"naive/engine {big['naive/engine']:.1f} (≥ {t['naive_over_engine_256ch']})"
        )
    fast = next((r for r in report["speed"] if r["channels"] == 64 and r["rate_hz"] == 16384.0), None)
    if fast:
        lines.append(
            f"target at 64 ch × 16384 Hz: core_share {fast['core_share']:.3f} (≤ {t['core_share_64ch_16384hz']})"
        )
    lines += ["", "latency on the simulator (s; onset → non-good, end → good)",
              f"{'kind':<11} {'electrodes':<10} {'detect':>7} {'clear':>7}"]
    for r in report["latency"]:
        lines.append(f"{r['kind']:<11} {'-'.join(r['electrodes']):<10} {_f(r['detect_s'], '7.2f'):>7} {_f(r['clear_s'], '7.2f'):>7}")
    lines.append(f"targets: ≤ {t['latency_fast_s']} s line noise/flat/pops, ≤ {t['latency_slow_s']} s drift/bridges, "
                 f"clear ≤ {t['clear_s']} s")
    mem = report["memory"]
    lines += ["", f"memory: {mem['simulated_s'] / 60:.0f} simulated minutes of {mem['scenario']} "
              f"({mem['channels']} ch @ {mem['rate_hz']:.0f} Hz) in {mem['wall_s']:.1f} s "
              f"({mem['speedup']:.0f}× real time): RSS {mem['rss_after_60s_mb']:.1f} → {mem['rss_end_mb']:.1f} MB "
              f"(growth {mem['rss_growth_mb']:+.1f} MB; target ≤ {t['rss_growth_mb']} MB)"]
    ward = report.get("ward")
    if ward:
        lines += ["", f"ward: {ward['streams']} beds of {ward['channels']} ch @ {ward['rate_hz']:.0f} Hz in one "
                  f"process, checks and summaries: core_share {ward['core_share']:.3f} "
                  f"(target ≤ {t.get('ward_core_share', 0.25)}; liblsl's pulling not included)"]
    ui = report.get("ui")
    if ui:
        lines += ["", f"UI: one frame applied and the screen refreshed, {ui['channels']} channels, headless "
                  f"{ui['size'][0]}×{ui['size'][1]}, median of {ui['frames']} frames: "
                  f"{ui['ui_frame_ms']:.1f} ms wall ({ui['ui_frame_cpu_ms']:.1f} ms CPU; handler alone "
                  f"{ui['handler_ms']:.1f} ms; max {ui['max_ms']:.0f} ms; settling with no new frame "
                  f"{ui.get('idle_settle_ms', float('nan')):.1f} ms); target ≤ {t['ui_frame_ms']} ms"]
        if "pause_frame_ms" in ui:
            lines += [f"    with Textual's Pilot.pause() instead: {ui['pause_frame_ms']:.1f} ms "
                      f"({ui.get('pause_idle_settle_ms', float('nan')):.1f} ms of it the test driver's idle wait)"]
    else:
        lines += ["", "UI: not measured (see the warning above)"]
    return "\n".join(lines)


SOAK_TARGETS = {"autosave_last_over_first": 1.5, "rss_growth_mb": 20.0, "log_mb_per_day": 50.0}


def soak_table(report: dict[str, Any]) -> str:
    s = report["soak"]
    ratio = (s["autosave_ms_last_h"] / s["autosave_ms_first_h"]) if s["autosave_ms_last_h"] else None
    t = SOAK_TARGETS
    return "\n".join([
        f"soak: {s['simulated_h']:g} simulated hours of {s['channels']} channels ({s['frames']} frames and "
        f"autosaves, one every 2 s) in {s['wall_s']:.0f} s",
        f"autosave, median: first hour {s['autosave_ms_first_h']:.2f} ms, last hour "
        f"{_f(s['autosave_ms_last_h'], '.2f')} ms (last/first {_f(ratio, '.2f')}; target ≤ {t['autosave_last_over_first']})",
        f"RSS growth after the first hour: {s['rss_growth_mb']:+.1f} MB (target ≤ {t['rss_growth_mb']} MB)",
        f"log: {s['log_mb']:.1f} MB per day while open (base + journal), {s['log_closed_mb']:.1f} MB per day "
        f"closed (target ≤ {t['log_mb_per_day']} MB per day)",
    ])


def run(args: argparse.Namespace) -> int:
    if args.soak and args.hours < 2.0:
        raise BedsideError(f"--hours {args.hours:g}: a soak needs at least 2 simulated hours (a first and a last)")
    if os.environ.get(_CHILD_FLAG) == "1":
        if args.soak:
            from bedside.bench.endurance import soak_run

            report = {"soak": soak_run(hours=args.hours), "targets": SOAK_TARGETS, "machine": machine()}
        else:
            report = measure(args.quick)
        print(json.dumps(report))
        return 0
    env = dict(os.environ, **{v: "1" for v in _THREAD_VARS}, **{_CHILD_FLAG: "1"})
    cmd = [sys.executable, "-m", "bedside", "bench", *(["--quick"] if args.quick else []),
           *(["--soak", "--hours", repr(args.hours)] if args.soak else [])]
    proc = subprocess.run(cmd, env=env, capture_output=True, text=True, check=False)
    lines = proc.stdout.strip().splitlines()
    if proc.returncode != 0 or not lines:
        last = (proc.stderr.strip().splitlines() or ["no output"])[-1]
        raise BedsideError(f"the benchmark did not finish (exit {proc.returncode}): {last}")
    for line in proc.stderr.splitlines():
        if line.startswith(("WARNING", "error")):
            print(line, file=sys.stderr)
    report = json.loads(lines[-1])
    table = soak_table(report) if args.soak else as_table(report)
    print(json.dumps(report, indent=2) if args.format == "json" else table)
    return 0
