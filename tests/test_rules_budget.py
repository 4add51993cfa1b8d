"""Budget rules on small hand-made designs: the numbers in each finding, against the spec.

Rules (CONTRACT.md, rules table): pullup-too-strong, pullup-too-weak, capacitance-over-limit,
low-level-margin. Each check value names where it comes from. The designs are invented:
controller U1 and target U2, whose pins count 10 pF each when nothing better is known
(Ci max per I/O pin, UM10204 Rev. 6 Table 9), so a plain line carries 20 pF.
"""

from __future__ import annotations

import math

import pytest
from handmade import build, cap, ic, res

from netaudit.audit import audit_design
from netaudit.config import Config, parse_config
from netaudit.results import Severity

PF = 1e-12
K_RISE = 0.8473            # UM10204 Rev. 6 §7.1: t2 − t1 = 0.8473 · RC (30 % → 70 %)
TR_MAX_FAST = 300e-9       # t_r max, Fast-mode: UM10204 Rev. 6 Table 10
TR_MAX_STANDARD = 1000e-9  # t_r max, Standard-mode: UM10204 Rev. 6 Table 10
CB_MAX_FAST = 400 * PF     # Cb max, Fast-mode: UM10204 Rev. 6 Table 10
PINS_F = 2 * 10 * PF       # two devices × Ci 10 pF: UM10204 Rev. 6 Table 9


def pulled(sda_ohms: str, scl_ohms: str | None = None, *, rail="+3V3", yaml: str | None = None,
           extra_parts=(), extra_nets=None):
    scl_ohms = scl_ohms or sda_ohms
    parts = [ic("U1", "MCU", ["SDA", "SCL", "VDD", "GND"], pins_total=48),
             ic("U2", "SENSOR", ["SDA", "SCL", "VDD", "GND"]),
             res("R1", sda_ohms), res("R2", scl_ohms), *extra_parts]
    nets = {"/SDA": ["U1.SDA", "U2.SDA", "R1.1"], "/SCL": ["U1.SCL", "U2.SCL", "R2.1"],
            rail: ["U1.VDD", "U2.VDD", "R1.2", "R2.2"], "GND": ["U1.GND", "U2.GND"]}
    for name, members in (extra_nets or {}).items():
        nets[name] = nets.get(name, []) + members
    return audit_design(build(parts, nets), parse_config(yaml) if yaml else Config.empty())


def bus_yaml(extra: str) -> str:
    return "version: 1\nbuses:\n  - name: MAIN\n    sda: /SDA\n    scl: /SCL\n" + extra


def of(audit, rule_id, line=None):
    return [f for f in audit.findings if f.rule == rule_id and (line is None or f.line == line)]


# -- pullup-too-strong ---------------------------------------------------------------

def test_470_ohms_at_3v3_is_too_strong():
    (f,) = of(pulled("470"), "pullup-too-strong", "sda")
    # Rp(min) = (3.3 V − 0.4 V) / 3 mA = 966.7 Ω: UM10204 Rev. 6 §7.1 Eq. (2), V_OL and
    # I_OL from Rev. 6 Table 9; REFERENCES.md §8 lists 966.7 Ω for 3.3 V.
    assert f.data["rp_min_ohms"] == pytest.approx(966.667, abs=0.01)
    assert f.data["rp_ohms"] == 470.0 and f.refs == ("R1",)
    assert f.severity is Severity.ERROR            # CONTRACT.md default severity


def test_too_strong_suggestions_lie_inside_the_window():
    (f,) = of(pulled("470"), "pullup-too-strong", "sda")
    rp_max = TR_MAX_FAST / (K_RISE * PINS_F)       # UM10204 Rev. 6 §7.1 Eq. (1): 17.7 kΩ
    assert f.data["suggestions_ohms"]
    assert all(966.667 <= r <= rp_max for r in f.data["suggestions_ohms"])
    assert f.data["pick_ohms"] in f.data["suggestions_ohms"]


