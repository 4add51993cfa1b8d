"""--use-kicad-cli exports from a copy of the project, never in the project's own folder.

kicad-cli 9.0.8 creates ``~NAME.kicad_pro.lck`` beside the project it opens and deletes it
after (seen with strace), which changes the folder even though no design file changes.
netaudit copies what kicad-cli reads into a temporary folder and exports there. Checked
here with KiCad's own kicad-cli against the way it was run before (in the project's folder,
here on a throwaway copy): the same Design, and the project folder left as it was.

Inputs: the schematic fixtures (fixtures/schematics, hand-made), a real design from
../shared/real-designs, and small hand-made layouts built from the fixtures in tmp_path.
"""

from __future__ import annotations

import dataclasses
import shutil
import subprocess
from pathlib import Path

import pytest

from conftest import REPO_ROOT, require_real
from netaudit.readers import kicad_netlist, read_design
from netaudit.readers.kicad_project import working_copy

FIXTURES = REPO_ROOT / "fixtures" / "schematics"
FIXTURE_NAMES = sorted(p.name for p in FIXTURES.iterdir() if (p / f"{p.name}.kicad_sch").is_file())


def listing(folder: Path) -> dict[str, tuple]:
    """Every file and folder under ``folder`` (itself included): kind, size, mtime."""
    out = {".": ("folder", folder.stat().st_mtime_ns)}
    for p in sorted(folder.rglob("*")):
        st = p.lstat()
        out[str(p.relative_to(folder))] = ("folder", st.st_mtime_ns) if p.is_dir() else \
            ("file", st.st_size, st.st_mtime_ns)
    return out


def exported_in_place(kicad_cli: str, sch: Path, tmp_path: Path, tree: Path | None = None):
    """The Design as netaudit read it before: kicad-cli run in the schematic's own folder
    with the bare file name. Done on a throwaway copy of ``tree`` (default: the schematic's
    folder), so the original folder is never written."""
    tree = tree or sch.parent
    copy = tmp_path / "in-place" / tree.name
    shutil.copytree(tree, copy)
    out = tmp_path / "in-place.net"
    subprocess.run([kicad_cli, "sch", "export", "netlist", "--format", "kicadsexpr", "-o", str(out),
                    sch.name], cwd=str(copy / sch.parent.relative_to(tree)), check=True,
                   capture_output=True, timeout=600)
    return kicad_netlist.read(out.read_text(encoding="utf-8"), out, "")


def content(design):
    """What the export says about the design (the wrapper fields are the project reader's)."""
    return dataclasses.replace(design, path="", format="", sha256="", source="", board=None)


# -- with kicad-cli ---------------------------------------------------------------------------

@pytest.mark.kicad
@pytest.mark.parametrize("name", FIXTURE_NAMES)
def test_fixture_read_through_kicad_cli_leaves_its_folder_and_reads_as_before(kicad_cli, tmp_path, name):
    sch = FIXTURES / name / f"{name}.kicad_sch"
    before = listing(sch.parent)
    design = read_design(sch, use_kicad_cli=True)
    assert listing(sch.parent) == before
    assert content(design) == content(exported_in_place(kicad_cli, sch, tmp_path))


@pytest.mark.kicad
@pytest.mark.real
def test_real_project_read_through_kicad_cli_leaves_its_folder_and_reads_as_before(kicad_cli, tmp_path):
    folder = require_real("battery-bms-kicad9")          # KiCad 9 project, four sub-sheets, a board
    before = listing(folder)
    design = read_design(folder, use_kicad_cli=True)
    assert listing(folder) == before                      # no lock file made there, not even for a while
    sch = folder / "bms-c1.kicad_sch"
    assert content(design) == content(exported_in_place(kicad_cli, sch, tmp_path))
    assert len(design.sheets) > 1 and design.nets


@pytest.mark.kicad
@pytest.mark.real
def test_kicad_cli_export_names_the_schematic_where_it_is_not_the_copy(kicad_cli):
    folder = require_real("event-badge-i2c-mux/hexpansion")
    design = read_design(folder, use_kicad_cli=True)
    assert design.source == str(folder.resolve() / "hexpansion.kicad_sch")


