"""Hostile and broken input: exit code 2, one line on stderr naming the file (and line:column
where the file has lines), no traceback, and the input left byte for byte as it was.

Every hostile file is written into the test's own temporary folder. The XML attacks are the
classic "billion laughs" entity expansion and an external entity reading a local file.
"""

from __future__ import annotations

import hashlib
import os
import re
from pathlib import Path

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from conftest import cli_env, require_real, run_cli
from netaudit.errors import InputError
from netaudit.readers import read_design
from netaudit.readers.sexpr import MAX_DEPTH

SMALL_NET = '(export (version "E")\n  (components\n    (comp (ref "R1") (value "4k7")))\n  (nets))\n'
TEN_MB = 10 * 1024 * 1024


def fingerprint(path: Path) -> dict[str, str]:
    """Hashes of a file, or of every file under a folder (names included)."""
    if path.is_dir():
        return {str(p.relative_to(path)): hashlib.sha256(p.read_bytes()).hexdigest()
                for p in sorted(path.rglob("*")) if p.is_file()}
    if path.is_file():
        return {path.name: hashlib.sha256(path.read_bytes()).hexdigest()}
    return {}


def check_refused(path: Path, env: dict | None = None, options: tuple = ()) -> tuple[str, tuple[int, int] | None]:
    """Run ``netaudit check PATH``; assert the one-line refusal; return the message and position."""
    before = fingerprint(path)
    code, out, err = run_cli(["check", path, *options], env=env)
    assert fingerprint(path) == before, "the input changed"
    assert "Traceback" not in err
    assert code == 2, err
    assert out == ""
    assert len(err.splitlines()) == 1 and err.endswith("\n"), err
    assert str(path) in err
    m = re.search(re.escape(str(path)) + r":(\d+):(\d+): ", err)
    return err, ((int(m.group(1)), int(m.group(2))) if m else None)


def write(path: Path, data: bytes | str) -> Path:
    if isinstance(data, str):
        data = data.encode("utf-8")
    path.write_bytes(data)
    return path


# -- S-expression input ---------------------------------------------------------------------

def test_empty_file(tmp_path):
    err, where = check_refused(write(tmp_path / "empty.net", b""))
    assert where == (1, 1) and "empty" in err


def test_white_space_only_file(tmp_path):
    _, where = check_refused(write(tmp_path / "blank.net", " \r\n\t\n"))
    assert where == (1, 1)


def test_binary_file_reports_the_first_nul_byte(tmp_path):
    # PNG signature (ISO/IEC 15948 / PNG spec: 89 50 4E 47 0D 0A 1A 0A), then a chunk length.
    png = b"\x89PNG\r\n\x1a\n\x00\x00\x00\rIHDR" + bytes(range(256))
    err, where = check_refused(write(tmp_path / "picture.net", png))
    assert where == (3, 1) and "binary" in err  # the signature holds two line feeds


