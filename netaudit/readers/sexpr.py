"""A small, iterative S-expression reader for KiCad files.

No recursion (any nesting depth up to ``MAX_DEPTH`` reads without touching Python's
recursion limit) and every error carries the file, line and column where it happened.
Quoted strings and bare atoms both come back as ``str``; lists as ``list``.

Large files (boards of tens of megabytes) first try a shortcut that gives the same tree
several times faster: ``_parse_via_json`` rewrites the text into JSON with whole-string
operations (C speed) and reads it with the standard ``json`` module. Any text it cannot
treat exactly as the token loop below does goes to the token loop, which also names the
line and column of any error.
"""

from __future__ import annotations

import gc
import json
import re
import sys

from ..errors import InputError

MAX_DEPTH = 1000  # KiCad files nest about 15 deep; deeper input is not a KiCad file.

# Separators are space, tab, CR and LF and parentheses only: other characters (a form feed, a
# no-break space, a '"' after an atom's first character) belong to the atom, as in KiCad's
# own lexer. A line whose first non-blank character is '#' is a comment there, and here.
_TOKEN = re.compile(
    r"""
      (?P<space>[ \t\r\n]+)
    | (?P<open>\()
    | (?P<close>\))
    | "(?P<string>[^"\\]*(?:\\.[^"\\]*)*)"
    | (?P<atom>[^ \t\r\n()"][^ \t\r\n()]*)
    | (?P<bad>")
    """,
    re.VERBOSE | re.DOTALL,
)
# Backslash escapes inside quoted strings, as KiCad's own S-expression lexer reads them:
# \" \\ and the C letters a b f n r t v; \x with one or two hex digits; one to three octal
# digits (each such byte escape becomes the character of that code, 0-255); a lone \x is
# "x". Any other backslash stays a backslash. (KiCad 9 writes only \" \\ \n \r.)
_ESCAPE = re.compile(r"\\(x[0-9A-Fa-f]{1,2}|[0-7]{1,3}|.)", re.DOTALL)
_ESCAPES = {'"': '"', "\\": "\\", "a": "\a", "b": "\b", "f": "\f", "n": "\n", "r": "\r",
            "t": "\t", "v": "\v"}


def _escape(match: re.Match) -> str:
    code = match.group(1)
    if code in _ESCAPES:
        return _ESCAPES[code]
    if code[0] == "x":
        return chr(int(code[1:], 16)) if len(code) > 1 else "x"
    if code[0] in "01234567":
        return chr(int(code, 8) & 0xFF)
    return "\\" + code  # not an escape: keep the backslash and the character


def _unescape(text: str) -> str:
    if "\\" not in text:
        return text
    return _ESCAPE.sub(_escape, text)


def _starts_line(text: str, offset: int) -> bool:
    """True when only blanks stand between the start of the line and ``offset``."""
    start = text.rfind("\n", 0, offset) + 1
    return not text[start:offset].strip(" \t\r")


def position(text: str, offset: int) -> tuple[int, int]:
    """1-based line and column of a character offset."""
    line = text.count("\n", 0, offset) + 1
    start = text.rfind("\n", 0, offset) + 1
    return line, offset - start + 1


def parse(text: str, path: str = "<text>") -> list:
    """Parse one top-level S-expression list; raise InputError with line:column on bad input."""
    tree = _parse_via_json(text)
    if tree is not None:
        return tree
    return parse_tokens(text, path)


def parse_tokens(text: str, path: str = "<text>") -> list:
    """``parse`` by the token loop alone (the reference the JSON shortcut must agree with)."""
    stack: list[list] = []
    opened: list[int] = []  # offset of each open '(' on the stack, for error messages
    root: list | None = None

    def fail(message: str, offset: int) -> InputError:
        line, column = position(text, offset)
        return InputError(message, path, line, column)

    pos = 0
    end = len(text)
    match = _TOKEN.match
    while pos < end:
        m = match(text, pos)
        if m is None:  # pragma: no cover - the pattern matches any character
            raise fail("unreadable character", pos)
        kind = m.lastgroup
        if kind == "space":
            pos = m.end()
            continue
        if kind == "atom" and text[pos] == "#" and _starts_line(text, pos):
            newline = text.find("\n", pos)
            pos = end if newline == -1 else newline
            continue
        if not stack and root is not None:
            raise fail("text after the end of the top-level expression", pos)
        if kind == "open":
            if len(stack) >= MAX_DEPTH:
                raise fail(f"nesting deeper than {MAX_DEPTH} levels; not a KiCad file", pos)
            new: list = []
            if stack:
                stack[-1].append(new)
            else:
                root = new
            stack.append(new)
            opened.append(pos)
        elif kind == "close":
            if not stack:
                raise fail("unbalanced ')' with no matching '('", pos)
            stack.pop()
            opened.pop()
        elif kind == "bad":
            raise fail("unterminated quoted string", pos)
        elif not stack:
            raise fail("expected '(' at the start of an expression", pos)
        elif kind == "string":
            stack[-1].append(_unescape(m.group("string")))
        else:
            stack[-1].append(m.group("atom"))
        pos = m.end()
    if stack:
        line, column = position(text, opened[-1])
        count = len(stack)
        raise fail(f"file ends before {count} parenthes{'is is' if count == 1 else 'es are'} "
                   f"closed (the innermost opened at {line}:{column}); is the file cut short?", end)
    if root is None:
        raise fail("empty file: no S-expression found", 0)
    return root


