"""The JSON shortcut in netaudit/readers/sexpr.py gives exactly the token loop's tree."""

from __future__ import annotations

from pathlib import Path

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from conftest import KICAD_DEMOS, REAL_DESIGNS
from netaudit.errors import InputError
from netaudit.readers import sexpr


def token_loop(text: str):
    try:
        return sexpr.parse_tokens(text)
    except InputError as exc:
        return ("error", str(exc))


def either(text: str):
    try:
        return sexpr.parse(text)
    except InputError as exc:
        return ("error", str(exc))


# Fragments chosen to hit every case the shortcut must hand back: escapes of all kinds,
# quotes touching atoms, comment lines, odd blanks, brackets, lone parentheses.
FRAGMENTS = st.sampled_from([
    "(", ")", " ", "\n", "\t", "\r\n", "a", "F.Cu", "0.25", "-1e-3", '"', '""', '"x y"', '"(paren"',
    '"a\\"b"', '"a\\\\"', '"\\n"', '"\\x41"', '"\\101"', '"\\q"', "\\", "#", "\n# note\n", "#x",
    "\x0c", "\xa0", "\x1f", "[", "]", ",", "{slash}", "µ", "\x01", "\u2028", "ab\"c",
])


@settings(max_examples=1500, deadline=None)
@given(st.lists(FRAGMENTS, max_size=30))
def test_shortcut_agrees_with_the_token_loop_on_any_text(pieces):
    text = "".join(pieces)
    assert either(text) == token_loop(text)


@settings(max_examples=300, deadline=None)
@given(st.lists(FRAGMENTS, max_size=20))
def test_shortcut_agrees_inside_a_well_formed_list(pieces):
    text = "(kicad_pcb " + "".join(pieces) + ")"
    assert either(text) == token_loop(text)


# Well-formed trees written with varied blanks: the shortcut must take every one of them.
ATOMS = st.sampled_from(["a", "F.Cu", "0.25", "-1e-3", "yes", "µm", "{slash}", "a,b", "x:y", "1_0"])
STRINGS = st.sampled_from(['""', '"x y"', '"(paren"', '"a\\"b"', '"a\\\\"', '"\\n\\t"', '"],["',
                           '","', '"\t tab"', '"line\nbreak"', '"Ω µ"', '"#"'])
BLANKS = st.sampled_from([" ", "\n", "\t", "\r\n", "\n\t\t", ""])
TREES = st.recursive(st.one_of(ATOMS, STRINGS),
                     lambda inner: st.lists(st.tuples(BLANKS, inner), max_size=6).map(
                         lambda items: "(" + "".join((b if i == 0 else b or " ") + x
                                                     for i, (b, x) in enumerate(items)) + ")"),
                     max_leaves=40)


@settings(max_examples=500, deadline=None)
@given(st.lists(st.tuples(BLANKS, TREES), max_size=5))
def test_shortcut_takes_well_formed_trees_and_agrees(items):
    text = "(kicad_pcb" + "".join(" " + b + x for b, x in items) + ")"
    fast = sexpr._parse_via_json(text)
    assert fast is not None
    assert fast == sexpr.parse_tokens(text)


def test_shortcut_is_taken_for_ordinary_kicad_text():
    text = '(kicad_pcb (version 20241229)\n\t(net 1 "/SDA")\n\t(segment (start 1 2) (end 3 4) (net 1))\n)'
    assert sexpr._parse_via_json(text) == sexpr.parse_tokens(text)


def test_shortcut_keeps_escaped_quotes_and_backslashes():
    text = r'(a "say \"hi\"" "C:\\dir" "two\nlines")'
    assert sexpr._parse_via_json(text) == ["a", 'say "hi"', "C:\\dir", "two\nlines"]


def test_shortcut_leaves_deep_nesting_to_the_token_loop():
    text = "(" * 1200 + ")" * 1200
    assert sexpr._parse_via_json(text) is None
    with pytest.raises(InputError, match="deeper than"):
        sexpr.parse(text)


def _kicad_files() -> list[Path]:
    found = []
    for root in (REAL_DESIGNS, KICAD_DEMOS):
        if root.is_dir():
            for pattern in ("*.kicad_pcb", "*.kicad_sch", "*.net"):
                found += sorted(root.rglob(pattern))
    return found


def test_shortcut_gives_the_same_tree_for_real_kicad_files():
    files = _kicad_files()[:40]
    if not files:
        pytest.skip("no real KiCad files: ../shared/real-designs and KiCad's demos are absent")
    taken = 0
    for path in files:
        text = path.read_text(encoding="utf-8")
        fast = sexpr._parse_via_json(text)
        if fast is None:
            continue  # malformed or unusual: the token loop reads it (checked by the readers' tests)
        taken += 1
        assert fast == sexpr.parse_tokens(text, str(path)), path
    assert taken >= len(files) // 2   # the shortcut is the rule for KiCad's own files
