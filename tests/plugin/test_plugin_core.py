"""The PCB-editor plugin's headless core through KiCad's real pcbnew module.

The board is battery-bms-kicad9/bms-c1.kicad_pcb (a KiCad 9 board). What a "selected"
item is comes from pcbnew itself (``IsSelected()``); what the board is made of is compared
through pcbnew's own writer (``SaveBoard``), before and after the plugin ran.
"""

from __future__ import annotations

import ast
import hashlib
import shutil
from pathlib import Path

import pytest

from conftest import require_real
from netaudit.readers.common import unescape_kicad
from netaudit.results import Finding, Severity

pytestmark = [pytest.mark.kicad, pytest.mark.real]

PLUGIN = Path(__file__).resolve().parents[2] / "plugin" / "netaudit_action"


@pytest.fixture
def board_copy(tmp_path, pcbnew_api):
    """A private copy of the real board, loaded through pcbnew."""
    src = require_real("battery-bms-kicad9") / "bms-c1.kicad_pcb"
    dst = tmp_path / "bms-c1.kicad_pcb"
    shutil.copyfile(src, dst)
    return dst, pcbnew_api.LoadBoard(str(dst))


def _all_items(board):
    for fp in board.GetFootprints():
        yield fp
        yield from fp.Pads()
    yield from board.GetTracks()
    yield from board.Zones()
    yield from board.GetDrawings()


def _selected(board):
    return [item for item in _all_items(board) if item.IsSelected()]


def _tracks_of(board, nets):
    return {t.m_Uuid.AsString() for t in board.GetTracks() if unescape_kicad(t.GetNetname()) in set(nets)}


def _uuids(items):
    return {i.m_Uuid.AsString() for i in items}


def test_core_modules_import_neither_wx_nor_pcbnew_at_module_level():
    for name in ("core.py", "compat.py", "_paths.py"):
        tree = ast.parse((PLUGIN / name).read_text(encoding="utf-8"))
        top = set()
        for node in tree.body:
            if isinstance(node, ast.Import):
                top |= {a.name.split(".")[0] for a in node.names}
            elif isinstance(node, ast.ImportFrom) and node.module:
                top.add(node.module.split(".")[0])
        assert not top & {"wx", "pcbnew"}, name


def test_audit_of_the_open_board_finds_its_bus(board_copy, plugin_package, pcbnew_api):
    from netaudit_action import core
    _path, board = board_copy
    audit = core.audit_board(board, pcbnew_api)
    # tests/real/expected.yaml: bms-c1 has one segment, SDA /I2C_SDA and SCL /I2C_SCL
    assert [(s.sda.nets, s.scl.nets) for b in audit.buses for s in b.segments] == \
        [(("/I2C_SDA",), ("/I2C_SCL",))]
    assert core.summary(audit).startswith("1 bus, 1 segment;")
    assert sorted(r.index for r in core.rows(audit)) == list(range(len(audit.findings)))


def test_choosing_a_finding_selects_exactly_its_footprints_and_the_tracks_of_its_nets(
        board_copy, plugin_package, pcbnew_api):
    from netaudit_action import core
    _path, board = board_copy
    audit = core.audit_board(board, pcbnew_api)
    finding = next(f for f in audit.findings if f.refs and f.nets)
    core.select_finding(board, audit, finding, pcbnew_api)
    chosen = _selected(board)
    footprints = {str(i.GetReference()) for i in chosen if i.GetClass() == "FOOTPRINT"}
    pieces = {i.m_Uuid.AsString() for i in chosen if i.GetClass() in ("PCB_TRACK", "PCB_ARC", "PCB_VIA")}
    assert footprints == set(finding.refs)
    assert pieces == _tracks_of(board, finding.nets) and pieces
    assert len(chosen) == len(footprints) + len(pieces)   # no pad, zone or drawing


def test_a_finding_without_nets_selects_the_tracks_of_its_segment(board_copy, plugin_package, pcbnew_api):
    from netaudit_action import core
    _path, board = board_copy
    # Fast-mode Plus on this bus: the BQ76952 (U4) is not rated for it, a finding with
    # a part and a segment but no nets of its own.
    audit = core.audit_board(board, pcbnew_api, mode="fast-plus")
    finding = next(f for f in audit.findings if f.refs and not f.nets and f.segment)
    selection = core.select_finding(board, audit, finding, pcbnew_api)
    assert _uuids(selection.tracks) == _tracks_of(board, ("/I2C_SDA", "/I2C_SCL"))
    assert {str(fp.GetReference()) for fp in selection.footprints} == set(finding.refs)


def test_choosing_another_finding_drops_the_previous_selection(board_copy, plugin_package, pcbnew_api):
    from netaudit_action import core
    _path, board = board_copy
    audit = core.audit_board(board, pcbnew_api)
    first = Finding("hand-made", Severity.INFO, refs=("R32", "R33"), nets=("/I2C_SDA",))
    second = Finding("hand-made", Severity.INFO, refs=("U5",), nets=())
    core.select_finding(board, audit, first, pcbnew_api)
    core.select_finding(board, audit, second, pcbnew_api)
    assert [str(i.GetReference()) for i in _selected(board)] == ["U5"]


