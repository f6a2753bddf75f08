"""What the UI asks of the core, in one place, so tests can hand it stand-ins.

The app never imports placement, stream, checks, sim or record at module level:
:class:`Services` holds the callables it uses, and :func:`default_services` binds
them to the real packages lazily (on first use, in a worker thread), so a slow
import or a missing liblsl never blocks the screen.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING, Any, Protocol

from bedside.placement.types import HeadMeasurements, PlacementPlan
from bedside.stream.source import Source
from bedside.stream.types import ChannelInfo, StreamIdentity

if TYPE_CHECKING:
    from bedside.record.log import TapedMeasurements


class MonitorLike(Protocol):
    """The checks' monitor thread: calls on_frame(QualityFrame) at its update rate."""

    def start(self) -> Any: ...

    def stop(self) -> None: ...


class RecorderLike(Protocol):
    """The setup log as the UI uses it (bedside.record.session.SessionRecorder)."""

    def set_plan(self, plan: PlacementPlan, taped: TapedMeasurements | None = None) -> None: ...

    def set_stream(self, identity: StreamIdentity, channels: tuple[ChannelInfo, ...]) -> None: ...

    def on_frame(self, frame: Any) -> None: ...

    def set_impedance(self, electrode: str, kohm: float, source: str = "typed") -> None: ...

    def typed_impedances(self) -> tuple[dict[str, float], float | None]: ...

    def set_profile(self, name: str, sha256: str) -> None: ...

    def add_note(self, text: str) -> None: ...

    def set_technologist(self, initials: str) -> None: ...

    def set_subject(self, subject_id: str, rename_file: bool = False) -> None: ...

    @property
    def path(self) -> Path: ...

    def sign_off(self, initials: str, exceptions: Sequence[Any] = ()) -> None: ...

    def set_ready(self, held_s: float, accepted: Sequence[Any] = (), how: str = "") -> None: ...

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


def _project_geometry(positions_mm: Mapping[str, tuple[float, float, float]]) -> dict[str, tuple[float, float]]:
    from bedside.placement.layout import project_geometry

    return {n: (float(x), float(y)) for n, (x, y) in project_geometry(positions_mm).items()}


class StreamLookLike(Protocol):
    """A look for streams (bedside.stream.discovery.StreamLook): never blocks."""

    def visible(self) -> list[StreamIdentity]: ...

    def settled(self, wait_s: float) -> bool: ...

    def close(self) -> None: ...


def _look_for_streams() -> StreamLookLike:
    from bedside.stream.discovery import StreamLook

    return StreamLook()


def _select_stream(
    streams: Sequence[StreamIdentity], name: str | None, source_id: str | None, host: str | None
) -> StreamIdentity:
    from bedside.stream.discovery import select_stream

    return select_stream(list(streams), name=name, source_id=source_id, host=host)


def source_options(source_id: str, choices: Mapping[str, Any] | None = None) -> Any:
    """The ChannelOptions the app opens a stream with: ``choices`` just confirmed in the
    app (strict: they were made for this stream), else the ones saved for this
    source_id (not strict: the amplifier may carry other channels today), else none."""
    from bedside.stream.channel_map import saved_choices
    from bedside.stream.channels import ChannelOptions

    if choices is not None:
        return ChannelOptions(choices=choices, choices_from="the channel choices made in the app")
    return ChannelOptions(choices=saved_choices(source_id) or {},
                          choices_from="the channel choices saved for this source_id", choices_strict=False)


def _open_source(identity: StreamIdentity, choices: Mapping[str, Any] | None = None) -> Source:
    from bedside.stream.reader import LslSource

    return LslSource(identity, options=source_options(identity.source_id, choices))


@dataclass(frozen=True)
class ChannelPreview:
    """The channels as they would be with the technologist's edits.

    channels: the new channel set; choices: label → ChannelChoice, ready for
    ``open_source`` and ``save_channel_choices``; summary: "19 scalp, 2 EOG, …"."""

    channels: tuple[ChannelInfo, ...]
    choices: Mapping[str, Any]
    summary: str


