"""A small, iterative S-expression reader for KiCad files.

No recursion (any nesting depth up to ``MAX_DEPTH`` reads without touching Python's
recursion limit) and every error carries the file, line and column where it happened.
Quoted strings and bare atoms both come back as ``str``; lists as ``list``.
"""

from __future__ import annotations

import re

from ..errors import InputError

MAX_DEPTH = 1000  # KiCad files nest about 15 deep; deeper input is not a KiCad file.

_TOKEN = re.compile(
    r"""
      (?P<space>[ \t\r\n\f\v]+)
    | (?P<open>\()
    | (?P<close>\))
    | "(?P<string>[^"\\]*(?:\\.[^"\\]*)*)"
    | (?P<atom>[^\s()"]+)
    | (?P<bad>")
    """,
    re.VERBOSE | re.DOTALL,
)
_ESCAPE = re.compile(r"\\(.)", re.DOTALL)
_ESCAPES = {"n": "\n", "t": "\t", "r": "\r", "\\": "\\", '"': '"'}


def _unescape(text: str) -> str:
    if "\\" not in text:
        return text
    return _ESCAPE.sub(lambda m: _ESCAPES.get(m.group(1), m.group(1)), text)


def position(text: str, offset: int) -> tuple[int, int]:
    """1-based line and column of a character offset."""
    line = text.count("\n", 0, offset) + 1
    start = text.rfind("\n", 0, offset) + 1
    return line, offset - start + 1


def parse(text: str, path: str = "<text>") -> list:
    """Parse one top-level S-expression list; raise InputError with line:column on bad input."""
    stack: list[list] = []
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
            pass
        elif kind == "open":
            if root is not None and not stack:
                raise fail("text after the end of the top-level expression", pos)
            if len(stack) >= MAX_DEPTH:
                raise fail(f"nesting deeper than {MAX_DEPTH} levels; not a KiCad file", pos)
            new: list = []
            if stack:
                stack[-1].append(new)
            else:
                root = new
            stack.append(new)
        elif kind == "close":
            if not stack:
                raise fail("unbalanced ')' with no matching '('", pos)
            stack.pop()
        elif kind == "bad":
            raise fail("unterminated quoted string", pos)
        else:
            if not stack:
                raise fail("expected '(' at the start of an expression", pos)
            if kind == "string":
                stack[-1].append(_unescape(m.group("string")))
            else:
                stack[-1].append(m.group("atom"))
        pos = m.end()
    if stack:
        raise fail(f"file ends inside {len(stack)} open parenthes{'is' if len(stack) == 1 else 'es'}", end)
    if root is None:
        raise InputError("empty file: no S-expression found", path)
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
