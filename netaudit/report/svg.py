"""Pictures for the HTML report, drawn as inline SVG: pure functions from audit pieces to text.

Every string that comes from the design (net names, refs, values, rails) goes through
:func:`esc` before it is placed in the SVG, so a design can never inject markup. Numbers
are written with fixed precision so the same audit always gives the same bytes.
"""

from __future__ import annotations

import hashlib
import math
from typing import Iterable, Sequence

from ..results import Bus, Device, Finding, LineBudget, PullUp, Segment
from ..units import format_si

SEVERITY_COLOURS = {"error": "#b3261e", "warning": "#a15c00", "info": "#1f5fa8"}
_INK = "#1d1d1d"
_MUTED = "#6b6b6b"
_FONT = "font-family='DejaVu Sans, Arial, sans-serif'"


def esc(text) -> str:
    """Text safe inside SVG/HTML element content and quoted attributes: the five characters
    ``html.escape(quote=True)`` replaces, replaced alike (importing ``html`` loads its
    table of entities, a tenth of a small audit's time)."""
    return ("" if text is None else str(text)).replace("&", "&amp;").replace("<", "&lt;") \
        .replace(">", "&gt;").replace('"', "&quot;").replace("'", "&#x27;")


def _n(x: float) -> str:
    """A coordinate with one decimal, no trailing zeros (deterministic text)."""
    text = f"{x:.1f}"
    return text[:-2] if text.endswith(".0") else text


def _text(x: float, y: float, body: str, *, size: int = 11, anchor: str = "start",
          weight: str = "normal", fill: str = _INK, extra: str = "") -> str:
    return (f"<text x='{_n(x)}' y='{_n(y)}' font-size='{size}' text-anchor='{anchor}' "
            f"font-weight='{weight}' fill='{fill}'{extra}>{esc(body)}</text>")


def _shorten(text: str, limit: int) -> str:
    return text if len(text) <= limit else text[: limit - 1] + "…"


def _ohms(v: float | None) -> str:
    return "value ?" if v is None else format_si(v, "ohm")


# ---------------------------------------------------------------------------
# Segment tree (which segment sits behind which multiplexer, translator or repeater)
# ---------------------------------------------------------------------------

def segment_parents(bus: Bus) -> dict[str, str | None]:
    """For each segment id, the id of the segment its upstream part hangs on (or None).

    The parent is the other segment that lists the upstream part among its devices and is
    not itself behind that part.
    """
    out: dict[str, str | None] = {}
    for seg in bus.segments:
        parent = None
        if seg.upstream is not None:
            for other in bus.segments:
                if other is seg or (other.upstream is not None and other.upstream.ref == seg.upstream.ref):
                    continue
                if any(d.ref == seg.upstream.ref for d in other.devices):
                    parent = other.id
                    break
        out[seg.id] = parent
    return out


def segment_order(bus: Bus) -> list[tuple[Segment, int]]:
    """Segments depth first from the roots, with their depth, in the bus's own order."""
    parents = segment_parents(bus)
    by_id = {s.id: s for s in bus.segments}
    out: list[tuple[Segment, int]] = []
    seen: set[str] = set()

    def visit(seg: Segment, depth: int) -> None:
        if seg.id in seen:
            return
        seen.add(seg.id)
        out.append((seg, depth))
        for child in bus.segments:
            if parents[child.id] == seg.id:
                visit(child, depth + 1)

    for seg in bus.segments:
        if parents[seg.id] is None or parents[seg.id] not in by_id:
            visit(seg, 0)
    for seg in bus.segments:          # anything left over (a cycle would be a topology bug)
        visit(seg, 0)
    return out


# ---------------------------------------------------------------------------
# Bus diagram
# ---------------------------------------------------------------------------

_BAND_H = 188
_ROW = 6            # devices per row
_ROW_H = 110.0      # height of each further row of devices
_PULL_SLOT = 96
_DEV_SLOT = 118
_LEFT = 64          # room for the SDA / SCL labels before the first slot


