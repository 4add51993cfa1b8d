"""``${NAME}`` text variables in symbol fields, resolved as KiCad resolves them for a
netlist: the symbol's own fields first, then the sheet, then the project's variables.
A variable nobody defines stays as written, as in KiCad."""

from __future__ import annotations

import re

from ...errors import InputError

_VAR = re.compile(r"\$\{([^{}]*)\}")
# Variables KiCad fills from places this reader does not follow.
_UNSUPPORTED = frozenset({"#", "##", "CURRENT_DATE", "KICAD_VERSION", "PAPER", "OP",
                          "NET_NAME", "NET_CLASS", "CONNECTION_TYPE", "SHORT_NET_NAME",
                          "PIN_NAME", "SYMBOL_KEYWORDS", "INTERSHEET_REFS", "FILEPATH",
                          "EXCLUDE_FROM_SIM", "ISSUE_DATE", "VCSHASH", "VCSSHORTHASH"})
_SIM = frozenset({"SIM.DEVICE", "SIM.TYPE", "SIM.PIN", "SIM.PARAMS", "SIM.LIBRARY", "SIM.NAME"})


def resolve(text: str, si, engine, depth: int = 0) -> str:
    """``text`` with the variables of a placed symbol expanded."""
    if "${" not in text or depth > 10:
        return text

    def one(m: re.Match) -> str:
        token = m.group(1)
        found = _symbol_var(token, si, engine, depth)
        if found is None:
            found = _sheet_var(token, si, engine)
        if found is None:
            found = engine.project.text_vars.get(token)
        if found is None:
            if token.upper() in _UNSUPPORTED or ":" in token:
                raise InputError(f"field text {text!r} of {si.ref} uses ${{{token}}}, which "
                                 "this reader does not expand; use --use-kicad-cli",
                                 si.inst.file.path)
            return m.group(0)
        return found

    return _VAR.sub(one, text)


def _symbol_var(token: str, si, engine, depth: int) -> str | None:
    sym = si.sym
    upper = token.upper()
    if token == "REFERENCE":
        return si.ref
    if token == "VALUE":
        return resolve(si.value, si, engine, depth + 1)
    for name in ("FOOTPRINT", "DATASHEET", "DESCRIPTION"):
        if token == name:
            return resolve(sym.prop(name), si, engine, depth + 1)
    for p in sym.properties:
        if not p.mandatory and (token == p.name or token == p.name.upper()):
            return resolve(p.value, si, engine, depth + 1)
    if upper in _SIM:
        return ""
    if token in ("FOOTPRINT_LIBRARY", "FOOTPRINT_NAME"):
        lib, _, name = sym.prop("Footprint").rpartition(":")
        return lib if token == "FOOTPRINT_LIBRARY" else name
    if token in ("SYMBOL_LIBRARY", "SYMBOL_NAME"):
        lib, _, name = sym.lib_id.rpartition(":")
        return lib if token == "SYMBOL_LIBRARY" else name
    if token == "SYMBOL_DESCRIPTION":
        return si.lib.description
    if token == "UNIT":
        from .names import unit_letters
        return unit_letters(si.unit, engine.project.unit_first, engine.project.unit_separator)
    if token == "SHORT_REFERENCE":
        return si.ref
    if token == "DNP":
        return "DNP" if (sym.dnp or si.inst.dnp) else ""
    if token == "EXCLUDE_FROM_BOM":
        return "Excluded from BOM" if (not sym.in_bom or si.inst.excluded_from_bom) else ""
    if token == "EXCLUDE_FROM_BOARD":
        return "Excluded from board" if (not sym.on_board or si.inst.excluded_from_board) else ""
    return None


def _sheet_var(token: str, si, engine) -> str | None:
    inst = si.inst
    sf = inst.file
    if token == "SHEETNAME":
        return inst.names.rstrip("/").rsplit("/", 1)[-1] if inst.sheet else ""
    if token == "SHEETPATH":
        return inst.names
    if token == "FILENAME":
        return sf.path.replace("\\", "/").rsplit("/", 1)[-1]
    if token == "PROJECTNAME":
        return engine.project.name
    if token == "TITLE":
        return sf.title
    if token == "REVISION":
        return sf.revision
    if token == "COMPANY":
        return sf.company
    return None
