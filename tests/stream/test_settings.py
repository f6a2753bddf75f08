"""configs/stream.yaml loads, and bad values name the file, line and what is accepted (issue 8)."""

from __future__ import annotations

from pathlib import Path

import pytest

from bedside.errors import ConfigError
from bedside.stream.settings import STREAM_CONFIG, StreamSettings, load_stream_settings


def test_shipped_file_matches_the_defaults() -> None:
    assert load_stream_settings() == StreamSettings()
    assert "stale_after_s" in STREAM_CONFIG.read_text(encoding="utf-8")


@pytest.mark.parametrize(
    ("text", "message"),
    [
        ("stream:\n  stale_after: 2\n", r"line 2: 'stream.stale_after' is not a known setting; did you mean 'stale_after_s'"),
        ("stream:\n  stale_after_s: 0.1\n", r"'stream.stale_after_s' is 0.1; accepted: 0.2 to 30.0"),
        ("stream:\n  max_pull_samples: lots\n", r"'stream.max_pull_samples' must be a whole number"),
        ("stream:\n  min_rate_hz: 500\n  max_rate_hz: 400\n", r"min_rate_hz \(500.0\) must be below max_rate_hz"),
        ("stream:\n  lost_after_s: 1\n", r"lost_after_s \(1.0\) must not be below stale_after_s"),
        ("stream: [\n", r"not valid YAML"),
        ("other: {}\n", r"missing top-level section 'stream'"),
    ],
)
def test_bad_settings_are_clear_errors(tmp_path: Path, text: str, message: str) -> None:
    path = tmp_path / "stream.yaml"
    path.write_text(text, encoding="utf-8")
    with pytest.raises(ConfigError, match=message) as err:
        load_stream_settings(path)
    assert str(path) in str(err.value)
