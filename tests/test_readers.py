"""Readers on small hand-made netlists, KiCad's name escapes, and text encodings.

Hand-made inputs here are our own small cases written in KiCad's netlist formats; the
format facts they rely on are cited beside them. The encoding tests re-encode a real KiCad 5
netlist (../shared/real-designs) in a temporary folder.
"""

from __future__ import annotations

from pathlib import Path

import pytest

from conftest import require_real
from netaudit.errors import InputError
from netaudit.readers import read_design
from netaudit.readers.common import legacy_overbar, unescape_kicad

# -- KiCad's brace escapes in net names -------------------------------------------------
# KiCad 9 source, common/string_utils.cpp: EscapeString(CTX_NETNAME) writes "/" as {slash};
# UnescapeString reads the words below back, except after $ ~ ^ _ (text markup).


@pytest.mark.parametrize("written, meant", [
    ("Net-(U3-RT{slash}SYNC)", "Net-(U3-RT/SYNC)"),  # seen in a KiCad 9.0.8 export
    ("A{backslash}B", "A\\B"),
    ("{lt}X{gt}", "<X>"),
    ("A{colon}B{comma}C{bar}D", "A:B,C|D"),
    ("{dblquote}Q{quote}", "\"Q'"),
    ("A{space}B{tab}C", "A B\tC"),
    ("{dollar}{brace}", "${"),
])
def test_known_brace_words_are_unescaped(written, meant):
    assert unescape_kicad(written) == meant


@pytest.mark.parametrize("text", [
    "~{slash}",       # overbar markup
    "SDA_{slash}",    # subscript markup
    "X^{slash}",      # superscript markup
    "${slash}",       # text variable
    "{unknown}",      # not an escape word
    "~{INT}", "SDA_{1}",
])
def test_markup_and_unknown_words_stay_as_written(text):
    assert unescape_kicad(text) == text


def test_word_right_after_an_escape_is_unescaped_too():
    assert unescape_kicad("_{slash}{slash}") == "_{slash}/"


# -- KiCad 5 overbar notation -----------------------------------------------------------
# KiCad 5 toggles an overbar at each "~"; KiCad 6 and later write ~{...}. The real KiCad 5
# netlist and KiCad 9's export of the same project show /Ethernet/~ETH_RESET becoming
# /Ethernet/~{ETH_RESET} (tests/real/test_real_readers.py checks all of them).

@pytest.mark.parametrize("old, new", [
    ("~RESET", "~{RESET}"),
    ("~ST~/OE", "~{ST}/OE"),
    ("SDIO_~WAKE", "SDIO_~{WAKE}"),
    ("/Ethernet/~ETH_RESET", "/Ethernet/~{ETH_RESET}"),
    ("~A B", "~{A} B"),       # a space ends the overbar
    ("A~~B", "A~B"),          # a doubled tilde is a tilde
    ("~", "~"),               # KiCad 5's empty name
    ("~{INT}", "~{INT}"),     # already the new notation
    ("GPIO8", "GPIO8"),
])
def test_legacy_overbar_conversion(old, new):
    assert legacy_overbar(old) == new


# -- hand-made KiCad 5 (version D) netlists ---------------------------------------------

KICAD5_NET = """\
(export (version D)
  (design
    (source /home/someone/node.sch)
    (tool "Eeschema 5.1.9")
    (sheet (number 1) (name /) (tstamps /)
      (title_block (title "Test node") (rev A) (source node.sch)))
    (sheet (number 2) (name /Sensors/) (tstamps /5F00/)
      (title_block (source sensors.sch))))
  (components
    (comp (ref R1) (value 4k7)
      (fields (field (name Tolerance) 1%))
      (libsource (lib Device) (part R_Small))
      (sheetpath (names /Sensors/) (tstamps /5F00/)))
    (comp (ref U1) (value EXP8)
      (libsource (lib local) (part EXP8))
      (sheetpath (names /) (tstamps /))))
  (libparts
    (libpart (lib Device) (part R)
      (aliases (alias R_Small) (alias R_Tiny))
      (pins (pin (num 1) (name ~) (type passive)) (pin (num 2) (name ~) (type passive))))
    (libpart (lib local) (part EXP8)
      (pins (pin (num 1) (name SDA) (type BiDi)) (pin (num 2) (name ~INT) (type output)))))
  (nets
    (net (code 1) (name /SDA) (node (ref U1) (pin 1)) (node (ref R1) (pin 1)))
    (net (code 2) (name /Sensors/~INT) (node (ref U1) (pin 2)) (node (ref R1) (pin 2)))))
"""
# Format facts (KiCad 5 netlist writer, from the KiCad 5 source and the real file):
# unquoted atoms, nodes without pinfunction, "~" for an unnamed pin, libpart aliases.


@pytest.fixture
def kicad5_design(tmp_path):
    path = tmp_path / "node.net"
    path.write_text(KICAD5_NET, encoding="utf-8")
    return read_design(path)


