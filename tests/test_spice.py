"""Rise times checked against an independent circuit simulation (ngspice, batch mode).

The deck is a bus line released from 0 V at t = 0 (capacitor initial condition, UIC) and
pulled up through one or two resistors to one or two rails. ``.meas tran`` finds when the
line crosses 0.3·VREF and 0.7·VREF, VREF being the supply of the devices that read the
line (the I2C input thresholds, UM10204 Rev. 6 Table 9). netaudit's closed-form answer
must agree with the simulated 30 % → 70 % time within 2 %.
"""

from __future__ import annotations

import re
import shutil
import subprocess
from pathlib import Path

import pytest

from netaudit.electrical.budget import rise_time, rise_time_thevenin, thevenin

NGSPICE = shutil.which("ngspice")
pytestmark = pytest.mark.skipif(
    NGSPICE is None, reason="ngspice is not installed (Debian package 'ngspice')")

_MEAS = re.compile(r"^\s*(t30|t70)\s*=\s*([-+0-9.eE]+)", re.MULTILINE)


def _simulate(tmp_path: Path, rails: list[tuple[float, float]], cb_f: float,
              vref: float, stop_s: float) -> dict[str, float]:
    """Run the deck; return the measured crossing times that ngspice reported."""
    lines = ["pull-up rise time check"]
    for i, (ohms, volts) in enumerate(rails, start=1):
        lines.append(f"V{i} rail{i} 0 DC {volts}")
        lines.append(f"R{i} rail{i} line {ohms}")
    lines += [
        f"C1 line 0 {cb_f} IC=0",
        f".tran {stop_s / 10000} {stop_s} UIC",
        f".meas tran t30 when v(line)={0.3 * vref} rise=1",
        f".meas tran t70 when v(line)={0.7 * vref} rise=1",
        ".end",
    ]
    deck = tmp_path / "line.cir"
    deck.write_text("\n".join(lines) + "\n", encoding="ascii")
    run = subprocess.run([NGSPICE, "-b", str(deck)], capture_output=True, text=True,
                         timeout=60, cwd=tmp_path)
    assert run.returncode == 0, run.stderr
    return {name: float(value) for name, value in _MEAS.findall(run.stdout)}


def test_two_rail_rise_time_matches_ngspice(tmp_path):
    # 4.7 kΩ to 3.3 V and 10 kΩ to 5 V into 200 pF, read by 3.3 V devices (VREF = 3.3 V);
    # the circuit of /work/shared/TOOLING.md (Rth 3197 Ω, Vth 3.843 V, tau 639 ns).
    rails = [(4700.0, 3.3), (10e3, 5.0)]
    measured = _simulate(tmp_path, rails, 200e-12, vref=3.3, stop_s=5e-6)
    simulated = measured["t70"] - measured["t30"]
    r_th, v_th = thevenin(rails)
    assert rise_time_thevenin(r_th, v_th, 3.3, 200e-12) == pytest.approx(simulated, rel=0.02)


def test_two_rail_rise_time_seen_by_5v_devices_matches_ngspice(tmp_path):
    # Same line read by 5 V devices (VREF = 5 V): 0.7 x 5 V = 3.5 V is still below Vth.
    rails = [(4700.0, 3.3), (10e3, 5.0)]
    measured = _simulate(tmp_path, rails, 200e-12, vref=5.0, stop_s=10e-6)
    simulated = measured["t70"] - measured["t30"]
    r_th, v_th = thevenin(rails)
    assert rise_time_thevenin(r_th, v_th, 5.0, 200e-12) == pytest.approx(simulated, rel=0.02)


def test_single_rail_rise_time_matches_ngspice(tmp_path):
    # 2.2 kΩ to 3.3 V into 150 pF (hand-made case): the 0.8473 RC of UM10204 §7.1
    measured = _simulate(tmp_path, [(2200.0, 3.3)], 150e-12, vref=3.3, stop_s=3e-6)
    simulated = measured["t70"] - measured["t30"]
    assert rise_time(2200.0, 150e-12) == pytest.approx(simulated, rel=0.02)


def test_line_that_never_reaches_high_is_none_in_both(tmp_path):
    # 10 kΩ to 1.8 V and 10 kΩ to 3.3 V settle at 2.55 V, below 0.7 x 5 V = 3.5 V:
    # ngspice finds no 70 % crossing and netaudit answers None.
    rails = [(10e3, 1.8), (10e3, 3.3)]
    measured = _simulate(tmp_path, rails, 100e-12, vref=5.0, stop_s=10e-6)
    assert "t30" in measured and "t70" not in measured
    r_th, v_th = thevenin(rails)
    assert rise_time_thevenin(r_th, v_th, 5.0, 100e-12) is None
