"""A small, iterative S-expression reader for KiCad files.

No recursion (any nesting depth up to ``MAX_DEPTH`` reads without touching Python's
recursion limit) and every error carries the file, line and column where it happened.
Quoted strings and bare atoms both come back as ``str``; lists as ``list``.
"""

from __future__ import annotations

import re

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
