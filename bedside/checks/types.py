"""Data types of the checks package: levels, per-channel verdicts, the frame the UI shows."""

from __future__ import annotations

import enum
from collections.abc import Iterator, Mapping
from dataclasses import dataclass, field

from bedside.stream.types import StreamHealth


class Level(enum.Enum):
    """Three levels. Each has a machine key, the word a person reads, a symbol and two
    colours (screen, print): the symbol carries the meaning first, never colour alone.

    The words are the one vocabulary of every display (the app, ``check``'s table, the
    HTML report, the BIDS status descriptions); machine values (JSON, the log, BIDS
    ``status``) keep the keys. The colours are our own palette, chosen to stay apart
    under simulated deuteranopia and protanopia (``tests/ui/test_palette.py``):
    ``colour`` on the app's dark background, ``print_colour`` on the white page.
    """

    GOOD = ("good", "good", "●", "#4fc3f7", "#0060b0")
    CHECK = ("check", "check", "▲", "#fde047", "#8a6d00")
    BAD = ("bad", "bad", "✖", "#ff6b6b", "#b4005a")

    def __init__(self, key: str, word: str, symbol: str, colour: str, print_colour: str) -> None:
        self.key = key
        self.word = word
        self.symbol = symbol
        self.colour = colour
        self.print_colour = print_colour

    @property
    def rank(self) -> int:
        return {"good": 0, "check": 1, "bad": 2}[self.key]

    @classmethod
    def from_key(cls, key: str) -> Level:
        for level in cls:
            if level.key == key:
                return level
        raise ValueError(f"unknown level {key!r}; accepted: good, check, bad")

    @staticmethod
    def worst(levels: list[Level]) -> Level:
        return max(levels, key=lambda lv: lv.rank) if levels else Level.GOOD


#: Shown instead of a level when there is no live data: never the last colour as if live.
NO_DATA_SYMBOL = "?"
NO_DATA_KEY = "no_data"
NO_DATA_WORD = "no data"
#: Grey for "no data" (screen, print): away from the three levels' colours.
NO_DATA_COLOUR = "#9e9e9e"
NO_DATA_PRINT_COLOUR = "#555555"

#: Display word per machine key (the levels and "no_data"): the one place they live.
LEVEL_WORDS: dict[str, str] = {**{lv.key: lv.word for lv in Level}, NO_DATA_KEY: NO_DATA_WORD}
#: Symbol per machine key, likewise.
LEVEL_SYMBOLS: dict[str, str] = {**{lv.key: lv.symbol for lv in Level}, NO_DATA_KEY: NO_DATA_SYMBOL}


def level_words(key: str) -> str:
    """"● good", "✖ bad", "? no data" for a machine key; the key itself when unknown."""
    if key not in LEVEL_WORDS:
        return key
    return f"{LEVEL_SYMBOLS[key]} {LEVEL_WORDS[key]}"


class MetricRow(Mapping[str, float]):
    """One channel's metrics, read-only: name → value, read from the engine's table
    (``columns``: one list per metric, ``index``: each name's column, both shared by
    every channel of a frame; ``i``: this channel). A frame of 256 channels builds no
    256 dicts; ``dict(row)`` gives a plain copy."""

    __slots__ = ("_index", "_columns", "_i")

    def __init__(self, index: Mapping[str, int], columns: list[list[float]], i: int) -> None:
        self._index = index
        self._columns = columns
        self._i = i

    def __getitem__(self, key: str) -> float:
        return self._columns[self._index[key]][self._i]

    def __iter__(self) -> Iterator[str]:
        return iter(self._index)

    def __len__(self) -> int:
        return len(self._index)

    def __repr__(self) -> str:
        return repr(dict(self))


@dataclass(frozen=True, slots=True)
class ChannelQuality:
    """The verdict for one channel.

    level: None when there is no live data (stream stale/lost, or not enough samples
    yet). metrics: name → value, units in the name (e.g. "line_noise_db",
    "rms_uv"). reasons: plain words with the number and the usual remedy.
    """

    name: str
    level: Level | None
    metrics: Mapping[str, float]
    reasons: tuple[str, ...] = ()
    is_scalp: bool = True
    #: check name → level key of that check alone, before the hold ("line_noise": "bad" …).
    checks: Mapping[str, str] = field(default_factory=dict)

    @property
    def level_key(self) -> str:
        return self.level.key if self.level is not None else NO_DATA_KEY

    def as_dict(self) -> dict[str, object]:
        return {
            "name": self.name,
            "level": self.level_key,
            "reasons": list(self.reasons),
            "metrics": dict(self.metrics),
        }


@dataclass(frozen=True)
class Finding:
    """Something that concerns more than one channel, or the setup as a whole.

    kind: "bridge", "reference", "ground", "placement", "stream" …; electrodes:
    the names involved (a bridge names both).
    """

    kind: str
    electrodes: tuple[str, ...]
    level: Level
    reason: str

    def as_dict(self) -> dict[str, object]:
        return {
            "kind": self.kind,
            "electrodes": list(self.electrodes),
            "level": self.level.key,
            "reason": self.reason,
        }


@dataclass(frozen=True)
class QualityFrame:
    """One update of the engine: what the UI shows and the log records.

    time: LSL time of the newest sample in the window (s); wall_time: time.time()
    when the frame was made; mains_hz: the mains frequency in use (50 or 60; None
    while not yet detected); data_s: seconds of data the engine has taken in (its
    sample clock); neighbour_pairs: the neighbour pairs bridging compares (None in a
    frame without verdicts).
    """

    time: float
    wall_time: float
    channels: tuple[ChannelQuality, ...]
    findings: tuple[Finding, ...]
    stream_health: StreamHealth | None = None
    window_s: float = 0.0
    mains_hz: float | None = None
    data_s: float = 0.0
    neighbour_pairs: int | None = None

    @property
    def live(self) -> bool:
        return self.stream_health is None or self.stream_health.state == "live"
