"""Bus modes and their electrical limits, each value with its published source.

Sources, and how table numbers differ between revisions of the I2C-bus specification:

* **UM10204** — NXP "I2C-bus specification and user manual". Rev. 6 (4 April 2014)
  Table 9 (SDA/SCL I/O stages) and Table 10 (SDA/SCL bus lines) carry the same numbers as
  Rev. 7.0 (1 October 2021) Table 10 and Table 11. Citations below give both.
* **AN4471** — NXP/Freescale "SMBus Quick Start Guide", Rev. 1, 08/2012, Table 1 (AC) and
  Table 2 (DC), which reproduce System Management Bus Specification 2.0 Tables 1 and 2.
* **SMBus 3.x levels** — V_IL 0.8 V / V_IH 1.35 V as listed "with SMBus 3.0 levels" in a
  Microchip MCU datasheet, Table 39-7 "I/O Pin Characteristics" (the SMBus 3.x tables
  themselves were not available to us).

Values marked *unconfirmed* below could not be checked against the standard and are
chosen to err on the side of flagging a doubtful design rather than passing it.
"""

from __future__ import annotations

from dataclasses import dataclass

# Supply voltage at or below which UM10204 switches to the low-voltage output level
# (Rev. 6 Table 9 / Rev. 7 Table 10, V_OL2: "at 2 mA sink current; VDD <= 2 V").
LOW_VDD_LIMIT_V = 2.0
LOW_VDD_VOL_FRACTION = 0.2          # V_OL2 max = 0.2 * VDD
LOW_VDD_IOL_A = 2e-3                # ... at 2 mA sink current


@dataclass(frozen=True)
class Mode:
    """One bus mode: clock rate, edge limits, capacitance limit and logic levels.

    Logic levels are either fractions of the supply (I2C: ``vil_fraction``,
    ``vih_fraction``) or fixed volts (SMBus: ``vil_fixed_v``, ``vih_fixed_v``); use
    :meth:`vil_max_v` and :meth:`vih_min_v` rather than the fields. ``iol_a`` is the sink
    current at ``vol_max_v`` that the pull-up is sized for (UM10204 §7.1 Eq. (2)); use
    :meth:`sink` to get the pair for a given supply, which applies the low-voltage row of
    UM10204 Table 9 (Rev. 6) below 2 V.
    """

    name: str
    label: str
    family: str                          # "i2c" or "smbus"
    rank: int                            # speed order: 1 = 100 kHz, 2 = 400 kHz, 3 = 1 MHz
    f_scl_hz: float                      # maximum clock frequency
    f_scl_min_hz: float                  # minimum clock frequency (SMBus has one)
    rise_time_max_s: float               # t_r max, 30 % -> 70 % (I2C)
    fall_time_max_s: float               # t_f max
    t_low_min_s: float                   # minimum clock LOW period
    t_high_min_s: float                  # minimum clock HIGH period
    cb_max_f: float | None               # capacitive load per bus line; None: not given
    vol_max_v: float                     # V_OL max at iol_a (supply above 2 V)
    iol_a: float                         # sink current the pull-up is sized for
    vil_fraction: float | None = None    # V_IL max as a fraction of VDD (I2C)
    vih_fraction: float | None = None    # V_IH min as a fraction of VDD (I2C)
    vil_fixed_v: float | None = None     # V_IL max in volts (SMBus)
    vih_fixed_v: float | None = None     # V_IH min in volts (SMBus)
    noise_margin_low_fraction: float | None = None   # V_nL as a fraction of VDD
    noise_margin_high_fraction: float | None = None  # V_nH as a fraction of VDD
    low_vdd_rule: bool = False           # apply V_OL2 = 0.2 VDD at 2 mA when VDD <= 2 V
    edge_offset_v: float = 0.0           # edges timed from V_IL - offset to V_IH + offset
    notes: str = ""

    def vil_max_v(self, vdd: float) -> float:
        """Highest input voltage read as LOW, in volts, for a device supplied at ``vdd``."""
        if self.vil_fixed_v is not None:
            return self.vil_fixed_v
        return self.vil_fraction * vdd

    def vih_min_v(self, vdd: float) -> float:
        """Lowest input voltage read as HIGH, in volts, for a device supplied at ``vdd``."""
        if self.vih_fixed_v is not None:
            return self.vih_fixed_v
        return self.vih_fraction * vdd

    def noise_margin_low_v(self, vdd: float) -> float:
        """LOW-level noise margin in volts (0 where the mode's standard states none)."""
        return (self.noise_margin_low_fraction or 0.0) * vdd

    def noise_margin_high_v(self, vdd: float) -> float:
        """HIGH-level noise margin in volts (0 where the mode's standard states none)."""
        return (self.noise_margin_high_fraction or 0.0) * vdd

    def edge_thresholds_v(self, vdd: float) -> tuple[float, float]:
        """The two levels between which this mode times a rising edge, in volts.

        I2C: V_IL(max) and V_IH(min), i.e. 30 % and 70 % of VDD (UM10204 Rev. 6 Table 10
        note [1], corrected wording in Rev. 7 Table 11 note [1]; Figure 38). SMBus:
        V_IL(max) − 0.15 V to V_IH(min) + 0.15 V, as SMBus-compliant datasheets define
        t_R (TI BQ78350, BQ41Z50); the SMBus specification's own wording was not seen.
        """
        return (self.vil_max_v(vdd) - self.edge_offset_v,
                self.vih_min_v(vdd) + self.edge_offset_v)

    def sink(self, vdd: float) -> tuple[float, float]:
        """``(vol_max_v, iol_a)`` for sizing Rp(min) at supply ``vdd``.

        Above 2 V: ``(vol_max_v, iol_a)``. At or below 2 V, for I2C modes:
        ``(0.2 * vdd, 2 mA)`` — UM10204 Rev. 6 Table 9 / Rev. 7 Table 10 row V_OL2. The
        table fills that row for Fast-mode and Fast-mode Plus and leaves Standard-mode
        blank; netaudit applies it to Standard-mode too, as Table 9 note [3] explains the
        row as the same RC time constant at a smaller current.
        """
        if self.low_vdd_rule and vdd <= LOW_VDD_LIMIT_V:
            return LOW_VDD_VOL_FRACTION * vdd, LOW_VDD_IOL_A
        return self.vol_max_v, self.iol_a


