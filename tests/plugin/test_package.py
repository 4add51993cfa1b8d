"""The plugin-manager zip from plugin/build_package.py.

Checked against KiCad's own plugin-manager schema (share/kicad/schemas/pcm.v1.schema.json
as KiCad 9.0.8 installs it), and by importing the unpacked plugin the way KiCad's
``pcbnew.LoadPlugins`` does (it appends the plugins folder to ``sys.path`` and calls
``importlib.import_module(<folder name>)``; read in KiCad 9.0.8's pcbnew.py) in a Python
that has only its standard library.
"""

from __future__ import annotations

import json
import os
import struct
import subprocess
import sys
import zipfile
from pathlib import Path

import pytest

from conftest import REAL_DESIGNS

PCM_SCHEMA = Path("/usr/share/kicad/schemas/pcm.v1.schema.json")
REPO = Path(__file__).resolve().parents[2]
DEMO_NETLIST = REPO / "fixtures" / "demo" / "greenhouse.net"
SYSTEM_PYTHON = Path("/usr/bin/python3")
COMPILED = (".so", ".pyd", ".dylib", ".dll", ".pyc")
HTML_AVAILABLE = (REPO / "netaudit" / "report" / "html.py").is_file()


def _metadata(built_zip) -> dict:
    with zipfile.ZipFile(built_zip) as z:
        return json.loads(z.read("metadata.json"))


def _validator():
    if not PCM_SCHEMA.is_file():
        pytest.skip(f"KiCad's plugin-manager schema not installed ({PCM_SCHEMA})")
    jsonschema = pytest.importorskip("jsonschema")
    from referencing import Registry, Resource
    schema = json.loads(PCM_SCHEMA.read_text(encoding="utf-8"))
    # The schema's "$ref": "#/definitions/Package" resolves inside the document itself,
    # registered under its own $id (https://go.kicad.org/pcm/schemas/v1): nothing is fetched.
    registry = Registry().with_resource(schema["$id"], Resource.from_contents(schema))
    return jsonschema.Draft7Validator(schema, registry=registry)


def _stdlib_python(code: str, *args: str, python: str | None = None) -> subprocess.CompletedProcess:
    """Run ``code`` in ``python -S -I``: no site-packages, no PYTHON* variables, no cwd."""
    env = {k: v for k, v in os.environ.items() if not k.startswith("PYTHON")}
    return subprocess.run([python or sys.executable, "-S", "-I", "-c", code, *args],
                          capture_output=True, text=True, timeout=300, check=False, env=env)


def test_metadata_validates_against_kicads_plugin_manager_schema(built_zip):
    errors = sorted(_validator().iter_errors(_metadata(built_zip)), key=str)
    assert not errors, [e.message for e in errors]


def test_the_schema_check_catches_a_broken_metadata(built_zip):
    bad = _metadata(built_zip)
    bad["identifier"] = "9 not an identifier"
    del bad["versions"][0]["kicad_version"]
    messages = [e.message for e in _validator().iter_errors(bad)]
    assert any("9 not an identifier" in m for m in messages)
    assert any("kicad_version" in m for m in messages)


def test_zip_has_the_plugin_manager_layout(built_zip):
    with zipfile.ZipFile(built_zip) as z:
        names = z.namelist()
        icon = z.read("resources/icon.png")
    assert {n.split("/")[0] for n in names} == {"metadata.json", "plugins", "resources"}
    for needed in ("plugins/__init__.py", "plugins/core.py", "plugins/netaudit_bom.py",
                   "plugins/icon.png", "plugins/icon_dark.png", "plugins/vendor/netaudit/__init__.py",
                   "plugins/vendor/netaudit/readers/pcbnew_board.py"):
        assert needed in names
    assert not [n for n in names if n.endswith(COMPILED) or "__pycache__" in n]
    # PNG signature and IHDR (PNG specification, ISO/IEC 15948): 64 x 64 pixels
    assert icon[:8] == b"\x89PNG\r\n\x1a\n" and struct.unpack(">II", icon[16:24]) == (64, 64)


def test_every_library_netaudit_imports_is_bundled(built_zip):
    with zipfile.ZipFile(built_zip) as z:
        names = set(z.namelist())
        bundle = json.loads(z.read("plugins/vendor/BUNDLE.json"))
    assert {"networkx", "yaml", "jinja2", "markupsafe"} <= set(bundle["imported_by_netaudit"])
    for module in bundle["imported_by_netaudit"]:
        assert f"plugins/vendor/{module}/__init__.py" in names, module
    assert bundle["requires_python"] >= [3, 10]   # pyproject.toml requires-python


def test_install_folder_name_shadows_no_bundled_package(built_zip):
    name = _metadata(built_zip)["identifier"].replace(".", "_")
    with zipfile.ZipFile(built_zip) as z:
        tops = {n.split("/")[2] for n in z.namelist() if n.startswith("plugins/vendor/") and n.count("/") > 2}
    assert name not in tops and name != "netaudit"


def test_build_is_reproducible(tmp_path):
    # Two builds back to back (not against the session's zip: other people edit the
    # working tree while the suite runs, and the zip carries it).
    env = dict(os.environ)
    env.pop("SOURCE_DATE_EPOCH", None)
    zips = []
    for n in (1, 2):
        proc = subprocess.run([sys.executable, str(REPO / "plugin" / "build_package.py"),
                               "--out", str(tmp_path / str(n))],
                              capture_output=True, text=True, timeout=300, check=False, env=env)
        assert proc.returncode == 0, proc.stderr
        zips.append(next((tmp_path / str(n)).glob("*.zip")))
    first, second = (zipfile.ZipFile(z) for z in zips)
    differing = [n for n in sorted(set(first.namelist()) | set(second.namelist()))
                 if n not in first.namelist() or n not in second.namelist() or first.read(n) != second.read(n)]
    assert not differing
    assert zips[0].read_bytes() == zips[1].read_bytes()


