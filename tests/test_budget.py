"""Pull-up budget arithmetic against UM10204 §7, TI SLVA689 and NXP UM10301.

Values marked COMPUTED are worked from the specification's own formula (REFERENCES.md §8),
not quoted from a document."""

from __future__ import annotations

import math

import pytest

from netaudit.electrical.budget import (RISE_CONSTANT, edge_time, low_level_with_series,
                                        margin_percent, max_capacitance, max_frequency,
                                        parallel, pullup_current, pullup_window, rise_time,
                                        rise_time_thevenin, rp_max, rp_max_for_leakage,
                                        rp_min, series_low_level_margin, thevenin)
from netaudit.electrical.modes import get_mode
from netaudit.units import round_down

FAST, STANDARD, FAST_PLUS = get_mode("fast"), get_mode("standard"), get_mode("fast-plus")


# --- UM10204 §7.1 ------------------------------------------------------------------------

def test_rise_constant_is_ln_7_over_3_printed_as_0_8473():
    # UM10204 Rev. 6 §7.1: T = t2 - t1 = 0.8473 x RC
    assert RISE_CONSTANT == pytest.approx(math.log(7 / 3))
    assert round(RISE_CONSTANT, 4) == 0.8473


def test_rise_constant_is_difference_of_the_printed_crossing_times():
    # UM10204 Rev. 6 §7.1: t1 = 0.3566749 x RC (0.3 VDD), t2 = 1.2039729 x RC (0.7 VDD)
    # each printed to 7 decimals, so their difference carries up to 1e-7 of rounding
    assert RISE_CONSTANT == pytest.approx(1.2039729 - 0.3566749, abs=1.5e-7)


def test_rp_max_is_equation_1():
    # UM10204 Rev. 6 §7.1 Eq. (1): Rp(max) = tr / (0.8473 x Cb)
    assert rp_max(300e-9, 200e-12) == pytest.approx(300e-9 / (0.8473 * 200e-12), rel=1e-4)


def test_rp_min_is_equation_2():
    # UM10204 Rev. 6 §7.1 Eq. (2): Rp(min) = (VDD - VOL(max)) / IOL
    assert rp_min(3.3, 0.4, 3e-3) == pytest.approx((3.3 - 0.4) / 3e-3)


def test_rise_time_of_one_pullup_is_0_8473_rc():
    # UM10204 Rev. 6 §7.1
    assert rise_time(4700.0, 100e-12) == pytest.approx(0.8473 * 4700.0 * 100e-12, rel=1e-4)


# --- TI SLVA689 §4 worked example ------------------------------------------------------------

def test_slva689_fast_mode_window_at_3v3_and_200pf():
    # TI SLVA689 (Feb 2015) §4: Fast-mode, VCC 3.3 V, Cb 200 pF -> "any available resistor
    # value between 966.667 Ω and 1.77 kΩ"
    window = pullup_window(3.3, 200e-12, FAST)
    assert window.rp_min == pytest.approx(966.667, abs=1e-3)
    assert window.rp_max == pytest.approx(1770.0, abs=5.0)
    assert window.feasible


def test_slva689_window_suggestions_are_e24_values_inside_it():
    # Window from TI SLVA689; E24 per IEC 60063
    window = pullup_window(3.3, 200e-12, FAST)
    assert window.suggestions == (1000.0, 1100.0, 1200.0, 1300.0, 1500.0, 1600.0)
    assert window.suggestions_e12 == (1000.0, 1200.0, 1500.0)


def test_pick_is_largest_e12_with_20_percent_rise_time_headroom():
    # Our documented rule on the SLVA689 window: 1.5 kΩ gives 254 ns (> 0.8 x 300 ns),
    # 1.2 kΩ gives 203 ns.
    window = pullup_window(3.3, 200e-12, FAST)
    assert window.pick == 1200.0
    assert window.pick_rise_time_s <= 0.8 * 300e-9


def test_pick_falls_back_to_largest_e24_in_a_narrow_window():
    # COMPUTED: Fast-mode at 5.5 V (Rp(min) 1.7 kΩ, UM10204 §7.2.4) and 168 pF
    # (Rp(max) = 300 ns / (0.8473 x 168 pF) = 2107.5 Ω). The only E12 value, 1.8 kΩ, rises
    # in 256 ns (> 0.8 x 300 ns), so the rule falls back to the largest E24 value, 2.0 kΩ.
    window = pullup_window(5.5, 168e-12, FAST)
    assert window.suggestions_e12 == (1800.0,)
    assert window.suggestions == (1800.0, 2000.0)
    assert window.pick == 2000.0


