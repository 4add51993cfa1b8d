"""Where the plugin finds netaudit and the libraries it needs.

KiCad's own Python has only the standard library and wx. The plugin-manager package
carries netaudit and its pure-Python dependencies in ``vendor/`` beside this file; a
source checkout has ``netaudit/`` two folders up. The folder found first is put at the
front of ``sys.path`` once, so the bundled copies win over any older ones the system
Python may have (Linux KiCad runs the system Python).
"""

from __future__ import annotations

import json
import sys
from pathlib import Path

HERE = Path(__file__).resolve().parent
VENDOR = HERE / "vendor"
BUNDLE_INFO = VENDOR / "BUNDLE.json"   # written by plugin/build_package.py


def netaudit_home() -> Path | None:
    """The folder holding the ``netaudit`` package: the bundle, else a source checkout."""
    for folder in (VENDOR, HERE.parents[1]):
        if (folder / "netaudit" / "__init__.py").is_file():
            return folder
    return None


def ensure() -> Path | None:
    home = netaudit_home()
    if home is not None and str(home) not in sys.path:
        sys.path.insert(0, str(home))
    return home


def bundle_info() -> dict:
    try:
        return json.loads(BUNDLE_INFO.read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return {}


def python_problem(version: tuple[int, ...] | None = None) -> str | None:
    """A sentence when this Python is older than the bundled libraries need, else None."""
    need = tuple(bundle_info().get("requires_python", (3, 10)))
    have = tuple(version or sys.version_info[:3])
    if have[:len(need)] < need:
        return (f"netaudit needs Python {'.'.join(map(str, need))} or newer; this KiCad runs "
                f"Python {'.'.join(map(str, have))}. Use the command line or the schematic "
                "generator script with a newer Python.")
    return None
