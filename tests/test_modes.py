"""Per-mode limits against the bus specification tables.

UM10204 Rev. 6 Tables 9/10 carry the same numbers as Rev. 7 Tables 10/11; AN4471 Tables
1/2 reproduce SMBus 2.0 Tables 1/2."""

from __future__ import annotations

import dataclasses

import pytest

from netaudit.electrical.modes import MODES, get_mode

CONTRACT_NAMES = ["standard", "fast", "fast-plus", "smbus", "smbus-400k", "smbus-1m"]


def test_modes_are_exactly_the_contract_names():
    assert sorted(MODES) == sorted(CONTRACT_NAMES)


@pytest.mark.parametrize("name, f_hz, tr_s, tf_s, cb_f", [
    # UM10204 Rev. 6 Table 10 (Rev. 7 Table 11): f_SCL, t_r max, t_f max, C_b max
    ("standard", 100e3, 1000e-9, 300e-9, 400e-12),
    ("fast", 400e3, 300e-9, 300e-9, 400e-12),
    ("fast-plus", 1000e3, 120e-9, 120e-9, 550e-12),
])
def test_i2c_bus_line_limits_match_um10204_table_10(name, f_hz, tr_s, tf_s, cb_f):
    mode = get_mode(name)
    assert (mode.f_scl_hz, mode.rise_time_max_s, mode.fall_time_max_s, mode.cb_max_f) == \
        pytest.approx((f_hz, tr_s, tf_s, cb_f))


@pytest.mark.parametrize("name, iol_a", [
    ("standard", 3e-3), ("fast", 3e-3),    # UM10204 Rev. 6 Table 9: I_OL 3 mA at 0.4 V
    ("fast-plus", 20e-3),                  # UM10204 Rev. 6 Table 9: I_OL 20 mA at 0.4 V
])
def test_i2c_sink_current_matches_um10204_table_9(name, iol_a):
    mode = get_mode(name)
    assert mode.sink(3.3) == pytest.approx((0.4, iol_a))


@pytest.mark.parametrize("name", ["standard", "fast", "fast-plus"])
def test_i2c_levels_are_fractions_of_the_supply(name):
    mode = get_mode(name)
    # UM10204 Rev. 6 Table 9: V_IL 0.3 VDD, V_IH 0.7 VDD; Table 10: V_nL 0.1 VDD, V_nH 0.2 VDD
    assert mode.vil_max_v(5.0) == pytest.approx(1.5)
    assert mode.vih_min_v(5.0) == pytest.approx(3.5)
    assert mode.noise_margin_low_v(5.0) == pytest.approx(0.5)
    assert mode.noise_margin_high_v(5.0) == pytest.approx(1.0)


@pytest.mark.parametrize("name", ["fast", "fast-plus"])
def test_low_supply_uses_0_2_vdd_at_2_ma(name):
    # UM10204 Rev. 6 Table 9 V_OL2: 0.2 VDD at 2 mA sink current, VDD <= 2 V
    assert get_mode(name).sink(1.8) == pytest.approx((0.36, 2e-3))


def test_low_supply_rule_starts_at_2_volts():
    # UM10204 Rev. 6 Table 9: V_OL1 applies for VDD > 2 V, V_OL2 for VDD <= 2 V
    fast = get_mode("fast")
    assert fast.sink(2.0) == pytest.approx((0.4, 2e-3))
    assert fast.sink(2.01) == pytest.approx((0.4, 3e-3))


def test_smbus_2_levels_are_fixed_volts():
    smbus = get_mode("smbus")
    # AN4471 Table 2 (SMBus 2.0 Table 2): V_IL 0.8 V, V_IH 2.1 V, whatever the supply
    assert smbus.vil_max_v(3.3) == 0.8 and smbus.vil_max_v(5.0) == 0.8
    assert smbus.vih_min_v(3.3) == 2.1 and smbus.vih_min_v(5.0) == 2.1


