"""Shared test helpers: where the real designs live, KiCad's command-line tool, the CLI.

Import the plain helpers with ``from conftest import REAL_DESIGNS, require_real, run_cli``;
use the ``kicad_cli`` fixture in a test that needs KiCad.
"""

from __future__ import annotations

import os
import shutil
import subprocess
import sys
from pathlib import Path

import pytest

REPO_ROOT = Path(__file__).resolve().parents[1]
# Seven public KiCad projects kept beside the repository, never inside it
# (see ../shared/real-designs/README.md).
REAL_DESIGNS = REPO_ROOT / ".." / "shared" / "real-designs"
# KiCad's own demo projects (Debian package kicad-demos).
KICAD_DEMOS = Path("/usr/share/kicad/demos")
# The 23 rule ids of CONTRACT.md's table "Rules (stable ids, default severity)", copied from
# it by hand (not from netaudit, so the tests compare the code against the contract).
CONTRACT_RULES = frozenset({
    "bus-line-unpaired", "bus-lines-swapped", "bus-pin-unconnected", "bus-lone-device",
    "pullup-missing", "pullup-duplicated", "pullup-parallel", "pullup-rail-mismatch",
    "pullup-to-signal", "pullup-too-strong", "pullup-too-weak", "capacitance-over-limit",
    "low-level-margin", "rail-overvoltage", "rail-high-level-unmet", "rail-voltage-unknown",
    "translator-wiring", "address-collision", "address-reserved", "address-strap-floating",
    "address-unknown", "mux-address-overlap", "speed-unsupported",
})

if str(REPO_ROOT) not in sys.path:  # the package, also when pytest runs from elsewhere
    sys.path.insert(0, str(REPO_ROOT))


def require_real(name: str) -> Path:
    """The path of ``name`` inside the real designs; skip the test when it is absent."""
    path = REAL_DESIGNS / name
    if not path.exists():
        pytest.skip(f"real design {name!r} not available: {path.resolve()} is missing "
                    "(the real designs live in ../shared/real-designs beside the repository)")
    return path


def require_demos() -> Path:
    """KiCad's demo projects folder; skip the test when KiCad's demos are not installed."""
    if not KICAD_DEMOS.is_dir():
        pytest.skip(f"KiCad demo projects not installed ({KICAD_DEMOS} missing; "
                    "Debian package kicad-demos)")
    return KICAD_DEMOS


@pytest.fixture
def kicad_cli() -> str:
    """The path of KiCad's command-line tool; skip the test when it is not on PATH."""
    path = shutil.which("kicad-cli")
    if path is None:
        pytest.skip("kicad-cli not on PATH (install KiCad 7 or newer to run this test)")
    return path


def cli_env(path_dirs: list[str] | None = None) -> dict[str, str]:
    """Environment for running netaudit in a subprocess: the package importable, and
    optionally PATH replaced by ``path_dirs``."""
    env = dict(os.environ)
    env["PYTHONPATH"] = os.pathsep.join(
        [str(REPO_ROOT)] + ([env["PYTHONPATH"]] if env.get("PYTHONPATH") else []))
    if path_dirs is not None:
        env["PATH"] = os.pathsep.join(path_dirs)
    return env


def run_cli(args, env: dict[str, str] | None = None, cwd: str | Path | None = None,
            timeout_s: float = 600.0) -> tuple[int, str, str]:
    """Run ``python -m netaudit ARGS`` in a subprocess: (exit code, stdout, stderr)."""
    proc = subprocess.run(
        [sys.executable, "-m", "netaudit", *[str(a) for a in args]],
        capture_output=True, text=True, env=env if env is not None else cli_env(),
        cwd=str(cwd) if cwd is not None else None, timeout=timeout_s, check=False)
    return proc.returncode, proc.stdout, proc.stderr
