"""The HTML release report: what a reviewer sees, checked in a real browser (headless Chromium)
where it matters, and the pictures checked against the bus specification's arithmetic.

Invented data: the demo design (fixtures/demo, our own scenario) and small hand-made designs.
"""

from __future__ import annotations

import dataclasses
import os
import re
import shutil
import subprocess
import sys
from datetime import datetime, timezone
from html.parser import HTMLParser
from pathlib import Path

import pytest
from conftest import cli_env
from handmade import build, ic, markup_design, res
from markupsafe import escape

from netaudit.addressing import address_domains
from netaudit.audit import audit, audit_design
from netaudit.config import Config
from netaudit.report import html, svg
from netaudit.report.messages import phrase
from netaudit.results import LineBudget

REPO = Path(__file__).resolve().parents[1]
DEMO = REPO / "fixtures" / "demo" / "greenhouse.net"
ARTIFACTS = REPO / "test-artifacts"
WHEN = datetime(2026, 3, 1, 12, 0, 0, tzinfo=timezone.utc)

HOSTILE_SDA = "/SDA<script>document.title='pwned'</script>"
HOSTILE_SCL = "/SCL<img src=x onerror=\"document.title='pwned2'\">"


# ---------------------------------------------------------------------------
# helpers
# ---------------------------------------------------------------------------

class _Dom(HTMLParser):
    """Elements (tag, attributes) and the text of a serialised DOM."""

    def __init__(self) -> None:
        super().__init__(convert_charrefs=True)
        self.elements: list[tuple[str, dict[str, str]]] = []
        self.text: list[str] = []
        self._in_title = False
        self.title = ""

    def handle_starttag(self, tag, attrs):
        self.elements.append((tag, {k: v or "" for k, v in attrs}))
        self._in_title = tag == "title" and not any(t == "svg" for t, _ in self.elements[:-1]) and not self.title

    def handle_endtag(self, tag):
        self._in_title = False

    def handle_data(self, data):
        self.text.append(data)
        if self._in_title:
            self.title += data

    def having(self, tag: str | None = None, **attrs) -> list[dict[str, str]]:
        out = []
        for t, a in self.elements:
            if tag is not None and t != tag:
                continue
            if all((k.replace("_", "-") in a) and (v is None or a[k.replace("_", "-")] == v or
                                                  (k == "class" and v in a["class"].split()))
                   for k, v in attrs.items()):
                out.append(a)
        return out

    @property
    def all_text(self) -> str:
        return " ".join("".join(self.text).split())


def _dom(text: str) -> _Dom:
    parser = _Dom()
    parser.feed(text)
    return parser


def _chromium() -> str:
    path = shutil.which("chromium") or ("/usr/bin/chromium" if os.path.exists("/usr/bin/chromium") else None)
    if path is None:
        pytest.skip("headless Chromium not installed (/usr/bin/chromium; Debian package chromium, "
                    "installed by scripts/install-system-deps)")
    return path


def _browser(page: Path, tmp_path: Path, *args: str) -> subprocess.CompletedProcess:
    """Run headless Chromium on a local file with networking and updates off (TOOLING.md)."""
    cmd = [_chromium(), "--headless", "--no-sandbox", "--disable-gpu", "--disable-background-networking",
           "--disable-component-update", "--no-first-run", f"--user-data-dir={tmp_path / 'chromium-profile'}",
           *args, page.resolve().as_uri()]
    proc = subprocess.run(cmd, capture_output=True, text=True, timeout=180, check=False)
    assert proc.returncode == 0, proc.stderr[-2000:]
    return proc


def _demo():
    return audit(DEMO)


def _hostile_design():
    """A design whose net names carry markup and script (hand-made, invented)."""
    return markup_design(HOSTILE_SDA, "<b>SENSOR</b>", scl=HOSTILE_SCL)


def _two_bus_design():
    """A controller with two ports, one target on each (hand-made, invented)."""
    return build([ic("U1", "MCU", ["I2C1_SDA", "I2C1_SCL", "I2C2_SDA", "I2C2_SCL", "VDD", "GND"], pins_total=48),
                  ic("U2", "SENSOR", ["SDA", "SCL", "VDD", "GND"]),
                  ic("U3", "SENSOR", ["SDA", "SCL", "VDD", "GND"]),
                  res("R1", "4k7"), res("R2", "4k7"), res("R3", "4k7")],
                 {"/A_SDA": ["U1.I2C1_SDA", "U2.SDA", "R1.1"], "/A_SCL": ["U1.I2C1_SCL", "U2.SCL", "R2.1"],
                  "/B_SDA": ["U1.I2C2_SDA", "U3.SDA", "R3.1"], "/B_SCL": ["U1.I2C2_SCL", "U3.SCL"],
                  "+3V3": ["U1.VDD", "U2.VDD", "U3.VDD", "R1.2", "R2.2", "R3.2"],
                  "GND": ["U1.GND", "U2.GND", "U3.GND"]}, title="twobus")


