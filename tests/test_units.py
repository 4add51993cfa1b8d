"""Value parsing, formatting and E-series, checked against IEC 60062 / IEC 60063 and
spellings seen in the real designs under ../shared/real-designs."""

from __future__ import annotations

from pathlib import Path

import pytest

from netaudit.units import (E6, E12, E24, format_rkm, format_si, parse_value, part_value,
                            round_down, round_up, series_values)

REAL = Path(__file__).resolve().parents[1] / ".." / "shared" / "real-designs"


def close(a: float | None, b: float, rel: float = 1e-12) -> bool:
    return a is not None and abs(a - b) <= rel * max(abs(b), 1e-30)


# --- IEC 60062 letter codes: the letter is the decimal point and the multiplier ----------

@pytest.mark.parametrize("text, ohms", [
    ("R47", 0.47),        # IEC 60062: R47 = 0.47 Ω
    ("4R7", 4.7),         # IEC 60062: 4R7 = 4.7 Ω
    ("2R2", 2.2),
    ("0R33", 0.33),
    ("4K7", 4.7e3),       # IEC 60062: 4K7 = 4.7 kΩ
    ("4k7", 4.7e3),
    ("1M0", 1.0e6),       # IEC 60062: 1M0 = 1 MΩ
    ("5k11", 5.11e3),
    ("49k9", 49.9e3),
])
def test_iec_60062_resistance_codes_read(text, ohms):
    assert close(parse_value(text, "ohm"), ohms)


@pytest.mark.parametrize("text, farads", [
    ("4n7", 4.7e-9),      # IEC 60062: 4n7 = 4.7 nF
    ("p68", 0.68e-12),    # IEC 60062: p68 = 0.68 pF
    ("p47", 0.47e-12),
    ("2u2", 2.2e-6),      # IEC 60062: 2µ2 = 2.2 µF
    ("2µ2", 2.2e-6),
    ("u1", 0.1e-6),       # IEC 60062: µ1 = 0.1 µF
    ("1n2", 1.2e-9),
    ("4F7", 4.7),         # IEC 60062: F as the decimal point of farads
])
def test_iec_60062_capacitance_codes_read(text, farads):
    assert close(parse_value(text, "F"), farads)


# --- decimal values with SI prefixes (common practice, no source) -------------------------

@pytest.mark.parametrize("text, ohms", [
    ("4.7k", 4.7e3), ("4.7 kΩ", 4.7e3), ("4.7kohm", 4.7e3), ("4.7 kΩ", 4.7e3),
    ("2.2K", 2.2e3), ("10K 1%", 10e3), ("10K 1% 0603", 10e3), ("470", 470.0),
    ("470R", 470.0), ("1Meg", 1e6), ("10M", 10e6), ("8.06k±1%", 8.06e3),
])
def test_decimal_resistances_with_prefix_read(text, ohms):
    assert close(parse_value(text, "ohm"), ohms)


@pytest.mark.parametrize("text, farads", [
    ("100n", 100e-9), ("100nF", 100e-9), ("0.1uF", 0.1e-6), ("0.1µF", 0.1e-6),
    ("0.1μF", 0.1e-6), ("10 pF 50V", 10e-12), ("1n 50V C0G", 1e-9), ("10u/25V", 10e-6),
    ("100NF", 100e-9), ("47µF", 47e-6),
])
def test_decimal_capacitances_with_prefix_read(text, farads):
    assert close(parse_value(text, "F"), farads)


@pytest.mark.parametrize("text", ["0", "0R", "0Ω", "0 ohm"])
def test_zero_ohm_links_read_as_zero(text):
    assert parse_value(text, "ohm") == 0.0


def test_decimal_values_are_exact_not_float_products():
    # 8.06 * 1000 is 8060.000000000001 in binary floating point; the parser scales decimally.
    assert parse_value("8.06k", "ohm") == 8060.0
    assert parse_value("100n", "F") == 1e-7


# --- never guess ---------------------------------------------------------------------------

@pytest.mark.parametrize("text", ["DNP", "", "NC", "abc", "R_2k2_0402", "R", "~", "-",
                                  "10k pullup", "4k7k", "4.7kR", "2.2uF", "100n"])
