"""The JSON report, schema ``netaudit.report/1``: the keys and shapes CONTRACT.md promises
to scripts, deterministic bytes, and figures that agree with the bus specification.

The designs are hand-made (tests/handmade.py), written to tmp_path as KiCad version "E"
netlists by ``test_cli.netlist_text``, and read back as a user's file would be.
"""

from __future__ import annotations

import hashlib
import json
import random
from pathlib import Path

import jsonschema
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from handmade import build, ic, res
from helpers import write_netlist
from test_cli import BUS_AND_BUDGET_RULES, netaudit

from netaudit.audit import audit
from netaudit.config import parse_config
from netaudit.model import Design
from netaudit.report.json import dumps as report_dumps
from netaudit.report.json import render

# BUS_AND_BUDGET_RULES (test_cli): the rules of issues 3 and 4 (wiring, pull-ups, budget);
# later rule families (rail voltages, addresses) may add their own findings to the same boards.

NUM = {"type": "number"}
NUM_OR_NULL = {"type": ["number", "null"]}
STR_OR_NULL = {"type": ["string", "null"]}
STRINGS = {"type": "array", "items": {"type": "string"}}


def _obj(props: dict, *, required=None) -> dict:
    return {"type": "object", "properties": props, "required": sorted(required or props)}


# Every key of CONTRACT.md's example report, with its type. Extra keys are allowed
# ("Extend them freely"); none of these may be missing or change type.
LINE = _obj({
    "nets": STRINGS,
    "pullups": {"type": "array", "items": _obj({
        "ref": {"type": "string"}, "ohms": NUM_OR_NULL, "rail": {"type": "string"},
        "fitted": {"type": "boolean"}})},
    "rp_ohms": NUM_OR_NULL, "rp_min_ohms": NUM_OR_NULL, "rp_max_ohms": NUM_OR_NULL,
    "capacitance_farads": NUM_OR_NULL, "rise_time_s": NUM_OR_NULL, "rise_time_max_s": NUM_OR_NULL,
    "capacitance_parts": _obj({k: NUM for k in ("pins", "routing", "vias", "capacitors", "extra")}),
})
DEVICE = _obj({"ref": {"type": "string"}, "value": {"type": "string"}, "role": {"type": "string"},
               "address": STR_OR_NULL, "address_source": STR_OR_NULL, "io_rail": STR_OR_NULL,
               "io_volts": NUM_OR_NULL})
SEGMENT = _obj({
    "id": {"type": "string"},
    "upstream": {"oneOf": [{"type": "null"}, _obj({
        "ref": {"type": "string"}, "kind": {"enum": ["mux", "translator", "repeater"]},
        "channel": STR_OR_NULL})]},
    "devices": {"type": "array", "items": DEVICE},
    "lines": _obj({"sda": LINE, "scl": LINE}),
})
FINDING = _obj({
    "rule": {"type": "string"}, "severity": {"enum": ["error", "warning", "info"]},
    "bus": STR_OR_NULL, "segment": STR_OR_NULL, "line": {"enum": ["sda", "scl", None]},
    "refs": STRINGS, "nets": STRINGS, "message": {"type": "string", "minLength": 1},
    "data": {"type": "object"}, "waived": {"type": "boolean"}, "waiver_reason": STR_OR_NULL,
})
REPORT = _obj({
    "schema": {"const": "netaudit.report/1"},
    "tool": _obj({"name": {"const": "netaudit"}, "version": {"type": "string"}}),
    "design": _obj({k: {"type": "string"} for k in ("path", "format", "sha256", "title", "revision")}),
    "rails": {"type": "array", "items": _obj({"net": {"type": "string"}, "volts": NUM_OR_NULL,
                                              "source": {"type": "string"}})},
    "buses": {"type": "array", "items": _obj({
        "name": {"type": "string"}, "mode": {"type": "string"},
        "segments": {"type": "array", "items": SEGMENT, "minItems": 1}})},
    "findings": {"type": "array", "items": FINDING},
    "summary": _obj({k: {"type": "integer", "minimum": 0}
                     for k in ("buses", "segments", "errors", "warnings", "infos", "waived")}),
})


