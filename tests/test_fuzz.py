"""Fuzzing the whole ``netaudit`` command: every input ends in an audit or in one clean line.

An input either gives a normal audit (exit 0 or 1, and every report asked for parses) or
exit 2 with exactly one line on stderr, ``netaudit: ``, naming the file (the reader adds
``line:column`` where it knows one). Never a traceback, never a hang, never a dead process.

The inputs:

- byte- and token-level mutations of the real KiCad 9.0.8 netlists and XML netlists in
  ../shared/real-designs (and the KiCad 5 netlist there; skipped when absent), of the demo
  netlist, of the demo's netaudit.yaml and of a starter netaudit.yaml written by
  ``netaudit init``: flipped bits, NUL bytes, odd Unicode, cuts, deleted / duplicated /
  swapped / moved tokens and parenthesised spans (elements in XML), numbers turned huge,
  negative or NaN, deep nesting, duplicated refs and nets, nodes of unknown parts, pins on
  several nets, hostile text, other line endings and encodings;
- netlists (S-expression and XML) and netaudit.yaml files built by hypothesis with odd
  names, values and structure (derandomised: the same examples every run).

Each case runs in a worker process that calls the click command in-process through
``click.testing.CliRunner`` (fast, and a killed worker cannot take the test run with it);
a case running past ``HANG_S`` counts as a hang, and the worker is replaced. Every
``SAMPLE_EVERY``-th case also runs as ``python -m netaudit`` in a subprocess, which must end
the same way. Counts are printed and written to test-artifacts/fuzz-summary.txt.

``scripts/fuzz --seconds N [--seed S]`` runs the same cases, from any seed, for longer.
The end of this file keeps each bug the fuzzing found as a plain test.
"""

from __future__ import annotations

import json
import multiprocessing
import os
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

import pytest
import yaml
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from conftest import REAL_DESIGNS, REPO_ROOT, cli_env
from netaudit.config import MAX_MM, MAX_OHMS, MAX_PF, MAX_PF_PER_MM, MAX_VOLTS

DEMO = REPO_ROOT / "fixtures" / "demo"
SUMMARY = REPO_ROOT / "test-artifacts" / "fuzz-summary.txt"

HANG_S = 10.0          # a case still running after this many seconds is a hang
SUITE_SEED = 20260610  # the in-suite mutation run is the same every time
SUITE_CASES = 400      # about 30 s here (2 cores); scripts/fuzz runs as long as asked
SAMPLE_EVERY = 40      # one case in this many also runs in a subprocess
HYPOTHESIS_EXAMPLES = 150


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


def _sxq(value: str) -> str:
    return '"' + value.replace("\\", "\\\\").replace('"', '\\"') + '"'


def sx_numbers(rng, data):
    text = _text(data)
    return _bytes(_replace_string_or_atom(
        rng, text, r'[( ]("-?[0-9][^"]*"|-?[0-9][^\s()"]*)', lambda m: _sxq(rng.choice(NUMBERS))))


def sx_values(rng, data):
    text = _text(data)
    pool = NUMBERS + HOSTILE + ["4k7", "10k", "2k2", "0R", "DNP", "TCA9548A", "PCA9306", "BSS138"]
    return _bytes(_replace_string_or_atom(
        rng, text, r'\(value ("(?:[^"\\]|\\.)*"|[^\s()"]+)\)', lambda m: _sxq(rng.choice(pool))))


def sx_hostile(rng, data):
    text = _text(data)
    key = rng.choice(["name", "value", "ref", "pin", "pinfunction", "title", "source", "lib", "part"])
    return _bytes(_replace_string_or_atom(
        rng, text, r"\(" + key + r' ("(?:[^"\\]|\\.)*"|[^\s()"]+)\)',
        lambda m: _sxq(rng.choice(HOSTILE + ODD_TEXT))))


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
        lambda m: _sxq(rng.choice(["NOPE9", "", "U1", "#PWR01", "R" * 300]))))


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
            lambda m: _sxq(rng.choice(BUS_NAMES))))
    return _bytes(_replace_string_or_atom(
        rng, text, r'\(pinfunction ("(?:[^"\\]|\\.)*"|[^\s()"]+)\)',
        lambda m: _sxq(rng.choice(["SDA", "SCL", "SDA/SCL", "VDD", "GND", "A0", "ADDR", "~{INT}"]))))


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


