"""Hostile text in a design reaches every report as text, never as markup or terminal commands.

A small hand-made board (invented: a controller, a sensor, one pull-up) carries the same
hostile string in a net name, a part value, a field, a reference, the title and revision,
and, through netaudit.yaml, a bus name and a waiver reason. ``netaudit check`` writes every
report; each must stay what it is:

- text (terminal): no control character, DEL, C1 control, bidirectional control, line or
  paragraph separator or byte-order mark from the design reaches the terminal raw; they are
  shown as visible escapes (``\\x1b``, ``\\u202e``);
- JSON: valid, and the strings come back unchanged;
- HTML: escaped, no element or attribute the design put there (parsed with html.parser);
- SARIF: valid JSON (and valid against the SARIF 2.1.0 schema when scripts/fetch-sarif-schema
  has fetched it), strings unchanged;
- JUnit: parses as XML 1.0 (characters XML cannot carry are replaced), no injected element;
- Markdown: a table row keeps its columns (``|`` and line breaks escaped), no raw HTML;
- init: the starter netaudit.yaml reads back with the same net names.

The end of the file checks encodings and line endings: netaudit.yaml and the demo netlist
with a byte-order mark, CRLF or CR line ends give the same audit, and a Latin-1 XML netlist
reads like the UTF-8 one.

The strings are attack patterns (markup, CDATA end, ANSI escape sequences, right-to-left
override), every C0 control character but NUL (a NUL makes a KiCad file binary: refused as
bad input, see test_bad_input.py), a 100 kB name, and text that looks like Markdown, YAML,
JSON and SARIF.
"""

from __future__ import annotations

import json
import re
import xml.etree.ElementTree as ET
from html.parser import HTMLParser
from pathlib import Path

import pytest
import yaml
from conftest import require_real
from helpers import REPORT_FILES, copy_demo, invoke, report_options, write_netlist

from netaudit.config import parse_config
from netaudit.model import Design, Net, Node, Part, Pin
from netaudit.readers import read_design

HOSTILE = {
    "markup": "<script>alert(1)</script>",
    "attribute": "\"><img src=x onerror=alert(1)>",
    "cdata-end": "]]>",
    "controls": "c" + "".join(chr(c) for c in range(1, 32)) + "\x7f",
    "ansi": "\x1b[31mRED\x1b[0m\x1b]0;owned\x07\x9b1m",
    "long": "N" * 100_000,
    "right-to-left": "\u202eevil\u202c\u2066x\u2069\u200f",
    "separators": "a\u2028b\u2029c\u0085d\ufeffe",
    "markdown": "a|b `code` **bold** [x](javascript:alert(1)) <b>hi</b> | --- |",
    "yaml": "key: [value, {a: b}] # comment\n- item\n--- &x *y !!python/object:os.system",
    "json": "\"}\\u0000{\"\\\\ \\\" $schema",
    "sarif": "\"runs\": [{\"results\": []}], \"version\": \"1.0\"",
}
# Characters that must never reach a terminal from the design as they are.
RAW_FORBIDDEN = re.compile("[\x00-\x09\x0b-\x1f\x7f-\x9f\u061c\u200e\u200f\u202a-\u202e\u2066-\u2069"
                           "\u2028\u2029\ufeff]")
JUNIT_TAGS = {"testsuites", "testsuite", "testcase", "failure", "skipped", "properties", "property"}
SARIF_SCHEMA = Path(__file__).resolve().parents[1] / "build" / "sarif-schema" / "sarif-2.1.0-rtm.5.json"


def names(s: str) -> dict[str, str]:
    """Where the hostile string goes (each a distinct name built around it)."""
    return {"sda": s + "_SDA", "scl": s + "_SCL", "value": s, "ref": "R1" + s, "title": s,
            "bus": "BUS" + s, "reason": s, "field": s}


def _pins(*names_: str, total: int = 0) -> tuple[Pin, ...]:
    pins = [Pin(str(i + 1), n, "power_in" if n in ("VDD", "GND") else "bidirectional")
            for i, n in enumerate(names_)]
    pins += [Pin(str(i + 1), f"NC{i + 1}", "no_connect") for i in range(len(pins), total)]
    return tuple(pins)


