"""Fixtures for the KiCad plugin tests: KiCad's ``pcbnew`` module, boards loaded through it,
the plugin package built once per session, and a KiCad-like install of it.

``pcbnew`` is imported, in a forked child of the test's own Python (one per test, see
``pytest_runtest_protocol``), from a folder holding just ``pcbnew.py`` and ``_pcbnew.so``
(linked from where KiCad installed them), so none of the system Python's other packages
leak in. Tests skip with the reason when KiCad's module is not there or does not load into
this Python.
"""

from __future__ import annotations

import importlib
import os
import pickle
import shutil
import subprocess
import sys
import tempfile
import traceback
import zipfile
from pathlib import Path

import pytest
from _pytest.runner import runtestprotocol

REPO_ROOT = Path(__file__).resolve().parents[2]
PLUGIN_DIR = REPO_ROOT / "plugin"
ARTIFACTS = REPO_ROOT / "test-artifacts"
SYSTEM_PYTHON = Path("/usr/bin/python3")   # Debian's Python, the one KiCad 9 on Debian runs
KICAD_PY_DIRS = (Path("/usr/lib/python3/dist-packages"),)

_BOARDS: dict[str, object] = {}


def _kicad_module_files() -> tuple[Path, list[Path]] | None:
    for folder in KICAD_PY_DIRS:
        libs = sorted(folder.glob("_pcbnew*.so")) + sorted(folder.glob("_pcbnew*.pyd"))
        if (folder / "pcbnew.py").is_file() and libs:
            return folder / "pcbnew.py", libs
    return None


@pytest.hookimpl(tryfirst=True)
def pytest_runtest_protocol(item, nextitem):
    """Every test that loads KiCad's ``pcbnew`` module runs in a child process of its own, so
    the module never enters the Python that runs the rest of the suite.

    Loaded into this suite's Python (not the build KiCad's module was made for), it damaged
    the interpreter's memory: the process crashed as it shut down, after every test had
    passed (once in CI, once in twelve runs of the plugin tests here; the core dump shows a
    tuple of constants freed twice in the final garbage collection). A child leaves without
    the interpreter's shutdown, and a crash inside one fails that test where it is seen."""
    if "pcbnew_api" not in getattr(item, "fixturenames", ()) or not hasattr(os, "fork"):
        return None   # (no fork on Windows: such tests run here, as they did before)
    item.ihook.pytest_runtest_logstart(nodeid=item.nodeid, location=item.location)
    reports = _reports_from_child(item, nextitem)
    try:
        # The child tore down what the next test does not need in its own copy of pytest's
        # setup stack; this process tears down its own (pytest's, as the next test expects).
        item.session._setupstate.teardown_exact(nextitem)
    except Exception as exc:   # a fixture's own teardown failing, reported as pytest would
        reports.append(pytest.TestReport(item.nodeid, item.location, {}, "failed",
                                  f"teardown after the child process: {exc!r}", "teardown"))
    for report in reports:
        item.ihook.pytest_runtest_logreport(report=report)
    item.ihook.pytest_runtest_logfinish(nodeid=item.nodeid, location=item.location)
    return True


def _reports_from_child(item, nextitem) -> list:
    """Run one test's setup, call and teardown in a forked child; its reports come back
    through a file in pytest's own serialisable form (pickled: skip reports hold tuples)."""
    hook = item.config.hook
    with tempfile.TemporaryDirectory(prefix="netaudit-child-") as folder:
        out = Path(folder) / "reports.pickle"
        pid = os.fork()
        if pid == 0:   # the child: run, write the reports, leave without shutting Python down
            code = 0
            try:
                reports = runtestprotocol(item, log=False, nextitem=nextitem)
                data = [hook.pytest_report_to_serializable(config=item.config, report=r)
                        for r in reports]
                out.write_bytes(pickle.dumps(data))
            except BaseException:
                traceback.print_exc()
                code = 3
            finally:
                sys.stdout.flush()
                sys.stderr.flush()
                os._exit(code)
        _, status = os.waitpid(pid, 0)
        if os.WIFEXITED(status) and os.WEXITSTATUS(status) == 0 and out.is_file():
            return [hook.pytest_report_from_serializable(config=item.config, data=d)
                    for d in pickle.loads(out.read_bytes())]
    how = (f"was killed by signal {os.WTERMSIG(status)}" if os.WIFSIGNALED(status)
           else f"exited with status {os.waitstatus_to_exitcode(status)}")
    return [pytest.TestReport(item.nodeid, item.location, {}, "failed",
                       f"the child process running this test {how} before reporting", "call")]


@pytest.fixture(scope="session")
def pcbnew_api(tmp_path_factory):
    """KiCad's pcbnew module, imported into this Python; skip when unavailable."""
    if "pcbnew" in sys.modules:
        return sys.modules["pcbnew"]
    files = _kicad_module_files()
    if files is None:
        pytest.skip("KiCad's pcbnew module not found (install KiCad 7 or newer; looked in "
                    + ", ".join(map(str, KICAD_PY_DIRS)) + ")")
    folder = tmp_path_factory.mktemp("pcbnew_only")
    module, libs = files
    (folder / module.name).symlink_to(module)
    for lib in libs:
        (folder / lib.name).symlink_to(lib)
    sys.path.insert(0, str(folder))
    try:
        return importlib.import_module("pcbnew")
    except ImportError as exc:
        sys.path.remove(str(folder))
        pytest.skip(f"KiCad's pcbnew module does not load into Python "
                    f"{sys.version_info.major}.{sys.version_info.minor}: {exc}")


@pytest.fixture(scope="session")
def load_board(pcbnew_api):
    """Load a board through pcbnew once per test (each such test runs in its own child)."""
    def load(path: Path):
        key = str(path)
        if key not in _BOARDS:
            _BOARDS[key] = pcbnew_api.LoadBoard(key)
        return _BOARDS[key]
    return load


@pytest.fixture(scope="session")
def plugin_package(pcbnew_api):
    """The PCB-editor plugin package from the source tree, imported as KiCad would find it."""
    if str(PLUGIN_DIR) not in sys.path:
        sys.path.insert(0, str(PLUGIN_DIR))
    return importlib.import_module("netaudit_action")


@pytest.fixture(scope="session")
def built_zip(tmp_path_factory) -> Path:
    """The plugin-manager zip, built once per session by plugin/build_package.py."""
    out = tmp_path_factory.mktemp("package")
    proc = subprocess.run([sys.executable, str(PLUGIN_DIR / "build_package.py"), "--out", str(out)],
                          capture_output=True, text=True, timeout=300, check=False)
    assert proc.returncode == 0, proc.stderr
    zips = sorted(out.glob("*.zip"))
    assert len(zips) == 1, proc.stdout
    return zips[0]


@pytest.fixture(scope="session")
def kicad_install(built_zip, tmp_path_factory) -> tuple[Path, str]:
    """The zip unpacked as KiCad's plugin manager lays it out (from memory: plugins/ goes to
    3rdparty/plugins/<identifier with dots as underscores>/). Returns (the folder KiCad
    puts on sys.path, the package name it imports)."""
    import json
    root = tmp_path_factory.mktemp("kicad3rdparty")
    unpacked = root / "unpacked"
    with zipfile.ZipFile(built_zip) as z:
        z.extractall(unpacked)
    identifier = json.loads((unpacked / "metadata.json").read_text(encoding="utf-8"))["identifier"]
    name = identifier.replace(".", "_")
    plugins = root / "3rdparty" / "plugins"
    plugins.mkdir(parents=True)
    shutil.copytree(unpacked / "plugins", plugins / name)
    return plugins, name