def _worst(findings: Iterable[Finding]) -> str | None:
    ranked = sorted(findings, key=lambda f: -f.severity.rank)
    return ranked[0].severity.value if ranked else None


def _tip(findings: Sequence[Finding], phrase) -> str:
    if not findings:
        return ""
    return "<title>" + esc("\n".join(f"{f.severity.value}: {phrase(f)} [{f.rule}]" for f in findings)) + "</title>"


def _badge(x: float, y: float, severity: str, tip: str) -> str:
    colour = SEVERITY_COLOURS[severity]
    return (f"<g class='fault' data-severity='{severity}'>{tip}<circle cx='{_n(x)}' cy='{_n(y)}' r='7' "
            f"fill='{colour}'/>{_text(x, y + 4, '!', size=11, anchor='middle', weight='bold', fill='#ffffff')}</g>")


def _pullup(p: PullUp, x: float, y: float, line_y: float, hits: Sequence[Finding], phrase) -> str:
    sev = _worst(hits)
    colour = SEVERITY_COLOURS[sev] if sev else (_MUTED if not p.fitted else _INK)
    dash = "" if p.fitted else " stroke-dasharray='3 2'"
    fault = f" data-fault='{sev}'" if sev else ""
    parts = [f"<g class='pullup' data-ref='{esc(p.ref)}'{fault}>{_tip(hits, phrase)}",
             _text(x, y + 12, _shorten(p.rail, 14), size=10, anchor="middle", fill=_MUTED),
             f"<line x1='{_n(x - 9)}' y1='{_n(y + 16)}' x2='{_n(x + 9)}' y2='{_n(y + 16)}' stroke='{colour}' stroke-width='2'/>",
             f"<line x1='{_n(x)}' y1='{_n(y + 16)}' x2='{_n(x)}' y2='{_n(y + 22)}' stroke='{colour}'{dash}/>",
             f"<rect x='{_n(x - 5)}' y='{_n(y + 22)}' width='10' height='24' fill='#ffffff' stroke='{colour}' "
             f"stroke-width='1.5'{dash}/>",
             f"<line x1='{_n(x)}' y1='{_n(y + 46)}' x2='{_n(x)}' y2='{_n(line_y)}' stroke='{colour}'{dash}/>",
             f"<circle cx='{_n(x)}' cy='{_n(line_y)}' r='2.5' fill='{colour}'/>",
             _text(x + 9, y + 32, p.ref, size=10, weight="bold", fill=colour),
             _text(x + 9, y + 43, _ohms(p.ohms), size=10, fill=colour)]
    tag = "off-board" if p.offboard else ("not fitted" if not p.fitted else "")
    if tag:
        parts.append(_text(x + 9, y + 54, tag, size=9, fill=_MUTED))
    if sev:
        parts.append(_badge(x - 14, y + 30, sev, ""))
    parts.append("</g>")
    return "".join(parts)


def _device(d: Device, x: float, y: float, line_y: dict[str, float], hits: Sequence[Finding],
            phrase, children: int) -> str:
    sev = _worst(hits)
    colour = SEVERITY_COLOURS[sev] if sev else _INK
    signals = sorted({p.signal for p in d.pins}) or ["sda", "scl"]
    fault = f" data-fault='{sev}'" if sev else ""
    parts = [f"<g class='device' data-ref='{esc(d.ref)}' data-role='{esc(d.role)}'{fault}>{_tip(hits, phrase)}"]
    for signal, dx in (("sda", 36), ("scl", 68)):
        if signal in signals and signal in line_y:
            parts.append(f"<line x1='{_n(x + dx)}' y1='{_n(line_y[signal])}' x2='{_n(x + dx)}' y2='{_n(y)}' "
                         f"stroke='{_INK}'/><circle cx='{_n(x + dx)}' cy='{_n(line_y[signal])}' r='2.5' fill='{_INK}'/>")
    fill = "#f3f1ea" if d.role in ("mux", "translator", "repeater") else "#ffffff"
    parts.append(f"<rect x='{_n(x)}' y='{_n(y)}' width='104' height='52' rx='3' fill='{fill}' stroke='{colour}' "
                 f"stroke-width='{2 if sev else 1}'/>")
    parts.append(_text(x + 6, y + 14, d.ref, size=11, weight="bold", fill=colour))
    parts.append(_text(x + 6, y + 28, _shorten(d.value, 17), size=10))
    role = d.role
    if d.address is not None:
        role += f" 0x{d.address:03X}" if d.address_10bit else f" 0x{d.address:02X}"
    parts.append(_text(x + 6, y + 42, role, size=10, fill=_MUTED))
    if children:
        parts.append(_text(x + 52, y + 66, f"↓ {children} segment{'s' if children > 1 else ''} below",
                           size=9, anchor="middle", fill=_MUTED))
    if sev:
        parts.append(_badge(x + 102, y, sev, ""))
    parts.append("</g>")
    return "".join(parts)


