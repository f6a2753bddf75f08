"""Plain data and JSON text: the one converter of bedside's machine outputs.

:func:`plain` turns what a frame, a log or a report holds (dataclasses, mappings such
as a frame's read-only metric rows, tuples, zone-aware datetimes, numpy scalars) into
JSON/YAML-ready Python values; the setup log and its journal store through it, and
every command's ``--format json`` prints through :func:`json_text`.

In printed JSON a value that could not be computed (NaN, ±Inf) is ``null`` — NaN is
not JSON (RFC 8259 §6), and a reader must not be handed one; the log keeps its own
rule (its metrics are cleaned to None before they are stored).
"""

from __future__ import annotations

import dataclasses
import json
import math
from collections.abc import Mapping
from datetime import datetime
from typing import Any


def plain(value: Any, *, finite: bool = False) -> Any:
    """``value`` as plain data: dataclass → dict of its fields, mapping → dict with str
    keys, tuple/list → list, datetime → ISO 8601 to the millisecond, numpy scalar →
    Python number. finite: NaN and ±Inf become None. TypeError for anything else."""
    if isinstance(value, datetime):
        return value.isoformat(timespec="milliseconds")
    if dataclasses.is_dataclass(value) and not isinstance(value, type):
        return {f.name: plain(getattr(value, f.name), finite=finite) for f in dataclasses.fields(value)}
    if isinstance(value, Mapping):
        return {str(k): plain(v, finite=finite) for k, v in value.items()}
    if isinstance(value, list | tuple):
        return [plain(v, finite=finite) for v in value]
    if isinstance(value, bool) or value is None or isinstance(value, str):
        return value
    if isinstance(value, int):
        return int(value)
    if isinstance(value, float):
        number = float(value)
        return None if finite and not math.isfinite(number) else number
    # numpy scalars and the like: plain Python numbers, never objects.
    if hasattr(value, "item"):
        return plain(value.item(), finite=finite)
    raise TypeError(f"cannot store a value of type {type(value).__name__}")


def json_text(value: Any, *, indent: int | None = 2) -> str:
    """``value`` as strict JSON text (UTF-8 characters kept; non-finite numbers null)."""
    return json.dumps(plain(value, finite=True), indent=indent, ensure_ascii=False, allow_nan=False)
