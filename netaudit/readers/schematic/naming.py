"""Final net names: local groups, hierarchy chains, bus members and global names joined
into nets, each named as KiCad names it (see ``nets`` for the rules followed)."""

from __future__ import annotations

from ...errors import InputError
from .build import Engine
from .nets import (GLOBAL, K_LABEL, K_PIN, POWER, Sub, bus_of, chain_best, hierarchy_links,
                   local_merge, resolve, weak_names)


class _Sets:
    def __init__(self, n: int):
        self.parent = list(range(n))

    def add(self) -> int:
        self.parent.append(len(self.parent))
        return len(self.parent) - 1

    def find(self, i: int) -> int:
        p = self.parent
        while p[i] != i:
            p[i] = p[p[i]]
            i = p[i]
        return i

    def union(self, a: int, b: int) -> None:
        ra, rb = self.find(a), self.find(b)
        if ra != rb:
            self.parent[max(ra, rb)] = min(ra, rb)


def name_nets(engine: Engine) -> dict[str, list[Sub]]:
    """Every net (final name -> the groups on it)."""
    return _Namer(engine).run()


class _Namer:
    def __init__(self, engine: Engine):
        self.engine = engine
        self.aliases = engine.project.bus_aliases

    def run(self) -> dict[str, list[Sub]]:
        aliases = self.aliases
        subs = []
        for s in self.engine.subs:
            resolve(s, aliases)
            if s.driver is not None:
                subs.append(s)
        weak_names(subs)
        subs = local_merge(subs, aliases)
        for s in subs:
            if s.bus is not None and s.pins:
                raise InputError(f"a pin touches the bus {s.bare}; use --use-kicad-cli",
                                 s.inst.file.path)
        self.subs = subs
        self.renamed = _global_renames(subs)
        self._chains()
        self._join()
        nets: dict[str, list[Sub]] = {}
        for root, members in self.components.items():
            name = self._name(root, members)
            for i in members:
                s = subs[i]
                final = name
                if not s.strong and len(s.drivers) == 1 and s.driver.kind == K_PIN \
                        and len(members) == 1:
                    final = self.engine.pin_net_name(s.driver.item, True)
                nets.setdefault(final, []).append(s)
        return nets

    # -- structure -----------------------------------------------------------------

    def _chains(self) -> None:
        subs = self.subs
        self.pos = {id(s): i for i, s in enumerate(subs)}
        links = hierarchy_links(subs, self.engine.h.instances)
        self.chain_of = chain_of = [-1] * len(subs)
        self.chains: list[list[int]] = []
        for i in range(len(subs)):
            if chain_of[i] >= 0:
                continue
            members = [i]
            chain_of[i] = len(self.chains)
            k = 0
            while k < len(members):
                for c in links[members[k]]:
                    j = self.pos[id(c)]
                    if chain_of[j] < 0:
                        chain_of[j] = len(self.chains)
                        members.append(j)
                k += 1
            self.chains.append(members)
        self.best = [subs[c[0]] if len(c) == 1 else chain_best([subs[j] for j in c])
                     for c in self.chains]

    def _join(self) -> None:
        """Union nets along hierarchy chains, and nets with the bus members they are named
        after: a bus member is a net name on its sheet, and across the hierarchy it follows
        the bus (by position in a vector, by member name in a group)."""
        subs, chain_of, best = self.subs, self.chain_of, self.best
        sets = self.sets = _Sets(len(subs))
        for members in self.chains:
            if len(members) > 1 and subs[members[0]].bus is None:
                for j in members[1:]:
                    sets.union(members[0], j)
        self.local: dict[tuple[int, str], int] = {}     # (instance, member name) -> node
        self.local_inst: dict[int, int] = {}
        self.local_slots: dict[int, set[int]] = {}
        slots: dict[tuple[int, object], int] = {}
        self.slot_name: dict[int, str] = {}
        self.slot_chain: dict[int, int] = {}
        for i, s in enumerate(subs):
            if s.bus is None or not s.strong:
                continue
            c = chain_of[i]
            b = best[c]
            if b.bus is None or b.bus.kind != s.bus.kind:
                raise InputError(f"the bus {s.bare} is joined through the hierarchy to "
                                 f"{b.bare}, a different kind of bus; use --use-kicad-cli",
                                 s.inst.file.path)
            glob = b.driver.kind == K_LABEL and b.driver.prio == GLOBAL
            for bus in _labels_of(s, self.aliases):
                for m in bus.members:
                    key = (s.inst.index, m.bare)
                    v = self.local.get(key)
                    if v is None:
                        v = self.local[key] = sets.add()
                        self.local_inst[v] = s.inst.index
                    target = next((t for t in b.bus.members if t.key == m.key), None)
                    if target is None:
                        continue       # KiCad leaves a member it cannot match alone
                    slot = slots.get((c, m.key))
                    if slot is None:
                        slot = slots[(c, m.key)] = sets.add()
                        self.slot_name[slot] = target.bare if glob else b.inst.names + target.bare
                        self.slot_chain[slot] = c
                    sets.union(v, slot)
                    self.local_slots.setdefault(v, set()).add(slot)
        self.neighbors: set[int] = set()
        for i, s in enumerate(subs):
            if s.bus is not None or not s.strong:
                continue
            names = {s.bare}
            if s.multiple:
                names.update(d.name for d in s.drivers
                             if d.kind == K_LABEL or (d.kind == K_PIN and d.prio >= POWER))
            for n in names:
                v = self.local.get((s.inst.index, n))
                if v is not None:
                    sets.union(i, v)
                    self.neighbors.add(i)
        self.components: dict[int, list[int]] = {}
        for i in range(len(subs)):
            if subs[i].bus is None:
                self.components.setdefault(sets.find(i), []).append(i)
        self.slots_of: dict[int, list[int]] = {}
        for slot in self.slot_name:
            self.slots_of.setdefault(sets.find(slot), []).append(slot)
        self.locals_of: dict[int, list[int]] = {}
        for v in self.local_inst:
            self.locals_of.setdefault(sets.find(v), []).append(v)

    # -- names ---------------------------------------------------------------------

    def _name(self, root: int, members: list[int]) -> str:
        subs, rename = self.subs, self.renamed
        first = subs[members[0]]
        globals_ = {rename.get(subs[i].name, subs[i].name) for i in members
                    if subs[i].driver.prio >= POWER}
        if len(globals_) > 1:
            raise InputError("the nets " + ", ".join(sorted(globals_)) + " are joined through "
                             "the hierarchy or a bus; KiCad's choice of name there depends on "
                             "its internal order: use --use-kicad-cli", first.inst.file.path)
        if globals_:
            return globals_.pop()
        chain_ids = {self.chain_of[i] for i in members}
        slots = self.slots_of.get(root, [])
        slot_names = {self.slot_name[s] for s in slots}
        if not slot_names:
            (c,) = chain_ids
            b = self.best[c]
            return rename.get(b.name, b.name)
        if len(slot_names) > 1:
            slot = self._several_buses(root, members, slots)
        else:
            (slot,) = slot_names
        names = {slot}
        for c in chain_ids:
            chain = [subs[j] for j in members if self.chain_of[j] == c]
            if len(chain) == 1:
                continue
            renamed = {id(s): slot for s in chain if self.pos[id(s)] in self.neighbors}
            b = chain_best(chain, renamed)
            names.add(renamed.get(id(b), rename.get(b.name, b.name)))
        if len(names) > 1:
            raise InputError("a net joins the bus member " + slot + " and also runs through "
                             "sheet pins under the name " + ", ".join(sorted(names - {slot}))
                             + "; KiCad's choice of name there depends on its internal order: "
                             "use --use-kicad-cli", first.inst.file.path)
        return slot

    def _several_buses(self, root: int, members: list[int], slots: list[int]) -> str:
        """Nets named like members of several buses. Where one net on a sheet is a member
        of several buses there, KiCad names it after the bus processed first (sheets in page
        order) whose name comes from another sheet (a bus named on the net's own sheet
        yields to any later one); the other buses' members then take that name."""
        subs = self.subs
        first = subs[members[0]]
        winners = set()
        for v in self.locals_of.get(root, ()):
            here = self.local_slots.get(v, set())
            if len({self.slot_name[x] for x in here}) < 2:
                continue
            sheet = self.local_inst[v]
            entries = []
            for slot in here:
                c = self.slot_chain[slot]
                chain = [subs[j] for j in self.chains[c]]
                starters = [s for s in chain if not (s.hier_ports and s.hier_pins)] or chain
                start = min(starters, key=lambda s: (s.inst.index, s.order))
                names = {self.slot_name[x] for x in self.slot_name if self.slot_chain[x] == c}
                entries.append((start.inst.index, self.slot_name[slot],
                                self.best[c].inst.index, names))
            outcomes = set()
            for order in (sorted(entries, key=lambda e: (e[0], e[1])),
                          sorted(entries, key=lambda e: (e[0], _reverse(e[1])))):
                name, locked = None, sheet
                for _, n, best_sheet, chain_names in order:
                    if locked == sheet or (locked == best_sheet and name not in chain_names):
                        name, locked = n, best_sheet
                outcomes.add(name)
            winners |= outcomes
        if len(winners) != 1:
            raise InputError("a net is named like members of several buses ("
                             + ", ".join(sorted({self.slot_name[x] for x in slots}))
                             + "); KiCad's choice of name depends on its internal order: "
                             "use --use-kicad-cli", first.inst.file.path)
        return winners.pop()


