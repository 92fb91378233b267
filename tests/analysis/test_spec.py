"""Part spec files: the keys scripts rely on, and faults named by file and key."""

import pytest

from benchlog.analysis.spec import MosfetSpec
from benchlog.badinput import BadInput
from benchlog.specfiles import load_spec

from .spec_texts import PMOS, RECT, spec


def test_keys_land_in_the_right_places(tmp_path):
    path = tmp_path / "p.toml"
    path.write_text(
        PMOS + "rds_on_max_ohm = 0.032\nrds_on_2_ohm = 0.040\nrds_on_2_vgs_v = 4.5\n"
        "rds_on_tj_c = [-50.0, 25.0, 150.0]\nrds_on_factor = [0.7, 1.0, 1.6]\n"
        "vgs_max_v = 20.0\nvds_max_v = 60.0\nrth_ja_k_per_w = 62.0\ntj_max_c = 150\n"
    )
    s = load_spec(path)
    assert (s.name, s.kind, s.path) == ("T-PMOS", "pmos", str(path))
    assert s.part.rds_on_ohm == 0.026 and s.part.rds_on_max_ohm == 0.032
    assert s.part.rds_on_tj_c == (-50.0, 25.0, 150.0)
    assert s.thermal.rth_ja_k_per_w == 62.0 and s.thermal.tj_max_c == 150.0
    assert s.has_max and s.element.has_gate and isinstance(s.part, MosfetSpec)


def test_zth_curve_with_its_stated_uncertainty(tmp_path):
    s = spec(PMOS + "zth_t_s = [0.1, 1.0]\nzth_k_per_w = [0.5, 4.8]\nzth_u_pct = 5\n")
    assert s.thermal.zth_u_pct == 5.0 and s.thermal.zth_k_per_w == (0.5, 4.8)
    assert spec(PMOS + "zth_t_s = [0.1, 1.0]\nzth_k_per_w = [0.5, 4.8]\n").thermal.zth_u_pct is None


def test_integers_are_numbers_and_defaults_apply():
    s = spec(RECT.replace("vf_at_a = 2.0", "vf_at_a = 2"))
    assert s.part.vf_at_a == 2.0 and s.part.vf_at_c == 25.0 and s.part.rs_ohm == 0.0
    assert not s.has_max and s.thermal.rth_ja_k_per_w is None


@pytest.mark.parametrize(
    "text, where, expected",
    [
        (RECT.replace('kind = "rectifier"', 'kind = "zener"'), "kind", "one of"),
        (RECT.replace("vf_v = 0.85\n", ""), "vf_v", "a value for this key"),
        (RECT + "vf_max = 1.0\n", "vf_max", "did you mean 'vf_max_v'"),
        (RECT + "rds_on_ohm = 0.1\n", "rds_on_ohm", "unknown key"),
        (RECT + "vf_max_v = 0.5\n", "vf_max_v", "at least vf_v"),
        (RECT + "ir_max_a = 1e-4\n", "ir_at_v", "together with 'ir_max_a'"),
        (RECT.replace("0.85", "'0.85'"), "vf_v", "a number"),
        (PMOS + "rds_on_tj_c = [25.0, 150.0]\n", "rds_on_factor", "two lists"),
        (PMOS + "rds_on_tj_c = [25.0, 150.0]\nrds_on_factor = [1.0]\n", "rds_on_factor", "one per"),
        (PMOS + "rds_on_tj_c = [150.0, 25.0]\nrds_on_factor = [1.6, 1.0]\n", "rds_on_tj_c", "rising"),
        (PMOS + "rds_on_2_ohm = 0.020\nrds_on_2_vgs_v = 4.5\n", "rds_on_2_ohm", "higher R_DS(on)"),
        (PMOS.replace("vgs_th_v = 2.0", "vgs_th_v = 12.0"), "rds_on_vgs_v", "above threshold"),
        (PMOS + "rth_ja_k_per_w = -3\n", "rth_ja_k_per_w", "above 0"),
        (PMOS + "zth_u_pct = 5.0\n", "zth_u_pct", "zth_t_s and zth_k_per_w beside it"),
        (PMOS + "rth_ja_k_per_w = 50\nrth_jc_k_per_w = 60\n", "rth_jc_k_per_w", "less than junction to ambient"),
        (PMOS + "rth_jc_k_per_w = 0\n", "rth_jc_k_per_w", "above 0"),
        (PMOS + "zth_t_s = [0.1, 1.0]\nzth_k_per_w = [0.5, 4.8]\nzth_u_pct = 150\n", "zth_u_pct", "100"),
        (PMOS + "zth_t_s = [0.1, 1.0]\nzth_k_per_w = [0.5, 4.8]\nzth_u_pct = -1\n", "zth_u_pct", "0"),
    ],
)
def test_faults_name_file_key_and_expectation(text, where, expected):
    with pytest.raises(BadInput) as err:
        spec(text, "parts/x.toml")
    line = err.value.line()
    assert line.startswith("parts/x.toml: ")
    assert err.value.where == where
    assert expected in line


def test_missing_file(tmp_path):
    with pytest.raises(BadInput, match="file not found"):
        load_spec(tmp_path / "none.toml")
