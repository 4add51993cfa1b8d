"""Rules about pull-ups: missing, duplicated by reused sheets, parallel, rails, signals."""

from __future__ import annotations

from ..electrical.budget import parallel
from ..results import Line, Severity
from . import CheckContext, finding, rule


def _to_signal(ctx: CheckContext, line: Line):
    return [p for p in line.fitted_pullups if not p.offboard and p.rail not in ctx.rails]


def _to_rail(ctx: CheckContext, line: Line):
    return [p for p in line.fitted_pullups if p.offboard or p.rail in ctx.rails]


@rule("pullup-missing", Severity.ERROR)
def pullup_missing(ctx: CheckContext):
    """A line in a segment with no fitted pull-up and none declared off-board.

    What: neither a fitted resistor to a rail (or to any net), nor an ``offboard_pullup``
    in netaudit.yaml, pulls the line high. Not-fitted alternatives are named in the
    finding but never counted.
    Why: SDA and SCL are open-drain; without a pull-up the line never rises and the bus
    does not work. Each segment behind a multiplexer, repeater or translator needs its own.
    Fix: fit pull-ups sized with ``netaudit pullup``; if they live on another board, declare
    them under the bus's ``offboard_pullup`` in netaudit.yaml.
    Source: UM10204 Rev. 6 section 3.1.1 and section 7.1 (pull-up resistor sizing).
    """
    for bus, seg in ctx.segments():
        for line in seg.lines:
            if line.fitted_pullups:
                continue
            candidates = sorted(p.ref for p in line.pullups if not p.fitted)
            yield finding("pullup-missing", bus=bus, segment=seg, line=line.signal,
                          refs=candidates, nets=line.nets, not_fitted=candidates)


@rule("pullup-duplicated", Severity.WARNING)
def pullup_duplicated(ctx: CheckContext):
    """The same pull-up repeated by several instances of one hierarchical sheet.

    What: fitted pull-ups on one line come from the same sheet file placed more than once
    (``/Probe A/`` and ``/Probe B/`` both from ``probe.kicad_sch``).
    Why: a sheet reused N times puts N pull-ups in parallel: the line is pulled N times
    harder than the sheet's designer intended, which can break the sink-current limit.
    Fix: move the pull-ups out of the reused sheet to the sheet that owns the bus, or mark
    all but one instance not fitted.
    Source: UM10204 Rev. 6 section 7.1 (equivalent Rp sets the sink current).
    """
    for bus, seg in ctx.segments():
        for line in seg.lines:
            by_file: dict[str, list] = {}
            for p in _to_rail(ctx, line):
                if p.sheet_file and not p.offboard:
                    by_file.setdefault(p.sheet_file, []).append(p)
            for sheet_file, group in sorted(by_file.items()):
                paths = sorted({p.sheet_path for p in group})
                if len(paths) < 2:
                    continue
                yield finding("pullup-duplicated", bus=bus, segment=seg, line=line.signal,
                              refs=[p.ref for p in group], nets=line.nets, sheet_file=sheet_file,
                              sheet_paths=paths,
                              equivalent_ohms=_equivalent(group))


def _equivalent(pullups) -> float | None:
    values = [p.ohms for p in pullups]
    if any(v is None or v <= 0 for v in values):
        return None
    return round(parallel(values), 3)


@rule("pullup-parallel", Severity.WARNING)
def pullup_parallel(ctx: CheckContext):
    """More than one fitted pull-up on one line, from different places.

    What: two or more fitted pull-ups (on-board or declared off-board) pull the same line;
    the finding gives their equivalent value. Copies made by one reused sheet are reported
    as pullup-duplicated instead.
    Why: parallel pull-ups add up; the equivalent may be too strong for the weakest
    device's sink current, and it is rarely what the designer of each part intended.
    Fix: keep one set of pull-ups per segment; mark the others not fitted.
    Source: UM10204 Rev. 6 section 7.1, Eq. (2).
    """
    for bus, seg in ctx.segments():
        for line in seg.lines:
            live = _to_rail(ctx, line)
            if len(live) < 2:
                continue
            files = {p.sheet_file for p in live if not p.offboard}
            paths = {p.sheet_path for p in live if not p.offboard}
            if not any(p.offboard for p in live) and len(files) == 1 and "" not in files \
                    and len(paths) == len(live):
                continue  # all from one reused sheet: pullup-duplicated says it
            yield finding("pullup-parallel", bus=bus, segment=seg, line=line.signal,
                          refs=[p.ref for p in live if not p.offboard], nets=line.nets,
                          pullups={p.ref: p.ohms for p in live}, equivalent_ohms=_equivalent(live))


@rule("pullup-rail-mismatch", Severity.ERROR)
def pullup_rail_mismatch(ctx: CheckContext):
    """Pull-ups of one segment tie to different rails (on one line, or SDA against SCL).

    What: the fitted pull-ups of a segment do not all go to the same supply net.
    Why: devices judge high and low against their supply; two rails on one segment mean
    one line idles at a different level than the other, and current flows between rails
    through the resistors. Translators exist to join such segments.
    Fix: tie every pull-up of the segment to one rail, or put a translator between parts
    that need different levels.
    Source: UM10204 Rev. 6 section 3.1.2 (levels relate to VDD), Rev. 6 Table 11 note [1].
    """
    for bus, seg in ctx.segments():
        live = [(line, p) for line in seg.lines for p in _to_rail(ctx, line)]
        rails = sorted({p.rail for _l, p in live})
        if len(rails) < 2:
            continue
        yield finding("pullup-rail-mismatch", bus=bus, segment=seg, line=None,
                      refs=[p.ref for _l, p in live if not p.offboard],
                      nets=[n for line in seg.lines for n in line.nets], rails=rails,
                      by_line={line.signal: sorted({p.rail for ll, p in live if ll is line})
                               for line in seg.lines})


@rule("pullup-to-signal", Severity.WARNING)
def pullup_to_signal(ctx: CheckContext):
    """A pull-up goes to a net that is not a supply rail (a GPIO, an enable line).

    What: a fitted resistor of pull-up size joins the line to a net that no power pin,
    rail name or netaudit.yaml ``rails:`` entry makes a supply.
    Why: the bus then only works while that signal is driven high; when the GPIO is low
    or floating (reset, boot, sleep) the line is held low or floats.
    Fix: tie the pull-up to a rail; if the net really is a switched supply, name it in
    netaudit.yaml under ``rails:`` with its voltage.
    Source: UM10204 Rev. 6 section 3.1.1 (lines pulled to the supply voltage).
    """
    for bus, seg in ctx.segments():
        for line in seg.lines:
            for p in _to_signal(ctx, line):
                yield finding("pullup-to-signal", bus=bus, segment=seg, line=line.signal,
                              refs=[p.ref], nets=list(line.nets) + [p.rail], target_net=p.rail,
                              ohms=p.ohms)
