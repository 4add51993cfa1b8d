"""The schematic reader on small hand-drawn sheets, one construct each.

Each sheet in fixtures/schematics/ is invented and drawn to test one rule of KiCad's
connectivity or naming. Every expected net and part below is what KiCad's own netlist
export (kicad-cli 9.0.8, `kicad-cli sch export netlist`) gives for that sheet; the last
tests compare each fixture with a fresh kicad-cli export when KiCad is installed.
"""

from __future__ import annotations

import re
import shutil
import subprocess
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from conftest import REPO_ROOT, cli_env, run_cli
from netaudit.errors import InputError
from netaudit.model import Node
from netaudit.readers import kicad_schematic, read_design
from netaudit.readers.kicad_netlist import read as read_netlist
from netaudit.readers.schematic.compare import compare
from netaudit.readers.schematic.connect import placed_pins
from netaudit.readers.schematic.sheetfile import load

FIXTURES = REPO_ROOT / "fixtures" / "schematics"
NAMES = sorted(p.name for p in FIXTURES.iterdir() if p.is_dir())


def design(name: str):
    return kicad_schematic.read(FIXTURES / name / f"{name}.kicad_sch")


def pins_of(d, name: str) -> set[str]:
    """The pins of net ``name`` as REF.PIN; fails when there is no such net."""
    net = d.net(name)
    assert net is not None, f"no net {name!r}; nets: {sorted(n.name for n in d.nets)}"
    return {f"{n.ref}.{n.pin}" for n in net.nodes}


def net_of(d, ref: str, pin: str) -> str:
    return d.net_of(ref, pin)


# -- wires and junctions (wires_junctions) ----------------------------------------------

def test_junction_where_a_wire_ends_on_a_split_wire_connects_a_tee():
    assert pins_of(design("wires_junctions"), "Net-(R1-Pad1)") == {"R1.1", "R2.1"}


def test_wire_end_on_the_middle_of_a_wire_without_junction_does_not_connect():
    d = design("wires_junctions")
    assert pins_of(d, "unconnected-(R3-Pad1)") == {"R3.1"}
    assert pins_of(d, "unconnected-(R4-Pad1)") == {"R4.1"}


def test_crossing_wires_connect_only_with_a_junction():
    d = design("wires_junctions")
    assert net_of(d, "R5", "1") != net_of(d, "R6", "1")
    assert pins_of(d, "Net-(R7-Pad1)") == {"R7.1", "R8.1"}


def test_pin_tip_on_the_middle_of_a_wire_connects_only_where_the_wire_is_split():
    d = design("wires_junctions")
    assert pins_of(d, "unconnected-(R9-Pad1)") == {"R9.1"}
    assert pins_of(d, "Net-(R11-Pad1)") == {"R11.1", "R12.1"}


def test_pin_tips_that_touch_connect():
    assert pins_of(design("wires_junctions"), "Net-(R13-Pad2)") == {"R13.2", "R14.1"}


def test_overlapping_collinear_wires_do_not_connect():
    d = design("wires_junctions")
    assert net_of(d, "R15", "1") != net_of(d, "R16", "1")


def test_every_other_pin_is_alone_on_an_unconnected_net():
    d = design("wires_junctions")
    assert len(d.nets) == 28
    assert pins_of(d, "unconnected-(R16-Pad2)") == {"R16.2"}


# -- labels (labels) ------------------------------------------------------------------------

def test_local_labels_of_one_name_join_nets_on_a_sheet():
    assert pins_of(design("labels"), "/SDA") == {"R1.1", "R2.1"}


def test_label_on_the_middle_of_a_wire_connects_to_it():
    assert pins_of(design("labels"), "/SCL") == {"R3.1", "R4.1"}


def test_label_at_a_pin_tip_on_the_middle_of_a_wire_joins_the_pin_only():
    d = design("labels")
    assert pins_of(d, "/INT") == {"R5.1"}
    assert pins_of(d, "unconnected-(R6-Pad1)") == {"R6.1"}


