"""Waivers mark findings, never drop them; selectors are subsets (refs, nets) or equality (bus)."""

from __future__ import annotations

from netaudit.config import Waiver, parse_config
from netaudit.results import Finding, Severity
from netaudit.waivers import apply_waivers, unused_waivers, waiver_matches

PARALLEL = Finding(rule="pullup-parallel", severity=Severity.WARNING,
                   bus="I2C_MAIN", line="sda", refs=("R12", "R13", "R14"), nets=("/SDA",))
MISSING = Finding(rule="pullup-missing", severity=Severity.ERROR,
                  bus="I2C_AUX", line="scl", nets=("/AUX_SCL", "/AUX_SCL_R"))


def waiver(rule="pullup-parallel", reason="accepted", **kw) -> Waiver:
    return Waiver(rule=rule, reason=reason, **kw)


def test_matching_finding_is_marked_with_the_reason():
    (out,) = apply_waivers([PARALLEL], [waiver(refs=("R12",), reason="daughterboard pair")])
    assert out.waived and out.waiver_reason == "daughterboard pair"
    assert out.data == PARALLEL.data and out.refs == PARALLEL.refs


def test_findings_are_never_dropped_or_reordered():
    findings = [MISSING, PARALLEL, MISSING]
    out = apply_waivers(findings, [waiver(), waiver(rule="pullup-missing")])
    assert [f.rule for f in out] == [f.rule for f in findings]
    assert all(f.waived for f in out)


def test_other_rule_is_not_waived():
    out = apply_waivers([MISSING], [waiver(rule="pullup-parallel")])
    assert out == (MISSING,)


def test_rule_only_waiver_covers_every_finding_of_that_rule():
    assert waiver_matches(waiver(), PARALLEL)


def test_refs_selector_is_a_subset():
    assert waiver_matches(waiver(refs=("R13", "R12")), PARALLEL)
    assert not waiver_matches(waiver(refs=("R12", "R99")), PARALLEL)


def test_nets_selector_is_a_subset():
    w = waiver(rule="pullup-missing", nets=("/AUX_SCL",))
    assert waiver_matches(w, MISSING)
    assert not waiver_matches(waiver(rule="pullup-missing", nets=("/SCL",)), MISSING)


def test_bus_selector_must_be_equal():
    assert waiver_matches(waiver(bus="I2C_MAIN"), PARALLEL)
    assert not waiver_matches(waiver(bus="I2C_AUX"), PARALLEL)


def test_bus_selector_does_not_match_a_finding_without_bus():
    lone = Finding(rule="address-unknown", severity=Severity.INFO, refs=("U4",))
    assert not waiver_matches(waiver(rule="address-unknown", bus="I2C_MAIN"), lone)


def test_all_selectors_must_hold_together():
    assert not waiver_matches(waiver(refs=("R12",), bus="I2C_AUX"), PARALLEL)
    assert waiver_matches(waiver(refs=("R12",), nets=("/SDA",), bus="I2C_MAIN"), PARALLEL)


def test_first_matching_waiver_gives_the_reason():
    (out,) = apply_waivers([PARALLEL], [waiver(reason="first"), waiver(reason="second")])
    assert out.waiver_reason == "first"


def test_already_waived_finding_keeps_its_reason():
    done = apply_waivers([PARALLEL], [waiver(reason="earlier")])
    (out,) = apply_waivers(done, [waiver(reason="later")])
    assert out.waiver_reason == "earlier"


def test_unused_waivers_are_those_matching_nothing():
    used, spare = waiver(refs=("R12",)), waiver(rule="address-collision", refs=("U1", "U2"))
    assert unused_waivers([PARALLEL, MISSING], [used, spare]) == (spare,)


def test_waivers_from_a_config_file_apply():
    cfg = parse_config("version: 1\nwaivers:\n  - rule: pullup-missing\n    bus: I2C_AUX\n"
                       "    nets: /AUX_SCL_R\n    reason: pulled up on the cable\n", "x")
    out = apply_waivers([PARALLEL, MISSING], cfg.waivers)
    assert [f.waived for f in out] == [False, True]
    assert out[1].waiver_reason == "pulled up on the cable"