# Addresses of the demo's devices as fixtures/demo/README.md gives them (our own scenario).
DEMO_ADDRESSES = {"U2": 0x44, "U3": 0x51, "U5": 0x48, "U6": 0x27, "U8": 0x77, "U9": 0x22, "U10": 0x7A,
                  "U401": 0x76, "U402": 0x29, "U403": 0x29, "U404": 0x76, "U405": 0x62,
                  "U201": 0x48, "U301": 0x48}


def _with_addresses(result, addresses=DEMO_ADDRESSES):
    """The audit with the given addresses set by hand; its address domains are worked out
    again here (the pipeline's step), since reports only read ``Audit.address_domains``."""
    buses = []
    for bus in result.buses:
        segs = tuple(dataclasses.replace(s, devices=tuple(
            dataclasses.replace(d, address=addresses.get(d.ref, d.address)) for d in s.devices))
            for s in bus.segments)
        buses.append(dataclasses.replace(bus, segments=segs))
    return dataclasses.replace(result, buses=tuple(buses), address_domains=tuple(address_domains(buses)))


# ---------------------------------------------------------------------------
# in the browser
# ---------------------------------------------------------------------------

def test_demo_report_in_chromium_shows_every_finding_every_bus_diagram_and_the_address_maps(tmp_path):
    result = _demo()
    page = tmp_path / "report.html"
    page.write_text(html.render(result, WHEN), encoding="utf-8")
    dom = _dom(_browser(page, tmp_path, "--dump-dom").stdout)

    text = dom.all_text
    for f in result.findings:
        assert " ".join(phrase(f).split()) in text, phrase(f)
    shown = dom.having(None, **{"class": "finding", "data_rule": None})
    assert len(shown) == len(result.findings)
    for bus in result.buses:
        assert len(dom.having("svg", **{"class": "bus-diagram", "data_bus": bus.name})) == 1, bus.name
    domains = [d.name for b in result.buses for d in html.address_domains(b, result.address_domains)]
    # the demo's mux U401 makes four channel domains beside the three buses' own (CONTRACT.md topology)
    assert len(domains) == 3 + 4
    for name in domains:
        assert len(dom.having("svg", **{"class": "address-map", "data_domain": name})) == 1, name
    assert len(dom.having("g", **{"class": "cell"})) == 128 * len(domains)
    assert not dom.having("script")
    # every address the audit knows is drawn as taken in its domain's map
    for bus in result.buses:
        for dom_ in html.address_domains(bus, result.address_domains):
            svg_text = svg.address_map(dom_.name, dom_.local, dom_.upstream)
            cells = {a["data-address"]: a["class"].split()[1] for a in _dom(svg_text).having("g", **{"class": "cell"})}
            for d in dom_.local + dom_.upstream:
                if d.address is not None and not d.address_10bit:
                    assert cells[f"0x{d.address:02X}"] in ("taken", "upstream", "collision"), (dom_.name, d.ref)


def test_demo_report_screenshot_is_saved_as_a_test_artefact(tmp_path):
    page = tmp_path / "report.html"
    page.write_text(html.render(_demo(), WHEN), encoding="utf-8")
    ARTIFACTS.mkdir(exist_ok=True)
    shot = ARTIFACTS / "report-demo.png"
    if shot.exists():
        shot.unlink()
    _browser(page, tmp_path, f"--screenshot={shot}", "--window-size=1280,4000", "--hide-scrollbars")
    data = shot.read_bytes()
    assert data[:8] == b"\x89PNG\r\n\x1a\n"
    width, height = int.from_bytes(data[16:20], "big"), int.from_bytes(data[20:24], "big")
    assert (width, height) == (1280, 4000)