def test_label_on_two_crossing_wires_joins_both():
    assert pins_of(design("labels"), "/CLK") == {"R7.1", "R8.1"}


def test_global_and_local_label_of_one_name_are_one_net_named_by_the_global():
    assert pins_of(design("labels"), "ALERT") == {"R9.1", "R10.1"}


def test_net_with_two_labels_takes_the_smaller_name_and_joins_both():
    d = design("labels")
    assert pins_of(d, "/AAA") == {"R11.1", "R12.1"}
    assert d.net("/BBB") is None


def test_net_class_flag_gives_no_name():
    assert pins_of(design("labels"), "unconnected-(R13-Pad1)") == {"R13.1"}


# -- power symbols (power) -----------------------------------------------------------------

def test_power_symbols_of_one_value_are_one_net():
    assert pins_of(design("power"), "GND") == {"R1.2", "R2.2"}


def test_power_symbol_is_named_by_its_value_not_its_pin_name():
    assert pins_of(design("power"), "VDD_IO") == {"R3.1"}


def test_power_name_beats_a_local_label_whose_name_still_joins():
    assert pins_of(design("power"), "+3V3") == {"R1.1", "R4.1", "R5.1"}


def test_hidden_power_pin_of_a_part_joins_the_global_net_of_its_name():
    d = design("power")
    assert pins_of(d, "VCC") == {"R6.1", "U1.2"}
    assert Node("U1", "2", "VCC", "power_in") in d.net("VCC").nodes


def test_power_flag_never_names_a_net():
    assert pins_of(design("power"), "Net-(R8-Pad1)") == {"R8.1", "R9.1"}


def test_auto_name_prefers_a_pin_name_to_a_pad_number():
    assert pins_of(design("power"), "Net-(U1-IN)") == {"R7.1", "U1.1"}


# -- two global names on one net (global_names) ----------------------------------------------

def test_two_power_names_on_one_wire_give_the_smaller_name_to_every_net_of_either():
    d = design("global_names")
    assert pins_of(d, "+3V3") == {"R1.1", "R2.1"}
    assert d.net("VCC") is None


def test_global_label_beats_a_power_name_wherever_that_power_name_is_used():
    d = design("global_names")
    assert pins_of(d, "AUX_RAIL") == {"R3.1", "R4.1"}
    assert d.net("VAUX") is None


# -- hierarchy, a sheet used twice (hierarchy) ---------------------------------------------

def test_label_in_the_parent_names_a_net_through_a_sheet_pin():
    assert pins_of(design("hierarchy"), "/SIG_ROOT") == {"R10.1", "R101.1"}


def test_hierarchical_label_names_a_net_the_parent_leaves_unnamed():
    assert pins_of(design("hierarchy"), "/Right/SIG") == {"R11.1", "R201.1"}


def test_two_sheets_on_one_unnamed_net_give_the_smaller_path_name():
    assert pins_of(design("hierarchy"), "/Left/OUT") == {"R101.2", "R201.2"}


def test_global_label_joins_both_instances_of_a_sheet():
    assert pins_of(design("hierarchy"), "GLOB") == {"R102.1", "R202.1"}


def test_local_label_belongs_to_one_sheet_instance():
    d = design("hierarchy")
    assert pins_of(d, "/Left/LOCAL") == {"R102.2"}
    assert pins_of(d, "/Right/LOCAL") == {"R202.2"}


def test_each_sheet_instance_has_its_own_references_and_sheet_path():
    d = design("hierarchy")
    assert {p.ref: p.sheet_path for p in d.parts} == {
        "R10": "/", "R11": "/", "R101": "/Left/", "R102": "/Left/", "R201": "/Right/",
        "R202": "/Right/"}
    assert d.part("R201").sheet_file == "child.kicad_sch"
    assert [(s.path, s.file, s.title) for s in d.sheets] == [
        ("/", "hierarchy.kicad_sch", "Hierarchy fixture"), ("/Left/", "child.kicad_sch", "Child"),
        ("/Right/", "child.kicad_sch", "Child")]


