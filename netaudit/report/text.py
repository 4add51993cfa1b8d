"""The terminal report: grouped by bus and segment, readable without colour."""

from __future__ import annotations

import os
from typing import Callable

from .. import __version__
from ..addressing import address_map
from ..results import Audit, Finding, Line, LineBudget, Segment, Severity
from ..terminal import visible
from ..units import format_si
from .json import CAUTION
from .messages import phrase
from .svg import CAPACITANCE_SOURCES

_COLOURS = {Severity.ERROR: "red", Severity.WARNING: "yellow", Severity.INFO: "cyan"}


def _plain(text: str, **_style) -> str:
    return text


def _fmt(v, unit: str) -> str:
    return "?" if v is None else format_si(v, unit)


def _line_row(line: Line) -> str:
    name = "SDA" if line.signal == "sda" else "SCL"
    nets = visible(", ".join(line.nets))
    pulls = []
    for p in line.pullups:
        tag = "" if p.fitted else " (not fitted)"
        pulls.append(visible(f"{p.ref} {_fmt(p.ohms, 'Ω')} to {p.rail}{tag}"))
    row = f"    {name}  {nets}\n      pull-ups: {'; '.join(pulls) or 'none'}"
    b = line.budget
    if b is not None and b.capacitance_farads is not None:
        row += f"\n      Cb {_fmt(b.capacitance_farads, 'F')}{_capacitance_sum(b)}"
        if b.rp_ohms is not None:
            row += (f"\n      Rp {_fmt(b.rp_ohms, 'Ω')} (window {_fmt(b.rp_min_ohms, 'Ω')} to {_fmt(b.rp_max_ohms, 'Ω')})"
                    f", rise {_fmt(b.rise_time_s, 's')} of {_fmt(b.rise_time_max_s, 's')} allowed")
    return row


def _capacitance_sum(b: LineBudget) -> str:
    """`` = pins 20 pF + capacitors 100 pF``: where the line's capacitance comes from, in the
    order the HTML bar stacks it, sources that add nothing left out."""
    parts = b.capacitance_parts
    keys = [k for k in CAPACITANCE_SOURCES if k in parts] + sorted(k for k in parts if k not in CAPACITANCE_SOURCES)
    terms = [f"{k} {_fmt(parts[k], 'F')}" for k in keys if parts[k]]
    return " = " + " + ".join(terms) if terms else ""


def _plural(n: int, word: str) -> str:
    return f"{n} {word}" + ("" if n == 1 else ("es" if word.endswith("s") else "s"))


def _notes(seg: Segment) -> list[str]:
    """Each estimate note once per segment, even when both lines carry it."""
    seen: list[str] = []
    for line in seg.lines:
        for note in (line.budget.notes if line.budget else ()):
            if note not in seen:
                seen.append(note)
    return [f"    note: {visible(n)}" for n in seen]


def _segment_head(seg: Segment) -> str:
    head = f"  segment {seg.id}"
    if seg.upstream is not None:
        via = f"{seg.upstream.kind} {seg.upstream.ref}"
        if seg.upstream.channel is not None:
            via += f" channel {seg.upstream.channel}"
        head += f"  (behind {via})"
    return visible(head)


def _device_row(seg: Segment) -> str:
    items = []
    for d in seg.devices:
        extra = [d.role]
        if d.address is not None:
            extra.append(f"0x{d.address:02X}")
        if d.io_rail:
            extra.append(f"{d.io_rail} {_fmt(d.io_volts, 'V')}")
        items.append(f"{d.ref} {d.value} ({', '.join(extra)})")
    return visible("    devices: " + ("; ".join(items) or "none"))


def _address_rows(maps: list[dict]) -> list[str]:
    """Each address domain of one bus: its own addresses (a channel's domain also holds
    everything upstream, named by the zone it adds to), with collisions marked."""
    rows = []
    shown: dict[str, set] = {}
    for m in maps:
        inherited = set().union(*(shown.get(z, set()) for z in m["zones"][1:])) if len(m["zones"]) > 1 else set()
        own = [d for d in m["devices"] if d["ref"] not in inherited]
        shown[m["id"]] = {d["ref"] for d in own}
        clashing = {r for c in m["collisions"] if not c["waived"] for r in c["refs"]}
        items = [f"{d['address'] or '?'} {d['ref']}" + (" (clash)" if d["ref"] in clashing else "")
                 for d in own]
        scope = f" (plus {m['zones'][1]})" if len(m["zones"]) > 1 else ""
        rows.append(visible(f"  addresses on {m['id']}{scope}: " + (", ".join(items) or "none")))
    return rows


