"""What the fuzzing feeds ``netaudit``: the seed files and the mutations made of them.

Seeds: the demo netlist and its netaudit.yaml, a starter netaudit.yaml written by
``netaudit init``, and (when present) the real KiCad 9.0.8 netlists and XML netlists in
../shared/real-designs and the KiCad 5 netlist there.

Mutations, byte- and token-level: flipped bits, NUL bytes, odd Unicode, cuts, deleted /
duplicated / swapped / moved tokens and parenthesised spans (elements in XML), numbers
turned huge, negative or NaN, deep nesting, duplicated refs and nets, nodes of unknown
parts, pins on several nets, hostile text, other line endings and encodings; in
netaudit.yaml, lines moved or re-indented, odd values, tags, anchors and deep nesting.

Used by tests/test_fuzz.py and scripts/fuzz; fuzz_harness.py turns them into cases.
"""

from __future__ import annotations

import random
import re
import shutil
import tempfile
from dataclasses import dataclass
from pathlib import Path

from conftest import REAL_DESIGNS, REPO_ROOT

DEMO = REPO_ROOT / "fixtures" / "demo"


# ---------------------------------------------------------------------------------------
# Seeds: the files the mutations start from
# ---------------------------------------------------------------------------------------

@dataclass(frozen=True)
class Seed:
    kind: str   # "net" (S-expression netlist), "xml" (XML netlist) or "yaml" (netaudit.yaml)
    name: str   # file name the case writes it under
    data: bytes


def load_seeds(real: bool = True) -> list[Seed]:
    """The demo netlist and settings, a starter netaudit.yaml, and (``real``) every real
    netlist and XML netlist that is present."""
    seeds = [Seed("net", "greenhouse.net", (DEMO / "greenhouse.net").read_bytes()),
             Seed("yaml", "netaudit.yaml", (DEMO / "netaudit.yaml").read_bytes()),
             Seed("yaml", "netaudit.yaml", starter_settings())]
    if real and REAL_DESIGNS.is_dir():
        for path in sorted(REAL_DESIGNS.glob("*/netlist-kicad-9.0.8/*.net")) + \
                sorted(REAL_DESIGNS.glob("*/legacy-kicad5/*.net")):
            seeds.append(Seed("net", path.name, path.read_bytes()))
        for path in sorted(REAL_DESIGNS.glob("*/netlist-kicad-9.0.8/*.xml")):
            seeds.append(Seed("xml", path.name, path.read_bytes()))
    return seeds


def starter_settings() -> bytes:
    """The netaudit.yaml that ``netaudit init`` writes for the demo netlist."""
    from click.testing import CliRunner

    from netaudit.cli import cli

    with tempfile.TemporaryDirectory(prefix="netaudit-fuzz-") as tmp:
        design = Path(tmp) / "greenhouse.net"
        shutil.copyfile(DEMO / "greenhouse.net", design)
        result = CliRunner().invoke(cli, ["init", str(design)])
        assert result.exit_code == 0, result.output
        return (Path(tmp) / "netaudit.yaml").read_bytes()


# ---------------------------------------------------------------------------------------
# Mutations. Each takes a random source and bytes and returns new bytes. Text-level ones
# decode with surrogateescape, so bytes that are not UTF-8 survive them unchanged.
# ---------------------------------------------------------------------------------------

ODD_TEXT = ["\u202e", "\u200f", "\u2066", "\ufeff", "\u2028", "\u0085", "\u00a0", "\u0301",
            "\U0001f600", "\ufffd", "\uffff", "\x1b[31m", "\x1b]0;title\x07", "\x7f", "\x0b",
            "\x0c", "\x1c", "\x08", "\r", "é", "Ω", "µ", "\u0130", "\ufb03", "\\", "{slash}",
            "~{", "${VAR}", "\t"]
ODD_BYTES = [b"\xed\xa0\x80", b"\xc0\xaf", b"\x80", b"\xff", b"\xe9", b"\xfe\xff", b"\xef\xbb\xbf",
             b"\xf4\x90\x80\x80", b"\x00"]
NUMBERS = ["1e308", "1.7976931348623157e308", "-1e308", "1e999", "-1e999", "NaN", "nan", "-nan",
           "inf", "-inf", "Infinity", "-0", "0", "-1", "-4k7", "99999999999999999999999999999999",
           "1e-320", "0x7F", "4k7k7", "1.2.3", "", "\u0661\u0662", "\uff11\uff10k", "4R7", "2M2",
           "1000000000000G", "0R", "1/0", "5%", "3.3V", "-3V3", "+1e308V", "2147483648",
           "-9223372036854775809"]