def _children(order: list[tuple[Segment, int]], parents: dict[str, str | None], seg: Segment) -> dict[str, int]:
    """How many segments hang behind each part of ``seg`` (to label muxes and translators)."""
    out: dict[str, int] = {}
    for s, _ in order:
        if s.upstream is not None and parents.get(s.id) == seg.id:
            out[s.upstream.ref] = out.get(s.upstream.ref, 0) + 1
    return out


def _band(bus: Bus, seg: Segment, x0: float, y: float, live: list[Finding], children: dict[str, int],
          phrase) -> tuple[list[str], float, float]:
    """One segment's drawing: (SVG pieces, right edge used, height used)."""
    body: list[str] = []
    seg_hits = [f for f in live if f.segment == seg.id]
    title = seg.id
    if seg.upstream is not None:
        via = f"{seg.upstream.kind} {seg.upstream.ref}"
        if seg.upstream.channel is not None:
            via += f" channel {seg.upstream.channel}"
        title += f"   (behind {via})"
    body.append(_text(x0, y + 12, title, size=12, weight="bold"))
    pullups = [(line, p) for line in seg.lines for p in line.pullups]
    rows = max(1, math.ceil(len(seg.devices) / _ROW))
    slots_w = max(len(pullups) * _PULL_SLOT, min(len(seg.devices), _ROW) * _DEV_SLOT, 2 * _PULL_SLOT)
    x_end = x0 + _LEFT + slots_w
    right = x_end + 20.0
    base = {"sda": 92.0, "scl": 108.0}
    for line in seg.lines:
        hits = [f for f in seg_hits if f.line in (line.signal, None)
                and (f.line is not None or set(f.nets) & set(line.nets))]
        sev = _worst(hits)
        colour = SEVERITY_COLOURS[sev] if sev else _INK
        width = 3 if sev else 2
        # a wrapped row continues the line: SDA joins down the far right, SCL just inside it
        end = x_end + (8 if line.signal == "sda" and rows > 1 else 0)
        fault = f" data-fault='{sev}'" if sev else ""
        body.append(f"<g class='line' data-line='{line.signal}'{fault}>{_tip(hits, phrase)}")
        for r in range(rows):
            ly = y + base[line.signal] + r * _ROW_H
            body.append(_text(x0 + 4, ly + 4, "SDA" if line.signal == "sda" else "SCL", size=11, weight="bold",
                              fill=colour))
            body.append(f"<line x1='{_n(x0 + 34)}' y1='{_n(ly)}' x2='{_n(end)}' y2='{_n(ly)}' stroke='{colour}' "
                        f"stroke-width='{width}'/>")
        if rows > 1:
            body.append(f"<line x1='{_n(end)}' y1='{_n(y + base[line.signal])}' x2='{_n(end)}' "
                        f"y2='{_n(y + base[line.signal] + (rows - 1) * _ROW_H)}' stroke='{colour}' "
                        f"stroke-width='{width}'/>")
        nets = ", ".join(line.nets)
        body.append(_text(x_end + 16, y + base[line.signal] + 4, _shorten(nets, 36), size=10, fill=_MUTED))
        body.append("</g>")
        right = max(right, x_end + 22 + 6.2 * min(len(nets), 36))
    for i, (line, p) in enumerate(pullups):
        px = x0 + _LEFT + i * _PULL_SLOT + 20
        hits = [f for f in seg_hits if p.ref in f.refs]
        body.append(_pullup(p, px, y + 18, y + base[line.signal], hits, phrase))
    signals = {line.signal for line in seg.lines}
    for i, d in enumerate(seg.devices):
        r, col = divmod(i, _ROW)
        line_y = {k: y + v + r * _ROW_H for k, v in base.items() if k in signals}
        hits = [f for f in live if d.ref in f.refs and f.segment in (seg.id, None)]
        body.append(_device(d, x0 + _LEFT + col * _DEV_SLOT, y + 122 + r * _ROW_H, line_y, hits, phrase,
                            children.get(d.ref, 0)))
    if not seg.lines:
        body.append(_text(x0, y + 100, "no lines found", size=10, fill=_MUTED))
    return body, right, _BAND_H + (rows - 1) * _ROW_H