# -- KiCad 6 format (kicad6) ----------------------------------------------------------------

def test_kicad6_references_come_from_the_root_symbol_instances():
    assert {p.ref for p in design("kicad6").parts} == {"R1", "R2", "R101", "R102", "R201", "R202"}


def test_kicad6_power_symbol_is_named_by_its_pin_name():
    d = design("kicad6")
    assert pins_of(d, "+3V3") == {"R1.2", "R2.2"}
    assert d.net("VDDX") is None


def test_kicad6_value_of_a_symbol_in_a_reused_sheet_is_its_last_instance_value():
    d = design("kicad6")
    assert (d.part("R102").value, d.part("R202").value) == ("3k3", "3k3")


def test_kicad6_description_field_is_the_mandatory_one_only_with_its_own_id():
    d = design("kicad6")
    assert d.part("R101").fields == (("MPN", "RC0603"), ("Footprint", ""), ("Datasheet", "~"),
                                     ("Description", "pull-down"))
    assert d.part("R102").fields == (("MPN", "RC0402"), ("Description", ""), ("Footprint", ""),
                                     ("Datasheet", "~"))


# -- orientation ----------------------------------------------------------------------------

def test_every_pin_reaches_its_label_in_all_rotations_and_mirrors():
    d = design("orientation")
    for k in range(1, 11):
        for pin, label in (("1", "A"), ("2", "B"), ("3", "C")):
            assert pins_of(d, f"/U{k}_{label}") == {f"U{k}.{pin}"}


def test_rotation_by_90_degrees_turns_library_up_into_sheet_left():
    # KiCad draws library symbols with Y up and sheets with Y down; a 90 degree rotation
    # is counter-clockwise on screen. Pin A of CHIP3 sits at (-7.62, 2.54) in the library.
    sf = load(FIXTURES / "orientation" / "orientation.kicad_sch")
    u2 = [p for p in placed_pins(sf) if sf.symbols[p.symbol].prop("Reference") == "U2"
          and p.pin.number == "1"][0]
    assert (u2.x, u2.y) == (762_000 - 25_400, 508_000 + 76_200)   # 0.1 um units


def test_mirror_about_x_flips_the_vertical_offset_only():
    sf = load(FIXTURES / "orientation" / "orientation.kicad_sch")
    u5 = [p for p in placed_pins(sf) if sf.symbols[p.symbol].prop("Reference") == "U5"
          and p.pin.number == "1"][0]
    # U5 sits at (190.5, 50.8), not rotated, mirrored about the horizontal axis: pin A,
    # 2.54 mm above the centre in the library (drawn above on an unmirrored sheet), lands
    # 2.54 mm below it.
    assert (u5.x, u5.y) == (1_905_000 - 76_200, 508_000 + 25_400)


# -- units, body styles, alternate functions (units) --------------------------------------

def test_auto_name_of_a_unit_carries_its_unit_letter():
    d = design("units")
    assert pins_of(d, "Net-(U1A-OUT1)") == {"U1.2", "R1.1"}
    assert pins_of(d, "Net-(U1B-OUT2)") == {"U1.4", "R2.1"}


def test_pin_common_to_all_units_is_listed_once():
    assert pins_of(design("units"), "+3V3") == {"U1.8"}


def test_second_body_style_places_pins_where_that_style_draws_them():
    d = design("units")
    assert (pins_of(d, "/INV_A"), pins_of(d, "/INV_Y")) == ({"U2.1"}, {"U2.2"})


def test_alternate_pin_function_gives_the_node_its_name_and_type():
    d = design("units")
    assert d.net("/I2C_SDA").nodes == (Node("U3", "1", "SDA", "open_collector"),)
    assert d.net("/I2C_SCL").nodes == (Node("U3", "2", "PA1", "bidirectional"),)


