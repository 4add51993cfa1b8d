"""The command line's promises (CONTRACT.md, "Command line"): exit codes, --fail-on, --json -,
rules, init, pullup, buses, config errors. Run as a user runs it: ``python -m netaudit``.

The designs are hand-made (tests/handmade.py) and written to tmp_path as minimal KiCad
S-expression netlists, version "E" (the export format of KiCad 6-9), by
:func:`netlist_text` below.
"""

from __future__ import annotations

import json
import os
import re
import subprocess
import sys
from pathlib import Path

import pytest
from conftest import CONTRACT_RULES
from handmade import build, ic, res

from netaudit.checks import all_rules
from netaudit.config import RULE_IDS, parse_config
from netaudit.model import Design

REPO = Path(__file__).resolve().parents[1]

# -- writing a hand-made design as a KiCad netlist ----------------------------------

def _q(text: str) -> str:
    return '"' + text.replace("\\", "\\\\").replace('"', '\\"') + '"'


def netlist_text(design: Design, *, title: str = "Handmade board", rev: str = "A") -> str:
    """A minimal KiCad version "E" netlist of ``design``: design block with one root sheet,
    components, libparts (pin names and types) and nets, as KiCad 9 writes them."""
    out = ['(export (version "E")', "  (design", '    (source "handmade.kicad_sch")',
           '    (tool "Eeschema 9.0.8")',
           '    (sheet (number "1") (name "/") (tstamps "/")',
           f"      (title_block (title {_q(title)}) (rev {_q(rev)}) (source \"handmade.kicad_sch\"))))",
           "  (components"]
    for p in design.parts:
        out.append(f"    (comp (ref {_q(p.ref)})")
        out.append(f"      (value {_q(p.value)})")
        if p.fields:
            out.append("      (fields " + " ".join(f"(field (name {_q(k)}) {_q(v)})" for k, v in p.fields) + ")")
        out.append(f"      (libsource (lib {_q(p.lib)}) (part {_q(p.lib_part)}) (description {_q(p.description)}))")
        if p.dnp:
            out.append('      (property (name "dnp"))')
        out.append(f"      (property (name \"Sheetfile\") (value {_q(p.sheet_file or 'handmade.kicad_sch')}))")
        out.append(f"      (sheetpath (names {_q(p.sheet_path)}) (tstamps \"/\")))")
    out.append("  )")
    out.append("  (libparts")
    seen = set()
    for p in design.parts:
        if (p.lib, p.lib_part) in seen:
            continue
        seen.add((p.lib, p.lib_part))
        pins = " ".join(f"(pin (num {_q(x.number)}) (name {_q(x.name or '~')}) (type {_q(x.type)}))" for x in p.pins)
        out.append(f"    (libpart (lib {_q(p.lib)}) (part {_q(p.lib_part)}) (pins {pins}))")
    out.append("  )")
    out.append("  (nets")
    for code, net in enumerate(design.nets, 1):
        nodes = " ".join(
            f"(node (ref {_q(n.ref)}) (pin {_q(n.pin)})"
            + (f" (pinfunction {_q(n.pin_function)})" if n.pin_function else "")
            + f" (pintype {_q(n.pin_type)}))" for n in net.nodes)
        out.append(f"    (net (code \"{code}\") (name {_q(net.name)}) (class \"Default\") {nodes})")
    out.append("  ))")
    return "\n".join(out) + "\n"


def _parts(*pullups):
    return [ic("U1", "MCU", ["SDA", "SCL", "VDD", "GND"], pins_total=48),
            ic("U2", "SENSOR", ["SDA", "SCL", "VDD", "GND"]), *pullups]


def _nets(sda=(), scl=(), rail=()):
    return {"/SDA": ["U1.SDA", "U2.SDA", *sda], "/SCL": ["U1.SCL", "U2.SCL", *scl],
            "+3V3": ["U1.VDD", "U2.VDD", *rail], "GND": ["U1.GND", "U2.GND"]}