def test_net_names_carrying_script_show_as_text_and_do_not_run(tmp_path):
    result = audit_design(_hostile_design(), Config.empty())
    assert any(HOSTILE_SDA in line.nets for b in result.buses for s in b.segments for line in s.lines)
    page = tmp_path / "hostile.html"
    page.write_text(html.render(result, WHEN), encoding="utf-8")
    dumped = _browser(page, tmp_path, "--dump-dom").stdout
    dom = _dom(dumped)
    assert dom.title == "Bus audit: hostile.net"          # the scripts would have set "pwned…"
    assert not dom.having("script")
    assert not [a for _, a in dom.elements if "onerror" in a]
    assert not dom.having("img") and not dom.having("b")
    assert HOSTILE_SDA in dom.all_text and HOSTILE_SCL[:30] in dom.all_text
    assert "&lt;script&gt;document.title='pwned'&lt;/script&gt;" in dumped


def test_printed_report_is_a4_with_each_bus_on_a_new_page(tmp_path):
    result = audit_design(_two_bus_design(), Config.empty())
    assert [b.name for b in result.buses] == ["A", "B"]
    page = tmp_path / "twobus.html"
    page.write_text(html.render(result, WHEN), encoding="utf-8")
    pdf = tmp_path / "twobus.pdf"
    _browser(page, tmp_path, "--no-pdf-header-footer", f"--print-to-pdf={pdf}")
    data = pdf.read_bytes()
    boxes = re.findall(rb"/MediaBox\s*\[\s*0\s+0\s+([\d.]+)\s+([\d.]+)\s*\]", data)
    assert boxes
    for w, h in boxes:   # ISO 216 A4, 210 mm x 297 mm = 595.3 pt x 841.9 pt
        assert abs(float(w) - 595.3) < 1.5 and abs(float(h) - 841.9) < 1.5
    pages = len(re.findall(rb"/Type\s*/Page\b", data))
    # identity and summary, one page per bus, then address maps, findings and waived findings
    assert pages >= 1 + 2 + 3


# ---------------------------------------------------------------------------
# contents
# ---------------------------------------------------------------------------

def test_report_names_the_design_release_identity_and_the_caution():
    result = _demo()
    page = html.render(result, WHEN)
    d = result.design
    for item in ("greenhouse.net", d.sha256, "Greenhouse climate node", "9.0.8", "netaudit.yaml",
                 result.config_sha256, "2026-03-01 12:00:00 UTC", "0.1.0"):
        assert str(escape(item)) in page, item
    from netaudit.report.json import CAUTION
    assert str(escape(CAUTION)) in page


def test_findings_are_grouped_by_severity_with_the_rule_what_why_and_fix():
    page = html.render(_demo(), WHEN)
    findings = page[page.index('id="findings"'):page.index('id="waived"')]
    assert findings.index("Errors") < findings.index("Warnings")
    block = findings[findings.index('data-rule="pullup-missing"'):]
    block = block[:block.index("</article>")]
    doc = html.rule_text("pullup-missing")
    assert doc["what"] and doc["why"] and doc["fix"] and doc["source"]
    for key in ("What", "Why", "Fix", "Source"):
        assert f"<dt>{key}</dt>" in block
    assert "UM10204 Rev. 6 section 3.1.1" in block


def test_waived_findings_have_their_own_section_with_reasons():
    result = _demo()
    page = html.render(result, WHEN)
    waived = page[page.index('id="waived"'):]
    reasons = {f.waiver_reason for f in result.findings if f.waived}
    assert reasons
    for reason in reasons:
        assert str(escape(reason)) in waived
    live = page[page.index('id="findings"'):page.index('id="waived"')]
    assert 'data-rule="pullup-to-signal"' not in live


def test_bus_diagram_draws_each_segment_pullup_and_device_with_faults_marked():
    result = _demo()
    bus = next(b for b in result.buses if b.name == "I2C_MAIN")
    dom = _dom(svg.bus_diagram(bus, result.findings, phrase))
    assert {a["data-segment"] for a in dom.having("g", **{"class": "segment"})} == {s.id for s in bus.segments}
    refs = {a["data-ref"] for a in dom.having("g", **{"class": "pullup"})}
    assert refs == {p.ref for s in bus.segments for line in s.lines for p in line.pullups}
    assert "R2" in refs        # not fitted: drawn (dashed), not left out
    devices = [a["data-ref"] for a in dom.having("g", **{"class": "device"})]
    assert len(devices) == sum(len(s.devices) for s in bus.segments)
    faults = {a["data-ref"]: a["data-fault"] for a in dom.having("g", data_fault=None, data_ref=None)}
    assert faults["R405"] == "error" and faults["R406"] == "error"       # demo faults 10, 11
    assert faults["R3"] == "warning" and faults["R4"] == "warning"       # demo fault 1
    assert "R1" not in faults and "R407" not in faults                   # R407's finding is waived
    ch1 = [a for a in dom.having("g", **{"class": "line", "data_fault": None})]
    assert len(ch1) >= 2                                                 # CH1 lines without pull-ups
    text = svg.bus_diagram(bus, result.findings, phrase)
    assert "2.2 kΩ" in text and "+3V3" in text


