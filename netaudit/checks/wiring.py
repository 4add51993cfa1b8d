"""Rules about how the bus is wired: pairing, swapped lines, unconnected pins, lone devices."""

from __future__ import annotations

from ..results import Severity
from ..topology.names import pin_signal
from . import CheckContext, finding, rule


@rule("bus-line-unpaired", Severity.WARNING)
def bus_line_unpaired(ctx: CheckContext):
    """A data line with no clock partner, or a clock line with no data partner.

    What: a net that devices or its name mark as SDA (or SCL) for which no matching
    SCL (or SDA) line could be found through shared devices or partner names.
    Why: a two-wire bus needs both wires; a lone line is usually a label typo, a pin
    left unconnected on one device, or a pair the tool could not match.
    Fix: check the labels and the devices on both lines; if the pair is right, name it
    in netaudit.yaml under ``buses:`` with its ``sda`` and ``scl`` nets.
    Source: UM10204 Rev. 6 section 3.1.1 (the bus is two wires, SDA and SCL).
    """
    for u in ctx.topology.unpaired:
        yield finding("bus-line-unpaired", line=u.signal, refs=u.refs, nets=u.nets, signal=u.signal)


@rule("bus-lines-swapped", Severity.ERROR)
def bus_lines_swapped(ctx: CheckContext):
    """A device's SDA pin sits on the bus's clock line, or its SCL pin on the data line.

    What: the pin function of a device pin names the other signal than the line it is on.
    Why: with SDA and SCL crossed the device never sees a valid START and never answers.
    Fix: swap the two connections at the device (or correct the symbol's pin names).
    Source: UM10204 Rev. 6 section 3.1.1 (SDA carries data, SCL the clock).
    """
    for bus, seg in ctx.segments():
        for dev in seg.devices:
            for pin in dev.pins:
                sig = pin_signal(pin.function)
                if sig is not None and sig.signal != pin.signal:
                    line = seg.sda if pin.signal == "sda" else seg.scl
                    yield finding("bus-lines-swapped", bus=bus, segment=seg, line=pin.signal,
                                  refs=[dev.ref], nets=line.nets, pin=pin.pin,
                                  pin_function=pin.function, on_line=pin.signal)


@rule("bus-pin-unconnected", Severity.WARNING)
def bus_pin_unconnected(ctx: CheckContext):
    """A device's SDA or SCL pin connects to nothing.

    What: a pin named plainly SDA or SCL on a part that is not a connector, left on no
    net or alone on its net. Unused multiplexer channels and numbered controller ports
    (``I2C1_SDA``) and multi-function port pins (``PB7/SDA``) are left out: leaving
    those open is normal.
    Why: the device cannot be reached, and an open input can pick up noise.
    Fix: connect the pin to its bus, or, if the device is meant to be unused, tie or
    terminate the pin as its datasheet says.
    Source: common practice, no source.
    """
    mux_refs = {d.ref for _b, s in ctx.segments() for d in s.devices if d.role == "mux"}
    for u in ctx.topology.unconnected:
        sig = pin_signal(u.function)
        if u.ref in mux_refs or sig is None or not sig.dedicated or sig.channel or sig.key:
            continue  # open mux channels, numbered ports and multi-function pins are normal
        yield finding("bus-pin-unconnected", refs=[u.ref], line=u.signal, pin=u.pin, pin_function=u.function)


@rule("bus-lone-device", Severity.INFO)
def bus_lone_device(ctx: CheckContext):
    """A segment with a single device on it.

    What: only one part (device or connector) talks on the segment.
    Why: a bus needs a controller and at least one target; a lone device usually means
    the rest sits on another board (fine: say so with a connector) or a net is broken.
    Fix: check the segment's labels; add the missing connection or connector.
    Source: UM10204 Rev. 6 section 3.1 (controller and target roles).
    """
    for bus, seg in ctx.segments():
        if len(seg.devices) == 1:
            yield finding("bus-lone-device", bus=bus, segment=seg, refs=[seg.devices[0].ref],
                          nets=[n for line in seg.lines for n in line.nets])
