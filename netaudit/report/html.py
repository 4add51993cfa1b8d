"""The release report: one self-contained HTML file (inline CSS and SVG, nothing fetched).

Rendered from ``templates/report.html.j2`` with Jinja2's automatic escaping; the pictures
come from :mod:`netaudit.report.svg`, which escapes every design string itself. The run
date is the only part that changes between runs of the same audit; set
``SOURCE_DATE_EPOCH`` (seconds since 1970-01-01 UTC, the reproducible-builds convention)
to fix it.
"""

from __future__ import annotations

import os
import re
from dataclasses import dataclass
from datetime import datetime, timezone
from typing import Mapping

from jinja2 import Environment, PackageLoader, StrictUndefined
from markupsafe import Markup, escape

from .. import __version__
from ..electrical.modes import get_mode
from ..errors import InputError
from ..results import Audit, Bus, Device, Finding, Line, Segment, Severity
from ..units import format_si
from . import svg
from .json import CAUTION
from .messages import phrase

SEVERITIES = (Severity.ERROR, Severity.WARNING, Severity.INFO)
_HEADINGS = {Severity.ERROR: "Errors", Severity.WARNING: "Warnings", Severity.INFO: "Information"}


# ---------------------------------------------------------------------------
# Pieces the other release formats share
# ---------------------------------------------------------------------------

def run_date(env: Mapping[str, str] | None = None) -> datetime:
    """When the report was made: ``SOURCE_DATE_EPOCH`` if set, else now (UTC, whole seconds)."""
    env = os.environ if env is None else env
    raw = env.get("SOURCE_DATE_EPOCH")
    if raw is None or raw == "":
        return datetime.now(timezone.utc).replace(microsecond=0)
    if not raw.strip().isdigit():
        raise InputError(f"SOURCE_DATE_EPOCH: '{raw}' is not a whole number of seconds since 1970")
    try:
        return datetime.fromtimestamp(int(raw.strip()), tz=timezone.utc)
    except (OverflowError, OSError, ValueError):
        raise InputError(f"SOURCE_DATE_EPOCH: '{raw}' is out of range") from None


def iso_date(when: datetime) -> str:
    return when.astimezone(timezone.utc).strftime("%Y-%m-%dT%H:%M:%SZ")


def rule_text(rule_id: str) -> dict[str, str]:
    """A rule's documentation split into summary, what, why, fix and source (Rule.doc)."""
    from ..checks import all_rules

    rule = all_rules().get(rule_id)
    out = {"summary": "", "what": "", "why": "", "fix": "", "source": "",
           "severity": rule.severity.value if rule else ""}
    if rule is None:
        return out
    lines = rule.doc.splitlines()
    head: list[str] = []
    current = None
    for i, text in enumerate(lines):
        m = re.match(r"^(What|Why|Fix|Source):\s*(.*)$", text)
        if m:
            current = m.group(1).lower()
            out[current] = m.group(2).strip()
        elif current is not None:
            if text.strip():
                out[current] = (out[current] + " " + text.strip()).strip()
        elif text.strip() and (not head or lines[i - 1].strip()):
            head.append(text.strip())
    out["summary"] = " ".join(head)
    return out


def where(f: Finding) -> str:
    """Bus, segment and line of a finding, as one short label."""
    bits = []
    if f.bus:
        bits.append(f.bus)
    if f.segment and f.segment != f.bus:
        bits.append(f.segment)
    if f.line:
        bits.append(f.line.upper())
    return " / ".join(bits) or "design"


# ---------------------------------------------------------------------------
# Address domains
# ---------------------------------------------------------------------------

@dataclass(frozen=True)
class Domain:
    """The devices one controller can address with one multiplexer channel (per level)
    switched on, as netaudit.addressing works them out (CONTRACT.md topology semantics):
    ``local`` live in the domain's own zone, ``upstream`` are seen through the multiplexer."""

    name: str
    bus: str
    local: tuple[Device, ...]
    upstream: tuple[Device, ...]