def test_many_devices_wrap_onto_rows_with_the_lines_carried_on():
    result = _demo()
    bus = next(b for b in result.buses if b.name == "I2C_MAIN")
    root = next(s for s in bus.segments if s.upstream is None)
    assert len(root.devices) > 6
    text = svg.bus_diagram(bus, result.findings, phrase)
    band = text[text.index(f"data-segment='{root.id}'"):]
    band = band[:band.index("<g class='segment'")]
    tops = {float(y) for y in re.findall(r"<rect x='[\d.]+' y='([\d.]+)' width='104'", band)}
    assert len(tops) == 2                                    # two rows of device boxes
    sda = band[band.index("data-line='sda'"):]
    sda = sda[:sda.index("</g>")]
    assert sda.count("<line ") == 2 + 1                      # a line per row and the join between them


def test_rising_edge_crosses_30_and_70_percent_at_the_times_of_the_spec():
    # UM10204 Rev. 6 section 7.1: t1 = 0.3566749 RC (0.3 VDD), t2 = 1.2039729 RC (0.7 VDD).
    rp, cb, vdd = 4700.0, 200e-12, 3.3
    b = LineBudget(rp_ohms=rp, rail_volts=vdd, capacitance_farads=cb, rise_time_max_s=300e-9)
    plot = svg.edge_plot(b, (0.3 * vdd, 0.7 * vdd), label="x")
    root = _dom(plot).having("svg")[0]
    rc = rp * cb
    assert float(root["data-t-low-s"]) == pytest.approx(0.3566749 * rc, rel=1e-5)
    assert float(root["data-t-high-s"]) == pytest.approx(1.2039729 * rc, rel=1e-5)
    # The drawn curve itself crosses 70 % where the spec says (read back from the path).
    frame = re.search(r"<rect x='([\d.]+)' y='([\d.]+)' width='([\d.]+)' height='([\d.]+)'", plot)
    x0, y0, w, h = (float(v) for v in frame.groups())
    span = float(root["data-span-s"])
    v_top = vdd * 1.08
    points = [tuple(map(float, p.split())) for p in
              re.search(r"class='curve' d='M([^']*)'", plot).group(1).split(" L")]
    y70 = y0 + h * (1 - 0.7 * vdd / v_top)
    (xa, ya), (xb, yb) = next((p, q) for p, q in zip(points, points[1:]) if p[1] >= y70 >= q[1])
    x70 = xa + (xb - xa) * (ya - y70) / (ya - yb)
    assert (x70 - x0) / w * span == pytest.approx(1.2039729 * rc, rel=0.02)


def test_rising_edge_of_pullups_to_two_rails_matches_ngspice():
    # TOOLING.md ngspice check: 3.3 V through 4.7 kΩ and 5 V through 10 kΩ into 200 pF give
    # Rth 3197 Ω, Vth 3.843 V, and the line reaches 1.0 V after 192.6 ns (ngspice 39.3 transient).
    b = LineBudget(rp_ohms=3197.0, rail_volts=3.843, capacitance_farads=200e-12, rise_time_max_s=300e-9)
    root = _dom(svg.edge_plot(b, (1.0, 2.31), label="x")).having("svg")[0]
    assert float(root["data-t-low-s"]) == pytest.approx(192.6e-9, rel=0.003)


def test_rising_edge_limit_sits_one_rise_time_after_the_low_threshold():
    # Fast-mode tr max 300 ns (UM10204 Rev. 6 Table 10), measured from the 30 % crossing.
    b = LineBudget(rp_ohms=10e3, rail_volts=3.3, capacitance_farads=260e-12, rise_time_max_s=300e-9)
    plot = svg.edge_plot(b, (0.99, 2.31), label="x")
    root = _dom(plot).having("svg")[0]
    assert float(root["data-limit-s"]) == pytest.approx(float(root["data-t-low-s"]) + 300e-9, rel=1e-5)
    assert svg.SEVERITY_COLOURS["error"] in plot[plot.index("class='curve'"):]   # late edge drawn as a fault


