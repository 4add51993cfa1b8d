"""Checks: one documented function per rule, each returning Findings as data.

A rule function takes a :class:`CheckContext` and yields :class:`~netaudit.results.Finding`.
Its docstring has four parts, printed by ``netaudit rules RULE``: what it finds, why it
matters, what to do, and the source. Register it with ``@rule("rule-id", Severity.X)``.
"""

from __future__ import annotations

import inspect
from dataclasses import dataclass
from typing import Callable, Iterable, Iterator

from ..config import Config
from ..model import Design
from ..results import Bus, Finding, Rail, Segment, Severity

RuleFunc = Callable[["CheckContext"], Iterable[Finding]]


@dataclass(frozen=True)
class Rule:
    """A registered rule: its id, default severity and the function that checks it."""

    id: str
    severity: Severity
    family: str
    func: RuleFunc

    @property
    def doc(self) -> str:
        return inspect.cleandoc(self.func.__doc__ or "")

    @property
    def summary(self) -> str:
        return self.doc.splitlines()[0] if self.doc else ""


RULES: dict[str, Rule] = {}


def rule(rule_id: str, severity: Severity) -> Callable[[RuleFunc], RuleFunc]:
    def register(func: RuleFunc) -> RuleFunc:
        if rule_id in RULES:
            raise ValueError(f"rule {rule_id} registered twice")
        family = func.__module__.rsplit(".", 1)[-1]
        RULES[rule_id] = Rule(rule_id, severity, family, func)
        func.rule_id = rule_id  # type: ignore[attr-defined]
        return func
    return register


@dataclass(frozen=True)
class CheckContext:
    """What every rule reads: the design, buses, rails, config and derived lookups."""

    design: Design
    buses: tuple[Bus, ...]
    rails: dict[str, Rail]
    config: Config
    topology: object   # netaudit.topology.buses.Topology: unpaired lines, unconnected pins
    parts: dict        # ref -> netaudit.catalog.PartInfo, for parts config or catalog know
    resolutions: dict  # (bus, ref) -> netaudit.addressing.Resolution: straps and addresses
    domains: object    # netaudit.domains.Domains: supply lookups

    def segments(self) -> Iterator[tuple[Bus, Segment]]:
        for bus in self.buses:
            for seg in bus.segments:
                yield bus, seg


def finding(rule_id: str, *, bus: Bus | None = None, segment: Segment | None = None,
            line: str | None = None, refs=(), nets=(), **data) -> Finding:
    """A Finding of ``rule_id`` at its default severity, with sorted refs and nets."""
    return Finding(rule=rule_id, severity=RULES[rule_id].severity,
                   bus=bus.name if bus else None, segment=segment.id if segment else None,
                   line=line, refs=tuple(sorted(set(refs))), nets=tuple(sorted(set(nets))),
                   data=data)


def _load_rule_modules() -> None:
    # Registration happens on import; a new family module is added here.
    from . import address, budget, pullups, voltage, wiring  # noqa: F401


def all_rules() -> dict[str, Rule]:
    _load_rule_modules()
    return dict(sorted(RULES.items()))


def run_checks(ctx: CheckContext) -> list[Finding]:
    findings: list[Finding] = []
    for r in all_rules().values():
        findings.extend(r.func(ctx))
    return sorted(findings, key=Finding.sort_key)