# --- UM10204 §7.2.4 switched pull-up example --------------------------------------------------

def test_um10204_7_2_4_rp_min_at_5v5_is_1k7():
    # UM10204 Rev. 6 §7.2.4: "Rp(min) = (5.5 - 0.4) / 0.003 = 1.7 kΩ"
    assert rp_min(5.5, 0.4, 3e-3) == pytest.approx(1700.0)


def test_um10204_7_2_4_1k7_limits_fast_mode_to_about_200pf():
    # UM10204 Rev. 6 §7.2.4: "this value of Rp limits the maximum bus capacitance to about
    # 200 pF to meet the maximum tr requirement of 300 ns"; COMPUTED 208.3 pF.
    cb = max_capacitance(1700.0, 300e-9)
    assert cb == pytest.approx(208.3e-12, abs=0.05e-12)
    assert 190e-12 < cb < 220e-12


# --- NXP UM10301 p.41 -------------------------------------------------------------------------

def test_um10301_400khz_rp_max_rounds_down_to_22k():
    # NXP UM10301 Rev. 01 p.41: Cb 14.9 pF, tr 300 ns -> 22 kΩ after rounding down to E6
    assert round_down(rp_max(300e-9, 14.9e-12), "E6") == 22e3


def test_um10301_100khz_rp_max_rounds_down_to_68k():
    # NXP UM10301 Rev. 01 p.41: Cb 14.9 pF, tr 1 us -> 68 kΩ after rounding down to E6
    assert round_down(rp_max(1e-6, 14.9e-12), "E6") == 68e3


# --- REFERENCES.md §8 table (COMPUTED from UM10204 Eq. (1) and (2)) ----------------------------

@pytest.mark.parametrize("tr_s, cb_f, ohms", [
    (1000e-9, 400e-12, 2950.5),   # COMPUTED: Standard-mode, 400 pF
    (300e-9, 400e-12, 885.2),     # COMPUTED: Fast-mode, 400 pF
    (120e-9, 550e-12, 257.5),     # COMPUTED: Fast-mode Plus, 550 pF
    (300e-9, 200e-12, 1770.3),    # COMPUTED: Fast-mode, 200 pF (matches SLVA689)
    (1000e-9, 200e-12, 5901.1),   # COMPUTED: Standard-mode, 200 pF
])
def test_rp_max_computed_table(tr_s, cb_f, ohms):
    # The table is printed to 0.1 Ω (half a unit: 0.05 Ω) and used k = 0.8473; exact
    # ln(7/3) moves the results by at most 0.008 Ω here.
    assert rp_max(tr_s, cb_f) == pytest.approx(ohms, abs=0.06)


@pytest.mark.parametrize("vdd, ohms_3ma, ohms_20ma", [
    (2.5, 700.0, 105.0), (3.3, 966.7, 145.0), (5.0, 1533.3, 230.0), (5.5, 1700.0, 255.0),
])
def test_rp_min_computed_table(vdd, ohms_3ma, ohms_20ma):
    # COMPUTED from UM10204 Eq. (2) with Table 9 sink ratings (3 mA; 20 mA Fm+) at 0.4 V
    assert pullup_window(vdd, 100e-12, FAST).rp_min == pytest.approx(ohms_3ma, abs=0.05)
    assert pullup_window(vdd, 100e-12, FAST_PLUS).rp_min == pytest.approx(ohms_20ma, abs=0.05)


def test_rp_min_at_1v8_uses_low_voltage_row():
    # COMPUTED from UM10204 Rev. 6 Table 9 V_OL2: (1.8 - 0.2 x 1.8) / 2 mA = 720 Ω
    window = pullup_window(1.8, 100e-12, FAST)
    assert window.rp_min == pytest.approx(720.0)
    assert (window.vol_max_v, window.iol_a) == pytest.approx((0.36, 2e-3))


def test_fast_mode_at_3v3_and_400pf_has_no_resistor():
    # COMPUTED (REFERENCES §8): Rp(min) 966.7 Ω > Rp(max) 885.2 Ω
    window = pullup_window(3.3, 400e-12, FAST)
    assert not window.feasible
    assert window.suggestions == () and window.pick is None


