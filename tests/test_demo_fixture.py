"""The demo design (fixtures/demo): generator, netlist, settings and fault lists agree.

The demo is our own invented scenario. These tests check that it is a well-formed KiCad 9
netlist (shapes compared with real KiCad 9.0.8 exports in ../shared/real-designs), that it
is reproducible, and that README.md, faults.yaml and not_expected.yaml name only parts and
nets that exist. They do not run the audit; the checks' own tests do that.
"""

from __future__ import annotations

import collections
import importlib.util
import re
import subprocess
import sys
from pathlib import Path

import pytest
import yaml
from conftest import CONTRACT_RULES

from netaudit.readers import read_design, sexpr
from netaudit.units import parse_value

REPO = Path(__file__).resolve().parents[1]
DEMO = REPO / "fixtures" / "demo"
NETLIST = DEMO / "greenhouse.net"
REAL = REPO / ".." / "shared" / "real-designs"
REAL_KICAD9 = REAL / "battery-bms-kicad9" / "netlist-kicad-9.0.8" / "bms-c1.net"
REAL_REUSED_SHEET = REAL / "usb-interface-explorer" / "netlist-kicad-9.0.8" / "glasgow.net"

# Top-level keys of netaudit.yaml version 1: CONTRACT.md, "netaudit.yaml (version 1)".
CONTRACT_CONFIG_KEYS = {"version", "rails", "defaults", "buses", "traces", "parts", "waivers"}

EXPECTED_PART_COUNT = 58      # README.md, "The board"


def _load_generator():
    spec = importlib.util.spec_from_file_location("make_demo", DEMO / "make_demo.py")
    module = importlib.util.module_from_spec(spec)
    sys.modules[spec.name] = module      # dataclasses look their module up while executing
    try:
        spec.loader.exec_module(module)
    finally:
        del sys.modules[spec.name]
    return module


@pytest.fixture(scope="module")
def design():
    return read_design(NETLIST)


@pytest.fixture(scope="module")
def faults():
    return yaml.safe_load((DEMO / "faults.yaml").read_text(encoding="utf-8"))


@pytest.fixture(scope="module")
def not_expected():
    return yaml.safe_load((DEMO / "not_expected.yaml").read_text(encoding="utf-8"))


@pytest.fixture(scope="module")
def config():
    return yaml.safe_load((DEMO / "netaudit.yaml").read_text(encoding="utf-8"))


def _real(path: Path) -> Path:
    if not path.exists():
        pytest.skip(f"real KiCad export not present: {path}")
    return path


# ------------------------------------------------------------------ generator

def test_generator_renders_the_committed_netlist():
    assert _load_generator().render() == NETLIST.read_text(encoding="utf-8")


def test_generator_run_as_a_script_writes_identical_bytes(tmp_path):
    out = tmp_path / "greenhouse.net"
    subprocess.run([sys.executable, str(DEMO / "make_demo.py"), str(out)], check=True)
    assert out.read_bytes() == NETLIST.read_bytes()


def test_generator_uses_only_the_standard_library():
    source = (DEMO / "make_demo.py").read_text(encoding="utf-8")
    imported = set(re.findall(r"^\s*(?:from|import)\s+([A-Za-z_][\w]*)", source, re.MULTILINE))
    assert imported <= set(sys.stdlib_module_names) | {"__future__"}


# ------------------------------------------------------------------ the netlist as KiCad writes it

def test_netlist_reads_into_a_design_with_the_expected_part_count(design):
    assert len(design.parts) == EXPECTED_PART_COUNT


def test_netlist_header_names_title_revision_and_kicad_version(design):
    assert (design.title, design.revision, design.tool) == ("Greenhouse climate node", "B",
                                                             "Eeschema 9.0.8")
    assert design.kicad_version == "9.0.8"


def test_soil_probe_sheet_is_placed_twice_from_one_file(design):
    files = {s.path: s.file for s in design.sheets}
    assert files["/Soil Probe A/"] == files["/Soil Probe B/"] == "soil_probe.kicad_sch"


