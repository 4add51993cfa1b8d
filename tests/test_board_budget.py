"""Line budgets with a board: routed capacitance per line (netaudit/linebudget.py)."""

from __future__ import annotations

import dataclasses
import json

import pytest
from conftest import run_cli
from handmade import build, ic, res

from netaudit.audit import audit_design
from netaudit.config import Config, parse_config
from netaudit.electrical import traces
from netaudit.model import Board, Stackup, StackupLayer, TrackRun, Via

PF = 1e-12

# Our own two-layer 1.6 mm board (invented numbers for a hand-made case).
L = StackupLayer
TWO_LAYER = Stackup((L("F.Cu", "copper", 0.035e-3), L("dielectric 1", "dielectric", 1.53e-3, 4.5),
                     L("B.Cu", "copper", 0.035e-3)))
BOARD = Board("hand.kicad_pcb", 1.6e-3, TWO_LAYER,
              runs=(TrackRun("/SDA", "F.Cu", 0.25e-3, 0.060), TrackRun("/SDA", "B.Cu", 0.25e-3, 0.020),
                    TrackRun("/SCL", "F.Cu", 0.25e-3, 0.070)),
              vias=(Via("/SDA", ("F.Cu", "B.Cu"), 0.6e-3, 0.3e-3, 2),),
              plane_clearance_m=0.3e-3)


def design(board: Board | None = BOARD):
    d = build([ic("U1", "MCU", ["SDA", "SCL", "VDD", "GND"], pins_total=48),
               ic("U2", "SENSOR", ["SDA", "SCL", "VDD", "GND"]), res("R1", "4k7"), res("R2", "4k7")],
              {"/SDA": ["U1.SDA", "U2.SDA", "R1.1"], "/SCL": ["U1.SCL", "U2.SCL", "R2.1"],
               "+3V3": ["U1.VDD", "U2.VDD", "R1.2", "R2.2"], "GND": ["U1.GND", "U2.GND"]})
    return dataclasses.replace(d, board=board)


def line_budget(audit, signal: str):
    (bus,) = audit.buses
    return getattr(bus.segments[0], signal).budget


def test_routing_and_vias_come_from_the_board():
    b = line_budget(audit_design(design(), Config.empty()), "sda")
    per_m = traces.microstrip(0.25e-3, 1.53e-3, 0.035e-3, 4.5).farads_per_m
    via = traces.via_capacitance(4.5, 1.6e-3, 0.6e-3, 1.2e-3)
    assert b.capacitance_parts["routing"] == pytest.approx(per_m * 0.080)
    assert b.capacitance_parts["vias"] == pytest.approx(2 * via)
    assert b.routed_length_m == pytest.approx(0.080)
    assert b.capacitance_farads == pytest.approx(sum(b.capacitance_parts.values()))


def test_line_notes_say_what_the_routing_assumed():
    notes = line_budget(audit_design(design(), Config.empty()), "sda").notes
    assert any(n.startswith("SDA routed on the board: 80.0 mm of track") for n in notes)
    assert any("microstrip" in n and "stripline" in n and "0.3 mm" in n for n in notes)
    assert not any(n.startswith("routing not included") for n in notes)


def test_without_a_board_routing_is_not_included_as_before():
    b = line_budget(audit_design(design(None), Config.empty()), "sda")
    assert (b.capacitance_parts["routing"], b.capacitance_parts["vias"], b.routed_length_m) == (0.0, 0.0, None)
    assert any(n.startswith("routing not included") for n in b.notes)


def test_a_traces_entry_wins_over_the_board_for_its_net():
    config = parse_config("version: 1\ntraces:\n  /SDA: {capacitance_pf: 50}\n")
    b = line_budget(audit_design(design(), config), "sda")
    assert b.capacitance_parts["routing"] == pytest.approx(50 * PF)
    assert b.capacitance_parts["vias"] == 0.0
    assert b.routed_length_m == pytest.approx(0.080)   # still the board's length


def test_a_line_with_no_tracks_says_so():
    bare = dataclasses.replace(BOARD, runs=BOARD.runs[:2])   # nothing routed on /SCL
    b = line_budget(audit_design(design(bare), Config.empty()), "scl")
    assert b.routed_length_m == 0.0
    assert "net /SCL has no tracks on the board" in b.notes


def test_geometry_outside_the_formula_range_is_said_approximate():
    wide = dataclasses.replace(BOARD, runs=(TrackRun("/SDA", "F.Cu", 3.5e-3, 0.01),))  # W/H 2.3
    notes = line_budget(audit_design(design(wide), Config.empty()), "sda").notes
    assert any(n.startswith("routing approximate") and "W/H" in n for n in notes)


# -- a board file on its own, through the command line ---------------------------------

def _fp(ref: str, value: str, pads: list[tuple[str, str, str]]) -> str:
    body = "".join(f'(pad "{n}" smd rect (at 0 0) (size 1 1) (layers "F.Cu") (net {code}) '
                   f'(pinfunction "{fn}") (pintype "bidirectional"))' for n, code, fn in pads)
    return (f'(footprint "x:y" (layer "F.Cu") (property "Reference" "{ref}") '
            f'(property "Value" "{value}") (attr smd) {body})')


def board_file() -> str:
    nets = '(net 0 "") (net 1 "/SDA") (net 2 "/SCL") (net 3 "+3V3") (net 4 "GND")'
    fps = [_fp("U1", "MCU", [("1", '1 "/SDA"', "SDA"), ("2", '2 "/SCL"', "SCL"), ("3", '3 "+3V3"', "VDD"),
                             ("4", '4 "GND"', "GND")]),
           _fp("U2", "SENSOR", [("1", '1 "/SDA"', "SDA"), ("2", '2 "/SCL"', "SCL"), ("3", '3 "+3V3"', "VDD"),
                                ("4", '4 "GND"', "GND")]),
           _fp("R1", "4k7", [("1", '1 "/SDA"', ""), ("2", '3 "+3V3"', "")]),
           _fp("R2", "4k7", [("1", '2 "/SCL"', ""), ("2", '3 "+3V3"', "")])]
    tracks = ('(segment (start 0 0) (end 30 40) (width 0.25) (layer "F.Cu") (net 1)) '
              '(segment (start 0 5) (end 60 5) (width 0.25) (layer "F.Cu") (net 2)) '
              '(via (at 30 40) (size 0.6) (drill 0.3) (layers "F.Cu" "B.Cu") (net 1))')
    return f'(kicad_pcb (version 20241229) (generator_version "9.0") (general (thickness 1.6)) ' \
           f'(layers (0 "F.Cu" signal) (2 "B.Cu" signal)) {nets} {" ".join(fps)} {tracks})'


def test_check_on_a_board_file_reports_routed_length_and_vias(tmp_path):
    path = tmp_path / "hand.kicad_pcb"
    path.write_text(board_file(), encoding="utf-8")
    out = tmp_path / "report.json"
    code, _stdout, stderr = run_cli(["check", str(path), "--json", str(out)])
    assert code in (0, 1), stderr
    doc = json.loads(out.read_text())
    (bus,) = doc["buses"]
    sda = bus["segments"][0]["lines"]["sda"]
    assert sda["routed_length_m"] == pytest.approx(0.050)        # the 3-4-5 segment, 50 mm
    assert sda["capacitance_parts"]["vias"] > 0
    assert doc["design"]["format"] == "kicad-board"