def test_1k_at_3v3_is_not_too_strong():
    # 1 kΩ is the first E12 value above Rp(min) 966.7 Ω (UM10204 Rev. 6 §7.1 Eq. 2; IEC 60063).
    assert of(pulled("1k"), "pullup-too-strong") == []


def test_parallel_pullups_are_judged_together():
    # 1.8 kΩ ∥ 1.8 kΩ = 900 Ω < 966.7 Ω, though each alone is above it (UM10204 §7.1 Eq. 2).
    a = pulled("1k8", extra_parts=[res("R3", "1k8", sheet="/Sensor/", sheet_file="sensor.kicad_sch")],
               extra_nets={"/SDA": ["R3.1"], "+3V3": ["R3.2"]})
    (f,) = of(a, "pullup-too-strong")
    assert f.line == "sda" and f.refs == ("R1", "R3")
    assert f.data["rp_ohms"] == pytest.approx(900.0)


def test_low_supply_uses_two_milliamp_rating():
    # VDD ≤ 2 V: V_OL = 0.2 · VDD at 2 mA (UM10204 Rev. 6 Table 9), so at 1.8 V
    # Rp(min) = (1.8 − 0.36) / 0.002 = 720 Ω (REFERENCES.md §8). 680 Ω is below it.
    (f,) = of(pulled("680", rail="+1V8"), "pullup-too-strong", "sda")
    assert f.data["rp_min_ohms"] == pytest.approx(720.0, abs=0.01)


def test_750_ohms_at_1v8_is_not_too_strong():
    # 750 Ω > 720 Ω, Rp(min) at 1.8 V (UM10204 Rev. 6 Table 9 V_OL2 row, §7.1 Eq. 2).
    assert of(pulled("750", rail="+1V8"), "pullup-too-strong") == []


def test_pullups_to_two_rails_are_judged_by_the_current_they_send():
    # SDA: 10 kΩ to +5V and 1 kΩ to +1V8. At V_OL 0.4 V the driver sinks
    # (5 − 0.4) / 10 kΩ + (1.8 − 0.4) / 1 kΩ = 0.46 mA + 1.40 mA = 1.86 mA, below the
    # 3 mA I_OL the line is sized for (UM10204 Rev. 6 §7.1 Eq. 2, Table 9).
    sink_a = (5 - 0.4) / 10e3 + (1.8 - 0.4) / 1e3
    assert sink_a < 3e-3
    a = pulled("4k7", extra_parts=[res("R3", "10k"), res("R4", "1k")],
               extra_nets={"/SDA": ["R3.1", "R4.1"], "+5V": ["R3.2"], "+1V8": ["R4.2"]})
    # R1 (4.7 kΩ to +3V3) is on SDA too: add its (3.3 − 0.4) / 4.7 kΩ = 0.62 mA → 2.48 mA.
    assert sink_a + (3.3 - 0.4) / 4700 < 3e-3
    assert of(a, "pullup-too-strong") == []


def test_pull_down_that_holds_the_line_below_the_high_level_is_found():
    # 4.7 kΩ to 3.3 V against 10 kΩ to GND: the line idles at 3.3 · 10 / 14.7 = 2.24 V,
    # below V_IH = 0.7 · 3.3 = 2.31 V (UM10204 Rev. 6 Table 9): it never reads HIGH.
    assert 3.3 * 10 / 14.7 < 0.7 * 3.3
    a = pulled("4k7", extra_parts=[res("R7", "10k")], extra_nets={"/SDA": ["R7.1"], "GND": ["R7.2"]})
    (f,) = of(a, "pullup-too-weak", "sda")
    assert f.data["rise_time_s"] is None


# -- pullup-too-weak -----------------------------------------------------------------

