"""The design files are read-only to netaudit (ARCHITECTURE.md, house conventions).

Every command and every report format runs on inputs left where they are: the demo netlist
with its netaudit.yaml, a real KiCad 9.0.8 netlist and XML netlist, a real project folder
(project file, schematic, board) and its board alone. Before and after each run the input's
folder is fingerprinted: every file's bytes (SHA-256), size, modification time and mode, and
every folder's modification time (which changes when a file is created there, even one
deleted again). The two must be identical. Reports go to a temporary folder; where a test
asks for them beside the inputs (on a copy), exactly the requested files may appear.
"""

from __future__ import annotations

import hashlib
import shutil
import stat
import subprocess
import sys
from pathlib import Path

import pytest

from conftest import REPO_ROOT, cli_env, require_real
from helpers import invoke

DEMO = REPO_ROOT / "fixtures" / "demo"
BADGE = "event-badge-i2c-mux"

# name -> (path given to netaudit, relative to the real designs unless "demo"; folder watched)
INPUTS = {
    "demo netlist and settings": ("demo", "greenhouse.net"),
    "real netlist": (f"{BADGE}/netlist-kicad-9.0.8", "hexpansion.net"),
    "real XML netlist": (f"{BADGE}/netlist-kicad-9.0.8", "hexpansion.xml"),
    "real project folder": (f"{BADGE}/hexpansion", "."),
    "real project file": (f"{BADGE}/hexpansion", "hexpansion.kicad_pro"),
    "real board": (f"{BADGE}/hexpansion", "hexpansion.kicad_pcb"),
}
COMMANDS = {
    "check (text)": ["check", "{in}"],
    "check --json": ["check", "{in}", "--json", "{out}/r.json"],
    "check --html": ["check", "{in}", "--html", "{out}/r.html"],
    "check --sarif": ["check", "{in}", "--sarif", "{out}/r.sarif"],
    "check --junit": ["check", "{in}", "--junit", "{out}/r.xml"],
    "check --markdown": ["check", "{in}", "--markdown", "{out}/r.md"],
    "check --json -": ["check", "{in}", "--json", "-"],
    "check, every report": ["check", "{in}", "--json", "{out}/a.json", "--html", "{out}/a.html",
                            "--sarif", "{out}/a.sarif", "--junit", "{out}/a.xml", "--markdown", "{out}/a.md"],
    "buses": ["buses", "{in}"],
    "buses --json": ["buses", "{in}", "--json"],
}


def fingerprint(folder: Path) -> dict[str, tuple]:
    """Each file's (size, mtime, mode, SHA-256) and each folder's (mtime, mode), by path."""
    out: dict[str, tuple] = {".": ("folder", folder.stat().st_mtime_ns)}
    for p in sorted(folder.rglob("*")):
        st = p.lstat()
        rel = str(p.relative_to(folder))
        if stat.S_ISREG(st.st_mode):
            out[rel] = (st.st_size, st.st_mtime_ns, stat.S_IMODE(st.st_mode),
                        hashlib.sha256(p.read_bytes()).hexdigest())
        else:
            out[rel] = ("folder" if p.is_dir() else "other", st.st_mtime_ns, stat.S_IMODE(st.st_mode))
    return out


def differences(before: dict, after: dict) -> list[str]:
    keys = sorted(set(before) | set(after))
    return [f"{k}: {before.get(k, 'absent')} -> {after.get(k, 'absent')}" for k in keys
            if before.get(k) != after.get(k)]


def located(name: str) -> tuple[Path, Path]:
    """(the path to give netaudit, the folder to watch) for one of INPUTS."""
    folder, item = INPUTS[name]
    watch = DEMO if folder == "demo" else require_real(folder)
    return (watch / item if item != "." else watch), watch


def run(args: list, tmp_path: Path, target: Path) -> tuple[int, str, str]:
    return invoke([str(a).replace("{in}", str(target)).replace("{out}", str(tmp_path)) for a in args])


@pytest.mark.parametrize("command", list(COMMANDS))
@pytest.mark.parametrize("name", list(INPUTS))
def test_inputs_stay_byte_for_byte_as_they_were(tmp_path, name, command):
    target, watch = located(name)
    before = fingerprint(watch)
    code, out, err = run(COMMANDS[command], tmp_path, target)
    assert code in (0, 1), err  # an audit ran (exit 1: it found something)
    assert differences(before, fingerprint(watch)) == []
    if command.startswith("check --") and not command.endswith("-"):
        assert [p.name for p in tmp_path.iterdir()] == [Path(COMMANDS[command][-1]).name]


