"""The JSON report, schema ``netaudit.report/1`` (see CONTRACT.md). Deterministic output."""

from __future__ import annotations

import json
import os

from .. import __version__
from ..model import Design

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


def dumps(doc: dict) -> str:
    return json.dumps(doc, indent=2, sort_keys=True, ensure_ascii=False) + "\n"


def render_design(design: Design) -> str:
    return dumps({"schema": SCHEMA, "tool": {"name": "netaudit", "version": __version__},
                  "design": design_block(design)})