def test_truncated_real_netlist_reports_end_of_file(tmp_path):
    real = require_real("usb-interface-explorer/netlist-kicad-9.0.8/glasgow.net").read_bytes()
    half = real[:real.rfind(b"\n", 0, len(real) // 2) + 1]  # cut at a line end near the middle
    err, where = check_refused(write(tmp_path / "half.net", half))
    assert where == (half.count(b"\n") + 1, 1)
    assert "cut short" in err


def test_truncated_real_xml_netlist_reports_end_of_file(tmp_path):
    real = require_real("battery-bms-kicad9/netlist-kicad-9.0.8/bms-c1.xml").read_bytes()
    half = real[:real.rfind(b"\n", 0, len(real) // 2) + 1]
    _, where = check_refused(write(tmp_path / "half.xml", half))
    assert where == (half.count(b"\n") + 1, 1)


def test_netlist_cut_inside_a_string_points_at_the_opening_quote(tmp_path):
    _, where = check_refused(write(tmp_path / "cut.net", '(export (version "E")\n  (design (source "abc'))
    assert where == (2, 19)


def test_extra_closing_parenthesis(tmp_path):
    text = SMALL_NET + ")\n"
    _, where = check_refused(write(tmp_path / "extra.net", text))
    assert where == (5, 1)


def test_missing_closing_parenthesis(tmp_path):
    text = SMALL_NET[:-2] + "\n"  # drop the last ')'
    err, where = check_refused(write(tmp_path / "short.net", text))
    assert where == (5, 1) and "1:1" in err  # the unclosed '(' is the first character


def test_ten_megabyte_single_token(tmp_path):
    err, where = check_refused(write(tmp_path / "token.net", b"A" * TEN_MB))
    assert where == (1, 1)


def test_ten_megabyte_token_inside_an_unclosed_list(tmp_path):
    head = '(export (version "E") '
    _, where = check_refused(write(tmp_path / "token2.net", head + "A" * TEN_MB))
    assert where == (1, len(head) + TEN_MB + 1)


def test_ten_megabyte_unterminated_string(tmp_path):
    head = '(export (version "E")\n (design (source '
    _, where = check_refused(write(tmp_path / "token3.net", head + '"' + "A" * TEN_MB))
    assert where == (2, len(head.split("\n")[1]) + 1)


def test_hundred_thousand_levels_of_nesting(tmp_path):
    err, where = check_refused(write(tmp_path / "deep.net", "(" * 100_000 + ")" * 100_000))
    assert where == (1, MAX_DEPTH + 1) and "nesting" in err


# -- XML input --------------------------------------------------------------------------------

BILLION_LAUGHS = """<?xml version="1.0"?>
<!DOCTYPE export [
 <!ENTITY lol "lol">
 <!ENTITY lol1 "&lol;&lol;&lol;&lol;&lol;&lol;&lol;&lol;&lol;&lol;">
 <!ENTITY lol2 "&lol1;&lol1;&lol1;&lol1;&lol1;&lol1;&lol1;&lol1;&lol1;&lol1;">
 <!ENTITY lol3 "&lol2;&lol2;&lol2;&lol2;&lol2;&lol2;&lol2;&lol2;&lol2;&lol2;">
 <!ENTITY lol4 "&lol3;&lol3;&lol3;&lol3;&lol3;&lol3;&lol3;&lol3;&lol3;&lol3;">
 <!ENTITY lol5 "&lol4;&lol4;&lol4;&lol4;&lol4;&lol4;&lol4;&lol4;&lol4;&lol4;">
 <!ENTITY lol6 "&lol5;&lol5;&lol5;&lol5;&lol5;&lol5;&lol5;&lol5;&lol5;&lol5;">
 <!ENTITY lol7 "&lol6;&lol6;&lol6;&lol6;&lol6;&lol6;&lol6;&lol6;&lol6;&lol6;">
 <!ENTITY lol8 "&lol7;&lol7;&lol7;&lol7;&lol7;&lol7;&lol7;&lol7;&lol7;&lol7;">
 <!ENTITY lol9 "&lol8;&lol8;&lol8;&lol8;&lol8;&lol8;&lol8;&lol8;&lol8;&lol8;">
]>
<export version="E"><design><source>&lol9;</source></design></export>
"""


def test_xml_entity_bomb_is_refused_before_expansion(tmp_path):
    err, where = check_refused(write(tmp_path / "bomb.xml", BILLION_LAUGHS))
    assert where == (2, 1)
    assert "lollol" not in err


def test_xml_external_entity_is_refused_and_not_read(tmp_path):
    secret = write(tmp_path / "secret.txt", "TOP-SECRET-CONTENT")
    xml = (f'<?xml version="1.0"?>\n<!DOCTYPE export [<!ENTITY x SYSTEM "file://{secret}">]>\n'
           '<export version="E"><design><source>&x;</source></design></export>\n')
    err, where = check_refused(write(tmp_path / "xxe.xml", xml))
    assert where == (2, 1)
    assert "TOP-SECRET" not in err


def test_malformed_xml_reports_the_bad_tag(tmp_path):
    xml = '<?xml version="1.0"?>\n<export version="E">\n  <design>\n</export>\n'
    err, where = check_refused(write(tmp_path / "bad.xml", xml))
    assert where == (4, 3) and "malformed XML" in err


def test_xml_with_an_undefined_entity(tmp_path):
    xml = '<export version="E">\n<design><source>&nope;</source></design></export>'
    _, where = check_refused(write(tmp_path / "undef.xml", xml))
    assert where == (2, 17)


def test_hundred_thousand_levels_of_xml_nesting_under_a_foreign_root(tmp_path):
    err, where = check_refused(write(tmp_path / "deep.xml", "<a>" * 100_000 + "</a>" * 100_000))
    assert where == (1, 1) and "<a>" in err


def test_unclosed_deep_xml_nesting(tmp_path):
    _, where = check_refused(write(tmp_path / "deep2.xml", "<export>" + "<a>" * 100_000))
    assert where is not None and where[0] == 1


# -- paths, folders and tools ------------------------------------------------------------------

def test_missing_file(tmp_path):
    err, _ = check_refused(tmp_path / "nowhere.net")
    assert "no such file" in err


def test_missing_project_file(tmp_path):
    err, _ = check_refused(tmp_path / "nowhere.kicad_pro")
    assert "no such" in err


def test_folder_with_no_project(tmp_path):
    folder = tmp_path / "notes"
    folder.mkdir()
    write(folder / "readme.txt", "not a design")
    err, _ = check_refused(folder)
    assert "no KiCad project" in err


def test_named_pipe_is_refused_without_waiting(tmp_path):
    fifo = tmp_path / "pipe.net"
    os.mkfifo(fifo)
    err, _ = check_refused(fifo)
    assert "not a regular file" in err


def test_project_without_kicad_cli_on_path_says_how_to_export(tmp_path):
    # A minimal project of our own, read through KiCad's export on request: without kicad-cli
    # the refusal says how to export a netlist by hand.
    project = tmp_path / "proj"
    project.mkdir()
    write(project / "node.kicad_pro", "{}\n")
    write(project / "node.kicad_sch", "(kicad_sch (version 20250114) (generator \"eeschema\"))\n")
    empty_bin = tmp_path / "bin"
    empty_bin.mkdir()
    env = cli_env(path_dirs=[str(empty_bin)])  # python is started by absolute path
    err, _ = check_refused(project / "node.kicad_pro", env=env, options=("--use-kicad-cli",))
    assert "kicad-cli" in err and "Export" in err and "Netlist" in err and ".net" in err


# -- in-process fuzzing: nothing but InputError escapes the readers ----------------------------

@settings(max_examples=200, deadline=None)
@given(st.binary(max_size=200), st.sampled_from([".net", ".xml", ".txt"]))
def test_random_bytes_raise_only_input_errors(tmp_path_factory, data, suffix):
    path = tmp_path_factory.mktemp("fuzz") / f"f{suffix}"
    path.write_bytes(data)
    try:
        read_design(path)
    except InputError as err:
        assert "\n" not in str(err) and str(path) in str(err)


@settings(max_examples=200, deadline=None)
@given(st.integers(min_value=0, max_value=len(SMALL_NET) - 1), st.sampled_from("()\"\\ x<>&"))
def test_one_character_changed_in_a_netlist_raises_only_input_errors(tmp_path_factory, index, char):
    text = SMALL_NET[:index] + char + SMALL_NET[index + 1:]
    path = tmp_path_factory.mktemp("mut") / "m.net"
    path.write_text(text, encoding="utf-8")
    try:
        read_design(path)
    except InputError as err:
        assert err.line is not None and err.column is not None
