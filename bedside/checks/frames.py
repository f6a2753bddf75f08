"""A frame's channels, built from the engine's table of one evaluation.

The engine keeps its verdicts as arrays (levels, one column per metric, one level per
check); :class:`ChannelBuilder` turns them into one ``ChannelQuality`` per channel, with
as little per-channel work as it can (256 channels every update): the metrics are one
read-only :class:`~bedside.checks.types.MetricRow` view over shared columns, the
per-check levels one read-only dict per combination of levels, not per channel.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from itertools import repeat
from types import MappingProxyType

import numpy as np

from bedside.checks.types import ChannelQuality, Level, MetricRow

_LEVELS = (Level.GOOD, Level.CHECK, Level.BAD)
_new = object.__new__
_set = object.__setattr__


def _channel(name: str, level: Level, metrics: MetricRow, reasons: tuple[str, ...],
             scalp: bool, checks: Mapping[str, str]) -> ChannelQuality:
    """ChannelQuality(name, level, metrics, reasons, scalp, checks), built without the
    frozen dataclass's checks (the same object; 256 of them every update). Slots, not a
    __dict__: one object per channel for the garbage collector to follow, not two."""
    cq = _new(ChannelQuality)
    _set(cq, "name", name)
    _set(cq, "level", level)
    _set(cq, "metrics", metrics)
    _set(cq, "reasons", reasons)
    _set(cq, "is_scalp", scalp)
    _set(cq, "checks", checks)
    return cq


class ChannelBuilder:
    """The channels of a frame, for fixed channel names and scalp flags."""

    def __init__(self, names: Sequence[str], scalp: Sequence[bool]) -> None:
        self.names = tuple(names)
        self._scalp = [bool(v) for v in scalp]
        self._range = range(len(self.names))
        self._check_proto: dict[tuple[str, ...], dict[int, Mapping[str, str]]] = {}
        self._metric_index: dict[tuple[str, ...], dict[str, int]] = {}

    def channels(self, shown: np.ndarray, reasons: list[list[str]], per_check: dict[str, np.ndarray],
                 metrics: dict[str, np.ndarray]) -> tuple[ChannelQuality, ...]:
        """shown: the levels after the hold (n,); reasons per channel; per_check: each
        check's own levels (n,); metrics: name → (n,)."""
        names = list(metrics)
        columns = [metrics[k].tolist() for k in names]  # one list per metric, not per channel
        index = self._metric_index.get(tuple(names))
        if index is None:
            index = self._metric_index[tuple(names)] = {k: i for i, k in enumerate(names)}
        check_dicts = self._check_dicts(tuple(per_check), per_check)
        shown_levels = [_LEVELS[v] for v in shown.tolist()]
        # map() over the columns: the same objects as a comprehension, less interpreter work.
        return tuple(map(
            _channel, self.names, shown_levels, map(MetricRow, repeat(index), repeat(columns), self._range),
            map(tuple, reasons), self._scalp, check_dicts,
        ))

    def _check_dicts(self, check_names: tuple[str, ...], per_check: dict[str, np.ndarray]) -> list[Mapping[str, str]]:
        """Per channel, its {check: level key}: read-only prototypes shared by channels.

        Channels are grouped by the combination of their checks' levels (one integer
        code each, base 3), so a dict is built once per combination, not per channel."""
        n = len(self.names)
        if not check_names:
            return [{} for _ in range(n)]
        code = np.zeros(n, dtype=np.int64)
        for k in reversed(check_names):
            code *= 3
            code += per_check[k]
        cache = self._check_proto.get(check_names)
        if cache is None:
            cache = self._check_proto[check_names] = {}
        out = []
        for c in code.tolist():
            proto = cache.get(c)
            if proto is None:
                lv, rest = {}, c
                for k in check_names:
                    rest, v = divmod(rest, 3)
                    lv[k] = _LEVELS[v].key
                proto = cache[c] = MappingProxyType(lv)
            out.append(proto)
        return out