HOSTILE = ["<script>alert(1)</script>", "\"><img src=x onerror=alert(1)>", "]]>", "\x1b[31mRED",
           "a|b`c`", "- key: [value]", "{\"$schema\": null}", "x" * 5000, "\u202eevil", "&amp;&#0;",
           "*emph* _u_ [l](javascript:alert(1))", "'; DROP TABLE parts; --", "\x00\x01\x02"]
BUS_NAMES = ["/SDA", "/SCL", "I2C_SDA", "I2C_SCL", "/I2C1_SDA", "/I2C1_SCL", "SMBDAT", "SMBCLK",
             "+3V3", "+5V", "GND", "VCC", "/SDA{slash}SCL", "~{SDA}", "SDA_{1}"]
DEPTHS = [10, 100, 999, 1000, 1001, 5000, 100_000]


def _text(data: bytes) -> str:
    return data.decode("utf-8", "surrogateescape")


def _bytes(text: str) -> bytes:
    return text.encode("utf-8", "surrogateescape")


def _pos(rng: random.Random, n: int) -> int:
    return rng.randrange(n) if n else 0


def _length(rng: random.Random, limit: int) -> int:
    return max(1, min(limit, rng.choice([1, 2, 5, 20, 100, 1000, 10_000])))


# -- byte level ----------------------------------------------------------------------------

def flip_bits(rng, data):
    out = bytearray(data)
    for _ in range(rng.randint(1, 8)):
        if out:
            out[_pos(rng, len(out))] ^= 1 << rng.randrange(8)
    return bytes(out)


def random_bytes(rng, data):
    out = bytearray(data)
    for _ in range(rng.randint(1, 4)):
        if out:
            out[_pos(rng, len(out))] = rng.randrange(256)
    return bytes(out)


def insert_bytes(rng, data):
    i = _pos(rng, len(data))
    return data[:i] + rng.choice(ODD_BYTES) * rng.choice([1, 1, 3]) + data[i:]


def truncate(rng, data):
    return data[:_pos(rng, len(data))]


def delete_range(rng, data):
    i = _pos(rng, len(data))
    return data[:i] + data[i + _length(rng, len(data)):]


def duplicate_range(rng, data):
    i = _pos(rng, len(data))
    piece = data[i:i + _length(rng, len(data))]
    j = _pos(rng, len(data))
    return data[:j] + piece + data[j:]


def line_endings(rng, data):
    choice = rng.randrange(5)
    if choice == 0:
        return data.replace(b"\n", b"\r\n")
    if choice == 1:
        return data.replace(b"\n", b"\r")
    if choice == 2:
        return b"\xef\xbb\xbf" + data
    if choice == 3:
        return b"\xef\xbb\xbf" + data.replace(b"\n", b"\r\n")
    lines = data.split(b"\n")
    return b"".join(line + rng.choice([b"\n", b"\r\n", b"\r", b"\n\n"]) for line in lines)


def reencode(rng, data):
    text = data.decode("utf-8", "replace")
    codec = rng.choice(["latin-1", "cp1252", "utf-16", "utf-8-sig", "ascii"])
    return text.encode(codec, "replace")


def insert_odd_text(rng, data):
    text = _text(data)
    i = _pos(rng, len(text))
    quote = text.find('"', i)
    if quote != -1 and rng.random() < 0.5:
        i = quote + 1  # inside a quoted string (or just after one)
    return _bytes(text[:i] + "".join(rng.choice(ODD_TEXT) for _ in range(rng.randint(1, 3))) + text[i:])


BYTE_MUTATIONS = [flip_bits, random_bytes, insert_bytes, truncate, delete_range, duplicate_range,
                  line_endings, reencode, insert_odd_text]


# -- S-expression netlists ------------------------------------------------------------------

_SX_TOKEN = re.compile(r'\s+|\(|\)|"(?:[^"\\]|\\.)*"|[^\s()"]+|"', re.DOTALL)
_SX_KEYWORDS = ["comp", "net", "node", "libpart", "pin", "field", "property", "sheet", "components",
                "nets", "libparts", "design", "value", "ref", "name", "fields", "pins", "libsource"]


