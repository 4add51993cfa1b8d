"""Fuzzing the whole ``netaudit`` command: every input ends in an audit or in one clean line.

An input either gives a normal audit (exit 0 or 1, and every report asked for parses) or
exit 2 with exactly one line on stderr, ``netaudit: ``, naming the file (the reader adds
``line:column`` where it knows one). Never a traceback, never a hang, never a dead process.

The inputs: byte- and token-level mutations of the real KiCad 9.0.8 netlists and XML
netlists in ../shared/real-designs (skipped when absent), of the demo netlist, of the demo's
netaudit.yaml and of a starter netaudit.yaml (fuzz_inputs.py); netlists and netaudit.yaml
files built by hypothesis (fuzz_built.py; derandomised: the same examples every run).
Each case runs in a worker process, and every ``SAMPLE_EVERY``-th also as
``python -m netaudit`` in a subprocess, which must end the same way (fuzz_harness.py).
Counts are printed and written to test-artifacts/fuzz-summary.txt.

``scripts/fuzz --seconds N [--seed S]`` runs the same cases, from any seed, for longer.
Each bug the fuzzing found is kept as a plain test in test_fuzz_found.py.
"""

from __future__ import annotations

import os
import random
import time
from pathlib import Path

import fuzz_harness
import pytest
import yaml
from conftest import REPO_ROOT
from fuzz_built import SETTINGS, designs, sexpr_netlist, shaped_settings, xml_netlist
from fuzz_harness import (PROBLEMS, Case, Runner, Tally, classify, design_case, fuzz, settings_case,
                          total_line)
from fuzz_inputs import DEMO, load_seeds
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

SUMMARY = REPO_ROOT / "test-artifacts" / "fuzz-summary.txt"

SUITE_SEED = 20260610  # the in-suite mutation run is the same every time
SUITE_CASES = 400      # about 30 s here (2 cores); scripts/fuzz runs as long as asked
HYPOTHESIS_EXAMPLES = 150


_TALLIES: list[Tally] = []


@pytest.fixture(scope="module")
def runner(pytestconfig):
    r = Runner()
    yield r
    r.close()
    SUMMARY.parent.mkdir(parents=True, exist_ok=True)
    text = "\n".join([t.line() for t in _TALLIES] + ["total: " + total_line(_TALLIES)]) + "\n"
    SUMMARY.write_text(text, encoding="utf-8")
    reporter = pytestconfig.pluginmanager.getplugin("terminalreporter")
    capture = pytestconfig.pluginmanager.getplugin("capturemanager")
    if reporter is not None and capture is not None:
        with capture.global_and_fixture_disabled():
            reporter.write_line("")
            for line in text.splitlines():
                reporter.write_line("fuzz " + line)


def _finish(tally: Tally, check: bool = True) -> None:
    _TALLIES.append(tally)
    print(tally.line())
    if check:
        assert tally.tried > 0
        assert tally.problems == 0, tally.line() + "\n\n" + "\n\n".join(tally.failures)


def test_mutated_designs_and_settings_end_in_a_report_or_one_clean_line(runner):
    seeds = load_seeds(real=True)
    if not any(s.kind == "xml" for s in seeds):
        pytest.skip("the real designs are absent (../shared/real-designs); "
                    "test_mutated_demo_... covers the demo alone")
    tally = fuzz(runner, Tally("mutations of real netlists, XML, the demo and netaudit.yaml"),
                 random.Random(SUITE_SEED), seeds, cases=SUITE_CASES)
    _finish(tally)
    # the mix must reach past the readers: some mutated inputs still give an audit
    assert tally.get("report") > SUITE_CASES // 10
    assert tally.get("error") + tally.get("located-error") > SUITE_CASES // 10