def bus_diagram(bus: Bus, findings: Sequence[Finding], phrase) -> str:
    """The bus as a drawing: one band per segment (depth first), SDA and SCL as two lines,
    pull-ups above them to their rails, devices below (six to a row, the lines continued
    down the right for the next row); segments behind a multiplexer, translator or repeater
    indented under the segment that holds that part. Parts and lines with unwaived findings
    are drawn in the colour of the worst severity, with the finding texts as tooltips.
    ``phrase`` turns a Finding into its sentence."""
    live = [f for f in findings if not f.waived and f.bus == bus.name]
    order = segment_order(bus)
    parents = segment_parents(bus)
    body: list[str] = []
    width, y = 400.0, 8.0
    bottom: dict[str, float] = {}
    for seg, depth in order:
        x0 = 12 + depth * 30
        body.append(f"<g class='segment' data-segment='{esc(seg.id)}'>")
        parent = parents.get(seg.id)
        if parent is not None and parent in bottom:
            body.append(f"<path d='M{_n(x0 - 16)} {_n(bottom[parent])} V{_n(y + 8)} H{_n(x0 - 4)}' "
                        f"fill='none' stroke='{_MUTED}' stroke-width='1.5'/>")
        pieces, right, height = _band(bus, seg, x0, y, live, _children(order, parents, seg), phrase)
        body.extend(pieces)
        body.append("</g>")
        bottom[seg.id] = y + height - 10
        width = max(width, right)
        y += height
    return (f"<svg xmlns='http://www.w3.org/2000/svg' class='bus-diagram' data-bus='{esc(bus.name)}' "
            f"viewBox='0 0 {_n(width)} {_n(y)}' width='{_n(width)}' height='{_n(y)}' role='img' "
            f"aria-label='{esc('Diagram of bus ' + bus.name)}' {_FONT}>"
            + "".join(body) + "</svg>")


# ---------------------------------------------------------------------------
# Rising edge
# ---------------------------------------------------------------------------

