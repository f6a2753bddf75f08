"""Amplifier profiles (issue 11.7): metadata first, then --amplifier NAME.

Metadata keys: desc/acquisition of the XDF EEG meta-data convention (manufacturer,
model) plus bedside's own coupling, highpass_hz, input_range_uv.
"""

from __future__ import annotations

from pathlib import Path

import pytest

from bedside.errors import ConfigError, InputError
from bedside.stream.amplifier import decide_profile, load_amplifiers


def test_shipped_profiles_have_generic_names() -> None:
    cat = load_amplifiers()
    assert set(cat.profiles) == {"dc-active", "dc-passive", "ac-passive"}
    assert cat.profiles["ac-passive"].coupling == "ac" and cat.profiles["ac-passive"].highpass_hz
    assert cat.profiles["dc-active"].highpass_hz is None


def test_metadata_first_then_the_named_profile() -> None:
    p = decide_profile({"coupling": "DC", "input_range_uv": "262000"})
    assert (p.coupling, p.input_range_uv, p.source) == ("dc", 262000.0, "metadata")
    p = decide_profile({}, "ac-passive")
    assert (p.coupling, p.highpass_hz, p.input_range_uv) == ("ac", 0.16, 5000.0)
    p = decide_profile({"coupling": "dc"}, "ac-passive")  # they disagree: metadata wins, said so
    assert p.coupling == "dc" and p.highpass_hz is None and any("metadata is used" in n for n in p.notes)
    assert decide_profile({}).coupling is None
    assert any("not a positive number" in n for n in decide_profile({"input_range_uv": "-5"}).notes)


def test_unknown_profile_names_the_known_ones() -> None:
    with pytest.raises(InputError, match=r"did you mean 'dc-active'.*accepted: dc-active, dc-passive, ac-passive"):
        decide_profile({}, "dc-activ")


def test_out_of_range_value_is_named(tmp_path: Path) -> None:
    bad = tmp_path / "amplifiers.yaml"
    bad.write_text("amplifiers:\n  profiles:\n    x:\n      coupling: ac\n      input_range_uv: -1\n",
                   encoding="utf-8")
    with pytest.raises(ConfigError, match=r"line 5: 'amplifiers.profiles.x.input_range_uv' is -1"):
        load_amplifiers(bad)
    bad.write_text("amplifiers:\n  profiles:\n    x:\n      coupling: dc\n      input_range_uv: 5\n"
                   "      highpass_hz: 0.1\n", encoding="utf-8")
    with pytest.raises(ConfigError, match="no hardware high-pass"):
        load_amplifiers(bad)