def _moved_hierarchy(tmp_path: Path, sheet_dir: str) -> Path:
    """The hierarchy fixture with its child sheet moved to ``sheet_dir`` (relative to the
    root's folder) and the root's two sheet symbols pointed there (hand-made layout)."""
    project = tmp_path / "layout" / "board"
    project.mkdir(parents=True)
    root = project / "hierarchy.kicad_sch"
    text = (FIXTURES / "hierarchy" / "hierarchy.kicad_sch").read_text(encoding="utf-8")
    assert text.count('"Sheetfile" "child.kicad_sch"') == 2
    root.write_text(text.replace('"Sheetfile" "child.kicad_sch"', f'"Sheetfile" "{sheet_dir}/child.kicad_sch"'),
                    encoding="utf-8")
    child = project / sheet_dir / "child.kicad_sch"
    child.parent.mkdir(parents=True, exist_ok=True)
    shutil.copyfile(FIXTURES / "hierarchy" / "child.kicad_sch", child)
    return root


@pytest.mark.kicad
@pytest.mark.parametrize("sheet_dir", ["sheets", "../common"], ids=["subfolder", "beside the folder"])
def test_sheets_in_other_folders_are_copied_in_their_layout(kicad_cli, tmp_path, sheet_dir):
    root = _moved_hierarchy(tmp_path, sheet_dir)
    watched = root.parent.parent
    before = listing(watched)
    design = read_design(root, use_kicad_cli=True)
    assert listing(watched) == before
    assert content(design) == content(exported_in_place(kicad_cli, root, tmp_path, tree=watched))
    # The child sheet was found: the same nets and parts as the fixture in its own layout.
    same = read_design(FIXTURES / "hierarchy" / "hierarchy.kicad_sch", use_kicad_cli=True)
    assert design.parts and design.nets
    assert {n.name: n.nodes for n in design.nets} == {n.name: n.nodes for n in same.nets}
    assert [p.ref for p in design.parts] == [p.ref for p in same.parts]


# -- the copy itself (no KiCad needed) --------------------------------------------------------

def test_working_copy_takes_schematics_project_and_library_tables_and_leaves_the_rest(tmp_path):
    project = tmp_path / "proj"
    (project / "sub").mkdir(parents=True)
    (project / "proj-backups").mkdir()
    (project / ".git").mkdir()
    for rel in ("proj.kicad_sch", "proj.kicad_pro", "sym-lib-table", "fp-lib-table", "sub/page.kicad_sch",
                "proj.kicad_pcb", "proj.kicad_prl", "notes.txt", "proj-backups/proj.kicad_sch",
                ".git/x.kicad_sch"):
        (project / rel).write_text("(x)\n", encoding="utf-8")
    work = working_copy(project / "proj.kicad_sch", tmp_path / "copy")
    copied = sorted(str(p.relative_to(work)) for p in work.rglob("*") if p.is_file())
    assert copied == ["fp-lib-table", "proj.kicad_pro", "proj.kicad_sch", "sub/page.kicad_sch", "sym-lib-table"]


def test_working_copy_follows_relative_sheets_out_of_the_folder_and_keeps_their_layout(tmp_path):
    project = tmp_path / "tree" / "boards" / "main"
    project.mkdir(parents=True)
    (project / "main.kicad_sch").write_text(
        '(kicad_sch (sheet (property "Sheetfile" "../../lib/power.kicad_sch")))\n', encoding="utf-8")
    lib = tmp_path / "tree" / "lib"
    lib.mkdir()
    (lib / "power.kicad_sch").write_text(
        '(kicad_sch (sheet (property "Sheet file" "ldo.kicad_sch")))\n', encoding="utf-8")
    (lib / "ldo.kicad_sch").write_text("(kicad_sch)\n", encoding="utf-8")
    (lib / "unused.kicad_sch").write_text("(kicad_sch)\n", encoding="utf-8")
    work = working_copy(project / "main.kicad_sch", tmp_path / "copy")
    assert (work / "main.kicad_sch").is_file()
    assert (work / "../../lib/power.kicad_sch").resolve().read_text(encoding="utf-8").startswith("(kicad_sch (sheet")
    assert (work / "../../lib/ldo.kicad_sch").resolve().is_file()      # named by the outside sheet
    assert not (work / "../../lib/unused.kicad_sch").resolve().exists()
    assert work.resolve().is_relative_to((tmp_path / "copy").resolve())