def _reverse(text: str):
    return tuple(-ord(ch) for ch in text)


def _labels_of(s: Sub, aliases: dict):
    """The bus labels of a bus group: its driver's bus and any other label of that kind."""
    out = [s.bus]
    if s.multiple:
        for d in s.drivers:
            if d is not s.driver and d.kind == K_LABEL and d.name != s.bare:
                other = bus_of(d.name, aliases, s)
                if other is not None and other.kind == s.bus.kind:
                    out.append(other)
    return out


def _global_renames(subs: list[Sub]) -> dict[str, str]:
    """A group holding two global names (two global labels, a global label and a power
    symbol...) gives the name of its driver to every group using the other name."""
    winners: dict[str, str] = {}
    for s in subs:
        if s.driver is None or s.driver.prio < POWER or not s.multiple:
            continue
        for d in s.drivers:
            if d is s.driver or d.prio < POWER or d.name == s.driver.name:
                continue
            prev = winners.get(d.name)
            if prev is not None and prev != s.name:
                raise InputError(f"global name {d.name} is joined to both {prev} and "
                                 f"{s.name}; KiCad's choice depends on its internal order: "
                                 "use --use-kicad-cli", s.inst.file.path)
            winners[d.name] = s.name
    renamed = {}
    for loser, winner in winners.items():
        seen = {loser}
        while winner in winners and winner not in seen:
            seen.add(winner)
            winner = winners[winner]
        renamed[loser] = winner
    return renamed
