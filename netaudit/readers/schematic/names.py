"""Net-name text as KiCad writes it: escapes, pin default names, unit letters."""

from __future__ import annotations

from ..common import unescape_kicad


def netname_escape(text: str) -> str:
    """KiCad's escaping of a net name: ``/`` becomes ``{slash}``; line breaks are dropped."""
    if "/" in text:
        text = text.replace("/", "{slash}")
    if "\n" in text or "\r" in text:
        text = text.replace("\n", "").replace("\r", "")
    return text


def label_name(raw: str) -> str:
    """The driver name of a label or sheet pin: its text shown, escaped as a net name."""
    return netname_escape(unescape_kicad(raw))


def unit_letters(unit: int, first: str = "A", separator: str = "") -> str:
    """KiCad's unit suffix: 1 -> A, 26 -> Z, 27 -> AA."""
    base = ord(first)
    suffix = ""
    while True:
        u = (unit - 1) % 26
        suffix = chr(base + u) + suffix
        unit = (unit - u) // 26
        if unit <= 0:
            break
    return separator + suffix


def shown_pin_name(name: str) -> str:
    """A pin's name as KiCad shows it: ``~`` means no name."""
    return "" if name == "~" else name
