"""Build the zip KiCad's Plugin and Content Manager installs with "Install from File...".

    python plugin/build_package.py [--out build/plugin]

Layout of the zip (the manager's package format; schema: pcm.v1.schema.json as KiCad
installs it under share/kicad/schemas/):

    metadata.json
    plugins/                 -> KiCad's 3rdparty/plugins/<identifier>/, imported as a package
        __init__.py ...      the PCB-editor action plugin (plugin/netaudit_action/)
        netaudit_bom.py      the schematic editor's generator script
        vendor/netaudit/     netaudit itself (command line left out)
        vendor/<library>/    the pure-Python libraries netaudit imports and KiCad lacks
        vendor/licences/     their licence files
        vendor/BUNDLE.json   versions bundled and the oldest Python they accept
    resources/icon.png       the 64x64 icon the manager lists

The libraries are found from netaudit's own import graph (every ``import`` in its
modules, read with ``ast``), not from a fixed list, plus what those libraries require
(unconditional requirements only). Compiled extensions are left out: PyYAML and
MarkupSafe fall back to their pure-Python code without them, and a compiled file would
only suit one Python on one system. The zip is reproducible: sorted entries, fixed
timestamps (``SOURCE_DATE_EPOCH`` when set).
"""

from __future__ import annotations

import argparse
import ast
import importlib.metadata as md
import io
import json
import os
import re
import sys
import time
import zipfile
from pathlib import Path

HERE = Path(__file__).resolve().parent
REPO = HERE.parent
ACTION = HERE / "netaudit_action"
GENERATOR = HERE / "netaudit_bom.py"
ICON = HERE / "resources" / "icon.png"
PACKAGE = REPO / "netaudit"

# KiCad installs plugins/ as 3rdparty/plugins/<identifier, dots made underscores>/ and imports
# that folder by name, so the identifier must differ from every top-level name in vendor/.
IDENTIFIER = "netaudit-kicad"
# The command line is no use inside KiCad; everything else may be reached by the audit
# (the rule families are loaded by name at run time, so no static trimming below that).
LEFT_OUT_MODULES = {"netaudit/cli.py", "netaudit/__main__.py"}
SKIP_SUFFIXES = (".pyc", ".pyo", ".so", ".pyd", ".dylib", ".dll", ".c", ".h", ".pyx")
SKIP_DIRS = {"__pycache__", "tests", "testing"}
KICAD_MIN = "7.0"


def _version() -> str:
    text = (PACKAGE / "__init__.py").read_text(encoding="utf-8")
    return re.search(r'__version__\s*=\s*"([^"]+)"', text).group(1)


def _requires_python() -> tuple[int, int]:
    text = (REPO / "pyproject.toml").read_text(encoding="utf-8")
    m = re.search(r'requires-python\s*=\s*">=\s*(\d+)\.(\d+)', text)
    return (int(m.group(1)), int(m.group(2))) if m else (3, 10)


def metadata(version: str) -> dict:
    return {
        "$schema": "https://go.kicad.org/pcm/schemas/v1",
        "name": "netaudit",
        "description": "Audit I2C and SMBus buses: pull-ups, rise time, rails and addresses",
        "description_full": (
            "netaudit finds every I2C and SMBus bus of the board open in the PCB editor, with "
            "its segments, pull-ups, rails, capacitance and addresses, and checks them against "
            "the published bus limits (NXP UM10204, SMBus 3.x). Picking a finding selects its "
            "parts and tracks on the board; a button writes a self-contained HTML report beside "
            "the board. The package also carries netaudit_bom.py for the schematic editor's "
            "generator dialog. netaudit flags risks; it does not certify a design."),
        "identifier": IDENTIFIER,
        "type": "plugin",
        "author": {"name": "netaudit contributors", "contact": {}},
        "license": "GPL-3.0",
        "resources": {},
        "tags": ["i2c", "smbus", "pull-up", "design-check"],
        "versions": [{"version": version, "status": "testing", "kicad_version": KICAD_MIN}],
    }


# -- what netaudit imports ---------------------------------------------------------------

def _module_name(path: Path, root: Path) -> str:
    parts = list(path.relative_to(root).with_suffix("").parts)
    if parts[-1] == "__init__":
        parts.pop()
    return ".".join(parts)


def imported_top_levels(files: list[Path], root: Path) -> set[str]:
    """Top-level names imported anywhere (also inside functions) by ``files``."""
    names: set[str] = set()
    for f in files:
        tree = ast.parse(f.read_text(encoding="utf-8"), str(f))
        for node in ast.walk(tree):
            if isinstance(node, ast.Import):
                names.update(a.name.split(".")[0] for a in node.names)
            elif isinstance(node, ast.ImportFrom) and node.level == 0 and node.module:
                names.add(node.module.split(".")[0])
    return names


def third_party(names: set[str]) -> set[str]:
    own = {"netaudit", "pcbnew", "wx", "__future__"}
    local = {p.stem for p in ACTION.glob("*.py")} | {"netaudit_action"}
    return {n for n in names if n not in sys.stdlib_module_names and n not in own | local}


def _dist_for(module: str) -> md.Distribution:
    names = md.packages_distributions().get(module)
    if not names:
        raise SystemExit(f"build_package: {module!r} is imported by netaudit but not installed "
                         "in this Python; install netaudit's dependencies first")
    return md.distribution(names[0])


_REQ = re.compile(r"^\s*([A-Za-z0-9_.\-]+)")


def _plain_requirements(dist: md.Distribution) -> list[str]:
    """Requirements with no environment marker (``; extra == ...``, ``; platform...``)."""
    return [_REQ.match(r).group(1) for r in (dist.requires or []) if ";" not in r]


