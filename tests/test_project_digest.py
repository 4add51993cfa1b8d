"""The digest of a project read with its board (Design.sha256) covers the board's bytes.

A report names the design it audited by this digest, and a project folder holding a board
is audited with the board's routing: a board edited since gives different numbers, so it
must give a different digest. Checked on a copy (in tmp_path) of a real KiCad 9 project
with its board, from ../shared/real-designs.
"""

from __future__ import annotations

import shutil
from pathlib import Path

import pytest

from conftest import require_real
from netaudit.readers import read_design

pytestmark = pytest.mark.real


def _copy(tmp_path: Path) -> Path:
    folder = require_real("battery-bms-kicad9")
    copy = tmp_path / "bms"
    copy.mkdir()
    for f in folder.iterdir():
        if f.suffix in (".kicad_pro", ".kicad_sch", ".kicad_pcb"):
            shutil.copyfile(f, copy / f.name)
    return copy


def test_same_project_files_give_the_same_digest(tmp_path):
    copy = _copy(tmp_path)
    first = read_design(copy)
    assert first.board is not None
    assert read_design(copy).sha256 == first.sha256
    assert read_design(copy / "bms-c1.kicad_pro").sha256 == first.sha256


def test_one_changed_byte_of_the_board_changes_the_digest(tmp_path):
    copy = _copy(tmp_path)
    before = read_design(copy)
    pcb = copy / "bms-c1.kicad_pcb"
    data = pcb.read_bytes()
    at = data.index(b" ")                      # one space becomes a tab: the board reads the same
    pcb.write_bytes(data[:at] + b"\t" + data[at + 1:])
    after = read_design(copy)
    assert after.board == before.board and after.parts == before.parts
    assert after.sha256 != before.sha256


def test_a_project_without_its_board_has_another_digest(tmp_path):
    copy = _copy(tmp_path)
    with_board = read_design(copy)
    (copy / "bms-c1.kicad_pcb").unlink()
    without = read_design(copy)
    assert without.board is None
    assert without.sha256 != with_board.sha256
