"""A short Markdown summary for a pull-request comment or release notes.

Counts, a table per bus, the first findings by severity, and the caution. Design strings
are escaped so that neither Markdown nor the HTML that Markdown renderers let through can
be injected by a net name or a value.
"""

from __future__ import annotations

import os
import re
from datetime import datetime, timezone

from .. import __version__
from ..results import Audit, Finding
from ..terminal import visible
from .html import run_date, where
from .json import CAUTION
from .messages import phrase

TOP = 10
_PUNCT = re.compile(r"([\\`*_\[\]|~$])")


def md(text) -> str:
    """Escape text for Markdown (CommonMark and GitHub's tables): HTML characters become
    entities, Markdown punctuation gets a backslash, line breaks become spaces, and other
    characters that act on a terminal (the file may be printed in a CI log) show as escapes."""
    text = "" if text is None else str(text)
    text = text.replace("&", "&amp;").replace("<", "&lt;").replace(">", "&gt;")
    text = visible(" ".join(text.split()))
    return _PUNCT.sub(r"\\\1", text)


def _finding(f: Finding) -> str:
    return f"**{f.severity.value}** {md(phrase(f))} (`{f.rule}`, {md(where(f))})"


def render(audit: Audit, when: datetime | None = None, top: int = TOP) -> str:
    d = audit.design
    c = audit.counts()
    name = os.path.basename(d.path.rstrip("/")) or d.path
    stamp = (when or run_date()).astimezone(timezone.utc).strftime("%Y-%m-%d %H:%M UTC")
    title = f" — {md(d.title)}" if d.title else ""
    rev = f" rev {md(d.revision)}" if d.revision else ""
    out = [f"### netaudit: {md(name)}{title}{rev}", ""]
    out.append(f"**{c['errors']} errors · {c['warnings']} warnings · {c['infos']} info · {c['waived']} waived**"
               f" — {c['buses']} buses, {c['segments']} segments, default mode {md(audit.mode)}")
    out.append("")
    if audit.buses:
        out.append("| Bus | Mode | Segments | Errors | Warnings | Info | Waived |")
        out.append("|---|---|---:|---:|---:|---:|---:|")
        for bus in audit.buses:
            mine = [f for f in audit.findings if f.bus == bus.name]
            live = [f for f in mine if not f.waived]
            out.append(f"| {md(bus.name)} | {md(bus.mode)} | {len(bus.segments)} | "
                       f"{sum(f.severity.value == 'error' for f in live)} | "
                       f"{sum(f.severity.value == 'warning' for f in live)} | "
                       f"{sum(f.severity.value == 'info' for f in live)} | {sum(f.waived for f in mine)} |")
        out.append("")
    else:
        out += ["No I2C or SMBus buses found.", ""]
    live = [f for f in audit.findings if not f.waived]
    if live:
        out.append("**Top findings**")
        out.append("")
        out += [f"{i}. {_finding(f)}" for i, f in enumerate(live[:top], 1)]
        if len(live) > top:
            out.append(f"\n…and {len(live) - top} more in the full report.")
        out.append("")
    waived = [f for f in audit.findings if f.waived]
    if waived:
        out.append(f"Waived: {len(waived)} (" + "; ".join(
            f"`{f.rule}` {md(', '.join(f.refs) or where(f))}: {md(f.waiver_reason)}" for f in waived[:top])
            + (" …" if len(waived) > top else "") + ")")
        out.append("")
    out.append(f"> {md(CAUTION)}")
    out.append("")
    sha = md(d.sha256[:12]) if d.sha256 else "unknown"
    out.append(f"<sub>netaudit {__version__} · {md(name)} SHA-256 {sha}… · {stamp}</sub>")
    return "\n".join(out) + "\n"
