"""How much CPU the simulator costs: ``python -m bedside.sim.bench [SCENARIO ...]``.

Prints figures; it asserts nothing (speed targets are read from benchmarks, never
timed unit tests). Target: 64 channels at 1000 Hz well under 5 % of one core.

* generate: CPU time to make 60 s of data in publisher-sized chunks (20 ms), as a
  percentage of one core when run in real time;
* publish: process CPU while a Publisher pushes in real time for a few seconds
  (generation + pylsl), measured with time.process_time (all threads).
"""

from __future__ import annotations

import argparse
import time
import uuid

from bedside.sim.generator import SignalGenerator
from bedside.sim.publish import Publisher
from bedside.sim.scenario import load_scenario


def bench_generate(name: str, seconds: float = 60.0, chunk_s: float = 0.02) -> float:
    """CPU % of one core to generate ``name`` in real time, in chunks of ``chunk_s``."""
    scenario = load_scenario(name)
    gen = SignalGenerator(scenario)
    n = int(seconds * scenario.rate_hz)
    step = max(1, int(chunk_s * scenario.rate_hz))
    t0 = time.process_time()
    for start in range(0, n, step):
        gen.generate(start, min(step, n - start))
    return 100.0 * (time.process_time() - t0) / seconds


def bench_publish(name: str, seconds: float = 8.0) -> float:
    """CPU % of one core for this process while publishing ``name`` in real time."""
    pub = Publisher(name, name=f"bedside-bench-{uuid.uuid4().hex[:6]}", duration_s=seconds + 1.0)
    pub.start()
    time.sleep(1.0)  # leave out opening the outlet and the first noise segments
    t0 = time.process_time()
    w0 = time.monotonic()
    pub.wait(seconds + 5)
    cpu = time.process_time() - t0
    wall = time.monotonic() - w0
    pub.stop()
    return 100.0 * cpu / wall


def main() -> None:
    p = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    p.add_argument("scenarios", nargs="*", default=["cap64_1010", "ward_demo"])
    p.add_argument("--no-lsl", action="store_true", help="generation only")
    args = p.parse_args()
    for name in args.scenarios:
        s = load_scenario(name)
        line = f"{name}: {s.n_channels} ch at {s.rate_hz:g} Hz — generate {bench_generate(name):.2f} % of a core"
        if not args.no_lsl:
            line += f", publish (generate + LSL) {bench_publish(name):.2f} %"
        print(line, flush=True)


if __name__ == "__main__":
    main()