def hostile_design(s: str) -> Design:
    """Controller U1, sensor U2 (value and a field hostile) and a pull-up (hostile ref) on
    the data line only: the clock line has no pull-up (a finding naming its segment)."""
    n = names(s)
    parts = (
        Part("U1", "MCU", lib="Handmade", lib_part="MCU", pins=_pins("SDA", "SCL", "VDD", "GND", total=48)),
        Part("U2", n["value"], lib="Handmade", lib_part="SENSOR", fields=(("Note", n["field"]),),
             pins=_pins("SDA", "SCL", "VDD", "GND")),
        Part(n["ref"], "4k7", lib="Device", lib_part="R", description="Resistor",
             pins=(Pin("1", "", "passive"), Pin("2", "", "passive"))),
    )
    nets = (
        Net(n["sda"], (Node("U1", "1", "SDA", "bidirectional"), Node("U2", "1", "SDA", "bidirectional"),
                       Node(n["ref"], "1", "", "passive"))),
        Net(n["scl"], (Node("U1", "2", "SCL", "bidirectional"), Node("U2", "2", "SCL", "bidirectional"))),
        Net("+3V3", (Node("U1", "3", "VDD", "power_in"), Node("U2", "3", "VDD", "power_in"),
                     Node(n["ref"], "2", "", "passive"))),
        Net("GND", (Node("U1", "4", "GND", "power_in"), Node("U2", "4", "GND", "power_in"))),
    )
    return Design(path="hostile.net", format="kicad-netlist", parts=parts, nets=nets)


def settings(s: str) -> str:
    n = names(s)
    return yaml.safe_dump({
        "version": 1,
        "buses": [{"name": n["bus"], "sda": n["sda"], "scl": n["scl"]}],
        "waivers": [{"rule": "address-unknown", "refs": ["U2"], "reason": n["reason"]}],
    }, allow_unicode=True)


@pytest.fixture(scope="module", params=sorted(HOSTILE) + ["plain"])
def board(request, tmp_path_factory):
    """The board written with one hostile string, checked with every report."""
    kind = request.param
    s = HOSTILE.get(kind, "plain")
    folder = tmp_path_factory.mktemp(f"hostile-{kind}")
    n = names(s)
    design = write_netlist(folder / "board.net", hostile_design(s), settings(s), title=n["title"], rev=n["title"])
    code, out, err = invoke(["check", design] + report_options(folder))
    assert code in (0, 1), err
    inventory = invoke(["buses", design])
    return {"kind": kind, "s": s, "names": n, "folder": folder, "text": out, "inventory": inventory[1],
            **{fmt: (folder / name).read_text(encoding="utf-8") for fmt, name in REPORT_FILES.items()}}


def _escaped(c: str) -> str:
    if not RAW_FORBIDDEN.match(c) and c != "\n":  # a line break in a name is escaped too
        return c
    return f"\\x{ord(c):02x}" if ord(c) < 0x100 else f"\\u{ord(c):04x}"


def _escaped_forms(s: str) -> str:
    """``s`` as the terminal report shows it: each forbidden character as an escape."""
    return "".join(_escaped(c) for c in s)


# -- the terminal ------------------------------------------------------------------------

def test_text_report_shows_control_and_direction_characters_as_escapes(board):
    text = board["text"]
    assert not RAW_FORBIDDEN.search(text), repr(RAW_FORBIDDEN.search(text).group())
    assert _escaped_forms(board["names"]["scl"]) in text  # the finding names the clock line's segment


def test_inventory_shows_control_and_direction_characters_as_escapes(board):
    text = board["inventory"]
    assert not RAW_FORBIDDEN.search(text)
    assert _escaped_forms(board["names"]["sda"]) in text
    assert _escaped_forms(board["names"]["value"]) in text


@pytest.mark.parametrize("kind", ["ansi", "right-to-left", "controls"])
def test_error_line_shows_control_characters_as_escapes(tmp_path, kind):
    design = write_netlist(tmp_path / "board.net", hostile_design("x"), yaml.safe_dump({"version": 1, "buses": [
        {"name": "B", "sda": HOSTILE[kind], "scl": "x_SCL"}]}))
    config = tmp_path / "netaudit.yaml"
    code, out, err = invoke(["check", design])
    assert code == 2
    assert len(err.splitlines()) == 1 and str(config) in err
    assert not RAW_FORBIDDEN.search(err)
    assert _escaped_forms(HOSTILE[kind].replace("\n", " ")).split("\\")[0] in err


# -- JSON and SARIF ----------------------------------------------------------------------

def _bus_lines(doc: dict) -> dict:
    return doc["buses"][0]["segments"][0]["lines"]


def test_json_report_keeps_every_string_unchanged(board):
    doc = json.loads(board["json"])
    n = board["names"]
    assert _bus_lines(doc)["sda"]["nets"] == [n["sda"]]
    assert _bus_lines(doc)["scl"]["nets"] == [n["scl"]]
    assert doc["buses"][0]["name"] == n["bus"]
    assert doc["design"]["title"] == n["title"] and doc["design"]["revision"] == n["title"]
    devices = doc["buses"][0]["segments"][0]["devices"]
    assert n["value"] in [d["value"] for d in devices]
    assert [p["ref"] for p in _bus_lines(doc)["sda"]["pullups"]] == [n["ref"]]
    assert n["reason"] in [f["waiver_reason"] for f in doc["findings"] if f["waived"]]


