"""Waivers: accepted findings stay in the report, marked ``waived`` with the reason.

A waiver matches a finding when the rule ids are equal and every selector the waiver
gives is satisfied (selectors it leaves out match anything):

- ``refs``: every listed ref is among the finding's refs (a subset; the finding may name more);
- ``nets``: every listed net is among the finding's nets (a subset);
- ``bus``: equal to the finding's bus.

Names are compared exactly (case-sensitive, no patterns). A waiver that gives only a rule
waives every finding of that rule. When several waivers match one finding, the first in
file order gives the reason. Findings are never dropped or reordered, and a finding that
is already waived keeps its reason.
"""

from __future__ import annotations

from dataclasses import replace
from typing import Sequence

from .config import Waiver
from .results import Finding


def waiver_matches(waiver: Waiver, finding: Finding) -> bool:
    """True when ``waiver`` covers ``finding`` (see the module docstring)."""
    if waiver.rule != finding.rule:
        return False
    if waiver.bus is not None and waiver.bus != finding.bus:
        return False
    if not set(waiver.refs) <= set(finding.refs):
        return False
    return set(waiver.nets) <= set(finding.nets)


def apply_waivers(findings: Sequence[Finding], waivers: Sequence[Waiver]) -> tuple[Finding, ...]:
    """The same findings, in the same order, with matched ones marked waived."""
    out = []
    for finding in findings:
        if not finding.waived:
            waiver = next((w for w in waivers if waiver_matches(w, finding)), None)
            if waiver is not None:
                finding = replace(finding, waived=True, waiver_reason=waiver.reason)
        out.append(finding)
    return tuple(out)


def unused_waivers(findings: Sequence[Finding], waivers: Sequence[Waiver]) -> tuple[Waiver, ...]:
    """The waivers that match none of ``findings``, in file order."""
    return tuple(w for w in waivers if not any(waiver_matches(w, f) for f in findings))
