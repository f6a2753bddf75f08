"""Fault → verdict latency on the simulator, per fault kind (prints figures).

Run from the repository: ``.venv/bin/python -m bench.latency [scenario-or-yaml]``.
Without an argument it uses the built-in invented scenario with one fault of each
kind (bedside.bench.engine.LATENCY_SCENARIO). ``bedside bench`` prints the same.
"""

from __future__ import annotations

import sys
import tempfile
from pathlib import Path

from bedside.bench.engine import fault_latency, latency_scenario_path


def main(argv: list[str]) -> int:
    with tempfile.TemporaryDirectory() as tmp:
        target: str | Path = argv[0] if argv else latency_scenario_path(Path(tmp))
        rows = fault_latency(target)
    print(f"{'kind':<11} {'electrodes':<10} {'onset→verdict s':>16} {'end→good s':>11}")
    for r in rows:
        d = "never" if r["detect_s"] is None else f"{r['detect_s']:.2f}"
        c = "-" if r["end_s"] is None else ("never" if r["clear_s"] is None else f"{r['clear_s']:.2f}")
        print(f"{r['kind']:<11} {'-'.join(r['electrodes']):<10} {d:>16} {c:>11}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main(sys.argv[1:]))
