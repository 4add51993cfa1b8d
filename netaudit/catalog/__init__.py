"""What netaudit knows about parts: role, addressing, speed, supply pin, tolerance.

Two sources, config first: ``parts:`` rules in netaudit.yaml, then the catalog shipped with
the package (``catalog/*.yaml``). ``describe_parts`` merges them field by field, so a config
rule that only sets ``max_mode`` keeps the catalog's address.
"""

from __future__ import annotations

from dataclasses import dataclass, fields, replace
from typing import Any

from ..config import Config
from ..model import Design


@dataclass(frozen=True)
class PartInfo:
    """What netaudit knows about one part, merged from the config and the catalog."""

    role: str | None = None
    address: Any = None               # config.FixedAddress | PinBitsAddress | PinTieAddress
    io_supply_pin: str | None = None
    max_mode: str | None = None
    tolerant_volts: float | None = None
    pin_capacitance_f: float | None = None
    sink_current_a: float | None = None
    source: str = ""                   # "config" or the catalog entry's source note
    # Addressing details (netaudit/addressing.py). ``address_origin`` says who gave
    # ``address``: "config" or "catalog". ``address_span``: how many consecutive addresses
    # the part answers from its address (block-select EEPROMs). ``open_pins``: "low" when the
    # part's datasheet says an address pin left open reads low (internal pull-down).
    # ``resistor_coded``: an address pin whose level is set by a resistor value, so a strap
    # through a resistor cannot be read as a plain tie.
    address_origin: str | None = None
    address_span: int | None = None
    open_pins: str | None = None
    resistor_coded: bool | None = None
    catalog_entry: str | None = None   # name of the catalog entry that matched


_NOTHING = PartInfo()


def _merge(base: PartInfo, top: PartInfo) -> PartInfo:
    changes = {f.name: getattr(top, f.name) for f in fields(PartInfo)
               if f.name != "source" and getattr(top, f.name) is not None}
    merged = replace(base, **changes)
    return replace(merged, source=top.source or base.source)


def describe_parts(design: Design, config: Config) -> dict[str, PartInfo]:
    """PartInfo for every part the config or the catalog knows.

    The catalog is asked once per distinct (value, part-number fields, symbol): boards
    repeat the same part many times. Resistors, capacitors and the like are not asked
    at all; the catalog holds bus devices only.
    """
    from ..topology.parts import looks_passive
    from .loader import catalog_key, lookup_key

    out: dict[str, PartInfo] = {}
    known: dict[tuple, PartInfo | None] = {}
    for part in design.parts:
        info = None
        if not looks_passive(part):
            key = catalog_key(part)
            if key not in known:
                known[key] = lookup_key(*key)
            info = known[key]
        rules = config.part_rules_for(part.ref, part.value, part.lib, part.lib_part)
        if info is None and not rules:
            continue
        info = info or _NOTHING
        for r in rules:
            info = _merge(info, PartInfo(r.role, r.address, r.io_supply_pin, r.max_mode,
                                         r.tolerant_volts, r.pin_capacitance_f, None, "config",
                                         address_origin="config" if r.address is not None else None))
        if info != _NOTHING:
            out[part.ref] = info
    return out