def _channel_types() -> tuple[str, ...]:
    from bedside.stream.labels import KINDS

    return tuple(KINDS)


def _describe_channels(channels: Sequence[ChannelInfo]) -> str:
    from bedside.stream.channels import kind_counts

    return kind_counts(channels)


def _preview_channels(channels: Sequence[ChannelInfo], edits: Mapping[str, tuple[str, str]]) -> ChannelPreview:
    """``edits``: stream label → (type, name) as typed. Types and names are checked by
    the same code as a ``--channels`` file (unknown type, empty or repeated name: an
    InputError that says what is accepted)."""
    from bedside.errors import InputError
    from bedside.stream.channels import ChannelChoice, apply_choices, kind_counts

    choices: dict[str, ChannelChoice] = {}
    for label, (kind, name) in edits.items():
        text = kind.strip().upper()
        if not text:
            raise InputError(f"channel {label!r} has no type; give one of the BIDS types (EEG, EOG, ECG, EMG, MISC, …)")
        if not name.strip():
            raise InputError(f"channel {label!r} has an empty name; give the name to show")
        try:
            choices[label] = ChannelChoice(text, name.strip())
        except InputError as exc:
            raise InputError(f"channel {label!r}: {exc}") from None
    out = apply_choices(channels, choices, "these choices")
    if not any(c.is_scalp for c in out):
        raise InputError("with these choices no channel is scalp EEG, so nothing would be judged; "
                         "give at least one channel the type EEG")
    return ChannelPreview(out, choices, kind_counts(out))


def _save_channel_choices(source_id: str, choices: Mapping[str, Any]) -> Path | None:
    from bedside.stream.channel_map import save_choices

    return save_choices(source_id, choices)


def _make_ward() -> Any:
    from bedside.ward import Ward

    return Ward()


def _load_quality() -> Any:
    from bedside.checks.settings import load_quality

    return load_quality()


def _load_profile(name: str) -> Any:
    from bedside.checks.profiles import load_profile

    return load_profile(name)


def _profile_choices() -> list[tuple[str, str, float, float | None]]:
    """(name, title, impedance limit kΩ, re-check hours) of every shipped profile; a
    profile that does not load is listed with its error as the title."""
    from bedside.checks.profiles import load_profile, profile_names
    from bedside.errors import BedsideError

    out: list[tuple[str, str, float, float | None]] = []
    for name in profile_names():
        try:
            p = load_profile(name)
        except BedsideError as exc:
            out.append((name, f"cannot be used: {exc}", float("nan"), None))
            continue
        out.append((name, p.title, p.impedance.limit_kohm, p.recheck_h))
    return out


def _make_engine(settings: Any, source: Source) -> tuple[Any, str]:
    from bedside.checks.engine import Engine
    from bedside.engine_setup import engine_options

    # The same options as ``bedside check`` (geometry neighbours, amplifier range), so
    # the app and the command judge a stream alike.
    kwargs, note = engine_options(source)
    return Engine(settings, source.channels, source.identity.nominal_rate_hz, **kwargs), note


def _make_tap_walk(names: Sequence[str], scalp: Sequence[bool], rate_hz: float) -> Any:
    from bedside.checks.taptest import TapWalk, load_tap_settings

    settings = load_tap_settings()
    order = [n for n, ok in zip(names, scalp, strict=True) if ok]
    return TapWalk(names, order, rate_hz, scalp, settings.timeout_s, settings)


def _summarise_taps(results: Sequence[Any]) -> tuple[Any, ...]:
    from bedside.checks.taptest import summarise

    return summarise(results)


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
        path, technologist=technologist, subject_id=subject_id, config_paths=list(config_paths),
        long_term=_load_quality().long_term,
    )


def _chain_partner(name: str, names: Sequence[str]) -> str | None:
    from bedside.montage import chain_partner

    return chain_partner(name, names)


def _plan_montage(names: Sequence[str], is_scalp: Sequence[bool], montage: str) -> Any:
    from bedside.montage import plan_montage

    return plan_montage(names, is_scalp, montage)  # type: ignore[arg-type]