def _sx_span(text: str, start: int) -> tuple[int, int] | None:
    """The parenthesised list opening at or after ``start``: (its '(' offset, end)."""
    depth, first = 0, None
    for m in _SX_TOKEN.finditer(text, start):
        tok = m.group()
        if tok == "(":
            if first is None:
                first = m.start()
            depth += 1
        elif tok == ")" and first is not None:
            depth -= 1
            if depth == 0:
                return first, m.end()
    return None


def _pick_sx_span(rng, text, keyword=None):
    if keyword is None and rng.random() < 0.5:
        keyword = rng.choice(_SX_KEYWORDS)
    if keyword:
        starts = [m.start() for m in re.finditer(r"\(" + keyword + r"[\s)]", text)]
        if starts:
            return _sx_span(text, rng.choice(starts))
    i = _pos(rng, len(text))
    return _sx_span(text, text.rfind("\n", 0, i) + 1)


def _sx_tokens_near(rng, text):
    i = _pos(rng, len(text))
    start = text.rfind("\n", 0, i) + 1
    toks = []
    for m in _SX_TOKEN.finditer(text, start):
        if not m.group().isspace():
            toks.append((m.start(), m.end()))
        if len(toks) >= 40:
            break
    return toks


def sx_token_edit(rng, data):
    text = _text(data)
    toks = _sx_tokens_near(rng, text)
    if len(toks) < 2:
        return data
    a, b = sorted(rng.sample(range(len(toks)), 2))
    (s1, e1), (s2, e2) = toks[a], toks[b]
    op = rng.randrange(4)
    if op == 0:     # delete
        return _bytes(text[:s1] + text[e1:])
    if op == 1:     # duplicate
        return _bytes(text[:e1] + " " + text[s1:e1] + text[e1:])
    if op == 2:     # swap
        return _bytes(text[:s1] + text[s2:e2] + text[e1:s2] + text[s1:e1] + text[e2:])
    odd = rng.choice(["(", ")", '"', '"open', "#comment\n", "\\", "()", '""', "(((", ")))"])
    return _bytes(text[:s1] + odd + text[e1:])


def sx_span_edit(rng, data):
    text = _text(data)
    span = _pick_sx_span(rng, text)
    if span is None:
        return data
    s, e = span
    op = rng.randrange(4)
    if op == 0:
        return _bytes(text[:s] + text[e:])
    if op == 1:
        return _bytes(text[:e] + " " + text[s:e] + text[e:])
    other = _pick_sx_span(rng, text)
    if other is None or not (other[1] <= s or other[0] >= e):
        return _bytes(text[:e] + " " + text[s:e] + text[e:])
    s2, e2 = other
    if op == 2:     # swap two separate lists
        (a, b), (c, d) = sorted([(s, e), (s2, e2)])
        return _bytes(text[:a] + text[c:d] + text[b:c] + text[a:b] + text[d:])
    # move the list to the end of another one
    inserted = text[:e2 - 1] + " " + text[s:e] + text[e2 - 1:]
    shift = e - s + 1 if s > e2 - 1 else 0
    return _bytes(inserted[:s + shift] + inserted[e + shift:])


def sx_deep(rng, data):
    text = _text(data)
    n = rng.choice(DEPTHS)
    span = _pick_sx_span(rng, text)
    if span is None or rng.random() < 0.3:
        i = _pos(rng, len(text))
        return _bytes(text[:i] + "(" * n + ")" * n + text[i:])
    s, e = span
    return _bytes(text[:s] + "(x " * n + text[s:e] + ")" * n + text[e:])


def _replace_string_or_atom(rng, text, pattern, make):
    hits = list(re.finditer(pattern, text))
    if not hits:
        return text
    m = rng.choice(hits)
    return text[:m.start(1)] + make(m) + text[m.end(1):]


def sx_quote(value: str) -> str:
    return '"' + value.replace("\\", "\\\\").replace('"', '\\"') + '"'


def sx_numbers(rng, data):
    text = _text(data)
    return _bytes(_replace_string_or_atom(
        rng, text, r'[( ]("-?[0-9][^"]*"|-?[0-9][^\s()"]*)', lambda m: sx_quote(rng.choice(NUMBERS))))


def sx_values(rng, data):
    text = _text(data)
    pool = NUMBERS + HOSTILE + ["4k7", "10k", "2k2", "0R", "DNP", "TCA9548A", "PCA9306", "BSS138"]
    return _bytes(_replace_string_or_atom(
        rng, text, r'\(value ("(?:[^"\\]|\\.)*"|[^\s()"]+)\)', lambda m: sx_quote(rng.choice(pool))))


