"""The .kicad_pcb reader (netaudit/readers/kicad_board.py) on small hand-made boards."""

from __future__ import annotations

import math
import re
from pathlib import Path

import pytest

from netaudit.errors import InputError
from netaudit.readers import kicad_board, read_design

STACKUP = """
  (setup
    (stackup
      (layer "F.SilkS" (type "Top Silk Screen"))
      (layer "F.Mask" (type "Top Solder Mask") (thickness 0.01))
      (layer "F.Cu" (type "copper") (thickness 0.035))
      (layer "dielectric 1" (type "core") (thickness 0.2 locked) (material "FR4") (epsilon_r 4.2)
        (loss_tangent 0.02))
      (layer "In1.Cu" (type "copper") (thickness 0.0175))
      (layer "dielectric 2" (type "prepreg") (thickness 0.5) (material "FR4") (epsilon_r 4.5)
        addsublayer (thickness 0.5) (material "FR4") (epsilon_r 4.0))
      (layer "In2.Cu" (type "copper") (thickness 0.0175))
      (layer "dielectric 3" (type "core") (thickness 0.2) (material "FR4") (epsilon_r 4.2))
      (layer "B.Cu" (type "copper") (thickness 0.035))
      (layer "B.Mask" (type "Bottom Solder Mask") (thickness 0.01))
      (copper_finish "None")
    )
  )
"""

FOOTPRINTS = """
  (footprint "Resistor_SMD:R_0402" (layer "F.Cu") (at 10 10)
    (property "Reference" "R1" (at 0 0) (layer "F.SilkS"))
    (property "Value" "2k2" (at 0 0) (layer "F.Fab"))
    (property "Manufacturer" "Acme")
    (property "Description" "pull-up")
    (property ki_fp_filters "R_*")
    (sheetname "/Sensors/") (sheetfile "sensors.kicad_sch")
    (attr smd)
    (pad "1" smd rect (at 0 0) (size 1 1) (layers "F.Cu") (net 1 "/SDA") (pintype "passive"))
    (pad "2" smd rect (at 1 0) (size 1 1) (layers "F.Cu") (net 3 "+3V3") (pintype "passive"))
  )
  (footprint "Package_SO:SOIC-8" (layer "F.Cu") (at 20 10)
    (property "Reference" "U1" (at 0 0) (layer "F.SilkS"))
    (property "Value" "SENSOR" (at 0 0) (layer "F.Fab"))
    (attr smd dnp exclude_from_bom)
    (pad "5" smd rect (at 0 0) (size 1 1) (layers "F.Cu") (net 1 "/SDA") (pinfunction "SDA")
      (pintype "bidirectional"))
    (pad "6" smd rect (at 0 1) (size 1 1) (layers "F.Cu") (net 2 "/SCL") (pinfunction "SCL")
      (pintype "input"))
    (pad "" np_thru_hole circle (at 3 3) (size 1 1) (drill 1) (layers "*.Cu"))
  )
  (footprint "Symbol:Logo" (layer "F.Cu") (at 0 0)
    (property "Reference" "G1" (at 0 0) (layer "F.SilkS"))
    (attr board_only exclude_from_pos_files exclude_from_bom)
  )
"""