def test_every_node_ref_is_a_component(design):
    missing = {node.ref for net in design.nets for node in net.nodes if design.part(node.ref) is None}
    assert missing == set()


def test_every_connected_pin_exists_in_its_libpart_with_the_same_name_and_type(design):
    wrong = []
    for net in design.nets:
        for node in net.nodes:
            pins = {p.number: p for p in design.part(node.ref).pins}
            pin = pins.get(node.pin)
            if pin is None or (pin.name, pin.type) != (node.pin_function, node.pin_type):
                wrong.append((net.name, node))
    assert wrong == []


def _pin_coverage(d):
    seen = collections.Counter((n.ref, n.pin) for net in d.nets for n in net.nodes)
    missing = [(p.ref, pin.number) for p in d.parts for pin in p.pins if (p.ref, pin.number) not in seen]
    twice = [key for key, count in seen.items() if count > 1]
    return missing, twice


def test_every_libpart_pin_sits_on_exactly_one_net(design):
    assert _pin_coverage(design) == ([], [])


def test_real_kicad9_export_puts_every_pin_on_exactly_one_net():
    # The property the demo imitates, seen in a real KiCad 9.0.8 export.
    assert _pin_coverage(read_design(_real(REAL_KICAD9))) == ([], [])


def _shapes(path: Path) -> dict[str, set[tuple[str, ...]]]:
    """For each kind of element, the sequences of child keywords (repeats collapsed)."""
    tree = sexpr.parse(path.read_text(encoding="utf-8"), str(path))

    def keys(node):
        out: list[str] = []
        for item in node[1:]:
            if isinstance(item, list) and (not out or out[-1] != item[0]):
                out.append(item[0])
        return tuple(out)

    shapes: dict[str, set] = collections.defaultdict(set)
    shapes["export"].add(keys(tree))
    design_node = sexpr.child(tree, "design")
    shapes["design"].add(keys(design_node))
    for sheet in sexpr.children(design_node, "sheet"):
        shapes["sheet"].add(keys(sheet))
        shapes["title_block"].add(keys(sexpr.child(sheet, "title_block")))
    for comp in sexpr.children(sexpr.child(tree, "components"), "comp"):
        shapes["comp"].add(keys(comp))
    for libpart in sexpr.children(sexpr.child(tree, "libparts"), "libpart"):
        shapes["libpart"].add(keys(libpart))
    for net in sexpr.children(sexpr.child(tree, "nets"), "net"):
        shapes["net"].add(keys(net))
        for node in sexpr.children(net, "node"):
            shapes["node"].add(keys(node))
    return shapes


def test_every_element_has_a_shape_seen_in_a_real_kicad9_export():
    ours, real = _shapes(NETLIST), _shapes(_real(REAL_KICAD9))
    unseen = {kind: sorted(found - real[kind]) for kind, found in ours.items() if found - real[kind]}
    assert unseen == {}


def _shared_symbol_uuids(path: Path) -> dict[str, set[str]]:
    tree = sexpr.parse(path.read_text(encoding="utf-8"), str(path))
    sheets_of: dict[str, set[str]] = collections.defaultdict(set)
    for comp in sexpr.children(sexpr.child(tree, "components"), "comp"):
        sheets_of[sexpr.value(comp, "tstamps")].add(sexpr.value(sexpr.child(comp, "sheetpath"), "names"))
    return {uuid: paths for uuid, paths in sheets_of.items() if len(paths) > 1}


def test_reused_sheet_parts_share_one_symbol_uuid_per_placement(design):
    shared = _shared_symbol_uuids(NETLIST)
    soil_parts = [p for p in design.parts if p.sheet_path == "/Soil Probe A/"]
    assert len(shared) == len(soil_parts) == 5
    assert all(paths == {"/Soil Probe A/", "/Soil Probe B/"} for paths in shared.values())


def test_real_kicad9_export_of_a_reused_sheet_shares_symbol_uuids():
    # Seen in a real KiCad 9.0.8 export: a sheet placed twice keeps one UUID per symbol.
    assert _shared_symbol_uuids(_real(REAL_REUSED_SHEET))


