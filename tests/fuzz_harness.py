"""Running fuzz cases and telling their endings apart.

An input either gives a normal audit (exit 0 or 1, and every report asked for parses) or
exit 2 with exactly one line on stderr, ``netaudit: ``, naming the file (the reader adds
``line:column`` where it knows one). Never a traceback, never a hang, never a dead process.

Each case runs in a worker process that calls the click command in-process through
``click.testing.CliRunner`` (fast, and a killed worker cannot take the test run with it);
a case running past ``HANG_S`` counts as a hang, and the worker is replaced. Every
``SAMPLE_EVERY``-th case also runs as ``python -m netaudit`` in a subprocess, which must end
the same way. A ``Tally`` counts the endings.

Used by tests/test_fuzz.py and scripts/fuzz; the inputs come from fuzz_inputs.py and
fuzz_built.py.
"""

from __future__ import annotations

import json
import multiprocessing
import random
import re
import shutil
import subprocess
import sys
import tempfile
import time
import traceback
import xml.etree.ElementTree as ET
from dataclasses import dataclass, field
from html.parser import HTMLParser
from pathlib import Path

from conftest import cli_env
from fuzz_inputs import DEMO, Seed, mutate
from helpers import REPORT_FILES, report_options

HANG_S = 10.0          # a case still running after this many seconds is a hang
SAMPLE_EVERY = 40      # one case in this many also runs in a subprocess


# ---------------------------------------------------------------------------------------
# Cases and what counts as a good ending
# ---------------------------------------------------------------------------------------

@dataclass
class Case:
    label: str
    files: dict[str, bytes]        # written into the case's own folder
    args: list[str]                # the command line; "{dir}" is the case's folder
    names: tuple[str, ...]         # the files an error line may name
    outputs: dict[str, str] = field(default_factory=dict)  # report format -> file name


COMMANDS = ("json", "json", "json", "json", "all", "all", "buses", "buses-json", "init")


def design_case(label: str, name: str, data: bytes, command: str) -> Case:
    """A command run on a design file: ``check`` with the JSON report ("json") or with every
    report ("all"), ``buses`` (text or "buses-json"), or ``init``."""
    path = "{dir}/" + name
    if command == "json":
        return Case(label, {name: data}, ["check", path, "--json", "{dir}/report.json"], (name,),
                    {"json": "report.json"})
    if command == "all":
        return Case(label, {name: data}, ["check", path] + report_options("{dir}"), (name,),
                    dict(REPORT_FILES))
    if command in ("buses", "buses-json"):
        return Case(label, {name: data}, ["buses", path] + (["--json"] if command == "buses-json" else []),
                    (name,))
    return Case(label, {name: data}, ["init", path], (name, "netaudit.yaml"), {"init": "netaudit.yaml"})


def settings_case(label: str, text: bytes, design: bytes, rng: random.Random | None = None) -> Case:
    """``check`` on the demo netlist with ``text`` as its netaudit.yaml."""
    explicit = rng is not None and rng.random() < 0.3
    args = ["check", "{dir}/greenhouse.net", "--json", "{dir}/report.json"]
    if explicit:
        args += ["--config", "{dir}/netaudit.yaml"]
    return Case(label, {"greenhouse.net": design, "netaudit.yaml": text}, args,
                ("netaudit.yaml", "greenhouse.net"), {"json": "report.json"})


def make_case(rng: random.Random, seeds: list[Seed], demo_net: bytes) -> Case:
    weights = [1.0 / max(len(s.data), 10_000) ** 0.5 for s in seeds]
    seed = rng.choices(seeds, weights)[0]
    data, names = mutate(rng, seed)
    label = f"{seed.name} ({seed.kind}): {'+'.join(names)}"
    if seed.kind == "yaml":
        return settings_case(label, data, demo_net, rng)
    return design_case(label, seed.name, data, rng.choice(COMMANDS))


class _TagCounter(HTMLParser):
    def __init__(self):
        super().__init__(convert_charrefs=True)
        self.tags = 0

    def handle_starttag(self, tag, attrs):
        self.tags += 1


def check_output(kind: str, path: Path) -> str:
    """"" when the report file is whole and parses, else what is wrong with it."""
    if not path.is_file():
        return f"{kind} report not written"
    data = path.read_bytes()
    try:
        text = data.decode("utf-8")
        if kind in ("json", "sarif"):
            json.loads(text)
        elif kind == "junit":
            ET.fromstring(data)
        elif kind == "html":
            parser = _TagCounter()
            parser.feed(text)
            if "</html>" not in text or parser.tags < 10:
                return "html report is not a whole page"
        elif kind == "markdown":
            if not text.startswith("### netaudit"):
                return "markdown report does not start with its heading"
        elif kind == "init":
            from netaudit.config import parse_config
            parse_config(text, str(path))
    except Exception as exc:  # noqa: BLE001 - any failure to read it back is the finding
        return f"{kind} report does not read back: {type(exc).__name__}: {str(exc)[:200]}"
    return ""


