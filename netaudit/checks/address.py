"""Rules about addresses and speed: collisions per address domain, reserved addresses,
open or unreadable straps, overlaps across a multiplexer, devices slower than the bus.

Addresses come from netaudit/addressing.py (config, symbol field, catalog and straps);
the domain model (zones joined through translators and repeaters, split by multiplexer
channels) is explained there.
"""

from __future__ import annotations

from collections import defaultdict

from ..addressing import ADDRESSED_ROLES, Resolution, chain, format_address, home_zones, zones
from ..electrical.modes import get_mode
from ..results import Bus, Severity
from . import CheckContext, finding, rule

# UM10204 Rev. 6 section 3.1.12 Table 3 (Rev. 7 Table 4): "0000 XXX and 1111 XXX".
I2C_RESERVED: dict[int, str] = {
    0x00: "general call address / START byte",
    0x01: "CBUS address",
    0x02: "reserved for a different bus format",
    0x03: "reserved for future purposes",
    **{a: "Hs-mode controller code" for a in range(0x04, 0x08)},
    **{a: "10-bit target addressing" for a in range(0x78, 0x7C)},
    **{a: "device ID" for a in range(0x7C, 0x80)},
}
# SMBus 2.0 reserved addresses, as its table is quoted in the Nuvoton ISD94100 manual
# section 6.13.5.2.6 and in the Linux kernel's smbus-protocol documentation (see
# REFERENCES.md section 2.4). 0x28 and 0x37 were the ACCESS.bus host and default addresses
# in SMBus 2.0 and carry the PMBus zone read/write protocols in SMBus 3.0: reserved either way.
SMBUS_RESERVED: dict[int, str] = {
    0x08: "SMBus host",
    0x0C: "SMBus Alert Response Address",
    0x28: "reserved for ACCESS.bus host (SMBus 2.0) / PMBus zone read (SMBus 3.0)",
    0x37: "reserved for ACCESS.bus default address (SMBus 2.0) / PMBus zone write (SMBus 3.0)",
    0x61: "SMBus Device Default Address (ARP)",
}

def _resolutions(ctx: CheckContext) -> dict[tuple[str, str], Resolution]:
    return ctx.resolutions


def _devices(bus: Bus):
    """Each device of a bus once, with the first segment it is on."""
    seen = {}
    for seg in bus.segments:
        for dev in seg.devices:
            seen.setdefault(dev.ref, (dev, seg))
    return list(seen.values())


def _bus_nets(bus: Bus, segment_ids) -> list[str]:
    return [n for s in bus.segments if s.id in segment_ids for line in s.lines for n in line.nets]


def _clashes(bus: Bus, res: dict[tuple[str, str], Resolution]):
    """Address clashes of a bus: (kind, zone, refs, addresses), kind "same-zone" for two
    devices of one zone, "across-mux" for a device and one upstream of its mux."""
    zone_map, _ = zones(bus)
    home = home_zones(bus)
    by_zone: dict[str, dict[tuple[bool, int], set[str]]] = defaultdict(lambda: defaultdict(set))
    for ref, zid in home.items():
        for key in res[(bus.name, ref)].occupied:
            by_zone[zid][key].add(ref)
    out = []
    for zid in zone_map:
        grouped: dict[frozenset, list] = defaultdict(list)
        for key, refs in by_zone[zid].items():
            if len(refs) > 1:
                grouped[frozenset(refs)].append(key)
        for refs, keys in grouped.items():
            out.append(("same-zone", zid, None, tuple(sorted(refs)), sorted(keys)))
        for upper in chain(zone_map, zid)[1:]:
            for ref in sorted(r for r, z in home.items() if z == zid):
                hits: dict[frozenset, list] = defaultdict(list)
                for key in sorted(res[(bus.name, ref)].occupied):
                    others = by_zone[upper].get(key, set())
                    if others:
                        hits[frozenset(others)].append(key)
                for others, keys in hits.items():
                    out.append(("across-mux", zid, upper, tuple(sorted(others | {ref})), keys))
    return zone_map, out


def _fmt(keys) -> list[str]:
    return [format_address(a, ten) for ten, a in keys]


