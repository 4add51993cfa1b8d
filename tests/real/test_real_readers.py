"""The readers against seven real KiCad designs and KiCad 9.0.8 itself.

Ground truth: the exports in ../shared/real-designs/*/netlist-kicad-9.0.8 (written by
kicad-cli 9.0.8 from the schematics beside them), the real KiCad 5 netlist in
fpga-som-carrier/legacy-kicad5, and, where kicad-cli is installed, fresh exports made here.
Expected numbers are counted from the file text with regular expressions, never with our
parser, so the reader is checked against something it did not produce.
"""

from __future__ import annotations

import re
from pathlib import Path

import pytest

from conftest import REAL_DESIGNS, require_real, run_cli
from netaudit.errors import InputError
from netaudit.readers import read_design

pytestmark = pytest.mark.real

# (netlist stem in netlist-kicad-9.0.8/, root schematic, what to pass to read_design)
DESIGNS = {
    "glasgow": ("usb-interface-explorer", "usb-interface-explorer/glasgow.kicad_sch",
                "usb-interface-explorer"),
    "tildagon-base": ("event-badge-i2c-mux", "event-badge-i2c-mux/tildagon-base/tildagon-base.kicad_sch",
                      "event-badge-i2c-mux/tildagon-base/tildagon-base.kicad_pro"),
    "tildagon-top": ("event-badge-i2c-mux", "event-badge-i2c-mux/tildagon-base/tildagon-top.kicad_sch",
                     "event-badge-i2c-mux/tildagon-base/tildagon-top.kicad_pro"),
    "hexpansion": ("event-badge-i2c-mux", "event-badge-i2c-mux/hexpansion/hexpansion.kicad_sch",
                   "event-badge-i2c-mux/hexpansion"),
    "cynthion": ("usb-analyzer-bus-aliases", "usb-analyzer-bus-aliases/cynthion.kicad_sch",
                 "usb-analyzer-bus-aliases/cynthion.kicad_pro"),
    "bms-c1": ("battery-bms-kicad9", "battery-bms-kicad9/bms-c1.kicad_sch",
               "battery-bms-kicad9"),
    "kria-k26-devboard": ("fpga-som-carrier", "fpga-som-carrier/kria-k26-devboard.kicad_sch",
                          "fpga-som-carrier/kria-k26-devboard.kicad_sch"),
    "jetson-nano-baseboard": ("compute-module-baseboard",
                              "compute-module-baseboard/jetson-nano-baseboard.kicad_sch",
                              "compute-module-baseboard"),
    "mch2022": ("event-badge-kicad6", "event-badge-kicad6/mch2022.kicad_sch", "event-badge-kicad6"),
}
STEMS = sorted(DESIGNS)
KICAD5 = "fpga-som-carrier/legacy-kicad5/kria-k26-devboard.net"


def export(stem: str, suffix: str) -> Path:
    folder = DESIGNS[stem][0]
    return require_real(f"{folder}/netlist-kicad-9.0.8/{stem}{suffix}")


def content(design) -> dict:
    """What two reads of one design must agree on (not path, format, hash, date, source)."""
    parts = {p.ref: p for p in design.parts}
    nets = {n.name: (frozenset(n.nodes), n.code, n.net_class) for n in design.nets}
    assert len(parts) == len(design.parts), "duplicate references"
    assert len(nets) == len(design.nets), "duplicate net names"
    assert all(len(set(n.nodes)) == len(n.nodes) for n in design.nets), "a node listed twice"
    return {"parts": parts, "nets": nets, "sheets": design.sheets, "title": design.title,
            "revision": design.revision, "tool": design.tool}


def assert_same_design(a, b) -> None:
    ca, cb = content(a), content(b)
    assert ca["parts"].keys() == cb["parts"].keys()
    differing_parts = [r for r in ca["parts"] if ca["parts"][r] != cb["parts"][r]]
    assert differing_parts == []
    assert ca["nets"].keys() == cb["nets"].keys()
    differing_nets = [n for n in ca["nets"] if ca["nets"][n] != cb["nets"][n]]
    assert differing_nets == []
    assert (ca["sheets"], ca["title"], ca["revision"], ca["tool"]) == \
        (cb["sheets"], cb["title"], cb["revision"], cb["tool"])


# -- counts from the file text ------------------------------------------------------------