@pytest.mark.parametrize("name", ["smbus-400k", "smbus-1m"])
def test_smbus_3_high_level_is_1_35_volts(name):
    # Microchip datasheet Table 39-7, "SMBus 3.0 levels": V_IL 0.8 V, V_IH 1.35 V
    mode = get_mode(name)
    assert mode.vil_max_v(1.8) == 0.8
    assert mode.vih_min_v(1.8) == 1.35


def test_smbus_100k_timing_matches_an4471_table_1():
    # AN4471 Table 1 (SMBus 2.0 Table 1): f_SMB 10-100 kHz, t_R 1000 ns, t_F 300 ns,
    # t_LOW 4.7 us, t_HIGH 4.0 us
    smbus = get_mode("smbus")
    assert (smbus.f_scl_min_hz, smbus.f_scl_hz, smbus.rise_time_max_s,
            smbus.fall_time_max_s, smbus.t_low_min_s, smbus.t_high_min_s) == \
        pytest.approx((10e3, 100e3, 1000e-9, 300e-9, 4.7e-6, 4.0e-6))


def test_smbus_modes_size_pullups_for_3_ma():
    # UM10204 Rev. 6 §4.2.3: SMBus high power (4 mA) and I2C devices work together if the
    # pull-up is sized for 3 mA; V_OL 0.4 V, AN4471 Table 2.
    for name in ("smbus", "smbus-400k", "smbus-1m"):
        assert get_mode(name).sink(3.3) == pytest.approx((0.4, 3e-3))


def test_smbus_low_supply_keeps_fixed_output_level():
    # The V_OL2 row belongs to UM10204 Table 9, not to the SMBus tables.
    assert get_mode("smbus-1m").sink(1.8) == pytest.approx((0.4, 3e-3))


def test_i2c_edges_are_timed_between_30_and_70_percent():
    # UM10204 Rev. 7 Table 11 note [1]: values referred to V_IH(min) 0.7 VDD, V_IL(max) 0.3 VDD
    assert get_mode("fast").edge_thresholds_v(3.3) == pytest.approx((0.99, 2.31))


def test_smbus_edges_are_timed_from_vil_minus_to_vih_plus_0_15_volts():
    # TI BQ78350 datasheet: t_R from V_ILMAX - 0.15 V to V_IHMIN + 0.15 V
    assert get_mode("smbus").edge_thresholds_v(5.0) == pytest.approx((0.65, 2.25))


def test_speed_rank_orders_standard_fast_fast_plus():
    assert get_mode("standard").rank < get_mode("fast").rank < get_mode("fast-plus").rank


def test_smbus_ranks_follow_clock_frequency():
    by_rank = sorted(MODES.values(), key=lambda m: m.rank)
    freqs = [m.f_scl_hz for m in by_rank]
    assert freqs == sorted(freqs)
    assert get_mode("smbus").rank == get_mode("standard").rank
    assert get_mode("smbus-400k").rank == get_mode("fast").rank
    assert get_mode("smbus-1m").rank == get_mode("fast-plus").rank


def test_families_are_named():
    assert {m.family for m in MODES.values()} == {"i2c", "smbus"}
    assert get_mode("smbus-400k").family == "smbus"
    assert get_mode("fast").family == "i2c"


def test_labels_use_the_specification_names():
    # UM10204 mode names
    assert get_mode("standard").label == "Standard-mode"
    assert get_mode("fast").label == "Fast-mode"
    assert get_mode("fast-plus").label == "Fast-mode Plus"


def test_smbus_has_no_capacitance_limit_until_confirmed():
    assert all(get_mode(n).cb_max_f is None for n in ("smbus", "smbus-400k", "smbus-1m"))


def test_unknown_mode_error_lists_valid_names():
    with pytest.raises(ValueError) as info:
        get_mode("turbo")
    message = str(info.value)
    assert "turbo" in message
    assert all(name in message for name in CONTRACT_NAMES)


def test_modes_are_frozen():
    with pytest.raises(dataclasses.FrozenInstanceError):
        get_mode("fast").f_scl_hz = 1.0