def sx_hostile(rng, data):
    text = _text(data)
    key = rng.choice(["name", "value", "ref", "pin", "pinfunction", "title", "source", "lib", "part"])
    return _bytes(_replace_string_or_atom(
        rng, text, r"\(" + key + r' ("(?:[^"\\]|\\.)*"|[^\s()"]+)\)',
        lambda m: sx_quote(rng.choice(HOSTILE + ODD_TEXT))))


def sx_same_name(rng, data):
    """Two parts with one ref, or two nets with one name."""
    text = _text(data)
    pattern = rng.choice([r'\(comp \(ref ("(?:[^"\\]|\\.)*"|[^\s()"]+)\)',
                          r'\(net \(code [^)]*\) \(name ("(?:[^"\\]|\\.)*"|[^\s()"]+)\)'])
    hits = list(re.finditer(pattern, text))
    if len(hits) < 2:
        return data
    a, b = rng.sample(hits, 2)
    return _bytes(text[:a.start(1)] + b.group(1) + text[a.end(1):])


def sx_unknown_part(rng, data):
    text = _text(data)
    return _bytes(_replace_string_or_atom(
        rng, text, r'\(node \(ref ("(?:[^"\\]|\\.)*"|[^\s()"]+)\)',
        lambda m: sx_quote(rng.choice(["NOPE9", "", "U1", "#PWR01", "R" * 300]))))


def sx_pin_on_two_nets(rng, data):
    text = _text(data)
    node = _pick_sx_span(rng, text, "node")
    net = _pick_sx_span(rng, text, "net")
    if node is None or net is None:
        return data
    end = net[1] - 1
    return _bytes(text[:end] + " " + text[node[0]:node[1]] + text[end:])


def sx_bus_names(rng, data):
    text = _text(data)
    if rng.random() < 0.5:
        return _bytes(_replace_string_or_atom(
            rng, text, r'\(net \(code [^)]*\) \(name ("(?:[^"\\]|\\.)*"|[^\s()"]+)\)',
            lambda m: sx_quote(rng.choice(BUS_NAMES))))
    return _bytes(_replace_string_or_atom(
        rng, text, r'\(pinfunction ("(?:[^"\\]|\\.)*"|[^\s()"]+)\)',
        lambda m: sx_quote(rng.choice(["SDA", "SCL", "SDA/SCL", "VDD", "GND", "A0", "ADDR", "~{INT}"]))))


SX_MUTATIONS = [sx_token_edit, sx_span_edit, sx_deep, sx_numbers, sx_values, sx_hostile,
                sx_same_name, sx_unknown_part, sx_pin_on_two_nets, sx_bus_names]


# -- XML netlists ---------------------------------------------------------------------------

_XML_KEYWORDS = ["comp", "net", "node", "libpart", "pin", "field", "property", "sheet", "components",
                 "nets", "libparts", "design", "value", "fields", "pins", "libsource", "title_block"]
_XML_ODD = ['<!DOCTYPE export [<!ENTITY x "y">]>', "&#0;", "&#x1b;", "&#xD800;", "&undefined;",
            "<![CDATA[ ]]> ]]>", "<?pi data?>", "<!-- c -->", "<", ">", "&", "&amp;", "</export>",
            '<export version="E">', "\x00", "&#x202E;", '<?xml version="1.0" encoding="bogus"?>']


def _xml_span(text: str, start: int, tag: str) -> tuple[int, int] | None:
    """The element ``tag`` whose start tag is at ``start``: (start, end of its end tag)."""
    first = re.compile(r"<" + tag + r"\b[^>]*?(/?)>").match(text, start)
    if first is None:
        return None
    if first.group(1):
        return start, first.end()
    depth = 1
    for m in re.finditer(r"<(/?)" + tag + r"\b[^>]*?(/?)>", text[first.end():]):
        if m.group(2):
            continue
        depth += -1 if m.group(1) else 1
        if depth == 0:
            return start, first.end() + m.end()
    return None


def _pick_xml_span(rng, text, tag=None):
    tag = tag or rng.choice(_XML_KEYWORDS)
    starts = [m.start() for m in re.finditer(r"<" + tag + r"\b", text)]
    return _xml_span(text, rng.choice(starts), tag) if starts else None