def mux_board() -> Design:
    """Controller, 2-channel multiplexer U2, a sensor per channel. Channel 0 has 4.7 kΩ
    pull-ups; channel 1 has none (two pullup-missing errors); SDA of the main segment has a
    second 4.7 kΩ from the sensor sheet (pullup-parallel); SCL of the main segment is pulled
    to +5V (pullup-rail-mismatch, a finding with line null)."""
    parts = [ic("U1", "MCU", ["SDA", "SCL", "VDD", "GND"], pins_total=48),
             ic("U2", "MUX2", ["SDA", "SCL", "SD0", "SC0", "SD1", "SC1", "VCC", "GND"]),
             ic("U3", "SENSOR", ["SDA", "SCL", "VDD", "GND"]),
             ic("U4", "SENSOR", ["SDA", "SCL", "VDD", "GND"]),
             res("R1", "4k7"), res("R2", "4k7"), res("R3", "4k7"), res("R4", "4k7"),
             res("R9", "4k7", sheet="/Sensor/", sheet_file="sensor.kicad_sch")]
    return build(parts, {
        "/SDA": ["U1.SDA", "U2.SDA", "R1.1", "R9.1"], "/SCL": ["U1.SCL", "U2.SCL", "R2.1"],
        "/CH0_SDA": ["U2.SD0", "U3.SDA", "R3.1"], "/CH0_SCL": ["U2.SC0", "U3.SCL", "R4.1"],
        "/CH1_SDA": ["U2.SD1", "U4.SDA"], "/CH1_SCL": ["U2.SC1", "U4.SCL"],
        "+3V3": ["U1.VDD", "U2.VCC", "U3.VDD", "U4.VDD", "R1.2", "R3.2", "R4.2", "R9.2"],
        "+5V": ["R2.2"], "GND": ["U1.GND", "U2.GND", "U3.GND", "U4.GND"]})


WAIVER = """\
version: 1
waivers:
  - rule: pullup-parallel
    refs: [R9]
    reason: sensor sheet pull-up is fitted only on the prototype
"""


@pytest.fixture
def board(tmp_path):
    return write_netlist(tmp_path / "board.net", mux_board(), title="Mux board", rev="B")


@pytest.fixture
def doc(board):
    return json.loads(render(audit(board, parse_config(WAIVER))))


def test_report_has_every_contract_key(doc):
    jsonschema.validate(doc, REPORT)


def test_design_block_identifies_the_file(board, doc):
    assert doc["design"]["path"] == "board.net"
    assert doc["design"]["format"] == "kicad-netlist"
    assert doc["design"]["sha256"] == hashlib.sha256(board.read_bytes()).hexdigest()
    assert (doc["design"]["title"], doc["design"]["revision"]) == ("Mux board", "B")


def test_segments_behind_the_mux_name_it_upstream(doc):
    (bus,) = doc["buses"]
    ups = [s["upstream"] for s in bus["segments"]]
    assert ups == [None, {"ref": "U2", "kind": "mux", "channel": "0"},
                   {"ref": "U2", "kind": "mux", "channel": "1"}]
    ids = [s["id"] for s in bus["segments"]]
    assert len(set(ids)) == len(ids)


def test_line_figures_follow_the_specification(doc):
    ch0 = doc["buses"][0]["segments"][1]["lines"]["sda"]
    # Rp(min) = (3.3 − 0.4) / 3 mA = 966.667 Ω: UM10204 Rev. 6 §7.1 Eq. (2), Table 9.
    assert ch0["rp_min_ohms"] == pytest.approx(966.667, abs=1e-3)
    # Two pins × 10 pF (Ci max, UM10204 Rev. 6 Table 9): U2's SD0 and U3's SDA.
    assert ch0["capacitance_farads"] == pytest.approx(20e-12)
    assert ch0["capacitance_parts"]["pins"] == pytest.approx(20e-12)
    # Rp(max) = 300 ns / (0.8473 · 20 pF) = 17.70 kΩ (Eq. 1; t_r Fast-mode, Table 10).
    assert ch0["rp_max_ohms"] == pytest.approx(300e-9 / (0.8473 * 20e-12), rel=1e-4)
    # Rise time 0.8473 · 4.7 kΩ · 20 pF = 79.6 ns (UM10204 Rev. 6 §7.1).
    assert ch0["rise_time_s"] == pytest.approx(0.8473 * 4700 * 20e-12, rel=1e-4)
    assert ch0["rise_time_max_s"] == pytest.approx(300e-9)
    (pullup,) = ch0["pullups"]
    assert {k: pullup[k] for k in ("ref", "ohms", "rail", "fitted")} == \
        {"ref": "R3", "ohms": 4700.0, "rail": "+3V3", "fitted": True}


def test_routed_length_is_absent_without_a_board(doc):
    lines = [line for s in doc["buses"][0]["segments"] for line in s["lines"].values()]
    assert lines and all("routed_length_m" not in line for line in lines)