@pytest.mark.kicad
def test_project_read_through_kicad_cli_stays_as_it_was(tmp_path, kicad_cli):
    target, watch = located("real project folder")
    before = fingerprint(watch)
    code, _out, err = run(["check", "{in}", "--use-kicad-cli", "--json", "{out}/r.json"], tmp_path, target)
    assert code in (0, 1), err
    # Every file as it was, nothing left behind, and the folder's own time unchanged too:
    # kicad-cli 9.0.8 creates ~NAME.kicad_pro.lck beside the project it opens and deletes it
    # after (seen with strace), so netaudit runs it on a copy in a temporary folder.
    assert differences(before, fingerprint(watch)) == []


@pytest.mark.parametrize("args", [["rules"], ["rules", "pullup-missing"],
                                  ["pullup", "--vdd", "3.3", "--cb", "200p"]],
                         ids=["rules", "rules RULE", "pullup"])
def test_commands_without_a_design_write_nothing_where_they_run(monkeypatch, args):
    monkeypatch.chdir(DEMO)
    before = fingerprint(DEMO)
    code, _out, err = invoke(args)
    assert code == 0, err
    assert differences(before, fingerprint(DEMO)) == []


def test_a_subprocess_run_with_every_report_leaves_the_demo_as_it_was(tmp_path):
    before = fingerprint(DEMO)
    proc = subprocess.run([sys.executable, "-m", "netaudit", "check", str(DEMO / "greenhouse.net"),
                           "--json", str(tmp_path / "r.json"), "--html", str(tmp_path / "r.html"),
                           "--sarif", str(tmp_path / "r.sarif"), "--junit", str(tmp_path / "r.xml"),
                           "--markdown", str(tmp_path / "r.md")],
                          capture_output=True, text=True, env=cli_env(), cwd=str(DEMO), timeout=300, check=False)
    assert proc.returncode == 1, proc.stderr  # the demo's deliberate faults
    assert differences(before, fingerprint(DEMO)) == []
    assert sorted(p.name for p in tmp_path.iterdir()) == ["r.html", "r.json", "r.md", "r.sarif", "r.xml"]


# -- init writes netaudit.yaml and nothing else ----------------------------------------------

def _copy(folder: Path, tmp_path: Path, leave_out: tuple[str, ...] = ()) -> Path:
    copy = tmp_path / folder.name
    shutil.copytree(folder, copy, ignore=shutil.ignore_patterns(*leave_out))
    return copy


@pytest.mark.parametrize("name", ["demo netlist and settings", "real netlist", "real XML netlist",
                                  "real project folder", "real project file"])
def test_init_adds_netaudit_yaml_and_changes_nothing_else(tmp_path, name):
    target, watch = located(name)
    copy = _copy(watch, tmp_path, leave_out=("netaudit.yaml",))
    target = copy / target.relative_to(watch)
    before = fingerprint(copy)
    code, out, err = run(["init", "{in}"], tmp_path, target)
    assert code == 0, err
    after = fingerprint(copy)
    assert set(after) - set(before) == {"netaudit.yaml"}
    changed = differences({k: v for k, v in before.items() if k != "."},
                          {k: v for k, v in after.items() if k not in (".", "netaudit.yaml")})
    assert changed == []


# -- reports asked for beside the inputs: exactly those files appear --------------------------

def test_reports_beside_the_inputs_are_the_only_new_files(tmp_path):
    copy = _copy(DEMO, tmp_path)
    before = fingerprint(copy)
    outputs = {"--json": "r.json", "--html": "r.html", "--sarif": "r.sarif", "--junit": "r.junit.xml",
               "--markdown": "r.md"}
    args = ["check", "{in}"] + [x for flag, out in outputs.items() for x in (flag, str(copy / out))]
    code, _out, err = run(args, tmp_path, copy / "greenhouse.net")
    assert code == 1, err
    after = fingerprint(copy)
    assert set(after) - set(before) == set(outputs.values())
    assert differences({k: v for k, v in before.items() if k != "."},
                       {k: v for k, v in after.items() if k != "." and k not in outputs.values()}) == []