def test_unreadable_resistance_text_gives_none(text):
    assert parse_value(text, "ohm") is None


@pytest.mark.parametrize("text", ["DNP", "C", "100", "0.1", "104", "10k", "1MF", "10f",
                                  "C_100n_0402"])
def test_unreadable_or_ambiguous_capacitance_text_gives_none(text):
    # A bare number on a capacitor means pF to some and µF to others (common practice,
    # no source): refuse it rather than guess.
    assert parse_value(text, "F") is None


@pytest.mark.parametrize("text, unit, value", [
    ("3m", "A", 3e-3), ("3 mA", "A", 3e-3), ("350u", "A", 350e-6), ("350µA", "A", 350e-6),
    ("2.5V", "V", 2.5), ("400kHz", "Hz", 400e3), ("300ns", "s", 300e-9), ("3", "A", 3.0),
])
def test_other_units_take_si_prefixes(text, unit, value):
    assert close(parse_value(text, unit), value)


@pytest.mark.parametrize("text, unit", [("3mV", "A"), ("abc", "A"), ("3m 1%", "A"), ("", "V")])
def test_other_units_refuse_wrong_symbols_and_trailing_text(text, unit):
    assert parse_value(text, unit) is None


def test_unknown_unit_is_an_error():
    with pytest.raises(ValueError):
        parse_value("4k7", "H")


# --- spellings seen in the real designs (README of ../shared/real-designs) ----------------

@pytest.mark.parametrize("text, ohms", [("2k2", 2200.0), ("4.7k", 4700.0), ("0R", 0.0),
                                        ("5.1k", 5100.0), ("33R", 33.0)])
def test_real_design_resistor_spellings_read(text, ohms):
    assert close(parse_value(text, "ohm"), ohms)


def test_real_design_u1_capacitor_reads_as_100nF():
    assert close(parse_value("u1", "F"), 100e-9)


def test_library_name_value_uses_val_field():
    assert part_value("R_2k2_0402", [("Manufacturer", "Bourns"), ("Val", "2k2")], "ohm") == 2200.0


def test_value_field_name_match_is_case_insensitive():
    assert part_value("R_x", [("VAL", "4k7")], "ohm") == 4700.0


def test_library_name_value_falls_back_to_embedded_code():
    assert part_value("R_2k2_0402", [], "ohm") == 2200.0
    assert part_value("R_10k_0402", [], "ohm") == 10000.0
    assert close(part_value("C_100n_0402", [], "F"), 100e-9)
    assert close(part_value("C_10u_25V_0603", [], "F"), 10e-6)
    assert part_value("res-0402-2k2", [], "ohm") == 2200.0


def test_embedded_code_ignores_package_size_and_other_ratings():
    assert part_value("R_0R_22.4A_0603", [], "ohm") == 0.0


def test_embedded_code_refuses_names_without_a_single_value():
    assert part_value("R_4x33R_0201_array", [], "ohm") is None
    assert part_value("R_1k_2k_0402", [], "ohm") is None


def test_literal_dnp_value_gives_none():
    assert part_value("DNP", [("Footprint", "R_0402")], "ohm") is None


def test_readable_value_wins_over_fields():
    assert part_value("4k7", [("Val", "10k")], "ohm") == 4700.0


def _real_netlists():
    return sorted(REAL.glob("*/netlist-kicad-9.0.8/*.net"))


@pytest.mark.real
def test_embedded_codes_agree_with_designers_val_fields_in_real_designs():
    """Where a real design names its resistors like R_2k2_0402 and also writes the value
    in a Val field, the code read out of the name must equal the field."""
    if not REAL.is_dir():
        pytest.skip("../shared/real-designs is not present")
    from netaudit.readers import read_design
    compared = 0
    for path in _real_netlists():
        for part in read_design(path).parts:
            if not part.ref.startswith("R") or parse_value(part.value, "ohm") is not None:
                continue
            field = parse_value(part.field("Val"), "ohm")
            embedded = part_value(part.value, [], "ohm")
            if field is None or embedded is None:
                continue
            assert embedded == field, (path.name, part.ref, part.value, part.field("Val"))
            compared += 1
    if compared == 0:
        pytest.skip("no real design with both library-name values and Val fields found")
    assert compared > 100   # fpga-som-carrier and compute-module-baseboard hold hundreds