_LOCATED = re.compile(r":\d+(:\d+)?: ")


def classify(case: Case, folder: Path, code: int | None, out: str, err: str,
             crash: str | None) -> tuple[str, str]:
    """(status, detail): status is "report", "error" (clean, one line naming the file),
    "located-error" (the same, with line[:column]) or a problem: "traceback", "bad-error",
    "bad-report", "bad-exit"."""
    if crash:
        return "traceback", crash
    if "Traceback (most recent call last)" in err or "Traceback (most recent call last)" in out:
        return "traceback", err[-3000:]
    if code in (0, 1):
        problems = [p for p in (check_output(kind, folder / name) for kind, name in case.outputs.items()) if p]
        return ("bad-report", "; ".join(problems)) if problems else ("report", "")
    if code == 2:
        lines = err.splitlines()
        if len(lines) == 1 and err.endswith("\n") and lines[0].startswith("netaudit: ") \
                and any(str(folder / name) in lines[0] for name in case.names):
            where = lines[0][len("netaudit: "):]
            for name in case.names:
                where = where.replace(str(folder / name), "", 1)
            return ("located-error" if _LOCATED.match(where) else "error"), lines[0]
        return "bad-error", err[:1000]
    return "bad-exit", f"exit code {code}: {err[:1000]}"


def run_here(case: Case, folder: Path) -> tuple[str, str, float]:
    """Run ``case`` in this process (click's test runner) inside ``folder``."""
    from click.testing import CliRunner

    from netaudit.cli import cli

    for name, data in case.files.items():
        (folder / name).write_bytes(data)
    args = [a.replace("{dir}", str(folder)) for a in case.args]
    start = time.perf_counter()
    result = CliRunner().invoke(cli, args, catch_exceptions=True, prog_name="netaudit")
    seconds = time.perf_counter() - start
    crash = None
    if result.exception is not None and not isinstance(result.exception, SystemExit):
        crash = "".join(traceback.format_exception(*result.exc_info))[-3000:]
    status, detail = classify(case, folder, result.exit_code, result.stdout, result.stderr, crash)
    return status, detail, seconds


def run_subprocess(case: Case, timeout_s: float) -> tuple[str, str, float]:
    """Run ``case`` as ``python -m netaudit`` in a fresh process."""
    with tempfile.TemporaryDirectory(prefix="netaudit-fuzz-") as tmp:
        folder = Path(tmp)
        for name, data in case.files.items():
            (folder / name).write_bytes(data)
        args = [a.replace("{dir}", str(folder)) for a in case.args]
        start = time.perf_counter()
        try:
            proc = subprocess.run([sys.executable, "-m", "netaudit", *args], capture_output=True,
                                  env=cli_env(), timeout=timeout_s, check=False)
        except subprocess.TimeoutExpired:
            return "hang", f"over {timeout_s:.0f} s in a subprocess", timeout_s
        seconds = time.perf_counter() - start
        out = proc.stdout.decode("utf-8", "replace")
        err = proc.stderr.decode("utf-8", "replace")
        status, detail = classify(case, folder, proc.returncode, out, err, None)
        return status, detail, seconds


# ---------------------------------------------------------------------------------------
# The worker process
# ---------------------------------------------------------------------------------------

def _serve(conn, root: str) -> None:
    try:
        import resource
        limit = 3 * 1024 ** 3  # a runaway allocation becomes a MemoryError, not a frozen machine
        resource.setrlimit(resource.RLIMIT_AS, (limit, limit))
    except (ImportError, ValueError, OSError):
        pass
    n = 0
    while True:
        try:
            case = conn.recv()
        except EOFError:
            return
        if case is None:
            return
        n += 1
        folder = Path(root) / f"case{n}"
        folder.mkdir()
        try:
            reply = run_here(case, folder)
        except BaseException as exc:  # noqa: BLE001 - the harness itself must keep going
            reply = ("traceback", "".join(traceback.format_exception(exc))[-3000:], 0.0)
        finally:
            shutil.rmtree(folder, ignore_errors=True)
        conn.send(reply)