REPORT_FLAGS = {"json": "report.json", "html": "report.html", "sarif": "report.sarif",
                "junit": "report.junit.xml", "markdown": "report.md"}


COMMANDS = ("json", "json", "json", "json", "all", "all", "buses", "buses-json", "init")


def design_case(label: str, name: str, data: bytes, command: str) -> Case:
    """A command run on a design file: ``check`` with the JSON report ("json") or with every
    report ("all"), ``buses`` (text or "buses-json"), or ``init``."""
    path = "{dir}/" + name
    if command == "json":
        return Case(label, {name: data}, ["check", path, "--json", "{dir}/report.json"], (name,),
                    {"json": "report.json"})
    if command == "all":
        args = ["check", path]
        for fmt, out in REPORT_FLAGS.items():
            args += [f"--{fmt}", "{dir}/" + out]
        return Case(label, {name: data}, args, (name,), dict(REPORT_FLAGS))
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


# ---------------------------------------------------------------------------------------
# The tests
# ---------------------------------------------------------------------------------------

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
    monkeypatch.setattr(sys.modules[__name__], "run_here", _misbehave)  # the forked worker runs this
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


# -- hypothesis-built netlists --------------------------------------------------------------

_REF = st.one_of(st.sampled_from(["U1", "U2", "U3", "R1", "R2", "R3", "R4", "Q1", "J1", "C1"]),
                 st.text(max_size=6))
_PIN_NAME = st.one_of(st.sampled_from(["SDA", "SCL", "VDD", "VCC", "GND", "A0", "A1", "ADDR", "SDA/SCL",
                                       "~{INT}", "SDA_{1}", "EN", "", "~", "SCL1", "SDA0"]),
                      st.text(max_size=8))
_PIN_TYPE = st.sampled_from(["bidirectional", "passive", "power_in", "power_out", "input", "output",
                             "open_collector", "no_connect", "", "free"])
_VALUE = st.one_of(st.sampled_from(NUMBERS + ["4k7", "10k", "2k2", "0R", "TCA9548A", "PCA9306", "BSS138",
                                              "TMP102", "24LC256", "MCU", "PCA9615", "LTC4311"]),
                   st.text(max_size=12))
_NET_NAME = st.one_of(st.sampled_from(BUS_NAMES + ["+1e308V", "-3V3", "NaNV", "+0V", "/", ""]),
                      st.text(max_size=12))


@st.composite
def designs(draw):
    parts = []
    for _ in range(draw(st.integers(0, 8))):
        ref = draw(_REF)
        pins = [(draw(st.sampled_from(["1", "2", "3", "4", "5", "A1", ""])), draw(_PIN_NAME), draw(_PIN_TYPE))
                for _ in range(draw(st.integers(0, 5)))]
        lib_part = "R" if ref.startswith("R") and draw(st.booleans()) else draw(_VALUE)
        parts.append((ref, draw(_VALUE), lib_part, pins, draw(st.booleans())))
    refs = [p[0] for p in parts] or ["U1"]
    nets = []
    for _ in range(draw(st.integers(0, 8))):
        nodes = []
        for _ in range(draw(st.integers(0, 5))):
            ref = draw(st.one_of(st.sampled_from(refs), _REF))
            nodes.append((ref, draw(st.sampled_from(["1", "2", "3", "4", "5", "9", ""])), draw(_PIN_NAME),
                          draw(_PIN_TYPE)))
        nets.append((draw(_NET_NAME), nodes))
    title = draw(st.one_of(st.just("generated"), st.text(max_size=20)))
    return title, parts, nets


def sexpr_netlist(title, parts, nets) -> str:
    def q(text: str) -> str:  # a NUL makes any file binary: the byte mutations cover that
        return _sxq(text.replace("\x00", "?"))

    out = ['(export (version "E")', f"  (design (tool \"Eeschema 9.0.8\") (sheet (number \"1\") (name \"/\")"
           f" (title_block (title {q(title)}) (source \"gen.kicad_sch\"))))", "  (components"]
    for ref, value, lib_part, _pins, dnp in parts:
        out.append(f"    (comp (ref {q(ref)}) (value {q(value)}) (libsource (lib \"Gen\") (part {q(lib_part)}))"
                   + (' (property (name "dnp"))' if dnp else "") + ' (sheetpath (names "/") (tstamps "/")))')
    out.append("  )\n  (libparts")
    for _ref, _value, lib_part, pins, _dnp in parts:
        body = " ".join(f"(pin (num {q(n)}) (name {q(name)}) (type {q(t)}))" for n, name, t in pins)
        out.append(f"    (libpart (lib \"Gen\") (part {q(lib_part)}) (pins {body}))")
    out.append("  )\n  (nets")
    for code, (name, nodes) in enumerate(nets, 1):
        body = " ".join(f"(node (ref {q(r)}) (pin {q(p)}) (pinfunction {q(f)}) (pintype {q(t)}))"
                        for r, p, f, t in nodes)
        out.append(f"    (net (code \"{code}\") (name {q(name)}) {body})")
    return "\n".join(out) + "))\n"


