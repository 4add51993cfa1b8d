"""Reports are written atomically, and ``init`` never overwrites (ARCHITECTURE.md, CONTRACT.md).

A report goes to a temporary file beside its target and is renamed over it only when whole:
a failure at any point before the rename (a full disk while writing, a rename refused, an
interrupt) leaves the old report exactly as it was and no temporary file behind. ``init``
writes netaudit.yaml only where no file of that name exists (not even a dangling link), and
the file appears whole or not at all.

The design is the demo (fixtures/demo), copied into each test's own folder.
"""

from __future__ import annotations

import errno
import io
import os
import shutil
from pathlib import Path

import pytest

from conftest import REPO_ROOT
from helpers import invoke as run
from netaudit.report import io as report_io

DEMO = REPO_ROOT / "fixtures" / "demo"
OLD = "the previous report, kept until a new one is whole\n"
FORMATS = {"json": "report.json", "html": "report.html", "sarif": "report.sarif",
           "junit": "report.junit.xml", "markdown": "report.md"}


@pytest.fixture
def board(tmp_path) -> Path:
    """The demo netlist (no netaudit.yaml) in the test's own folder."""
    path = tmp_path / "greenhouse.net"
    shutil.copyfile(DEMO / "greenhouse.net", path)
    return path


def entries(folder: Path) -> list[str]:
    return sorted(p.name for p in folder.iterdir())


def one_line_naming(err: str, path: Path) -> bool:
    lines = err.splitlines()
    return len(lines) == 1 and lines[0].startswith("netaudit: ") and str(path) in lines[0]


