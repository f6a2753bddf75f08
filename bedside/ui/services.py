"""What the UI asks of the core, in one place, so tests can hand it stand-ins.

The app never imports placement, stream, checks, sim or record at module level:
:class:`Services` holds the callables it uses, and :func:`default_services` binds
them to the real packages lazily (on first use, in a worker thread), so a slow
import or a missing liblsl never blocks the screen.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Protocol

from bedside.placement.types import HeadMeasurements, PlacementPlan
from bedside.stream.source import Source
from bedside.stream.types import ChannelInfo, StreamIdentity


class MonitorLike(Protocol):
    """The checks' monitor thread: calls on_frame(QualityFrame) at its update rate."""

    def start(self) -> Any: ...

    def stop(self) -> None: ...


class RecorderLike(Protocol):
    """The setup log as the UI uses it (bedside.record.session.SessionRecorder)."""

    def set_plan(self, plan: PlacementPlan) -> None: ...

    def set_stream(self, identity: StreamIdentity, channels: tuple[ChannelInfo, ...]) -> None: ...

    def on_frame(self, frame: Any) -> None: ...

    def set_impedance(self, electrode: str, kohm: float) -> None: ...

    def add_note(self, text: str) -> None: ...

    def set_technologist(self, initials: str) -> None: ...

    def set_subject(self, subject_id: str) -> None: ...

    def sign_off(self, initials: str) -> None: ...

    def save_now(self) -> Any: ...

    @property
    def status(self) -> Any: ...

    def close(self) -> None: ...


def _parse_measurements(ni: str, pa: str, circ: str, unit: str) -> HeadMeasurements:
    from bedside.placement.validate import parse_measurements

    return parse_measurements(ni, pa, circ, unit)


def _plan_placement(m: HeadMeasurements, system: str, names: str) -> PlacementPlan:
    from bedside.placement.calculator import plan_placement

    return plan_placement(m, system, names)


def _positions_for(names: Sequence[str]) -> dict[str, tuple[float, float, float]]:
    from bedside.placement import positions_for  # type: ignore[attr-defined]

    return dict(positions_for(list(names)))


def _project_2d(xyz: tuple[float, float, float]) -> tuple[float, float]:
    from bedside.placement import project_2d  # type: ignore[attr-defined]

    x, y = project_2d(xyz)
    return float(x), float(y)


def _find_streams(wait_s: float) -> list[StreamIdentity]:
    from bedside.stream.discovery import find_streams

    return list(find_streams(wait_s))


def _select_stream(
    streams: Sequence[StreamIdentity], name: str | None, source_id: str | None, host: str | None
) -> StreamIdentity:
    from bedside.stream.discovery import select_stream

    return select_stream(list(streams), name=name, source_id=source_id, host=host)


def _open_source(identity: StreamIdentity) -> Source:
    from bedside.stream.channel_map import saved_choices
    from bedside.stream.channels import ChannelOptions
    from bedside.stream.reader import LslSource

    # The technologist's channel choices saved for this amplifier (source_id), if any.
    saved = saved_choices(identity.source_id) or {}
    return LslSource(identity, options=ChannelOptions(
        choices=saved, choices_from="the channel choices saved for this source_id", choices_strict=False))


def _load_quality() -> Any:
    from bedside.checks.settings import load_quality

    return load_quality()


def _make_engine(
    settings: Any,
    channels: tuple[ChannelInfo, ...],
    rate_hz: float,
    neighbours: tuple[tuple[str, str], ...] | None,
) -> Any:
    from bedside.checks.engine import Engine

    if neighbours is None:  # from the channels' own positions where the stream gives them
        from bedside.placement.layout import geometry_neighbours
        from bedside.stream.labels import load_labels

        scalp = [c for c in channels if c.is_scalp]
        pos = {c.name: c.position_mm for c in scalp if c.position_mm is not None}
        neighbours, _note = geometry_neighbours([c.name for c in scalp], pos, load_labels().local_sites)
    return Engine(settings, channels, rate_hz, neighbours)


def _make_monitor(
    source: Source, engine: Any, on_frame: Callable[[Any], None], update_hz: float
) -> MonitorLike:
    from bedside.checks.monitor import Monitor

    return Monitor(source, engine, on_frame, update_hz)  # type: ignore[no-any-return]


def _open_recorder(
    path: Path, technologist: str, subject_id: str, config_paths: Sequence[Path]
) -> RecorderLike:
    from bedside.record.session import SessionRecorder

    return SessionRecorder.open(  # type: ignore[no-any-return]
        path, technologist=technologist, subject_id=subject_id, config_paths=list(config_paths)
    )


@dataclass(frozen=True)
class Services:
    """The core functions the UI calls (always from a worker thread, never the UI thread)."""

    parse_measurements: Callable[[str, str, str, str], HeadMeasurements] = _parse_measurements
    plan_placement: Callable[[HeadMeasurements, str, str], PlacementPlan] = _plan_placement
    positions_for: Callable[[Sequence[str]], dict[str, tuple[float, float, float]]] = _positions_for
    project_2d: Callable[[tuple[float, float, float]], tuple[float, float]] = _project_2d
    find_streams: Callable[[float], list[StreamIdentity]] = _find_streams
    select_stream: Callable[
        [Sequence[StreamIdentity], str | None, str | None, str | None], StreamIdentity
    ] = _select_stream
    open_source: Callable[[StreamIdentity], Source] = _open_source
    load_quality: Callable[[], Any] = _load_quality
    make_engine: Callable[
        [Any, tuple[ChannelInfo, ...], float, tuple[tuple[str, str], ...] | None], Any
    ] = _make_engine
    make_monitor: Callable[[Source, Any, Callable[[Any], None], float], MonitorLike] = _make_monitor
    open_recorder: Callable[[Path, str, str, Sequence[Path]], RecorderLike] | None = _open_recorder
    extra: dict[str, Any] = field(default_factory=dict)


def default_services() -> Services:
    """The real core, bound lazily."""
    return Services()