def test_repeated_pin_name_adds_the_pad_number_to_the_auto_name():
    d = design("units")
    assert pins_of(d, "Net-(J1-GND-Pad1)") == {"J1.1", "J1.3", "R3.1"}
    assert pins_of(d, "unconnected-(J1-SIG-Pad2)") == {"J1.2"}


# -- no-connect flags (no_connect) ----------------------------------------------------------

def test_no_connect_flag_marks_a_single_pin():
    d = design("no_connect")
    assert d.net("unconnected-(R1-Pad1)").nodes == (Node("R1", "1", "", "passive+no_connect"),)


def test_no_connect_flag_at_a_wire_end_marks_the_pin_on_that_wire():
    d = design("no_connect")
    assert d.net("unconnected-(R2-Pad1)").nodes == (Node("R2", "1", "", "passive+no_connect"),)


def test_no_connect_flag_on_a_net_of_two_pins_names_it_unconnected_without_marking():
    d = design("no_connect")
    assert {n.pin_type for n in d.net("unconnected-(R3-Pad1)").nodes} == {"passive"}
    assert pins_of(d, "unconnected-(R3-Pad1)") == {"R3.1", "R4.1"}


def test_pin_of_type_not_connected_connects_nothing():
    d = design("no_connect")
    assert d.net("unconnected-(U1-NC-Pad2)").nodes == (Node("U1", "2", "NC", "no_connect"),)
    assert pins_of(d, "unconnected-(R5-Pad1)") == {"R5.1"}


def test_stacked_pins_under_a_flag_are_all_marked():
    d = design("no_connect")
    assert {n.pin_type for n in d.net("unconnected-(J1-VBUS-PadA4)").nodes} == {
        "passive+no_connect"}
    assert pins_of(d, "unconnected-(J1-VBUS-PadA4)") == {"J1.A4", "J1.A9"}


# -- buses ----------------------------------------------------------------------------------

def test_vector_bus_members_follow_the_hierarchy_by_position():
    d = design("bus_vector")
    assert pins_of(d, "/DATA0") == {"R1.1", "R10.2"}
    assert pins_of(d, "/DATA1") == {"R2.1", "R11.2"}
    assert pins_of(d, "/DATA2") == {"R3.1"}


def test_bus_entry_without_a_member_label_joins_nothing():
    assert pins_of(design("bus_vector"), "unconnected-(R4-Pad1)") == {"R4.1"}


def test_bus_group_alias_members_are_named_with_the_group_prefix():
    d = design("bus_group")
    assert pins_of(d, "/SENS.SDA") == {"R1.1", "R10.2"}
    assert pins_of(d, "/SENS.SCL") == {"R2.1", "R11.2"}


def test_unnamed_bus_group_members_are_plain_names():
    assert pins_of(design("bus_group"), "/SDA") == {"R12.1"}


def test_bus_alias_kept_only_in_the_project_file_is_not_used():
    # KiCad 9 reads bus aliases from the schematics only: the child's X.P stays its own net.
    d = design("bus_alias_project")
    assert pins_of(d, "/X.P") == {"R1.2"}
    assert pins_of(d, "/Child/X.P") == {"R2.1"}


# -- parts (parts) --------------------------------------------------------------------------

def test_part_fields_keep_sheet_order_then_footprint_datasheet_description():
    p = design("parts").part("R1")
    assert p.fields == (("MPN", "RC0402FR-074K7L"), ("Tolerance", "1%"),
                        ("Note", "RC0402FR-074K7L 1%"),
                        ("Footprint", "Resistor_SMD:R_0402_1005Metric"), ("Datasheet", "~"),
                        ("Description", ""))
    assert (p.value, p.footprint, p.lib, p.lib_part, p.description) == (
        "4k7", "Resistor_SMD:R_0402_1005Metric", "Device", "R", "Resistor")