def test_kicad5_part_placed_through_an_alias_gets_the_library_pins(kicad5_design):
    assert [p.number for p in kicad5_design.part("R1").pins] == ["1", "2"]


def test_kicad5_unnamed_pin_has_an_empty_name(kicad5_design):
    assert {p.name for p in kicad5_design.part("R1").pins} == {""}


def test_kicad5_nodes_take_pin_functions_from_library_parts(kicad5_design):
    nodes = {(n.ref, n.pin): n for n in kicad5_design.net("/SDA").nodes}
    assert (nodes["U1", "1"].pin_function, nodes["U1", "1"].pin_type) == ("SDA", "BiDi")


def test_kicad5_overbar_pin_names_use_the_new_notation(kicad5_design):
    assert kicad5_design.part("U1").pins[1].name == "~{INT}"


def test_kicad5_overbar_net_names_use_the_new_notation(kicad5_design):
    assert kicad5_design.net("/Sensors/~{INT}") is not None


def test_kicad5_sheet_file_comes_from_the_sheet_list(kicad5_design):
    assert kicad5_design.part("R1").sheet_file == "sensors.sch"


def test_kicad5_fields_read_from_bare_atoms(kicad5_design):
    assert kicad5_design.part("R1").fields == (("Tolerance", "1%"),)


KICAD5_XML = """\
<?xml version="1.0" encoding="UTF-8"?>
<export version="D">
  <design><source>/home/someone/node.sch</source><tool>Eeschema 5.1.9</tool>
    <sheet number="1" name="/" tstamps="/"><title_block><source>node.sch</source></title_block></sheet>
  </design>
  <components>
    <comp ref="R1"><value>4k7</value><libsource lib="Device" part="R_Small"/>
      <sheetpath names="/" tstamps="/"/></comp>
    <comp ref="U1"><value>EXP8</value><libsource lib="local" part="EXP8"/>
      <sheetpath names="/" tstamps="/"/></comp>
  </components>
  <libparts>
    <libpart lib="Device" part="R"><aliases><alias>R_Small</alias></aliases>
      <pins><pin num="1" name="~" type="passive"/><pin num="2" name="~" type="passive"/></pins></libpart>
    <libpart lib="local" part="EXP8">
      <pins><pin num="1" name="SDA" type="BiDi"/><pin num="2" name="~INT" type="output"/></pins></libpart>
  </libparts>
  <nets>
    <net code="1" name="/SDA"><node ref="U1" pin="1"/><node ref="R1" pin="1"/></net>
    <net code="2" name="/~INT"><node ref="U1" pin="2"/><node ref="R1" pin="2"/></net>
  </nets>
</export>
"""


def test_kicad5_xml_reads_like_the_kicad5_netlist(tmp_path):
    path = tmp_path / "node.xml"
    path.write_text(KICAD5_XML, encoding="utf-8")
    design = read_design(path)
    assert [p.number for p in design.part("R1").pins] == ["1", "2"]
    assert {(n.ref, n.pin_function) for n in design.net("/~{INT}").nodes} == {("U1", "~{INT}"), ("R1", "")}


# -- version E details --------------------------------------------------------------------

KICAD9_NET = """\
(export (version "E")
  (design (source "x.kicad_sch") (tool "Eeschema 9.0.8+1")
    (sheet (number "1") (name "/") (tstamps "/") (title_block (title "T") (rev "B") (source "x.kicad_sch"))))
  (components
    (comp (ref "R5") (value "DNP")
      (fields (field (name "Val") "2k2") (field (name "Description")))
      (libsource (lib "Device") (part "R") (description "Resistor"))
      (property (name "Sheetfile") (value "x.kicad_sch"))
      (property (name "dnp"))
      (sheetpath (names "/") (tstamps "/"))))
  (libparts
    (libpart (lib "Device") (part "R") (pins (pin (num "1") (name "") (type "passive")))))
  (nets
    (net (code "1") (name "Net-(U3-RT{slash}SYNC)") (class "Default")
      (node (ref "R5") (pin "1") (pintype "passive")))))
"""


@pytest.fixture
def kicad9_design(tmp_path):
    path = tmp_path / "x.net"
    path.write_text(KICAD9_NET, encoding="utf-8")
    return read_design(path)


def test_net_name_slash_escape_is_undone(kicad9_design):
    assert [n.name for n in kicad9_design.nets] == ["Net-(U3-RT/SYNC)"]


def test_field_without_text_reads_as_empty(kicad9_design):
    assert kicad9_design.part("R5").fields == (("Val", "2k2"), ("Description", ""))


def test_dnp_property_marks_the_part(kicad9_design):
    assert kicad9_design.part("R5").dnp and not kicad9_design.part("R5").exclude_from_bom


def test_node_keeps_its_type_when_the_pin_has_no_name(kicad9_design):
    node = kicad9_design.nets[0].nodes[0]
    assert (node.pin_function, node.pin_type) == ("", "passive")


