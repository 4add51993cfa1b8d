"""The sheet hierarchy: every sheet instance (a sheet used twice is two instances), its
path as KiCad names it (``/IO_Banks/IO_Buffer_A/``) and the reference of each symbol in it.

References come from the per-symbol ``instances`` block (KiCad 7 and later, paths that
start with the root sheet's uuid) or from the root's ``symbol_instances`` block (KiCad 6,
paths without the root), as KiCad itself reads them.
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from pathlib import Path

from ...errors import InputError
from .model import Instance, SheetFile, SheetRef, Symbol
from .sheetfile import load, where

# The format version from which references live in each symbol (KiCad 7 changed this).
PER_SYMBOL_INSTANCES = 20221002


@dataclass
class SheetInstance:
    index: int
    file: SheetFile
    uuids: tuple[str, ...]        # sheet-symbol uuids from the root ((): the root)
    names: str                    # "/" or "/Name/Sub name/"
    parent: int | None = None
    sheet: SheetRef | None = None # the sheet symbol in the parent that places this one
    page: str = ""
    dnp: bool = False             # the sheet or one above it is marked not fitted
    excluded_from_bom: bool = False
    excluded_from_board: bool = False

    @property
    def depth(self) -> int:
        return len(self.uuids)

    @property
    def tstamps(self) -> str:
        return "/" + "".join(u + "/" for u in self.uuids)


class Hierarchy:
    def __init__(self, root: Path):
        self.root_path = root
        self.files: dict[Path, SheetFile] = {}
        self.root = self._file(root, None)
        self.instances: list[SheetInstance] = []
        self._walk()
        self.legacy = self.root.version < PER_SYMBOL_INSTANCES

    def _file(self, path: Path, referrer: tuple[SheetFile, SheetRef] | None) -> SheetFile:
        key = path.resolve()
        sf = self.files.get(key)
        if sf is None:
            if not path.is_file():
                if referrer is None:
                    raise InputError("no such schematic", str(path))
                parent, ref = referrer
                raise InputError(f"sheet \"{ref.name}\" uses {ref.file}, which does not exist "
                                 f"({path})", parent.path, *where(parent, ref.uuid))
            sf = self.files[key] = load(path)
        return sf

    def _walk(self) -> None:
        order: list[SheetInstance] = []
        stack = [(self.root, (), "/", None, None, False, False, False, (self.root_path.resolve(),))]
        while stack:
            sf, uuids, names, parent, sheet, dnp, no_bom, no_board, chain = stack.pop()
            inst = SheetInstance(len(order), sf, uuids, names, parent, sheet, "", dnp, no_bom,
                                 no_board)
            order.append(inst)
            children = []
            for ref in sf.sheets:
                if "${" in ref.name:
                    raise InputError(f"sheet name {ref.name} uses a text variable, which this "
                                     "reader does not expand in net names; use --use-kicad-cli",
                                     sf.path, *where(sf, ref.uuid))
                path = Path(sf.path).parent / ref.file.replace("\\", "/")
                if path.resolve() in chain:
                    raise InputError(f"sheet \"{ref.name}\" ({ref.file}) contains itself",
                                     sf.path, *where(sf, ref.uuid))
                child = self._file(path, (sf, ref))
                children.append((child, uuids + (ref.uuid,), names + ref.name + "/", inst.index,
                                 ref, dnp or ref.dnp, no_bom or not ref.in_bom,
                                 no_board or not ref.on_board, chain + (path.resolve(),)))
            stack.extend(reversed(children))
        for inst in order:
            inst.page = self._page(inst)
        # KiCad lists sheets by page number (numbers compared as numbers), root first.
        ranked = sorted(order[1:], key=lambda i: (_natural(i.page), i.index))
        self.instances = [order[0]] + ranked
        for n, inst in enumerate(self.instances):
            inst.index = n
        by_uuids = {i.uuids: i.index for i in self.instances}
        for inst in self.instances:
            inst.parent = by_uuids.get(inst.uuids[:-1]) if inst.uuids else None

    def _page(self, inst: SheetInstance) -> str:
        if not inst.uuids:
            return "1"
        if inst.sheet is None:
            return ""
        parent_path = "/" + "/".join(inst.uuids[:-1])
        legacy = self.root.legacy_pages.get("/" + "/".join(inst.uuids))
        if legacy is not None:
            return legacy
        for path, page in inst.sheet.pages.items():
            if _strip_root(path, self.root.uuid) == parent_path.rstrip("/") or \
                    _strip_root(path, self.root.uuid) == parent_path:
                return page
        return ""

    def instance_of(self, sym: Symbol, inst: SheetInstance) -> Instance:
        """The reference and unit of a symbol in a sheet instance.

        A symbol with no reference for this instance is refused (unless it is a power or
        other ``#`` symbol, which never appears in a netlist): KiCad treats it as not
        annotated and leaves its pins out of net naming, which happens when a sheet of a
        larger design is opened as if it were the root."""
        if self.legacy:
            found = self.root.legacy_instances.get("/" + "/".join(inst.uuids + (sym.uuid,)))
        else:
            found = sym.instances.get("/" + "/".join((self.root.uuid,) + inst.uuids))
        if found is not None:
            return found
        fallback = Instance(sym.prop("Reference"), sym.unit)
        if fallback.reference.startswith("#"):
            return fallback
        if sym.instances:
            why = ("its references belong to another root sheet, so this file is a sheet of a "
                   "larger design: read that design's root schematic or project, or")
        else:
            why = "annotate the schematic in KiCad, or"
        raise InputError(f"symbol {fallback.reference} ({sym.lib_id}) has no reference for "
                         f"sheet {inst.names}; {why} use --use-kicad-cli",
                         inst.file.path, *where(inst.file, sym.uuid))


def _strip_root(path: str, root_uuid: str | None) -> str:
    """``/root/a/b`` -> ``/a/b`` (the first element is the root schematic's uuid)."""
    parts = [p for p in path.split("/") if p]
    if parts and (root_uuid is None or parts[0] == root_uuid):
        parts = parts[1:]
    return "/" + "/".join(parts)


def _natural(text: str):
    return [(0, int(t), "") if t.isdigit() else (1, 0, t.lower())
            for t in re.findall(r"\d+|\D+", text)]