def address_domains(bus: Bus, stored) -> list[Domain]:
    """The address domains of one bus, named by the path of multiplexer channels to them.

    ``stored`` is ``Audit.address_domains``, worked out by the pipeline
    (netaudit.addressing); the report only reads them. A domain's ``local`` devices are
    those its enclosing domain (the one for its next zone up) does not hold.
    """
    segments = {s.id: s for s in bus.segments}
    mine = [d for d in stored if d.bus == bus.name]
    by_id = {d.id: d for d in mine}
    out = []
    for dom in mine:
        name = bus.name
        for zid in reversed(dom.zones[:-1]):      # every zone but the outermost heads a mux channel
            seg = segments.get(zid)
            up = seg.upstream if seg is not None else None
            if up is not None and up.kind == "mux":
                name += f" → {up.ref}" + (f" channel {up.channel}" if up.channel is not None else "")
        outer = by_id.get(dom.zones[1]) if len(dom.zones) > 1 else None
        above = {d.ref for d in outer.devices} if outer is not None else set()
        out.append(Domain(name=name, bus=bus.name,
                          local=tuple(d for d in dom.devices if d.ref not in above),
                          upstream=tuple(d for d in dom.devices if d.ref in above)))
    return out


# ---------------------------------------------------------------------------
# The page
# ---------------------------------------------------------------------------

def _fmt(v, unit: str) -> str:
    return "—" if v is None else format_si(v, unit)


def _doc_markup(text: str) -> Markup:
    """Rule documentation with ``literal`` spans shown as code; everything escaped."""
    pieces = text.split("``")
    return Markup("").join(Markup("<code>{}</code>").format(p) if i % 2 else escape(p)
                           for i, p in enumerate(pieces))


def _line_row(bus: Bus, seg: Segment, line: Line, live: list[Finding]) -> dict:
    b = line.budget
    mode = None
    try:
        mode = get_mode(bus.mode)
    except ValueError:
        pass
    thresholds = mode.edge_thresholds_v(b.rail_volts) if (mode and b and b.rail_volts) else None
    label = f"{seg.id} {line.signal.upper()}"
    hits = [f for f in live if f.segment == seg.id and (f.line == line.signal or
                                                        (f.line is None and set(f.nets) & set(line.nets)))]
    margin = None
    if b and b.rise_time_s is not None and b.rise_time_max_s:
        margin = f"{(b.rise_time_max_s - b.rise_time_s) / b.rise_time_max_s * 100:.0f} %"
    return {
        "name": line.signal.upper(), "nets": list(line.nets),
        "pullups": [f"{p.ref} {_fmt(p.ohms, 'ohm')} to {p.rail}"
                    + (" (not fitted)" if not p.fitted else "") + (" (off-board)" if p.offboard else "")
                    for p in line.pullups],
        "series": [f"{s.ref} {_fmt(s.ohms, 'ohm')}" for s in line.series],
        "rp": _fmt(b.rp_ohms if b else None, "ohm"),
        "rail": _fmt(b.rail_volts if b else None, "V"),
        "window": (f"{_fmt(b.rp_min_ohms, 'ohm')} – {_fmt(b.rp_max_ohms, 'ohm')}"
                   if b and b.rp_min_ohms is not None else "—"),
        "cb": _fmt(b.capacitance_farads if b else None, "F"),
        "rise": _fmt(b.rise_time_s if b else None, "s"),
        "limit": _fmt(b.rise_time_max_s if b else None, "s"),
        "margin": margin or "—",
        "notes": list(b.notes) if b else [],
        "cap_parts": [f"{k} {format_si(v, 'F')}" for k, v in _cap_items(b)],
        "cap_bar": Markup(svg.capacitance_bar(b, mode.cb_max_f if mode else None)),
        "edge": Markup(svg.edge_plot(b, thresholds, label=label)),
        "worst": max((f.severity.rank for f in hits), default=0),
    }


def _cap_items(b) -> list[tuple[str, float]]:
    if b is None:
        return []
    parts = b.capacitance_parts
    keys = [k for k in svg.CAPACITANCE_SOURCES if k in parts] + sorted(k for k in parts if k not in svg.CAPACITANCE_SOURCES)
    return [(k, parts[k]) for k in keys if parts[k]]


def _device_row(d: Device) -> dict:
    addr = None
    if d.address is not None:
        addr = f"0x{d.address:03X}" if d.address_10bit else f"0x{d.address:02X}"
    return {"ref": d.ref, "value": d.value, "role": d.role, "address": addr or "—",
            "address_source": d.address_source or "", "io": d.io_rail or "—",
            "io_volts": _fmt(d.io_volts, "V") if d.io_volts is not None else ""}


def _counts(findings: list[Finding]) -> dict[str, int]:
    live = [f for f in findings if not f.waived]
    return {"errors": sum(f.severity is Severity.ERROR for f in live),
            "warnings": sum(f.severity is Severity.WARNING for f in live),
            "infos": sum(f.severity is Severity.INFO for f in live),
            "waived": sum(f.waived for f in findings)}


