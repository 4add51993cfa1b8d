"""KiCad's own demo projects (/usr/share/kicad/demos, Debian package kicad-demos).

Every demo project kicad-cli can export is exported here and read; the part and net counts
must equal those in the exported file, counted with regular expressions rather than with
our parser. All 36 exportable demos take about 20 s with KiCad 9.0.8 on this machine, so
all are run. Three named in ../shared/real-designs/README.md (video, pic_programmer,
stickhub) also go through netaudit's own project reader.
"""

from __future__ import annotations

import re
import subprocess
from pathlib import Path

import pytest

from conftest import KICAD_DEMOS, require_demos
from netaudit.errors import InputError
from netaudit.readers import read_design

pytestmark = pytest.mark.kicad


def _projects(with_schematic: bool) -> list:
    if not KICAD_DEMOS.is_dir():
        return [pytest.param(None, id="demos-absent")]
    return [pytest.param(p, id=str(p.relative_to(KICAD_DEMOS)))
            for p in sorted(KICAD_DEMOS.rglob("*.kicad_pro"))
            if p.with_suffix(".kicad_sch").is_file() == with_schematic]


PROJECTS = _projects(with_schematic=True)
BOARD_ONLY = _projects(with_schematic=False)  # KiCad 9.0.8's demos: microwave
NAMED = ["video/video.kicad_pro", "pic_programmer/pic_programmer.kicad_pro",
         "stickhub/StickHub.kicad_pro"]


def text_counts(text: str) -> tuple[int, int, int]:
    return (len(re.findall(r"^\s*\(comp\s", text, re.M)),
            len(re.findall(r"^\s*\(net\s", text, re.M)),
            len(re.findall(r"\(node\s", text)))


def design_counts(design) -> tuple[int, int, int]:
    return len(design.parts), len(design.nets), sum(len(n.nodes) for n in design.nets)


def export(cli: str, sch: Path, out: Path) -> subprocess.CompletedProcess:
    return subprocess.run([cli, "sch", "export", "netlist", "--format", "kicadsexpr",
                           "-o", str(out), str(sch)], capture_output=True, text=True, timeout=600)


@pytest.mark.parametrize("project", PROJECTS)
def test_demo_export_reads_with_the_counts_in_the_file(project, kicad_cli, tmp_path):
    require_demos()
    sch = project.with_suffix(".kicad_sch")
    out = tmp_path / "demo.net"
    proc = export(kicad_cli, sch, out)
    if proc.returncode != 0:
        pytest.skip(f"kicad-cli cannot export {sch.name}: {proc.stderr.strip()[-200:]}")
    design = read_design(out)
    assert design_counts(design) == text_counts(out.read_text(encoding="utf-8"))
    assert design.parts  # every exportable demo has parts; an empty read would be a bug


@pytest.mark.parametrize("project", BOARD_ONLY)
def test_demo_without_a_root_schematic_is_refused_by_the_project_reader(project):
    require_demos()
    with pytest.raises(InputError, match="no root schematic"):
        read_design(project)


@pytest.mark.parametrize("name", NAMED)
def test_named_demo_reads_through_the_project_reader(name, kicad_cli, tmp_path):
    project = require_demos() / name
    if not project.is_file():
        pytest.skip(f"{project} not installed")
    out = tmp_path / "demo.net"
    assert export(kicad_cli, project.with_suffix(".kicad_sch"), out).returncode == 0
    design = read_design(project)
    assert design.format == "kicad-project"
    assert design_counts(design) == text_counts(out.read_text(encoding="utf-8"))