TRACKS = """
  (segment (start 0 0) (end 3 4) (width 0.2) (layer "F.Cu") (net 1) (uuid "a"))
  (segment (start 3 4) (end 3 14) (width 0.2) (layer "F.Cu") (net 1) (uuid "b"))
  (segment (start 3 14) (end 3 16) (width 0.15) (layer "In1.Cu") (net 1) (uuid "c"))
  (arc (start 10 0) (mid 7.0710678118654755 7.0710678118654755) (end 0 10) (width 0.2)
    (layer "B.Cu") (net 2) (uuid "d"))
  (segment (start 0 0) (end 100 0) (width 0.2) (layer "F.Cu") (net 0) (uuid "e"))
  (via (at 3 4) (size 0.6) (drill 0.3) (layers "F.Cu" "B.Cu") (net 1) (uuid "f"))
  (via (at 3 14) (size 0.6) (drill 0.3) (layers "F.Cu" "B.Cu") (net 1) (uuid "g"))
  (via micro (at 5 5) (size 0.3) (drill 0.1) (layers "F.Cu" "In1.Cu") (net 2) (uuid "h"))
  (zone (net 4) (net_name "GND") (layer "In1.Cu") (connect_pads (clearance 0.25)) (min_thickness 0.2)
    (polygon (pts (xy 0 0) (xy 5 0) (xy 5 5) (xy 0 5))))
  (zone (net 4) (net_name "GND") (layer "In2.Cu") (connect_pads yes (clearance 0.3)) (min_thickness 0.2)
    (polygon (pts (xy 0 0) (xy 50 0) (xy 50 40) (xy 0 40))))
  (zone (net 0) (net_name "") (layers "F.Cu" "B.Cu") (connect_pads (clearance 0)) (keepout (tracks not_allowed))
    (polygon (pts (xy 0 0) (xy 90 0) (xy 90 90) (xy 0 90))))
"""


def board_text(stackup: str = STACKUP, tracks: str = TRACKS, footprints: str = FOOTPRINTS,
               thickness: str = "1.55") -> str:
    return f"""(kicad_pcb (version 20240108) (generator "pcbnew") (generator_version "8.0")
  (general (thickness {thickness}))
  (title_block (title "hand-made") (rev "A"))
  (layers (0 "F.Cu" signal) (1 "In1.Cu" signal) (2 "In2.Cu" power) (31 "B.Cu" signal)
    (44 "Edge.Cuts" user))
  {stackup}
  (net 0 "")
  (net 1 "/SDA")
  (net 2 "/SCL")
  (net 3 "+3V3")
  (net 4 "GND")
  {footprints}
  {tracks}
)
"""


def write(tmp_path: Path, text: str, name: str = "hand.kicad_pcb") -> Path:
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    return path


@pytest.fixture
def design(tmp_path):
    return kicad_board.read_file(write(tmp_path, board_text()))


def test_segments_add_up_per_net_layer_and_width(design):
    runs = {(r.layer, round(r.width_m * 1e6)): r for r in design.board.runs_of("/SDA")}
    assert sorted(runs) == [("F.Cu", 200), ("In1.Cu", 150)]          # widths in µm
    assert runs[("F.Cu", 200)].length_m == pytest.approx(15e-3)     # 5 + 10 mm
    assert runs[("F.Cu", 200)].pieces == 2
    assert runs[("In1.Cu", 150)].length_m == pytest.approx(2e-3)


def test_arc_is_measured_along_the_circle(design):
    # Quarter circle of radius 10 mm through start, mid and end: 10 * pi / 2 mm.
    assert design.board.routed_length_m("/SCL") == pytest.approx(10e-3 * math.pi / 2)


def test_arc_the_long_way_round_is_three_quarters():
    # From (10, 0) to (0, 10) with its midpoint at -135°: three quarters of the circle.
    h = 10 / math.sqrt(2)
    assert kicad_board.arc_length(10, 0, -h, -h, 0, 10) == pytest.approx(10 * 3 * math.pi / 2)


def test_arc_with_mid_off_the_middle_sweeps_each_half_the_short_way():
    # Start 0°, "mid" 135°, end 90°: +135° then -45°, a quarter circle, as KiCad reads it
    # (pcbnew 9.0.8 reports GetAngle() 90° and this length for the same three points, run here).
    h = 10 / math.sqrt(2)
    assert kicad_board.arc_length(10, 0, -h, h, 0, 10) == pytest.approx(10 * math.pi / 2)


def test_straight_arc_is_its_chord():
    assert kicad_board.arc_length(0, 0, 1, 1, 2, 2) == pytest.approx(math.hypot(2, 2))


def test_tracks_on_no_net_are_left_out(design):
    assert "" not in design.board.nets
    assert design.board.routed_length_m("/SDA") == pytest.approx(17e-3)


