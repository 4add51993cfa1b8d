"""Rules about each line's electrical budget: sink current, rise time, capacitance, series R."""

from __future__ import annotations

from ..electrical.budget import margin_percent, series_low_level_margin
from ..electrical.modes import get_mode
from ..results import Severity
from . import CheckContext, finding, rule


def _budgeted(ctx: CheckContext):
    for bus, seg in ctx.segments():
        for line in seg.lines:
            if line.budget is not None:
                yield bus, seg, line, line.budget


@rule("pullup-too-strong", Severity.ERROR)
def pullup_too_strong(ctx: CheckContext):
    """The line's equivalent pull-up is below Rp(min) = (VDD − VOL(max)) / IOL.

    What: the fitted pull-ups together (Thévenin equivalent where they go to different
    rails) are stronger than the weakest sink on the line can pull down to VOL(max).
    Why: a device sinking its rated current cannot pull the line below VOL(max); other
    devices may not read a LOW, and the pull-up wastes current.
    Fix: raise the pull-up value (``netaudit pullup`` lists standard values that fit), or
    remove parallel pull-ups.
    Source: UM10204 Rev. 6 section 7.1, Eq. (2); VOL/IOL from Rev. 6 Table 9.
    """
    for bus, seg, line, b in _budgeted(ctx):
        if b.rp_ohms is not None and b.rp_min_ohms is not None and b.rp_ohms < b.rp_min_ohms:
            yield finding("pullup-too-strong", bus=bus, segment=seg, line=line.signal,
                          refs=[p.ref for p in line.fitted_pullups if not p.offboard], nets=line.nets,
                          rp_ohms=round(b.rp_ohms, 3), rp_min_ohms=round(b.rp_min_ohms, 3),
                          rail_volts=b.rail_volts, suggestions_ohms=list(b.suggestions_ohms),
                          pick_ohms=b.pick_ohms)


@rule("pullup-too-weak", Severity.ERROR)
def pullup_too_weak(ctx: CheckContext):
    """The estimated rise time 0.8473·Rp·Cb is above the mode's maximum.

    What: with the line's equivalent pull-up and estimated bus capacitance, the rising
    edge takes longer from 30 % to 70 % of VDD than the bus mode allows (or never gets
    there, when pull-ups to different rails settle below 70 %).
    Why: a slow edge shortens the clock's HIGH time and data set-up time; devices see
    data late or not at all, and noise has longer to cause false edges.
    Fix: lower the pull-up value (within Rp(min)), cut capacitance, lower the mode, or
    split the bus with a buffer.
    Source: UM10204 Rev. 6 section 7.1, Eq. (1); t_r max from Rev. 6 Table 10 (Rev. 7 Table 11).
    """
    for bus, seg, line, b in _budgeted(ctx):
        if b.rp_ohms is None or b.rise_time_max_s is None:
            continue
        if b.rise_time_s is None or b.rise_time_s > b.rise_time_max_s:
            yield finding("pullup-too-weak", bus=bus, segment=seg, line=line.signal,
                          refs=[p.ref for p in line.fitted_pullups if not p.offboard], nets=line.nets,
                          rise_time_s=b.rise_time_s, rise_time_max_s=b.rise_time_max_s,
                          rp_ohms=round(b.rp_ohms, 3), rp_max_ohms=b.rp_max_ohms,
                          capacitance_farads=b.capacitance_farads,
                          margin_percent=None if b.rise_time_s is None else
                          round(margin_percent(b.rise_time_s, b.rise_time_max_s), 1),
                          suggestions_ohms=list(b.suggestions_ohms), pick_ohms=b.pick_ohms)


@rule("capacitance-over-limit", Severity.ERROR)
def capacitance_over_limit(ctx: CheckContext):
    """The estimated capacitance of a line is above the mode's maximum bus load.

    What: device pins, capacitors, routing and declared extra capacitance add up to more
    than Cb(max) for the mode (400 pF Standard- and Fast-mode, 550 pF Fast-mode Plus).
    Why: above Cb(max) no pull-up both meets the rise time and stays within the sink
    current; the standard's timing is no longer guaranteed.
    Fix: shorten or split the bus (buffer, multiplexer), remove capacitance, or use a
    slower mode.
    Source: UM10204 Rev. 6 Table 10 (Rev. 7 Table 11), Cb; section 7.2.
    """
    for bus, seg, line, b in _budgeted(ctx):
        limit = get_mode(bus.mode).cb_max_f
        if limit is not None and b.capacitance_farads is not None and b.capacitance_farads > limit:
            yield finding("capacitance-over-limit", bus=bus, segment=seg, line=line.signal,
                          nets=line.nets, capacitance_farads=b.capacitance_farads,
                          capacitance_max_farads=limit, capacitance_parts=dict(b.capacitance_parts))


@rule("low-level-margin", Severity.WARNING)
def low_level_margin(ctx: CheckContext):
    """Series resistance lifts the LOW level seen by other devices past the noise margin.

    What: a device behind a series resistor Rs pulls the line to VOL + I·Rs, where I is
    the pull-up current; that level is compared with VIL(max) minus the LOW noise margin.
    Why: other devices then read the LOW level with less margin than the standard
    requires, or not as LOW at all.
    Fix: lower the series resistance, or raise the pull-up value so less current flows.
    Source: UM10204 Rev. 6 section 7.3 (series resistors, Rs max set by the 0.1 VDD LOW
    noise margin); V_nL from Rev. 6 Table 10.
    """
    for bus, seg, line, b in _budgeted(ctx):
        series = [s for s in line.series if s.fitted and s.ohms]
        if not series or b.rp_ohms is None or b.rail_volts is None:
            continue
        mode = get_mode(bus.mode)
        vdd = b.rail_volts
        vol, _iol = mode.sink(vdd)
        current = max(vdd - vol, 0.0) / b.rp_ohms
        worst = max(series, key=lambda s: s.ohms)
        vil = mode.vil_max_v(vdd)
        nl = mode.noise_margin_low_v(vdd)
        margin = series_low_level_margin(vdd, vol, current, worst.ohms, vil / vdd, nl / vdd)
        if margin < 0:
            yield finding("low-level-margin", bus=bus, segment=seg, line=line.signal,
                          refs=[worst.ref], nets=line.nets, series_ohms=worst.ohms,
                          low_level_v=round(vol + current * worst.ohms, 4),
                          limit_v=round(vil - nl, 4), current_a=current)