def test_window_sink_override_replaces_mode_rating():
    # Eq. (2) with a weaker device on the line: 350 uA (SMBus low power, UM10204 §4.2.3)
    window = pullup_window(3.3, 50e-12, get_mode("smbus"), iol_a=350e-6)
    assert window.rp_min == pytest.approx((3.3 - 0.4) / 350e-6)


@pytest.mark.parametrize("name, tr_s", [("standard", 1000e-9), ("fast", 300e-9),
                                        ("fast-plus", 120e-9)])
def test_window_uses_the_mode_rise_time_limit(name, tr_s):
    # UM10204 Rev. 6 Table 10 t_r max per mode
    window = pullup_window(3.3, 100e-12, get_mode(name))
    assert window.rise_time_max_s == tr_s
    assert window.rp_max == pytest.approx(tr_s / (0.8473 * 100e-12), rel=1e-4)


# --- UM10204 §7.2.1 Eq. (3) ----------------------------------------------------------------

def test_fast_mode_f_max_from_table_minimums_is_400khz():
    # COMPUTED from UM10204 Rev. 6 Eq. (3) and Table 10: 1 / (1.3 + 0.6 + 0.3 + 0.3 us)
    assert max_frequency(FAST.t_low_min_s, FAST.t_high_min_s, FAST.rise_time_max_s,
                         FAST.fall_time_max_s) == pytest.approx(400.0e3)


def test_standard_mode_f_max_from_table_minimums_is_100khz():
    # COMPUTED from UM10204 Rev. 6 Eq. (3) and Table 10: 1 / (4.7 + 4.0 + 1.0 + 0.3 us)
    assert max_frequency(STANDARD.t_low_min_s, STANDARD.t_high_min_s,
                         STANDARD.rise_time_max_s, STANDARD.fall_time_max_s) == \
        pytest.approx(100.0e3)


def test_fast_plus_f_max_from_table_minimums_is_1mhz():
    # COMPUTED from UM10204 Rev. 6 Eq. (3) and Table 10: 1 / (0.5 + 0.26 + 0.12 + 0.12 us)
    assert max_frequency(FAST_PLUS.t_low_min_s, FAST_PLUS.t_high_min_s,
                         FAST_PLUS.rise_time_max_s, FAST_PLUS.fall_time_max_s) == \
        pytest.approx(1.0e6)


# --- pull-ups to different rails ------------------------------------------------------------

def test_parallel_resistance():
    assert parallel([4700.0, 4700.0]) == pytest.approx(2350.0)
    assert parallel([2200.0]) == 2200.0
    assert parallel([1000.0, 0.0]) == 0.0


def test_thevenin_of_two_rails_matches_the_checked_example():
    # /work/shared/TOOLING.md (checked with ngspice): 3.3 V via 4.7 kΩ and 5 V via 10 kΩ
    # -> Rth 3197 Ω, Vth 3.843 V; into 200 pF tau 639 ns
    r_th, v_th = thevenin([(4700.0, 3.3), (10e3, 5.0)])
    assert r_th == pytest.approx(3197.0, abs=0.5)
    assert v_th == pytest.approx(3.843, abs=0.001)   # 3.8435, printed as 3.843
    assert r_th * 200e-12 == pytest.approx(639e-9, abs=0.5e-9)


def test_thevenin_edge_reaches_1v_at_192_6ns_as_ngspice_did():
    # /work/shared/TOOLING.md: ngspice measured t(1.0 V) = 192.6 ns for that circuit
    r_th, v_th = thevenin([(4700.0, 3.3), (10e3, 5.0)])
    assert edge_time(r_th, v_th, 0.0, 1.0, 200e-12) == pytest.approx(192.6e-9, abs=0.1e-9)


def test_thevenin_of_one_rail_is_that_rail():
    assert thevenin([(2200.0, 3.3)]) == pytest.approx((2200.0, 3.3))


def test_thevenin_zero_ohm_source_pins_the_line():
    assert thevenin([(0.0, 3.3), (4700.0, 5.0)]) == (0.0, 3.3)
    with pytest.raises(ValueError):
        thevenin([(0.0, 3.3), (0.0, 5.0)])