def test_10k_with_cable_capacitance_is_too_weak():
    a = pulled("10k", yaml=bus_yaml("    extra_capacitance_pf: 150\n"))
    (f,) = of(a, "pullup-too-weak", "sda")
    cb = PINS_F + 150 * PF                          # 170 pF
    expected = K_RISE * 10e3 * cb                   # UM10204 Rev. 6 §7.1: 1.440 µs
    assert f.data["capacitance_farads"] == pytest.approx(cb)
    assert f.data["rise_time_s"] == pytest.approx(expected, rel=1e-4)
    assert f.data["rise_time_max_s"] == pytest.approx(TR_MAX_FAST)
    assert f.severity is Severity.ERROR            # CONTRACT.md default severity


def test_too_weak_finding_gives_rp_max_and_margin():
    (f,) = of(pulled("10k", yaml=bus_yaml("    extra_capacitance_pf: 150\n")), "pullup-too-weak", "sda")
    rp_max = TR_MAX_FAST / (K_RISE * 170 * PF)      # UM10204 Rev. 6 §7.1 Eq. (1): 2082.7 Ω
    assert f.data["rp_max_ohms"] == pytest.approx(rp_max, rel=1e-4)
    expected = K_RISE * 10e3 * 170 * PF
    assert f.data["margin_percent"] == pytest.approx((TR_MAX_FAST - expected) / TR_MAX_FAST * 100, abs=0.1)
    assert all(r <= rp_max for r in f.data["suggestions_ohms"])


def test_4k7_on_a_short_bus_is_not_too_weak():
    # 0.8473 · 4.7 kΩ · 20 pF = 79.6 ns < 300 ns (UM10204 Rev. 6 §7.1, Table 10).
    a = pulled("4k7")
    assert of(a, "pullup-too-weak") == []
    assert a.buses[0].segments[0].sda.budget.rise_time_s == pytest.approx(K_RISE * 4700 * PINS_F, rel=1e-4)


def test_rise_time_limit_follows_the_bus_mode():
    # 4.7 kΩ with 170 pF: 0.8473 · 4.7 kΩ · 170 pF = 677 ns (UM10204 Rev. 6 §7.1):
    # over Fast-mode's 300 ns, under Standard-mode's 1000 ns (Rev. 6 Table 10).
    fast = pulled("4k7", yaml=bus_yaml("    extra_capacitance_pf: 150\n"))
    standard = pulled("4k7", yaml=bus_yaml("    mode: standard\n    extra_capacitance_pf: 150\n"))
    assert len(of(fast, "pullup-too-weak")) == 2
    assert of(standard, "pullup-too-weak") == []
    assert standard.buses[0].segments[0].sda.budget.rise_time_max_s == pytest.approx(TR_MAX_STANDARD)


def test_capacitor_on_the_line_adds_to_the_load():
    # 10 kΩ with a 100 pF capacitor from SDA to GND: Cb = 20 + 100 = 120 pF, rise
    # 0.8473 · 10 kΩ · 120 pF = 1.017 µs > 300 ns (UM10204 Rev. 6 §7.1, Table 10). SCL
    # carries only its 20 pF of pins: 169 ns.
    a = pulled("10k", extra_parts=[cap("C1", "100p")], extra_nets={"/SDA": ["C1.1"], "GND": ["C1.2"]})
    assert [f.line for f in of(a, "pullup-too-weak")] == ["sda"]
    sda = a.buses[0].segments[0].sda.budget
    assert sda.capacitance_parts["capacitors"] == pytest.approx(100 * PF)
    assert sda.capacitance_farads == pytest.approx(120 * PF)


def test_capacitor_reaching_ground_through_a_0_ohm_link_counts_like_one_on_ground():
    # A fitted 0 ohm resistor is a link: its two nets are one net (common practice, no
    # source), as pull-ups are found. 100 pF from SDA to a net that R9 (0 ohm) ties to GND
    # loads SDA exactly as 100 pF straight to GND: Cb = 20 + 100 = 120 pF.
    direct = pulled("10k", extra_parts=[cap("C1", "100p")], extra_nets={"/SDA": ["C1.1"], "GND": ["C1.2"]})
    linked = pulled("10k", extra_parts=[cap("C1", "100p"), res("R9", "0")],
                    extra_nets={"/SDA": ["C1.1"], "/CAP_GND": ["C1.2", "R9.1"], "GND": ["R9.2"]})
    want = direct.buses[0].segments[0].sda.budget
    got = linked.buses[0].segments[0].sda.budget
    assert got.capacitance_parts["capacitors"] == pytest.approx(100 * PF)
    assert got.capacitance_farads == pytest.approx(want.capacitance_farads)
    assert got.rise_time_s == pytest.approx(want.rise_time_s)
    assert [f.line for f in of(linked, "pullup-too-weak")] == ["sda"]