def edge_plot(budget: LineBudget | None, thresholds_v: tuple[float, float] | None, *, label: str) -> str:
    """The rising edge of one line, V(t) = V·(1 − e^(−t/RC)) with R = ``rp_ohms``,
    C = ``capacitance_farads`` and V = ``rail_volts`` (UM10204 Rev. 6 §7.1), drawn against the
    low and high thresholds (30 % and 70 % of the rail for I2C modes) and the mode's limit:
    the edge must cross the high threshold within ``rise_time_max_s`` of crossing the low one.

    Empty string when the budget lacks a value to draw from.
    """
    b = budget
    if (b is None or thresholds_v is None or not b.rp_ohms or not b.capacitance_farads
            or not b.rail_volts or b.rail_volts <= 0):
        return ""
    tau = b.rp_ohms * b.capacitance_farads
    vdd = b.rail_volts
    lo, hi = thresholds_v
    t_lo = tau * math.log(vdd / (vdd - lo)) if lo < vdd else None
    t_hi = tau * math.log(vdd / (vdd - hi)) if hi < vdd else None
    limit = (t_lo + b.rise_time_max_s) if (t_lo is not None and b.rise_time_max_s) else None
    span = max([t for t in (t_hi, limit) if t is not None] + [3 * tau]) * 1.25
    w, h, left, right, top, bottom = 330.0, 170.0, 46.0, 12.0, 14.0, 32.0
    v_top = max(vdd, hi) * 1.08

    def px(t: float) -> float:
        return left + (w - left - right) * t / span

    def py(v: float) -> float:
        return top + (h - top - bottom) * (1 - v / v_top)

    late = t_hi is None or (limit is not None and t_hi > limit)
    curve_colour = SEVERITY_COLOURS["error"] if late else "#1f5fa8"
    pts = []
    for i in range(97):
        t = span * i / 96
        pts.append(f"{_n(px(t))} {_n(py(vdd * (1 - math.exp(-t / tau))))}")
    attrs = (f" data-rc-s='{tau:.6g}' data-rail-v='{vdd:.6g}'"
             + (f" data-t-low-s='{t_lo:.6g}'" if t_lo is not None else "")
             + (f" data-t-high-s='{t_hi:.6g}'" if t_hi is not None else "")
             + (f" data-limit-s='{limit:.6g}'" if limit is not None else "")
             + f" data-span-s='{span:.6g}'")
    out = [f"<svg xmlns='http://www.w3.org/2000/svg' class='edge-plot' data-line='{esc(label)}'{attrs} "
           f"viewBox='0 0 {_n(w)} {_n(h)}' width='{_n(w)}' height='{_n(h)}' role='img' "
           f"aria-label='{esc('Rising edge of ' + label)}' {_FONT}>",
           f"<rect x='{_n(left)}' y='{_n(top)}' width='{_n(w - left - right)}' height='{_n(h - top - bottom)}' "
           f"fill='#fbfbf8' stroke='#c8c8c0'/>"]
    if t_lo is not None and t_hi is not None:
        out.append(f"<rect x='{_n(px(t_lo))}' y='{_n(top)}' width='{_n(px(t_hi) - px(t_lo))}' "
                   f"height='{_n(h - top - bottom)}' fill='{curve_colour}' fill-opacity='0.08'/>")
    for v, pct in ((lo, lo / vdd), (hi, hi / vdd)):
        out.append(f"<line x1='{_n(left)}' y1='{_n(py(v))}' x2='{_n(w - right)}' y2='{_n(py(v))}' "
                   f"stroke='{_MUTED}' stroke-dasharray='4 3'/>")
        out.append(_text(left - 4, py(v) + 3, f"{pct * 100:.0f} %", size=9, anchor="end", fill=_MUTED))
    out.append(_text(left - 4, py(vdd) + 3, format_si(vdd, "V"), size=9, anchor="end", fill=_MUTED))
    out.append(_text(left - 4, py(0) + 3, "0 V", size=9, anchor="end", fill=_MUTED))
    if limit is not None:
        lc = SEVERITY_COLOURS["error"]
        out.append(f"<line class='limit' x1='{_n(px(limit))}' y1='{_n(top)}' x2='{_n(px(limit))}' "
                   f"y2='{_n(h - bottom)}' stroke='{lc}' stroke-width='1.5' stroke-dasharray='6 3'/>")
        out.append(_text(px(limit) + 3, top + 10, "limit", size=9, fill=lc))
    out.append(f"<path class='curve' d='M{' L'.join(pts)}' fill='none' stroke='{curve_colour}' stroke-width='2'/>")
    out.append(_text(left, h - bottom + 13, "0", size=9, anchor="middle", fill=_MUTED))
    out.append(_text(w - right, h - bottom + 13, format_si(span, "s"), size=9, anchor="end", fill=_MUTED))
    rise = "never reaches the high threshold" if t_hi is None or t_lo is None else \
        f"rise {format_si(t_hi - t_lo, 's')} of {format_si(b.rise_time_max_s, 's')} allowed"
    out.append(_text(left + 4, h - 5, rise, size=10, fill=curve_colour))
    out.append("</svg>")
    return "".join(out)


