"""Parts as KiCad's netlist export lists them: one per reference, fields in the order
and form ``kicad-cli sch export netlist`` writes them (KiCad 9)."""

from __future__ import annotations

import re

from ...model import Part, Pin
from ..common import unescape_kicad
from .build import Engine, SymInst
from .names import shown_pin_name
from .textvars import resolve


def natural_key(text: str):
    """KiCad's StrNumCmp ordering, ignoring case: digits compared as numbers."""
    return [(0, int(t), "") if t.isdigit() else (1, 0, t.lower())
            for t in re.findall(r"\d+|\D+", text)]


def listed(engine: Engine) -> list[SymInst]:
    """The symbol instances the netlist lists, in its order (sheet by sheet, by reference),
    one per reference: power and other ``#`` symbols, symbols left off the board, and the
    extra units of a multi-unit part are left out."""
    by_inst: dict[int, list[SymInst]] = {}
    for si in engine.symbols:
        by_inst.setdefault(si.inst.index, []).append(si)
    out: list[SymInst] = []
    found: set[str] = set()
    for inst in engine.h.instances:
        chosen: dict[str, SymInst] = {}
        for si in by_inst.get(inst.index, ()):
            key = si.ref
            prev = chosen.get(key)
            if prev is None or prev.sym.uuid > si.sym.uuid:
                chosen[key] = si
        for si in sorted(chosen.values(), key=lambda s: natural_key(s.ref)):
            if si.lib.unit_count > 1:
                if si.ref in found:
                    continue
                found.add(si.ref)
            if si.ref.startswith("#"):
                continue
            if not si.sym.on_board or si.inst.excluded_from_board:
                continue
            out.append(si)
    return out


def lib_source(si: SymInst) -> tuple[str, str]:
    sym = si.sym
    if not sym.lib_name or sym.lib_name == sym.lib_id:
        lib, _, part = sym.lib_id.partition(":")
        if not part:
            return "", lib
        return lib, part
    return "", sym.lib_name


def lib_pins(si: SymInst) -> tuple[Pin, ...]:
    pins = sorted(si.lib.pins, key=lambda p: natural_key(p.number))
    out: list[Pin] = []
    last = None
    for p in pins:
        if p.number == last:
            continue
        last = p.number
        out.append(Pin(shown_pin_name(p.number), shown_pin_name(p.name), p.type))
    return tuple(out)


def make_parts(engine: Engine) -> tuple[Part, ...]:
    symbols = listed(engine)
    by_ref: dict[str, list[SymInst]] = {}
    for si in engine.symbols:
        by_ref.setdefault(si.ref.lower(), []).append(si)
    libparts: dict[tuple[str, str], tuple[Pin, ...]] = {}
    for si in symbols:
        lib, _, part = si.lib.name.rpartition(":")
        libparts.setdefault((lib, part), lib_pins(si))
    parts = []
    for si in symbols:
        lib, part = lib_source(si)
        value, footprint, datasheet, description, fields = _fields(engine, si, by_ref)
        inst = si.inst
        sheet_file = inst.sheet.file if inst.sheet is not None else _basename(inst.file.path)
        value, footprint, datasheet, description = (
            resolve(x, si, engine) for x in (value, footprint, datasheet, description))
        fields = [(k, resolve(v, si, engine)) for k, v in fields]
        parts.append(Part(
            ref=si.ref, value=unescape_kicad(value) if value else "~",
            footprint=unescape_kicad(footprint), lib=lib, lib_part=part,
            description=si.lib.description,
            fields=tuple((unescape_kicad(k), unescape_kicad(v)) for k, v in fields),
            dnp=si.sym.dnp or inst.dnp,
            exclude_from_bom=(not si.sym.in_bom) or inst.excluded_from_bom,
            sheet_path=inst.names, sheet_file=sheet_file,
            pins=libparts.get((lib, part), ())))
    return tuple(parts)


def _basename(path: str) -> str:
    return path.replace("\\", "/").rsplit("/", 1)[-1]


def _fields(engine: Engine, si: SymInst, by_ref):
    fields: dict[str, str] = {}
    if si.lib.unit_count > 1:
        value = footprint = datasheet = description = ""
        min_unit = si.unit
        for other in by_ref.get(si.ref.lower(), [si]):
            unit = other.unit
            sym = other.sym
            cand = other.value
            if cand and (unit < min_unit or not value):
                value = cand
            cand = _footprint(engine, other)
            if cand and (unit < min_unit or not footprint):
                footprint = cand
            cand = sym.prop("Datasheet")
            if cand and (unit < min_unit or not datasheet):
                datasheet = cand
            cand = sym.prop("Description")
            if cand and (unit < min_unit or not description):
                description = cand
            for p in sym.properties:
                if p.private or p.mandatory:
                    continue
                if unit < min_unit or p.name not in fields:
                    fields[p.name] = p.value
            min_unit = min(unit, min_unit)
    else:
        sym = si.sym
        value = si.value
        footprint = _footprint(engine, si)
        datasheet = sym.prop("Datasheet")
        description = sym.prop("Description")
        for p in sym.properties:
            if p.private or p.mandatory:
                continue
            fields[p.name] = p.value
    fields["Footprint"] = footprint
    fields["Datasheet"] = datasheet
    fields["Description"] = description
    return value, footprint, datasheet, description, list(fields.items())


def _footprint(engine: Engine, si: SymInst) -> str:
    return engine.legacy_footprints.get(id(si.sym), si.sym.prop("Footprint"))
