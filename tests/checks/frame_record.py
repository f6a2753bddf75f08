"""Record every frame the engine makes over fixed inputs, and compare two recordings.

For work on the engine that must not change what it says (a refactor, a speed-up):
record before, change, record again, compare —

    .venv/bin/python tests/checks/frame_record.py record /tmp/before.pkl
    .venv/bin/python tests/checks/frame_record.py record /tmp/after.pkl
    .venv/bin/python tests/checks/frame_record.py compare /tmp/before.pkl /tmp/after.pkl

The inputs: the simulator's demo scenarios and the latency scenario (bedside.bench),
the benchmark's data with faults that come and go at several channel counts and rates
(an AC, a DC-coupled and an average-referenced engine among them), and the two real
recordings of tests/data, plain and with faults injected (a flat lead, a bridge, mains,
a drift, pops, samples that are not numbers). Levels, reasons, per-check levels,
findings and the order of every mapping must be equal; metrics and the frame's numbers
equal to 1e-9 relative (NaN equals NaN). A tool, not a test: it asserts nothing by itself.
"""

from __future__ import annotations

import math
import pickle
import sys
import tempfile
from pathlib import Path
from typing import Any

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parent.parent))  # real_eeg
sys.path.insert(0, str(Path(__file__).resolve().parent))  # real_run

SCENARIOS = ("clean", "bad_reference", "mains_60hz", "ward_demo", "cap64_1010")


def _frame(frame: Any) -> dict[str, Any]:
    info = {"mains_hz": frame.mains_hz, "data_s": frame.data_s}
    if frame.neighbour_pairs is not None:  # a frame with verdicts
        info["neighbour_pairs"] = frame.neighbour_pairs
    return {
        "time": frame.time,
        "window_s": frame.window_s,
        "info": info,
        "channels": [
            (ch.name, ch.level_key, tuple(ch.reasons), ch.is_scalp, list(ch.checks.items()),
             list(ch.metrics.items()))
            for ch in frame.channels
        ],
        "findings": [(f.kind, f.electrodes, f.level.key, f.reason) for f in frame.findings],
    }


def _feed(engine: Any, data: np.ndarray, rate_hz: float, every: int = 1) -> list[dict[str, Any]]:
    step = int(round(rate_hz / engine.settings.update_hz))
    out = []
    for k, pos in enumerate(range(0, data.shape[0] - step + 1, step)):
        engine.push(data[pos : pos + step], (pos + np.arange(step)) / rate_hz)
        frame = engine.evaluate()
        if k % every == 0:
            out.append(_frame(frame))
    return out


def _scenarios(record: dict[str, Any]) -> None:
    from bedside.bench.engine import latency_scenario_path
    from bedside.bench.simrun import run_scenario
    from bedside.checks.settings import load_quality

    settings = load_quality()
    with tempfile.TemporaryDirectory() as tmp:
        latency = str(latency_scenario_path(Path(tmp)))
        for name, seconds in [*((s, 40.0) for s in SCENARIOS), (latency, 190.0)]:
            frames: list[dict[str, Any]] = []
            run_scenario(name, seconds, settings, on_frame=lambda _t, f, out=frames: out.append(_frame(f)))
            record[f"scenario {Path(name).stem}"] = frames