_NOT_XML = re.compile("[\x00-\x08\x0b\x0c\x0e-\x1f\ufffe\uffff]")


def xml_netlist(title, parts, nets) -> str:
    """The netlist as XML; characters XML 1.0 cannot carry become '?' (KiCad cannot store
    them either; the byte mutations cover the broken files they would make)."""
    text = _xml_netlist(title, parts, nets)
    return _NOT_XML.sub("?", text)


def _xml_netlist(title, parts, nets) -> str:
    root = ET.Element("export", version="E")
    design = ET.SubElement(root, "design")
    ET.SubElement(design, "tool").text = "Eeschema 9.0.8"
    sheet = ET.SubElement(design, "sheet", number="1", name="/")
    ET.SubElement(ET.SubElement(sheet, "title_block"), "title").text = title
    comps = ET.SubElement(root, "components")
    libparts = ET.SubElement(root, "libparts")
    for ref, value, lib_part, pins, dnp in parts:
        comp = ET.SubElement(comps, "comp", ref=ref)
        ET.SubElement(comp, "value").text = value
        ET.SubElement(comp, "libsource", lib="Gen", part=lib_part)
        if dnp:
            ET.SubElement(comp, "property", name="dnp")
        libpart = ET.SubElement(libparts, "libpart", lib="Gen", part=lib_part)
        pins_el = ET.SubElement(libpart, "pins")
        for n, name, t in pins:
            ET.SubElement(pins_el, "pin", num=n, name=name, type=t)
    nets_el = ET.SubElement(root, "nets")
    for code, (name, nodes) in enumerate(nets, 1):
        net = ET.SubElement(nets_el, "net", code=str(code), name=name)
        for r, p, f, t in nodes:
            ET.SubElement(net, "node", ref=r, pin=p, pinfunction=f, pintype=t)
    return '<?xml version="1.0" encoding="UTF-8"?>\n' + ET.tostring(root, encoding="unicode") + "\n"


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

_NUMBER = st.one_of(st.floats(allow_nan=True, allow_infinity=True), st.integers(-2 ** 70, 2 ** 70),
                    st.sampled_from([0, 3.3, 5, 1e-12, 1e308, -1]), st.text(max_size=8))
_NAME = st.one_of(st.sampled_from(["/I2C1_SDA", "/I2C1_SCL", "/SOIL_SDA", "/SOIL_SCL", "VDD_SOIL", "+3V3",
                                   "I2C_MAIN", "U1", "R*", "*", "[", ""]), st.text(max_size=10))
_ANY = st.recursive(st.one_of(st.none(), st.booleans(), _NUMBER, _NAME),
                    lambda inner: st.one_of(st.lists(inner, max_size=3),
                                            st.dictionaries(_NAME, inner, max_size=3)), max_leaves=6)
_MODE = st.one_of(st.sampled_from(["standard", "fast", "fast-plus", "smbus", "smbus-400k", "smbus-1m"]), _ANY)


def _maybe(strategy):
    return st.one_of(strategy, _ANY)


_BUS = st.fixed_dictionaries({"name": _maybe(_NAME), "sda": _maybe(st.one_of(_NAME, st.lists(_NAME))),
                              "scl": _maybe(st.one_of(_NAME, st.lists(_NAME)))},
                             optional={"mode": _MODE, "extra_capacitance_pf": _NUMBER,
                                       "offboard_pullup": st.fixed_dictionaries({"ohms": _NUMBER, "rail": _NAME})})