# ---------------------------------------------------------------------------
# Capacitance bar
# ---------------------------------------------------------------------------

CAPACITANCE_SOURCES = ("pins", "routing", "vias", "capacitors", "extra")
_CAP_COLOURS = {"pins": "#4b6a88", "routing": "#8aa17a", "vias": "#c2a05a", "capacitors": "#a8746a",
                "extra": "#7d6d9b"}


def capacitance_bar(budget: LineBudget | None, cb_max_f: float | None) -> str:
    """A stacked bar of where the line's capacitance comes from, with the mode's Cb(max) mark."""
    if budget is None or budget.capacitance_farads is None:
        return ""
    parts = dict(budget.capacitance_parts)
    keys = [k for k in CAPACITANCE_SOURCES if k in parts] + sorted(k for k in parts if k not in CAPACITANCE_SOURCES)
    total = budget.capacitance_farads
    scale_max = max(total, cb_max_f or 0.0) * 1.05 or 1.0
    w, bar_w, h = 240.0, 200.0, 34.0
    over = cb_max_f is not None and total > cb_max_f
    tip = "; ".join(f"{k} {format_si(parts[k], 'F')}" for k in keys)
    tip += f"; total {format_si(total, 'F')}" + (f"; limit {format_si(cb_max_f, 'F')}" if cb_max_f else "")
    out = [f"<svg xmlns='http://www.w3.org/2000/svg' class='cap-bar' viewBox='0 0 {_n(w)} {_n(h)}' "
           f"width='{_n(w)}' height='{_n(h)}' role='img' aria-label='{esc('Capacitance: ' + tip)}' {_FONT}>",
           f"<title>{esc(tip)}</title>",
           f"<rect x='0' y='4' width='{_n(bar_w)}' height='14' fill='#f1f1ec' stroke='#c8c8c0'/>"]
    x = 0.0
    for k in keys:
        seg_w = bar_w * parts[k] / scale_max
        if seg_w <= 0:
            continue
        out.append(f"<rect class='cap-part' data-source='{esc(k)}' data-farads='{parts[k]:.6g}' x='{_n(x)}' y='4' "
                   f"width='{_n(seg_w)}' height='14' fill='{_CAP_COLOURS.get(k, '#999999')}'/>")
        x += seg_w
    if cb_max_f:
        lx = bar_w * cb_max_f / scale_max
        out.append(f"<line x1='{_n(lx)}' y1='1' x2='{_n(lx)}' y2='21' stroke='{SEVERITY_COLOURS['error']}' "
                   f"stroke-width='2'/>")
    label = format_si(total, "F") + (f" of {format_si(cb_max_f, 'F')}" if cb_max_f else "")
    out.append(_text(0, 31, label, size=10, fill=SEVERITY_COLOURS["error"] if over else _MUTED))
    out.append("</svg>")
    return "".join(out)


# ---------------------------------------------------------------------------
# Address map
# ---------------------------------------------------------------------------

def reserved_address(address: int) -> bool:
    """0x00–0x07 and 0x78–0x7F: the two reserved groups 0000 XXX and 1111 XXX of
    UM10204 Rev. 6 section 3.1.12, Table 3."""
    return address <= 0x07 or address >= 0x78


