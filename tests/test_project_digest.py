"""The digest of a project read with its board (Design.sha256) covers the board's bytes.

A report names the design it audited by this digest, and a project folder holding a board
is audited with the board's routing: a board edited since gives different numbers, so it
must give a different digest. Checked on a copy (in tmp_path) of a real KiCad 9 project
with its board, from ../shared/real-designs; and on hand-made layouts of the hierarchy
fixture for sheets outside the root's folder and the project file.
"""

from __future__ import annotations

import shutil
from pathlib import Path

import pytest

from conftest import require_real
from netaudit.readers import read_design




def _copy(tmp_path: Path) -> Path:
    folder = require_real("battery-bms-kicad9")
    copy = tmp_path / "bms"
    copy.mkdir()
    for f in folder.iterdir():
        if f.suffix in (".kicad_pro", ".kicad_sch", ".kicad_pcb"):
            shutil.copyfile(f, copy / f.name)
    return copy


@pytest.mark.real
def test_same_project_files_give_the_same_digest(tmp_path):
    copy = _copy(tmp_path)
    first = read_design(copy)
    assert first.board is not None
    assert read_design(copy).sha256 == first.sha256
    assert read_design(copy / "bms-c1.kicad_pro").sha256 == first.sha256


@pytest.mark.real
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


@pytest.mark.real
def test_a_project_without_its_board_has_another_digest(tmp_path):
    copy = _copy(tmp_path)
    with_board = read_design(copy)
    (copy / "bms-c1.kicad_pcb").unlink()
    without = read_design(copy)
    assert without.board is None
    assert without.sha256 != with_board.sha256


# -- sheets outside the root's folder and the project file (hand-made layouts) -----------------

FIXTURES = Path(__file__).resolve().parent.parent / "fixtures" / "schematics"


def _layout(tmp_path: Path, sheet_dir: str) -> Path:
    """The hierarchy fixture with its child sheet moved to ``sheet_dir`` and a project file."""
    project = tmp_path / "layout" / "board"
    project.mkdir(parents=True)
    root = project / "hierarchy.kicad_sch"
    text = (FIXTURES / "hierarchy" / "hierarchy.kicad_sch").read_text(encoding="utf-8")
    root.write_text(text.replace('"Sheetfile" "child.kicad_sch"', f'"Sheetfile" "{sheet_dir}/child.kicad_sch"'),
                    encoding="utf-8")
    child = project / sheet_dir / "child.kicad_sch"
    child.parent.mkdir(parents=True, exist_ok=True)
    shutil.copyfile(FIXTURES / "hierarchy" / "child.kicad_sch", child)
    (project / "hierarchy.kicad_pro").write_text('{"text_variables": {}}\n', encoding="utf-8")
    return root


def _retouch(path: Path) -> None:
    data = path.read_bytes()
    at = data.index(b" ")
    path.write_bytes(data[:at] + b"\t" + data[at + 1:])


@pytest.mark.parametrize("sheet_dir", ["sheets", "../common"], ids=["subfolder", "beside the folder"])
def test_a_changed_sheet_outside_the_root_folder_changes_the_digest(tmp_path, sheet_dir):
    root = _layout(tmp_path, sheet_dir)
    before = read_design(root)
    assert len(before.sheets) == 3
    _retouch(root.parent / sheet_dir / "child.kicad_sch")
    after = read_design(root)
    assert after.nets == before.nets
    assert after.sha256 != before.sha256


def test_a_changed_project_file_changes_the_digest(tmp_path):
    root = _layout(tmp_path, "sheets")
    before = read_design(root.with_suffix(".kicad_pro"))
    root.with_suffix(".kicad_pro").write_text('{"text_variables": {"REV": "B"}}\n', encoding="utf-8")
    assert read_design(root.with_suffix(".kicad_pro")).sha256 != before.sha256