def test_vias_are_counted_with_their_geometry(design):
    (sda,) = design.board.vias_of("/SDA")
    assert (sda.count, sda.layers, sda.diameter_m, sda.drill_m) == \
        (2, ("F.Cu", "B.Cu"), pytest.approx(0.6e-3), pytest.approx(0.3e-3))
    (scl,) = design.board.vias_of("/SCL")
    assert scl.layers == ("F.Cu", "In1.Cu")


def test_plane_clearance_is_that_of_the_largest_zone_on_a_net(design):
    # 50 x 40 mm GND zone at 0.3 mm beats the 5 x 5 mm one at 0.25 mm; the keep-out has no net.
    assert design.board.plane_clearance_m == pytest.approx(0.3e-3)


def test_stackup_layers_come_from_the_file_top_to_bottom(design):
    s = design.board.stackup
    assert [layer.name for layer in s.copper] == ["F.Cu", "In1.Cu", "In2.Cu", "B.Cu"]
    first = next(layer for layer in s.layers if layer.name == "dielectric 1")
    assert (first.thickness_m, first.epsilon_r, first.material) == (pytest.approx(0.2e-3), 4.2, "FR4")
    assert not s.assumed and design.board.notes == ()


def test_dielectric_sublayers_are_kept(design):
    subs = [layer for layer in design.board.stackup.layers if layer.name == "dielectric 2"]
    assert [(d.thickness_m, d.epsilon_r) for d in subs] == [(pytest.approx(0.5e-3), 4.5),
                                                           (pytest.approx(0.5e-3), 4.0)]


def test_stackup_thickness_sums_copper_dielectric_and_mask(design):
    # 0.01 + 0.035 + 0.2 + 0.0175 + 1.0 + 0.0175 + 0.2 + 0.035 + 0.01 mm
    assert design.board.stackup.thickness_m == pytest.approx(1.525e-3)
    assert design.board.thickness_m == pytest.approx(1.55e-3)   # the file's own figure


def test_board_without_stackup_gets_defaults_and_says_so(tmp_path):
    d = kicad_board.read_file(write(tmp_path, board_text(stackup="", thickness="1.6")))
    s = d.board.stackup
    assert s.assumed
    assert "no stackup in the board file; assumed FR-4 εr 4.5, 1.6 mm, 35 µm copper" in d.board.notes[0]
    assert [layer.name for layer in s.copper] == ["F.Cu", "In1.Cu", "In2.Cu", "B.Cu"]
    assert s.thickness_m == pytest.approx(1.6e-3)
    assert all(layer.epsilon_r == 4.5 for layer in s.layers if layer.kind == "dielectric")


def test_footprints_become_parts_with_values_fields_and_marks(design):
    r1, u1 = design.part("R1"), design.part("U1")
    assert (r1.value, r1.footprint, r1.sheet_path, r1.sheet_file) == \
        ("2k2", "Resistor_SMD:R_0402", "/Sensors/", "sensors.kicad_sch")
    assert r1.field("Manufacturer") == "Acme" and r1.description == "pull-up"
    assert not any(name.startswith("ki_") for name, _ in r1.fields)
    assert r1.fitted and not u1.fitted and u1.dnp and u1.exclude_from_bom


def test_board_only_footprints_are_not_parts(design):
    assert design.part("G1") is None


def test_pads_give_nets_with_pin_functions(design):
    sda = design.net("/SDA")
    assert {(n.ref, n.pin, n.pin_function, n.pin_type) for n in sda.nodes} == \
        {("R1", "1", "", "passive"), ("U1", "5", "SDA", "bidirectional")}
    assert design.net_of("U1", "6") == "/SCL"
    assert [p.number for p in design.part("U1").pins] == ["5", "6"]   # the unnumbered hole is no pin


def test_design_names_the_board_and_its_tool(design):
    assert (design.format, design.title, design.revision, design.kicad_version) == \
        ("kicad-board", "hand-made", "A", "8.0")


