"""The one pipeline every front end calls: read, find buses, budget, check, waive."""

from __future__ import annotations

from pathlib import Path

from .addressing import address_domains, assign_addresses, resolve_buses
from .catalog import describe_parts
from .checks import CheckContext, run_checks
from .config import Config, find_config, load_config
from .domains import Domains, assign_domains
from .gcpause import collection_paused
from .linebudget import budget_buses
from .model import Design
from .readers import read_design
from .results import Audit
from .topology.buses import find_buses
from .topology.rails import find_rails
from .waivers import apply_waivers


def audit(path: str | Path, config: Config | str | Path | None = None, mode: str | None = None,
          *, use_kicad_cli: bool = False) -> Audit:
    """Audit the design at ``path``. ``config`` is a Config, a netaudit.yaml path, or None
    to use netaudit.yaml beside the design when there is one. ``use_kicad_cli``: read a
    project or schematic through KiCad's own netlist export instead of netaudit's reader."""
    if config is None:
        found = find_config(path)
        config = load_config(found) if found else Config.empty()
    elif not isinstance(config, Config):
        config = load_config(config)
    with collection_paused():
        return audit_design(read_design(path, use_kicad_cli=use_kicad_cli), config, mode)


def audit_design(design: Design, config: Config, mode: str | None = None) -> Audit:
    """Audit a Design already read (the KiCad plugin builds one from the open board)."""
    with collection_paused():
        return _audit_design(design, config, mode)


def _audit_design(design: Design, config: Config, mode: str | None) -> Audit:
    default_mode = mode or config.defaults.mode
    rails = find_rails(design, config.rails)
    parts = describe_parts(design, config)
    roles = {ref: info.role for ref, info in parts.items() if info.role}
    topology = find_buses(design, rails, roles=roles, bus_configs=config.buses,
                          default_mode=default_mode)
    buses = budget_buses(design, topology.buses, rails, parts, config, conn=topology.conn)
    resolutions = resolve_buses(design, buses, rails, parts, topology.conn)
    buses = assign_addresses(buses, resolutions, parts)
    domains = Domains(design, rails, parts, topology.conn)
    buses = assign_domains(design, buses, domains)
    ctx = CheckContext(design, buses, rails, config, topology, parts, resolutions, domains)
    findings = apply_waivers(run_checks(ctx), config.waivers)
    used = {f.rail for b in buses for s in b.segments for line in s.lines for f in line.pullups}
    rail_list = tuple(sorted((r for r in rails.values() if r.net in used or r.volts is not None),
                             key=lambda r: r.net))
    return Audit(design=design, rails=rail_list, buses=buses, findings=tuple(findings),
                 config_path=config.path, config_sha256=config.sha256, mode=default_mode,
                 address_domains=tuple(address_domains(buses)))
