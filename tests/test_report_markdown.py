"""The Markdown summary for pull-request comments and release notes.

Invented data: the demo design (fixtures/demo) and a small hand-made design.
"""

from __future__ import annotations

import re
from datetime import datetime, timezone
from pathlib import Path

from handmade import markup_design

from netaudit.audit import audit, audit_design
from netaudit.config import Config
from netaudit.report import markdown
from netaudit.report.json import CAUTION

REPO = Path(__file__).resolve().parents[1]
DEMO = REPO / "fixtures" / "demo" / "greenhouse.net"
WHEN = datetime(2026, 3, 1, 12, 0, 0, tzinfo=timezone.utc)


def _cells(row: str) -> list[str]:
    """Cells of a GitHub table row: split on pipes not escaped with a backslash."""
    return re.split(r"(?<!\\)\|", row.strip())[1:-1]


def test_summary_gives_counts_a_row_per_bus_top_findings_and_the_caution():
    result = audit(DEMO)
    text = markdown.render(result, WHEN)
    c = result.counts()
    assert f"**{c['errors']} errors · {c['warnings']} warnings · {c['infos']} info · {c['waived']} waived**" in text
    rows = [line for line in text.splitlines() if line.startswith("| ") and not line.startswith("| Bus ")]
    assert len(rows) == len(result.buses)
    for bus, row in zip(result.buses, rows):
        cells = _cells(row)
        assert cells[0].strip() == markdown.md(bus.name) and int(cells[2]) == len(bus.segments)
    assert "**Top findings**" in text
    assert markdown.md(CAUTION) in text
    assert "2026-03-01" in text


def test_top_findings_are_capped_and_the_rest_counted():
    result = audit(DEMO)
    live = [f for f in result.findings if not f.waived]
    text = markdown.render(result, WHEN, top=3)
    numbered = [line for line in text.splitlines() if re.match(r"^\d+\. ", line)]
    assert len(numbered) == 3
    assert f"…and {len(live) - 3} more" in text


def test_markup_and_table_characters_from_the_design_are_escaped():
    d = markup_design("/SDA<script>alert(1)</script>|*x*|", "SENSOR", title="host|ile <b>")
    result = audit_design(d, Config.empty())
    text = markdown.render(result, WHEN)
    assert "<script" not in text and "<b>" not in text
    assert "&lt;b&gt;" in text
    header = next(line for line in text.splitlines() if line.startswith("| Bus "))
    for line in text.splitlines():
        if line.startswith("| ") and line != header and not line.startswith("|---"):
            assert len(_cells(line)) == len(_cells(header))


def test_md_escapes_html_and_markdown_punctuation():
    assert markdown.md("<a href='x'>*y*</a> & [z](u) `c` a_b |") == \
        "&lt;a href='x'&gt;\\*y\\*&lt;/a&gt; &amp; \\[z\\](u) \\`c\\` a\\_b \\|"
    assert markdown.md("two\nlines") == "two lines"
