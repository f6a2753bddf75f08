"""The correlation check (a lead unlike every other) against NumPy and PREP's rule.

Outside references: numpy.corrcoef and numpy.percentile for the metric (PREP's
correlation criterion, Bigdely-Shamlo et al. 2015: the 98th percentile of |r| with the
other channels); MNE-Python's sample EEG, where EEG 053 is the channel MNE-Python's
tutorials mark bad.
"""

from __future__ import annotations

from types import SimpleNamespace

import numpy as np
import pytest
import real_eeg

from bedside.checks import correlation
from bedside.checks.settings import load_quality

from .real_run import make_engine, run


@pytest.mark.parametrize("c", [5, 19, 64, 256])
def test_metric_is_the_98th_percentile_of_abs_r_with_the_others(c: int) -> None:
    rng = np.random.default_rng(c)
    x = rng.normal(size=(400, c))
    x = x + np.roll(x, 1, axis=1)
    xc = x - x.mean(axis=0)
    ctx = SimpleNamespace(names=tuple(map(str, range(c))), valid=np.ones(c, dtype=bool), margins=None)
    got = correlation.corr_98(xc.T @ xc, ctx.valid, load_quality())
    res = correlation.evaluate([got], ctx, load_quality())  # type: ignore[arg-type]
    np.testing.assert_array_equal(res.metrics["corr_98"], got)
    r = np.abs(np.corrcoef(x, rowvar=False))
    ref = [np.percentile(np.delete(r[i], i), 98) for i in range(c)]
    np.testing.assert_allclose(got, ref, rtol=1e-12, atol=1e-12)


def test_eeg_053_is_unlike_every_other_lead_and_no_other_is() -> None:
    rec = real_eeg.mne_sample()
    r = run(make_engine(rec), rec.data_uv)
    i = r.names.index("EEG 053")
    judged = [f for t, f in r.judged() if t >= 5.0]
    assert all(f.channels[i].checks["correlation"] != "good" for f in judged)
    assert any(f.channels[i].checks["correlation"] == "bad" for f in judged)
    assert "unlike every other lead" in " ".join(judged[-1].channels[i].reasons)
    others = {c.name for f in judged for c in f.channels if c.is_scalp and c.name != "EEG 053"
              and c.checks.get("correlation", "good") != "good"}
    assert not others
    # numpy on the whole raw recording: EEG 053 below PREP's 0.4, the median lead above 0.9.
    x = rec.pick("EEG").data_uv
    rr = np.abs(np.corrcoef(x, rowvar=False))
    np.fill_diagonal(rr, 0.0)
    j = rec.pick("EEG").labels.index("EEG 053")
    assert rr[j].max() < 0.4 < 0.9 < np.median(rr.max(axis=1))  # PREP: below 0.4 is bad


def test_too_few_leads_to_compare_is_no_verdict() -> None:
    ctx = SimpleNamespace(names=("a", "b", "c"), valid=np.ones(3, dtype=bool), margins=None)
    few = correlation.corr_98(np.eye(3), ctx.valid, load_quality())
    res = correlation.evaluate([few], ctx, load_quality())  # type: ignore[arg-type]
    assert (res.level == 0).all() and np.isnan(res.metrics["corr_98"]).all()
    none_yet = correlation.evaluate([], ctx, load_quality())  # type: ignore[arg-type]
    assert (none_yet.level == 0).all()


def test_judged_by_the_lowest_of_the_newest_windows() -> None:
    """PREP: bad when below the threshold in more than 1 % of the windows; live: in any of
    the newest ``windows``."""
    ctx = SimpleNamespace(names=("a", "b"), valid=np.ones(2, dtype=bool), margins=None)
    hist = [np.array([0.9, 0.9]), np.array([0.3, 0.9]), np.array([0.9, 0.95])]
    res = correlation.evaluate(hist, ctx, load_quality())  # type: ignore[arg-type]
    assert res.level.tolist() == [1, 0]
    assert res.metrics["corr_98_lowest"].tolist() == [0.3, 0.9]
