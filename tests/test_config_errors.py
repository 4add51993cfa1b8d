"""netaudit.yaml v1: what is refused, and how the refusal reads (one line naming the file,
line and key; hand-made YAML, the schema is CONTRACT.md's)."""

from __future__ import annotations

import sys
from textwrap import dedent

import pytest

from netaudit.config import parse_config
from netaudit.errors import InputError


def error_of(text: str) -> InputError:
    with pytest.raises(InputError) as info:
        parse_config(dedent(text), "netaudit.yaml")
    return info.value


def assert_error(text: str, keypath: str, line: int, words: str) -> InputError:
    err = error_of(text)
    assert err.path == "netaudit.yaml"
    assert err.line == line, str(err)
    assert err.message.startswith(keypath + ":"), str(err)
    assert words in err.message, str(err)
    assert "\n" not in str(err)
    return err


# ---------------------------------------------------------------- errors: syntax and shape

def test_yaml_syntax_error_gives_the_line_where_the_parser_stops():
    err = error_of("version: 1\nrails:\n  A: [1, 2\n  B: 3\n")
    assert "not valid YAML" in err.message and (err.line, err.column) == (4, 4)


def test_unclosed_quote_names_the_line_it_started_on():
    err = error_of('version: 1\nbuses:\n  - name: "oops\n')
    assert err.line == 4 and "quoted scalar on line 3" in err.message


def test_tab_indentation_gives_line():
    err = error_of("version: 1\nrails:\n\tA: 1\n")
    assert "not valid YAML" in err.message and err.line == 3


def test_top_level_list_is_rejected():
    assert_error("- 1\n- 2\n", "top level", 1, "expected a mapping")


def test_top_level_scalar_is_rejected():
    assert_error("hello\n", "top level", 1, "expected a mapping")


def test_two_documents_are_rejected():
    err = error_of("version: 1\n---\nversion: 1\n")
    assert "not valid YAML" in err.message and err.line == 2


def test_missing_version_is_rejected():
    assert_error("rails: {A: 1}\n", "version", 1, "missing")


def test_other_version_is_rejected():
    assert_error("\nversion: 2\n", "version", 2, "version 1")


def test_unknown_top_level_key():
    assert_error("version: 1\nrail:\n  A: 1\n", "rail", 2, "unknown key")


def test_unknown_key_in_bus():
    assert_error("""\
        version: 1
        buses:
          - name: B
            sda: /A
            scl: /B
            speed: fast
        """, "buses[0].speed", 6, "unknown key")


def test_duplicate_key_in_one_mapping():
    err = assert_error("""\
        version: 1
        rails:
          +3V3: 3.3
          +5V: 5
          +3V3: 3.4
        """, 'rails["+3V3"]', 5, "duplicate key")
    assert "line 3" in err.message


def test_duplicate_top_level_section():
    assert_error("version: 1\nbuses:\nversion: 1\n", "version", 3, "duplicate key")


def test_custom_tag_is_rejected():
    assert_error("version: 1\nrails:\n  A: !volts 3.3\n", 'rails.A', 3, "unsupported YAML tag")


def test_python_object_tag_is_rejected_without_constructing_it():
    assert_error("version: 1\nrails: !!python/object:os.system {}\n", "rails", 2,
                 "unsupported YAML tag")


def test_merge_key_is_rejected():
    assert_error("""\
        version: 1
        defaults: &d {mode: fast}
        buses:
          - <<: *d
            name: B
        """, "buses[0]", 4, "merge keys")


# ---------------------------------------------------------------- errors: values

def test_negative_volts():
    assert_error("version: 1\nrails:\n  VNEG: -3.3\n", "rails.VNEG", 3, "zero or more")


def test_volts_as_words():
    assert_error("version: 1\nrails:\n  A: three\n", "rails.A", 3, "expected a number")


def test_volts_as_boolean():
    assert_error("version: 1\nrails:\n  A: yes\n", "rails.A", 3, "expected a number")


def test_volts_missing():
    assert_error("version: 1\nrails:\n  A:\n  B: 1\n", "rails.A", 3, "found nothing")


def test_volts_not_finite():
    assert_error("version: 1\nrails:\n  A: .inf\n", "rails.A", 3, "finite")


