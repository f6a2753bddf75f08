"""``bedside watch`` (and plain ``bedside``): the terminal app — Measure, Watch, Log.

The app looks for EEG streams (pin one with --stream/--source-id/--host; a picker
opens when several are visible), shows per-electrode quality live, and keeps the
setup log (autosaved; q or Ctrl-C saves and leaves).
"""

from __future__ import annotations

import argparse
import contextlib
import logging
import os
import sys
from collections.abc import Iterator
from pathlib import Path
from typing import cast

from bedside.cautions import CAUTIONS
from bedside.commands._common import add_profile_option, add_stream_selection, positive_float

NAME = "watch"
ORDER = 30
VIEW_CHOICES = ("measure", "watch", "log")


def add_app_options(p: argparse.ArgumentParser) -> None:
    """Options shared by ``watch`` and ``demo``."""
    group = p.add_argument_group("setup log")
    group.add_argument(
        "--log", metavar="PATH", type=Path,
        help="the setup log file (YAML; default: bedside-logs/<subject or 'setup'>-<time>.yaml; "
        "an existing log is resumed)",
    )
    group.add_argument("--no-log", action="store_true", help="keep no setup log")
    group.add_argument("--technologist", metavar="INITIALS", default="", help="e.g. JMK")
    group.add_argument(
        "--subject", metavar="ID", default="",
        help="pseudonymous subject/study ID with a digit, e.g. W3-017 (never a name)",
    )
    view = p.add_argument_group("app")
    view.add_argument("--view", choices=VIEW_CHOICES, default=None, help="the view to open first")
    view.add_argument("--system", choices=("10-20", "10-10"), default="10-20",
                      help="electrode system for Measure (default 10-20)")
    view.add_argument("--names", choices=("modern", "classic"), default="modern",
                      help="T7/T8/P7/P8 (modern, default) or T3/T4/T5/T6 (classic)")
    view.add_argument("--unit", choices=("cm", "mm", "in"), default="cm",
                      help="unit of the tape measurements (default cm)")
    view.add_argument("--update-hz", metavar="HZ", type=positive_float("--update-hz"), default=4.0,
                      help="screen updates per second (default 4)")
    view.add_argument("--export-dir", metavar="DIR", type=Path, default=Path("."),
                      help="where the marking sheet is saved (default: here)")
    view.add_argument("--until-good", metavar="S", type=positive_float("--until-good"), default=10.0,
                      help="ready to record when every scalp electrode has been good for S "
                      "consecutive seconds (default 10; Watch counts down)")
    view.add_argument("--bell", action="store_true",
                      help="ring the terminal bell when ready is reached and when a new fault "
                      "appears (off by default; b on Watch toggles it)")
    add_profile_option(view)


def register(sub: argparse._SubParsersAction) -> None:  # type: ignore[type-arg]
    p = sub.add_parser(
        NAME,
        help="the terminal app: measure the head, watch electrode quality live, keep the log",
        description="Open the app. Measure: marking distances from three tape measurements. "
        "Watch: live quality per electrode from the amplifier's LSL stream. Log: initials, "
        "subject ID, notes, impedances, sign-off. Keys are shown at the bottom; F1 for help.",
        epilog=CAUTIONS,
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    add_stream_selection(p)
    add_app_options(p)
    p.set_defaults(func=run)


def default_log_path(subject: str) -> Path:
    from bedside.record.session import default_log_name

    return Path("bedside-logs") / default_log_name(subject)


def app_config(args: argparse.Namespace, *, stream_name: str | None = None, start_view: str = "watch"):  # type: ignore[no-untyped-def]
    """The AppConfig for these command-line options."""
    from bedside.checks.profiles import DEFAULT_PROFILE
    from bedside.config import CONFIG_DIR
    from bedside.ui.config import AppConfig, View

    log_path = None if getattr(args, "no_log", False) else (args.log or default_log_path(args.subject))
    configs = tuple(p for p in (CONFIG_DIR / "quality.yaml", CONFIG_DIR / "stream.yaml") if p.is_file())
    return AppConfig(
        system=args.system,
        names=args.names,
        unit=args.unit,
        stream_name=stream_name if stream_name is not None else getattr(args, "stream", None),
        source_id=getattr(args, "source_id", None),
        host=getattr(args, "host", None),
        wait_s=getattr(args, "wait", 3.0),
        log_path=log_path,
        discard_empty_log=log_path is not None and not args.log,
        rename_log_with_subject=log_path is not None and not args.log,
        technologist=args.technologist,
        subject_id=args.subject,
        config_paths=configs,
        start_view=cast("View", args.view or start_view),
        update_hz=args.update_hz,
        export_dir=args.export_dir,
        confirm_channels=True,
        ready_hold_s=args.until_good,
        bell=args.bell,
        profile=args.profile or DEFAULT_PROFILE,
    )


def lsl_log_file() -> Path:
    return Path("bedside-logs") / "liblsl.log"


def run_app(config) -> int:  # type: ignore[no-untyped-def]
    """Run the app in this terminal; liblsl is silenced first (it writes to fd 2)."""
    from bedside.checks.profiles import load_profile
    from bedside.record.ids import validate_initials, validate_subject_id
    from bedside.stream.lsl import prepare_lsl
    from bedside.ui.app import make_app

    # Bad initials, ID or profile: say so before the screen opens (exit 2), not inside it.
    validate_initials(config.technologist)
    validate_subject_id(config.subject_id)
    load_profile(config.profile)
    log_file = lsl_log_file()
    log_file.parent.mkdir(parents=True, exist_ok=True)
    prepare_lsl(log_to=log_file)
    app = make_app(config)
    with logs_off_the_screen(log_file.parent / "bedside.log"):
        result = app.run()
    outcome = getattr(app, "log_outcome", "")  # what became of the setup log, said after the screen
    if outcome:
        print(outcome, file=sys.stderr)
    if app.return_code not in (None, 0):
        return int(app.return_code)
    return int(result or 0)


@contextlib.contextmanager
def logs_off_the_screen(path: Path) -> Iterator[None]:
    """While the app draws on the terminal, log lines go to ``path`` (not stderr, which
    would tear the screen); errors still reach the technologist as notifications."""
    root = logging.getLogger()
    streams = [h for h in root.handlers if isinstance(h, logging.StreamHandler)
               and not isinstance(h, logging.FileHandler)]
    for h in streams:
        root.removeHandler(h)
    # Owner-only, like the setup log: log lines can name the subject's stream and files.
    os.close(os.open(path, os.O_WRONLY | os.O_CREAT | os.O_APPEND, 0o600))
    os.chmod(path, 0o600)
    file_handler = logging.FileHandler(path, encoding="utf-8")
    file_handler.setFormatter(logging.Formatter("%(asctime)s %(levelname)s %(name)s: %(message)s"))
    root.addHandler(file_handler)
    try:
        yield
    finally:
        root.removeHandler(file_handler)
        file_handler.close()
        for h in streams:
            root.addHandler(h)


def run(args: argparse.Namespace) -> int:
    return run_app(app_config(args))