def test_not_fitted_and_bill_of_materials_flags():
    d = design("parts")
    assert (d.part("R2").dnp, d.part("R2").exclude_from_bom) == (True, False)
    assert (d.part("R3").dnp, d.part("R3").exclude_from_bom) == (False, True)


def test_part_left_off_the_board_is_neither_listed_nor_on_a_net():
    d = design("parts")
    assert d.part("R4") is None
    assert pins_of(d, "/A") == {"R1.1", "R2.1", "R3.1", "R5.1", "R20.1"}


def test_sheet_marked_not_fitted_and_out_of_the_bom_marks_its_parts():
    p = design("parts").part("R20")
    assert (p.dnp, p.exclude_from_bom, p.sheet_path, p.sheet_file) == (
        True, True, "/Option/", "option.kicad_sch")


def test_symbol_with_its_own_library_name_lists_that_name_without_library():
    p = design("parts").part("R5")
    assert (p.lib, p.lib_part, len(p.pins)) == ("", "R_1", 2)


# -- constructs the reader refuses -------------------------------------------------------------

SHEET = """(kicad_sch (version {version}) (generator "eeschema") (generator_version "9.0")
  (uuid "5a11e5a1-0000-4000-8000-0000000000ee") (paper "A4") (lib_symbols {libs})
  {items}
  (sheet_instances (path "/" (page "1"))))
"""
R_LIB = (FIXTURES / "labels" / "labels.kicad_sch").read_text(encoding="utf-8")
_start = R_LIB.index('(symbol "Device:R"')
R_LIB = R_LIB[_start:R_LIB.index("\n\t\t)\n", _start) + 4]   # the fixture's resistor


def write(tmp_path: Path, items: str, version: int = 20250114, libs: str = "") -> Path:
    path = tmp_path / "board.kicad_sch"
    path.write_text(SHEET.format(version=version, items=items, libs=libs), encoding="utf-8")
    return path


def symbol(ref: str, angle: int = 0, x: float = 50.8, y: float = 50.8) -> str:
    return (f'(symbol (lib_id "Device:R") (at {x} {y} {angle}) (unit 1) (uuid "u-{ref}") '
            f'(property "Reference" "{ref}" (at 0 0 0)) (property "Value" "1k" (at 0 0 0)) '
            f'(instances (project "p" (path "/5a11e5a1-0000-4000-8000-0000000000ee" '
            f'(reference "{ref}") (unit 1)))))')


def test_schematic_from_a_newer_kicad_is_refused_with_the_way_out(tmp_path):
    with pytest.raises(InputError, match="newer than KiCad 9.*--use-kicad-cli"):
        kicad_schematic.read(write(tmp_path, "", version=20260306))


def test_unknown_top_level_item_is_refused_with_its_line(tmp_path):
    path = write(tmp_path, '(hyperwire (pts (xy 0 0) (xy 1 1)))')
    with pytest.raises(InputError, match=r"board.kicad_sch:3:\d+: unknown schematic item "
                                         r"\(hyperwire"):
        kicad_schematic.read(path)


def test_symbol_rotated_by_an_odd_angle_is_refused(tmp_path):
    with pytest.raises(InputError, match="rotated by 45 degrees"):
        kicad_schematic.read(write(tmp_path, symbol("R1", 45), libs=R_LIB))


def test_symbol_without_embedded_library_symbol_is_refused_naming_it(tmp_path):
    with pytest.raises(InputError, match=r"board.kicad_sch:3:\d+: symbol R1 \(Device:R\) has no "
                                         "library symbol"):
        kicad_schematic.read(write(tmp_path, symbol("R1")))