def test_unknown_default_mode():
    assert_error("version: 1\ndefaults:\n  mode: turbo\n", "defaults.mode", 3, "unknown mode")


def test_unknown_bus_mode():
    assert_error("""\
        version: 1
        buses:
          - name: B
            sda: /A
            scl: /B
            mode: ultra-fast
        """, "buses[0].mode", 6, "unknown mode 'ultra-fast'")


def test_negative_pin_capacitance():
    assert_error("version: 1\ndefaults:\n  pin_capacitance_pf: -1\n",
                 "defaults.pin_capacitance_pf", 3, "zero or more")


def test_sections_of_wrong_type():
    assert_error("version: 1\nbuses: {name: B}\n", "buses", 2, "expected a list")


def test_duplicate_bus_names():
    assert_error("""\
        version: 1
        buses:
          - {name: MAIN, sda: /A, scl: /B}
          - {name: MAIN, sda: /C, scl: /D}
        """, "buses[1].name", 4, "already used by buses[0]")


def test_bus_missing_scl():
    assert_error("version: 1\nbuses:\n  - name: B\n    sda: /A\n", "buses[0].scl", 3, "missing")


def test_net_on_both_lines_of_a_bus():
    assert_error("version: 1\nbuses:\n  - name: B\n    sda: /A\n    scl: [/C, /A]\n",
                 "buses[0].scl", 5, "already given as buses[0].sda")


def test_net_in_two_buses():
    assert_error("""\
        version: 1
        buses:
          - {name: B1, sda: /A, scl: /B}
          - {name: B2, sda: /C, scl: /B}
        """, "buses[1].scl", 4, "already given as buses[0].scl")


def test_empty_net_list():
    assert_error("version: 1\nbuses:\n  - {name: B, sda: [], scl: /B}\n",
                 "buses[0].sda", 3, "at least one")


def test_offboard_pullup_zero_ohms():
    assert_error("""\
        version: 1
        buses:
          - name: B
            sda: /A
            scl: /B
            offboard_pullup:
              ohms: 0
              rail: +3V3
        """, "buses[0].offboard_pullup.ohms", 7, "above zero")


def test_offboard_pullup_unreadable_ohms():
    assert_error("""\
        version: 1
        buses:
          - name: B
            sda: /A
            scl: /B
            offboard_pullup: {ohms: lots, rail: +3V3}
        """, "buses[0].offboard_pullup.ohms", 6, "cannot read 'lots'")


def test_offboard_pullup_missing_rail():
    assert_error("version: 1\nbuses:\n  - name: B\n    sda: /A\n    scl: /B\n"
                 "    offboard_pullup: {ohms: 2200}\n",
                 "buses[0].offboard_pullup.rail", 6, "missing")


def test_trace_with_both_length_and_capacitance():
    assert_error("version: 1\ntraces:\n  /A: {length_mm: 1, capacitance_pf: 2}\n",
                 'traces["/A"]', 3, "exactly one")


def test_trace_with_unknown_key():
    assert_error("version: 1\ntraces:\n  /A:\n    width_mm: 1\n",
                 'traces["/A"].width_mm', 4, "unknown key")


def test_unknown_role():
    assert_error("version: 1\nparts:\n  - match: {ref: U1}\n    role: slave\n",
                 "parts[0].role", 4, "unknown role 'slave'")


def test_part_match_without_keys():
    assert_error("version: 1\nparts:\n  - match: {}\n    role: target\n",
                 "parts[0].match", 3, "at least one of ref, value, lib_part")


def test_part_match_unknown_key():
    assert_error("version: 1\nparts:\n  - match: {footprint: X}\n    role: target\n",
                 "parts[0].match.footprint", 3, "unknown key")


def test_part_that_says_nothing():
    assert_error("version: 1\nparts:\n  - match: {ref: U1}\n", "parts[0]", 3,
                 "says nothing")


def test_address_beyond_seven_bits_suggests_ten_bit_form():
    assert_error("version: 1\nparts:\n  - match: {ref: U1}\n    address: 0x80\n",
                 "parts[0].address", 4, "ten_bit")


def test_address_far_out_of_range():
    assert_error("version: 1\nparts:\n  - match: {ref: U1}\n    address: 0x400\n",
                 "parts[0].address", 4, "7-bit address range")


