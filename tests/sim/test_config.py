"""Sim settings from code and from a `--config` TOML file."""

from __future__ import annotations

import pytest

from benchlog.badinput import BadInput
from benchlog.sim.config import SimConfig, load_sim_config
from benchlog.sim.faults import FaultPlan


def test_defaults_are_loopback_and_ephemeral():
    config = SimConfig()
    assert config.host == "127.0.0.1" and config.port == 0 and config.is_loopback
    assert config.roles == ("supply", "load", "meter")
    assert SimConfig(current_meter=True).roles[-1] == "current_meter"


def test_config_file_round_trip(tmp_path):
    path = tmp_path / "sim.toml"
    path.write_text(
        'element = "schottky"\nseed = 9\nambient_c = 40\nlatency_s = 0.002\nmeter_has_measure = false\n'
        "[element_params]\nr_s_ohm = 0.05\n"
        '[faults]\nhang_after = 5\nrole = "meter"\n'
    )
    config = load_sim_config(path)
    assert (config.element, config.seed, config.ambient_c, config.latency_s) == ("schottky", 9, 40.0, 0.002)
    assert not config.meter_has_measure and dict(config.element_params) == {"r_s_ohm": 0.05}
    assert config.faults == FaultPlan(hang_after=5, role="meter")


def test_thermal_settings_from_a_file(tmp_path):
    path = tmp_path / "sim.toml"
    path.write_text('element = "pmos"\nthermal_time_scale = 0.05\n[element_params]\nrth_jc_k_per_w = 8.0\n'
                    "cth_case_j_per_k = 0.3\n")
    config = load_sim_config(path)
    assert config.thermal_time_scale == 0.05
    assert dict(config.element_params) == {"rth_jc_k_per_w": 8.0, "cth_case_j_per_k": 0.3}


@pytest.mark.parametrize(
    "text, where",
    [
        ('element = "triode"\n', "element"),
        ("seed = 1.5\n", "seed"),
        ("latency_s = -1\n", "latency_s"),
        ("thermal_time_scale = 0\n", "thermal_time_scale"),
        ('element = "pmos"\n[element_params]\ncth_case = 0.1\n', "[element_params].cth_case"),
        ("colour = 1\n", "colour"),
        ('element = "pmos"\n[element_params]\nr_on = 0.01\n', "[element_params].r_on"),
        ("[faults]\nhang_after = -2\n", "[faults].hang_after"),
        ('[faults]\nrole = "scope"\n', "[faults].role"),
        ("port = 70000\n", "port"),
        ("element = \n", ""),
    ],
)
def test_bad_config_files_raise_bad_input_naming_the_key(tmp_path, text, where):
    path = tmp_path / "sim.toml"
    path.write_text(text)
    with pytest.raises(BadInput) as info:
        load_sim_config(path)
    assert str(path) in info.value.line() and where in info.value.line()


def test_bad_settings_in_code_raise_value_error():
    with pytest.raises(ValueError):
        SimConfig(element="triode")
    with pytest.raises(ValueError):
        SimConfig(element="pmos", element_params={"ideality": 1.2})  # a diode parameter on a MOSFET
    with pytest.raises(ValueError):
        SimConfig(line_frequency_hz=float("nan"))


def test_timing_is_real_by_default_and_instant_from_the_config_file(tmp_path):
    assert SimConfig().timing == "real"
    path = tmp_path / "sim.toml"
    path.write_text('timing = "instant"\n')
    assert load_sim_config(path).timing == "instant"
    path.write_text('timing = "fast"\n')
    with pytest.raises(BadInput) as caught:
        load_sim_config(path)
    assert "timing" in caught.value.line() and "'instant'" in caught.value.line()
    with pytest.raises(ValueError, match="timing"):
        SimConfig(timing="fast")
