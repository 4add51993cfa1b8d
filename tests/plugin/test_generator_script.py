"""plugin/netaudit_bom.py run the way KiCad's schematic editor runs a generator script:
``python netaudit_bom.py "%I" "%O"``, where %I is the intermediate XML (the same file
``kicad-cli sch export python-bom`` writes) and %O the output name without extension.

Sources: KiCad's plugins/README-bom.txt (installed with KiCad) for the ``@package``
header convention; the stored python-bom export of usb-interface-explorer and fresh
kicad-cli 9.0.8 exports; tests/real/expected.yaml for what the buses are.
"""

from __future__ import annotations

import importlib.util
import json
import re
import shutil
import subprocess
import sys
from pathlib import Path

import pytest

from conftest import cli_env, require_real

SCRIPT = Path(__file__).resolve().parents[2] / "plugin" / "netaudit_bom.py"
KICAD_BOM_README = Path("/usr/share/kicad/plugins/README-bom.txt")
HTML_AVAILABLE = importlib.util.find_spec("netaudit.report.html") is not None


def run_script(*args, python=None, flags=(), cwd=None):
    proc = subprocess.run([python or sys.executable, *flags, str(args[0]), *map(str, args[1:])],
                          capture_output=True, text=True, timeout=300, check=False,
                          cwd=cwd, env=cli_env())
    return proc.returncode, proc.stdout, proc.stderr


def _package_text(source: str) -> str:
    """What KiCad's dialog shows: the docstring text from ``@package`` on (README-bom.txt)."""
    m = re.search(r'"""\s*@package(.*?)"""', source, re.DOTALL)
    assert m, "no @package docstring"
    return m.group(1)


def test_header_follows_kicads_generator_convention():
    shown = _package_text(SCRIPT.read_text(encoding="utf-8"))
    # The bundled KiCad scripts end the header with "Command line:" and the call with %I, %O
    # (e.g. /usr/share/kicad/plugins/bom_csv_sorted_by_ref.py).
    assert re.search(r'Command line:\s*\n\s*python "pathToFile/netaudit_bom\.py" "%I" "%O"\s*$', shown)


def test_kicads_readme_still_describes_the_package_convention():
    if not KICAD_BOM_README.is_file():
        pytest.skip(f"KiCad's {KICAD_BOM_README} not installed")
    text = KICAD_BOM_README.read_text(encoding="utf-8", errors="replace")
    assert "@package" in text and "BOM dialog" in text


@pytest.mark.real
def test_run_on_the_stored_python_bom_export_prints_the_summary_and_writes_reports(tmp_path):
    xml = require_real("usb-interface-explorer") / "netlist-kicad-9.0.8" / "glasgow.python-bom.xml"
    out = tmp_path / "glasgow-audit"
    code, stdout, stderr = run_script(SCRIPT, xml, out, cwd=tmp_path)
    assert code == 0, stderr
    # tests/real/expected.yaml: glasgow has one I2C segment, /SDA and /SCL
    assert re.search(r"^netaudit \S+: Base Board rev C3 - 1 bus, 1 segment;", stdout, re.MULTILINE)
    report = json.loads((tmp_path / "glasgow-audit.json").read_text(encoding="utf-8"))
    assert report["schema"] == "netaudit.report/1"
    assert report["design"]["format"] == "kicad-bom-xml"
    lines = report["buses"][0]["segments"][0]["lines"]
    assert (lines["sda"]["nets"], lines["scl"]["nets"]) == (["/SDA"], ["/SCL"])
    for f in report["findings"]:
        if not f["waived"]:
            assert f"{f['severity']}: {f['message']}  [{f['rule']}]" in stdout
    if HTML_AVAILABLE:
        assert (tmp_path / "glasgow-audit.html").read_text(encoding="utf-8").lstrip().lower() \
            .startswith("<!doctype html")
        assert "glasgow-audit.html" in stdout
    else:
        assert "HTML report not written" in stdout


@pytest.mark.real
@pytest.mark.kicad
def test_run_on_a_fresh_kicad_cli_python_bom_export(tmp_path, kicad_cli):
    src = require_real("battery-bms-kicad9")
    project = tmp_path / "project"
    shutil.copytree(src, project, ignore=shutil.ignore_patterns("netlist-*", "*.kicad_pcb"))
    xml = tmp_path / "bms-c1.xml"
    proc = subprocess.run([kicad_cli, "sch", "export", "python-bom", "-o", str(xml),
                           str(project / "bms-c1.kicad_sch")], capture_output=True, text=True,
                          timeout=300, check=False)
    assert proc.returncode == 0, proc.stderr
    code, stdout, stderr = run_script(SCRIPT, xml, tmp_path / "out" / "bms", cwd=tmp_path)
    assert code == 0, stderr
    report = json.loads((tmp_path / "out" / "bms.json").read_text(encoding="utf-8"))
    seg = report["buses"][0]["segments"][0]
    # tests/real/expected.yaml: bms-c1 SDA /I2C_SDA pulled up by R32, SCL /I2C_SCL by R33, to +3V3
    assert [(p["ref"], p["rail"]) for p in seg["lines"]["sda"]["pullups"]] == [("R32", "+3V3")]
    assert [(p["ref"], p["rail"]) for p in seg["lines"]["scl"]["pullups"]] == [("R33", "+3V3")]
    assert "1 bus, 1 segment" in stdout


@pytest.mark.real
def test_config_beside_the_input_is_used(tmp_path):
    src = require_real("usb-interface-explorer") / "netlist-kicad-9.0.8" / "glasgow.python-bom.xml"
    xml = tmp_path / "glasgow.xml"
    shutil.copyfile(src, xml)
    # CONTRACT.md netaudit.yaml: defaults.mode sets the mode of buses the file does not name
    (tmp_path / "netaudit.yaml").write_text("version: 1\ndefaults:\n  mode: standard\n", encoding="utf-8")
    code, _stdout, stderr = run_script(SCRIPT, xml, tmp_path / "glasgow", cwd=tmp_path)
    assert code == 0, stderr
    report = json.loads((tmp_path / "glasgow.json").read_text(encoding="utf-8"))
    assert report["mode"] == "standard" and report["config"]["path"] == "netaudit.yaml"


def test_input_that_is_not_kicad_xml_is_one_line_and_exit_2(tmp_path):
    bad = tmp_path / "notes.xml"
    bad.write_text("just some text\n", encoding="utf-8")
    code, stdout, stderr = run_script(SCRIPT, bad, tmp_path / "out", cwd=tmp_path)
    assert code == 2
    assert len(stderr.strip().splitlines()) == 1 and str(bad) in stderr
    assert not (tmp_path / "out.json").exists() and not stdout


def test_without_netaudits_libraries_it_says_what_to_do(tmp_path):
    alone = tmp_path / "netaudit_bom.py"   # no vendor/ beside it, no source checkout above it
    shutil.copyfile(SCRIPT, alone)
    xml = tmp_path / "in.xml"
    xml.write_text("<export/>", encoding="utf-8")
    code, _stdout, stderr = run_script(alone, xml, tmp_path / "out", flags=("-S", "-I"), cwd=tmp_path)
    assert code == 2
    assert "cannot load netaudit" in stderr and "plugin package" in stderr
