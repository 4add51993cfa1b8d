"""What the fuzzing (test_fuzz.py) found, kept as plain tests: each was a crash, a hang or a
traceback, and now ends in an audit or in one clean line naming the file.
"""

from __future__ import annotations

import os
import re
from pathlib import Path

import pytest
from conftest import run_cli
from helpers import DEMO_DIR as DEMO
from helpers import copy_demo, invoke, report_options


def _one_clean_line(err: str, path: Path) -> tuple[int, int | None] | None:
    """Assert ``err`` is one line naming ``path``; its (line, column) when it gives them."""
    lines = err.splitlines()
    assert len(lines) == 1 and lines[0].startswith("netaudit: ") and str(path) in lines[0], err
    m = re.search(re.escape(str(path)) + r":(\d+)(?::(\d+))?: ", lines[0])
    return (int(m.group(1)), int(m.group(2)) if m.group(2) else None) if m else None


@pytest.mark.parametrize("nesting", ["[" * 100_000 + "]" * 100_000, "{a: " * 100_000 + "1" + "}" * 100_000],
                         ids=["lists", "mappings"])
def test_settings_nested_a_hundred_thousand_deep_are_refused_at_once(tmp_path, nesting):
    # Was: libyaml took minutes to scan it, and composing it crashed the interpreter.
    design = copy_demo(tmp_path, "version: 1\nrails: " + nesting + "\n")
    config = tmp_path / "netaudit.yaml"
    code, _out, err = run_cli(["check", design], timeout_s=60)
    assert code == 2, err
    line, column = _one_clean_line(err, config)
    assert line == 2 and "nested" in err


def test_settings_that_name_a_rail_as_a_bus_line_are_one_clean_line(tmp_path):
    # Was: KeyError in the bus finder (a supply rail is never a bus line candidate).
    design = copy_demo(tmp_path, "version: 1\nrails:\n  /I2C1_SDA: 0\nbuses:\n  - name: MAIN\n"
                                 "    sda: /I2C1_SDA\n    scl: /I2C1_SCL\n")
    config = tmp_path / "netaudit.yaml"
    code, _out, err = invoke(["check", design])
    assert code == 2
    assert _one_clean_line(err, config) == (5, None) and "rail" in err  # the bus entry's line


def test_netlist_with_a_list_where_a_keyword_belongs_reads(tmp_path):
    # Was: TypeError (unhashable list) in the netlist reader for ((value) "x").
    path = tmp_path / "odd.net"
    path.write_text('(export (version "E") (components (comp (ref "R1") ((value) "x") '
                    '(property ((name) "a")) (libsource ((lib) "x")))) '
                    '(nets (net (code "1") (name "A") (node ((ref) "R1") (pin "1")))))\n', encoding="utf-8")
    code, _out, err = invoke(["check", path, "--quiet"])
    assert code == 0, err


def test_board_with_a_list_where_a_keyword_belongs_reads(tmp_path):
    # Was: TypeError (unhashable list) in the board reader; found by mutating a real board.
    path = tmp_path / "odd.kicad_pcb"
    path.write_text('(kicad_pcb (version 20240108) (generator "pcbnew")\n  ((net) 1 "x")\n'
                    '  (net (0) "y")\n  (net 1 ("z")))\n', encoding="utf-8")
    code, _out, err = invoke(["check", path, "--quiet"])
    assert code == 0, err


@pytest.mark.parametrize("data, where", [
    (b"version: 1\nrails:\n  \xe9: 3.3\n", (3, 3)),              # Latin-1: netaudit.yaml is UTF-8
    (b"\xef\xbb\xbfversion: 1\r\nrails:\r\n  a\x1b: 3.3\r\n", (3, 4)),  # a control character
], ids=["latin-1", "escape-character"])
def test_unreadable_settings_name_line_and_column(tmp_path, data, where):
    design = copy_demo(tmp_path, data)
    config = tmp_path / "netaudit.yaml"
    code, _out, err = invoke(["check", design])
    assert code == 2
    assert _one_clean_line(err, config) == where


def test_named_pipe_as_settings_is_refused_without_waiting(tmp_path):
    design = copy_demo(tmp_path)
    pipe = tmp_path / "settings.yaml"
    os.mkfifo(pipe)
    code, _out, err = run_cli(["check", design, "--config", pipe], timeout_s=60)
    assert code == 2
    assert _one_clean_line(err, pipe) is None and "regular file" in err


@pytest.mark.parametrize("settings_text, where", [
    ("version: 1\ntraces:\n  /I2C1_SCL: {length_mm: 1.9e157}\n", (3, 26)),
    ("version: 1\ndefaults:\n  trace_pf_per_mm: 1.4e307\n", (3, 20)),
    ("version: 1\nrails:\n  +3V3: 1.7976931348623157e308\n", (3, 9)),
    ("version: 1\nparts:\n  - {match: {ref: U1}, pin_capacitance_pf: 7.4e307}\n", (3, 44)),
], ids=["trace length", "trace capacitance", "rail", "pin capacitance"])
def test_settings_numbers_past_the_limits_are_refused_at_their_place(tmp_path, settings_text, where):
    # Was: the line budget overflowed to infinity and raised ValueError (rp_max of inf F).
    design = copy_demo(tmp_path, settings_text)
    config = tmp_path / "netaudit.yaml"
    code, _out, err = invoke(["check", design])
    assert code == 2 and "out of range" in err
    assert _one_clean_line(err, config) == where


def test_resistor_value_at_the_float_limit_gives_every_report(tmp_path):
    # Was: OverflowError formatting 1.797e308 ohms (rounded to three digits it exceeds a float).
    text = (DEMO / "greenhouse.net").read_text(encoding="utf-8")
    assert '(value "4k7")' in text
    design = tmp_path / "greenhouse.net"
    design.write_text(text.replace('(value "4k7")', '(value "1.7976931348623157e308")'), encoding="utf-8")
    code, out, err = invoke(["check", design] + report_options(tmp_path))
    assert code in (0, 1), err
    assert "TΩ" in out  # the pull-ups, shown with the largest prefix


def test_an_integer_too_long_for_a_float_is_refused_at_its_place(tmp_path):
    # Was: OverflowError converting a 400-digit YAML integer to float (fuzzing, seed 20261203).
    design = copy_demo(tmp_path, "version: 1\ndefaults:\n  pin_capacitance_pf: " + "9" * 400 + "\n")
    config = tmp_path / "netaudit.yaml"
    code, _out, err = invoke(["check", design])
    assert code == 2 and "expected a finite number" in err
    assert _one_clean_line(err, config) == (3, 23)
    assert len(err) < 300   # the value is shortened in the message