def test_rise_time_thevenin_equals_rise_time_on_one_rail():
    # UM10204 Rev. 6 §7.1: with the line charging to VDD, 30 % -> 70 % is 0.8473 RC
    assert rise_time_thevenin(4700.0, 3.3, 3.3, 100e-12) == \
        pytest.approx(rise_time(4700.0, 100e-12))


def test_rise_time_thevenin_to_a_higher_rail_is_shorter():
    # Same RC, charging toward 5 V while thresholds stay at 30/70 % of 3.3 V
    assert rise_time_thevenin(4700.0, 5.0, 3.3, 100e-12) < rise_time(4700.0, 100e-12)


def test_rise_time_thevenin_none_when_line_never_reaches_70_percent():
    # 1.8 V pull-up seen by a 3.3 V device: 1.8 V < 0.7 x 3.3 V = 2.31 V
    assert rise_time_thevenin(4700.0, 1.8, 3.3, 100e-12) is None


# --- series resistors, UM10204 §7.3 -----------------------------------------------------------

def test_low_level_with_series_is_vol_plus_i_rs():
    # UM10204 Rev. 6 §7.3 (Figure 45): 300 Ω series resistor at 3 mA adds 0.9 V
    assert low_level_with_series(0.4, 3e-3, 300.0) == pytest.approx(1.3)


def test_series_margin_negative_when_rs_eats_low_noise_margin():
    # COMPUTED from UM10204 §7.3 and Table 10: VDD 5 V -> V_IL 1.5 V, V_nL 0.5 V, limit
    # 1.0 V; 0.4 V + 3 mA x 300 Ω = 1.3 V -> 0.3 V short
    assert series_low_level_margin(5.0, 0.4, 3e-3, 300.0) == pytest.approx(-0.3)


def test_series_margin_positive_with_actual_pullup_current():
    # COMPUTED: 10 kΩ pull-up to 5 V carries (5 - 0.4) / 10 kΩ = 0.46 mA; 300 Ω adds 0.138 V
    current = pullup_current(5.0, 10e3, v_low=0.4)
    assert current == pytest.approx(0.46e-3)
    assert series_low_level_margin(5.0, 0.4, current, 300.0) == pytest.approx(0.462)


def test_series_margin_without_series_resistor_is_inherent_margin():
    # COMPUTED from UM10204 Table 9/10 at 3.3 V: 0.2 x 3.3 - 0.4 = 0.26 V
    assert series_low_level_margin(3.3, 0.4, 3e-3, 0.0) == pytest.approx(0.26)


# --- input leakage, UM10204 §7.4 --------------------------------------------------------------

def test_leakage_limits_rp_max():
    # COMPUTED from UM10204 Rev. 6 §7.4: 10 uA per connection, 0.2 VDD HIGH margin over
    # V_IH 0.7 VDD; 5 V, four connections (40 uA) -> 0.1 x 5 V / 40 uA = 12.5 kΩ
    assert rp_max_for_leakage(5.0, 4 * 10e-6) == pytest.approx(12.5e3)


# --- margins ---------------------------------------------------------------------------------

def test_margin_percent_positive_below_limit_negative_above():
    assert margin_percent(240e-9, 300e-9) == pytest.approx(20.0)
    assert margin_percent(360e-9, 300e-9) == pytest.approx(-20.0)


def test_bad_inputs_raise():
    with pytest.raises(ValueError):
        rp_max(300e-9, 0.0)
    with pytest.raises(ValueError):
        rp_min(0.3, 0.4, 3e-3)
    with pytest.raises(ValueError):
        margin_percent(1.0, 0.0)


def test_a_vanishing_capacitance_leaves_the_window_open_ended_without_values_or_pick():
    # Found by fuzzing: a 2e-319 F line made Rp(max) = t_r / (0.8473 Cb) infinite, and
    # listing E-series values up to infinity failed. UM10204 Rev. 6 Eq. (1): with Cb -> 0
    # the rise time sets no upper limit; Eq. (2) still sets the lower one.
    w = pullup_window(3.3, 2.4e-319, get_mode("fast"))
    assert w.feasible and math.isinf(w.rp_max)
    assert w.rp_min == pytest.approx((3.3 - 0.4) / 3e-3)   # Eq. (2), Table 9: 0.4 V at 3 mA
    assert w.suggestions == () and w.suggestions_e12 == () and w.pick is None