def net_text_counts(text: str) -> dict[str, int]:
    components = text[:text.index("(libparts")]
    return {
        "parts": len(re.findall(r"^\s*\(comp \(ref ", text, re.M)),
        "nets": len(re.findall(r"^\s*\(net \(code ", text, re.M)),
        "nodes": len(re.findall(r"\(node \(ref ", text)),
        "fields": len(re.findall(r"\(field \(name ", components)),
        "dnp": text.count('(property (name "dnp"))'),
        "excluded": text.count('(property (name "exclude_from_bom"))'),
    }


def xml_text_counts(text: str) -> dict[str, int]:
    components = text[:text.index("<libparts>")]
    return {
        "parts": len(re.findall(r"<comp ref=", text)),
        "nets": len(re.findall(r"<net code=", text)),
        "nodes": len(re.findall(r"<node ref=", text)),
        "fields": len(re.findall(r"<field name=", components)),
        "dnp": text.count('<property name="dnp"/>'),
        "excluded": text.count('<property name="exclude_from_bom"/>'),
    }


def design_counts(design) -> dict[str, int]:
    return {
        "parts": len(design.parts),
        "nets": len(design.nets),
        "nodes": sum(len(n.nodes) for n in design.nets),
        "fields": sum(len(p.fields) for p in design.parts),
        "dnp": sum(p.dnp for p in design.parts),
        "excluded": sum(p.exclude_from_bom for p in design.parts),
    }


@pytest.mark.parametrize("stem", STEMS)
def test_net_export_read_matches_counts_in_the_file_text(stem):
    path = export(stem, ".net")
    assert design_counts(read_design(path)) == net_text_counts(path.read_text(encoding="utf-8"))


@pytest.mark.parametrize("stem", STEMS)
def test_xml_export_read_matches_counts_in_the_file_text(stem):
    path = export(stem, ".xml")
    assert design_counts(read_design(path)) == xml_text_counts(path.read_text(encoding="utf-8"))


# -- .net and .xml of one export agree ----------------------------------------------------

@pytest.mark.parametrize("stem", STEMS)
def test_net_and_xml_exports_read_into_equal_designs(stem):
    net, xml = read_design(export(stem, ".net")), read_design(export(stem, ".xml"))
    assert (net.format, xml.format) == ("kicad-netlist", "kicad-xml")
    assert_same_design(net, xml)


@pytest.mark.parametrize("stem", STEMS)
def test_every_node_names_a_listed_part(stem):
    design = read_design(export(stem, ".net"))
    refs = {p.ref for p in design.parts}
    assert {node.ref for net in design.nets for node in net.nodes} <= refs


def test_slash_escape_in_net_names_reads_as_the_xml_writes_it():
    # KiCad 9.0.8 writes the same net as Net-(U3-RT{slash}SYNC) in .net and Net-(U3-RT/SYNC) in .xml.
    net_path, xml_path = export("bms-c1", ".net"), export("bms-c1", ".xml")
    assert '(name "Net-(U3-RT{slash}SYNC)")' in net_path.read_text(encoding="utf-8")
    assert 'name="Net-(U3-RT/SYNC)"' in xml_path.read_text(encoding="utf-8")
    net, xml = read_design(net_path), read_design(xml_path)
    assert net.net("Net-(U3-RT/SYNC)").nodes == xml.net("Net-(U3-RT/SYNC)").nodes


@pytest.mark.parametrize("stem", STEMS)
def test_no_escape_words_are_left_in_net_names(stem):
    path = export(stem, ".net")
    escaped = len(re.findall(r'\(net \(code "\d+"\) \(name "[^"]*\{slash\}', path.read_text(encoding="utf-8")))
    names = [n.name for n in read_design(path).nets]
    assert not [n for n in names if "{slash}" in n]
    assert sum("/" in n and not n.startswith("/") for n in names) >= escaped


# -- the generator-script XML (python-bom) ------------------------------------------------
# Found by comparing the exports: kicad-cli 9.0.8's python-bom XML leaves out every part with
# exclude_from_bom, their nodes, and any net only they touched; it keeps net codes as they were
# and keeps DNP parts that are not excluded from the BOM.

BOM_STEMS = ["glasgow", "kria-k26-devboard"]