def clean_design() -> Design:
    """4.7 kΩ pull-ups to +3V3 on a two-device bus: no findings at all."""
    return build(_parts(res("R1", "4k7"), res("R2", "4k7")), _nets(["R1.1"], ["R2.1"], ["R1.2", "R2.2"]))


def error_design() -> Design:
    """No pull-ups: two pullup-missing errors (and nothing else)."""
    return build(_parts(), _nets())


def warning_design() -> Design:
    """A second 4.7 kΩ on SDA from the sensor's own sheet: one pullup-parallel warning."""
    return build(_parts(res("R1", "4k7"), res("R2", "4k7"),
                        res("R3", "4k7", sheet="/Sensor/", sheet_file="sensor.kicad_sch")),
                 _nets(["R1.1", "R3.1"], ["R2.1"], ["R1.2", "R2.2", "R3.2"]))


def info_design() -> Design:
    """The controller alone on a pulled-up bus: one bus-lone-device info."""
    parts = [ic("U1", "MCU", ["SDA", "SCL", "VDD", "GND"], pins_total=48), res("R1", "4k7"), res("R2", "4k7")]
    return build(parts, {"/SDA": ["U1.SDA", "R1.1"], "/SCL": ["U1.SCL", "R2.1"],
                         "+3V3": ["U1.VDD", "R1.2", "R2.2"], "GND": ["U1.GND"]})


def write(tmp_path: Path, design: Design, name: str = "board.net") -> Path:
    path = tmp_path / name
    path.write_text(netlist_text(design), encoding="utf-8")
    return path


def netaudit(*args, cwd: Path = REPO) -> subprocess.CompletedProcess:
    env = dict(os.environ)
    env["PYTHONPATH"] = os.pathsep.join([str(REPO)] + ([env["PYTHONPATH"]] if env.get("PYTHONPATH") else []))
    return subprocess.run([sys.executable, "-m", "netaudit", *map(str, args)], cwd=cwd, env=env,
                          capture_output=True, text=True, timeout=300, check=False)


# The rules of issues 3 and 4 (wiring, pull-ups, budget); later rule families (rail
# voltages, addresses) may add their own findings to the same boards.
BUS_AND_BUDGET_RULES = frozenset({
    "bus-line-unpaired", "bus-lines-swapped", "bus-pin-unconnected", "bus-lone-device",
    "pullup-missing", "pullup-duplicated", "pullup-parallel", "pullup-rail-mismatch",
    "pullup-to-signal", "pullup-too-strong", "pullup-too-weak", "capacitance-over-limit",
    "low-level-margin",
})


def findings_of(path: Path, *more) -> list[dict]:
    return json.loads(netaudit("check", path, "--json", "-", *more).stdout)["findings"]


def rules_of(path: Path) -> list[str]:
    """The bus and budget rules raised on ``path``, after checking that no other rule
    raises more than an info there (the exit-code tests below rely on that)."""
    found = findings_of(path)
    assert all(f["severity"] == "info" for f in found if f["rule"] not in BUS_AND_BUDGET_RULES), found
    return sorted(f["rule"] for f in found if f["rule"] in BUS_AND_BUDGET_RULES)


# -- the hand-made netlists read back as written -------------------------------------

def test_written_netlist_reads_back_with_the_designs_findings(tmp_path):
    # Guards the fixtures below: each netlist gives exactly the findings its design names
    # (and nothing above info from other rule families).
    assert rules_of(write(tmp_path, clean_design(), "clean.net")) == []
    assert rules_of(write(tmp_path, error_design(), "error.net")) == ["pullup-missing", "pullup-missing"]
    assert rules_of(write(tmp_path, warning_design(), "warn.net")) == ["pullup-parallel"]
    assert rules_of(write(tmp_path, info_design(), "info.net")) == ["bus-lone-device"]


# -- check: exit codes ---------------------------------------------------------------