def test_rising_edge_is_left_out_when_the_budget_has_no_pullup():
    assert svg.edge_plot(LineBudget(capacitance_farads=20e-12, rise_time_max_s=300e-9), (0.99, 2.31),
                         label="x") == ""


def test_capacitance_bar_parts_add_up_to_the_total_and_the_limit_is_marked():
    # Cb(max) 400 pF in Fast-mode: UM10204 Rev. 6 Table 10.
    b = LineBudget(capacitance_farads=118e-12, capacitance_parts={"pins": 100e-12, "routing": 18e-12,
                                                                  "vias": 0.0, "capacitors": 0.0, "extra": 0.0})
    bar = svg.capacitance_bar(b, 400e-12)
    widths = [float(w) for w in re.findall(r"class='cap-part'[^>]* width='([\d.]+)'", bar)]
    limit_x = float(re.search(r"<line x1='([\d.]+)'", bar).group(1))
    assert sum(widths) / limit_x == pytest.approx(118 / 400, rel=0.01)
    assert "118 pF of 400 pF" in bar


def test_address_map_has_128_cells_with_reserved_taken_and_collision():
    from netaudit.results import Device
    devs = [Device("U1", "A", address=0x48), Device("U2", "B", address=0x48), Device("U3", "C", address=0x29),
            Device("U4", "D", address=0x7A), Device("U5", "E", address=None)]
    dom = _dom(svg.address_map("TEST", devs))
    cells = {a["data-address"]: a["class"].split()[1] for a in dom.having("g", **{"class": "cell"})}
    assert len(cells) == 128
    # reserved groups 0000 XXX and 1111 XXX: UM10204 Rev. 6 section 3.1.12, Table 3
    reserved = {f"0x{a:02X}" for a in list(range(0x00, 0x08)) + list(range(0x78, 0x80))}
    assert {a for a, s in cells.items() if s == "reserved"} == reserved - {"0x7A"}
    assert cells["0x48"] == "collision" and cells["0x29"] == "taken" and cells["0x7A"] == "taken"
    assert sum(s == "free" for s in cells.values()) == 128 - 16 - 2


def test_mux_channels_are_separate_address_domains_that_see_upstream_devices():
    # CONTRACT.md topology semantics: a channel's domain is the channel plus the upstream segment.
    result = _with_addresses(_demo())
    main = next(b for b in result.buses if b.name == "I2C_MAIN")
    domains = {d.name: d for d in html.address_domains(main, result.address_domains)}
    root = domains["I2C_MAIN"]
    assert {"U2", "U401", "U8"} <= {d.ref for d in root.local}       # U8 sits behind translator U7
    assert not {"U402", "U403", "U404"} & {d.ref for d in root.local}
    ch2 = domains["I2C_MAIN → U401 channel 2"]
    assert [d.ref for d in ch2.local] == ["U404"] and "U401" in {d.ref for d in ch2.upstream}
    cells = {a["data-address"]: a["class"].split()[1]
             for a in _dom(svg.address_map(ch2.name, ch2.local, ch2.upstream)).having("g", **{"class": "cell"})}
    assert cells["0x76"] == "collision"          # the demo's fault 9: U404 answers the mux's own 0x76
    ch0 = domains["I2C_MAIN → U401 channel 0"]
    cells0 = {a["data-address"]: a["class"].split()[1]
              for a in _dom(svg.address_map(ch0.name, ch0.local, ch0.upstream)).having("g", **{"class": "cell"})}
    assert cells0["0x29"] == "taken" and cells0["0x44"] == "upstream"   # U402 alone; U2 seen upstream


def test_report_draws_only_the_address_domains_the_audit_carries():
    # Reports format; the pipeline works the domains out. An Audit made without them gets
    # no address maps rather than maps the report worked out itself.
    result = _demo()
    assert result.address_domains
    bare = dataclasses.replace(result, address_domains=())
    page = html.render(bare, WHEN)
    assert "address-map" not in "".join(a.get("class", "") for a in _dom(page).having("svg"))
    drawn = _dom(html.render(result, WHEN)).having("svg", **{"class": "address-map"})
    assert len(drawn) == len(result.address_domains)