def test_capacitor_behind_a_not_fitted_0_ohm_link_is_not_counted():
    # A 0 ohm resistor marked not fitted joins nothing (common practice, no source): the
    # capacitor's far end floats, so SDA carries only its 20 pF of pins.
    a = pulled("10k", extra_parts=[cap("C1", "100p"), res("R9", "0", dnp=True)],
               extra_nets={"/SDA": ["C1.1"], "/CAP_GND": ["C1.2", "R9.1"], "GND": ["R9.2"]})
    sda = a.buses[0].segments[0].sda.budget
    assert sda.capacitance_parts["capacitors"] == 0.0
    assert sda.capacitance_farads == pytest.approx(PINS_F)


def test_line_budget_with_the_pipelines_connectivity_equals_one_built_for_it():
    # budget_buses(conn=topology.conn) reuses the connectivity bus finding built; given none
    # it builds its own from the same design and rails: both budgets are the same.
    from netaudit.catalog import describe_parts
    from netaudit.linebudget import budget_buses
    from netaudit.topology.buses import find_buses
    from netaudit.topology.rails import find_rails
    d = build([ic("U1", "MCU", ["SDA", "SCL", "VDD", "GND"], pins_total=48),
               ic("U2", "SENSOR", ["SDA", "SCL", "VDD", "GND"]),
               res("R1", "10k"), res("R2", "10k"), res("R9", "0"), cap("C1", "100p")],
              {"/SDA": ["U1.SDA", "U2.SDA", "R1.1", "C1.1"], "/SCL": ["U1.SCL", "U2.SCL", "R2.1"],
               "+3V3": ["U1.VDD", "U2.VDD", "R1.2", "R2.2"], "/CAP_GND": ["C1.2", "R9.1"],
               "GND": ["U1.GND", "U2.GND", "R9.2"]})
    config = Config.empty()
    rails = find_rails(d, config.rails)
    parts = describe_parts(d, config)
    topology = find_buses(d, rails, roles={r: i.role for r, i in parts.items() if i.role})
    shared = budget_buses(d, topology.buses, rails, parts, config, conn=topology.conn)
    own = budget_buses(d, topology.buses, rails, parts, config)
    assert shared == own
    assert shared[0].segments[0].sda.budget.capacitance_parts["capacitors"] == pytest.approx(100 * PF)


# -- capacitance-over-limit ----------------------------------------------------------

def test_470_pf_is_over_the_fast_mode_limit():
    a = pulled("1k", yaml=bus_yaml("    extra_capacitance_pf: 450\n"))
    (f,) = of(a, "capacitance-over-limit", "sda")
    assert f.data["capacitance_farads"] == pytest.approx(PINS_F + 450 * PF)
    assert f.data["capacitance_max_farads"] == pytest.approx(CB_MAX_FAST)
    assert f.data["capacitance_parts"]["extra"] == pytest.approx(450 * PF)
    assert f.data["capacitance_parts"]["pins"] == pytest.approx(PINS_F)
    assert f.severity is Severity.ERROR            # CONTRACT.md default severity


def test_320_pf_is_within_the_fast_mode_limit():
    # 20 pF of pins + 300 pF < 400 pF (UM10204 Rev. 6 Table 10).
    a = pulled("1k", yaml=bus_yaml("    extra_capacitance_pf: 300\n"))
    assert of(a, "capacitance-over-limit") == []