def test_exactly_the_dnp_resistors_are_not_fitted(design):
    # README.md: R2 (alternative on the main SDA), R403 and R404 (mux channel 1).
    assert sorted(p.ref for p in design.parts if not p.fitted) == ["R2", "R403", "R404"]


def test_floating_strap_pin_is_alone_on_its_net(design):
    # README.md fault 17: PCA9555 pin A2 (pad 3) is left open.
    net = design.net(design.net_of("U4", "3"))
    assert net.name == "unconnected-(U4-A2-Pad3)" and len(net.nodes) == 1


@pytest.mark.parametrize("ref, ohms", [
    ("R1", 2200.0), ("R3", 3300.0), ("R5", 0.0), ("R6", 4700.0), ("R7", 4700.0),
    ("R9", 10000.0), ("R405", 470.0), ("R406", 470.0), ("R201", 4700.0),
])
def test_resistor_values_written_in_several_styles_mean_the_ohms_the_readme_uses(design, ref, ohms):
    assert parse_value(design.part(ref).value, "ohm") == ohms


# ------------------------------------------------------------------ the faults are unambiguous

def test_channel_2_pullups_are_below_rp_min_at_3v3(design):
    # UM10204 Rev. 6 section 7.1 Eq. (2): Rp(min) = (VDD - VOL(max)) / IOL,
    # VOL(max) 0.4 V at IOL 3 mA (Rev. 6 Table 9) -> 966.7 ohm at 3.3 V.
    rp_min = (3.3 - 0.4) / 3e-3
    assert rp_min == pytest.approx(966.67, abs=0.01)
    for ref in ("R405", "R406"):
        assert parse_value(design.part(ref).value, "ohm") < 0.5 * rp_min


def test_roof_link_rise_time_is_over_twice_the_standard_mode_limit(design, config):
    # UM10204 Rev. 6 section 7.1 Eq. (1): tr = 0.8473 Rp Cb; Table 10: Standard-mode tr max 1000 ns.
    bus = next(b for b in config["buses"] if b["name"] == "ROOF_LINK")
    assert bus["mode"] == "standard"
    cb_farads = bus["extra_capacitance_pf"] * 1e-12    # the cable alone, pins not even counted
    rise_s = 0.8473 * parse_value(design.part("R9").value, "ohm") * cb_farads
    assert rise_s > 2 * 1000e-9
    assert cb_farads + 10e-12 < 400e-12                # Table 10: Cb max 400 pF, not exceeded


def test_main_bus_rise_time_is_inside_the_fast_mode_limit(design, config):
    # UM10204 Rev. 6 section 7.1 Eq. (1) and Table 10 (Fast-mode tr max 300 ns); Cb from the
    # config's pin capacitance per device and declared trace length (README.md, "Traps").
    devices = {n.ref for n in design.net("/I2C1_SDA").nodes} | \
              {n.ref for n in design.net("Net-(U1-I2C1_SDA)").nodes}
    devices = {r for r in devices if not r.startswith("R")}
    assert len(devices) == 10
    cb = len(devices) * config["defaults"]["pin_capacitance_pf"] * 1e-12 + \
        config["traces"]["/I2C1_SDA"]["length_mm"] * config["defaults"]["trace_pf_per_mm"] * 1e-12
    rise_s = 0.8473 * parse_value(design.part("R1").value, "ohm") * cb
    assert rise_s < 0.8 * 300e-9


# ------------------------------------------------------------------ fault lists and settings

def test_every_fault_names_a_contract_rule(faults):
    assert {f["rule"] for f in faults} <= CONTRACT_RULES


def test_faults_cover_every_rule_family_the_demo_promises(faults):
    rules = {f["rule"] for f in faults}
    families = {
        "pullups": {"pullup-missing", "pullup-duplicated", "pullup-parallel",
                    "pullup-rail-mismatch", "pullup-to-signal"},
        "budget": {"pullup-too-strong", "pullup-too-weak"},
        "voltage": {"rail-overvoltage", "rail-high-level-unmet"},
        "address": {"address-collision", "address-reserved", "address-strap-floating",
                    "mux-address-overlap"},
        "speed": {"speed-unsupported"},
    }
    assert {name: wanted - rules for name, wanted in families.items()} == \
        {name: set() for name in families}


