"""What a schematic reader needs from the ``.kicad_pro`` beside it: text variables and the
unit-letter settings (bus aliases come from the schematics: KiCad 9 ignores any in the
project file). A missing or unreadable project file means
KiCad's defaults."""

from __future__ import annotations

import json
from dataclasses import dataclass, field
from pathlib import Path

from ...errors import InputError


@dataclass
class ProjectSettings:
    name: str = ""
    bus_aliases: dict[str, list[str]] = field(default_factory=dict)   # from the schematics
    text_vars: dict[str, str] = field(default_factory=dict)
    unit_first: str = "A"
    unit_separator: str = ""


def load_project(pro: Path) -> ProjectSettings:
    settings = ProjectSettings(name=pro.stem)
    if not pro.is_file():
        return settings
    try:
        data = json.loads(pro.read_text(encoding="utf-8"))
    except (OSError, UnicodeDecodeError) as exc:
        raise InputError(f"cannot read the project file: {exc}", str(pro)) from None
    except json.JSONDecodeError as exc:
        raise InputError(f"the project file is not valid JSON ({exc.msg})", str(pro),
                         exc.lineno, exc.colno) from None
    if not isinstance(data, dict):
        return settings
    tv = data.get("text_variables")
    if isinstance(tv, dict):
        settings.text_vars = {str(k): str(v) for k, v in tv.items()}
    sch = data.get("schematic")
    if isinstance(sch, dict):
        first = sch.get("subpart_first_id")
        if isinstance(first, int) and 32 < first < 0x10FFFF:
            settings.unit_first = chr(first)
        sep = sch.get("subpart_id_separator")
        if isinstance(sep, int) and sep > 0:
            settings.unit_separator = chr(sep)
    return settings


def expand_vars(text: str, variables: dict[str, str]) -> str:
    """``${NAME}`` replaced by the project's text variable, as KiCad expands a title
    block; unknown variables stay as written."""
    if "${" not in text:
        return text
    out = []
    i = 0
    while i < len(text):
        j = text.find("${", i)
        if j < 0:
            out.append(text[i:])
            break
        k = text.find("}", j)
        if k < 0:
            out.append(text[i:])
            break
        out.append(text[i:j])
        name = text[j + 2:k]
        out.append(variables.get(name, text[j:k + 1]))
        i = k + 1
    return "".join(out)