def address_map(domain: str, local: Sequence[Device], upstream: Sequence[Device] = ()) -> str:
    """The 128 seven-bit addresses as a 16 × 8 grid: free, reserved (UM10204 Rev. 6 Table 3),
    taken by a device of this domain, taken from upstream (seen through a multiplexer), and
    collision (two different devices on one address)."""
    cells: dict[int, list[tuple[Device, bool]]] = {}
    seen: set[str] = set()
    for devs, is_local in ((local, True), (upstream, False)):
        for d in devs:
            if d.address is None or d.address_10bit or not 0 <= d.address <= 0x7F or d.ref in seen:
                continue
            seen.add(d.ref)
            cells.setdefault(d.address, []).append((d, is_local))
    hatch = "hatch-" + hashlib.sha256(domain.encode("utf-8")).hexdigest()[:10]
    cw, ch, left, top = 44.0, 30.0, 40.0, 22.0
    w, h = left + 16 * cw + 4, top + 8 * ch + 40
    out = [f"<svg xmlns='http://www.w3.org/2000/svg' class='address-map' data-domain='{esc(domain)}' "
           f"viewBox='0 0 {_n(w)} {_n(h)}' width='{_n(w)}' height='{_n(h)}' role='img' "
           f"aria-label='{esc('Address map of ' + domain)}' {_FONT}>",
           f"<defs><pattern id='{hatch}' width='6' height='6' patternUnits='userSpaceOnUse' "
           "patternTransform='rotate(45)'><line x1='0' y1='0' x2='0' y2='6' stroke='#c9c9c2' stroke-width='2'/>"
           "</pattern></defs>"]
    for col in range(16):
        out.append(_text(left + col * cw + cw / 2, top - 7, f"x{col:X}", size=10, anchor="middle", fill=_MUTED))
    for row in range(8):
        out.append(_text(left - 5, top + row * ch + ch / 2 + 4, f"{row:X}x", size=10, anchor="end", fill=_MUTED))
        for col in range(16):
            a = row * 16 + col
            x, y = left + col * cw, top + row * ch
            devs = cells.get(a, [])
            reserved = reserved_address(a)
            if len(devs) > 1:
                state, fill = "collision", "#f2c4bf"
            elif devs:
                state, fill = ("taken" if devs[0][1] else "upstream"), ("#c9dbef" if devs[0][1] else "#e6eef7")
            else:
                state, fill = ("reserved" if reserved else "free"), (f"url(#{hatch})" if reserved else "#ffffff")
            stroke = SEVERITY_COLOURS["error"] if state == "collision" or (devs and reserved) else "#c8c8c0"
            tip = f"0x{a:02X}" + (" reserved (UM10204 Table 3)" if reserved else "")
            if devs:
                tip += ": " + ", ".join(f"{d.ref} {d.value}" + ("" if here else " (upstream)") for d, here in devs)
            out.append(f"<g class='cell {state}' data-address='0x{a:02X}'><title>{esc(tip)}</title>"
                       f"<rect x='{_n(x)}' y='{_n(y)}' width='{_n(cw)}' height='{_n(ch)}' fill='{fill}' "
                       f"stroke='{stroke}' stroke-width='{2 if stroke != '#c8c8c0' else 1}'/>")
            out.append(_text(x + 3, y + 10, f"{a:02X}", size=8, fill=_MUTED))
            if devs:
                names = devs[0][0].ref if len(devs) == 1 else f"{devs[0][0].ref}+{len(devs) - 1}"
                out.append(_text(x + cw / 2, y + 24, _shorten(names, 7), size=10, anchor="middle", weight="bold"))
            out.append("</g>")
    ly = top + 8 * ch + 18
    for i, (label, fill) in enumerate((("free", "#ffffff"), ("reserved", f"url(#{hatch})"), ("taken", "#c9dbef"),
                                       ("upstream", "#e6eef7"), ("collision", "#f2c4bf"))):
        lx = left + i * 120
        out.append(f"<rect x='{_n(lx)}' y='{_n(ly - 10)}' width='14' height='12' fill='{fill}' stroke='#c8c8c0'/>")
        out.append(_text(lx + 19, ly, label, size=10, fill=_MUTED))
    out.append("</svg>")
    return "".join(out)
