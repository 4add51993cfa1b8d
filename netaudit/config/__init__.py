"""netaudit.yaml (version 1): the settings a design is audited with, read into a frozen Config.

The file beside a design (or ``--config FILE``) names rail voltages, buses, trace lengths,
parts netaudit does not know and waived findings; its schema is CONTRACT.md's. The parts:

- :mod:`.model`: the constants (modes, roles, rule ids, the largest numbers accepted) and
  the frozen dataclasses (``Config`` and its sections), in SI units;
- :mod:`.reader`: ``parse_config``, the hand-written YAML node walker (``NodeReader``) that
  names the key path, line and column of every mistake; the part catalog reuses it;
- :mod:`.starter`: ``starter_yaml``, the commented file ``netaudit init`` writes;
- here: ``find_config`` and ``load_config`` (the file's bytes, UTF-8 checked), and every
  name above, so ``from netaudit.config import ...`` reaches them all.
"""

from __future__ import annotations

import hashlib
from pathlib import Path

from ..errors import InputError
from .model import (
    CONFIG_FILENAME, CONFIG_VERSION, DEFAULT_MODE, DEFAULT_PIN_CAPACITANCE_F,
    DEFAULT_TRACE_F_PER_M, MAX_10BIT, MAX_7BIT, MAX_MM, MAX_OHMS, MAX_PF, MAX_PF_PER_MM,
    MAX_VOLTS, MM, MODES, PF, PIN_TIES, ROLES, RULE_IDS, SAFE_LOADER, Address, BusConfig,
    Config, Defaults, FixedAddress, OffboardPullup, PartMatch, PartRule, PinBitsAddress,
    PinTieAddress, TraceConfig, Waiver,
)
from .reader import MAX_NESTING, NodeReader, parse_config
from .starter import starter_yaml

__all__ = [
    "CONFIG_FILENAME", "CONFIG_VERSION", "DEFAULT_MODE", "DEFAULT_PIN_CAPACITANCE_F",
    "DEFAULT_TRACE_F_PER_M", "MAX_10BIT", "MAX_7BIT", "MAX_MM", "MAX_NESTING", "MAX_OHMS",
    "MAX_PF", "MAX_PF_PER_MM", "MAX_VOLTS", "MM", "MODES", "PF", "PIN_TIES", "ROLES",
    "RULE_IDS", "SAFE_LOADER", "Address", "BusConfig", "Config", "Defaults", "FixedAddress",
    "NodeReader", "OffboardPullup", "PartMatch", "PartRule", "PinBitsAddress",
    "PinTieAddress", "TraceConfig", "Waiver", "find_config", "load_config", "parse_config",
    "starter_yaml",
]


def find_config(design_path: str | Path) -> Path | None:
    """netaudit.yaml beside a design file, or inside it when it is a folder."""
    p = Path(design_path)
    candidate = (p if p.is_dir() else p.parent) / CONFIG_FILENAME
    return candidate if candidate.is_file() else None


def load_config(path: str | Path) -> Config:
    p = Path(path)
    try:
        if p.exists() and not p.is_dir() and not p.is_file():
            raise InputError("config path is not a regular file", str(p))  # a pipe would block
        data = p.read_bytes()
    except FileNotFoundError:
        raise InputError("config file not found", str(p)) from None
    except IsADirectoryError:
        raise InputError("config path is a folder, not a file", str(p)) from None
    except OSError as exc:
        raise InputError(f"cannot read config file: {exc.strerror}", str(p)) from None
    body = data[3:] if data.startswith(b"\xef\xbb\xbf") else data
    try:
        text = body.decode("utf-8")
    except UnicodeDecodeError as exc:
        start = exc.start + len(data) - len(body)
        line_start = data.rfind(b"\n", 0, start) + 1
        column = len(data[line_start:start].decode("utf-8", "replace")) + 1
        raise InputError(f"config is not UTF-8 text (byte 0x{data[start]:02X}); save it as UTF-8",
                         str(p), data.count(b"\n", 0, start) + 1, column) from None
    return parse_config(text, str(p), sha256=hashlib.sha256(data).hexdigest())
