"""A tiny session for the durability tests: opens a SessionRecorder and feeds frames.

Usage: python session_child.py LOG_PATH
Prints "fed <n> <wall_time>" after each frame (flushed) so the parent knows what was
recorded before it kills this process. Ctrl-C (SIGINT) ends it the way the bedside CLI
does: the with-block closes the session (a last save), then exit code 130.
"""

from __future__ import annotations

import sys
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent))

from record_factories import make_channels, make_frame, make_identity  # noqa: E402

from bedside.checks.types import Level  # noqa: E402
from bedside.record.session import SessionRecorder  # noqa: E402


def main() -> int:
    path = Path(sys.argv[1])
    try:
        with SessionRecorder.open(path, technologist="JMK", subject_id="W3-017") as rec:
            rec.set_stream(make_identity(), make_channels())
            print("ready", flush=True)
            n = 0
            while True:
                n += 1
                now = time.time()
                # Cz flips every frame, so every frame adds one timeline entry.
                rec.on_frame(make_frame(now, {"Cz": Level.GOOD if n % 2 else Level.BAD}))
                print(f"fed {n} {now:.3f}", flush=True)
                time.sleep(0.05)
    except KeyboardInterrupt:
        print("interrupted", flush=True)
        return 130


if __name__ == "__main__":
    raise SystemExit(main())