_ADDRESS = st.one_of(st.integers(-5, 0x500), st.fixed_dictionaries({"ten_bit": st.integers(-5, 0x500)}),
                     st.fixed_dictionaries({"base": st.integers(-1, 0x90),
                                            "pins": st.dictionaries(_NAME, st.integers(-1, 9), max_size=3)}),
                     st.fixed_dictionaries({"pin": _NAME, "map": st.dictionaries(
                         st.sampled_from(["GND", "VDD", "SDA", "SCL", "X"]), st.integers(-1, 0x90))}), _ANY)
_PART = st.fixed_dictionaries(
    {"match": _maybe(st.fixed_dictionaries({}, optional={"ref": _NAME, "value": _NAME, "lib_part": _NAME}))},
    optional={"role": _maybe(st.sampled_from(["controller", "target", "mux", "translator", "repeater"])),
              "address": _ADDRESS, "max_mode": _MODE, "tolerant_volts": _NUMBER,
              "io_supply_pin": _NAME, "pin_capacitance_pf": _NUMBER})
_WAIVER = st.fixed_dictionaries(
    {"rule": _maybe(st.sampled_from(["pullup-missing", "pullup-to-signal", "address-unknown"])),
     "reason": _maybe(_NAME)},
    optional={"refs": _maybe(st.lists(_NAME)), "nets": _maybe(st.lists(_NAME)), "bus": _NAME})
SETTINGS = st.fixed_dictionaries(
    {"version": st.one_of(st.just(1), _ANY)},
    optional={"rails": st.one_of(st.dictionaries(_NAME, _NUMBER, max_size=4), _ANY),
              "defaults": st.fixed_dictionaries({}, optional={"mode": _MODE, "pin_capacitance_pf": _NUMBER,
                                                              "trace_pf_per_mm": _NUMBER}),
              "buses": st.lists(_BUS, max_size=3),
              "traces": st.dictionaries(_NAME, st.fixed_dictionaries(
                  {}, optional={"length_mm": _NUMBER, "capacitance_pf": _NUMBER}), max_size=3),
              "parts": st.lists(_PART, max_size=3),
              "waivers": st.lists(_WAIVER, max_size=2),
              "extra": _ANY})


# Settings of the right shape whose numbers run to the ends of what netaudit.yaml accepts
# (netaudit.config's MAX_* limits), and now and then past them.


def _upto(limit: float):
    return st.one_of(st.floats(min_value=0, max_value=limit), st.integers(0, int(limit)),
                     st.sampled_from([0, 5e-324, 1e-300, 1e-12, limit, limit * 1.000001, 1e308]))


def _above_zero(limit: float):
    return st.one_of(st.floats(min_value=1e-300, max_value=limit), st.sampled_from([5e-324, limit]))


_DEMO_NET = st.sampled_from(["/I2C1_SDA", "/I2C1_SCL", "/SOIL_SDA", "/SOIL_SCL", "/ROOF_SDA", "/ROOF_SCL",
                             "VDD_SOIL", "+3V3", "/CO2_PU_EN", "GND", "/NOT_IN_THE_DESIGN"])
_MODES = st.sampled_from(["standard", "fast", "fast-plus", "smbus", "smbus-400k", "smbus-1m"])
_DEMO_BUSES = [("I2C_MAIN", "/I2C1_SDA", "/I2C1_SCL"), ("SOIL", "/SOIL_SDA", "/SOIL_SCL"),
               ("ROOF_LINK", "/ROOF_SDA", "/ROOF_SCL")]
_RULES = ["pullup-missing", "pullup-to-signal", "address-unknown", "capacitance-over-limit",
          "rail-voltage-unknown", "pullup-too-weak"]


