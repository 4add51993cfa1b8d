"""A Design from a board open in KiCad's PCB editor: a live ``pcbnew.BOARD``, no file read.

The board carries what the audit needs once the schematic has been pushed to it
("Update PCB from Schematic"): each footprint's reference, value, fields and not-fitted
marks, and each pad's number, net, pin function and pin type. Footprints the schematic
does not know are left out, as the netlist leaves them out: those marked board-only
(fiducials, logos, mounting holes added on the board) and those linked to no symbol and
on no net.

This module never imports ``pcbnew`` itself: the caller passes the board, and optionally
the ``pcbnew`` module for its attribute constants (KiCad 7 has no ``IsDNP()`` and the like).
The small ``_...`` helpers below cover the API differences between KiCad 7, 8 and 9; the
KiCad 7 and 8 method names are from memory (only KiCad 9 is installed where this was
tested) and each falls back to what the older API offers.

Differences from the schematic netlist that come from the board itself:
- the symbol library name (``lib``/``lib_part``) is not on the board; it stays empty and
  ``footprint`` carries the footprint library id;
- not-fitted marks are the footprint's own attributes, which lag the schematic's until
  the board is updated from it;
- a pad on no net but with a schematic pin behind it (pin function or type) is put on a
  net of its own named as KiCad names such nets (``unconnected-(U1-SDA-Pad4)``), so the
  audit sees an unconnected pin as it does in a netlist.
"""

from __future__ import annotations

import re
import sys
from typing import Any, Iterable

from ..model import Board, Design, Net, Node, Part, Pin, Sheet
from .common import unescape_kicad

FORMAT = "kicad-board"

# Fields the netlist keeps elsewhere or does not list as user fields.
_SKIP_FIELDS = frozenset({"reference", "value", "sheetfile", "sheetname", "ki_description",
                          "ki_keywords", "ki_fp_filters"})


def read_board(board: Any, api: Any = None) -> Design:
    """Build a Design from ``board`` (a ``pcbnew.BOARD``). ``api`` is the ``pcbnew`` module
    (imported already when KiCad runs us); None looks it up in ``sys.modules``."""
    api = api if api is not None else sys.modules.get("pcbnew")
    footprints = [fp for fp in board.GetFootprints() if not _board_only(fp, api)]
    sheet_names = _sheet_names(footprints)

    parts: list[Part] = []
    nodes: dict[str, dict[tuple[str, str], Node]] = {}
    net_info: dict[str, tuple[int, str]] = {}
    sheets: dict[str, str] = {}
    for fp in footprints:
        ref = str(fp.GetReference())
        pads = [_pad(p) for p in fp.Pads()]
        pads = [p for p in pads if p["number"]]  # unnumbered pads: holes, thermal copper
        uuid_path = _uuid_path(fp)
        if not uuid_path and not any(p["net"] for p in pads):
            continue  # no symbol behind it and on no net: a logo or a board-only part
        fields = _fields(fp)
        sheet_path = _sheet_path(uuid_path, sheet_names)
        sheet_file = _sheet_file(fp, fields)
        sheets.setdefault(sheet_path, sheet_file)
        pins: dict[str, Pin] = {}
        for p in pads:
            pins.setdefault(p["number"], Pin(p["number"], p["function"], p["type"]))
            net = p["net"]
            if not net:
                if not (p["function"] or p["type"]):
                    continue  # a mechanical pad with no pin behind it
                net = _unconnected_name(ref, p["number"], p["function"])
            node = Node(ref, p["number"], p["function"], p["type"])
            nodes.setdefault(net, {}).setdefault((ref, p["number"]), node)
            net_info.setdefault(net, (p["code"], p["class"]))
        parts.append(Part(
            ref=ref, value=str(fp.GetValue()), footprint=_fpid(fp),
            description=fields.get("Description") or fields.get("ki_description", ""),
            fields=tuple((k, v) for k, v in fields.items() if k.lower() not in _SKIP_FIELDS),
            dnp=_flag(fp, "IsDNP", "FP_DNP", api),
            exclude_from_bom=_flag(fp, "IsExcludedFromBOM", "FP_EXCLUDE_FROM_BOM", api),
            sheet_path=sheet_path, sheet_file=sheet_file,
            pins=tuple(sorted(pins.values(), key=lambda pin: natural_key(pin.number))),
        ))

    nets = tuple(
        Net(name, tuple(sorted(by_pin.values(), key=lambda n: (natural_key(n.ref), natural_key(n.pin)))),
            str(net_info[name][0]), net_info[name][1])
        for name, by_pin in sorted(nodes.items(), key=lambda kv: natural_key(kv[0])))
    path = str(board.GetFileName())
    title, revision = _title_block(board)
    return Design(
        path=path, format=FORMAT, sha256="", title=title, revision=revision,
        tool=f"pcbnew {_version(api)}".strip(), source=path,
        parts=tuple(sorted(parts, key=lambda p: natural_key(p.ref))), nets=nets,
        sheets=tuple(Sheet(p, f) for p, f in sorted(sheets.items())),
    )