def test_refs_missing_from_the_board_are_reported_not_selected(board_copy, plugin_package, pcbnew_api):
    from netaudit_action import core
    _path, board = board_copy
    audit = core.audit_board(board, pcbnew_api)
    selection = core.select_finding(board, audit, Finding("hand-made", Severity.INFO, refs=("U4", "U999")),
                                    pcbnew_api)
    assert selection.missing_refs == ("U999",)
    assert "not on the board: U999" in selection.describe()


def test_plugin_changes_nothing_but_selection_flags(board_copy, tmp_path, plugin_package, pcbnew_api):
    from netaudit_action import core
    path, board = board_copy
    on_disk = hashlib.sha256(path.read_bytes()).hexdigest()
    before, after = tmp_path / "before.kicad_pcb", tmp_path / "after.kicad_pcb"
    pcbnew_api.SaveBoard(str(before), board)
    audit = core.audit_board(board, pcbnew_api)
    for finding in audit.findings:
        core.select_finding(board, audit, finding, pcbnew_api)
    if core.html_available() is None:
        core.write_html(audit, str(path))
    core.clear_selection(board)
    pcbnew_api.SaveBoard(str(after), board)
    assert after.read_bytes() == before.read_bytes()          # pcbnew writes the same board
    assert hashlib.sha256(path.read_bytes()).hexdigest() == on_disk   # the file was not saved
    assert not _selected(board)


def test_html_report_is_written_beside_the_board(board_copy, plugin_package, pcbnew_api):
    from netaudit_action import core
    missing = core.html_available()
    if missing:
        pytest.skip(missing)
    path, board = board_copy
    audit = core.audit_board(board, pcbnew_api)
    written = core.write_html(audit, str(path))
    assert written == path.with_name("bms-c1-netaudit.html")
    text = written.read_text(encoding="utf-8")
    assert text.lstrip().lower().startswith("<!doctype html") and "/I2C_SDA" in text


def test_config_beside_the_board_is_used(board_copy, plugin_package, pcbnew_api):
    from netaudit_action import core
    path, board = board_copy
    # CONTRACT.md netaudit.yaml: defaults.mode names the mode of buses the file does not name
    (path.parent / "netaudit.yaml").write_text("version: 1\ndefaults:\n  mode: standard\n", encoding="utf-8")
    audit = core.audit_board(board, pcbnew_api)
    assert audit.mode == "standard"
    assert audit.config_path is not None and audit.config_path.endswith("netaudit.yaml")


def test_bad_config_beside_the_board_is_one_line_naming_the_file(board_copy, plugin_package, pcbnew_api):
    from netaudit.errors import InputError
    from netaudit_action import core
    path, board = board_copy
    (path.parent / "netaudit.yaml").write_text("version: 1\ndefaults: [not, a, mapping]\n", encoding="utf-8")
    with pytest.raises(InputError) as caught:
        core.audit_board(board, pcbnew_api)
    assert "netaudit.yaml" in str(caught.value) and "\n" not in str(caught.value)


def test_too_old_python_is_named_in_a_sentence(plugin_package):
    from netaudit_action import _paths
    need = tuple(_paths.bundle_info().get("requires_python", (3, 10)))
    assert "needs Python" in _paths.python_problem((3, 8, 10))
    assert _paths.python_problem(need + (0,)) is None


def test_the_open_board_is_audited_with_its_routing_as_the_saved_board_is(board_copy, plugin_package,
                                                                          pcbnew_api):
    """The live board's tracks and vias (through KiCad's own writer into a temporary copy)
    equal what the .kicad_pcb reader finds in the saved file, and the budgets use them."""
    from netaudit.readers import kicad_board
    from netaudit_action import core
    path, board = board_copy
    audit = core.audit_board(board, pcbnew_api)
    saved = kicad_board.read_board(path)
    assert audit.design.board is not None
    assert audit.design.board.runs == saved.runs and audit.design.board.vias == saved.vias
    assert audit.design.board.path == str(path)
    routed = [line.budget.capacitance_parts.get("routing", 0.0)
              for b in audit.buses for s in b.segments for line in s.lines]
    assert routed and all(c > 0 for c in routed)   # bms-c1's I2C lines are routed


def test_an_unsaved_edit_of_the_routing_reaches_the_audit(board_copy, plugin_package, pcbnew_api):
    """Deleting the SDA tracks in the editor (not saved) lowers SDA's routed capacitance."""
    from netaudit_action import core
    path, board = board_copy
    on_disk = path.read_bytes()

    def sda_routing(audit):
        return [s.sda.budget.capacitance_parts.get("routing", 0.0)
                for b in audit.buses for s in b.segments][0]

    before = sda_routing(core.audit_board(board, pcbnew_api))
    # Kept referenced while the board is in use, as the editor's undo list keeps them: the
    # Python wrappers of removed items must outlive their use by the board.
    removed = [t for t in board.GetTracks() if unescape_kicad(t.GetNetname()) == "/I2C_SDA"]
    for track in removed:
        board.Remove(track)
    after = sda_routing(core.audit_board(board, pcbnew_api))
    assert removed
    assert before > 0 and after < before
    assert path.read_bytes() == on_disk
    assert sorted(p.name for p in path.parent.iterdir()) == [path.name]
