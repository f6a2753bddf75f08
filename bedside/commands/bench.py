"""``bedside bench``: how fast the quality engine is, how soon it reacts, how flat its memory.

Prints, for 21/64/128/256 channels × 256/512/1024/2048 Hz: engine_ms, floor_ms,
naive_ms, reference_ms (MNE-Python, when installed), the ratios engine/floor,
naive/engine, reference/engine and core_share; then fault → verdict latency per
fault kind on the simulator; then RSS over a simulated hour (``--quick``: ten
simulated minutes, fewer repetitions, MNE only at the two corner sizes).

Measurements run in a child process with one BLAS thread (OPENBLAS_NUM_THREADS=1
and friends), so every figure is a share of one core. JSON (``--format json``):
``{"machine": {...}, "speed": [rows with channels, rate_hz, engine_ms, floor_ms,
naive_ms, reference_ms, engine/floor, naive/engine, reference/engine, core_share],
"latency": [...], "memory": {...}, "targets": {...}}``.
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

from bedside.errors import BedsideError

NAME = "bench"
ORDER = 90
FORMATS = ("table", "json")
_THREAD_VARS = ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS")
_CHILD_FLAG = "BEDSIDE_BENCH_CHILD"


def register(sub: argparse._SubParsersAction) -> None:  # type: ignore[type-arg]
    p = sub.add_parser(
        NAME,
        help="measure the quality engine's speed, latency and memory",
        description="Benchmark the live quality checks: time per update against the "
        "least possible work, a naive full recompute and MNE-Python; fault-to-verdict "
        "latency on the simulator; memory over a simulated hour. --quick finishes in "
        "well under a minute; the full run takes a few minutes.",
    )
    p.add_argument("--quick", action="store_true", help="fewer repetitions, ten simulated minutes")
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


def measure(quick: bool) -> dict[str, Any]:
    import numpy as np

    from bedside.checks.benchmark import (
        TARGETS,
        fault_latency,
        latency_scenario_path,
        memory_run,
        speed_table,
    )

    speed = speed_table(quick=quick)
    with tempfile.TemporaryDirectory() as tmp:
        latency = fault_latency(latency_scenario_path(Path(tmp)))
    memory = memory_run(600.0 if quick else 3600.0)
    import scipy

    return {"machine": {**machine(), "numpy": np.__version__, "scipy": scipy.__version__},
            "quick": quick, "speed": speed, "latency": latency, "memory": memory, "targets": TARGETS}


def _f(v: object, spec: str) -> str:
    return "-" if v is None else format(v, spec)


def as_table(report: dict[str, Any]) -> str:
    m = report["machine"]
    lines = [f"machine: {m['cpu']}, {m['cores']} cores, Python {m['python']}, one BLAS thread",
             "", "speed (one update of new samples; ms)"]
    head = f"{'ch':>4} {'Hz':>5} {'engine':>8} {'floor':>7} {'naive':>8} {'MNE':>9} {'eng/floor':>9} {'naive/eng':>9} {'MNE/eng':>8} {'core_share':>10}"
    lines.append(head)
    for r in report["speed"]:
        lines.append(
            f"{r['channels']:>4} {r['rate_hz']:>5.0f} {r['engine_ms']:>8.2f} {r['floor_ms']:>7.2f} "
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
    return "\n".join(lines)


def run(args: argparse.Namespace) -> int:
    if os.environ.get(_CHILD_FLAG) == "1":
        report = measure(args.quick)
        print(json.dumps(report))
        return 0
    env = dict(os.environ, **{v: "1" for v in _THREAD_VARS}, **{_CHILD_FLAG: "1"})
    cmd = [sys.executable, "-m", "bedside", "bench", *(["--quick"] if args.quick else [])]
    proc = subprocess.run(cmd, env=env, capture_output=True, text=True, check=False)
    lines = proc.stdout.strip().splitlines()
    if proc.returncode != 0 or not lines:
        last = (proc.stderr.strip().splitlines() or ["no output"])[-1]
        raise BedsideError(f"the benchmark did not finish (exit {proc.returncode}): {last}")
    for line in proc.stderr.splitlines():
        if line.startswith(("WARNING", "error")):
            print(line, file=sys.stderr)
    report = json.loads(lines[-1])
    print(json.dumps(report, indent=2) if args.format == "json" else as_table(report))
    return 0
