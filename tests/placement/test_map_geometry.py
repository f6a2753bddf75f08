"""A cap's own positions on the 2-D head map (issue 11.8): ``layout.project_geometry``.

Outside reference: the digitised positions of MNE-Python's sample recording (60 EEG
channels, head frame in metres, read by MNE-Python in ``tests/real_eeg.py``) and the
2-D places MNE-Python itself draws them at (``mne.channels.make_eeg_layout``, the
layout its topographic plots use).
"""

from __future__ import annotations

import math

import mne
import numpy as np
import pytest
import real_eeg
from scipy.stats import spearmanr

from bedside.placement.layout import fit_sphere, project_2d, project_geometry


def _sample_positions_m() -> dict[str, tuple[float, float, float]]:
    rec = real_eeg.mne_sample().pick("EEG")
    assert rec.positions_m is not None
    return dict(rec.positions_m)


def test_the_sample_cap_is_drawn_where_mne_draws_it() -> None:
    pos_m = _sample_positions_m()
    points = project_geometry({n: (x * 1e3, y * 1e3, z * 1e3) for n, (x, y, z) in pos_m.items()})
    info = mne.create_info(list(pos_m), 600.0, "eeg")
    info.set_montage(mne.channels.make_dig_montage(ch_pos=pos_m, coord_frame="head"))
    layout = mne.channels.make_eeg_layout(info)
    centres = layout.pos[:, :2] + layout.pos[:, 2:] / 2.0  # each box's centre
    ours = np.array([points[n] for n in layout.names])
    # Measured here: Spearman 0.999 (left-right) and 0.991 (front-back).
    assert spearmanr(ours[:, 0], centres[:, 0]).statistic > 0.98
    assert spearmanr(ours[:, 1], centres[:, 1]).statistic > 0.97
    assert max(math.hypot(x, y) for x, y in ours) <= 1.0


def test_sphere_fit_recovers_a_known_sphere() -> None:
    """Points on a known sphere (centre (3, 12, 40) mm, radius 92 mm; made up for the
    test): the fit gives them back; the projection matches project_2d about that centre."""
    rng = np.random.default_rng(1)
    v = rng.normal(size=(40, 3))
    v[:, 2] = np.abs(v[:, 2])  # the upper half, as a cap covers
    v /= np.linalg.norm(v, axis=1, keepdims=True)
    centre = np.array([3.0, 12.0, 40.0])
    pts = centre + 92.0 * v
    fit = fit_sphere(pts)
    assert fit is not None
    assert fit[0] == pytest.approx(tuple(centre), abs=1e-6) and fit[1] == pytest.approx(92.0)
    named = {f"E{i}": tuple(p) for i, p in enumerate(pts)}
    drawn = project_geometry(named)
    for i, p in enumerate(pts):
        assert drawn[f"E{i}"] == pytest.approx(project_2d(tuple(p - centre), (92.0, 92.0, 92.0)))


def test_too_few_or_flat_points_use_the_frames_origin() -> None:
    assert fit_sphere([(0, 0, 90), (60, 0, 60), (-60, 0, 60)]) is None
    assert fit_sphere([(x, y, 0.0) for x in range(3) for y in range(3)]) is None
    assert project_geometry({"a": (0.0, 0.0, 90.0), "b": (float("nan"), 0.0, 1.0)}) == {"a": (0.0, 0.0)}
