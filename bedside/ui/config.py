"""What the app is started with (from the command line or a test)."""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path
from typing import Literal

View = Literal["measure", "watch", "log"]
VIEWS: tuple[View, ...] = ("measure", "watch", "log")


@dataclass(frozen=True)
class AppConfig:
    """Start-up choices for the app.

    stream_name / source_id / host: pin a stream (as ``--stream/--source-id/--host``);
    wait_s: how long to look for streams. log_path: the setup log (None: no log is
    kept, e.g. in snapshot tests). update_hz: the monitor's rate (frames per second).
    trace_s: seconds of the selected channel shown as a trace. stale_after_s: if no
    frame arrives for this long the UI itself shows "no data" (a stalled monitor
    never leaves old colours on screen as if live). confirm_channels: when a stream
    connects whose channels were not confirmed before (for its source_id), open the
    channels screen on Watch so the technologist confirms or changes what bedside
    inferred (``bedside watch`` and ``bedside demo`` turn it on; off by default so an
    embedding or a test sees Watch as it is). ready_hold_s: the start gate's hold —
    every scalp electrode good for this many consecutive seconds is "ready to record"
    (Watch counts down; ``--until-good``). bell: ring the terminal bell when ready is
    reached and when a new fault appears (``--bell``; ``b`` on Watch toggles it).
    page_s: the page of traces' timebase (seconds across the screen); page_uv_per_row:
    its starting sensitivity (µV per text row; ``+``/``-`` change it on the page).
    profile: the department profile (configs/profiles/<name>.yaml: thresholds,
    impedance limit, montage, re-check interval; ``--profile``; ``d`` on Watch picks).
    """

    system: str = "10-20"
    names: str = "modern"
    unit: str = "cm"
    stream_name: str | None = None
    source_id: str | None = None
    host: str | None = None
    wait_s: float = 3.0
    log_path: Path | None = None
    #: The log was named by bedside (no --log): if nothing is recorded it is not kept.
    discard_empty_log: bool = False
    #: The log's name was made by bedside from the subject ID (no --log): when the ID
    #: changes in the app the file is renamed to follow it (DEMO-001-… → W3-017-…).
    rename_log_with_subject: bool = False
    technologist: str = ""
    subject_id: str = ""
    config_paths: tuple[Path, ...] = field(default_factory=tuple)
    start_view: View = "watch"
    update_hz: float = 4.0
    trace_s: float = 2.0
    #: Ours: a 10-s page, as a screen of EEG is usually read (common practice), and
    #: 50 µV per row, so adult background activity (10–100 µV, from memory) mostly fits.
    page_s: float = 10.0
    page_uv_per_row: float = 50.0
    stale_after_s: float = 2.5
    discover: bool = True
    confirm_channels: bool = False
    ready_hold_s: float = 10.0
    #: Open on the ward (``bedside ward``): every visible stream, one line per bed; a bed
    #: opens in Watch, ``w`` comes back. No stream is looked for or pinned by itself.
    ward: bool = False
    bell: bool = False
    profile: str = "adult"
    export_dir: Path = field(default_factory=Path.cwd)
    title: str = "bedside"