def bom_pair(stem):
    full = read_design(export(stem, ".xml"))
    bom = read_design(export(stem, ".python-bom.xml"))
    assert bom.format == "kicad-bom-xml"
    return full, bom


@pytest.mark.parametrize("stem", BOM_STEMS)
def test_python_bom_drops_exactly_the_parts_excluded_from_bom(stem):
    full, bom = bom_pair(stem)
    excluded = {p.ref for p in full.parts if p.exclude_from_bom}
    assert excluded
    assert {p.ref for p in bom.parts} == {p.ref for p in full.parts} - excluded
    kept = {p.ref: p for p in full.parts if not p.exclude_from_bom}
    assert all(kept[p.ref] == p for p in bom.parts)


@pytest.mark.parametrize("stem", BOM_STEMS)
def test_python_bom_nets_are_the_full_nets_without_excluded_nodes(stem):
    full, bom = bom_pair(stem)
    excluded = {p.ref for p in full.parts if p.exclude_from_bom}
    expected = {}
    for net in full.nets:
        nodes = frozenset(n for n in net.nodes if n.ref not in excluded)
        if nodes:  # a net only excluded parts touched is gone
            expected[net.name] = (nodes, net.code, net.net_class)
    assert {n.name: (frozenset(n.nodes), n.code, n.net_class) for n in bom.nets} == expected


def test_python_bom_drops_nets_only_excluded_parts_touch():
    # fpga-som-carrier: 29 excluded parts (25 of them DNP) own 160 nets between them.
    full, bom = bom_pair("kria-k26-devboard")
    excluded = {p.ref for p in full.parts if p.exclude_from_bom}
    only_excluded = {n.name for n in full.nets if {x.ref for x in n.nodes} <= excluded}
    assert only_excluded
    assert {n.name for n in full.nets} - {n.name for n in bom.nets} == only_excluded


def test_python_bom_keeps_dnp_parts_that_are_not_excluded():
    full, bom = bom_pair("kria-k26-devboard")
    dnp_only = {p.ref for p in full.parts if p.dnp and not p.exclude_from_bom}
    assert dnp_only and dnp_only <= {p.ref for p in bom.parts}


def test_glasgow_bom_leaves_out_the_mounting_holes_and_test_points():
    # usb-interface-explorer/SOURCE.txt: "234 in python-bom XML: MK1-4 and TP1-19 are exclude_from_bom".
    full, bom = bom_pair("glasgow")
    gone = {p.ref for p in full.parts} - {p.ref for p in bom.parts}
    assert gone == {f"MK{i}" for i in range(1, 5)} | {f"TP{i}" for i in range(1, 20)}
    assert len(bom.parts) == 234


# -- spot checks against SOURCE.txt notes and file text -------------------------------------

def test_glasgow_pullups_and_bus_nets():
    # SOURCE.txt: "Pull-ups: R1 2k2 (SDA) and R2 2k2 (SCL), both to +3V3"; net names /SDA, /SCL.
    d = read_design(export("glasgow", ".net"))
    assert (d.part("R1").value, d.part("R2").value) == ("2k2", "2k2")
    assert {d.net_of("R1", pin) for pin in ("1", "2")} == {"/SDA", "+3V3"}
    assert {d.net_of("R2", pin) for pin in ("1", "2")} == {"/SCL", "+3V3"}


def test_glasgow_reused_sheet_gives_two_sheet_paths_from_one_file():
    # SOURCE.txt: io_buffer.kicad_sch instantiated twice: /IO_Banks/IO_Buffer_A/ and _B/.
    d = read_design(export("glasgow", ".net"))
    paths = {p.sheet_path for p in d.parts if p.sheet_file == "io_buffer.kicad_sch"}
    assert paths == {"/IO_Banks/IO_Buffer_A/", "/IO_Banks/IO_Buffer_B/"}


def test_jetson_dnp_link_reads_its_flags_and_value_field():
    # File text: R124 R_0R_0402, field Val "0R", properties exclude_from_bom and dnp, sheet /USB/.
    d = read_design(export("jetson-nano-baseboard", ".xml"))
    r124 = d.part("R124")
    assert (r124.value, r124.field("Val"), r124.dnp, r124.exclude_from_bom) == ("R_0R_0402", "0R", True, True)
    assert (r124.sheet_path, r124.sheet_file) == ("/USB/", "usb-debug.kicad_sch")