def render(audit: Audit, colour: bool = False) -> str:
    style: Callable[..., str]
    if colour:
        import click
        style = click.style
    else:
        style = _plain

    def flag(f: Finding) -> str:
        word = f"{f.severity.value}:"
        return f"{style(word, fg=_COLOURS[f.severity], bold=True)} {visible(phrase(f))}  [{f.rule}]"

    d = audit.design
    c = audit.counts()
    out = [visible(f"netaudit {__version__}: {os.path.basename(d.path.rstrip('/'))} ({d.format}"
                   + (f", KiCad {d.kicad_version}" if d.kicad_version else "") + ")"
                   + (f" \"{d.title}\"" if d.title else "") + (f" rev {d.revision}" if d.revision else ""))]
    out.append(f"mode {audit.mode}; {_plural(c['buses'], 'bus')}, {_plural(c['segments'], 'segment')}; "
               f"{_plural(c['errors'], 'error')}, {_plural(c['warnings'], 'warning')}, {c['infos']} info, "
               f"{c['waived']} waived")
    live = [f for f in audit.findings if not f.waived]
    maps = address_map(audit)
    for bus in audit.buses:
        out.append("")
        out.append(style(visible(bus.name), bold=True) + visible(f"  ({bus.mode}, found by {bus.evidence})"))
        for seg in bus.segments:
            out.append(_segment_head(seg))
            out.append(_device_row(seg))
            for line in seg.lines:
                out.append(_line_row(line))
            out.extend(_notes(seg))
            for f in live:
                if f.bus == bus.name and f.segment == seg.id:
                    out.append("    " + flag(f))
        out.extend(_address_rows([m for m in maps if m["bus"] == bus.name]))
        for f in live:
            if f.bus == bus.name and f.segment is None:
                out.append("  " + flag(f))
    loose = [f for f in live if f.bus is None]
    if loose:
        out.append("")
        out.append("Not on a bus:")
        out.extend("  " + flag(f) for f in loose)
    waived = [f for f in audit.findings if f.waived]
    if waived:
        out.append("")
        out.append("Waived:")
        out.extend(visible(f"  {f.severity.value}: {phrase(f)}  [{f.rule}] (reason: {f.waiver_reason})")
                   for f in waived)
    out.append("")
    out.append(CAUTION)
    return "\n".join(out) + "\n"


def render_inventory(audit: Audit) -> str:
    """Buses, segments, devices and lines, without findings."""
    out = []
    for bus in audit.buses:
        out.append(visible(f"{bus.name}  ({bus.mode}, found by {bus.evidence})"))
        for seg in bus.segments:
            out.append(_segment_head(seg))
            out.append(_device_row(seg))
            out.extend(_line_row(line) for line in seg.lines)
            out.extend(_notes(seg))
    if not out:
        out.append("no I2C or SMBus buses found")
    return "\n".join(out) + "\n"


def render_window(w) -> str:
    """The ``netaudit pullup`` answer for one line."""
    lines = [
        f"mode {w.mode}, VDD {_fmt(w.vdd, 'V')}, Cb {_fmt(w.cb_f, 'F')}, "
        f"VOL {_fmt(w.vol_max_v, 'V')} at {_fmt(w.iol_a, 'A')}, rise time max {_fmt(w.rise_time_max_s, 's')}",
        f"Rp(min) = (VDD - VOL) / IOL          = {_fmt(w.rp_min, 'Ω')}",
        f"Rp(max) = tr / (0.8473 * Cb)         = {_fmt(w.rp_max, 'Ω')}",
    ]
    if not w.feasible:
        lines.append("no resistor fits: Rp(min) is above Rp(max). Cut capacitance, lower the mode, "
                     "or use a buffer or current-source pull-up (UM10204 section 7.2).")
    else:
        lines.append("E12 values that fit: " + (", ".join(format_si(v, "Ω") for v in w.suggestions_e12) or "none"))
        lines.append("E24 values that fit: " + (", ".join(format_si(v, "Ω") for v in w.suggestions) or "none"))
        if w.pick is not None:
            lines.append(f"pick: {format_si(w.pick, 'Ω')} (rise time {format_si(w.pick_rise_time_s, 's')}); "
                         "the largest E12 value keeping 20 % rise-time headroom, to limit supply current")
    lines.append("UM10204 Rev. 6 section 7.1, Eq. (1) and (2). netaudit flags risks; confirm with the datasheets.")
    return "\n".join(lines) + "\n"