# A crossing with a junction dot but neither wire split there, pins at all four ends:
# KiCad's editor splits both wires at the dot when it saves, joining all four pins;
# kicad-cli 9.0.8 keeps each wire only from its start to the dot.
CROSSING = ('(wire (pts (xy 50.8 40.64) (xy 50.8 60.96)) (uuid "w1")) '
            '(wire (pts (xy 40.64 50.8) (xy 60.96 50.8)) (uuid "w2")) '
            '(junction (at 50.8 50.8) (uuid "j1")) ' + symbol("RT", 0, 50.8, 36.83)
            + symbol("RB", 0, 50.8, 64.77) + symbol("RL", 90, 36.83, 50.8)
            + symbol("RR", 90, 64.77, 50.8))


def test_junction_on_the_middle_of_a_wire_is_refused_naming_its_place(tmp_path):
    path = write(tmp_path, CROSSING, libs=R_LIB)
    with pytest.raises(InputError, match=r"a junction sits on the middle of a wire at "
                                         r"\(50.8, 50.8\) mm.*--use-kicad-cli") as info:
        kicad_schematic.read(path)
    line = path.read_text(encoding="utf-8").splitlines()[info.value.line - 1]
    assert '(junction (at 50.8 50.8)' in line[:info.value.column + 10]


def test_kicad_cli_keeps_a_wire_split_by_a_junction_only_up_to_the_dot(kicad_cli, tmp_path):
    # Why the reader refuses the sheet above: KiCad's two tools read it differently.
    theirs = kicad_export(kicad_cli, write(tmp_path, CROSSING, libs=R_LIB), tmp_path / "x.net")
    joined = [sorted(f"{n.ref}.{n.pin}" for n in net.nodes) for net in theirs.nets
              if len(net.nodes) > 1]
    assert joined == [["RL.2", "RT.2"]]


def test_bus_entry_ending_on_the_middle_of_a_wire_is_refused(tmp_path):
    items = ('(wire (pts (xy 62.23 45.72) (xy 76.2 45.72)) (uuid "w1")) '
             '(bus_entry (at 60.96 43.18) (size 2.54 2.54) (uuid "e1"))')
    with pytest.raises(InputError, match=r"a bus entry ends on the middle of a wire at "
                                         r"\(63.5, 45.72\) mm"):
        kicad_schematic.read(write(tmp_path, items))


def test_sheet_of_a_larger_design_read_as_the_root_is_refused():
    # KiCad treats its symbols as not annotated (their references belong to the real
    # root), which silently drops nets named only by pins; the reader says so instead.
    with pytest.raises(InputError, match="R101 .*no reference for sheet /; .*sheet of a larger "
                                         "design: read that design's root schematic"):
        kicad_schematic.read(FIXTURES / "hierarchy" / "child.kicad_sch")


def test_unannotated_symbol_is_refused(tmp_path):
    with pytest.raises(InputError, match="R\\? .*not annotated"):
        kicad_schematic.read(write(tmp_path, symbol("R?"), libs=R_LIB))


def test_missing_sheet_file_is_refused_naming_the_sheet(tmp_path):
    items = ('(sheet (at 10 10) (size 10 10) (uuid "s1") (property "Sheetname" "Gone") '
             '(property "Sheetfile" "gone.kicad_sch"))')
    with pytest.raises(InputError, match='sheet "Gone" uses gone.kicad_sch, which does not exist'):
        kicad_schematic.read(write(tmp_path, items))


def test_sheet_that_contains_itself_is_refused(tmp_path):
    items = ('(sheet (at 10 10) (size 10 10) (uuid "s1") (property "Sheetname" "Loop") '
             '(property "Sheetfile" "board.kicad_sch"))')
    with pytest.raises(InputError, match="contains itself"):
        kicad_schematic.read(write(tmp_path, items))