def _finding_row(f: Finding, index: int) -> dict:
    return {"id": f"finding-{index}", "rule": f.rule, "severity": f.severity.value, "message": phrase(f),
            "where": where(f), "refs": list(f.refs), "nets": list(f.nets), "reason": f.waiver_reason or ""}


def context(audit: Audit, when: datetime) -> dict:
    d = audit.design
    findings = list(audit.findings)
    index = {id(f): i + 1 for i, f in enumerate(findings)}
    live = [f for f in findings if not f.waived]
    buses = []
    for bus in audit.buses:
        mine = [f for f in findings if f.bus == bus.name]
        try:
            mode_label = get_mode(bus.mode).label
        except ValueError:
            mode_label = bus.mode
        segments = []
        for seg, depth in svg.segment_order(bus):
            upstream = ""
            if seg.upstream is not None:
                upstream = f"{seg.upstream.kind} {seg.upstream.ref}" + (
                    f" channel {seg.upstream.channel}" if seg.upstream.channel is not None else "")
            segments.append({"id": seg.id, "depth": depth, "upstream": upstream,
                             "devices": [_device_row(x) for x in seg.devices],
                             "lines": [_line_row(bus, seg, line, live) for line in seg.lines]})
        buses.append({
            "name": bus.name, "mode": bus.mode, "mode_label": mode_label, "evidence": bus.evidence,
            "extra_capacitance": _fmt(bus.extra_capacitance_f, "F") if bus.extra_capacitance_f else "",
            "counts": _counts(mine), "segments": segments,
            "diagram": Markup(svg.bus_diagram(bus, findings, phrase)),
            "findings": [_finding_row(f, index[id(f)]) for f in mine if not f.waived],
        })
    domains = []
    for bus in audit.buses:
        for dom in address_domains(bus, audit.address_domains):
            everyone = dom.local + dom.upstream
            domains.append({
                "name": dom.name, "bus": dom.bus,
                "map": Markup(svg.address_map(dom.name, dom.local, dom.upstream)),
                "unknown": sorted(x.ref for x in dom.local if x.address is None and x.role in ("target", "mux")),
                "ten_bit": sorted(f"{x.ref} 0x{x.address:03X}" for x in everyone
                                  if x.address is not None and x.address_10bit),
            })
    groups = []
    for sev in SEVERITIES:
        rules: dict[str, list[dict]] = {}
        for f in live:
            if f.severity is sev:
                rules.setdefault(f.rule, []).append(_finding_row(f, index[id(f)]))
        if rules:
            groups.append({"severity": sev.value, "heading": _HEADINGS[sev],
                           "rules": [{"id": rid, "doc": {k: _doc_markup(v) for k, v in rule_text(rid).items()},
                                      "findings": rows} for rid, rows in sorted(rules.items())]})
    loose = _counts([f for f in findings if f.bus is None])
    counts = audit.counts()
    return {
        "version": __version__, "caution": CAUTION, "date": when.astimezone(timezone.utc).strftime("%Y-%m-%d %H:%M:%S UTC"),
        "design": {"file": os.path.basename(d.path.rstrip("/")) or d.path, "format": d.format,
                   "sha256": d.sha256 or "—", "title": d.title or "—", "revision": d.revision or "—",
                   "kicad": d.kicad_version or "not stated", "tool": d.tool, "source": d.source,
                   "parts": len(d.parts), "nets": len(d.nets)},
        "config": None if audit.config_path is None else
        {"file": os.path.basename(audit.config_path), "sha256": audit.config_sha256 or "—"},
        "mode": audit.mode, "counts": counts, "buses": buses, "domains": domains, "groups": groups,
        "loose": loose if any(loose.values()) else None,
        "waived": [_finding_row(f, index[id(f)]) for f in findings if f.waived],
        "rails": [{"net": r.net, "volts": _fmt(r.volts, "V"), "source": r.source} for r in audit.rails],
        "verdict": ("errors" if counts["errors"] else "warnings" if counts["warnings"] else "clean"),
    }


_ENV: Environment | None = None


def _env() -> Environment:
    global _ENV
    if _ENV is None:
        _ENV = Environment(loader=PackageLoader("netaudit.report", "templates"), autoescape=True,
                           undefined=StrictUndefined, trim_blocks=True, lstrip_blocks=True,
                           keep_trailing_newline=True)
    return _ENV


def render(audit: Audit, when: datetime | None = None) -> str:
    """The HTML report for ``audit``; ``when`` defaults to :func:`run_date`."""
    return _env().get_template("report.html.j2").render(**context(audit, when or run_date()))
