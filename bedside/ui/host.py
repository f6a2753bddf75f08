"""The app as its screens see it: what a screen may read and ask, in one protocol.

Screens depend on this module, never on ``ui/app.py`` (which imports the screens), so
there is no import circle. Read the app's state from the UI thread only; the
``connection``, ``places``, ``recorder``, ``status_note`` and ``impedance_verdicts``
of the app are reactives a screen watches (``self.watch(self.app, name, callback)``)
instead of polling them.
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Any, Protocol, cast

if TYPE_CHECKING:
    from textual.message import Message

    from bedside.checks.impedance import Verdict
    from bedside.checks.ready import ReadyState
    from bedside.checks.types import QualityFrame
    from bedside.placement.types import PlacementPlan
    from bedside.record.log import TapedMeasurements
    from bedside.record.worker import LogWorker
    from bedside.stream.types import StreamIdentity
    from bedside.ui.config import AppConfig
    from bedside.ui.live import Connection, MapPlaces
    from bedside.ui.progress import Progress
    from bedside.ui.services import Services
    from bedside.ui.widgets.impedance_line import ImpedanceView


class BedsideHost(Protocol):
    """What the screens use of ``BedsideApp`` (``make_app`` checks that it fits)."""

    @property
    def config(self) -> AppConfig: ...

    @property
    def services(self) -> Services: ...

    @property
    def connection(self) -> Connection | None: ...

    @property
    def recorder(self) -> LogWorker[Any] | None: ...

    @property
    def identity(self) -> StreamIdentity | None: ...

    @property
    def latest_frame(self) -> QualityFrame | None: ...

    @property
    def progress(self) -> Progress | None: ...

    @property
    def ready_state(self) -> ReadyState | None: ...

    @property
    def places(self) -> MapPlaces: ...

    @property
    def status_note(self) -> str: ...

    @property
    def impedance_verdicts(self) -> dict[str, Verdict]: ...

    @property
    def bell_on(self) -> bool: ...

    def is_live(self) -> bool: ...

    def stalled_for(self) -> float | None: ...

    def mains_hz(self) -> tuple[float, ...]: ...

    def bipolar_partner(self, name: str) -> str | None: ...

    def impedance_view(self) -> ImpedanceView | None: ...

    def impedance_typed(self, electrode: str, kohm: float) -> tuple[str, float]: ...

    def known_electrodes(self) -> set[str]: ...

    def log_unavailable_reason(self) -> str: ...

    def plan_changed(self, plan: PlacementPlan, taped: TapedMeasurements | None = None) -> None: ...

    def export_plan(self, plan: PlacementPlan) -> None: ...

    def open_pending_confirm(self) -> None: ...

    def open_channels(self) -> None: ...

    def open_profiles(self) -> None: ...

    def discover(self, force_picker: bool) -> None: ...

    def toggle_bell(self) -> None: ...

    def bell(self) -> None: ...

    def post_message(self, message: Message) -> bool: ...


class HostedScreen:
    """Mixed into every screen of the app: ``self.bedside`` is the app as a :class:`BedsideHost`."""

    app: Any  # the Screen's own property; declared for the type checker only

    @property
    def bedside(self) -> BedsideHost:
        return cast("BedsideHost", self.app)