def test_two_global_names_joined_through_the_hierarchy_are_refused(tmp_path):
    # A parent power net and a child global label of another name on one net: KiCad's
    # choice between them depends on its processing order.
    child = tmp_path / "child.kicad_sch"
    child.write_text(SHEET.format(version=20250114, libs="", items=(
        '(hierarchical_label "P" (shape input) (at 20 20 0) (uuid "h1")) '
        '(global_label "OTHER" (shape input) (at 20 20 0) (uuid "g1"))')), encoding="utf-8")
    items = ('(sheet (at 50 10) (size 10 10) (uuid "s1") (property "Sheetname" "C") '
             '(property "Sheetfile" "child.kicad_sch") (pin "P" input (at 50 12 180) (uuid "p1"))) '
             '(global_label "MAIN" (shape input) (at 50 12 0) (uuid "g2"))')
    with pytest.raises(InputError, match="MAIN, OTHER.*--use-kicad-cli"):
        kicad_schematic.read(write(tmp_path, items))


_EDITS = ["", "x", "nan", "1e999", "-3", "(", ")", '"']


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(data=st.data())
def test_damaged_schematic_gives_a_design_or_an_input_error_never_a_crash(tmp_path_factory, data):
    name = data.draw(st.sampled_from(NAMES))
    folder = tmp_path_factory.mktemp("damaged") / name
    shutil.copytree(FIXTURES / name, folder)
    target = data.draw(st.sampled_from(sorted(folder.glob("*.kicad_sch"))))
    text = target.read_text(encoding="utf-8")
    tokens = [m.span() for m in re.finditer(r'[^\s()"]+|"[^"]*"|[()]', text)]
    for _ in range(data.draw(st.integers(1, 3))):
        start, end = data.draw(st.sampled_from(tokens))
        text = text[:start] + data.draw(st.sampled_from(_EDITS)) + text[end:]
        tokens = [m.span() for m in re.finditer(r'[^\s()"]+|"[^"]*"|[()]', text)]
    target.write_text(text, encoding="utf-8")
    try:
        kicad_schematic.read(folder / f"{name}.kicad_sch")
    except InputError as exc:
        assert "\n" not in str(exc)


# -- reading projects and the command line -------------------------------------------------

def test_project_is_read_by_the_schematic_reader_by_default():
    d = read_design(FIXTURES / "hierarchy" / "hierarchy.kicad_sch")
    assert d.format == "kicad-project"
    assert d.tool.startswith("netaudit schematic reader")


def test_check_reads_a_project_where_kicad_is_not_installed(tmp_path):
    target = tmp_path / "hierarchy"
    shutil.copytree(FIXTURES / "hierarchy", target)
    code, out, err = run_cli(["buses", target / "hierarchy.kicad_sch", "--json"],
                             env=cli_env(path_dirs=[str(Path("/nonexistent"))]))
    assert (code, err) == (0, ""), err
    assert '"format": "kicad-project"' in out


# -- every fixture against KiCad itself -------------------------------------------------------

def kicad_export(kicad_cli: str, sch: Path, out: Path):
    """KiCad's own netlist of ``sch``, exported in the sheet's folder as KiCad's editor does."""
    subprocess.run([kicad_cli, "sch", "export", "netlist", "--format", "kicadsexpr", "-o",
                    str(out), sch.name], cwd=str(sch.parent), check=True, capture_output=True,
                   timeout=300)
    return read_netlist(out.read_text(encoding="utf-8"), out, "")


@pytest.mark.parametrize("name", NAMES)
def test_fixture_equals_kicad_cli_export(kicad_cli, tmp_path, name):
    sch = FIXTURES / name / f"{name}.kicad_sch"
    theirs = kicad_export(kicad_cli, sch, tmp_path / "export.net")
    result = compare(design(name), theirs)
    assert result.equal and not result.auto_name_differences, result.summary()


def test_use_kicad_cli_gives_the_same_design_as_the_reader(kicad_cli):
    path = FIXTURES / "bus_group" / "bus_group.kicad_sch"
    ours = read_design(path)
    theirs = read_design(path, use_kicad_cli=True)
    result = compare(ours, theirs)
    assert result.equal and not result.auto_name_differences, result.summary()
    assert (ours.format, ours.sha256, ours.path) == (theirs.format, theirs.sha256, theirs.path)