def test_kicad6_reference_and_value_text_are_read(tmp_path):
    fp = """(footprint "R" (layer "F.Cu") (fp_text reference "R7" (at 0 0) (layer "F.SilkS"))
      (fp_text value "4k7" (at 0 0) (layer "F.Fab")) (property "Sheetfile" "a.kicad_sch")
      (pad "1" smd rect (at 0 0) (size 1 1) (layers "F.Cu") (net 1 "/SDA")))"""
    d = kicad_board.read_file(write(tmp_path, board_text(footprints=fp)))
    assert (d.part("R7").value, d.part("R7").sheet_file, d.net_of("R7", "1")) == ("4k7", "a.kicad_sch", "/SDA")


def test_net_names_written_in_tracks_are_read(tmp_path):
    # KiCad 10 writes the net's name in a track instead of its number.
    tracks = '(segment (start 0 0) (end 0 7) (width 0.2) (layer "F.Cu") (net "/SDA"))'
    d = kicad_board.read_file(write(tmp_path, board_text(tracks=tracks)))
    assert d.board.routed_length_m("/SDA") == pytest.approx(7e-3)


def test_escaped_slash_in_a_net_name_is_unescaped(tmp_path):
    text = board_text(tracks='(segment (start 0 0) (end 0 1) (width 0.2) (layer "F.Cu") (net 5))') \
        .replace('(net 4 "GND")', '(net 4 "GND")\n  (net 5 "Net-(U3-RT{slash}SYNC)")')
    d = kicad_board.read_file(write(tmp_path, text))
    assert d.board.routed_length_m("Net-(U3-RT/SYNC)") == pytest.approx(1e-3)


def test_read_design_reads_a_board_path(tmp_path):
    d = read_design(write(tmp_path, board_text()))
    assert d.board is not None and d.part("R1") is not None


# -- bad input: one InputError naming file, line and column -------------------------------

def test_unclosed_board_names_where_it_ends(tmp_path):
    path = write(tmp_path, board_text()[:-3])
    with pytest.raises(InputError) as info:
        kicad_board.read_file(path)
    assert info.value.path == str(path) and info.value.line is not None and info.value.column is not None


def test_width_that_is_no_number_is_named_with_its_place(tmp_path):
    text = board_text().replace("(width 0.15)", "(width wide)")
    path = write(tmp_path, text)
    with pytest.raises(InputError, match="width") as info:
        kicad_board.read_file(path)
    line = next(i for i, t in enumerate(text.splitlines(), 1) if "(width wide)" in t)
    assert info.value.line == line
    assert info.value.column == text.splitlines()[line - 1].index("(width wide)") + 1


def test_segment_without_end_is_placed_at_its_uuid(tmp_path):
    tracks = TRACKS.replace('(end 3 14) (width 0.2) (layer "F.Cu") (net 1) (uuid "b")',
                            '(width 0.2) (layer "F.Cu") (net 1) (uuid "b")')
    text = board_text(tracks=tracks)
    with pytest.raises(InputError, match="has no end") as info:
        kicad_board.read_file(write(tmp_path, text))
    line = next(i for i, t in enumerate(text.splitlines(), 1) if '(uuid "b")' in t)
    assert info.value.line == line


def test_schematic_with_board_suffix_is_refused(tmp_path):
    path = write(tmp_path, "(kicad_sch (version 20231120))")
    with pytest.raises(InputError, match="not a KiCad board") as info:
        kicad_board.read_file(path)
    assert (info.value.line, info.value.column) == (1, 1)


def test_empty_board_file_is_refused(tmp_path):
    with pytest.raises(InputError, match="empty"):
        kicad_board.read_file(write(tmp_path, "  \n"))


def test_check_on_a_broken_board_is_one_line_and_exit_2(tmp_path):
    from conftest import run_cli
    path = write(tmp_path, board_text().replace("(width 0.15)", "(width wide)"))
    code, out, err = run_cli(["check", path])
    assert (code, out) == (2, "")
    assert len(err.splitlines()) == 1 and "Traceback" not in err
    assert re.search(re.escape(str(path)) + r":\d+:\d+: ", err)