@st.composite
def shaped_settings(draw) -> dict:
    doc: dict = {"version": 1}
    if draw(st.booleans()):
        doc["rails"] = draw(st.dictionaries(_DEMO_NET, _upto(MAX_VOLTS), max_size=3))
    doc["defaults"] = draw(st.fixed_dictionaries({}, optional={
        "mode": _MODES, "pin_capacitance_pf": _upto(MAX_PF), "trace_pf_per_mm": _upto(MAX_PF_PER_MM)}))
    doc["buses"] = []
    for name, sda, scl in _DEMO_BUSES:
        if draw(st.booleans()):
            bus = {"name": name, "sda": sda, "scl": scl}
            bus.update(draw(st.fixed_dictionaries({}, optional={
                "mode": _MODES, "extra_capacitance_pf": _upto(MAX_PF),
                "offboard_pullup": st.fixed_dictionaries({"ohms": _above_zero(MAX_OHMS), "rail": _DEMO_NET})})))
            doc["buses"].append(bus)
    doc["traces"] = draw(st.dictionaries(_DEMO_NET, st.one_of(
        st.fixed_dictionaries({"length_mm": _upto(MAX_MM)}), st.fixed_dictionaries({"capacitance_pf": _upto(MAX_PF)})),
        max_size=3))
    doc["parts"] = draw(st.lists(st.fixed_dictionaries(
        {"match": st.fixed_dictionaries({"ref": st.sampled_from(["U1", "U2", "U1?", "U*", "R*", "*"])}),
         "role": st.sampled_from(["controller", "target", "mux", "translator", "repeater"])},
        optional={"address": st.one_of(st.integers(0, 0x7F), st.fixed_dictionaries({"ten_bit": st.integers(0, 0x3FF)})),
                  "max_mode": _MODES, "tolerant_volts": _above_zero(MAX_VOLTS), "pin_capacitance_pf": _upto(MAX_PF),
                  "io_supply_pin": st.sampled_from(["VDD", "VCC", "1", "NOPE"])}), max_size=3))
    doc["waivers"] = draw(st.lists(st.fixed_dictionaries(
        {"rule": st.sampled_from(_RULES), "reason": st.sampled_from(["accepted", "<b>why</b>", "\u202e|`x`|"])},
        optional={"nets": st.lists(_DEMO_NET, min_size=1, max_size=2, unique=True),
                  "refs": st.lists(st.sampled_from(["U1", "R1", "R2", "Q1"]), min_size=1, max_size=2, unique=True)}),
        max_size=2))
    return doc


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


# ---------------------------------------------------------------------------------------
# What the fuzzing found, kept as plain tests (each was a crash, a hang or a traceback)
# ---------------------------------------------------------------------------------------

def _one_clean_line(err: str, path: Path) -> tuple[int, int | None] | None:
    """Assert ``err`` is one line naming ``path``; its (line, column) when it gives them."""
    lines = err.splitlines()
    assert len(lines) == 1 and lines[0].startswith("netaudit: ") and str(path) in lines[0], err
    m = re.search(re.escape(str(path)) + r":(\d+)(?::(\d+))?: ", lines[0])
    return (int(m.group(1)), int(m.group(2)) if m.group(2) else None) if m else None


@pytest.mark.parametrize("nesting", ["[" * 100_000 + "]" * 100_000, "{a: " * 100_000 + "1" + "}" * 100_000],
                         ids=["lists", "mappings"])
def test_settings_nested_a_hundred_thousand_deep_are_refused_at_once(tmp_path, nesting):
    # Was: libyaml took minutes to scan it, and composing it crashed the interpreter.
    design = tmp_path / "greenhouse.net"
    shutil.copyfile(DEMO / "greenhouse.net", design)
    config = tmp_path / "netaudit.yaml"
    config.write_text("version: 1\nrails: " + nesting + "\n", encoding="utf-8")
    proc = subprocess.run([sys.executable, "-m", "netaudit", "check", str(design)], capture_output=True,
                          text=True, env=cli_env(), timeout=60, check=False)
    assert proc.returncode == 2, proc.stderr
    line, column = _one_clean_line(proc.stderr, config)
    assert line == 2 and "nested" in proc.stderr


def test_settings_that_name_a_rail_as_a_bus_line_are_one_clean_line(tmp_path):
    # Was: KeyError in the bus finder (a supply rail is never a bus line candidate).
    design = tmp_path / "greenhouse.net"
    shutil.copyfile(DEMO / "greenhouse.net", design)
    config = tmp_path / "netaudit.yaml"
    config.write_text("version: 1\nrails:\n  /I2C1_SDA: 0\nbuses:\n  - name: MAIN\n    sda: /I2C1_SDA\n"
                      "    scl: /I2C1_SCL\n", encoding="utf-8")
    code, _out, err = _cli(["check", design])
    assert code == 2
    assert _one_clean_line(err, config) == (5, None) and "rail" in err  # the bus entry's line


def test_netlist_with_a_list_where_a_keyword_belongs_reads(tmp_path):
    # Was: TypeError (unhashable list) in the netlist reader for ((value) "x").
    path = tmp_path / "odd.net"
    path.write_text('(export (version "E") (components (comp (ref "R1") ((value) "x") '
                    '(property ((name) "a")) (libsource ((lib) "x")))) '
                    '(nets (net (code "1") (name "A") (node ((ref) "R1") (pin "1")))))\n', encoding="utf-8")
    code, _out, err = _cli(["check", path, "--quiet"])
    assert code == 0, err