@rule("address-collision", Severity.ERROR)
def address_collision(ctx: CheckContext):
    """Two devices answer the same address in one address domain.

    What: devices of one zone (a segment and those joined to it through translators and
    repeaters) whose addresses overlap; block-select EEPROMs count every address they
    answer. Devices on different multiplexer channels or different buses never collide;
    a clash across a multiplexer is reported as mux-address-overlap instead.
    Why: both devices acknowledge and drive SDA at once, so reads come back corrupted
    and writes reach the wrong part.
    Fix: strap one device to another address (its A/ADDR pins), choose a part variant
    with another fixed address, or move it behind a multiplexer channel.
    Source: UM10204 Rev. 6 section 3.1.10 (each target answers its own address).
    """
    res = _resolutions(ctx)
    for bus in ctx.buses:
        zone_map, clashes = _clashes(bus, res)
        for kind, zid, _upper, refs, keys in clashes:
            if kind != "same-zone":
                continue
            segs = {s.id for s in bus.segments for d in s.devices if d.ref in refs} & set(zone_map[zid].segments)
            yield finding("address-collision", bus=bus,
                          segment=next(s for s in bus.segments if s.id == zid), refs=refs,
                          nets=_bus_nets(bus, segs), addresses=_fmt(keys), domain=zid,
                          sources={r: res[(bus.name, r)].source for r in refs})


@rule("mux-address-overlap", Severity.ERROR)
def mux_address_overlap(ctx: CheckContext):
    """A device on a mux channel shares the address of the mux or of a device upstream of it.

    What: a device behind a multiplexer channel whose address is also answered in the
    zone upstream of that multiplexer: by the multiplexer itself, or by any device
    between it and the bus controller (each channel's domain is the channel plus
    everything upstream). Reported once per device and upstream zone, never also as
    address-collision.
    Why: with the channel switched on, the controller's message reaches both devices;
    a device at the multiplexer's own address also swallows the channel-select writes.
    Fix: strap the device or the multiplexer to another address.
    Source: NXP AN262 (PCA954x multiplexers and switches) and UM10204 Rev. 6 section 7.2.3
    (a switch joins the channel to the upstream bus).
    """
    res = _resolutions(ctx)
    for bus in ctx.buses:
        zone_map, clashes = _clashes(bus, res)
        for kind, zid, upper, refs, keys in clashes:
            if kind != "across-mux":
                continue
            zone = zone_map[zid]
            mux_refs = {d.ref for s in bus.segments for d in s.devices if d.role == "mux"}
            segs = set(zone.segments) | set(zone_map[upper].segments)
            yield finding("mux-address-overlap", bus=bus,
                          segment=next(s for s in bus.segments if s.id == zid), refs=refs,
                          nets=_bus_nets(bus, segs), addresses=_fmt(keys), mux=zone.mux,
                          channel=zone.channel, upstream_zone=upper,
                          with_mux=sorted(set(refs) & mux_refs))


@rule("address-reserved", Severity.WARNING)
def address_reserved(ctx: CheckContext):
    """A device sits on a reserved address.

    What: a 7-bit address in the two groups the I2C-bus specification reserves, 0000 XXX
    (0x00-0x07) and 1111 XXX (0x78-0x7F); on a bus run in an SMBus mode also the SMBus
    host (0x08), Alert Response (0x0C), ACCESS.bus/PMBus zone (0x28, 0x37) and device
    default (0x61) addresses. 10-bit addresses are not checked against these groups.
    Why: general calls, START bytes, Hs-mode codes, 10-bit and device-ID headers use these
    addresses; a device answering one can acknowledge traffic meant for every device.
    Fix: move the device to an ordinary address (straps, variant, or its address register).
    Source: UM10204 Rev. 6 section 3.1.12 Table 3 (Rev. 7 Table 4); SMBus 2.0 reserved
    address table as quoted in REFERENCES.md section 2.4.
    """
    res = _resolutions(ctx)
    for bus in ctx.buses:
        smbus = get_mode(bus.mode).family == "smbus"
        for dev, seg in _devices(bus):
            r = res[(bus.name, dev.ref)]
            for ten, addr in sorted(r.occupied):
                meaning = None if ten else I2C_RESERVED.get(addr) or (SMBUS_RESERVED.get(addr) if smbus else None)
                if meaning:
                    yield finding("address-reserved", bus=bus, segment=seg, refs=[dev.ref],
                                  address=format_address(addr), meaning=meaning, smbus=smbus,
                                  source=r.source)
                    break


