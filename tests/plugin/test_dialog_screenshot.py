"""A screenshot of the findings dialog, made under Xvfb with the real wx and pcbnew.

Runs dialog_shot.py in KiCad's Python (Debian's /usr/bin/python3, which has KiCad's wx and
pcbnew) against the installed plugin package and usb-interface-explorer's real board.
The picture is kept as a test artefact: test-artifacts/plugin/findings-dialog.png.
"""

from __future__ import annotations

import json
import os
import select
import shutil
import subprocess
from pathlib import Path

import pytest

from conftest import require_real

pytestmark = [pytest.mark.kicad, pytest.mark.real]

HERE = Path(__file__).resolve().parent
ARTIFACT = HERE.parents[1] / "test-artifacts" / "plugin" / "findings-dialog.png"
SYSTEM_PYTHON = "/usr/bin/python3"


@pytest.fixture(scope="module")
def display():
    """A private Xvfb server. ``-displayfd`` makes the server pick a free display number
    itself, so test runs in parallel (xvfb-run -a races on the lock files) cannot collide.
    ``-noreset``: the dialog's process opens a first connection and closes it before opening
    the one it keeps (seen with strace); with no other client left the server resets, and a
    connection arriving during the reset fails ("wxEntryStart failed": 4 of about 110 runs
    here). Back-to-back clients on a loaded machine: 9 of 400 failed without the option,
    0 of 600 with it."""
    xvfb = shutil.which("Xvfb")
    if xvfb is None:
        pytest.skip("Xvfb not installed (Debian package xvfb)")
    read_end, write_end = os.pipe()
    server = subprocess.Popen([xvfb, "-displayfd", str(write_end), "-screen", "0", "1280x800x24",
                               "-nolisten", "tcp", "-noreset"], pass_fds=(write_end,),
                              stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    os.close(write_end)
    try:
        ready, _w, _x = select.select([read_end], [], [], 30)
        number = os.read(read_end, 32).decode().strip() if ready else ""
        if not number:
            pytest.skip("Xvfb did not start within 30 s")
        yield f":{number}"
    finally:
        os.close(read_end)
        server.terminate()
        server.wait(timeout=30)


@pytest.fixture(scope="module")
def shot(kicad_install, display):
    probe = subprocess.run([SYSTEM_PYTHON, "-c", "import wx, pcbnew"], capture_output=True, timeout=120)
    if probe.returncode != 0:
        pytest.skip(f"wx and pcbnew do not both import in {SYSTEM_PYTHON} (KiCad and its wxPython)")
    board = require_real("usb-interface-explorer") / "glasgow.kicad_pcb"
    plugins, name = kicad_install
    ARTIFACT.parent.mkdir(parents=True, exist_ok=True)
    if ARTIFACT.exists():
        ARTIFACT.unlink()
    env = dict(os.environ, DISPLAY=display)
    env.pop("WAYLAND_DISPLAY", None)
    proc = subprocess.run([SYSTEM_PYTHON, str(HERE / "dialog_shot.py"), str(plugins), name, str(board),
                           str(ARTIFACT)], capture_output=True, text=True, timeout=300, check=False, env=env)
    assert proc.returncode == 0, proc.stderr[-2000:]
    return json.loads(proc.stdout.strip().splitlines()[-1])


def test_screenshot_is_saved_as_a_test_artefact(shot):
    data = ARTIFACT.read_bytes()
    assert data[:8] == b"\x89PNG\r\n\x1a\n"
    assert shot["size"][0] >= 600 and shot["size"][1] >= 300
    assert shot["colours"] > 8   # text, list and buttons drawn, not a blank grab


def test_dialog_lists_every_finding(shot):
    assert shot["rows"] == shot["findings"] > 0


def test_picking_a_row_selects_its_parts_on_the_board(shot):
    assert shot["selected"] == sorted(shot["first_refs"])
    assert shot["status"].startswith(f"selected {len(shot['first_refs'])} footprint")