def test_committed_icons_are_the_ones_make_icon_draws():
    sys.path.insert(0, str(REPO / "plugin"))
    try:
        import make_icon
    finally:
        sys.path.remove(str(REPO / "plugin"))
    for path, (size, dark) in make_icon.TARGETS.items():
        assert path.read_bytes() == make_icon.png(size, dark), path


_IMPORT_LIKE_KICAD = r"""
import importlib, importlib.util, json, sys
plugins_dir, name, netlist = sys.argv[1:4]
before = {m: importlib.util.find_spec(m) is not None for m in ("networkx", "yaml", "jinja2", "pcbnew", "wx")}
sys.path.append(plugins_dir)                       # what pcbnew.LoadPlugins does
plugin = importlib.import_module(name)
core = importlib.import_module(name + ".core")
from netaudit.audit import audit_design
from netaudit.config import Config
from netaudit.readers import read_design
audit = audit_design(read_design(netlist), Config.empty())
try:
    from netaudit.report import html
except ImportError:          # a netaudit without the HTML report
    html_chars = None
else:
    html_chars = len(html.render(audit))
import markupsafe, yaml
print(json.dumps({"before": before, "registered": plugin.REGISTERED, "skipped": plugin.SKIPPED,
                  "summary": core.summary(audit), "html": html_chars,
                  "libyaml": yaml.__with_libyaml__, "speedups": "markupsafe._speedups" in sys.modules,
                  "yaml_from": yaml.__file__}))
"""


def test_plugin_imports_in_a_python_with_only_the_standard_library(kicad_install):
    plugins, name = kicad_install
    proc = _stdlib_python(_IMPORT_LIKE_KICAD, str(plugins), name, str(DEMO_NETLIST))
    assert proc.returncode == 0, proc.stderr
    out = json.loads(proc.stdout.strip().splitlines()[-1])
    assert out["before"] == {"networkx": False, "yaml": False, "jinja2": False, "pcbnew": False, "wx": False}
    assert out["registered"] is False and "pcbnew" in out["skipped"]
    # fixtures/demo/faults.yaml: the demo's three buses
    assert out["summary"].startswith("3 buses,")
    if HTML_AVAILABLE:
        assert out["html"] > 0     # jinja2 and markupsafe work from the bundle
    assert out["libyaml"] is False and out["speedups"] is False    # the pure-Python fallbacks
    assert out["yaml_from"].startswith(str(plugins / name))


def test_generator_script_from_the_package_runs_with_only_the_standard_library(kicad_install, tmp_path):
    plugins, name = kicad_install
    xml = REAL_DESIGNS / "usb-interface-explorer" / "netlist-kicad-9.0.8" / "glasgow.python-bom.xml"
    if not xml.is_file():
        pytest.skip(f"real design export {xml} not available")
    env = {k: v for k, v in os.environ.items() if not k.startswith("PYTHON")}
    proc = subprocess.run([sys.executable, "-S", "-I", str(plugins / name / "netaudit_bom.py"), str(xml),
                           str(tmp_path / "glasgow")], capture_output=True, text=True, timeout=300,
                          check=False, env=env)
    assert proc.returncode == 0, proc.stderr
    assert json.loads((tmp_path / "glasgow.json").read_text(encoding="utf-8"))["summary"]["buses"] == 1
    assert (tmp_path / "glasgow.html").is_file() == HTML_AVAILABLE


_REGISTER_UNDER_KICAD = r"""
import importlib, json, sys
sys.path.append(sys.argv[1])
plugin = importlib.import_module(sys.argv[2])
import networkx
print(json.dumps({"registered": plugin.REGISTERED, "skipped": plugin.SKIPPED,
                  "name": plugin.action.NetauditAction().GetName(),
                  "icon": plugin.action.NetauditAction().GetIconFileName(False),
                  "dark_icon": plugin.action.NetauditAction().GetIconFileName(True),
                  "networkx_from": networkx.__file__}))
"""


@pytest.mark.kicad
def test_action_plugin_registers_in_the_python_kicad_runs(kicad_install):
    plugins, name = kicad_install
    if not SYSTEM_PYTHON.is_file():
        pytest.skip(f"{SYSTEM_PYTHON} not present")
    probe = subprocess.run([str(SYSTEM_PYTHON), "-c", "import pcbnew"], capture_output=True, timeout=120)
    if probe.returncode != 0:
        pytest.skip(f"KiCad's pcbnew does not import in {SYSTEM_PYTHON}")
    proc = subprocess.run([str(SYSTEM_PYTHON), "-c", _REGISTER_UNDER_KICAD, str(plugins), name],
                          capture_output=True, text=True, timeout=300, check=False)
    assert proc.returncode == 0, proc.stderr
    out = json.loads(proc.stdout.strip().splitlines()[-1])
    assert out["registered"] is True, out["skipped"]
    assert out["name"].startswith("netaudit")
    assert Path(out["icon"]).is_file() and Path(out["dark_icon"]).is_file()
    assert out["icon"] != out["dark_icon"]
    assert out["networkx_from"].startswith(str(plugins / name / "vendor"))
