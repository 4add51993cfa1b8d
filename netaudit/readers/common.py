"""Helpers shared by the readers: file loading, hashing, KiCad's name escapes."""

from __future__ import annotations

import hashlib
import re
from pathlib import Path

from ..errors import InputError

# KiCad writes some characters of generated net names as brace escapes in S-expression
# netlists (seen: "{slash}" in KiCad 9.0.8 exports, where the XML export writes "/").
# The other entries are from memory of KiCad's string escaping; unknown words are left as is.
_KICAD_ESCAPES = {
    "slash": "/", "backslash": "\\", "lt": "<", "gt": ">", "colon": ":",
    "dblquote": '"', "quote": "'", "tab": "\t", "return": "\n", "space": " ",
    "comma": ",", "brace": "{",
}
_ESCAPE_RE = re.compile(r"\{(" + "|".join(_KICAD_ESCAPES) + r")\}")


def unescape_kicad(text: str) -> str:
    """Undo KiCad's ``{slash}``-style escapes in a name."""
    if "{" not in text:
        return text
    return _ESCAPE_RE.sub(lambda m: _KICAD_ESCAPES[m.group(1)], text)


def read_bytes(path: Path) -> bytes:
    try:
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

    pins = {p.ref: {pin.number: pin for pin in p.pins} for p in parts}
    out = []
    for net in nets:
        if all(node.pin_function or node.pin_type for node in net.nodes):
            out.append(net)
            continue
        nodes = []
        for node in net.nodes:
            pin = pins.get(node.ref, {}).get(node.pin)
            if pin is not None and not (node.pin_function or node.pin_type):
                node = Node(node.ref, node.pin, pin.name, pin.type)
            nodes.append(node)
        out.append(Net(net.name, tuple(nodes), net.code, net.net_class))
    return tuple(out)
