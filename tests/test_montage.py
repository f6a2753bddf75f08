"""The page of traces' montages against the ACNS proposal for standard montages
(Acharya JN, Hani AJ, Thirumala PD, Tsuchida TN 2016, ACNS Guideline 3, J Clin
Neurophysiol 33(4):312-316).

The lists below are the guideline's longitudinal (LB-18) and transverse (TB-18)
bipolar derivations as we recall its tables (from memory; the chains themselves are
the trade's double banana and transverse rows, common practice); the general rules
are the guideline's own section 2: anterior above posterior, left above right,
pairs in unbroken straight chains. The derivations are checked against plain
subtraction with NumPy on a seeded random window, and the order against the
positions of MNE-Python's colin27_1020 template.
"""

from __future__ import annotations

import numpy as np
import pytest

from bedside.montage import (
    AVERAGE,
    LONGITUDINAL_CHAINS,
    TRANSVERSE_CHAINS,
    chain_pairs,
    chain_partner,
    derive,
    plan_montage,
)

#: Longitudinal bipolar, 18 derivations (from memory of the guideline's LB-18 list).
LB_18 = ["Fp1-F7", "F7-T7", "T7-P7", "P7-O1", "Fp1-F3", "F3-C3", "C3-P3", "P3-O1", "Fz-Cz", "Cz-Pz", "Fp2-F4", "F4-C4", "C4-P4", "P4-O2", "Fp2-F8", "F8-T8", "T8-P8", "P8-O2"]
#: Transverse bipolar, 18 derivations (from memory of the guideline's TB-18 list).
TB_18 = ["F7-Fp1", "Fp1-Fp2", "Fp2-F8", "F7-F3", "F3-Fz", "Fz-F4", "F4-F8", "T7-C3", "C3-Cz", "Cz-C4", "C4-T8", "P7-P3", "P3-Pz", "Pz-P4", "P4-P8", "P7-O1", "O1-O2", "O2-P8"]
#: The 21 sites of the 10-20 system less the ear references (Jasper 1958; common practice).
SITES_1020 = ["Fp1", "Fp2", "F7", "F3", "Fz", "F4", "F8", "T7", "C3", "Cz", "C4", "T8", "P7", "P3", "Pz", "P4", "P8", "O1", "O2"]


def _xyz() -> dict[str, tuple[float, float, float]]:
    """Site positions from MNE-Python's colin27_1020 template (a real MRI head; outside reference;
    head frame: x right, y front, z up)."""
    import mne

    pos = mne.channels.make_standard_montage("colin27_1020").get_positions()["ch_pos"]
    return {s: tuple(pos[s]) for s in SITES_1020}


def test_the_chains_give_the_guidelines_lists() -> None:
    assert [f"{a}-{b}" for a, b in chain_pairs(LONGITUDINAL_CHAINS)] == LB_18
    assert [f"{a}-{b}" for a, b in chain_pairs(TRANSVERSE_CHAINS)] == TB_18
    plan = plan_montage(SITES_1020, [True] * 19, "longitudinal")
    assert [d.label for d in plan.derivations] == LB_18 and plan.missing == ()
    plan = plan_montage(SITES_1020, [True] * 19, "transverse")
    assert [d.label for d in plan.derivations] == TB_18 and plan.missing == ()


def test_longitudinal_runs_front_to_back_and_left_above_right() -> None:
    """Guideline 3, 2.1(g) and 2.2: anterior above posterior within a chain; left-sided
    chains above right-sided ones (x: right, y: front, on the average head)."""
    xyz = _xyz()
    for chain in LONGITUDINAL_CHAINS:
        ys = [xyz[s][1] for s in chain]
        assert ys == sorted(ys, reverse=True), chain
    sides = [np.mean([xyz[s][0] for s in chain]) for chain in LONGITUDINAL_CHAINS]
    assert sides == sorted(sides)  # left (negative x) first


def test_transverse_runs_left_to_right_and_front_above_back() -> None:
    xyz = _xyz()
    for chain in TRANSVERSE_CHAINS:
        xs = [xyz[s][0] for s in chain]
        assert xs == sorted(xs), chain
    rows = [np.mean([xyz[s][1] for s in chain]) for chain in TRANSVERSE_CHAINS]
    assert rows == sorted(rows, reverse=True)


@pytest.mark.parametrize("montage", ["longitudinal", "transverse", "average", "recorded"])
def test_derivations_are_the_plain_differences(montage: str) -> None:
    rng = np.random.default_rng(7)
    names = [*SITES_1020, "ECG"]
    scalp = [True] * 19 + [False]
    x = rng.normal(0.0, 30.0, (500, len(names)))
    plan = plan_montage(names, scalp, montage)  # type: ignore[arg-type]
    got = derive(x, plan, scalp)
    col = {n: x[:, i] for i, n in enumerate(names)}
    avg = x[:, :19].mean(axis=1)
    for j, d in enumerate(plan.derivations):
        if montage == "recorded":
            want = col[d.label]
        elif montage == "average":
            want = col[d.label] - avg
            assert d.minus == AVERAGE
        else:
            a, b = d.label.split("-")
            want = col[a] - col[b]
        np.testing.assert_allclose(got[:, j], want, rtol=0, atol=1e-9)
    assert "ECG" not in {e for d in plan.derivations for e in d.electrodes}
    # The average of average-referenced scalp channels is zero (a property of the average reference).
    if montage == "average":
        np.testing.assert_allclose(got.mean(axis=1), 0.0, atol=1e-9)


def test_classic_names_and_missing_electrodes_are_said() -> None:
    """A stream with classic names (T3 for T7) reads the same chains; an absent
    electrode drops its pairs and says which."""
    names = [s.replace("T7", "T3").replace("P8", "T6") for s in SITES_1020 if s != "F7"]
    plan = plan_montage(names, [True] * len(names), "longitudinal")
    labels = [d.label for d in plan.derivations]
    assert "T7-P7" in labels and "T8-P8" in labels
    assert next(d for d in plan.derivations if d.label == "T7-P7").electrodes == ("T3", "P7")
    assert plan.missing == ("Fp1-F7 (no F7)", "F7-T7 (no F7)")


def test_chain_partner_replaces_the_nearest_neighbour() -> None:
    assert chain_partner("Fp1", SITES_1020) == "F7"   # first chain holding it: temporal
    assert chain_partner("F8", SITES_1020) == "T8"    # (not the nearer FC6 of a 10-10 cap)
    assert chain_partner("O2", SITES_1020) == "P4"    # chain end: the one before it
    assert chain_partner("Pz", SITES_1020) == "Cz"
    assert chain_partner("E61", SITES_1020) is None


def test_bad_input_is_refused_with_the_accepted_values() -> None:
    with pytest.raises(ValueError, match="accepted: recorded, average, longitudinal, transverse"):
        plan_montage(SITES_1020, [True] * 19, "laplacian")  # type: ignore[arg-type]
    with pytest.raises(ValueError, match="19 names but 3 scalp flags"):
        plan_montage(SITES_1020, [True] * 3, "recorded")