_I2C_LEVELS = dict(
    # V_IL max 0.3 VDD, V_IH min 0.7 VDD: UM10204 Rev. 6 §3.1.2 and Table 9 (Rev. 7 Table 10).
    vil_fraction=0.3, vih_fraction=0.7,
    # V_nL 0.1 VDD, V_nH 0.2 VDD: UM10204 Rev. 6 Table 10 (Rev. 7 Table 11).
    noise_margin_low_fraction=0.1, noise_margin_high_fraction=0.2,
    # V_OL1 0.4 V at 3 mA (VDD > 2 V); V_OL2 0.2 VDD at 2 mA (VDD <= 2 V): Rev. 6 Table 9.
    vol_max_v=0.4, low_vdd_rule=True,
)

STANDARD = Mode(
    name="standard", label="Standard-mode", family="i2c", rank=1,
    # UM10204 Rev. 6 Table 10 (Rev. 7 Table 11), Standard-mode column.
    f_scl_hz=100e3, f_scl_min_hz=0.0,
    rise_time_max_s=1000e-9, fall_time_max_s=300e-9,
    t_low_min_s=4.7e-6, t_high_min_s=4.0e-6,
    cb_max_f=400e-12,
    # I_OL 3 mA at V_OL 0.4 V: Rev. 6 Table 9 (Rev. 7 Table 10); §7.1.
    iol_a=3e-3,
    **_I2C_LEVELS,
)

FAST = Mode(
    name="fast", label="Fast-mode", family="i2c", rank=2,
    # UM10204 Rev. 6 Table 10 (Rev. 7 Table 11), Fast-mode column.
    f_scl_hz=400e3, f_scl_min_hz=0.0,
    rise_time_max_s=300e-9, fall_time_max_s=300e-9,
    t_low_min_s=1.3e-6, t_high_min_s=0.6e-6,
    cb_max_f=400e-12,
    # I_OL 3 mA at V_OL 0.4 V: Rev. 6 Table 9; note [4] adds 6 mA at 0.6 V for the full
    # 400 pF load at 400 kHz, which the pull-up sizing of §7.1 does not use.
    iol_a=3e-3,
    **_I2C_LEVELS,
)

FAST_PLUS = Mode(
    name="fast-plus", label="Fast-mode Plus", family="i2c", rank=3,
    # UM10204 Rev. 6 Table 10 (Rev. 7 Table 11), Fast-mode Plus column.
    f_scl_hz=1000e3, f_scl_min_hz=0.0,
    rise_time_max_s=120e-9, fall_time_max_s=120e-9,
    t_low_min_s=0.5e-6, t_high_min_s=0.26e-6,
    cb_max_f=550e-12,
    # I_OL 20 mA at V_OL 0.4 V: Rev. 6 Table 9; §7.1 "20 mA for Fast-mode Plus".
    iol_a=20e-3,
    **_I2C_LEVELS,
)

_SMBUS_SINK_NOTE = (
    "Pull-up sized for 3 mA at 0.4 V: UM10204 §4.2.3 lists SMBus low power 350 uA, SMBus "
    "high power 4 mA, I2C 3 mA, and says high-power SMBus and I2C devices work together "
    "if the pull-up is sized for 3 mA. Low-power SMBus devices (100-350 uA, AN4471 "
    "Table 2) need a weaker pull-up than this mode assumes."
)

