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
# A fixed hypothesis profile: bounded time on a shared 2-core machine.
try:
    from hypothesis import HealthCheck, settings

    settings.register_profile(
        "bedside",
        max_examples=150,
        deadline=None,
        suppress_health_check=[HealthCheck.too_slow],
    )
    settings.load_profile("bedside")
except ImportError:  # pragma: no cover - hypothesis is in the test extra
    pass
