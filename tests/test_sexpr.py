"""The S-expression tokenizer: atoms, quoted strings, escapes, error positions, depth.

Quoting and escape rules are KiCad's: KiCad's writer quotes a string that is empty, starts
with '#' or '"', or holds a space, tab, parenthesis or line break, and escapes '"', '\\',
newline and carriage return with a backslash; KiCad's reader also takes the C escapes
(a b f n r t v), \\x hex and octal byte escapes, and keeps any other backslash (KiCad 9
source, common/richio.cpp OUTPUTFORMATTER::Quotes and common/dsnlexer.cpp NextTok).
"""

from __future__ import annotations

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from netaudit.errors import InputError
from netaudit.readers import sexpr


def parse_error(text: str) -> InputError:
    with pytest.raises(InputError) as info:
        sexpr.parse(text, "t.net")
    return info.value


# -- atoms and strings ------------------------------------------------------------------

def test_bare_atoms_come_back_as_strings():
    # KiCad 5 writes unquoted atoms: (export (version D) (pin (num 1) (name ~RESET)))
    assert sexpr.parse("(export (version D) (pin (num 1) (name ~RESET)))") == \
        ["export", ["version", "D"], ["pin", ["num", "1"], ["name", "~RESET"]]]


def test_quoted_and_bare_forms_of_a_word_read_the_same():
    assert sexpr.parse('(ref "R1")') == sexpr.parse("(ref R1)")


def test_quoted_string_keeps_spaces_and_parentheses():
    assert sexpr.parse('(name "/PCIE M2 key E (x) /")') == ["name", "/PCIE M2 key E (x) /"]


def test_escaped_quotes_inside_a_string():
    assert sexpr.parse(r'(value "12\" rack")') == ["value", '12" rack']


def test_escaped_backslash_before_closing_quote():
    assert sexpr.parse(r'(value "C:\\")') == ["value", "C:\\"]


def test_newline_and_return_escapes():
    assert sexpr.parse(r'(t "a\nb\rc\td")') == ["t", "a\nb\rc\td"]


def test_unknown_backslash_escape_keeps_the_backslash():
    # KiCad's lexer: a backslash before a character with no escape meaning stays.
    assert sexpr.parse(r'(t "a\qb")') == ["t", "a\\qb"]


def test_hex_and_octal_byte_escapes():
    assert sexpr.parse(r'(t "\x41\102\x")') == ["t", "ABx"]


def test_empty_quoted_string_is_an_empty_atom():
    assert sexpr.parse('(field (name "Description") "")') == ["field", ["name", "Description"], ""]


def test_quote_after_first_character_belongs_to_a_bare_atom():
    # KiCad 5's writer leaves 10" unquoted (only a leading '"' forces quoting).
    assert sexpr.parse('(value 10")') == ["value", '10"']


def test_non_ascii_text_reads_unchanged():
    assert sexpr.parse('(value "4,7 kΩ ±1 %")') == ["value", "4,7 kΩ ±1 %"]


def test_no_break_space_is_part_of_an_atom():
    assert sexpr.parse("(v 4.7\u00a0k)") == ["v", "4.7\u00a0k"]


def test_form_feed_is_not_a_separator():
    # KiCad's lexer separates on space, tab, CR, LF only.
    assert sexpr.parse("(v a\fb)") == ["v", "a\fb"]


def test_line_starting_with_hash_is_a_comment():
    assert sexpr.parse("(a\n  # a comment (with parentheses\n  b)") == ["a", "b"]


def test_hash_inside_a_line_is_an_atom():
    assert sexpr.parse("(ref #PWR01)") == ["ref", "#PWR01"]


def test_crlf_line_endings_are_white_space():
    assert sexpr.parse('(a\r\n  (b "x")\r\n)\r\n') == ["a", ["b", "x"]]


def test_string_may_span_lines():
    assert sexpr.parse('(t "one\ntwo")') == ["t", "one\ntwo"]


# -- error positions --------------------------------------------------------------------

def test_error_names_file_line_and_column():
    err = parse_error('(export\n  (version "E")\n  ))')
    assert (err.path, err.line, err.column) == ("t.net", 3, 4)
    assert str(err).startswith("t.net:3:4: ")


def test_unterminated_string_points_at_its_opening_quote():
    err = parse_error('(export\n  (name "abc\n')
    assert (err.line, err.column) == (2, 9)
    assert "unterminated" in err.message


