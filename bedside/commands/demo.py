"""``bedside demo``: the invented ward's simulated stream, published here, shown in the app.

The default scenario is published on LSL in this process (a unique stream name, so a
second demo on the same network is never mixed up with this one) and the app opens on
it. Nothing here touches a patient: the data and the ward are invented.
"""

from __future__ import annotations

import argparse
import uuid

from bedside.cautions import CAUTIONS
from bedside.commands._common import MIN_SPEED, positive_float
from bedside.commands.watch import add_app_options, app_config, run_app

NAME = "demo"
ORDER = 10


def register(sub: argparse._SubParsersAction) -> None:  # type: ignore[type-arg]
    p = sub.add_parser(
        NAME,
        help="try bedside on the simulated ward stream (no amplifier needed)",
        description="Publish the default demo scenario (an invented ward with scripted "
        "electrode faults) on LSL and open the app on it.",
        epilog=CAUTIONS,
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    p.add_argument("scenario", nargs="?", default=None, help="scenario name or file (default: the ward demo)")
    p.add_argument("--speed", metavar="X", type=positive_float("--speed", minimum=MIN_SPEED),
                   default=1.0, help=f"play the scenario X times faster (default 1; at least {MIN_SPEED})")
    add_app_options(p)
    p.set_defaults(func=run, no_log=False)


def run(args: argparse.Namespace) -> int:
    from bedside.checks.profiles import load_profile
    from bedside.commands.watch import lsl_log_file
    from bedside.sim.publish import run_in_background
    from bedside.sim.scenario import load_scenario
    from bedside.stream.lsl import prepare_lsl

    # The scenario and the profile first: a bad one is refused before anything is created on disk.
    scenario = load_scenario(args.scenario) if args.scenario else load_scenario()
    load_profile(args.profile)
    log_file = lsl_log_file()
    log_file.parent.mkdir(parents=True, exist_ok=True)
    prepare_lsl(log_to=log_file)
    name = f"bedside-demo-{uuid.uuid4().hex[:6]}"
    if not args.subject:
        args.subject = "DEMO-001"
    with run_in_background(scenario, name=name, speed=args.speed):
        return run_app(app_config(args, stream_name=name))