def bundled_distributions(modules: set[str]) -> dict[str, md.Distribution]:
    """Distribution name -> Distribution for ``modules`` and their plain requirements."""
    out: dict[str, md.Distribution] = {}
    todo = [_dist_for(m) for m in sorted(modules)]
    while todo:
        dist = todo.pop()
        name = dist.metadata["Name"]
        if name in out:
            continue
        out[name] = dist
        todo.extend(md.distribution(r) for r in _plain_requirements(dist))
    return out


def _min_python(dists: dict[str, md.Distribution]) -> tuple[int, ...]:
    need = _requires_python()
    for dist in dists.values():
        spec = dist.metadata.get("Requires-Python") or ""
        for major, minor in re.findall(r">=\s*(\d+)\.(\d+)", spec):
            need = max(need, (int(major), int(minor)))
    return need


def _wanted(rel: str) -> bool:
    parts = rel.replace("\\", "/").split("/")
    return not (set(parts[:-1]) & SKIP_DIRS) and not rel.endswith(SKIP_SUFFIXES)


def dist_files(dist: md.Distribution) -> list[tuple[str, Path]]:
    """(path in vendor/, file on disk) for the importable files of ``dist``: its top-level
    packages and modules, leaving out private shims (PyYAML's ``_yaml``) and metadata."""
    entries = []
    for f in dist.files or []:
        rel = str(f).replace("\\", "/")
        first = rel.split("/")[0]
        if first.startswith(("..", "_")) or first.endswith((".dist-info", ".egg-info", ".data")):
            continue
        if _wanted(rel):
            entries.append((rel, Path(dist.locate_file(f))))
    return entries


def licence_files(dist: md.Distribution) -> list[tuple[str, Path]]:
    name = dist.metadata["Name"]
    return [(f"licences/{name}-{Path(str(f)).name}", Path(dist.locate_file(f)))
            for f in dist.files or []
            if re.search(r"(LICEN[CS]E|COPYING|NOTICE)", Path(str(f)).name, re.IGNORECASE)]


# -- assembling the zip ------------------------------------------------------------------

def _tree(folder: Path, prefix: str) -> list[tuple[str, Path]]:
    out = []
    for f in sorted(folder.rglob("*")):
        if not f.is_file():
            continue
        rel = f.relative_to(folder).as_posix()
        if _wanted(rel):
            out.append((f"{prefix}{rel}", f))
    return out


def contents(version: str) -> tuple[dict[str, bytes], dict]:
    """Every file of the package (zip path -> bytes) and the BUNDLE.json record."""
    files: dict[str, bytes] = {}
    for rel, f in _tree(ACTION, "plugins/"):
        files[rel] = f.read_bytes()
    files["plugins/netaudit_bom.py"] = GENERATOR.read_bytes()
    own = [(rel, f) for rel, f in _tree(PACKAGE, "plugins/vendor/netaudit/")
           if f"netaudit/{f.relative_to(PACKAGE).as_posix()}" not in LEFT_OUT_MODULES]
    for rel, f in own:
        files[rel] = f.read_bytes()

    sources = [f for _rel, f in own if f.suffix == ".py"] + sorted(ACTION.glob("*.py")) + [GENERATOR]
    modules = third_party(imported_top_levels(sources, REPO))
    dists = bundled_distributions(modules)
    for dist in dists.values():
        for rel, f in dist_files(dist) + licence_files(dist):
            files[f"plugins/vendor/{rel}"] = f.read_bytes()

    bundle = {
        "netaudit": version,
        "libraries": {name: d.version for name, d in sorted(dists.items())},
        "imported_by_netaudit": sorted(modules),
        "requires_python": list(_min_python(dists)),
        "compiled_extensions": "left out; pure-Python fallbacks are used",
    }
    files["plugins/vendor/BUNDLE.json"] = (json.dumps(bundle, indent=2, sort_keys=True) + "\n").encode()
    files["resources/icon.png"] = ICON.read_bytes()
    files["metadata.json"] = (json.dumps(metadata(version), indent=2) + "\n").encode()
    return files, bundle


def _timestamp() -> tuple[int, ...]:
    epoch = os.environ.get("SOURCE_DATE_EPOCH", "").strip()
    seconds = int(epoch) if epoch.isdigit() else 315532800  # 1980-01-01, the zip format's first day
    return time.gmtime(max(seconds, 315532800))[:6]


def write_zip(files: dict[str, bytes], target: Path) -> Path:
    stamp = _timestamp()
    buf = io.BytesIO()
    with zipfile.ZipFile(buf, "w", zipfile.ZIP_DEFLATED, compresslevel=9) as z:
        for name in sorted(files):
            info = zipfile.ZipInfo(name, stamp)
            info.external_attr = 0o644 << 16
            info.compress_type = zipfile.ZIP_DEFLATED
            z.writestr(info, files[name])
    target.parent.mkdir(parents=True, exist_ok=True)
    tmp = target.with_name(target.name + ".tmp")
    tmp.write_bytes(buf.getvalue())
    os.replace(tmp, target)
    return target


def build(out_dir: Path) -> Path:
    version = _version()
    files, _bundle = contents(version)
    return write_zip(files, out_dir / f"netaudit-kicad-{version}.zip")


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description="Build netaudit's KiCad plugin-manager zip.")
    parser.add_argument("--out", default=str(REPO / "build" / "plugin"), help="output folder")
    args = parser.parse_args(argv)
    target = build(Path(args.out))
    print(f"wrote {target} ({target.stat().st_size // 1024} KiB); install it in KiCad with "
          "Plugin and Content Manager > Install from File...")
    return 0


if __name__ == "__main__":
    sys.exit(main())