def test_rule_documentation_is_split_into_what_why_fix_and_source():
    from netaudit.checks import all_rules
    for rule_id, rule in all_rules().items():
        doc = html.rule_text(rule_id)
        for key in ("what", "why", "fix", "source"):
            if f"\n{key.capitalize()}:" in "\n" + rule.doc:
                assert doc[key], (rule_id, key)
        assert doc["summary"] == rule.summary or doc["summary"].startswith(rule.summary), rule_id


# ---------------------------------------------------------------------------
# the run date, and the command line
# ---------------------------------------------------------------------------

def test_run_date_comes_from_source_date_epoch():
    assert html.run_date({"SOURCE_DATE_EPOCH": "1772366400"}) == WHEN


def test_a_source_date_epoch_that_is_no_number_is_refused():
    from netaudit.errors import InputError
    with pytest.raises(InputError, match="SOURCE_DATE_EPOCH"):
        html.run_date({"SOURCE_DATE_EPOCH": "yesterday"})


def _cli(args, tmp_path, epoch: str | None):
    env = cli_env()
    env.pop("SOURCE_DATE_EPOCH", None)
    if epoch is not None:
        env["SOURCE_DATE_EPOCH"] = epoch
    return subprocess.run([sys.executable, "-m", "netaudit", *map(str, args)], capture_output=True, text=True,
                          env=env, cwd=tmp_path, timeout=300, check=False)


FORMATS = {"--html": "r.html", "--sarif": "r.sarif", "--junit": "r.junit.xml", "--markdown": "r.md",
           "--json": "r.json"}


def _run_all(tmp_path: Path, name: str, epoch: str | None) -> dict[str, bytes]:
    out = tmp_path / name
    out.mkdir()
    args = ["check", DEMO, "--quiet"]
    for opt, file in FORMATS.items():
        args += [opt, out / file]
    proc = _cli(args, tmp_path, epoch)
    assert proc.returncode == 1, proc.stderr         # the demo's deliberate faults
    return {file: (out / file).read_bytes() for file in FORMATS.values()}


def test_reports_are_byte_identical_between_runs_with_a_fixed_date(tmp_path):
    first = _run_all(tmp_path, "one", "1772366400")
    second = _run_all(tmp_path, "two", "1772366400")
    assert first == second
    assert b"2026-03-01" in first["r.html"] and b"2026-03-01" in first["r.sarif"]


def test_reports_differ_only_in_the_run_date_between_runs(tmp_path):
    first = _run_all(tmp_path, "one", "1772366400")       # 2026-03-01 12:00:00 UTC
    second = _run_all(tmp_path, "two", "1772452800")      # 2026-03-02 12:00:00 UTC
    assert first["r.html"] != second["r.html"]
    for file in FORMATS.values():
        a = first[file].replace(b"2026-03-01", b"DATE")
        b = second[file].replace(b"2026-03-02", b"DATE")
        assert a == b, file


def test_two_reports_on_standard_output_are_refused_with_one_line(tmp_path):
    proc = _cli(["check", DEMO, "--html", "-", "--sarif", "-"], tmp_path, "0")
    assert proc.returncode == 2
    assert proc.stderr.count("\n") == 1 and "--html" in proc.stderr and "--sarif" in proc.stderr
    assert proc.stdout == ""


def test_html_on_standard_output_comes_without_the_text_summary(tmp_path):
    proc = _cli(["check", DEMO, "--html", "-"], tmp_path, "0")
    assert proc.returncode == 1
    assert proc.stdout.startswith("<!DOCTYPE html>") and proc.stdout.rstrip().endswith("</html>")


def test_report_needs_nothing_from_the_network():
    page = html.render(_demo(), WHEN)
    assert not re.search(r"""(src|href)\s*=\s*["']?(https?:|//)""", page)
    assert "@import" not in page and "<link" not in page and "<script" not in page


def test_a_bad_source_date_epoch_stops_the_check_with_one_line(tmp_path):
    proc = _cli(["check", DEMO, "--html", tmp_path / "r.html"], tmp_path, "soon")
    assert proc.returncode == 2
    assert proc.stderr.count("\n") == 1 and "SOURCE_DATE_EPOCH" in proc.stderr
    assert not (tmp_path / "r.html").exists()


@pytest.mark.parametrize("text", ['<b>&"\'', "&amp;", "plain", "", "ΩµΩ<\u202e>", None, 4.7])
def test_svg_escaping_equals_the_standard_librarys_html_escape(text):
    import html

    from netaudit.report.svg import esc
    assert esc(text) == html.escape("" if text is None else str(text), quote=True)
