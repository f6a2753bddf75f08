"""Find LSL streams and choose one — never by guessing.

Every command that reads a stream selects it the same way (``--stream NAME``,
``--source-id ID``, ``--host HOST``): :func:`select_stream` keeps the candidates that
match every given criterion; exactly one must remain. With several and nothing to tell
them apart it raises :class:`AmbiguousStream` listing them (two beds side by side both
publish EEG); with none, :class:`StreamNotFound` saying what was visible. Outlets
that are equal in name, type, source_id and host (two copies of one acquisition program
on a computer) are never collapsed into one: each outlet is listed (its uid and start
time tell them apart), and selecting among them is :class:`IndistinguishableStreams`
(the app offers its picker, which opens the chosen outlet by uid).
"""

from __future__ import annotations

import logging
import time
from collections.abc import Sequence
from typing import Any

from bedside.errors import (
    AmbiguousStream,
    IndistinguishableStreams,
    StreamFormatError,
    StreamNotFound,
)
from bedside.stream.lsl import pylsl
from bedside.stream.settings import StreamSettings, load_stream_settings
from bedside.stream.types import StreamIdentity

log = logging.getLogger("bedside")


def identity_of(info: Any) -> StreamIdentity:
    """A pylsl StreamInfo as a StreamIdentity (with the outlet's uid and start time)."""
    started = 0.0
    try:
        created = float(info.created_at())
        if created > 0:
            started = time.time() - (pylsl().local_clock() - created)
    except (AttributeError, RuntimeError, TypeError, ValueError):
        started = 0.0
    try:
        uid = str(info.uid())
    except (AttributeError, RuntimeError):
        uid = ""
    return StreamIdentity(
        name=info.name(),
        type=info.type(),
        source_id=info.source_id(),
        hostname=info.hostname(),
        n_channels=int(info.channel_count()),
        nominal_rate_hz=float(info.nominal_srate()),
        uid=uid,
        started_wall=started,
    )


def outlet_words(identity: StreamIdentity) -> str:
    """What tells one outlet from an equal one: "outlet 3f2a9c1e…, started 14:02:11"."""
    parts = []
    if identity.uid:
        parts.append(f"outlet {identity.uid[:8]}…")
    if identity.started_wall > 0:
        parts.append("started " + time.strftime("%H:%M:%S", time.localtime(identity.started_wall)))
    return ", ".join(parts)


def describe(identity: StreamIdentity) -> str:
    """One line a person can tell streams apart by."""
    sid = identity.source_id or "(no source_id)"
    return (
        f"'{identity.name}' (type {identity.type or '?'}, source_id {sid}, host "
        f"{identity.hostname or '?'}, {identity.n_channels} ch, {identity.nominal_rate_hz:g} Hz)"
    )


def visible_streams(
    wait_s: float = 2.0, settings: StreamSettings | None = None
) -> list[StreamIdentity]:
    """Every stream visible within ``wait_s`` seconds, of any type, sorted by name.

    The look lasts at least ``discovery_min_wait_s`` (configs/stream.yaml): a shorter
    one can miss outlets, and a missed stream could make a choice look unambiguous.
    """
    if not wait_s > 0:
        raise ValueError(f"wait_s must be greater than zero, got {wait_s}")
    s = settings or load_stream_settings()
    wait = max(float(wait_s), s.discovery_min_wait_s)
    if wait > wait_s:
        log.debug("LSL: looking for %.1f s rather than %.1f s (discovery_min_wait_s)", wait, wait_s)
    infos = pylsl().resolve_streams(wait_time=wait)
    # One entry per outlet (by uid): equal outlets are kept apart, never collapsed.
    outlets: dict[object, StreamIdentity] = {}
    for info in infos:
        ident = identity_of(info)
        outlets.setdefault(ident.uid or ident, ident)
    found = sorted(outlets.values(), key=lambda s: (s.name, s.hostname, s.source_id, s.started_wall))
    log.debug("LSL: %d streams visible", len(found))
    return found


class StreamLook:
    """A look for streams that answers at once and keeps listening: a background
    resolver (liblsl's continuous resolver) hears outlets as they reply, and
    :meth:`visible` returns every stream of ``stream_type`` heard since the look
    began (a stream is not dropped within a look: the resolver's own list blinks
    between its query rounds). For a picker that fills as streams answer; deciding
    that exactly one stream is there still takes the full look (``min_wait_s``):
    the first reply comes in milliseconds, a second outlet's up to half a second
    later (measured here on loopback, two outlets: 0.02 s and 0.51 s).
    """

    def __init__(self, stream_type: str | None = "EEG", settings: StreamSettings | None = None) -> None:
        s = settings or load_stream_settings()
        self.min_wait_s = s.discovery_min_wait_s
        self._type = stream_type
        self._resolver: Any = pylsl().ContinuousResolver(forget_after=s.forget_after_s)
        self._seen: dict[StreamIdentity, None] = {}
        self._started = time.monotonic()

    def settled(self, wait_s: float) -> bool:
        """The look has lasted ``wait_s`` (at least ``discovery_min_wait_s``): a stream
        that has not answered by now is taken as absent, so one stream seen is the one."""
        return time.monotonic() - self._started >= max(float(wait_s), self.min_wait_s)

    def visible(self) -> list[StreamIdentity]:
        """Every stream of the type heard so far in this look, sorted by name (never blocks)."""
        if self._resolver is not None:
            for info in self._resolver.results():
                ident = identity_of(info)
                if _is_type(ident, self._type):
                    self._seen.setdefault(ident, None)
        return sorted(self._seen, key=lambda s: (s.name, s.hostname, s.source_id))

    def close(self) -> None:
        self._resolver = None  # pylsl destroys the resolver with the object