class _FailingFile(io.TextIOWrapper):
    """A text file that writes part of what it is given, then fails as ``exc`` says."""

    exc: BaseException = OSError(errno.ENOSPC, "No space left on device")

    def write(self, text: str) -> int:
        super().write(text[: len(text) // 2])
        self.flush()
        raise self.exc


def _fdopen_failing(exc: BaseException):
    real = os.fdopen

    def fdopen(fd, *args, **kwargs):
        fh = real(fd, *args, **kwargs)
        failing = _FailingFile(fh.detach(), encoding="utf-8", newline="\n")
        failing.exc = exc
        return failing
    return fdopen


# -- a report replaced only when whole ------------------------------------------------------

@pytest.mark.parametrize("fmt", list(FORMATS))
def test_full_disk_while_writing_keeps_the_old_report_and_no_temporary_file(monkeypatch, board, fmt):
    target = board.parent / FORMATS[fmt]
    target.write_text(OLD, encoding="utf-8")
    monkeypatch.setattr(report_io.os, "fdopen", _fdopen_failing(OSError(errno.ENOSPC, "No space left on device")))
    code, _out, err = run(["check", board, f"--{fmt}", target])
    assert code == 2 and one_line_naming(err, target) and "No space left" in err
    assert target.read_text(encoding="utf-8") == OLD
    assert entries(board.parent) == sorted([board.name, target.name])


def test_refused_rename_keeps_the_old_report_and_no_temporary_file(monkeypatch, board):
    target = board.parent / "report.json"
    target.write_text(OLD, encoding="utf-8")

    def refuse(src, dst):
        raise OSError(errno.EXDEV, "Invalid cross-device link")
    monkeypatch.setattr(report_io.os, "replace", refuse)
    code, _out, err = run(["check", board, "--json", target])
    assert code == 2 and one_line_naming(err, target)
    assert target.read_text(encoding="utf-8") == OLD
    assert entries(board.parent) == sorted([board.name, target.name])


def test_interrupt_while_writing_keeps_the_old_report_and_no_temporary_file(monkeypatch, board):
    target = board.parent / "report.html"
    target.write_text(OLD, encoding="utf-8")
    monkeypatch.setattr(report_io.os, "fdopen", _fdopen_failing(KeyboardInterrupt()))
    with pytest.raises(KeyboardInterrupt):
        report_io.write_atomic(target, "<html>new</html>\n" * 1000)
    assert target.read_text(encoding="utf-8") == OLD
    assert entries(board.parent) == sorted([board.name, target.name])


def test_report_path_that_is_a_folder_is_one_clean_line_and_leaves_nothing(board):
    target = board.parent / "report.json"
    target.mkdir()
    code, _out, err = run(["check", board, "--json", target])
    assert code == 2 and one_line_naming(err, target)
    assert entries(board.parent) == sorted([board.name, target.name]) and not any(target.iterdir())


def test_new_report_is_a_new_file_so_an_open_reader_keeps_the_old_one(board):
    # Rename, not rewrite in place: a reader that opened the old report still reads it whole.
    target = board.parent / "report.json"
    target.write_text(OLD, encoding="utf-8")
    with open(target, encoding="utf-8") as reader:
        code, _out, err = run(["check", board, "--json", target, "--quiet"])
        assert code == 1, err  # the demo's deliberate faults
        assert reader.read() == OLD
    assert target.read_text(encoding="utf-8").startswith("{")
    assert entries(board.parent) == sorted([board.name, target.name])


def test_report_gets_the_permissions_of_an_ordinary_new_file(board):
    target = board.parent / "report.json"
    code, _out, err = run(["check", board, "--json", target, "--quiet"])
    assert code == 1, err
    umask = os.umask(0)
    os.umask(umask)
    assert target.stat().st_mode & 0o777 == 0o666 & ~umask


# -- init never overwrites, and writes netaudit.yaml whole or not at all ------------------------

def test_init_leaves_an_existing_netaudit_yaml_untouched(board):
    mine = board.parent / "netaudit.yaml"
    mine.write_text("# mine\nversion: 1\n", encoding="utf-8")
    stamp = mine.stat().st_mtime_ns
    code, _out, err = run(["init", board])
    assert code == 2 and one_line_naming(err, mine) and "not overwritten" in err
    assert mine.read_text(encoding="utf-8") == "# mine\nversion: 1\n" and mine.stat().st_mtime_ns == stamp
    assert entries(board.parent) == sorted([board.name, mine.name])


def test_init_does_not_write_through_a_link_named_netaudit_yaml(board, tmp_path):
    elsewhere = tmp_path / "elsewhere"
    elsewhere.mkdir()
    link = board.parent / "netaudit.yaml"
    link.symlink_to(elsewhere / "settings.yaml")  # dangling: the file it names does not exist
    code, _out, err = run(["init", board])
    assert code == 2 and one_line_naming(err, link)
    assert link.is_symlink() and not (elsewhere / "settings.yaml").exists()


def test_init_failing_while_writing_leaves_no_netaudit_yaml_and_no_temporary_file(monkeypatch, board):
    monkeypatch.setattr(report_io.os, "fdopen", _fdopen_failing(OSError(errno.ENOSPC, "No space left on device")))
    code, _out, err = run(["init", board])
    assert code == 2 and one_line_naming(err, board.parent / "netaudit.yaml")
    assert entries(board.parent) == [board.name]


def test_init_losing_a_race_to_another_writer_keeps_the_other_file(monkeypatch, board):
    # Another process creates netaudit.yaml between the check for it and the link: the
    # link must fail rather than replace that file.
    target = board.parent / "netaudit.yaml"
    real_link = os.link

    def link_after_someone_else(src, dst, *args, **kwargs):
        Path(dst).write_text("# someone else's\n", encoding="utf-8")
        return real_link(src, dst, *args, **kwargs)
    monkeypatch.setattr(report_io.os, "link", link_after_someone_else)
    code, _out, err = run(["init", board])
    assert code == 2 and one_line_naming(err, target)
    assert target.read_text(encoding="utf-8") == "# someone else's\n"
    assert entries(board.parent) == sorted([board.name, target.name])


def test_init_where_hard_links_are_refused_still_writes_the_file_once(monkeypatch, board):
    def no_links(src, dst, *args, **kwargs):
        raise OSError(errno.EPERM, "Operation not permitted")
    monkeypatch.setattr(report_io.os, "link", no_links)
    code, _out, err = run(["init", board])
    assert code == 0, err
    text = (board.parent / "netaudit.yaml").read_text(encoding="utf-8")
    assert text.startswith("# netaudit settings") and text.count("version: 1") == 1
    assert entries(board.parent) == sorted([board.name, "netaudit.yaml"])