def test_findings_carry_rule_line_refs_and_nets(doc):
    got = {(f["rule"], f["segment"], f["line"]): f for f in doc["findings"] if f["rule"] in BUS_AND_BUDGET_RULES}
    assert set(got) == {
        ("pullup-missing", "I2C/U2.ch1", "sda"), ("pullup-missing", "I2C/U2.ch1", "scl"),
        ("pullup-parallel", "I2C", "sda"), ("pullup-rail-mismatch", "I2C", None)}
    assert got[("pullup-missing", "I2C/U2.ch1", "sda")]["nets"] == ["/CH1_SDA"]
    assert got[("pullup-parallel", "I2C", "sda")]["refs"] == ["R1", "R9"]
    assert got[("pullup-rail-mismatch", "I2C", None)]["nets"] == ["/SCL", "/SDA"]


def test_waived_finding_is_kept_with_its_reason(doc):
    (f,) = [f for f in doc["findings"] if f["rule"] == "pullup-parallel"]
    assert f["waived"] is True
    assert f["waiver_reason"] == "sensor sheet pull-up is fitted only on the prototype"


def test_summary_counts_the_findings(doc):
    live = [f["severity"] for f in doc["findings"] if not f["waived"]]
    assert doc["summary"] == {"buses": 1, "segments": 3, "errors": live.count("error"),
                              "warnings": live.count("warning"), "infos": live.count("info"),
                              "waived": 1}
    # Of the bus and budget rules: 3 errors (2 missing, 1 rail mismatch); the parallel
    # warning is the waived one.
    assert sum(f["severity"] == "error" for f in doc["findings"] if f["rule"] in BUS_AND_BUDGET_RULES) == 3


def test_findings_come_most_severe_first(doc):
    rank = {"error": 3, "warning": 2, "info": 1}
    severities = [rank[f["severity"]] for f in doc["findings"]]
    assert severities == sorted(severities, reverse=True)


def test_rails_are_sorted_and_named_with_volts(doc):
    nets = [r["net"] for r in doc["rails"]]
    assert nets == sorted(nets)
    volts = {r["net"]: r["volts"] for r in doc["rails"]}
    assert volts["+3V3"] == 3.3 and volts["+5V"] == 5.0


def test_two_runs_give_byte_identical_json(board, tmp_path):
    (tmp_path / "netaudit.yaml").write_text(WAIVER, encoding="utf-8")
    a, b = tmp_path / "a.json", tmp_path / "b.json"
    assert netaudit("check", board, "--json", a, "--quiet").returncode == 1
    assert netaudit("check", board, "--json", b, "--quiet").returncode == 1
    assert a.read_bytes() == b.read_bytes()
    assert json.loads(a.read_text(encoding="utf-8"))["summary"]["waived"] == 1


def test_order_of_parts_and_nets_in_the_file_does_not_change_the_report(tmp_path):
    # KiCad may write components and nets in another order after an edit; only the
    # file's hash may differ.
    d = mux_board()
    shuffled = Design(path=d.path, format=d.format, title=d.title,
                      parts=tuple(random.Random(7).sample(d.parts, len(d.parts))),
                      nets=tuple(random.Random(8).sample(d.nets, len(d.nets))))
    docs = []
    for name, design in (("a.net", d), ("b.net", shuffled)):
        path = write_netlist(tmp_path / name, design, title="Mux board", rev="B")
        rep = json.loads(render(audit(path, parse_config(WAIVER))))
        del rep["design"]["sha256"], rep["design"]["path"]
        docs.append(rep)
    assert docs[0] == docs[1]


def test_json_report_is_utf8_with_sorted_keys(doc, board):
    text = render(audit(board, parse_config(WAIVER)))
    assert text == json.dumps(doc, indent=2, sort_keys=True, ensure_ascii=False) + "\n"


# -- messages ------------------------------------------------------------------------

def _pair(ref, pins=("SDA", "SCL", "VDD", "GND")):
    return ic(ref, "SENSOR", list(pins))


