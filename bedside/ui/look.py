"""Looking for streams for the app, on a thread of its own (plain Python, no Textual).

:func:`run_look` polls a :class:`~bedside.ui.services.StreamLookLike` (liblsl's
continuous resolver; it never blocks) every ``LOOK_POLL_S`` and posts what it heard
as :class:`StreamsFound` / :class:`StreamsSeen`, each carrying the look's number so
the UI drops an older look's answers. :class:`bedside.ui.live.LiveSession` starts it.
"""

from __future__ import annotations

import threading
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from typing import Any

from bedside.errors import AmbiguousStream, BedsideError, IndistinguishableStreams, StreamNotFound
from bedside.stream.types import StreamIdentity
from bedside.ui.config import AppConfig
from bedside.ui.services import Services, StreamLookLike

#: How often a look for streams is asked what it heard (it never blocks), and for how
#: many polls an open picker keeps listening (10 min) before its list stays as it is.
LOOK_POLL_S = 0.2
LOOK_MAX_POLLS = 3000
#: The picker's title when the streams are equal in name, type, source_id and host.
TWINS_NOTE = ("These streams cannot be told apart (same name, type, source_id and host: two copies "
              "of one program?) — choose the outlet for this bed, or close a copy")


@dataclass(frozen=True)
class StreamsFound:
    """What look ``look`` found: one stream to pin, several to choose from (the picker), or
    a problem to say. still_looking: the look goes on and the picker will be updated."""

    look: int
    streams: list[StreamIdentity]
    ambiguous: bool
    pinned: StreamIdentity | None
    note: str
    still_looking: bool = False


@dataclass(frozen=True)
class StreamsSeen:
    """The open picker's list, updated as more streams answer (or the look settles)."""

    look: int
    streams: list[StreamIdentity]
    still_looking: bool


def run_look(services: Services, config: AppConfig, post: Callable[[Any], object], look: int,
             force_picker: bool, done: threading.Event) -> None:
    """The look thread: look for streams until there is an answer or ``done`` is set;
    every event carries ``look``."""
    try:
        finder = services.look_for_streams()
    except BedsideError as exc:
        post(StreamsFound(look, [], False, None, str(exc)))
        return
    try:
        _poll(services, config, post, finder, look, force_picker, done)
    except BedsideError as exc:
        post(StreamsFound(look, [], False, None, str(exc)))
    finally:
        finder.close()

def _poll(services: Services, cfg: AppConfig, post: Callable[[Any], object], finder: StreamLookLike,
          look: int, force_picker: bool, done: threading.Event) -> None:
    """Poll the look every LOOK_POLL_S until it has an answer: p opens the picker at
    the first poll, two candidates heard open it at once (they cannot become one),
    one stream is pinned only once the look has settled; while a picker shows its
    list, keep it up to date until the look ends."""
    shown: tuple[list[StreamIdentity], bool] | None = None  # what the picker lists
    polls = 0
    while not done.is_set() and polls < LOOK_MAX_POLLS:
        polls += 1
        settled = finder.settled(cfg.wait_s)
        found = finder.visible()
        if shown is not None:
            cands = found if force_picker else matching(cfg, found)
            if (cands, settled) != shown:
                shown = (cands, settled)
                post(StreamsSeen(look, cands, not settled))
        elif force_picker:
            shown = (found, settled)
            post(StreamsFound(look, found, True, None, "", not settled))
        else:
            try:
                pinned = services.select_stream(found, cfg.stream_name, cfg.source_id, cfg.host)
            except AmbiguousStream as exc:  # two candidates heard: it cannot become one
                cands = [c for c in exc.candidates if isinstance(c, StreamIdentity)] or found
                shown = (cands, settled)
                # The picker says it in the app's terms (the error's text names command options).
                note = TWINS_NOTE if isinstance(exc, IndistinguishableStreams) else ""
                post(StreamsFound(look, cands, True, None, note, not settled))
            except StreamNotFound as exc:
                if settled:
                    post(StreamsFound(look, found, False, None, f"{exc} — press r to look again"))
                    return
            else:
                if settled:  # one stream, and the look lasted long enough to say so
                    post(StreamsFound(look, found, False, pinned, ""))
                    return
        done.wait(LOOK_POLL_S)


def matching(cfg: AppConfig, found: Sequence[StreamIdentity]) -> list[StreamIdentity]:
    """The streams that fit what the app was started with (all when nothing was pinned)."""
    return [s for s in found
            if (cfg.stream_name is None or s.name == cfg.stream_name)
            and (cfg.source_id is None or s.source_id == cfg.source_id)
            and (cfg.host is None or s.hostname == cfg.host)]