def test_board_with_a_list_where_a_keyword_belongs_reads(tmp_path):
    # Was: TypeError (unhashable list) in the board reader; found by mutating a real board.
    path = tmp_path / "odd.kicad_pcb"
    path.write_text('(kicad_pcb (version 20240108) (generator "pcbnew")\n  ((net) 1 "x")\n'
                    '  (net (0) "y")\n  (net 1 ("z")))\n', encoding="utf-8")
    code, _out, err = _cli(["check", path, "--quiet"])
    assert code == 0, err


@pytest.mark.parametrize("data, where", [
    (b"version: 1\nrails:\n  \xe9: 3.3\n", (3, 3)),              # Latin-1: netaudit.yaml is UTF-8
    (b"\xef\xbb\xbfversion: 1\r\nrails:\r\n  a\x1b: 3.3\r\n", (3, 4)),  # a control character
], ids=["latin-1", "escape-character"])
def test_unreadable_settings_name_line_and_column(tmp_path, data, where):
    design = tmp_path / "greenhouse.net"
    shutil.copyfile(DEMO / "greenhouse.net", design)
    config = tmp_path / "netaudit.yaml"
    config.write_bytes(data)
    code, _out, err = _cli(["check", design])
    assert code == 2
    assert _one_clean_line(err, config) == where


def test_named_pipe_as_settings_is_refused_without_waiting(tmp_path):
    design = tmp_path / "greenhouse.net"
    shutil.copyfile(DEMO / "greenhouse.net", design)
    pipe = tmp_path / "settings.yaml"
    os.mkfifo(pipe)
    proc = subprocess.run([sys.executable, "-m", "netaudit", "check", str(design), "--config", str(pipe)],
                          capture_output=True, text=True, env=cli_env(), timeout=60, check=False)
    assert proc.returncode == 2
    assert _one_clean_line(proc.stderr, pipe) is None and "regular file" in proc.stderr


def _cli(args) -> tuple[int, str, str]:
    from click.testing import CliRunner

    from netaudit.cli import cli

    result = CliRunner().invoke(cli, [str(a) for a in args], catch_exceptions=False)
    return result.exit_code, result.stdout, result.stderr


@pytest.mark.parametrize("settings_text, where", [
    ("version: 1\ntraces:\n  /I2C1_SCL: {length_mm: 1.9e157}\n", (3, 26)),
    ("version: 1\ndefaults:\n  trace_pf_per_mm: 1.4e307\n", (3, 20)),
    ("version: 1\nrails:\n  +3V3: 1.7976931348623157e308\n", (3, 9)),
    ("version: 1\nparts:\n  - {match: {ref: U1}, pin_capacitance_pf: 7.4e307}\n", (3, 44)),
], ids=["trace length", "trace capacitance", "rail", "pin capacitance"])
def test_settings_numbers_past_the_limits_are_refused_at_their_place(tmp_path, settings_text, where):
    # Was: the line budget overflowed to infinity and raised ValueError (rp_max of inf F).
    design = tmp_path / "greenhouse.net"
    shutil.copyfile(DEMO / "greenhouse.net", design)
    config = tmp_path / "netaudit.yaml"
    config.write_text(settings_text, encoding="utf-8")
    code, _out, err = _cli(["check", design])
    assert code == 2 and "out of range" in err
    assert _one_clean_line(err, config) == where


def test_resistor_value_at_the_float_limit_gives_every_report(tmp_path):
    # Was: OverflowError formatting 1.797e308 ohms (rounded to three digits it exceeds a float).
    text = (DEMO / "greenhouse.net").read_text(encoding="utf-8")
    assert '(value "4k7")' in text
    design = tmp_path / "greenhouse.net"
    design.write_text(text.replace('(value "4k7")', '(value "1.7976931348623157e308")'), encoding="utf-8")
    args = ["check", design]
    for fmt, out in REPORT_FLAGS.items():
        args += [f"--{fmt}", tmp_path / out]
    code, out, err = _cli(args)
    assert code in (0, 1), err
    assert "TΩ" in out  # the pull-ups, shown with the largest prefix