# --- formatting ----------------------------------------------------------------------------

@pytest.mark.parametrize("value, unit, text", [
    (4700.0, "ohm", "4.7 kΩ"), (200e-12, "F", "200 pF"), (300e-9, "s", "300 ns"),
    (3.3, "V", "3.3 V"), (966.6667, "ohm", "967 Ω"), (1770.33, "ohm", "1.77 kΩ"),
    (999.7, "ohm", "1 kΩ"), (0.0, "V", "0 V"), (400e3, "Hz", "400 kHz"),
    (3e-3, "A", "3 mA"), (-0.3, "V", "-300 mV"),
])
def test_format_si_writes_engineering_prefixes(value, unit, text):
    assert format_si(value, unit) == text


def test_format_si_digits_sets_significant_figures():
    assert format_si(966.6667, "ohm", digits=4) == "966.7 Ω"


@pytest.mark.parametrize("ohms, code", [
    (4700.0, "4k7"), (2200.0, "2k2"), (470.0, "470R"), (4.7, "4R7"), (0.47, "R47"),
    (10e3, "10k"), (1e6, "1M"), (1.5e6, "1M5"), (4990.0, "4k99"), (0.0, "0R"),
])
def test_format_rkm_writes_iec_60062_codes(ohms, code):
    assert format_rkm(ohms) == code


@pytest.mark.parametrize("ohms", [0.47, 4.7, 470.0, 2200.0, 4990.0, 49.9e3, 1.5e6])
def test_format_rkm_reads_back_to_the_same_value(ohms):
    assert close(parse_value(format_rkm(ohms), "ohm"), ohms)


# --- E-series, IEC 60063 -------------------------------------------------------------------

def test_e12_table_matches_iec_60063():
    # IEC 60063 E12
    assert E12 == (1.0, 1.2, 1.5, 1.8, 2.2, 2.7, 3.3, 3.9, 4.7, 5.6, 6.8, 8.2)


def test_e24_table_matches_iec_60063():
    # IEC 60063 E24
    assert E24 == (1.0, 1.1, 1.2, 1.3, 1.5, 1.6, 1.8, 2.0, 2.2, 2.4, 2.7, 3.0,
                   3.3, 3.6, 3.9, 4.3, 4.7, 5.1, 5.6, 6.2, 6.8, 7.5, 8.2, 9.1)


def test_e6_table_matches_iec_60063():
    assert E6 == (1.0, 1.5, 2.2, 3.3, 4.7, 6.8)   # IEC 60063 E6


def test_series_values_span_decades_inclusively():
    assert series_values("E6", 1000.0, 10000.0) == [1000.0, 1500.0, 2200.0, 3300.0,
                                                    4700.0, 6800.0, 10000.0]
    assert series_values("E12", 3300.0, 5600.0) == [3300.0, 3900.0, 4700.0, 5600.0]


def test_series_values_are_exact_decimal_values():
    assert 4700.0 in series_values("E24", 4000.0, 5000.0)


def test_unknown_series_is_an_error():
    with pytest.raises(ValueError):
        series_values("E7", 1.0, 10.0)


def test_round_down_to_e6_as_in_um10301():
    # NXP UM10301 Rev. 01 p.41: Rp(max) 23.76 kΩ and 79.21 kΩ "rounded down to E6
    # standard values" give 22 kΩ and 68 kΩ.
    assert round_down(23.76e3, "E6") == 22e3
    assert round_down(79.21e3, "E6") == 68e3


def test_round_up_and_down_keep_exact_series_values():
    assert round_down(4700.0, "E12") == 4700.0
    assert round_up(4700.0, "E12") == 4700.0


def test_round_up_crosses_a_decade():
    assert round_up(8300.0, "E12") == 10000.0
    assert round_down(999.0, "E12") == 820.0


def test_decimal_comma_reads_as_a_decimal_point():
    # KiCad's own demo "video" writes its EEPROM pull-ups as "2,2K" (common practice in
    # European schematics, no source).
    assert parse_value("2,2K", "ohm") == pytest.approx(2200.0)
    assert parse_value("4,7nF", "F") == pytest.approx(4.7e-9)