def test_json_report_holds_no_raw_control_characters(board):
    assert not re.search("[\x00-\x09\x0b-\x1f]", board["json"])


def test_sarif_log_is_valid_json_and_keeps_the_names(board):
    doc = json.loads(board["sarif"])
    results = doc["runs"][0]["results"]
    n = board["names"]
    assert any(n["bus"] in r["message"]["text"] for r in results)
    assert n["reason"] in [s["justification"] for r in results for s in r.get("suppressions", [])]
    assert doc["runs"][0]["properties"]["title"] == n["title"]
    assert "<" not in board["sarif"] and ">" not in board["sarif"]  # written as \u003c, \u003e


def test_sarif_log_matches_the_sarif_schema(board):
    if not SARIF_SCHEMA.is_file():
        pytest.skip("SARIF 2.1.0 schema not fetched (run scripts/fetch-sarif-schema)")
    jsonschema = pytest.importorskip("jsonschema")
    schema = json.loads(SARIF_SCHEMA.read_text(encoding="utf-8"))
    jsonschema.validate(json.loads(board["sarif"]), schema)


# -- HTML ----------------------------------------------------------------------------------

class Page(HTMLParser):
    """Every tag with its attribute names, and the text, of an HTML page."""

    def __init__(self) -> None:
        super().__init__(convert_charrefs=True)
        self.tags: set[tuple[str, tuple[str, ...]]] = set()
        self.text: list[str] = []

    def handle_starttag(self, tag, attrs):
        self.tags.add((tag, tuple(sorted(name for name, _ in attrs))))

    handle_startendtag = handle_starttag

    def handle_data(self, data):
        self.text.append(data)


def parse_page(text: str) -> Page:
    page = Page()
    page.feed(text)
    page.close()
    return page


@pytest.fixture(scope="module")
def plain_page(tmp_path_factory) -> Page:
    folder = tmp_path_factory.mktemp("plain")
    design = write_netlist(folder / "board.net", hostile_design("plain"), settings("plain"), title="plain", rev="plain")
    invoke(["check", design, "--html", folder / "report.html"])
    return parse_page((folder / "report.html").read_text(encoding="utf-8"))


def test_html_report_gains_no_element_or_attribute_from_the_design(board, plain_page):
    page = parse_page(board["html"])
    assert page.tags <= plain_page.tags, page.tags - plain_page.tags
    assert not any(tag in ("script", "img", "iframe", "object") for tag, _ in page.tags)
    assert not any(a.startswith("on") for _, attrs in page.tags for a in attrs)


def test_html_report_shows_the_strings_as_text(board):
    text = "".join(parse_page(board["html"]).text)
    assert board["names"]["scl"].replace("\r", "\n")[:200].split("\n")[0] in text.replace("\r", "\n")


# -- JUnit ---------------------------------------------------------------------------------

def test_junit_parses_as_xml_with_only_its_own_elements(board):
    root = ET.fromstring(board["junit"].encode("utf-8"))
    assert {el.tag for el in root.iter()} <= JUNIT_TAGS


def test_junit_keeps_the_markup_as_text(board):
    root = ET.fromstring(board["junit"].encode("utf-8"))
    texts = " ".join((el.text or "") + " ".join(el.attrib.values()) for el in root.iter())
    visible = re.sub("[\x00-\x08\x0b\x0c\x0e-\x1f]", "\ufffd", board["names"]["bus"])
    assert visible.replace("\r", "\n").split("\n")[0][:200] in texts.replace("\r", "\n")


# -- Markdown ------------------------------------------------------------------------------

_UNESCAPED_PIPE = re.compile(r"(?<!\\)\|")


def test_markdown_table_rows_keep_their_columns(board):
    lines = board["markdown"].splitlines()
    table = [ln for ln in lines if ln.startswith("|")]
    assert len(table) == 3  # header, rule, one bus
    widths = {len(_UNESCAPED_PIPE.findall(row)) for row in table}
    assert widths == {8}, table


def test_markdown_holds_no_raw_html_or_terminal_commands(board):
    text = board["markdown"].replace("<sub>", "").replace("</sub>", "")
    assert "<" not in text and ">" not in text.replace("\n> ", "\n")
    assert not RAW_FORBIDDEN.search(board["markdown"])


def test_markdown_escapes_every_backtick_from_the_design(board):
    ours = re.sub(r"`[a-z]+(-[a-z0-9]+)*`", "", board["markdown"])  # rule ids in code spans
    assert not re.search(r"(?<!\\)`", ours)