class Runner:
    """Runs cases in a worker process; replaces the worker after a hang or a crash."""

    def __init__(self, hang_s: float = HANG_S) -> None:
        self.hang_s = hang_s
        self.ctx = multiprocessing.get_context("fork")
        self.root = Path(tempfile.mkdtemp(prefix="netaudit-fuzz-"))
        self.started = 0
        self._start()

    def _start(self) -> None:
        self.started += 1
        work = self.root / f"worker{self.started}"
        work.mkdir()
        self.conn, child = self.ctx.Pipe()
        self.proc = self.ctx.Process(target=_serve, args=(child, str(work)), daemon=True)
        self.proc.start()
        child.close()

    def _replace(self) -> None:
        if self.proc.is_alive():
            self.proc.kill()
        self.proc.join()
        self.conn.close()
        self._start()

    def run(self, case: Case) -> tuple[str, str, float]:
        try:
            self.conn.send(case)
        except (BrokenPipeError, OSError) as exc:
            self._replace()
            return "crash", f"worker gone before the case: {exc}", 0.0
        start = time.monotonic()
        if not self.conn.poll(self.hang_s):
            self._replace()
            return "hang", f"no answer within {self.hang_s:.0f} s", time.monotonic() - start
        try:
            return self.conn.recv()
        except (EOFError, OSError):
            self.proc.join(5)
            code = self.proc.exitcode
            self._replace()
            return "crash", f"worker died (exit code {code})", time.monotonic() - start

    def close(self) -> None:
        try:
            self.conn.send(None)
            self.proc.join(10)
        except (BrokenPipeError, OSError):
            pass
        if self.proc.is_alive():
            self.proc.kill()
            self.proc.join()
        shutil.rmtree(self.root, ignore_errors=True)


# ---------------------------------------------------------------------------------------
# Counting
# ---------------------------------------------------------------------------------------

PROBLEMS = ("traceback", "hang", "crash", "bad-error", "bad-report", "bad-exit", "mismatch")


@dataclass
class Tally:
    name: str
    counts: dict[str, int] = field(default_factory=dict)
    failures: list[str] = field(default_factory=list)
    failed_cases: list[tuple[Case, str, str]] = field(default_factory=list)  # to save and rerun
    slowest: float = 0.0
    slowest_label: str = ""
    sampled: int = 0

    def add(self, case: Case, status: str, detail: str, seconds: float) -> None:
        self.counts[status] = self.counts.get(status, 0) + 1
        if seconds > self.slowest:
            self.slowest, self.slowest_label = seconds, case.label
        if status in PROBLEMS and len(self.failures) < 20:
            self.failures.append(f"[{status}] {case.label}: {' '.join(case.args)}\n{detail}")
            self.failed_cases.append((case, status, detail))

    def get(self, status: str) -> int:
        return self.counts.get(status, 0)

    @property
    def tried(self) -> int:
        return sum(self.counts.values()) - self.get("mismatch")

    @property
    def problems(self) -> int:
        return sum(self.get(p) for p in PROBLEMS)

    def line(self) -> str:
        errors = self.get("error") + self.get("located-error")
        return (f"{self.name}: inputs tried {self.tried}, reports {self.get('report')}, "
                f"clean errors {errors} ({self.get('located-error')} with line[:column]), "
                f"tracebacks {self.get('traceback')}, hangs {self.get('hang')}, "
                f"crashes {self.get('crash')}, other problems "
                f"{self.get('bad-error') + self.get('bad-report') + self.get('bad-exit')}, "
                f"subprocess sample {self.sampled} ({self.get('mismatch')} ended differently), "
                f"slowest {self.slowest:.2f} s")


def total_line(tallies) -> str:
    """The counts of several tallies together, in one line."""
    def total(status):
        return sum(t.get(status) for t in tallies)
    errors = total("error") + total("located-error")
    other = total("bad-error") + total("bad-report") + total("bad-exit") + total("mismatch")
    return (f"inputs tried {sum(t.tried for t in tallies)}, reports {total('report')}, clean errors {errors} "
            f"({total('located-error')} with line[:column]), tracebacks {total('traceback')}, "
            f"hangs {total('hang')}, crashes {total('crash')}, other problems {other}, "
            f"subprocess sample {sum(t.sampled for t in tallies)}, "
            f"slowest {max((t.slowest for t in tallies), default=0.0):.2f} s")


def fuzz(runner: Runner, tally: Tally, rng: random.Random, seeds: list[Seed], *,
         cases: int | None = None, seconds: float | None = None, sample_every: int = SAMPLE_EVERY,
         progress=None) -> Tally:
    """Run mutation cases until ``cases`` have run or ``seconds`` have passed."""
    demo_net = (DEMO / "greenhouse.net").read_bytes()
    deadline = None if seconds is None else time.monotonic() + seconds
    n = 0
    while (cases is None or n < cases) and (deadline is None or time.monotonic() < deadline):
        case = make_case(rng, seeds, demo_net)
        status, detail, took = runner.run(case)
        tally.add(case, status, detail, took)
        n += 1
        if sample_every and tally.tried % sample_every == 0:
            tally.sampled += 1
            sub_status, sub_detail, _ = run_subprocess(case, runner.hang_s + 20)
            same = sub_status.replace("located-", "") == status.replace("located-", "")
            if not same:
                tally.add(case, "mismatch", f"in-process {status}, subprocess {sub_status}: {sub_detail}", 0.0)
        if progress is not None:
            progress(n, tally)
    return tally
