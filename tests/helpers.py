"""Helpers several test files share: the command run in this process, every report written
into one folder, a hand-made design written as a netlist file with its settings, and a copy
of the demo design.

Import them with ``from helpers import invoke, write_netlist, ...`` (tests/ is on the path,
as for ``handmade`` and ``conftest``).
"""

from __future__ import annotations

import shutil
from pathlib import Path

from click.testing import CliRunner
from test_cli import netlist_text

from conftest import REPO_ROOT
from netaudit.cli import cli
from netaudit.model import Design

DEMO_DIR = REPO_ROOT / "fixtures" / "demo"   # the greenhouse demo (our own invented scenario)
SETTINGS_NAME = "netaudit.yaml"
# Every report format -> the file the tests write it to.
REPORT_FILES = {"json": "report.json", "html": "report.html", "sarif": "report.sarif",
                "junit": "report.junit.xml", "markdown": "report.md"}


def invoke(args) -> tuple[int, str, str]:
    """Run ``netaudit ARGS`` in this process (click's test runner): (exit code, stdout, stderr).
    An exception inside the command is raised, not turned into an exit code."""
    result = CliRunner().invoke(cli, [str(a) for a in args], catch_exceptions=False)
    return result.exit_code, result.stdout, result.stderr


def report_options(folder) -> list[str]:
    """``--json FOLDER/report.json --html FOLDER/report.html ...``: every report, into ``folder``
    (a path, or a text such as ``{dir}`` that is filled in later)."""
    out: list[str] = []
    for fmt, name in REPORT_FILES.items():
        out += [f"--{fmt}", f"{folder}/{name}"]
    return out


def _write(path: Path, data: str | bytes) -> None:
    if isinstance(data, bytes):
        path.write_bytes(data)
    else:
        path.write_text(data, encoding="utf-8")


def write_netlist(path: Path, design: Design, settings: str | None = None, **netlist_options) -> Path:
    """``design`` written to ``path`` as a KiCad netlist (``test_cli.netlist_text``, which takes
    ``title`` and ``rev``); ``settings``, when given, written beside it as netaudit.yaml."""
    path.write_text(netlist_text(design, **netlist_options), encoding="utf-8")
    if settings is not None:
        _write(path.parent / SETTINGS_NAME, settings)
    return path


def copy_demo(folder: Path, settings: str | bytes | None = None) -> Path:
    """The demo netlist copied into ``folder`` (its path returned); ``settings``, when given,
    written beside it as netaudit.yaml (text as UTF-8, bytes as they are)."""
    design = folder / "greenhouse.net"
    shutil.copyfile(DEMO_DIR / "greenhouse.net", design)
    if settings is not None:
        _write(folder / SETTINGS_NAME, settings)
    return design
