"""Department profiles (configs/profiles/): loaded strictly over quality.yaml.

Outside references: ACNS Guideline 5 (Kuratani et al. 2016) for the reduced neonatal
montage (Fp1/Fp2 or Fp3/Fp4, C3, C4, Cz, T3/T7, T4/T8, O1, O2 — the list from memory);
children's and neonates' larger amplitudes (an adult 150 µV RMS limit flags normal
children: from memory, no published per-lead RMS value) are checked as an ordering only.
"""

from __future__ import annotations

import hashlib
from pathlib import Path

import pytest

from bedside.checks.profiles import PROFILE_DIR, load_profile
from bedside.checks.settings import load_quality
from bedside.errors import ConfigError, InputError


def test_adult_is_quality_yaml_as_shipped() -> None:
    assert load_profile("adult").quality == load_quality()
    assert load_profile(None).name == "adult"


def test_children_and_neonates_get_higher_amplitude_limits() -> None:
    adult, child, baby = (load_profile(n).quality.artifacts for n in ("adult", "paediatric", "neonatal"))
    assert adult.rms_check_uv < child.rms_check_uv <= baby.rms_check_uv
    assert adult.rms_bad_uv < child.rms_bad_uv <= baby.rms_bad_uv
    # Only what the profile names changes: the rest is quality.yaml's.
    assert child.pop_step_min_uv == adult.pop_step_min_uv


def test_the_neonatal_montage_is_acns_guideline_5s() -> None:
    p = load_profile("neonatal")
    assert p.missing_from(["Fp3", "Fp4", "C3", "C4", "Cz", "T3", "T4", "O1", "O2"]) == ()
    assert p.missing_from(["Fp1", "Fp2", "C3", "C4", "Cz", "T7", "T8", "O1"]) == ("O2",)


def test_icu_carries_a_recheck_interval() -> None:
    assert load_profile("icu-long-term").recheck_h == 12.0
    assert load_profile("adult").recheck_h is None


def test_the_hash_is_the_files() -> None:
    p = load_profile("neonatal")
    assert p.sha256 == hashlib.sha256((PROFILE_DIR / "neonatal.yaml").read_bytes()).hexdigest()


def test_an_unknown_profile_names_the_accepted_ones() -> None:
    with pytest.raises(InputError, match=r"--profile 'kids' is not a department profile; accepted: adult, "
                                         r"icu-long-term, neonatal, paediatric, research-high-density"):
        load_profile("kids")


def _folder(tmp_path: Path, text: str) -> Path:
    (tmp_path / "ward.yaml").write_text(text, encoding="utf-8")
    return tmp_path


def test_an_unknown_quality_key_names_the_profile_file_and_line(tmp_path: Path) -> None:
    folder = _folder(tmp_path, "profile:\n  title: t\n  quality:\n    artifacts:\n      rms_chek_uv: 200.0\n")
    with pytest.raises(ConfigError, match=r"ward\.yaml, line 5: 'profile\.quality\.artifacts\.rms_chek_uv' is not "
                                          r"a known setting; did you mean 'rms_check_uv'\?"):
        load_profile("ward", folder=folder)


def test_an_unknown_profile_key_and_a_bad_value_are_named(tmp_path: Path) -> None:
    with pytest.raises(ConfigError, match=r"ward\.yaml, line 4: 'profile\.impedance\.limit' is not a known setting; did you mean 'limit_kohm'"):
        load_profile("ward", folder=_folder(tmp_path, "profile:\n  title: t\n  impedance:\n    limit: 5\n"))
    with pytest.raises(ConfigError, match=r"line 4: 'profile\.impedance\.limit_kohm' is 0\.0; accepted: 0\.1 to 1000"):
        load_profile("ward", folder=_folder(tmp_path, "profile:\n  title: t\n  impedance:\n    limit_kohm: 0.0\n"))


def test_overrides_must_agree_with_quality_yaml(tmp_path: Path) -> None:
    """A check level above quality.yaml's bad level is refused for the whole."""
    folder = _folder(tmp_path, "profile:\n  title: t\n  quality:\n    artifacts:\n      rms_check_uv: 299.0\n"
                               "      rms_bad_uv: 200.0\n")
    with pytest.raises(ConfigError, match=r"rms_check_uv' \(299\.0\) must not be above"):
        load_profile("ward", folder=folder)
