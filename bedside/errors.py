"""Every error bedside raises on purpose.

::

    BedsideError                 anything bedside reports to the user (CLI: "error: ...", exit 2)
    ├── InputError               a value typed or passed by the user is not acceptable
    │   └── MeasurementError     head measurements that no head has, or that disagree
    ├── ConfigError              a configs/*.yaml file is malformed, has unknown keys or bad values
    ├── StreamError              reading from LSL went wrong
    │   ├── LSLUnavailable       pylsl is installed but liblsl cannot be loaded
    │   ├── StreamNotFound       no stream matches the selection
    │   ├── AmbiguousStream      several streams match and none is pinned (lists them)
    │   │   └── IndistinguishableStreams  outlets equal in name, type, source_id and host
    │   ├── StreamLost           the pinned stream went away and did not come back
    │   └── StreamFormatError    the stream cannot be used (wrong type, rate, channel count)
    ├── ScenarioError            a demo scenario (demo_streams/*.yaml) or replay file is unusable
    └── RecordError              the setup log could not be read or written
        └── LogSaveError         a save failed (disk full, read-only); the log stays in memory

Errors from dependencies (pylsl, yaml, OS) are translated into these at one boundary
(``raise StreamLost(...) from exc``), so callers catch ``BedsideError`` only.
"""

from __future__ import annotations


class BedsideError(Exception):
    """Base of all errors bedside reports to the user. The message is for a person."""


class InputError(BedsideError):
    """A value from the user is not acceptable; the message says what is accepted."""


class MeasurementError(InputError):
    """Head measurements that are not numbers, not plausible, or not consistent."""


class ConfigError(BedsideError):
    """A configuration file is malformed, has unknown keys or out-of-range values."""


class StreamError(BedsideError):
    """Base for errors about LSL streams."""


class LSLUnavailable(StreamError):
    """liblsl could not be loaded (pylsl raises RuntimeError, not ImportError)."""


class StreamNotFound(StreamError):
    """No stream matches the selection within the timeout."""


class AmbiguousStream(StreamError):
    """Several streams match and none is pinned; never guess."""

    def __init__(self, message: str, candidates: tuple[object, ...] = ()) -> None:
        super().__init__(message)
        self.candidates = candidates


class IndistinguishableStreams(AmbiguousStream):
    """Several live outlets with the same name, type, source_id and host: no option can
    pin one, so bedside refuses rather than read one of them at random."""


class StreamLost(StreamError):
    """The pinned stream stopped and did not come back."""


class StreamFormatError(StreamError):
    """The stream's metadata or data make it unusable (type, rate, channel count)."""


class ScenarioError(BedsideError):
    """A demo scenario or a replay file is unusable."""


class RecordError(BedsideError):
    """The setup log could not be read or written."""


class LogSaveError(RecordError):
    """A save failed; the log is kept in memory and the save is retried."""