def test_string_ending_in_a_lone_backslash_is_unterminated():
    err = parse_error('(a "abc\\')
    assert (err.line, err.column) == (1, 4)


def test_unclosed_parenthesis_reports_end_of_file_and_innermost_opening():
    err = parse_error("(export\n  (design\n    (source x)")
    assert (err.line, err.column) == (3, 15)
    assert "2 parentheses" in err.message and "2:3" in err.message


def test_extra_closing_parenthesis_is_reported_where_it_stands():
    err = parse_error("(a (b))\n)")
    assert (err.line, err.column) == (2, 1)


def test_second_top_level_expression_is_refused():
    err = parse_error("(a)\n(b)")
    assert (err.line, err.column) == (2, 1)
    assert "after the end" in err.message


def test_trailing_atom_after_the_expression_is_refused():
    err = parse_error("(a) junk")
    assert (err.line, err.column) == (1, 5)
    assert "after the end" in err.message


def test_leading_atom_is_refused():
    err = parse_error("junk (a)")
    assert (err.line, err.column) == (1, 1)


def test_columns_count_characters_not_bytes():
    err = parse_error('(ΩΩΩ "x)')
    assert (err.line, err.column) == (1, 6)


def test_columns_after_crlf_start_at_one():
    err = parse_error("(a\r\n)\r\n)")
    assert (err.line, err.column) == (3, 1)


def test_white_space_only_is_an_empty_file_error():
    err = parse_error(" \n\t\n")
    assert "empty" in err.message


def test_error_message_is_one_line():
    err = parse_error('(a "x\ny\nz')
    assert "\n" not in str(err)


# -- depth ------------------------------------------------------------------------------

def test_nesting_up_to_the_limit_reads():
    depth = sexpr.MAX_DEPTH
    tree = sexpr.parse("(" * depth + ")" * depth)
    for _ in range(depth - 1):
        assert len(tree) == 1
        tree = tree[0]
    assert tree == []


def test_nesting_past_the_limit_is_refused_at_the_first_deeper_parenthesis():
    depth = sexpr.MAX_DEPTH + 1
    err = parse_error("(" * depth + ")" * depth)
    assert (err.line, err.column) == (1, depth)
    assert "nesting" in err.message


def test_hundred_thousand_levels_fail_cleanly_without_recursion():
    err = parse_error("(" * 100_000)
    assert err.line == 1 and err.column == sexpr.MAX_DEPTH + 1


# -- properties -------------------------------------------------------------------------

def kicad_quote(text: str, always: bool) -> str:
    """Write an atom the way KiCad does (always=True: KiCad 6+; False: KiCad 5's rule)."""
    needs = (always or text == "" or text[0] in '#"'
             or any(c in text for c in "\t ()\n\r"))
    if not needs:
        return text
    body = (text.replace("\\", "\\\\").replace('"', '\\"')
            .replace("\n", "\\n").replace("\r", "\\r"))
    return f'"{body}"'


def write(tree, always: bool) -> str:
    # iterative writer, so deep trees do not need recursion in the test either
    out: list[str] = []
    stack: list = [(tree, 0)]
    while stack:
        node, index = stack.pop()
        if index == 0:
            out.append("(")
        if index < len(node):
            stack.append((node, index + 1))
            item = node[index]
            if index:
                out.append(" ")
            if isinstance(item, list):
                stack.append((item, 0))
            else:
                out.append(kicad_quote(item, always))
        else:
            out.append(")")
    return "".join(out)


# No NUL: KiCad's lexer takes it as white space, and netaudit refuses files holding one.
atoms = st.text(alphabet=st.characters(blacklist_categories=("Cs",), blacklist_characters="\x00"),
                max_size=12)
trees = st.recursive(
    st.lists(atoms, min_size=1, max_size=4),
    lambda inner: st.lists(st.one_of(atoms, inner), min_size=1, max_size=4),
    max_leaves=30,
)


@settings(max_examples=300, deadline=None)
@given(trees, st.booleans())
def test_anything_kicad_writes_reads_back_unchanged(tree, always):
    assert sexpr.parse(write(tree, always)) == tree


@settings(max_examples=500, deadline=None)
@given(st.text(alphabet='()" \\\n\rab\x00é', max_size=60))
def test_any_text_either_parses_or_raises_input_error_with_a_position(text):
    try:
        result = sexpr.parse(text, "fuzz.net")
    except InputError as err:
        assert err.path == "fuzz.net" and err.line >= 1 and err.column >= 1
    else:
        assert isinstance(result, list)
