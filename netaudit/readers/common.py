"""Helpers shared by the readers: file loading, hashing, KiCad's name escapes."""

from __future__ import annotations

import hashlib
import re
from pathlib import Path

from ..errors import InputError

# KiCad writes a "/" in a net name as "{slash}" in S-expression netlists (seen in KiCad 9.0.8
# exports; the XML export of the same design writes "/"). KiCad reads back these brace words
# anywhere in a string, except right after "$", "~", "^" or "_", where braces are text markup
# (variables, overbar, superscript, subscript: "~{INT}", "SDA_{1}"). Other words stay as written.
_KICAD_ESCAPES = {
    "dblquote": '"', "quote": "'", "lt": "<", "gt": ">", "backslash": "\\", "slash": "/",
    "bar": "|", "comma": ",", "colon": ":", "space": " ", "dollar": "$", "tab": "\t",
    "return": "\n", "brace": "{",
}
_ESCAPE_RE = re.compile(r"(?<![$~^_])\{(" + "|".join(_KICAD_ESCAPES) + r")\}")


def unescape_kicad(text: str) -> str:
    """Undo KiCad's ``{slash}``-style escapes in a name."""
    if "{" not in text:
        return text
    return _ESCAPE_RE.sub(lambda m: _KICAD_ESCAPES[m.group(1)], text)


def legacy_overbar(text: str) -> str:
    """A KiCad 5 name in the overbar notation KiCad 6 and later use: ``~RESET`` -> ``~{RESET}``.

    KiCad 5 toggles the overbar at each ``~`` (``~ST~/OE`` -> ``~{ST}/OE``); a space, ``}`` or
    ``)`` also ends it, and ``~~`` is a plain tilde. A lone ``~`` (KiCad 5's empty name) and
    text already in the new notation come back unchanged.
    """
    if "~" not in text or text == "~":
        return text
    out: list[str] = []
    over = False
    i, n = 0, len(text)
    while i < n:
        ch = text[i]
        nxt = text[i + 1] if i + 1 < n else ""
        if ch == "~":
            if nxt == "{" or (nxt == "~" and text[i + 2:i + 3] == "{"):
                return text  # already the new notation
            if nxt == "~":
                out.append("~")
                i += 2
                continue
            out.append("}" if over else "~{")
            over = not over
            i += 1
            continue
        if over and ch in " })":
            out.append("}")
            over = False
        out.append(ch)
        i += 1
    if over:
        out.append("}")
    return "".join(out)


def pin_name(name: str, legacy: bool) -> str:
    """A pin name as the model keeps it: KiCad 5's ``~`` (no name) becomes ``""``."""
    if name == "~":
        return ""
    return legacy_overbar(name) if legacy else name


def read_bytes(path: Path) -> bytes:
    try:
        if path.exists() and not path.is_dir() and not path.is_file():
            raise InputError("not a regular file", str(path))
        return path.read_bytes()
    except FileNotFoundError:
        raise InputError("no such file", str(path)) from None
    except IsADirectoryError:
        raise InputError("is a folder, not a file", str(path)) from None
    except OSError as exc:
        raise InputError(f"cannot read: {exc.strerror or exc}", str(path)) from None


def decode_text(data: bytes, path: Path) -> str:
    """Text of a design file: UTF-8 (with or without BOM), else Latin-1 (KiCad 5 files).

    Binary data (NUL bytes) is refused with the offset of the first one.
    """
    if data.startswith((b"\xff\xfe", b"\xfe\xff")):
        raise InputError("UTF-16 text; KiCad writes UTF-8: save the file as UTF-8", str(path), 1, 1)
    nul = data.find(b"\x00")
    if nul != -1:
        line = data.count(b"\n", 0, nul) + 1
        column = nul - (data.rfind(b"\n", 0, nul) + 1) + 1
        raise InputError("binary data (NUL byte); not a KiCad text file", str(path), line, column)
    if data.startswith(b"\xef\xbb\xbf"):
        data = data[3:]
    try:
        return data.decode("utf-8")
    except UnicodeDecodeError:
        return data.decode("latin-1")


def sha256(data: bytes) -> str:
    return hashlib.sha256(data).hexdigest()


def complete_nodes(parts, nets):
    """Fill a node's missing pin function and type from its part's pin list.

    KiCad 5 netlists list nodes without pin functions; the library part has them.
    """
    from ..model import Net, Node

    pins: dict | None = None  # built when a first node needs it
    out = []
    for net in nets:
        if all(node.pin_function or node.pin_type for node in net.nodes):
            out.append(net)
            continue
        if pins is None:
            pins = {p.ref: {pin.number: pin for pin in p.pins} for p in parts}
        nodes = []
        for node in net.nodes:
            pin = pins.get(node.ref, {}).get(node.pin)
            if pin is not None and not (node.pin_function or node.pin_type):
                node = Node(node.ref, node.pin, pin.name, pin.type)
            nodes.append(node)
        out.append(Net(net.name, tuple(nodes), net.code, net.net_class))
    return tuple(out)