def xml_token_edit(rng, data):
    text = _text(data)
    i = _pos(rng, len(text))
    toks = [(m.start(), m.end()) for m in re.finditer(r"<[^>]*>|[^<]+", text[i:i + 4000])]
    toks = [(s + i, e + i) for s, e in toks]
    if len(toks) < 3:
        return data
    a, b = sorted(rng.sample(range(1, len(toks)), 2))
    (s1, e1), (s2, e2) = toks[a], toks[b]
    op = rng.randrange(4)
    if op == 0:
        return _bytes(text[:s1] + text[e1:])
    if op == 1:
        return _bytes(text[:e1] + text[s1:e1] + text[e1:])
    if op == 2:
        return _bytes(text[:s1] + text[s2:e2] + text[e1:s2] + text[s1:e1] + text[e2:])
    return _bytes(text[:s1] + rng.choice(_XML_ODD) + text[e1:])


def xml_span_edit(rng, data):
    text = _text(data)
    span = _pick_xml_span(rng, text)
    if span is None:
        return data
    s, e = span
    op = rng.randrange(3)
    if op == 0:
        return _bytes(text[:s] + text[e:])
    if op == 1:
        return _bytes(text[:e] + text[s:e] + text[e:])
    other = _pick_xml_span(rng, text)
    if other is None or not (other[1] <= s or other[0] >= e):
        return _bytes(text[:s] + text[e:])
    (a, b), (c, d) = sorted([(s, e), other])
    return _bytes(text[:a] + text[c:d] + text[b:c] + text[a:b] + text[d:])


def xml_deep(rng, data):
    text = _text(data)
    n = rng.choice(DEPTHS)
    span = _pick_xml_span(rng, text)
    if span is None:
        i = text.find("<export")
        span = (i, i) if i != -1 else (0, 0)
    s, e = span
    return _bytes(text[:s] + "<a>" * n + text[s:e] + "</a>" * n + text[e:])


def _xml_escape(value: str) -> str:
    return value.replace("&", "&amp;").replace("<", "&lt;").replace('"', "&quot;")


def xml_attributes(rng, data):
    text = _text(data)
    attr = rng.choice(["ref", "name", "pin", "pinfunction", "pintype", "num", "lib", "part", "value",
                       "code", "version"])
    pool = NUMBERS + HOSTILE + ODD_TEXT + BUS_NAMES
    raw = rng.random() < 0.2  # unescaped: the XML may break, which must be a clean error too
    return _bytes(_replace_string_or_atom(
        rng, text, r"\s" + attr + r'="([^"]*)"',
        lambda m: (lambda v: v if raw else _xml_escape(v))(rng.choice(pool))))


def xml_text(rng, data):
    text = _text(data)
    tag = rng.choice(["value", "footprint", "title", "rev", "source", "field", "description"])
    pool = NUMBERS + HOSTILE + ["4k7", "10k", "0R", "DNP", "TCA9548A"]
    return _bytes(_replace_string_or_atom(
        rng, text, r"<" + tag + r"\b[^>/]*>([^<]*)</", lambda m: _xml_escape(rng.choice(pool))))


def xml_same_name(rng, data):
    text = _text(data)
    pattern = rng.choice([r'<comp ref="([^"]*)"', r'<net code="[^"]*" name="([^"]*)"'])
    hits = list(re.finditer(pattern, text))
    if len(hits) < 2:
        return data
    a, b = rng.sample(hits, 2)
    return _bytes(text[:a.start(1)] + b.group(1) + text[a.end(1):])


def xml_pin_on_two_nets(rng, data):
    text = _text(data)
    node = _pick_xml_span(rng, text, "node")
    net = _pick_xml_span(rng, text, "net")
    if node is None or net is None:
        return data
    end = text.rfind("</net>", net[0], net[1])
    if end == -1:
        return data
    return _bytes(text[:end] + text[node[0]:node[1]] + text[end:])


XML_MUTATIONS = [xml_token_edit, xml_span_edit, xml_deep, xml_attributes, xml_text, xml_same_name,
                 xml_pin_on_two_nets]


# -- netaudit.yaml ----------------------------------------------------------------------------