def _bench_data(record: dict[str, Any]) -> None:
    from bedside.bench.engine import _eeg_like, _grid_neighbours
    from bedside.checks.engine import Engine
    from bedside.checks.settings import load_quality
    from bedside.stream.types import ChannelInfo

    settings = load_quality()
    for c, rate, opts in (
        (21, 256.0, {}), (64, 512.0, {"coupling": "dc", "amplifier_range_uv": 400.0}),
        (64, 2048.0, {"reference": "average"}), (128, 1024.0, {"coupling": "ac"}),
        (32, 16384.0, {}),
    ):
        rng = np.random.default_rng(c)
        names = [f"E{i + 1}" for i in range(c)]
        chans = [ChannelInfo(n, n, "EEG", "uV", 1.0, True) for n in names]
        chans[-1] = ChannelInfo("ECG", "ECG", "ECG", "uV", 1.0, False)
        engine = Engine(settings, chans, rate, neighbours=_grid_neighbours(names), **opts)
        seconds = 12.0 if rate > 4000 else 24.0
        n = int(seconds * rate)
        x = _eeg_like(rng, n, c, rate)
        t = np.arange(n) / rate
        x[:, 1] = x[:, 0] + rng.normal(0.0, 0.5, size=n)  # a bridge
        x[:, 5] += 60.0 * t  # drift
        x[:: int(rate * 1.5), 8] += 300.0  # pops
        x[n // 2 :, 11] = 0.0  # falls off half-way
        for k in range(12, min(c, 20)):
            x[:, k] += 30.0 * np.sin(2 * np.pi * 50.0 * t) * (t > (k - 12) * 0.8)  # mains, spreading
        x[int(0.6 * n) : int(0.6 * n) + 5, 3] = np.nan
        x[int(0.3 * n) : int(0.8 * n), :] += 200.0 * np.sin(2 * np.pi * 0.3 * t[int(0.3 * n) : int(0.8 * n), None])
        record[f"bench {c} ch {rate:g} Hz {opts}"] = _feed(engine, x, rate)


def _real(record: dict[str, Any]) -> None:
    import real_eeg
    from real_run import make_engine

    for rec in (real_eeg.eegmmidb(), real_eeg.mne_sample()):
        rate = rec.rate_hz
        n = min(rec.data_uv.shape[0], int(40 * rate))
        clean = rec.data_uv[:n].copy()
        record[f"real {rec.name}"] = _feed(make_engine(rec), clean, rate)
        x = clean.copy()
        eeg = [i for i, k in enumerate(rec.types) if k == "EEG"]
        t = np.arange(n) / rate
        x[int(10 * rate) :, eeg[2]] = 0.0
        x[int(5 * rate) :, eeg[5]] = x[int(5 * rate) :, eeg[4]] + 0.3 * np.sin(t[int(5 * rate) :])
        x[:, eeg[8]] += 25.0 * np.sin(2 * np.pi * 50.0 * t)
        x[:, eeg[10]] += 80.0 * t
        x[:: int(rate * 2), eeg[12]] += 400.0
        x[int(20 * rate) : int(20 * rate) + 3, eeg[14]] = np.inf
        x[int(25 * rate) : int(32 * rate), eeg] += (40.0 * np.sin(2 * np.pi * 50.0 * t[int(25 * rate) : int(32 * rate)]))[:, None]
        record[f"real {rec.name} faults"] = _feed(make_engine(rec, amplifier_range_uv=8000.0), x, rate)


def record_all() -> dict[str, Any]:
    record: dict[str, Any] = {}
    _scenarios(record)
    _bench_data(record)
    _real(record)
    return record


def _close(a: Any, b: Any, path: str, out: list[str]) -> None:
    if isinstance(a, float) or isinstance(b, float):
        if a is None or b is None:
            if a is not b:
                out.append(f"{path}: {a!r} != {b!r}")
            return
        fa, fb = float(a), float(b)
        if math.isnan(fa) and math.isnan(fb):
            return
        if fa == fb or abs(fa - fb) <= 1e-9 * max(abs(fa), abs(fb)):
            return
        out.append(f"{path}: {a!r} != {b!r}")
    elif isinstance(a, dict) and isinstance(b, dict):
        if list(a) != list(b):
            out.append(f"{path}: keys {list(a)} != {list(b)}")
            return
        for k in a:
            _close(a[k], b[k], f"{path}.{k}", out)
    elif isinstance(a, list | tuple) and isinstance(b, list | tuple):
        if len(a) != len(b):
            out.append(f"{path}: length {len(a)} != {len(b)}")
            return
        for i, (x, y) in enumerate(zip(a, b, strict=True)):
            _close(x, y, f"{path}[{i}]", out)
    elif a != b:
        out.append(f"{path}: {a!r} != {b!r}")


def compare(before: dict[str, Any], after: dict[str, Any]) -> list[str]:
    out: list[str] = []
    _close(before, after, "", out)
    return out


def main(argv: list[str]) -> int:
    if len(argv) == 2 and argv[0] == "record":
        rec = record_all()
        Path(argv[1]).write_bytes(pickle.dumps(rec))
        print(f"{sum(len(v) for v in rec.values())} frames in {len(rec)} runs → {argv[1]}")
        return 0
    if len(argv) == 3 and argv[0] == "compare":
        a, b = (pickle.loads(Path(p).read_bytes()) for p in argv[1:])
        diffs = compare(a, b)
        for d in diffs[:40]:
            print(d)
        print(f"{len(diffs)} differences over {sum(len(v) for v in a.values())} frames in {len(a)} runs")
        return 1 if diffs else 0
    print("usage: frame_record.py record OUT | compare BEFORE AFTER", file=sys.stderr)
    return 2


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