# -- init ----------------------------------------------------------------------------------

def test_init_writes_settings_that_read_back_with_the_same_net_names(board, tmp_path):
    n = board["names"]
    design = write_netlist(tmp_path / "board.net", hostile_design(board["s"]))
    code, out, err = invoke(["init", design])
    assert code == 0, err
    written = (tmp_path / "netaudit.yaml").read_text(encoding="utf-8")
    config = parse_config(written, str(tmp_path / "netaudit.yaml"))
    assert [(b.sda, b.scl) for b in config.buses] == [((n["sda"],), (n["scl"],))]
    assert not RAW_FORBIDDEN.search(written)


# -- encodings and line endings -------------------------------------------------------------
# KiCad writes UTF-8 without a byte-order mark and LF line ends; files that passed through
# other editors or Windows checkouts carry a BOM, CRLF (or CR) line ends, or, from KiCad 5
# days, Latin-1. Netlists with a BOM, CRLF and Latin-1 are covered in test_readers.py; here:
# netaudit.yaml in each form, the whole audit of the demo in each form, and Latin-1 XML.

DEMO = Path(__file__).resolve().parents[1] / "fixtures" / "demo"
LINE_ENDS = {
    "UTF-8 with BOM": lambda b: b"\xef\xbb\xbf" + b,
    "CRLF": lambda b: b.replace(b"\n", b"\r\n"),
    "UTF-8 with BOM and CRLF": lambda b: b"\xef\xbb\xbf" + b.replace(b"\n", b"\r\n"),
    "CR only": lambda b: b.replace(b"\n", b"\r"),
}


def _report_without_hashes(folder: Path, design: Path) -> dict:
    out = folder / "report.json"
    code, _stdout, err = invoke(["check", design, "--json", out, "--quiet"])
    assert code == 1, err  # the demo's deliberate faults
    doc = json.loads(out.read_text(encoding="utf-8"))
    doc["design"]["sha256"] = doc["config"]["sha256"] = None
    return doc


@pytest.fixture(scope="module")
def demo_report(tmp_path_factory) -> dict:
    folder = tmp_path_factory.mktemp("demo-plain")
    design = copy_demo(folder, (DEMO / "netaudit.yaml").read_bytes())
    return _report_without_hashes(folder, design)


@pytest.mark.parametrize("form", list(LINE_ENDS))
def test_demo_settings_in_any_utf8_form_give_the_same_audit(tmp_path, demo_report, form):
    design = copy_demo(tmp_path, LINE_ENDS[form]((DEMO / "netaudit.yaml").read_bytes()))
    assert _report_without_hashes(tmp_path, design) == demo_report


@pytest.mark.parametrize("form", list(LINE_ENDS))
def test_demo_netlist_in_any_utf8_form_gives_the_same_audit(tmp_path, demo_report, form):
    (tmp_path / "greenhouse.net").write_bytes(LINE_ENDS[form]((DEMO / "greenhouse.net").read_bytes()))
    (tmp_path / "netaudit.yaml").write_bytes((DEMO / "netaudit.yaml").read_bytes())
    assert _report_without_hashes(tmp_path, tmp_path / "greenhouse.net") == demo_report


def test_settings_with_accented_names_read_the_same_with_a_bom_and_crlf():
    text = "version: 1\nrails:\n  VDD_CAPTEUR_É: 3.3\nbuses:\n  - name: BUS_µC\n    sda: /SDA_Ü\n    scl: /SCL_Ü\n"
    plain = parse_config(text)
    dressed = parse_config(("\ufeff" + text).replace("\n", "\r\n"))
    assert (dressed.rails, dressed.buses) == (plain.rails, plain.buses)
    assert plain.rails == {"VDD_CAPTEUR_É": 3.3} and plain.buses[0].sda == ("/SDA_Ü",)


@pytest.mark.parametrize("declared", ["UTF-8", "ISO-8859-1"])
def test_latin1_xml_netlist_reads_with_the_same_accented_text(tmp_path, declared):
    # The file holds "Würth" and "µ" (bms-c1.xml, KiCad 9.0.8 export), both in Latin-1.
    real = require_real("battery-bms-kicad9/netlist-kicad-9.0.8/bms-c1.xml")
    text = real.read_text(encoding="utf-8")
    assert "Würth" in text and "µF" in text
    path = tmp_path / "latin1.xml"
    path.write_bytes(text.replace('encoding="UTF-8"', f'encoding="{declared}"').encode("latin-1"))
    a, b = read_design(path), read_design(real)
    assert (a.parts, a.nets, a.sheets) == (b.parts, b.nets, b.sheets)
