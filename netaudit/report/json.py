"""The JSON report, schema ``netaudit.report/1`` (see CONTRACT.md). Deterministic output."""

from __future__ import annotations

import json
import math
import os

from .. import __version__
from ..addressing import address_map
from ..model import Design
from ..results import Audit, Device, Line, Segment
from .messages import phrase

SCHEMA = "netaudit.report/1"


def design_block(design: Design) -> dict:
    return {
        "path": os.path.basename(design.path.rstrip("/")) or design.path,
        "format": design.format,
        "sha256": design.sha256,
        "title": design.title,
        "revision": design.revision,
        "kicad_version": design.kicad_version,
        "parts": len(design.parts),
        "nets": len(design.nets),
    }


def _num(v):
    if v is None:
        return None
    if isinstance(v, float):
        if not math.isfinite(v):
            return None
        return float(f"{v:.6g}")
    return v


def _clean(obj):
    """The document with string keys, lists for tuples and floats rounded to six figures
    (non-finite ones as null). Plain types are told apart by ``type`` first: this walks
    every value of the report."""
    kind = type(obj)
    if kind is str or kind is int or kind is bool or obj is None:
        return obj
    if kind is float:
        return _num(obj)
    if isinstance(obj, dict):
        return {k if type(k) is str else str(k): _clean(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [_clean(v) for v in obj]
    return _num(obj)


def _line(line: Line) -> dict:
    b = line.budget
    out = {
        "nets": list(line.nets),
        "pullups": [{"ref": p.ref, "ohms": p.ohms, "rail": p.rail, "fitted": p.fitted,
                     "offboard": p.offboard, "sheet": p.sheet_path} for p in line.pullups],
        "series": [{"ref": s.ref, "ohms": s.ohms, "nets": list(s.nets), "fitted": s.fitted} for s in line.series],
    }
    if b is not None:
        out.update({
            "rp_ohms": b.rp_ohms, "rail_volts": b.rail_volts,
            "rp_min_ohms": b.rp_min_ohms, "rp_max_ohms": b.rp_max_ohms,
            "capacitance_farads": b.capacitance_farads, "rise_time_s": b.rise_time_s,
            "rise_time_max_s": b.rise_time_max_s, "capacitance_parts": dict(b.capacitance_parts),
            "suggested_ohms": list(b.suggestions_ohms), "pick_ohms": b.pick_ohms,
            "notes": list(b.notes),
        })
        if b.routed_length_m is not None:
            out["routed_length_m"] = b.routed_length_m
    return out


def _device(d: Device) -> dict:
    return {"ref": d.ref, "value": d.value, "role": d.role,
            "address": None if d.address is None else (f"0x{d.address:03X}" if d.address_10bit else f"0x{d.address:02X}"),
            "address_10bit": d.address_10bit, "address_source": d.address_source,
            "io_rail": d.io_rail, "io_volts": d.io_volts, "max_mode": d.max_mode,
            "pins": [{"pin": p.pin, "function": p.function, "net": p.net, "line": p.signal} for p in d.pins]}


def _segment(s: Segment) -> dict:
    return {
        "id": s.id,
        "upstream": None if s.upstream is None else
        {"ref": s.upstream.ref, "kind": s.upstream.kind, "channel": s.upstream.channel},
        "devices": [_device(d) for d in s.devices],
        "lines": {line.signal: _line(line) for line in s.lines},
    }


def report(audit: Audit) -> dict:
    findings = [{
        "rule": f.rule, "severity": f.severity.value, "bus": f.bus, "segment": f.segment,
        "line": f.line, "refs": list(f.refs), "nets": list(f.nets), "message": phrase(f),
        "data": f.data, "waived": f.waived, "waiver_reason": f.waiver_reason,
    } for f in audit.findings]
    doc = {
        "schema": SCHEMA,
        "tool": {"name": "netaudit", "version": __version__},
        "design": design_block(audit.design),
        "config": None if audit.config_path is None else
        {"path": os.path.basename(audit.config_path), "sha256": audit.config_sha256},
        "mode": audit.mode,
        "rails": [{"net": r.net, "volts": r.volts, "source": r.source} for r in audit.rails],
        "buses": [{"name": b.name, "mode": b.mode, "evidence": b.evidence,
                   "segments": [_segment(s) for s in b.segments]} for b in audit.buses],
        "address_domains": address_map(audit),
        "findings": findings,
        "summary": audit.counts(),
        "caution": CAUTION,
    }
    return _clean(doc)


CAUTION = ("netaudit flags risks; it does not certify a design. Confirm every result against the "
           "datasheets, the applicable safety standards and your organisation's own review and "
           "sign-off by qualified engineers.")


def dumps(doc: dict) -> str:
    """The document as ``json.dumps(doc, indent=2, sort_keys=True, ensure_ascii=False)``
    writes it, character for character, plus a final newline.

    The standard library's indented output runs through its pure-Python encoder, a large
    share of the time on a design with hundreds of buses; this writes the same text with
    a plain recursive walk (strings still escaped by the standard library's C routine).
    ``doc`` is what :func:`report` returns: dicts with string keys, lists, strings, ints,
    finite floats, booleans and None.
    """
    out: list[str] = []
    _write(doc, out, "\n")
    out.append("\n")
    return "".join(out)


_encode_string = json.encoder.encode_basestring  # the C routine where CPython has it


def _write(value, out: list[str], newline: str) -> None:
    kind = type(value)
    if kind is str:
        out.append(_encode_string(value))
    elif kind is dict:
        if not value:
            out.append("{}")
            return
        inner = newline + "  "
        out.append("{")
        first = True
        for key, item in sorted(value.items()):
            out.append(inner if first else "," + inner)
            first = False
            out.append(_encode_string(key))
            out.append(": ")
            _write(item, out, inner)
        out.append(newline + "}")
    elif kind is list or kind is tuple:
        if not value:
            out.append("[]")
            return
        inner = newline + "  "
        out.append("[")
        first = True
        for item in value:
            out.append(inner if first else "," + inner)
            first = False
            _write(item, out, inner)
        out.append(newline + "]")
    elif value is None:
        out.append("null")
    elif value is True:
        out.append("true")
    elif value is False:
        out.append("false")
    elif kind is int:
        out.append(int.__repr__(value))
    elif kind is float and math.isfinite(value):
        out.append(float.__repr__(value))
    else:
        raise TypeError(f"not report data: {value!r}")


def render(audit: Audit) -> str:
    return dumps(report(audit))


def render_design(design: Design) -> str:
    return dumps({"schema": SCHEMA, "tool": {"name": "netaudit", "version": __version__},
                  "design": design_block(design)})
