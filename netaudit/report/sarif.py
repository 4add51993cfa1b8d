"""SARIF 2.1.0 (OASIS Static Analysis Results Interchange Format) for code-scanning tools.

One run; the driver lists every rule with its documentation; each finding is a result
located at the design file, with logical locations for the parts and nets it is about.
Waived findings stay in the log as results with an external suppression (the waiver lives
in netaudit.yaml) whose justification is the waiver's reason.
"""

from __future__ import annotations

import hashlib
import json
import os
from datetime import datetime
from urllib.parse import quote

from .. import __version__
from ..results import Audit, Finding, Severity
from .html import iso_date, rule_text, run_date
from .messages import phrase

SARIF_VERSION = "2.1.0"
# The OASIS SARIF 2.1.0 standard's schema address (as the OASIS standard publishes it).
SARIF_SCHEMA_URI = "https://docs.oasis-open.org/sarif/sarif/v2.1.0/errata01/os/schemas/sarif-schema-2.1.0.json"
LEVELS = {Severity.ERROR: "error", Severity.WARNING: "warning", Severity.INFO: "note"}
# The SARIF 2.1.0 schema describes logicalLocation.kind as one of a list of code and
# document constructs ("function", "module", "element", ...) "if any of those accurately
# describe the construct"; a schematic part and a net are none of them, so they get their
# own plain words (the schema accepts any string there).
PART_KIND = "component"
NET_KIND = "net"


def design_uri(path: str, cwd: str | None = None) -> str:
    """The design file as a relative URI reference: as given when relative, relative to
    the working directory when inside it, else its file name."""
    cwd = os.getcwd() if cwd is None else cwd
    if os.path.isabs(path):
        rel = os.path.relpath(path, cwd)
        path = rel if not rel.startswith("..") else os.path.basename(path.rstrip("/"))
    path = os.path.normpath(path).replace(os.sep, "/")
    return quote(path, safe="/")


def _fingerprint(f: Finding) -> str:
    key = "\x1f".join([f.rule, f.bus or "", f.segment or "", f.line or "",
                       ",".join(f.refs), ",".join(f.nets)])
    return hashlib.sha256(key.encode("utf-8")).hexdigest()


def _rule(rule) -> dict:
    doc = rule_text(rule.id)
    help_text = "\n".join(f"{k.capitalize()}: {doc[k]}" for k in ("what", "why", "fix", "source") if doc[k])
    out = {
        "id": rule.id,
        "shortDescription": {"text": doc["summary"] or rule.id},
        "fullDescription": {"text": " ".join(x for x in (doc["what"], doc["why"]) if x) or doc["summary"] or rule.id},
        "help": {"text": help_text or doc["summary"] or rule.id},
        "defaultConfiguration": {"level": LEVELS[rule.severity]},
        "properties": {"family": rule.family},
    }
    return out


def _result(f: Finding, rule_index: dict[str, int], uri: str) -> dict:
    logical = [{"name": ref, "kind": PART_KIND} for ref in f.refs]
    logical += [{"name": net, "kind": NET_KIND} for net in f.nets]
    location: dict = {"physicalLocation": {"artifactLocation": {"uri": uri, "index": 0}}}
    if logical:
        location["logicalLocations"] = logical
    out = {
        "ruleId": f.rule,
        "level": LEVELS[f.severity],
        "message": {"text": phrase(f)},
        "locations": [location],
        "partialFingerprints": {"netauditFinding/v1": _fingerprint(f)},
        "properties": {"bus": f.bus, "segment": f.segment, "line": f.line},
    }
    if f.rule in rule_index:
        out["ruleIndex"] = rule_index[f.rule]
    if f.waived:
        out["suppressions"] = [{"kind": "external", "status": "accepted",
                                "justification": f.waiver_reason or "waived in the settings file"}]
    return out


def report(audit: Audit, when: datetime | None = None, cwd: str | None = None) -> dict:
    from ..checks import all_rules

    rules = list(all_rules().values())
    rule_index = {r.id: i for i, r in enumerate(rules)}
    uri = design_uri(audit.design.path, cwd)
    artifact: dict = {"location": {"uri": uri}}
    if audit.design.sha256:
        artifact["hashes"] = {"sha-256": audit.design.sha256}
    run: dict = {
        "tool": {"driver": {"name": "netaudit", "version": __version__, "semanticVersion": __version__,
                            "rules": [_rule(r) for r in rules]}},
        "invocations": [{"executionSuccessful": True, "endTimeUtc": iso_date(when or run_date())}],
        "artifacts": [artifact],
        "results": [_result(f, rule_index, uri) for f in audit.findings],
        "columnKind": "unicodeCodePoints",
        "properties": {"mode": audit.mode, "title": audit.design.title, "revision": audit.design.revision,
                       "config": None if audit.config_path is None else os.path.basename(audit.config_path),
                       "configSha256": audit.config_sha256},
    }
    return {"$schema": SARIF_SCHEMA_URI, "version": SARIF_VERSION, "runs": [run]}


def dumps(doc: dict) -> str:
    """Deterministic JSON; ``<``, ``>`` and ``&`` written as ``\\u`` escapes so the file
    stays inert if a viewer pastes it into a web page."""
    text = json.dumps(doc, indent=2, ensure_ascii=False, sort_keys=False)
    return text.replace("<", "\\u003c").replace(">", "\\u003e").replace("&", "\\u0026") + "\n"


def render(audit: Audit, when: datetime | None = None) -> str:
    return dumps(report(audit, when))