def test_470_pf_is_within_the_fast_mode_plus_limit():
    # Fast-mode Plus allows 550 pF per line (UM10204 Rev. 6 Table 10).
    a = pulled("1k", yaml=bus_yaml("    mode: fast-plus\n    extra_capacitance_pf: 450\n"))
    assert of(a, "capacitance-over-limit") == []


def test_trace_length_adds_routing_capacitance():
    # traces: 120 mm × 0.1 pF/mm (netaudit.yaml default; common practice, no source)
    # = 12 pF; 20 + 12 + 370 = 402 pF > 400 pF (UM10204 Rev. 6 Table 10).
    yaml = bus_yaml("    extra_capacitance_pf: 370\n") + "traces:\n  /SDA: {length_mm: 120}\n"
    a = pulled("1k", yaml=yaml)
    (f,) = of(a, "capacitance-over-limit")
    assert f.line == "sda"
    assert f.data["capacitance_parts"]["routing"] == pytest.approx(12 * PF)


# -- low-level-margin ----------------------------------------------------------------

def series_design(rs: str):
    """The controller reaches the bus through series resistors R5/R6 of ``rs``; 4.7 kΩ
    pull-ups to +3V3 sit on the target's side."""
    parts = [ic("U1", "MCU", ["SDA", "SCL", "VDD", "GND"], pins_total=48),
             ic("U2", "SENSOR", ["SDA", "SCL", "VDD", "GND"]),
             res("R1", "4k7"), res("R2", "4k7"), res("R5", rs), res("R6", rs)]
    return audit_design(build(parts, {
        "/SDA_MCU": ["U1.SDA", "R5.1"], "/SDA": ["R5.2", "U2.SDA", "R1.1"],
        "/SCL_MCU": ["U1.SCL", "R6.1"], "/SCL": ["R6.2", "U2.SCL", "R2.1"],
        "+3V3": ["U1.VDD", "U2.VDD", "R1.2", "R2.2"], "GND": ["U1.GND", "U2.GND"]}), Config.empty())


def test_1k_series_resistor_lifts_the_low_level_past_the_margin():
    (f,) = of(series_design("1k"), "low-level-margin", "sda")
    current = (3.3 - 0.4) / 4700        # pull-up current with the line LOW at V_OL 0.4 V (Table 9)
    # LOW seen by others = V_OL + I · Rs (UM10204 Rev. 6 §7.3): 0.4 + 0.617 mA · 1 kΩ = 1.017 V;
    # limit V_IL − V_nL = 0.3 · 3.3 − 0.1 · 3.3 = 0.66 V (Rev. 6 Table 9 V_IL, Table 10 V_nL).
    assert f.data["low_level_v"] == pytest.approx(0.4 + current * 1000, abs=1e-3)
    assert f.data["limit_v"] == pytest.approx(0.66, abs=1e-3)
    assert f.refs == ("R5",) and f.data["series_ohms"] == 1000.0
    assert f.nets == ("/SDA", "/SDA_MCU")
    assert f.severity is Severity.WARNING          # CONTRACT.md default severity


def test_33_ohm_series_resistor_keeps_the_margin():
    # 0.4 + 0.617 mA · 33 Ω = 0.42 V < 0.66 V (UM10204 Rev. 6 §7.3, Tables 9 and 10).
    assert of(series_design("33"), "low-level-margin") == []


def test_low_level_limit_is_exceeded_just_above_the_largest_series_resistor():
    # Rs(max) = (0.66 − 0.4) / ((3.3 − 0.4) / 4700) = 421.4 Ω (UM10204 Rev. 6 §7.3):
    # 390 Ω (E12) keeps the margin, 470 Ω (E12) does not.
    rs_max = (0.66 - 0.4) / ((3.3 - 0.4) / 4700)
    assert 390 < rs_max < 470 and math.isclose(rs_max, 421.4, abs_tol=0.1)
    assert of(series_design("390"), "low-level-margin") == []
    assert len(of(series_design("470"), "low-level-margin")) == 2
