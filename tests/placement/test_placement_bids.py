"""BIDS electrode files (BIDS specification 1.11, EEG: electrodes.tsv needs name, x, y, z;
with it, coordsystem.json needs EEGCoordinateSystem and EEGCoordinateUnits; an "Other"
system needs EEGCoordinateSystemDescription). Read back with MNE-Python's reader."""

from __future__ import annotations

import csv
import json
import os
from pathlib import Path

import pytest

from bedside.errors import RecordError
from bedside.placement import HeadMeasurements, plan_placement
from bedside.placement.bids import write_coordsystem_json, write_electrodes_tsv


def test_electrodes_tsv_columns_and_values(tmp_path: Path) -> None:
    plan = plan_placement(HeadMeasurements(36.0, 35.0, 56.0))
    path = write_electrodes_tsv(tmp_path / "electrodes.tsv", plan.positions_mm, {"Cz": 4.2})
    with path.open(encoding="utf-8", newline="") as fh:
        rows = list(csv.DictReader(fh, delimiter="\t"))
    # BIDS: name, x, y, z first, in that order; n/a for missing values
    assert list(rows[0])[:4] == ["name", "x", "y", "z"]
    assert "type" in rows[0] and "impedance" in rows[0]
    by = {r["name"]: r for r in rows}
    assert set(by) == set(plan.positions_mm)
    assert by["Cz"]["impedance"] == "4.2" and by["Fz"]["impedance"] == "n/a"
    assert tuple(float(by["T7"][k]) for k in "xyz") == plan.positions_mm["T7"]
    assert not [p for p in tmp_path.iterdir() if p.name.startswith(".")]  # no temp left


def test_electrodes_tsv_read_by_mne(tmp_path: Path) -> None:
    """MNE-Python's read_custom_montage (.tsv: name x y z) reads our file back."""
    import mne
    plan = plan_placement(HeadMeasurements(36.0, 35.0, 56.0), system="10-10")
    path = write_electrodes_tsv(tmp_path / "electrodes.tsv", plan.positions_mm)
    montage = mne.channels.read_custom_montage(path, head_size=None)
    pos = montage.get_positions()["ch_pos"]
    assert set(pos) == set(plan.positions_mm)
    assert tuple(pos["Cz"]) == pytest.approx(plan.positions_mm["Cz"])


def test_coordsystem_json(tmp_path: Path) -> None:
    path = write_coordsystem_json(tmp_path / "coordsystem.json", {"NAS": (0.0, 96.0, 0.0)})
    doc = json.loads(path.read_text(encoding="utf-8"))
    assert doc["EEGCoordinateSystem"] == "Other"
    assert doc["EEGCoordinateUnits"] == "mm"
    assert "preauricular" in doc["EEGCoordinateSystemDescription"]
    assert doc["AnatomicalLandmarkCoordinates"]["NAS"] == [0.0, 96.0, 0.0]
    assert (
        json.loads(write_coordsystem_json(tmp_path / "c2.json").read_text())["EEGCoordinateUnits"]
        == "mm"
    )


def test_write_replaces_atomically(tmp_path: Path) -> None:
    """Atomic write (temp, fsync, rename): the old file is replaced whole."""
    path = tmp_path / "electrodes.tsv"
    write_electrodes_tsv(path, {"Cz": (0.0, 0.0, 100.0)})
    inode = path.stat().st_ino
    write_electrodes_tsv(path, {"Fz": (0.0, 60.0, 90.0)})
    assert path.read_text(encoding="utf-8").splitlines()[1].startswith("Fz\t")
    assert path.stat().st_ino != inode  # a new file was renamed over the old one


def test_unwritable_folder_is_a_clear_error(tmp_path: Path) -> None:
    with pytest.raises(RecordError, match="cannot write"):
        write_electrodes_tsv(tmp_path / "missing" / "electrodes.tsv", {"Cz": (0.0, 0.0, 1.0)})
    if os.geteuid() != 0:  # root ignores folder permissions
        ro = tmp_path / "ro"
        ro.mkdir()
        ro.chmod(0o500)
        with pytest.raises(RecordError, match="cannot write"):
            write_coordsystem_json(ro / "coordsystem.json")


def test_names_with_tabs_refused(tmp_path: Path) -> None:
    with pytest.raises(RecordError, match="tab or line break"):
        write_electrodes_tsv(tmp_path / "e.tsv", {"C\tz": (0.0, 0.0, 1.0)})