def test_title_revision_and_tool_come_from_the_root_sheet(kicad9_design):
    d = kicad9_design
    assert (d.title, d.revision, d.tool, d.kicad_version) == ("T", "B", "Eeschema 9.0.8+1", "9.0.8")


# -- format by content --------------------------------------------------------------------

def test_netlist_with_an_unusual_suffix_is_known_by_content(tmp_path):
    path = tmp_path / "netlist.txt"
    path.write_text(KICAD9_NET, encoding="utf-8")
    assert read_design(path).format == "kicad-netlist"


def test_xml_netlist_saved_as_net_is_known_by_content(tmp_path):
    path = tmp_path / "node.net"
    path.write_text(KICAD5_XML, encoding="utf-8")
    assert read_design(path).format == "kicad-xml"


def test_python_bom_xml_is_known_by_its_file_name(tmp_path):
    path = tmp_path / "node.python-bom.xml"
    path.write_text(KICAD5_XML, encoding="utf-8")
    assert read_design(path).format == "kicad-bom-xml"


def test_schematic_with_a_netlist_suffix_is_refused(tmp_path):
    path = tmp_path / "x.net"
    path.write_text('(kicad_sch (version 20250114) (generator "eeschema"))', encoding="utf-8")
    with pytest.raises(InputError, match="schematic"):
        read_design(path)


# -- encodings (a real KiCad 5 netlist, re-encoded) ---------------------------------------

def _same_content(a, b) -> bool:
    return (a.parts, a.nets, a.sheets, a.title, a.tool) == (b.parts, b.nets, b.sheets, b.title, b.tool)


@pytest.fixture
def kicad5_real() -> Path:
    return require_real("fpga-som-carrier/legacy-kicad5/kria-k26-devboard.net")


@pytest.mark.real
def test_utf8_with_byte_order_mark_reads(tmp_path, kicad5_real):
    path = tmp_path / "bom.net"
    path.write_bytes(b"\xef\xbb\xbf" + kicad5_real.read_bytes())
    assert _same_content(read_design(path), read_design(kicad5_real))


@pytest.mark.real
def test_latin1_reads_with_the_same_accented_text(tmp_path, kicad5_real):
    # The file holds "Würth Elektronik" and "µ" (UTF-8); both exist in Latin-1.
    text = kicad5_real.read_text(encoding="utf-8")
    assert "Würth" in text
    path = tmp_path / "latin1.net"
    path.write_bytes(text.encode("latin-1"))
    assert _same_content(read_design(path), read_design(kicad5_real))


@pytest.mark.real
def test_crlf_line_endings_read(tmp_path, kicad5_real):
    data = kicad5_real.read_bytes()
    assert b"\r\n" not in data
    path = tmp_path / "crlf.net"
    path.write_bytes(data.replace(b"\n", b"\r\n"))
    assert _same_content(read_design(path), read_design(kicad5_real))


@pytest.mark.real
def test_xml_with_byte_order_mark_and_crlf_reads(tmp_path):
    xml = require_real("battery-bms-kicad9/netlist-kicad-9.0.8/bms-c1.xml")
    path = tmp_path / "bms.xml"
    path.write_bytes(b"\xef\xbb\xbf" + xml.read_bytes().replace(b"\n", b"\r\n"))
    assert _same_content(read_design(path), read_design(xml))


def test_a_node_field_given_twice_reads_as_its_first_occurrence(tmp_path):
    # Hand-made: the netlist reader takes the first of repeated children, as sexpr.value does.
    text = ('(export (version "E") (components (comp (ref "U1") (value "X")))\n'
            ' (nets (net (code "1") (name "/SDA")\n'
            '  (node (ref "U1") (pin "5") (pin "9") (pinfunction "SDA") (pinfunction "X")'
            ' (pintype "bidirectional")))))\n')
    path = tmp_path / "twice.net"
    path.write_text(text, encoding="utf-8")
    node = read_design(path).net("/SDA").nodes[0]
    assert (node.ref, node.pin, node.pin_function, node.pin_type) == ("U1", "5", "SDA", "bidirectional")


def test_the_demo_netlist_reads_the_same_through_the_reference_token_loop(monkeypatch):
    # The JSON shortcut and the section-by-section model building must give the Design the
    # plain token loop gives.
    from netaudit.readers import kicad_netlist, sexpr
    from netaudit.readers.common import sha256

    demo = Path(__file__).resolve().parents[1] / "fixtures" / "demo" / "greenhouse.net"
    text = demo.read_text(encoding="utf-8")
    fast = kicad_netlist.read(text, demo, sha256(text.encode()))
    monkeypatch.setattr(sexpr, "parse", sexpr.parse_tokens)
    slow = kicad_netlist.read(text, demo, sha256(text.encode()))
    assert fast == slow
    assert len(fast.parts) > 20 and len(fast.nets) > 20