def _derive_montage(window_uv: Any, plan: Any, is_scalp: Sequence[bool]) -> Any:
    from bedside.montage import derive

    return derive(window_uv, plan, is_scalp)


@dataclass(frozen=True)
class Services:
    """The core functions the UI calls (always from a worker thread, never the UI thread)."""

    parse_measurements: Callable[[str, str, str, str], HeadMeasurements] = _parse_measurements
    plan_placement: Callable[[HeadMeasurements, str, str], PlacementPlan] = _plan_placement
    positions_for: Callable[[Sequence[str]], dict[str, tuple[float, float, float]]] = _positions_for
    project_2d: Callable[[tuple[float, float, float]], tuple[float, float]] = _project_2d
    #: A cap's own positions (the stream's locations or --layout, mm) → map points.
    project_geometry: Callable[[Mapping[str, tuple[float, float, float]]], dict[str, tuple[float, float]]] = (
        _project_geometry)
    #: A look for EEG streams that lists them as they answer (the picker fills at once).
    look_for_streams: Callable[[], StreamLookLike] = _look_for_streams
    select_stream: Callable[
        [Sequence[StreamIdentity], str | None, str | None, str | None], StreamIdentity
    ] = _select_stream
    #: (identity, choices): choices None → the ones saved for its source_id, if any.
    open_source: Callable[[StreamIdentity, Mapping[str, Any] | None], Source] = _open_source
    load_quality: Callable[[], Any] = _load_quality
    #: A department profile by name (bedside.checks.profiles.Profile; InputError for an
    #: unknown name) and the list the app's picker shows.
    load_profile: Callable[[str], Any] = _load_profile
    profile_choices: Callable[[], list[tuple[str, str, float, float | None]]] = _profile_choices
    #: (settings, source) → (engine, note): the engine for the source's channels, geometry
    #: and amplifier, and where its bridging neighbours came from.
    make_engine: Callable[[Any, Source], tuple[Any, str]] = _make_engine
    #: The ward (``bedside ward``): every visible EEG stream watched at once (bedside.ward).
    make_ward: Callable[[], Any] = lambda: _make_ward()
    describe_channels: Callable[[Sequence[ChannelInfo]], str] = _describe_channels
    #: The BIDS channels.tsv types a channel may be given (EEG, EOG, ECG, …).
    channel_types: Callable[[], tuple[str, ...]] = _channel_types
    preview_channels: Callable[[Sequence[ChannelInfo], Mapping[str, tuple[str, str]]], ChannelPreview] = (
        _preview_channels)
    save_channel_choices: Callable[[str, Mapping[str, Any]], Path | None] = _save_channel_choices
    make_monitor: Callable[[Source, Any, Callable[[Any], None], float], MonitorLike] = _make_monitor
    #: (channel names, scalp mask, rate) → the tap test's walk over every scalp channel
    #: in stream order (``checks.taptest.TapWalk``, settings from configs/taptest.yaml).
    make_tap_walk: Callable[[Sequence[str], Sequence[bool], float], Any] = _make_tap_walk
    #: A walk's results → its problems (swapped pairs named; ``checks.taptest.summarise``).
    summarise_taps: Callable[[Sequence[Any]], tuple[Any, ...]] = _summarise_taps
    open_recorder: Callable[[Path, str, str, Sequence[Path]], RecorderLike] | None = _open_recorder
    #: The standard montages (bedside.montage; pure and cheap, so chain_partner may run
    #: on the UI thread): the longitudinal chain partner of an electrode, a montage's
    #: derivations for the channels, and the derived rows of a window.
    chain_partner: Callable[[str, Sequence[str]], str | None] = _chain_partner
    plan_montage: Callable[[Sequence[str], Sequence[bool], str], Any] = _plan_montage
    derive_montage: Callable[[Any, Any, Sequence[bool]], Any] = _derive_montage


def default_services() -> Services:
    """The real core, bound lazily."""
    return Services()
