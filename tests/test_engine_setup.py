"""engine_options: what the source knows reaches the engine (range, reference, geometry).

Outside reference for the integer limit: numpy.iinfo (an int16 stream cannot carry more
than ±32767 counts).
"""

from __future__ import annotations

from types import SimpleNamespace

import numpy as np

from bedside.engine_setup import engine_options
from bedside.stream.channels import Reference
from bedside.stream.types import ChannelInfo

CHANNELS = tuple(ChannelInfo(n, n, "EEG", "uV", 1.0, True) for n in ("Fp1", "Fp2", "Cz", "O1", "O2"))


def _source(**kw: object) -> SimpleNamespace:
    base = {"channels": CHANNELS, "profile": None, "numeric_range_uv": None, "reference": Reference()}
    base.update(kw)
    return SimpleNamespace(**base)


def test_average_reference_and_an_electrode_reference_reach_the_engine() -> None:
    kwargs, _note = engine_options(_source(reference=Reference("average", "--reference")))  # type: ignore[arg-type]
    assert kwargs["reference"] == "average"
    kwargs, _note = engine_options(_source(reference=Reference("A1", "label suffix")))  # type: ignore[arg-type]
    assert kwargs["reference"] == "A1"
    kwargs, _note = engine_options(_source())  # type: ignore[arg-type]
    assert "reference" not in kwargs


def test_the_profiles_range_wins_over_the_numeric_limit() -> None:
    limit = float(np.iinfo(np.int16).max) * 0.1
    kwargs, _ = engine_options(_source(numeric_range_uv=limit))  # type: ignore[arg-type]
    assert kwargs["amplifier_range_uv"] == limit
    profile = SimpleNamespace(input_range_uv=400000.0)
    kwargs, _ = engine_options(_source(numeric_range_uv=limit, profile=profile))  # type: ignore[arg-type]
    assert kwargs["amplifier_range_uv"] == 400000.0
    kwargs, note = engine_options(_source())  # type: ignore[arg-type]
    assert "amplifier_range_uv" not in kwargs and kwargs["neighbours"]  # 10-20 names: pairs


def test_the_profiles_coupling_reaches_the_engine() -> None:
    """configs/amplifiers.yaml's profiles (dc-active, ac-passive) through --amplifier or the
    metadata decide the coupling; the engine built from the options takes it."""
    from bedside.checks.engine import Engine
    from bedside.checks.settings import load_quality
    from bedside.stream.amplifier import AmplifierProfile, load_amplifiers

    profiles = load_amplifiers().profiles
    for name, coupling in (("dc-active", "dc"), ("ac-passive", "ac")):
        spec = profiles[name]
        profile = AmplifierProfile(spec.coupling, spec.highpass_hz, spec.input_range_uv, name)
        kwargs, _ = engine_options(_source(profile=profile))  # type: ignore[arg-type]
        assert kwargs["coupling"] == coupling
        assert Engine(load_quality(), CHANNELS, 256.0, **kwargs).coupling == coupling
    kwargs, _ = engine_options(_source(profile=SimpleNamespace(input_range_uv=None, coupling=None)))  # type: ignore[arg-type]
    assert "coupling" not in kwargs
