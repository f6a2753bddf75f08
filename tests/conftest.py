"""Suite-wide setup. LSL discovery stays on this machine and liblsl stays quiet.

LSLAPICFG must be set before liblsl reads its configuration (on first use), so it
is set here, at import time of the root conftest, before any test module imports
pylsl. The Makefile sets it too.
"""

from __future__ import annotations

import os
import tempfile
from pathlib import Path

_CFG = Path(__file__).with_name("lsl_api.cfg")
os.environ.setdefault("LSLAPICFG", str(_CFG))
# Rescue copies of logs that could not be saved go under XDG_STATE_HOME: keep the
# suite's own (and its subprocesses') out of the user's home.
os.environ["XDG_STATE_HOME"] = tempfile.mkdtemp(prefix="bedside-test-state-")
# Hypothesis profiles: bounded time on a shared 2-core machine. Under CI (CI set, as
# .ci/run does) examples are derandomised — the same examples every run, so a
# submission never fails by chance — and no example database is kept; locally they
# explore at random. HYPOTHESIS_PROFILE picks one by name.
from hypothesis import HealthCheck, settings  # noqa: E402 - after the environment above

settings.register_profile(
    "bedside",
    max_examples=150,
    deadline=None,
    suppress_health_check=[HealthCheck.too_slow],
)
settings.register_profile("ci", settings.get_profile("bedside"), derandomize=True, database=None)
settings.load_profile(
    os.environ.get("HYPOTHESIS_PROFILE") or ("ci" if os.environ.get("CI") else "bedside")
)