SMBUS = Mode(
    name="smbus", label="SMBus 100 kHz", family="smbus", rank=1,
    # f_SMB 10-100 kHz, t_R 1000 ns, t_F 300 ns, t_LOW 4.7 us, t_HIGH 4.0 us:
    # AN4471 Table 1 (SMBus 2.0 Table 1); the 10 kHz floor also in UM10204 §4.2.1.
    f_scl_hz=100e3, f_scl_min_hz=10e3,
    rise_time_max_s=1000e-9, fall_time_max_s=300e-9,
    t_low_min_s=4.7e-6, t_high_min_s=4.0e-6,
    # No bus capacitance limit confirmed in SMBus 2.0 itself (datasheets claiming SMBus
    # 2.0 compliance recommend 400 pF per segment, e.g. TI DS16EV5110 note 4).
    cb_max_f=None,
    # V_OL 0.4 V: AN4471 Table 2.
    vol_max_v=0.4, iol_a=3e-3,
    # V_IL 0.8 V, V_IH 2.1 V: AN4471 Table 2; UM10204 §4.2.1.
    vil_fixed_v=0.8, vih_fixed_v=2.1, edge_offset_v=0.15,
    notes=_SMBUS_SINK_NOTE + " No noise margin is stated in the SMBus tables seen; "
          "levels are checked against V_IL/V_IH themselves.",
)

SMBUS_400K = Mode(
    name="smbus-400k", label="SMBus 400 kHz", family="smbus", rank=2,
    # 400 kHz class added by SMBus 3.0 (EDN Europe, 2 Feb 2015). t_R 300 ns, t_F 300 ns,
    # t_LOW 1.3 us, t_HIGH 0.6 us as listed by datasheets for the 400 kHz class (TI
    # LMKDB1104); the SMBus 3.x table itself was not seen.
    f_scl_hz=400e3, f_scl_min_hz=10e3,
    rise_time_max_s=300e-9, fall_time_max_s=300e-9,
    t_low_min_s=1.3e-6, t_high_min_s=0.6e-6,
    cb_max_f=None,
    vol_max_v=0.4, iol_a=3e-3,
    # V_IL 0.8 V, V_IH 1.35 V: SMBus 3.0 levels per Microchip datasheet Table 39-7.
    vil_fixed_v=0.8, vih_fixed_v=1.35, edge_offset_v=0.15,
    notes=_SMBUS_SINK_NOTE + " The SMBus 3.x high-power sink current for this class is "
          "unconfirmed.",
)

SMBUS_1M = Mode(
    name="smbus-1m", label="SMBus 1 MHz", family="smbus", rank=3,
    # 1 MHz class added by SMBus 3.0 (EDN Europe, 2 Feb 2015). Unconfirmed: t_R/t_F
    # 120 ns and t_LOW 0.5 us / t_HIGH 0.26 us are taken from memory as equal to
    # Fast-mode Plus (UM10204 Rev. 6 Table 10); the SMBus 3.x table was not seen.
    f_scl_hz=1000e3, f_scl_min_hz=10e3,
    rise_time_max_s=120e-9, fall_time_max_s=120e-9,
    t_low_min_s=0.5e-6, t_high_min_s=0.26e-6,
    cb_max_f=None,
    # Unconfirmed: the 1 MHz high-power class is believed to sink up to 20 mA (by analogy
    # with Fast-mode Plus), but no copy of the SMBus 3.x tables confirmed it. netaudit
    # keeps the confirmed 3 mA sizing current: it can only make the pull-up-too-strong
    # check stricter, never let a pull-up pass that a weaker device cannot pull low.
    vol_max_v=0.4, iol_a=3e-3,
    vil_fixed_v=0.8, vih_fixed_v=1.35, edge_offset_v=0.15,
    notes=_SMBUS_SINK_NOTE + " Timing and sink current of the 1 MHz class unconfirmed "
          "(assumed equal to Fast-mode Plus timing, 3 mA sizing current).",
)

#: All modes by their CONTRACT names.
MODES: dict[str, Mode] = {m.name: m for m in (STANDARD, FAST, FAST_PLUS, SMBUS,
                                               SMBUS_400K, SMBUS_1M)}

DEFAULT_MODE = "fast"


def get_mode(name: str) -> Mode:
    """The mode called ``name``; ``ValueError`` naming the valid modes otherwise."""
    try:
        return MODES[name]
    except (KeyError, TypeError):
        raise ValueError(
            f"unknown bus mode {name!r}; valid modes: {', '.join(MODES)}") from None