def test_check_clean_design_exits_0(tmp_path):
    assert netaudit("check", write(tmp_path, clean_design())).returncode == 0


def test_check_with_an_error_exits_1(tmp_path):
    assert netaudit("check", write(tmp_path, error_design())).returncode == 1


def test_check_missing_file_exits_2_with_one_line(tmp_path):
    r = netaudit("check", tmp_path / "nowhere.net")
    assert r.returncode == 2
    assert len(r.stderr.strip().splitlines()) == 1 and "nowhere.net" in r.stderr
    assert "Traceback" not in r.stderr


def test_check_unreadable_netlist_exits_2_naming_the_file(tmp_path):
    bad = tmp_path / "broken.net"
    bad.write_text('(export (version "E")\n  (components (comp (ref "U1")\n', encoding="utf-8")
    r = netaudit("check", bad)
    assert r.returncode == 2
    assert len(r.stderr.strip().splitlines()) == 1 and "broken.net" in r.stderr
    assert "Traceback" not in r.stderr


def test_warning_passes_by_default_and_fails_at_fail_on_warning(tmp_path):
    path = write(tmp_path, warning_design())
    assert netaudit("check", path).returncode == 0
    assert netaudit("check", path, "--fail-on", "warning").returncode == 1


def test_info_fails_only_at_fail_on_info(tmp_path):
    path = write(tmp_path, info_design())
    assert netaudit("check", path, "--fail-on", "warning").returncode == 0
    assert netaudit("check", path, "--fail-on", "info").returncode == 1


def test_fail_on_error_ignores_warnings_but_not_errors(tmp_path):
    assert netaudit("check", write(tmp_path, warning_design(), "w.net"), "--fail-on", "error").returncode == 0
    assert netaudit("check", write(tmp_path, error_design(), "e.net"), "--fail-on", "error").returncode == 1


def test_fail_on_never_exits_0_with_errors(tmp_path):
    assert netaudit("check", write(tmp_path, error_design()), "--fail-on", "never").returncode == 0


def test_unknown_fail_on_level_is_bad_usage(tmp_path):
    assert netaudit("check", write(tmp_path, clean_design()), "--fail-on", "critical").returncode == 2


def test_waived_errors_do_not_fail_the_check(tmp_path):
    path = write(tmp_path, error_design())
    cfg = tmp_path / "waive.yaml"
    cfg.write_text("version: 1\nwaivers:\n  - rule: pullup-missing\n    reason: pull-ups on the mating board\n",
                   encoding="utf-8")
    r = netaudit("check", path, "--config", cfg, "--json", "-")
    assert r.returncode == 0
    doc = json.loads(r.stdout)
    missing = [f for f in doc["findings"] if f["rule"] == "pullup-missing"]
    assert [(f["waived"], f["waiver_reason"]) for f in missing] == [(True, "pull-ups on the mating board")] * 2
    assert doc["summary"]["errors"] == 0 and doc["summary"]["waived"] == 2


def test_config_beside_the_design_is_used_without_config_option(tmp_path):
    path = write(tmp_path, error_design())
    (tmp_path / "netaudit.yaml").write_text(
        "version: 1\nwaivers:\n  - rule: pullup-missing\n    reason: mating board\n", encoding="utf-8")
    assert netaudit("check", path).returncode == 0


# -- check: output -------------------------------------------------------------------

def test_json_to_stdout_prints_only_json(tmp_path):
    r = netaudit("check", write(tmp_path, error_design()), "--json", "-")
    doc = json.loads(r.stdout)           # fails if any text summary is mixed in
    assert doc["schema"] == "netaudit.report/1"
    assert r.returncode == 1


def test_text_summary_names_each_finding(tmp_path):
    r = netaudit("check", write(tmp_path, error_design()))
    assert r.stdout.count("[pullup-missing]") == 2
    assert "/SDA" in r.stdout and "/SCL" in r.stdout


