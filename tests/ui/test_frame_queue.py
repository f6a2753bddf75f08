"""The frame message's place in Textual's queue (bedside/ui/feed.FrameArrived)."""

from __future__ import annotations

from bedside.checks.types import QualityFrame
from bedside.ui.feed import FeedProblem, FrameArrived


def test_a_frame_replaces_only_a_queued_frame_of_its_own_connection() -> None:
    """A newer frame of the same connection replaces the one still queued (only the
    newest is worth drawing); a late frame of a replaced connection never pushes out
    the new connection's frame, which the app would then lose (common practice)."""
    frame = QualityFrame(0.0, 0.0, (), ())
    old, newer_old, new = FrameArrived(frame, 1), FrameArrived(frame, 1), FrameArrived(frame, 2)
    assert newer_old.can_replace(old)
    assert not old.can_replace(new)
    assert not new.can_replace(old)
    assert not new.can_replace(FeedProblem("setup log: disk full"))
    assert FrameArrived(frame).can_replace(FrameArrived(frame))  # tests and replays: no connection
