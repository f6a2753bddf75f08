"""The one list of checks: the engine runs it, and everything else about a check is read from it.

Each check module declares its :class:`~bedside.checks.base.Check` (name, what it
reads, headline metric, shared-fault remedy, settings section, the simulator's fault
kinds it shows). :data:`CHECKS` lists them in the order a technologist reads them —
the order of the app's Watch columns. The engine runs the check that decides validity
(flat) first, then the rest in this order: that is the order of
``ChannelQuality.checks``, of a channel's metrics and of its reasons (worst first).
The correlation check reads the verdicts of :data:`~bedside.checks.correlation.SPEAKS_FIRST`,
so it comes after them.

Derived here, nowhere else: :data:`SHARED` (bedside.checks.reference),
:func:`fault_checks` (``bedside bench``'s latency and the simulator tests) and
:func:`headlines` (the app's ``HEADLINES``). Adding a check: DEVELOPERS.md, "how to
add a check".
"""

from __future__ import annotations

from bedside.checks import (
    artifacts,
    bridging,
    correlation,
    drift,
    flat,
    line_noise,
    placement_sanity,
)
from bedside.checks.base import Check, Shared

CHECKS: tuple[Check, ...] = (
    line_noise.ENTRY,
    flat.ENTRY,
    drift.ENTRY,
    bridging.ENTRY,
    artifacts.POPS,
    artifacts.CLIPPING,
    artifacts.MUSCLE,
    artifacts.AMPLITUDE,
    correlation.ENTRY,
    placement_sanity.ENTRY,
)

#: The check that decides which channels are fit for the others (run first).
VALIDITY: Check = next(c for c in CHECKS if c.sets_valid)

#: check name → how most channels sharing its fault is put on the reference or ground.
SHARED: dict[str, Shared] = {c.name: c.shared for c in CHECKS if c.shared is not None}


def fault_checks() -> dict[str, tuple[str, ...]]:
    """Simulator fault kind → the checks whose verdict shows it."""
    out: dict[str, tuple[str, ...]] = {}
    for c in CHECKS:
        for kind in c.faults:
            out[kind] = (*out.get(kind, ()), c.name)
    return out


def headlines() -> tuple[tuple[str, str], ...]:
    """(check name, metric key) of every check with a column in the app's Watch table."""
    return tuple((c.name, c.headline) for c in CHECKS if c.headline is not None)