def test_quiet_prints_nothing(tmp_path):
    r = netaudit("check", write(tmp_path, error_design()), "--quiet")
    assert r.stdout == "" and r.returncode == 1


def test_json_to_a_file_writes_the_report_and_keeps_the_summary(tmp_path):
    out = tmp_path / "out" / "report.json"
    r = netaudit("check", write(tmp_path, clean_design()), "--json", out)
    assert json.loads(out.read_text(encoding="utf-8"))["summary"]["buses"] == 1
    assert r.stdout.strip() != ""


# -- config errors -------------------------------------------------------------------

def test_config_with_unknown_key_exits_2_naming_key_and_line(tmp_path):
    cfg = tmp_path / "netaudit.yaml"
    cfg.write_text("version: 1\ndefaults:\n  mode: fast\n  pin_capacitence_pf: 8\n", encoding="utf-8")
    r = netaudit("check", write(tmp_path, clean_design()), "--config", cfg)
    assert r.returncode == 2
    (line,) = r.stderr.strip().splitlines()
    assert "pin_capacitence_pf" in line and "netaudit.yaml" in line
    assert re.search(r"\b4\b", line)      # the key sits on line 4 of the file
    assert "Traceback" not in r.stderr


def test_missing_config_file_exits_2(tmp_path):
    r = netaudit("check", write(tmp_path, clean_design()), "--config", tmp_path / "absent.yaml")
    assert r.returncode == 2
    (line,) = r.stderr.strip().splitlines()
    assert "absent.yaml" in line


# -- rules ---------------------------------------------------------------------------

def test_config_knows_exactly_the_contract_rules():
    assert set(RULE_IDS) == CONTRACT_RULES


def test_registered_rules_are_contract_rules_with_what_why_fix_source():
    table = all_rules()
    assert set(table) <= RULE_IDS
    for rule in table.values():
        for part in ("What:", "Why:", "Fix:", "Source:"):
            assert part in rule.doc, f"{rule.id} lacks {part}"


def test_rules_lists_every_registered_rule_once():
    r = netaudit("rules")
    assert r.returncode == 0
    listed = [line.split()[0] for line in r.stdout.splitlines() if line.strip()]
    assert sorted(listed) == sorted(all_rules())
    assert len(listed) == len(set(listed))


def test_rules_lists_all_contract_rules():
    listed = {line.split()[0] for line in netaudit("rules").stdout.splitlines() if line.strip()}
    assert listed == CONTRACT_RULES


def test_rules_explains_one_rule():
    r = netaudit("rules", "pullup-too-strong")
    assert r.returncode == 0
    for part in ("What:", "Why:", "Fix:", "Source:", "UM10204"):
        assert part in r.stdout


def test_rules_unknown_id_exits_2_with_one_line():
    r = netaudit("rules", "unknown-id")
    assert r.returncode == 2
    (line,) = r.stderr.strip().splitlines()
    assert "unknown-id" in line
    assert r.stdout == ""


# -- init ----------------------------------------------------------------------------

def test_init_writes_a_config_that_parses(tmp_path):
    path = write(tmp_path, clean_design())
    r = netaudit("init", path)
    assert r.returncode == 0
    target = tmp_path / "netaudit.yaml"
    cfg = parse_config(target.read_text(encoding="utf-8"), str(target))
    assert [(b.sda, b.scl) for b in cfg.buses] == [(("/SDA",), ("/SCL",))]
    assert cfg.rails == {"+3V3": 3.3}


def test_init_config_gives_the_same_audit(tmp_path):
    # The starter file names what detection found, so findings stay the same with it.
    path = write(tmp_path, warning_design())
    key = lambda f: (f["rule"], f["bus"], f["segment"], f["line"], f["refs"], f["nets"])  # noqa: E731
    before = [key(f) for f in findings_of(path)]
    assert netaudit("init", path).returncode == 0
    after = [key(f) for f in findings_of(path)]
    assert ("pullup-parallel", "I2C", "I2C", "sda", ["R1", "R3"], ["/SDA"]) in before
    assert after == before