def _is_type(identity: StreamIdentity, stream_type: str | None) -> bool:
    return stream_type is None or identity.type.strip().casefold() == stream_type.casefold()


def find_streams(
    wait_s: float = 2.0, stream_type: str | None = "EEG", settings: StreamSettings | None = None
) -> list[StreamIdentity]:
    """Streams of ``stream_type`` (compared without case; None: all) visible within ``wait_s``."""
    return [s for s in visible_streams(wait_s, settings) if _is_type(s, stream_type)]


def _criteria(name: str | None, source_id: str | None, host: str | None) -> str:
    parts = []
    if name is not None:
        parts.append(f"--stream {name!r}")
    if source_id is not None:
        parts.append(f"--source-id {source_id!r}")
    if host is not None:
        parts.append(f"--host {host!r}")
    return " ".join(parts)


def select_stream(
    candidates: Sequence[StreamIdentity],
    name: str | None = None,
    source_id: str | None = None,
    host: str | None = None,
) -> StreamIdentity:
    """The one candidate matching every given criterion (exact text)."""
    matches = [
        c
        for c in candidates
        if (name is None or c.name == name)
        and (source_id is None or c.source_id == source_id)
        and (host is None or c.hostname == host)
    ]
    if len(matches) == 1:
        return matches[0]
    asked = _criteria(name, source_id, host)
    if not matches:
        if not candidates:
            raise StreamNotFound(
                "no EEG streams visible" + (f" (looked for {asked})" if asked else "")
                + "; is the amplifier's LSL program running on this network?"
            )
        listing = "\n".join("  " + describe(c) for c in candidates)
        raise StreamNotFound(f"no EEG stream matches {asked}; visible:\n{listing}")
    twins = [c for c in matches if matches.count(c) > 1]
    if len(twins) == len(matches):
        listing = "\n".join(f"  {describe(c)} — {outlet_words(c) or 'no uid'}" for c in matches)
        raise IndistinguishableStreams(
            f"{len(matches)} EEG streams match{(' ' + asked) if asked else ''} and cannot be told "
            "apart: the same name, type, source_id and host (two copies of one acquisition "
            "program on this computer do this). No option can pin one, and bedside will not "
            "read one of them at random. Close one copy, or give each its own source_id in the "
            f"sending program, then look again (the app's picker can open one outlet):\n{listing}",
            tuple(matches),
        )
    listing = "\n".join(
        "  " + describe(c) + (" — cannot be told apart from another outlet; pin the other stream or close a copy"
                              if c in twins else "")
        for c in matches
    )
    how = "--source-id" if len({c.source_id for c in matches}) == len(matches) else "--host"
    raise AmbiguousStream(
        f"{len(matches)} EEG streams match{(' ' + asked) if asked else ''}; bedside will not "
        f"guess. Pin one with {how}:\n{listing}",
        tuple(matches),
    )


def resolve_one(
    name: str | None = None,
    source_id: str | None = None,
    host: str | None = None,
    wait_s: float = 3.0,
    stream_type: str = "EEG",
    settings: StreamSettings | None = None,
) -> StreamIdentity:
    """Look for ``wait_s`` seconds and return the single EEG stream that matches.

    A pinned stream that is visible but of another type (e.g. a marker stream) is a
    :class:`StreamFormatError` that says so, rather than "not found".
    """
    everything = visible_streams(wait_s, settings)
    eeg = [s for s in everything if _is_type(s, stream_type)]
    pinned = name is not None or source_id is not None or host is not None
    try:
        return select_stream(eeg, name, source_id, host)
    except StreamNotFound:
        if pinned:
            other = [
                s
                for s in everything
                if not _is_type(s, stream_type)
                and (name is None or s.name == name)
                and (source_id is None or s.source_id == source_id)
                and (host is None or s.hostname == host)
            ]
            if other:
                raise StreamFormatError(
                    f"{describe(other[0])} is a stream of type '{other[0].type}', not "
                    f"{stream_type}; bedside reads {stream_type} streams only"
                ) from None
        raise
