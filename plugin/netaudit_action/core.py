"""What the PCB-editor plugin does, without any window: audit the open board, list the
findings, pick a finding's parts and tracks out on the board, write the HTML report.

No ``wx`` or ``pcbnew`` import at module level, so this runs headless in tests and in a
Python that has only the standard library plus the bundled netaudit. The plugin never
changes the board: the only thing it sets is the selection flag of board items.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from . import _paths, compat

_paths.ensure()

from netaudit import __version__  # noqa: E402  (after the path is set up)
from netaudit.audit import audit_design  # noqa: E402
from netaudit.config import Config, find_config, load_config  # noqa: E402
from netaudit.readers.common import unescape_kicad  # noqa: E402
from netaudit.readers.pcbnew_board import read_board, read_geometry  # noqa: E402
from netaudit.report.io import write_atomic  # noqa: E402
from netaudit.report.json import CAUTION  # noqa: E402
from netaudit.report.messages import phrase  # noqa: E402
from netaudit.results import Audit, Finding, Severity  # noqa: E402

_ORDER = {Severity.ERROR: 0, Severity.WARNING: 1, Severity.INFO: 2}
_LINE = {"sda": "SDA", "scl": "SCL"}


@dataclass(frozen=True)
class Row:
    """One line of the findings list; ``index`` points into ``audit.findings``."""

    index: int
    severity: str
    where: str
    text: str
    rule: str
    waived: bool
    refs: tuple[str, ...] = ()
    nets: tuple[str, ...] = ()

    def detail(self) -> str:
        """The whole finding, for the text under the list (the list cuts long sentences)."""
        parts = [self.text]
        if self.refs:
            parts.append("parts: " + ", ".join(self.refs))
        if self.nets:
            parts.append("nets: " + ", ".join(self.nets))
        parts.append(f"rule: {self.rule}")
        return "\n".join(parts)


@dataclass(frozen=True)
class Selection:
    footprints: tuple[Any, ...]
    tracks: tuple[Any, ...]
    missing_refs: tuple[str, ...]    # refs of the finding with no footprint on the board

    def describe(self) -> str:
        text = (f"selected {_count(len(self.footprints), 'footprint')} and "
                f"{_count(len(self.tracks), 'track piece')}")
        if self.missing_refs:
            text += f"; not on the board: {', '.join(self.missing_refs)}"
        return text


def _count(n: int, word: str) -> str:
    return f"{n} {word}{'' if n == 1 else 's'}"


def load_board_config(board_path: str) -> Config:
    """netaudit.yaml beside the board, as the command line finds it beside a design."""
    found = find_config(board_path) if board_path else None
    return load_config(found) if found else Config.empty()


def audit_board(board: Any, api: Any = None, config: Config | None = None,
                mode: str | None = None) -> Audit:
    """Build the Design from the open board, with its routing as it stands (unsaved edits
    included), and run the same audit as the command line."""
    design = read_board(board, api)
    geometry = read_geometry(board, api)
    if geometry is not None:
        design = dataclasses.replace(design, board=geometry)
    if config is None:
        config = load_board_config(design.path)
    return audit_design(design, config, mode)


def summary(audit: Audit) -> str:
    c = audit.counts()
    return (f"{c['buses']} bus{'' if c['buses'] == 1 else 'es'}, "
            f"{_count(c['segments'], 'segment')}; {_count(c['errors'], 'error')}, "
            f"{_count(c['warnings'], 'warning')}, {c['infos']} info, {c['waived']} waived "
            f"(mode {audit.mode}, netaudit {__version__})")


def where(f: Finding) -> str:
    if f.segment:
        return f"{f.segment} {_LINE[f.line]}" if f.line in _LINE else f.segment
    if f.nets:
        return ", ".join(f.nets[:2]) + (" …" if len(f.nets) > 2 else "")
    return ", ".join(f.refs[:3])


def rows(audit: Audit) -> list[Row]:
    """Live findings, worst first, then the waived ones."""
    order = sorted(range(len(audit.findings)), key=lambda i: (
        audit.findings[i].waived, _ORDER[audit.findings[i].severity],
        audit.findings[i].bus or "~", audit.findings[i].segment or "", audit.findings[i].rule))
    out = []
    for i in order:
        f = audit.findings[i]
        out.append(Row(i, f.severity.value + (" (waived)" if f.waived else ""), where(f),
                       phrase(f), f.rule, f.waived, tuple(f.refs), finding_nets(audit, f)))
    return out


def finding_nets(audit: Audit, f: Finding) -> tuple[str, ...]:
    """The nets a finding is about: its own, else those of its line or segment."""
    if f.nets:
        return tuple(f.nets)
    nets: list[str] = []
    for bus in audit.buses:
        if f.bus is not None and bus.name != f.bus:
            continue
        for seg in bus.segments:
            if seg.id != f.segment:
                continue
            for line in seg.lines:
                if f.line is None or line.signal == f.line:
                    nets.extend(line.nets)
    return tuple(dict.fromkeys(nets))


def clear_selection(board: Any) -> None:
    for item in compat.selectable_items(board):
        if compat.is_selected(item):
            compat.set_selected(item, False)


def select_finding(board: Any, audit: Audit, f: Finding, api: Any = None) -> Selection:
    """Select exactly the finding's footprints and the tracks and vias of its nets;
    everything else is deselected. Brings the first footprint into view where the API can."""
    clear_selection(board)
    refs = set(f.refs)
    chosen = [fp for fp in compat.footprints(board) if str(fp.GetReference()) in refs]
    found = {str(fp.GetReference()) for fp in chosen}
    nets = set(finding_nets(audit, f))
    pieces = [t for t in compat.tracks(board) if unescape_kicad(compat.net_name(t)) in nets]
    for item in chosen + pieces:
        compat.set_selected(item, True)
    if api is not None:
        compat.refresh(api)
        compat.focus(api, chosen[0] if chosen else (pieces[0] if pieces else None))
    return Selection(tuple(chosen), tuple(pieces), tuple(sorted(refs - found)))


def html_report_path(board_path: str) -> Path:
    p = Path(board_path)
    return p.with_name(f"{p.stem}-netaudit.html")


def html_available() -> str | None:
    """None when this netaudit can write HTML, else why not."""
    try:
        from netaudit.report import html  # noqa: F401
    except ImportError as exc:
        return f"the HTML report is not available in this netaudit ({exc})"
    return None


def write_html(audit: Audit, board_path: str) -> Path:
    """Write the HTML report beside the board and return its path."""
    from netaudit.report import html
    target = html_report_path(board_path)
    write_atomic(target, html.render(audit))
    return target


__all__ = ["CAUTION", "Row", "Selection", "audit_board", "clear_selection", "finding_nets",
           "html_available", "html_report_path", "load_board_config", "rows", "select_finding",
           "summary", "where", "write_html"]