@rule("address-strap-floating", Severity.WARNING)
def address_strap_floating(ctx: CheckContext):
    """An address-select pin is left unconnected.

    What: a pin the part's address form reads (A0, ADDR, SA0 ...) on no net, alone on its
    net, or reaching only not-fitted parts, test points or capacitors. Parts whose
    datasheet gives "open" an address of its own are not reported; where the datasheet
    says an open pin reads low, the finding says the address that gives.
    Why: an open CMOS input floats: the address can change with noise, temperature or
    leakage, and two boards of one design can answer different addresses.
    Fix: tie the pin to ground or the supply (or to SDA/SCL where the datasheet allows),
    or fit the strap resistor that is marked not fitted.
    Source: common practice, no source; the parts' datasheets (catalog entries) say
    whether their address pins have internal pulls.
    """
    res = _resolutions(ctx)
    for bus in ctx.buses:
        for dev, seg in _devices(bus):
            r = res[(bus.name, dev.ref)]
            for s in r.floating:
                yield finding("address-strap-floating", bus=bus, segment=seg, refs=[dev.ref],
                              nets=[s.net] if s.net else [], pin=s.pin, pin_numbers=list(s.numbers),
                              reads_low=s.tie == "GND", address=format_address(r.address, r.ten_bit),
                              possible_addresses=[format_address(a) for a in r.candidates])


@rule("address-unknown", Severity.INFO)
def address_unknown(ctx: CheckContext):
    """A device's address could not be determined.

    What: a target or multiplexer for which neither netaudit.yaml, the symbol field
    I2C_ADDR, nor the part catalog gives an address, or whose address pins cannot be read
    (missing from the symbol, driven by another part, pulled several ways). Controllers,
    translators, repeaters and connectors are not expected to have one; open straps are
    reported as address-strap-floating instead.
    Why: an unknown address cannot be checked for collisions or reserved values.
    Fix: add a ``parts:`` rule with the address to netaudit.yaml, or write it in the
    symbol's I2C_ADDR field (``0x48`` or ``48h``).
    Source: common practice, no source.
    """
    res = _resolutions(ctx)
    for bus in ctx.buses:
        for dev, seg in _devices(bus):
            r = res[(bus.name, dev.ref)]
            if dev.role not in ADDRESSED_ROLES or r.address is not None or r.reason == "strap-floating":
                continue
            pins = [{"pin": s.pin, "net": s.net, "why": s.why} for s in r.straps
                    if s.tie is None or not s.numbers]
            yield finding("address-unknown", bus=bus, segment=seg, refs=[dev.ref],
                          nets=sorted({p["net"] for p in pins if p["net"]}), reason=r.reason,
                          value=dev.value, pins=pins)


@rule("speed-unsupported", Severity.ERROR)
def speed_unsupported(ctx: CheckContext):
    """The bus runs faster than a device on it supports.

    What: a device whose highest mode (catalog or netaudit.yaml ``max_mode``) ranks below
    the bus's mode: Standard-mode and SMBus 100 kHz below Fast-mode and SMBus 400 kHz,
    those below Fast-mode Plus and SMBus 1 MHz. A mux or buffer counts on every segment.
    Why: the device's timing (t_LOW, t_HIGH, set-up and hold times) is only met at its own
    clock rate; faster, it misses bits or holds the bus.
    Fix: run the bus (``mode:`` in netaudit.yaml) at the slowest device's mode, move the
    device behind a buffer on a slower segment, or choose a faster part.
    Source: UM10204 Rev. 6 Table 10 (f_SCL maximum per mode); device datasheets for each
    part's own maximum.
    """
    for bus in ctx.buses:
        bus_mode = get_mode(bus.mode)
        for dev, seg in _devices(bus):
            info = ctx.parts.get(dev.ref)
            max_mode = dev.max_mode or (info.max_mode if info is not None else None)
            if not max_mode or dev.role == "connector":
                continue
            dev_mode = get_mode(max_mode)
            if dev_mode.rank < bus_mode.rank:
                yield finding("speed-unsupported", bus=bus, segment=seg, refs=[dev.ref],
                              max_mode=max_mode, bus_mode=bus.mode,
                              max_hz=dev_mode.f_scl_hz, bus_hz=bus_mode.f_scl_hz)