def test_tildagon_pullups_go_to_a_gpio_net():
    # SOURCE.txt: "/SDA_HOST,/SCL_HOST: pull-ups R40/R39 2k2 go to net /I2C_RESET".
    d = read_design(export("tildagon-base", ".net"))
    assert {d.net_of("R40", "1"), d.net_of("R40", "2")} == {"/SDA_HOST", "/I2C_RESET"}
    assert {d.net_of("R39", "1"), d.net_of("R39", "2")} == {"/SCL_HOST", "/I2C_RESET"}


def test_pin_functions_keep_kicad_markup():
    # jetson-nano-baseboard .net text: (pinfunction "SLEEP/~{WAKE}") on J15 pin 240.
    d = read_design(export("jetson-nano-baseboard", ".net"))
    node = next(n for n in d.net("#PWR_BUTTON").nodes if n.ref == "J15")
    assert (node.pin, node.pin_function) == ("240", "SLEEP/~{WAKE}")


# -- KiCad 5 (version D) ------------------------------------------------------------------

def kicad5():
    path = require_real(KICAD5)
    return path, path.read_text(encoding="utf-8"), read_design(path)


def test_kicad5_netlist_reads_all_parts_and_nets():
    path, text, d = kicad5()
    assert text.startswith("(export (version D)")
    assert (len(d.parts), len(d.nets)) == (len(re.findall(r"^\s*\(comp \(ref ", text, re.M)),
                                           len(re.findall(r"^\s*\(net \(code ", text, re.M)))
    assert d.tool == "Eeschema 5.1.9+dfsg1-1" and d.kicad_version == "5.1.9"


def test_kicad5_part_fields_and_sheet_from_the_file_text():
    # File text: (comp (ref R1) (value R_10k_0402) ... (field (name Val) 10k)
    #            ... (sheetpath (names "/PCIE M2 key E /")); sheet 2's source is pcie-m2-key-e.sch.
    _, _, d = kicad5()
    r1 = d.part("R1")
    assert (r1.value, r1.field("Val"), r1.field("MPN")) == ("R_10k_0402", "10k", "CRCW040210K0FKEDHP")
    assert (r1.sheet_path, r1.sheet_file) == ("/PCIE M2 key E /", "pcie-m2-key-e.sch")


def test_kicad5_node_gets_its_pin_function_from_the_library_part():
    # File text: net "/Camera interface/HDA01" holds (node (ref U9) (pin 1)) with no pin
    # function; U9 is PI4MSD5V9540BUEX, whose libpart says (pin (num 1) (name SCL) (type BiDi)).
    _, _, d = kicad5()
    node = next(n for n in d.net("/Camera interface/HDA01").nodes if n.ref == "U9")
    assert (node.pin, node.pin_function, node.pin_type) == ("1", "SCL", "BiDi")


def test_kicad5_every_node_matches_its_libpart_pin_in_the_file_text():
    _, text, d = kicad5()
    comps = dict(re.findall(r"\(comp \(ref ([^)\s]+)\).*?\(libsource \(lib [^)]+\) \(part ([^)]+)\)",
                            text, re.S))
    pins: dict[str, dict[str, tuple[str, str]]] = {}
    for block in text[text.index("(libparts"):text.index("(nets")].split("(libpart ")[1:]:
        part = re.search(r"\(part ([^)]+)\)", block).group(1)
        pins[part] = {num: ("" if name == "~" else name, kind) for num, name, kind in
                      re.findall(r"\(pin \(num ([^)]+)\) \(name ([^)]+)\) \(type ([^)]+)\)", block)}
    checked = 0
    for net in d.nets:
        for node in net.nodes:
            name, kind = pins[comps[node.ref]][node.pin]
            assert node.pin_type == kind
            # KiCad 5 overbars (~X) become ~{X}; compare with the overbar markup removed
            assert re.sub(r"[~{}]", "", node.pin_function) == re.sub(r"[~{}]", "", name)
            checked += 1
    assert checked == len(re.findall(r"\(node \(ref ", text))