def message_boards() -> list[tuple[Design, str | None]]:
    """Small boards that between them raise every registered rule."""
    mcu = ic("U1", "MCU", ["SDA", "SCL", "VDD", "GND"], pins_total=48)
    sheet = dict(sheet_file="probe.kicad_sch")
    return [
        # swapped U3, unconnected U4 SDA, duplicated R11/R21, 470 Ω too strong on SCL
        (build([mcu, _pair("U2"), _pair("U3"), _pair("U4"), res("R11", "4k7", sheet="/A/", **sheet),
                res("R21", "4k7", sheet="/B/", **sheet), res("R2", "470")],
               {"/SDA": ["U1.SDA", "U2.SDA", "U3.SCL", "R11.1", "R21.1"],
                "/SCL": ["U1.SCL", "U2.SCL", "U3.SDA", "U4.SCL", "R2.1"],
                "+3V3": ["U1.VDD", "U2.VDD", "U3.VDD", "U4.VDD", "R11.2", "R21.2", "R2.2"],
                "GND": ["U1.GND", "U2.GND", "U3.GND", "U4.GND"]}), None),
        # lone device, SDA pulled to a GPIO, SCL only pulled down, a data line with no partner
        (build([ic("U1", "MCU", ["SDA", "SCL", "PA3", "I2C2_SDA", "VDD", "GND"], pins_total=48),
                _pair("U5", ("SDA", "VDD", "GND")), res("R1", "4k7"), res("R6", "4k7"), res("R7", "4k7")],
               {"/SDA": ["U1.SDA", "R1.1"], "/SCL": ["U1.SCL", "R7.1"], "/PU": ["R1.2", "U1.PA3"],
                "/AUX_SDA": ["U1.I2C2_SDA", "U5.SDA", "R6.1"],
                "+3V3": ["U1.VDD", "U5.VDD", "R6.2"], "GND": ["U1.GND", "U5.GND", "R7.2"]}), None),
        # 1 kΩ series resistors, SDA and SCL pulled to different rails
        (build([mcu, _pair("U2"), res("R1", "4k7"), res("R2", "4k7"), res("R5", "1k"), res("R6", "1k")],
               {"/SDA_MCU": ["U1.SDA", "R5.1"], "/SDA": ["R5.2", "U2.SDA", "R1.1"],
                "/SCL_MCU": ["U1.SCL", "R6.1"], "/SCL": ["R6.2", "U2.SCL", "R2.1"],
                "+3V3": ["U1.VDD", "U2.VDD", "R1.2"], "+5V": ["R2.2"], "GND": ["U1.GND", "U2.GND"]}), None),
        # 10 kΩ (twice on SDA, from two places) and 450 pF of cable: parallel, too weak,
        # over the capacitance limit
        (build([mcu, _pair("U2"), res("R1", "10k"), res("R2", "10k"),
                res("R3", "10k", sheet="/Sensor/", sheet_file="sensor.kicad_sch")],
               {"/SDA": ["U1.SDA", "U2.SDA", "R1.1", "R3.1"], "/SCL": ["U1.SCL", "U2.SCL", "R2.1"],
                "+3V3": ["U1.VDD", "U2.VDD", "R1.2", "R2.2", "R3.2"], "GND": ["U1.GND", "U2.GND"]}),
         "version: 1\nbuses:\n  - name: MAIN\n    sda: /SDA\n    scl: /SCL\n    extra_capacitance_pf: 450\n"),
    ]


@pytest.fixture(scope="module")
def all_findings(tmp_path_factory):
    out = []
    for i, (design, cfg) in enumerate(message_boards()):
        path = write_netlist(tmp_path_factory.mktemp("msg") / f"board{i}.net", design)
        out += json.loads(render(audit(path, parse_config(cfg or "version: 1\n"))))["findings"]
    return out


def test_message_boards_raise_every_bus_and_budget_rule(all_findings):
    assert {f["rule"] for f in all_findings} >= BUS_AND_BUDGET_RULES


def test_every_message_is_the_rules_own_sentence(all_findings):
    # The generic fallback starts with the rule id in words; each rule has its own phrase.
    for f in (f for f in all_findings if f["rule"] in BUS_AND_BUDGET_RULES):
        assert not f["message"].startswith(f["rule"].replace("-", " ")), f


# -- the writer: the same text as the standard library's json.dumps -----------------------
_SCALARS = st.one_of(st.none(), st.booleans(), st.integers(), st.text(),
                     st.floats(allow_nan=False, allow_infinity=False))
_DOCS = st.recursive(_SCALARS, lambda inner: st.one_of(st.lists(inner, max_size=5),
                                                       st.dictionaries(st.text(), inner, max_size=5)),
                     max_leaves=40)


def _stdlib(doc) -> str:
    return json.dumps(doc, indent=2, sort_keys=True, ensure_ascii=False) + "\n"


@settings(max_examples=400, deadline=None)
@given(st.dictionaries(st.text(), _DOCS, max_size=6))
def test_the_report_writer_gives_the_standard_librarys_text_for_any_document(doc):
    assert report_dumps(doc) == _stdlib(doc)


def test_the_report_writer_gives_the_standard_librarys_text_for_the_demo_report():
    from netaudit.audit import audit
    from netaudit.report.json import report

    doc = report(audit(Path(__file__).resolve().parents[1] / "fixtures" / "demo" / "greenhouse.net"))
    assert report_dumps(doc) == _stdlib(doc)


def test_the_report_writer_refuses_what_is_not_report_data():
    with pytest.raises(TypeError):
        report_dumps({"x": float("nan")})
    with pytest.raises(TypeError):
        report_dumps({"x": object()})