def test_negative_address():
    assert_error("version: 1\nparts:\n  - match: {ref: U1}\n    address: -1\n",
                 "parts[0].address", 4, "out of the 7-bit address range")


def test_address_as_text():
    assert_error("version: 1\nparts:\n  - match: {ref: U1}\n    address: '0x29'\n",
                 "parts[0].address", 4, "whole number")


def test_ten_bit_address_out_of_range():
    assert_error("version: 1\nparts:\n  - match: {ref: U1}\n    address: {ten_bit: 0x400}\n",
                 "parts[0].address.ten_bit", 4, "10-bit address range")


def test_address_mapping_of_unknown_form():
    assert_error("version: 1\nparts:\n  - match: {ref: U1}\n    address: {fixed: 0x29}\n",
                 "parts[0].address", 4, "expected a number")


def test_pin_bit_beyond_six():
    assert_error("""\
        version: 1
        parts:
          - match: {ref: U1}
            address:
              base: 0x10
              pins: {A0: 0, A7: 7}
        """, "parts[0].address.pins.A7", 6, "bit range 0-6")


def test_two_pins_on_one_bit():
    assert_error("""\
        version: 1
        parts:
          - match: {ref: U1}
            address: {base: 0x50, pins: {A0: 0, A1: 0}}
        """, "parts[0].address.pins.A1", 4, "already set by pin A0")


def test_pin_bit_already_set_in_base():
    assert_error("""\
        version: 1
        parts:
          - match: {ref: U1}
            address: {base: 0x51, pins: {A0: 0}}
        """, "parts[0].address.pins.A0", 4, "already has bit 0 set")


def test_pin_tie_unknown_tie():
    assert_error("""\
        version: 1
        parts:
          - match: {ref: U1}
            address:
              pin: ADDR
              map:
                GND: 0x48
                VCC: 0x49
        """, "parts[0].address.map.VCC", 8, "unknown key")


def test_pin_tie_address_out_of_range():
    assert_error("""\
        version: 1
        parts:
          - match: {ref: U1}
            address: {pin: ADDR, map: {GND: 0x90}}
        """, "parts[0].address.map.GND", 4, "7-bit address range")


def test_tolerant_volts_must_be_positive():
    assert_error("version: 1\nparts:\n  - match: {ref: U1}\n    tolerant_volts: 0\n",
                 "parts[0].tolerant_volts", 4, "above zero")


def test_unknown_max_mode():
    assert_error("version: 1\nparts:\n  - match: {ref: U1}\n    max_mode: hs\n",
                 "parts[0].max_mode", 4, "unknown mode 'hs'")


def test_waiver_unknown_rule():
    assert_error("version: 1\nwaivers:\n  - rule: pullup-wrong\n    reason: x\n",
                 "waivers[0].rule", 3, "unknown rule 'pullup-wrong'")


def test_waiver_missing_reason():
    assert_error("version: 1\nwaivers:\n  - rule: pullup-parallel\n    refs: [R1]\n",
                 "waivers[0].reason", 3, "missing")


def test_waiver_blank_reason():
    assert_error("version: 1\nwaivers:\n  - rule: pullup-parallel\n    reason: '  '\n",
                 "waivers[0].reason", 4, "found nothing")


def test_waiver_refs_must_be_names():
    assert_error("version: 1\nwaivers:\n  - rule: pullup-parallel\n    reason: x\n"
                 "    refs: [R1, {R2: 1}]\n", "waivers[0].refs[1]", 5, "found a mapping")


def test_error_text_is_one_line_with_file_line_and_column():
    err = error_of("version: 1\ndefaults:\n  mode: turbo\n")
    assert str(err).startswith("netaudit.yaml:3:9: defaults.mode: unknown mode 'turbo'")


def test_engineering_code_without_units_module_is_a_clear_error(monkeypatch):
    monkeypatch.setitem(sys.modules, "netaudit.units", None)  # import now fails
    assert_error("""\
        version: 1
        buses:
          - {name: B, sda: /A, scl: /B, offboard_pullup: {ohms: 2k2, rail: +5V}}
        """, "buses[0].offboard_pullup.ohms", 3, "cannot read '2k2'")
