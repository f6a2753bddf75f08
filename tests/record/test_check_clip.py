"""``bedside check --clip``: the last seconds of a live stream as EDF+, re-read independently.

Outside references: pyEDFlib (an independent EDF+ reader, test-only) reads the clip; the
samples must equal the simulator's own deterministic samples (bedside.sim.generator) at
the same sample indices within one EDF quantisation step (EDF spec: 16-bit digital
values over the physical range); the scripted O1–Oz bridge of ward_demo must appear as
an annotation.
"""

from __future__ import annotations

import uuid
from pathlib import Path

import numpy as np
import pyedflib
import pytest

from bedside.cli import main
from bedside.sim.generator import SignalGenerator
from bedside.sim.publish import Publisher
from bedside.sim.scenario import load_scenario

pytestmark = pytest.mark.lsl


def test_clip_matches_the_published_samples(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    name = f"clip-{uuid.uuid4().hex[:10]}"
    clip = tmp_path / "W3-017-clip.edf"
    with Publisher("ward_demo", name=name, source_id=f"sid-{name}", duration_s=30.0).start():
        code = main([
            "check", "--stream", name, "--seconds", "4", "--wait", "1.5",
            "--clip", str(clip), "--clip-seconds", "2", "--subject", "W3-017",
        ])
    assert code == 1  # the bridge is there from the start
    assert "wrote EDF+ clip" in capsys.readouterr().err

    scenario = load_scenario("ward_demo")
    with pyedflib.EdfReader(str(clip)) as edf:
        labels = edf.getSignalLabels()
        assert labels[:3] == ["Fp1", "Fp2", "F7"]
        rate = edf.getSampleFrequency(0)
        assert rate == scenario.rate_hz
        got = np.stack([edf.readSignal(i) for i in range(edf.signals_in_file)], axis=1)
        quantum = np.array([
            (edf.getPhysicalMaximum(i) - edf.getPhysicalMinimum(i)) / 65535
            for i in range(edf.signals_in_file)
        ])
        onsets, _, texts = edf.readAnnotations()
    n = got.shape[0]
    assert 1.0 * rate <= n <= 2.0 * rate  # whole data records of the last 2 s
    # Find where the clip sits in the published stream (the publisher started at sample 0).
    truth = SignalGenerator(scenario).generate(0, int(12 * rate))
    fp1 = truth[:, 0]
    starts = [k for k in range(truth.shape[0] - n) if abs(fp1[k] - got[0, 0]) <= quantum[0]]
    match = [k for k in starts if np.all(np.abs(truth[k:k + n] - got) <= quantum)]
    assert match, "the clip's samples are not the published samples"
    assert any("O1" in t and "Oz" in t for t in texts)


def test_clip_with_default_length_names_the_technologist_once_per_change(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    """`check --clip c.edf` with the default lengths works (the clip is the whole look);
    the EDF+ technician field holds --technologist (EDF+ spec, Kemp & Olivan 2003:
    'Startdate dd-MMM-yyyy admincode technician equipment'); the checks starting on every
    channel at once make one annotation, not one per channel."""
    name = f"clipd-{uuid.uuid4().hex[:10]}"
    clip = tmp_path / "c.edf"
    with Publisher("ward_demo", name=name, source_id=f"sid-{name}", duration_s=30.0).start():
        code = main([
            "check", "--stream", name, "--seconds", "3", "--wait", "1.5", "--clip", str(clip),
            "--log", str(tmp_path / "W3-017.yaml"), "--subject", "W3-017", "--technologist", "JMK",
        ])
    assert code == 1
    assert "wrote EDF+ clip" in capsys.readouterr().err
    with pyedflib.EdfReader(str(clip)) as edf:
        assert edf.getTechnician() == "JMK"
        onsets, _, texts = edf.readAnnotations()
    pairs = list(zip(onsets.round(3).tolist(), texts, strict=True))
    assert len(pairs) == len(set(pairs)), "identical annotations at one onset"
    collecting = [t for t in texts if "collecting data" in t]
    assert len(collecting) <= 1, collecting


def test_check_seconds_is_bounded(capsys: pytest.CaptureFixture[str]) -> None:
    """An absurd look (--seconds 100000, about 28 h) is refused before any stream is looked for."""
    code = main(["check", "--stream", "nothing-here", "--seconds", "100000"])
    assert code == 2
    err = capsys.readouterr().err
    assert "error:" in err and "--seconds 100000" in err and "3600" in err
