"""Bus labels: vectors (``D[0..7]``), groups (``I2C{SDA SCL}``, ``{SDA SCL}``) and bus
aliases (a group member that names an alias stands for the alias's members).

A vector ``A[3..0]`` holds A0, A1, A2, A3 (ascending whatever the written order); a named
group's members are called ``NAME.MEMBER``, an unnamed group's just ``MEMBER``. Bus members
of one bus are matched to another bus along the hierarchy by position for vectors and by
member name for groups, as KiCad matches them.
"""

from __future__ import annotations

from dataclasses import dataclass

from ..common import unescape_kicad
from .names import netname_escape

VECTOR, GROUP = "vector", "group"


@dataclass(frozen=True)
class Member:
    bare: str                     # name without sheet path: "D3", "I2C.SDA"
    key: object                   # vector: position; group: the member's own name


@dataclass(frozen=True)
class BusDef:
    kind: str
    members: tuple[Member, ...]   # leaf members (nets), nested vectors expanded


def _supersub(c: str) -> bool:
    return c in "_^~"


def parse_vector(text: str):
    """(prefix, [member names]) for a vector bus label, else None (KiCad's ParseBusVector)."""
    prefix = ""
    nesting = 0
    i = 0
    n = len(text)
    while i < n:
        c = text[i]
        if c == "{":
            if i > 0 and _supersub(text[i - 1]):
                nesting += 1
                prefix = prefix[:-1]
                i += 1
                continue
            return None
        if c == "}":
            nesting -= 1
        if c in " ]":
            return None
        if c == "[":
            break
        prefix += c
        i += 1
    i += 1
    if i >= n:
        return None
    digits = ""
    begin = end = None
    while i < n:
        if text[i] == "." and i + 1 < n and text[i + 1] == ".":
            begin = int(digits) if digits else 0
            i += 2
            break
        if not text[i].isdigit() or not text[i].isascii():
            return None
        digits += text[i]
        i += 1
    if begin is None or i >= n:
        return None
    digits = ""
    while i < n:
        if text[i] == "]":
            end = int(digits) if digits else 0
            i += 1
            break
        if not text[i].isdigit() or not text[i].isascii():
            return None
        digits += text[i]
        i += 1
    if end is None:
        return None
    suffix = ""
    while i < n:
        c = text[i]
        if c == "}":
            nesting -= 1
        elif c in "+-PN":
            suffix += c
        else:
            return None
        i += 1
    if nesting != 0 or begin == end:
        return None
    lo, hi = min(begin, end), max(begin, end)
    return prefix, [f"{prefix}{k}{suffix}" for k in range(lo, hi + 1)]


def parse_group(text: str):
    """(prefix, [member texts]) for a bus group label, else None (KiCad's ParseBusGroup)."""
    prefix = ""
    nesting = 0
    i = 0
    n = len(text)
    while i < n:
        c = text[i]
        if c == "{":
            if i > 0 and _supersub(text[i - 1]):
                nesting += 1
                prefix = prefix[:-1]
                i += 1
                continue
            break
        if c == "}":
            nesting -= 1
        if c in " []":
            return None
        prefix += c
        i += 1
    if nesting != 0:
        return None
    i += 1
    if i >= n:
        return None
    members: list[str] = []
    tmp = ""
    while i < n:
        c = text[i]
        if c == "{":
            if i > 0 and _supersub(text[i - 1]):
                nesting += 1
                tmp = tmp[:-1]
                i += 1
                continue
            return None
        if c == "}":
            if nesting:
                nesting -= 1
                i += 1
                continue
            if tmp:
                members.append(netname_escape(tmp))
            return prefix, members
        if c in " ,":
            if tmp:
                members.append(netname_escape(tmp))
            tmp = ""
            i += 1
            continue
        tmp += c
        i += 1
    return None


def parse_bus(name: str, aliases: dict[str, list[str]]) -> BusDef | None:
    """The bus a driver name stands for, or None when it names a single net."""
    text = unescape_kicad(name)
    vec = parse_vector(text)
    if vec is not None:
        _, names = vec
        return BusDef(VECTOR, tuple(Member(m, i) for i, m in enumerate(names)))
    grp = parse_group(text)
    if grp is None:
        return None
    prefix, texts = grp
    dot = prefix + "." if prefix else ""
    members: list[Member] = []
    for t in texts:
        expanded = aliases.get(t)
        for item in (expanded if expanded is not None else [t]):
            _member(item, dot, members)
    return BusDef(GROUP, tuple(members))


def _member(text: str, dot: str, out: list[Member]) -> None:
    vec = parse_vector(unescape_kicad(text))
    if vec is not None:
        for m in vec[1]:
            out.append(Member(dot + m, m))
        return
    if parse_group(unescape_kicad(text)) is not None:
        raise ValueError(f"bus group {text} nested inside a bus group")
    out.append(Member(dot + text, text))