def test_mutated_demo_and_settings_end_in_a_report_or_one_clean_line(runner):
    tally = fuzz(runner, Tally("mutations of the demo and netaudit.yaml"),
                 random.Random(SUITE_SEED + 1), load_seeds(real=False), cases=SUITE_CASES // 4)
    _finish(tally)


# -- the harness itself: each kind of bad ending is counted as one --------------------------

def _misbehave(case: Case, folder: Path) -> tuple[str, str, float]:
    if case.label == "hang":
        time.sleep(60)
    if case.label == "crash":
        os._exit(3)
    if case.label == "traceback":
        raise RuntimeError("raised inside the worker")
    return "report", "", 0.0


def test_the_runner_counts_a_hang_a_dead_worker_and_an_exception(monkeypatch):
    monkeypatch.setattr(fuzz_harness, "run_here", _misbehave)  # the forked worker runs this
    r = Runner(hang_s=1.0)
    try:
        endings = [r.run(Case(label, {}, [], ()))[0] for label in ("hang", "crash", "traceback", "fine")]
    finally:
        r.close()
    assert endings == ["hang", "crash", "traceback", "report"]


@pytest.mark.parametrize("code, err, outputs, status", [
    (2, "netaudit: {f}:3:7: unterminated quoted string\n", {}, "located-error"),
    (2, "netaudit: {f}: no such file\n", {}, "error"),
    (2, "netaudit: somewhere else: no such file\n", {}, "bad-error"),
    (2, "netaudit: {f}:1:1: first\nsecond line\n", {}, "bad-error"),
    (2, "Usage: netaudit check [OPTIONS] PATH\n", {}, "bad-error"),
    (1, "", {"json": "missing.json"}, "bad-report"),
    (0, "", {}, "report"),
    (3, "", {}, "bad-exit"),
    (1, "Traceback (most recent call last):\n  ...\n", {}, "traceback"),
], ids=["located", "unlocated", "names another file", "two lines", "usage text", "report missing",
        "report", "exit 3", "traceback text"])
def test_classify_tells_each_ending_apart(tmp_path, code, err, outputs, status):
    case = Case("self-test", {"board.net": b""}, ["check", "{dir}/board.net"], ("board.net",), outputs)
    assert classify(case, tmp_path, code, "", err.replace("{f}", str(tmp_path / "board.net")), None)[0] == status



_HYPOTHESIS = settings(max_examples=HYPOTHESIS_EXAMPLES, deadline=None, derandomize=True, database=None,
                       suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large])


@pytest.fixture(scope="module")
def built_tally():
    tally = Tally("hypothesis-built netlists (S-expression and XML)")
    yield tally
    _finish(tally, check=False)  # each example asserts its own ending


@_HYPOTHESIS
@given(designs(), st.booleans(), st.sampled_from(["json", "all", "buses", "init"]))
def test_built_netlists_end_in_a_report_or_one_clean_line(runner, built_tally, design, as_xml, command):
    name = "gen.xml" if as_xml else "gen.net"
    text = xml_netlist(*design) if as_xml else sexpr_netlist(*design)
    case = design_case("built", name, text.encode("utf-8"), command)
    status, detail, took = runner.run(case)
    built_tally.add(case, status, detail, took)
    assert status not in PROBLEMS, f"[{status}] {text[:2000]}\n{detail}"

# -- hypothesis-built netaudit.yaml ---------------------------------------------------------

@pytest.fixture(scope="module")
def settings_tally():
    tally = Tally("hypothesis-built netaudit.yaml on the demo")
    yield tally
    _finish(tally, check=False)  # each example asserts its own ending


@_HYPOTHESIS
@given(SETTINGS)
def test_built_settings_end_in_a_report_or_one_clean_line(runner, settings_tally, doc):
    text = yaml.safe_dump(doc, allow_unicode=True, sort_keys=False)
    case = settings_case("built settings", text.encode("utf-8"),
                         (DEMO / "greenhouse.net").read_bytes())
    status, detail, took = runner.run(case)
    settings_tally.add(case, status, detail, took)
    assert status not in PROBLEMS, f"[{status}] {text[:3000]}\n{detail}"


@_HYPOTHESIS
@given(st.text(max_size=300))
def test_any_text_as_settings_ends_in_a_report_or_one_clean_line(runner, settings_tally, text):
    case = settings_case("text settings", text.encode("utf-8"),
                         (DEMO / "greenhouse.net").read_bytes())
    status, detail, took = runner.run(case)
    settings_tally.add(case, status, detail, took)
    assert status not in PROBLEMS, f"[{status}] {text!r}\n{detail}"


@_HYPOTHESIS
@given(shaped_settings())
def test_well_shaped_settings_with_extreme_numbers_end_in_a_report_or_one_clean_line(runner, settings_tally, doc):
    text = yaml.safe_dump(doc, allow_unicode=True, sort_keys=False)
    case = settings_case("shaped settings", text.encode("utf-8"), (DEMO / "greenhouse.net").read_bytes())
    status, detail, took = runner.run(case)
    settings_tally.add(case, status, detail, took)
    assert status not in PROBLEMS, f"[{status}] {text[:3000]}\n{detail}"