def test_init_never_overwrites(tmp_path):
    path = write(tmp_path, clean_design())
    target = tmp_path / "netaudit.yaml"
    target.write_text("# mine\nversion: 1\n", encoding="utf-8")
    r = netaudit("init", path)
    assert r.returncode == 2
    assert len(r.stderr.strip().splitlines()) == 1 and "netaudit.yaml" in r.stderr
    assert target.read_text(encoding="utf-8") == "# mine\nversion: 1\n"


# -- pullup --------------------------------------------------------------------------

def test_pullup_window_matches_ti_slva689_example():
    # TI SLVA689 §4: Fast-mode, VDD 3.3 V, Cb 200 pF -> "between 966.667 Ω and 1.77 kΩ".
    r = netaudit("pullup", "--vdd", "3.3", "--cb", "200p")
    assert r.returncode == 0
    assert "967 Ω" in r.stdout and "1.77 kΩ" in r.stdout


def test_pullup_lists_only_values_inside_the_window():
    # E12 (IEC 60063) values between 966.7 Ω and 1770 Ω (TI SLVA689 §4): 1.0k, 1.2k, 1.5k.
    r = netaudit("pullup", "--vdd", "3.3", "--cb", "200p")
    e12 = next(line for line in r.stdout.splitlines() if line.startswith("E12"))
    assert e12.split(":", 1)[1].split(",") == [" 1 kΩ", " 1.2 kΩ", " 1.5 kΩ"]


def test_pullup_standard_mode_widens_the_window():
    # Standard-mode, 200 pF: Rp(max) = 1000 ns / (0.8473 · 200 pF) = 5.90 kΩ
    # (UM10204 Rev. 6 §7.1 Eq. 1, Table 10; REFERENCES.md §8 5901.1 Ω).
    r = netaudit("pullup", "--vdd", "3.3", "--cb", "200p", "--mode", "standard")
    assert "5.9 kΩ" in r.stdout


def test_pullup_bad_capacitance_exits_2():
    r = netaudit("pullup", "--vdd", "3.3", "--cb", "lots")
    assert r.returncode == 2 and "--cb" in r.stderr


def test_pullup_supply_not_above_the_low_level_exits_2_with_one_line():
    # SMBus V_OL is a fixed 0.4 V (AN4471 Table 2): a 0.3 V supply has no pull-up window.
    r = netaudit("pullup", "--vdd", "0.3", "--cb", "100p", "--mode", "smbus")
    assert r.returncode == 2
    (line,) = r.stderr.strip().splitlines()
    assert "--vdd" in line and "Traceback" not in r.stderr


@pytest.mark.parametrize("vdd", ["nan", "inf"])
def test_pullup_supply_that_is_not_a_number_exits_2(vdd):
    r = netaudit("pullup", "--vdd", vdd, "--cb", "100p")
    assert r.returncode == 2 and "--vdd" in r.stderr and "Traceback" not in r.stderr


# -- buses ---------------------------------------------------------------------------

def test_buses_json_is_an_inventory(tmp_path):
    r = netaudit("buses", write(tmp_path, clean_design()), "--json")
    assert r.returncode == 0
    doc = json.loads(r.stdout)
    assert doc["schema"] == "netaudit.report/1" and "findings" not in doc
    (bus,) = doc["buses"]
    (seg,) = bus["segments"]
    assert seg["lines"]["sda"]["nets"] == ["/SDA"]
    assert [p["ref"] for p in seg["lines"]["sda"]["pullups"]] == ["R1"]
    assert sorted(d["ref"] for d in seg["devices"]) == ["U1", "U2"]


def test_buses_text_names_the_pullups(tmp_path):
    r = netaudit("buses", write(tmp_path, clean_design()))
    assert r.returncode == 0
    assert "R1" in r.stdout and "R2" in r.stdout and "+3V3" in r.stdout

