"""Two Designs of the same schematic compared net by net and part by part.

Used to hold the schematic reader to KiCad's own export: nets are matched by the pins
they hold (a pin is on exactly one net), then their pin sets and names are compared.
"""

from __future__ import annotations

from dataclasses import dataclass, field

from ...model import Design

AUTO_PREFIXES = ("Net-(", "unconnected-(")


@dataclass
class Comparison:
    nets: int = 0                 # nets of the reference design compared
    parts: int = 0
    node_differences: list[str] = field(default_factory=list)
    name_differences: list[str] = field(default_factory=list)       # named nets
    auto_name_differences: list[str] = field(default_factory=list)  # Net-(...) style
    part_differences: list[str] = field(default_factory=list)
    sheet_differences: list[str] = field(default_factory=list)

    @property
    def equal(self) -> bool:
        return not (self.node_differences or self.name_differences or self.part_differences
                    or self.sheet_differences)

    def summary(self, limit: int = 15) -> str:
        lines = []
        for title, items in (("pins", self.node_differences), ("names", self.name_differences),
                             ("auto names", self.auto_name_differences),
                             ("parts", self.part_differences), ("sheets", self.sheet_differences)):
            if items:
                lines.append(f"{title}: {len(items)} differences")
                lines += ["  " + x for x in items[:limit]]
        return "\n".join(lines)


def compare(ours: Design, theirs: Design) -> Comparison:
    c = Comparison(nets=len(theirs.nets), parts=len(theirs.parts))
    our_net_of = {}
    for net in ours.nets:
        for node in net.nodes:
            our_net_of[(node.ref, node.pin)] = net
    matched = set()
    for net in theirs.nets:
        want = set(net.nodes)
        first = net.nodes[0]
        mine = our_net_of.get((first.ref, first.pin))
        if mine is None:
            c.node_differences.append(f"{net.name}: pin {first.ref}.{first.pin} is on no net")
            continue
        matched.add(id(mine))
        got = set(mine.nodes)
        if got != want:
            missing = sorted(f"{n.ref}.{n.pin}/{n.pin_function}/{n.pin_type}" for n in want - got)
            extra = sorted(f"{n.ref}.{n.pin}/{n.pin_function}/{n.pin_type}" for n in got - want)
            c.node_differences.append(f"{net.name} (ours {mine.name}): missing {missing[:6]}, "
                                      f"extra {extra[:6]}")
        if mine.name != net.name:
            auto = net.name.startswith(AUTO_PREFIXES) and mine.name.startswith(AUTO_PREFIXES)
            (c.auto_name_differences if auto else c.name_differences).append(
                f"{net.name!r} vs ours {mine.name!r}")
    for net in ours.nets:
        if id(net) not in matched:
            c.node_differences.append(f"ours only: {net.name} "
                                      f"{[f'{n.ref}.{n.pin}' for n in net.nodes][:6]}")
    our_parts = {p.ref: p for p in ours.parts}
    their_parts = {p.ref: p for p in theirs.parts}
    for ref in sorted(set(our_parts) | set(their_parts)):
        a, b = our_parts.get(ref), their_parts.get(ref)
        if a is None or b is None:
            c.part_differences.append(f"{ref}: only in {'KiCad' if a is None else 'ours'}")
            continue
        for attr in ("value", "footprint", "lib", "lib_part", "description", "fields", "dnp",
                     "exclude_from_bom", "sheet_path", "sheet_file", "pins"):
            va, vb = getattr(a, attr), getattr(b, attr)
            if va != vb:
                c.part_differences.append(f"{ref}.{attr}: ours {_short(va)} vs {_short(vb)}")
    ours_s = {(s.path, s.file, s.title, s.revision) for s in ours.sheets}
    theirs_s = {(s.path, s.file, s.title, s.revision) for s in theirs.sheets}
    for s in sorted(ours_s ^ theirs_s):
        c.sheet_differences.append(f"{'ours' if s in ours_s else 'KiCad'} only: {s}")
    return c


def _short(v) -> str:
    text = repr(v)
    return text if len(text) < 200 else text[:200] + "..."