def test_kicad5_overbar_net_names_match_kicad9_names_of_the_same_project():
    # The same project's KiCad 7 schematics, exported by KiCad 9.0.8, name these nets ~{...}.
    _, text, d = kicad5()
    new = read_design(export("kria-k26-devboard", ".net"))
    old_names = {n.name for n in d.nets if "~" in n.name}
    assert len(old_names) == len(re.findall(r"\(name \"?[^)]*~[^)]*\)\s*$", text[text.index("(nets"):], re.M))
    assert "/Ethernet/~{ETH_RESET}" in old_names
    assert old_names <= {n.name for n in new.nets}


# -- fresh exports with kicad-cli -------------------------------------------------------------

@pytest.mark.kicad
@pytest.mark.parametrize("stem", STEMS)
def test_fresh_kicad_cli_export_reads_like_the_stored_export(stem, kicad_cli, tmp_path):
    import subprocess

    sch = require_real(DESIGNS[stem][1])
    out = tmp_path / f"{stem}.net"
    proc = subprocess.run([kicad_cli, "sch", "export", "netlist", "--format", "kicadsexpr",
                           "-o", str(out), str(sch)], capture_output=True, text=True, timeout=600)
    assert proc.returncode == 0, proc.stderr
    assert_same_design(read_design(out), read_design(export(stem, ".net")))


@pytest.mark.kicad
@pytest.mark.parametrize("stem", STEMS)
def test_project_reader_gives_the_stored_export(stem, kicad_cli):
    target = require_real(DESIGNS[stem][2])
    # Through KiCad's own export (net codes, net classes and tool name come only from it);
    # netaudit's own schematic reader is compared net by net in test_schematic_engine.py.
    design = read_design(target, use_kicad_cli=True)
    assert design.format == "kicad-project"
    assert_same_design(design, read_design(export(stem, ".net")))


def folder_snapshot(folder: Path) -> dict[str, bytes]:
    return {str(p.relative_to(folder)): p.read_bytes() for p in folder.rglob("*") if p.is_file()}


@pytest.mark.kicad
def test_project_reader_leaves_the_project_folder_as_it_was(kicad_cli):
    # kicad-cli makes a lock file (~NAME.kicad_pro.lck) beside the project while it runs;
    # nothing may be left behind and no file may change.
    folder = require_real("event-badge-i2c-mux/hexpansion")
    before = folder_snapshot(folder)
    read_design(folder)
    assert folder_snapshot(folder) == before


def test_folder_with_several_projects_is_refused_naming_them():
    folder = require_real("event-badge-i2c-mux/tildagon-base")
    with pytest.raises(InputError) as info:
        read_design(folder)
    assert "tildagon-base.kicad_pro" in str(info.value) and "tildagon-top.kicad_pro" in str(info.value)


def test_folder_with_no_project_is_refused():
    folder = require_real("event-badge-i2c-mux")
    with pytest.raises(InputError, match="no KiCad project"):
        read_design(folder)


@pytest.mark.kicad
def test_kicad10_preview_schematic_is_a_clean_input_error(kicad_cli):
    # kicad-cli 9.0.8 refuses revD0 (generator_version "10.0"), see SOURCE.txt.
    folder = require_real("usb-interface-explorer/revD0")
    with pytest.raises(InputError) as info:
        read_design(folder)
    assert "10.0" in str(info.value) and "\n" not in str(info.value)


@pytest.mark.kicad
def test_kicad10_preview_schematic_through_the_cli_exits_2_with_one_line(kicad_cli):
    folder = require_real("usb-interface-explorer/revD0")
    code, out, err = run_cli(["check", folder])
    assert code == 2 and out == ""
    assert len(err.splitlines()) == 1 and "Traceback" not in err
    assert "glasgow_revD0.kicad_sch" in err


def test_real_designs_folder_is_where_the_readme_says():
    # The path every test here relies on: ../shared/real-designs beside the repository.
    if not REAL_DESIGNS.is_dir():
        pytest.skip(f"{REAL_DESIGNS.resolve()} not present")
    assert (REAL_DESIGNS / "README.md").is_file()


def test_check_command_leaves_the_netlist_unchanged(tmp_path):
    path = export("glasgow", ".net")
    before = path.read_bytes()
    code, _, err = run_cli(["check", path, "--json", tmp_path / "report.json"])
    assert code in (0, 1) and "Traceback" not in err  # 1: findings reached --fail-on
    assert (tmp_path / "report.json").is_file()
    assert path.read_bytes() == before