def read_geometry(board: Any, api: Any = None) -> Board | None:
    """The routed geometry (tracks, vias, stackup) of ``board`` as it stands in the editor,
    edits not yet saved included; None when the module cannot write a board copy.

    KiCad's own writer saves a copy of the open board into a temporary folder
    (``pcbnew.SaveBoard(path, board, True)``: the board file only, no project settings; the
    board keeps its own file name) and the ``.kicad_pcb`` reader reads it, so the live board
    and a saved one are measured by the same code. The copy is deleted; the design's own
    files are not touched."""
    import dataclasses
    import tempfile
    from pathlib import Path

    from . import kicad_board

    api = api if api is not None else sys.modules.get("pcbnew")
    save = getattr(api, "SaveBoard", None)
    if save is None:
        return None
    with tempfile.TemporaryDirectory(prefix="netaudit-board-") as folder:
        copy = Path(folder) / "live.kicad_pcb"
        try:
            saved = save(str(copy), board, True)
        except (TypeError, RuntimeError, OSError):
            return None
        if saved is False or not copy.is_file():
            return None
        geometry = kicad_board.read_board(copy)
    return dataclasses.replace(geometry, path=str(board.GetFileName()))


def natural_key(text: str) -> tuple:
    """Sort key putting R2 before R10."""
    return tuple(int(t) if t.isdigit() else t for t in re.split(r"(\d+)", text))


# -- KiCad 7/8/9 differences -------------------------------------------------------------

def _as_dict(mapping: Any) -> dict[str, str]:
    if mapping is None:
        return {}
    items = mapping.items() if hasattr(mapping, "items") else mapping
    return {str(k): str(v) for k, v in items}


def _fields(fp: Any) -> dict[str, str]:
    """Footprint fields by name: ``GetFieldsText()`` in KiCad 8 and 9, the property map
    ``GetProperties()`` in KiCad 6 and 7 (from memory)."""
    if hasattr(fp, "GetFieldsText"):
        return _as_dict(fp.GetFieldsText())
    if hasattr(fp, "GetProperties"):
        return _as_dict(fp.GetProperties())
    return {}


def _flag(fp: Any, method: str, attribute: str, api: Any) -> bool:
    """A footprint attribute: its query method where the API has it, else the bit in
    ``GetAttributes()`` named by the ``pcbnew`` constant (0 when this KiCad has none)."""
    if hasattr(fp, method):
        return bool(getattr(fp, method)())
    mask = getattr(api, attribute, 0) if api is not None else 0
    return bool(mask and int(fp.GetAttributes()) & int(mask))


def _board_only(fp: Any, api: Any) -> bool:
    return _flag(fp, "IsBoardOnly", "FP_BOARD_ONLY", api)


def _fpid(fp: Any) -> str:
    if hasattr(fp, "GetFPIDAsString"):
        return str(fp.GetFPIDAsString())
    return str(fp.GetFPID().Format())


def _uuid_path(fp: Any) -> tuple[str, ...]:
    """The footprint's link to its symbol: sheet instance UUIDs, then the symbol's UUID."""
    try:
        text = str(fp.GetPath().AsString())
    except AttributeError:
        return ()
    return tuple(t for t in text.split("/") if t)


def _sheet_names(footprints: Iterable[Any]) -> dict[tuple[str, ...], str]:
    """Sheet instance UUID path -> sheet name, learnt from the footprints placed directly
    on each sheet (``GetSheetname()`` names a footprint's own sheet, not the whole path)."""
    names: dict[tuple[str, ...], str] = {}
    for fp in footprints:
        sheet = _uuid_path(fp)[:-1]
        if sheet:
            name = _sheet_name(fp)
            if name:
                names.setdefault(sheet, name)
    return names


def _sheet_name(fp: Any) -> str:
    if hasattr(fp, "GetSheetname"):
        return str(fp.GetSheetname())
    return _fields(fp).get("Sheetname", "")


def _sheet_file(fp: Any, fields: dict[str, str]) -> str:
    if hasattr(fp, "GetSheetfile"):
        return str(fp.GetSheetfile())
    return fields.get("Sheetfile", "")


def _sheet_path(uuid_path: tuple[str, ...], names: dict[tuple[str, ...], str]) -> str:
    """``/IO_Banks/IO_Buffer_A/`` as the netlist writes it.

    A KiCad 9 board stores that whole path as the sheet name (``/BQ76952/``); a KiCad 8
    board stores the sheet's own name (``IO_Buffer_A``), so the path is rebuilt from the
    names of the sheets above. A sheet no footprint sits on directly keeps its UUID there,
    as its name is nowhere on the board.
    """
    sheet = uuid_path[:-1]
    if not sheet:
        return "/"
    own = names.get(sheet, "")
    if own.startswith("/"):
        return own if own.endswith("/") else own + "/"
    return "/" + "".join(names.get(sheet[:i + 1], sheet[i]).strip("/") + "/" for i in range(len(sheet)))


def _pad(pad: Any) -> dict:
    number = pad.GetNumber() if hasattr(pad, "GetNumber") else pad.GetName()
    try:
        net_class = str(pad.GetNetClassName())
    except AttributeError:
        net_class = ""
    return {
        "number": str(number),
        "function": str(pad.GetPinFunction()) if hasattr(pad, "GetPinFunction") else "",
        "type": str(pad.GetPinType()) if hasattr(pad, "GetPinType") else "",
        # KiCad writes "/" in a net name as "{slash}" on the board, as in S-expression netlists
        "net": unescape_kicad(str(pad.GetNetname())),
        "code": int(pad.GetNetCode()),
        "class": net_class,
    }


def _unconnected_name(ref: str, number: str, function: str) -> str:
    return f"unconnected-({ref}-{function}-Pad{number})" if function else f"unconnected-({ref}-Pad{number})"


def _title_block(board: Any) -> tuple[str, str]:
    try:
        tb = board.GetTitleBlock()
        return str(tb.GetTitle()), str(tb.GetRevision())
    except AttributeError:
        return "", ""


def _version(api: Any) -> str:
    for name in ("GetBuildVersion", "Version"):
        fn = getattr(api, name, None) if api is not None else None
        if fn is not None:
            return str(fn())
    return ""