# -- the shortcut through JSON ------------------------------------------------------------
# Preconditions under which the rewrite below reads a text exactly as the token loop does;
# anything else returns None and the token loop decides.
_JSON_ESCAPES_ONLY = re.compile(r"\\[^nrtbf]")  # after \\ and \" are set aside: JSON reads the rest alike
_ATOM_BEFORE_QUOTE = re.compile("\x01(?<=[^ \t\r\n()\x01]\x01)")  # 'ab"c' is one atom to KiCad
_COMMENT_LINE = re.compile(r"(?m)^[ \t\r]*#")
_ODD_BLANK = re.compile(r"[^\S \t\r\n]")  # blanks to str.split(), atom characters to KiCad
_ODD_BLANK_ASCII = "\x0b\x0c\x1c\x1d\x1e\x1f"
_json_decode = json.JSONDecoder(strict=False).decode


def _parse_via_json(text: str) -> list | None:
    """The tree of ``text`` built by the ``json`` module, or None when the shortcut does not
    apply (then the token loop reads the text, or names what is wrong with it).

    Quoted strings are cut out at their quotes (``\\`` and ``\"`` set aside first as
    control characters that cannot occur in a KiCad file). The text between two strings
    becomes JSON (every atom quoted, ``(`` as ``[`` and ``)`` as ``]``) by
    :func:`_between_to_json`; KiCad files repeat the same few such pieces (``) (pin ``)
    hundreds of thousands of times, so each distinct piece is rewritten once.
    Nesting deeper than ``MAX_DEPTH`` is left to the token loop: on CPython 3.11 with the
    default recursion limit ``json`` itself stops short of it; elsewhere the tree is measured.
    """
    if "\x01" in text or "\x02" in text or "\x03" in text or "\x00" in text:
        return None
    if "\\" in text:
        text = text.replace("\\\\", "\x02").replace('\\"', "\x03")
        if "\\" in text and _JSON_ESCAPES_ONLY.search(text):
            return None
    pieces = text.split('"')
    del text
    last = len(pieces) - 1
    if last % 2:
        return None  # a quote left open
    if last == 0:
        converted = _between_to_json(pieces[0])
        if converted is None:
            return None
        document = converted[0]
    else:
        # The first piece has no string before it and the last none after it; every piece
        # in the middle stands between two strings (the markers below stand for them).
        first = _between_to_json(pieces[0] + "\x01")
        final = _between_to_json("\x01" + pieces[last])
        distinct = list(set(pieces[2:last:2]))
        middle = _between_to_json("\x01" + "\x01".join(distinct) + "\x01")
        if first is None or final is None or middle is None:
            return None
        table = dict(zip(distinct, middle[1:-1]))
        del distinct, middle
        pieces[2:last:2] = map(table.__getitem__, pieces[2:last:2])
        pieces[0], pieces[last] = first[0], final[1]
        document = "".join(pieces)
    del pieces
    if "\x02" in document or "\x03" in document:
        document = document.replace("\x02", "\\\\").replace("\x03", '\\"')
    collecting = gc.isenabled()
    gc.disable()  # a million small lists, none of them cyclic: collection passes only cost time
    try:
        tree = _json_decode(document)
    except (ValueError, RecursionError):
        return None
    finally:
        if collecting:
            gc.enable()
    if not isinstance(tree, list):
        return None
    if (sys.version_info >= (3, 12) or sys.getrecursionlimit() > MAX_DEPTH) \
            and _deeper_than(tree, MAX_DEPTH):
        return None
    return tree


def _between_to_json(between: str) -> list[str] | None:
    """Rewrite text outside quoted strings into JSON, split at its ``\\x01`` markers (each
    stands for a string; the quotes round the marker stay on the pieces either side of it).
    None when the text holds anything the token loop must decide (a backslash, a bracket,
    an atom running into a quote, a comment line, a blank that is no separator to KiCad)."""
    if "\\" in between or "\x02" in between or "\x03" in between or "[" in between \
            or "]" in between or _ATOM_BEFORE_QUOTE.search(between) \
            or ("#" in between and _COMMENT_LINE.search(between)):
        return None
    if between.isascii():
        if any(c in between for c in _ODD_BLANK_ASCII):
            return None
    elif _ODD_BLANK.search(between):
        return None
    tokens = between.replace("(", " ( ").replace(")", " ) ").replace("\x01", " \x01 ").split()
    body = ('"' + '","'.join(tokens) + '"').replace('"(",")"', "[]").replace('"(",', "[") \
        .replace(',")"', "]")
    return body.split("\x01")


def _deeper_than(tree: list, limit: int) -> bool:
    level, depth = [tree], 1
    while level:
        if depth > limit:
            return True
        level = [c for node in level for c in node if type(c) is list]
        depth += 1
    return False

# -- small helpers for walking the parsed tree ------------------------------------------

def head(item: object) -> str | None:
    """The keyword of a list such as ``(comp ...)``, or None."""
    if isinstance(item, list) and item and isinstance(item[0], str):
        return item[0]
    return None


def children(item: list, name: str) -> list[list]:
    return [c for c in item[1:] if isinstance(c, list) and c and c[0] == name]


def child(item: list, name: str) -> list | None:
    for c in item[1:]:
        if isinstance(c, list) and c and c[0] == name:
            return c
    return None


def value(item: list, name: str, default: str = "") -> str:
    """The first atom of child ``name``: ``(value "4k7")`` -> ``4k7``."""
    c = child(item, name)
    if c is None or len(c) < 2 or not isinstance(c[1], str):
        return default
    return c[1]
