"""The pull-up budget of one bus line: resistor window, rise time, low level, margins.

Pure functions on SI floats (ohms, farads, seconds, volts, amperes). The model is the
one UM10204 §7.1 uses: the line is a capacitance Cb charged through the pull-up from 0 V,
V(t) = V_th · (1 − e^(−t/RC)), and the rise time is the time between the two input
thresholds (30 % and 70 % of VDD for I2C).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Iterable, Sequence

from netaudit.electrical.modes import Mode
from netaudit.units import series_values

#: t2 − t1 for an RC edge between 30 % and 70 % of its final value, in units of RC:
#: ln(0.7/0.3) = ln(7/3) = 0.8472979 (UM10204 Rev. 6 §7.1 prints it rounded as 0.8473).
RISE_CONSTANT = math.log(7.0 / 3.0)

#: The pick in :func:`pullup_window` keeps its rise time this far below the limit.
PICK_RISE_HEADROOM = 0.20


def _positive(name: str, value: float) -> None:
    if not value > 0 or not math.isfinite(value):
        raise ValueError(f"{name} must be a finite positive number, not {value!r}")


def rp_max(rise_time_max_s: float, cb_f: float) -> float:
    """Largest pull-up that still meets the rise-time limit: t_r / (0.8473 · Cb).

    References: UM10204 Rev. 6 §7.1 Equation (1) (Rev. 7 §7.1), with t_r from Rev. 6
    Table 10 (Rev. 7 Table 11).
    """
    _positive("rise_time_max_s", rise_time_max_s)
    _positive("cb_f", cb_f)
    return rise_time_max_s / (RISE_CONSTANT * cb_f)


def rp_min(vdd: float, vol_max: float, iol: float) -> float:
    """Smallest pull-up the weakest driver can still pull down: (VDD − V_OL(max)) / I_OL.

    References: UM10204 Rev. 6 §7.1 Equation (2); I_OL 3 mA (Standard-mode, Fast-mode)
    or 20 mA (Fast-mode Plus) at V_OL 0.4 V, Rev. 6 Table 9 (Rev. 7 Table 10).
    """
    _positive("iol", iol)
    if not vdd > vol_max:
        raise ValueError(f"supply {vdd!r} V is not above the LOW output level {vol_max!r} V")
    return (vdd - vol_max) / iol


def rise_time(rp: float, cb: float) -> float:
    """30 % → 70 % rise time of a line pulled up by ``rp`` to its own rail: 0.8473 · Rp · Cb.

    References: UM10204 Rev. 6 §7.1 (t1 = 0.3566749 RC, t2 = 1.2039729 RC).
    """
    return RISE_CONSTANT * rp * cb


def max_capacitance(rp: float, rise_time_max_s: float) -> float:
    """Largest bus capacitance ``rp`` can charge within the rise-time limit.

    Equation (1) solved for Cb. References: UM10204 Rev. 6 §7.1 Eq. (1); §7.2.4 uses it
    to say 1.7 kΩ limits a Fast-mode line to "about 200 pF".
    """
    _positive("rp", rp)
    return rise_time_max_s / (RISE_CONSTANT * rp)


def parallel(ohms_list: Iterable[float]) -> float:
    """Equivalent resistance of resistors in parallel (0 if any is 0)."""
    values = list(ohms_list)
    if not values:
        raise ValueError("parallel() needs at least one resistance")
    if any(r < 0 for r in values):
        raise ValueError("resistances must not be negative")
    if any(r == 0 for r in values):
        return 0.0
    return 1.0 / sum(1.0 / r for r in values)


def thevenin(sources: Sequence[tuple[float, float]]) -> tuple[float, float]:
    """Thévenin equivalent ``(r_th, v_th)`` of pull-ups ``(ohms, volts)`` to several rails.

    r_th is the parallel resistance; v_th = Σ(V/R) / Σ(1/R), the voltage the line
    settles at when nothing pulls it low. A 0 Ω source fixes the line at its voltage
    (two 0 Ω sources at different voltages are a short and raise ``ValueError``).
    """
    if not sources:
        raise ValueError("thevenin() needs at least one source")
    shorts = {v for r, v in sources if r == 0}
    if shorts:
        if len(shorts) > 1:
            raise ValueError("two rails joined through 0 Ω")
        return 0.0, shorts.pop()
    r_th = parallel(r for r, _ in sources)
    v_th = sum(v / r for r, v in sources) * r_th
    return r_th, v_th


def edge_time(r_th: float, v_th: float, v_from: float, v_to: float, cb: float) -> float | None:
    """Time an RC edge rising from 0 V toward ``v_th`` takes to go from ``v_from`` to
    ``v_to``: τ · ln((v_th − v_from) / (v_th − v_to)), τ = r_th · cb.

    ``None`` when the line never reaches ``v_to`` (v_th ≤ v_to).
    """
    if not 0 <= v_from <= v_to:
        raise ValueError("need 0 <= v_from <= v_to")
    if v_th <= v_to:
        return None
    return r_th * cb * math.log((v_th - v_from) / (v_th - v_to))


def rise_time_thevenin(r_th: float, v_th: float, vdd_ref: float, cb: float) -> float | None:
    """30 % → 70 % rise time, thresholds taken from ``vdd_ref``, of a line charged toward
    ``v_th`` through ``r_th`` (pull-ups to different rails, see :func:`thevenin`).

    ``None`` when v_th ≤ 0.7 · vdd_ref: the line never reaches a valid HIGH. With
    v_th == vdd_ref this equals :func:`rise_time`.

    References: UM10204 Rev. 6 §7.1 (the RC edge and its 0.3/0.7 VDD thresholds).
    """
    return edge_time(r_th, v_th, 0.3 * vdd_ref, 0.7 * vdd_ref, cb)


def pullup_current(vdd: float, rp: float, v_low: float = 0.0) -> float:
    """Current through a pull-up ``rp`` from ``vdd`` while the line sits at ``v_low``."""
    _positive("rp", rp)
    return (vdd - v_low) / rp


def low_level_with_series(vol: float, iol: float, rs: float) -> float:
    """LOW level other devices see when the driver sits behind series resistor ``rs``:
    V_OL + I · Rs, with I the current flowing through Rs while the line is LOW.

    References: UM10204 Rev. 6 §7.3 and Figure 45 (series protection resistors).
    """
    return vol + iol * rs


def series_low_level_margin(vdd: float, vol: float, iol: float, rs: float,
                            vil_frac: float = 0.3, nl_frac: float = 0.1) -> float:
    """Volts to spare between the LOW level seen through ``rs`` and V_IL(max) − V_nL.

    margin = (vil_frac − nl_frac) · VDD − (V_OL + I · Rs). Negative means the series
    resistor eats into the required LOW noise margin. For ``iol`` pass the current that
    really flows when the line is LOW — the pull-up current (VDD − V_OL)/Rp, which is what
    UM10204 Figure 46 plots Rs(max) against — or the rated sink current for a worst case.
    For modes with fixed levels (SMBus) pass ``vil_frac = V_IL/VDD`` and ``nl_frac = 0``.

    References: UM10204 Rev. 6 §7.3 ("The required noise margin of 0.1VDD for the LOW
    level, limits the maximum value of Rs"); V_nL = 0.1 VDD, Rev. 6 Table 10 (Rev. 7
    Table 11); V_IL = 0.3 VDD, Rev. 6 Table 9.
    """
    return (vil_frac - nl_frac) * vdd - low_level_with_series(vol, iol, rs)


def rp_max_for_leakage(vdd: float, leakage_a: float, vih_frac: float = 0.7,
                       nh_frac: float = 0.2) -> float:
    """Largest pull-up that keeps the HIGH level above V_IH(min) + V_nH when the inputs
    on the line leak ``leakage_a`` in total: (1 − vih_frac − nh_frac) · VDD / I.

    Derived from the text of UM10204 Rev. 6 §7.4 (input current at most 10 µA per
    connection; 0.2 VDD HIGH noise margin limits Rp(max)); Figure 47 plots the same limit.
    """
    _positive("leakage_a", leakage_a)
    return (1.0 - vih_frac - nh_frac) * vdd / leakage_a


def max_frequency(t_low_min_s: float, t_high_min_s: float, rise_s: float,
                  fall_s: float) -> float:
    """Highest clock rate the limiting device allows with the actual edges:
    1 / (t_LOW(min) + t_HIGH(min) + t_r(actual) + t_f(actual)).

    References: UM10204 Rev. 6 §7.2.1 Equation (3).
    """
    period = t_low_min_s + t_high_min_s + rise_s + fall_s
    _positive("clock period", period)
    return 1.0 / period


def margin_percent(actual: float, limit: float) -> float:
    """Headroom below an upper limit, in percent of the limit: (limit − actual) / limit · 100.

    Positive: below the limit by that much; negative: over it (−20 means 20 % over).
    """
    if limit == 0 or not math.isfinite(limit):
        raise ValueError("limit must be finite and non-zero")
    return (limit - actual) / limit * 100.0


@dataclass(frozen=True)
class PullupWindow:
    """The range of pull-up values that satisfies one mode on one line, and E-series picks.

    ``suggestions`` lists every E24 value inside [rp_min, rp_max] (E12 values are a
    subset of E24); ``suggestions_e12`` the E12 ones. ``pick`` follows the rule in
    :func:`pullup_window`; it is ``None`` when no value fits.
    """

    mode: str
    vdd: float
    cb_f: float
    rise_time_max_s: float
    vol_max_v: float
    iol_a: float
    rp_min: float
    rp_max: float
    feasible: bool
    suggestions: tuple[float, ...]
    suggestions_e12: tuple[float, ...]
    pick: float | None
    pick_rise_time_s: float | None


def pullup_window(vdd: float, cb_f: float, mode: Mode, iol_a: float | None = None,
                  vol_max: float | None = None) -> PullupWindow:
    """Rp(min) … Rp(max) for a line of capacitance ``cb_f`` pulled up to ``vdd``.

    ``iol_a`` / ``vol_max`` override the mode's sink rating (for example the weakest
    device actually on the line). Without them the mode's rating applies, including
    V_OL = 0.2 · VDD at 2 mA when VDD ≤ 2 V (UM10204 Rev. 6 Table 9, see
    :meth:`Mode.sink`).

    The pick: the largest E12 value inside the window whose rise time stays at least
    20 % below the limit (resistor tolerance and capacitance estimates are rough);
    failing that, the largest E24 value inside the window; failing that, none. Picking
    toward the top of the window follows UM10204 §7.1: "Portable designs with
    sensitivity to supply current consumption can use a value toward the higher end of
    the range in order to limit IDD."

    References: UM10204 Rev. 6 §7.1 Equations (1) and (2); IEC 60063 (E12, E24).
    """
    sink_vol, sink_iol = mode.sink(vdd)
    vol = sink_vol if vol_max is None else vol_max
    iol = sink_iol if iol_a is None else iol_a
    low = rp_min(vdd, vol, iol)
    high = rp_max(mode.rise_time_max_s, cb_f)
    feasible = low <= high
    # A capacitance too small to matter (or a sink current too small) leaves the window
    # open-ended: no series values can be listed in it, and none is picked.
    listable = feasible and math.isfinite(low) and math.isfinite(high)
    e24 = tuple(series_values("E24", low, high)) if listable else ()
    e12 = tuple(series_values("E12", low, high)) if listable else ()
    comfortable = [r for r in e12 if rise_time(r, cb_f)
                   <= (1.0 - PICK_RISE_HEADROOM) * mode.rise_time_max_s]
    if comfortable:
        pick: float | None = comfortable[-1]
    elif e24:
        pick = e24[-1]
    else:
        pick = None
    return PullupWindow(
        mode=mode.name, vdd=vdd, cb_f=cb_f, rise_time_max_s=mode.rise_time_max_s,
        vol_max_v=vol, iol_a=iol, rp_min=low, rp_max=high, feasible=feasible,
        suggestions=e24, suggestions_e12=e12, pick=pick,
        pick_rise_time_s=None if pick is None else rise_time(pick, cb_f))