def test_fault_entries_use_only_known_keys(faults):
    allowed = {"rule", "refs", "nets", "line", "waived"}
    assert all(set(f) <= allowed and f["refs"] for f in faults)
    assert {f.get("line") for f in faults} <= {None, "sda", "scl"}


def test_fault_refs_exist_in_the_design(design, faults):
    assert [r for f in faults for r in f["refs"] if design.part(r) is None] == []


def test_fault_nets_exist_in_the_design(design, faults):
    assert [n for f in faults for n in f.get("nets", []) if design.net(n) is None] == []


def test_not_expected_entries_name_contract_rules_and_existing_refs(design, not_expected):
    assert {e["rule"] for e in not_expected} <= CONTRACT_RULES
    assert [r for e in not_expected for r in e["refs"] if design.part(r) is None] == []


def test_no_finding_is_both_expected_and_not_expected(faults, not_expected):
    expected = {(f["rule"], frozenset(f["refs"])) for f in faults}
    clash = [e for e in not_expected
             if any(rule == e["rule"] and (not e["refs"] or set(e["refs"]) <= refs)
                    for rule, refs in expected)]
    assert clash == []


def _readme_fault_rows() -> list[dict]:
    text = (DEMO / "README.md").read_text(encoding="utf-8")
    section = text.split("## Deliberate faults", 1)[1].split("\n## ", 1)[0]
    rows = []
    for line in section.splitlines():
        cells = [c.strip() for c in line.strip().strip("|").split("|")]
        if len(cells) == 6 and cells[0].isdigit():
            rows.append({"rule": cells[1], "refs": [r.strip() for r in cells[2].split(",")],
                         "nets": [n.strip() for n in cells[3].split(",") if n.strip()],
                         "line": cells[4] or None})
    return rows


def test_readme_fault_table_matches_faults_yaml_row_for_row(faults):
    listed = [{"rule": f["rule"], "refs": f["refs"], "nets": f.get("nets", []),
               "line": f.get("line")} for f in faults]
    assert _readme_fault_rows() == listed


def test_waived_faults_are_the_ones_the_config_waiver_covers(config, faults):
    # Waiver semantics (netaudit/waivers.py): listed refs and nets must be subsets of the finding's.
    def covered(fault):
        return any(w["rule"] == fault["rule"]
                   and set(w.get("refs", [])) <= set(fault["refs"])
                   and set(w.get("nets", [])) <= set(fault.get("nets", []))
                   for w in config["waivers"])
    assert [f for f in faults if covered(f) != bool(f.get("waived"))] == []


def test_config_uses_only_version_1_keys(config):
    assert config["version"] == 1
    assert set(config) <= CONTRACT_CONFIG_KEYS
    assert config["defaults"]["mode"] == "fast"


def test_config_names_only_nets_and_rails_that_exist(design, config):
    names = list(config["rails"]) + list(config["traces"])
    for bus in config["buses"]:
        names += [bus["sda"], bus["scl"]]
    for waiver in config["waivers"]:
        names += waiver.get("nets", [])
    assert [n for n in names if design.net(n) is None] == []


def test_config_part_rules_each_match_a_part(design, config):
    import fnmatch

    def hits(match):
        return [p for p in design.parts
                if all(fnmatch.fnmatchcase({"ref": p.ref, "value": p.value,
                                            "lib_part": f"{p.lib}:{p.lib_part}"}[k], v)
                       for k, v in match.items())]
    assert [r["match"] for r in config["parts"] if not hits(r["match"])] == []


def test_config_teaches_the_invented_light_sensor_its_address(design, config):
    rule = next(r for r in config["parts"] if r["match"] == {"value": "LUXSENSE-*"})
    assert rule["address"] == 0x29
    assert sorted(p.ref for p in design.parts if p.value.startswith("LUXSENSE-")) == ["U402", "U403"]


def test_every_waiver_gives_a_reason(config):
    assert config["waivers"] and all(w.get("reason", "").strip() for w in config["waivers"])
