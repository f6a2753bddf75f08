"""What the checks' engine is told about a source beyond its channels, in one place.

``bedside check`` and the app both build their engine with :func:`engine_options`, so
the two judge a stream alike: bridging neighbours from the channels' geometry (the
stream's own positions, a layout file, else 10-20/10-10 names, else all pairs), the
amplifier's input range (it turns on the offset-against-range and rail checks), its
coupling (a DC-coupled stream's drift is judged as an AC amplifier would pass it) and
the reference.
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

if TYPE_CHECKING:
    from bedside.stream.source import Source


def engine_options(source: Source, rules: Any = None) -> tuple[dict[str, Any], str]:
    """Engine keyword arguments from what the source knows of its channels (bridging
    neighbours from the geometry; the amplifier's range: from its profile — metadata,
    ``--amplifier``, or on replay the file's physical range — else an integer stream's
    numeric limits), and a note on the geometry."""
    from bedside.placement.layout import geometry_neighbours
    from bedside.stream.labels import load_labels

    rules = rules or load_labels()
    scalp = [c for c in source.channels if c.is_scalp]
    positions = {c.name: c.position_mm for c in scalp if c.position_mm is not None}
    pairs, note = geometry_neighbours([c.name for c in scalp], positions, rules.local_sites)
    kwargs: dict[str, Any] = {"neighbours": pairs}
    profile = getattr(source, "profile", None)
    if profile is not None and profile.input_range_uv:
        kwargs["amplifier_range_uv"] = profile.input_range_uv
    else:  # an integer stream cannot go beyond its numeric limits: that is its rail
        limit = getattr(source, "numeric_range_uv", None)
        if isinstance(limit, float) and limit > 0:
            kwargs["amplifier_range_uv"] = limit
    coupling = getattr(profile, "coupling", None) if profile is not None else None
    if coupling in ("ac", "dc"):
        kwargs["coupling"] = coupling
    ref = getattr(source, "reference", None)
    value = getattr(ref, "engine_value", None)
    if isinstance(value, str) and value:
        kwargs["reference"] = value
    return kwargs, note