YAML_VALUES = [".nan", ".NaN", ".inf", "-.inf", "1e999", "-3.3", "0", "0x", "~", "null", "[]", "{}",
               "yes", "no", "'<script>alert(1)</script>'", "!!python/object/apply:os.system ['true']",
               "*nowhere", "&a [*a]", "!!binary aGVsbG8=", "2001-12-14t21:59:43.10-05:00", "0o17",
               "1_000", "12:30:00", "'unterminated", '"unterminated', "{length_mm: 1e308}",
               "{capacitance_pf: -1}", "x" * 100_000, "\"\\x1b[31m\"", "!!str", "!!int 3", "@", "`",
               "| \n  block", "> \n  folded", "0b101", "+.5", "1e-400", "9" * 400, "[1, [2, [3]]]",
               "{ten_bit: 0x7FF}", "{base: 0x50, pins: {A0: 0, A1: 0}}", "{pin: ADDR, map: {GND: 0x48}}",
               "\"\\u202e\"", "!custom x", "?", "- - -", "=", "<<: {}", "%", "'''", "\t3.3"]
YAML_SNIPPETS = [
    "%YAML 1.1\n---\n", "---\n", "...\n", "--- !!map\n", "%TAG ! tag:evil,2000:\n---\n",
    "a: &a [x, x, x, x, x, x, x, x, x]\nb: &b [*a, *a, *a, *a, *a, *a, *a, *a, *a]\n"
    "c: &c [*b, *b, *b, *b, *b, *b, *b, *b, *b]\nd: &d [*c, *c, *c, *c, *c, *c, *c, *c, *c]\n"
    "e: [*d, *d, *d, *d, *d, *d, *d, *d, *d]\n",
    "rails: &r {+3V3: 3.3}\nextra: *r\n", "<<: {version: 1}\n", "rails: {+3V3: 3.3, +3V3: 5}\n",
    "buses:\n  - &bus {name: A, sda: /SDA, scl: /SCL}\n  - *bus\n", "? [a, b]\n: c\n",
    "waivers:\n  - rule: pullup-missing\n    reason: \"\u202e\x1b[31m<b>\"\n",
]


def yaml_lines(rng, data):
    lines = _text(data).split("\n")
    if len(lines) < 2:
        return data
    i, j = rng.randrange(len(lines)), rng.randrange(len(lines))
    op = rng.randrange(5)
    if op == 0:
        del lines[i]
    elif op == 1:
        lines.insert(j, lines[i])
    elif op == 2:
        lines[i], lines[j] = lines[j], lines[i]
    elif op == 3:
        lines[i] = rng.choice([" ", "  ", "\t", "   "]) + lines[i]
    else:
        lines[i] = lines[i].lstrip()
    return _bytes("\n".join(lines))


def yaml_values(rng, data):
    text = _text(data)
    hits = list(re.finditer(r"(?m)(:[ \t]+)([^#\n]*?)[ \t]*(#.*)?$", text))
    if not hits:
        return data
    m = rng.choice(hits)
    return _bytes(text[:m.start(2)] + rng.choice(YAML_VALUES + NUMBERS) + text[m.end(2):])


def yaml_snippet(rng, data):
    text = _text(data)
    snippet = rng.choice(YAML_SNIPPETS)
    if rng.random() < 0.5:
        return _bytes(snippet + text)
    return _bytes(text + "\n" + snippet)


def yaml_deep(rng, data):
    text = _text(data)
    n = rng.choice(DEPTHS)
    kind = rng.randrange(3)
    if kind == 0:
        deep = "[" * n + "]" * n
    elif kind == 1:
        deep = "{a: " * n + "1" + "}" * n
    else:
        n = min(n, 2000)  # block nesting grows the file as n squared
        deep = "\n" + "".join(" " * k + "a:\n" for k in range(n)) + " " * n + "1"
    hits = list(re.finditer(r"(?m)^(\w+):", text))
    if hits and kind < 2:
        m = rng.choice(hits)
        return _bytes(text[:m.end()] + " " + deep + "\n" + text[m.end():])
    return _bytes(text + "\nrails:" + deep + "\n")


YAML_MUTATIONS = [yaml_lines, yaml_values, yaml_snippet, yaml_deep]
MUTATIONS = {"net": SX_MUTATIONS, "xml": XML_MUTATIONS, "yaml": YAML_MUTATIONS}


def mutate(rng: random.Random, seed: Seed) -> tuple[bytes, list[str]]:
    """One to three mutations of the seed (mostly the format-aware ones)."""
    data, names = seed.data, []
    for _ in range(rng.choice([1, 1, 1, 2, 3])):
        pool = MUTATIONS[seed.kind] if rng.random() < 0.7 else BYTE_MUTATIONS
        fn = rng.choice(pool)
        data = fn(rng, data)
        names.append(fn.__name__)
    return data, names
