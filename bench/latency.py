"""Fault → verdict latency on the simulator, per fault kind (prints figures).

For each scripted fault: seconds from its onset to the first non-good verdict on
its electrode(s) (for REF/GND: to the reference/ground finding), and from its end
to good again. Run: ``python -m bench.latency [scenario-or-yaml]``; without an
argument it uses a built-in invented scenario with one fault of each kind,
separated in time. Time is the engine's sample clock (runs faster than real time).
"""

from __future__ import annotations

import sys
import tempfile
from pathlib import Path

import numpy as np

from bench.simrun import run_scenario

#: Which per-check verdict shows each simulated fault kind.
KIND_CHECKS = {
    "line_noise": ("line_noise",),
    "flat": ("flat",),
    "drift": ("drift", "amplitude"),
    "bridge": ("bridging",),
    "pop": ("pops",),
    "clipping": ("clipping", "flat"),
    "muscle": ("muscle",),
}

LATENCY_SCENARIO = """\
# Invented scenario for latency measurement: one fault of each kind, apart in time.
ward: Test Bay (invented)
bed: "Bench"
patient: "Nobody N-00 (pseudonym, invented)"
note: "Invented data for timing the checks."
stream_name: bedside-latency
channels: [Fp1, Fp2, F7, F3, Fz, F4, F8, T7, C3, Cz, C4, T8, P7, P3, Pz, P4, P8, O1, O2, ECG]
rate_hz: 256
duration_s: 200
loop: false
seed: 4242
mains_hz: 50
faults:
  - {electrode: T7, kind: line_noise, start_s: 20, end_s: 50}
  - {electrode: P8, kind: flat, start_s: 30, end_s: 60}
  - {electrode: F8, kind: drift, start_s: 40, end_s: 90}
  - {electrode: [C3, Cz], kind: bridge, start_s: 60, end_s: 100}
  - {electrode: C4, kind: pop, start_s: 70, end_s: 110, interval_s: 3}
  - {electrode: T8, kind: clipping, start_s: 100, end_s: 130}
  - {electrode: F7, kind: muscle, start_s: 115, end_s: 140}
  - {electrode: REF, kind: reference, start_s: 150, end_s: 180}
"""


def latency_scenario_path(folder: Path) -> Path:
    p = folder / "latency.yaml"
    p.write_text(LATENCY_SCENARIO, encoding="utf-8")
    return p


def measure(scenario: str | Path, seconds: float | None = None) -> list[dict[str, object]]:
    """One row per fault: kind, electrodes, onset/end (s), detect_s, clear_s (None if never)."""
    from bedside.sim.scenario import load_scenario

    sc = load_scenario(scenario)
    total = seconds if seconds is not None else float(sc.duration_s)
    tl = run_scenario(str(scenario), total)
    t = tl.times_s
    rows = []
    for fault in sc.faults:
        names = fault.electrodes
        if names[0] in ("REF", "GND"):
            hit = np.array([any(k in ("reference", "ground") for k, _e, _l in fs) for fs in tl.findings])
        else:
            hit = np.zeros(len(t), dtype=bool)
            for n in names:
                hit |= np.array([lv in ("check", "bad") for lv in tl.levels[n]])
        end = fault.end_s if fault.end_s is not None else None
        on = (t >= fault.start_s) & ((t < end) if end is not None else True)
        detect = None
        if (on & hit).any():
            detect = float(t[on & hit][0] - fault.start_s)
        clear = None
        if end is not None:
            after = (t >= end) & ~hit
            if after.any():
                clear = float(t[after][0] - end)
        rows.append({
            "kind": fault.kind, "electrodes": list(names), "start_s": fault.start_s,
            "end_s": end, "detect_s": detect, "clear_s": clear,
        })
    return rows


def main(argv: list[str]) -> int:
    with tempfile.TemporaryDirectory() as tmp:
        target: str | Path = argv[0] if argv else latency_scenario_path(Path(tmp))
        rows = measure(target)
    print(f"{'kind':<11} {'electrodes':<10} {'onset→verdict s':>16} {'end→good s':>11}")
    for r in rows:
        d = "never" if r["detect_s"] is None else f"{r['detect_s']:.2f}"
        c = "-" if r["end_s"] is None else ("never" if r["clear_s"] is None else f"{r['clear_s']:.2f}")
        print(f"{r['kind']:<11} {'-'.join(r['electrodes']):<10} {d:>16} {c:>11}")  # type: ignore[arg-type]
    return 0


if __name__ == "__main__":
    raise SystemExit(main(sys.argv[1:]))
