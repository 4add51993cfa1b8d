"""Trace and via capacitance (netaudit/electrical/traces.py) against the published forms."""

from __future__ import annotations

import math

import pytest

from netaudit.electrical import traces
from netaudit.model import Board, Stackup, StackupLayer, TrackRun, Via

MIL = 25.4e-6
INCH = 0.0254
PF = 1e-12


def pf_per_inch(result: traces.TraceCapacitance) -> float:
    return result.farads_per_m * INCH / PF


# ../shared/REFERENCES.md §4.3: COMPUTED from the IPC-2141 microstrip form of §4.1
# (C0 = 0.67 (er + 1.41) / ln(5.98 H / (0.8 W + T)) pF/in, Analog Devices MT-094).
@pytest.mark.parametrize("er, h_mil, w_mil, t_mil, z0, c0", [
    (4.5, 10, 10, 1.4, 66.2, 2.140),
    (4.5, 5, 8, 1.4, 48.1, 2.947),
    (4.0, 10, 20, 1.4, 46.2, 2.936),
])
def test_microstrip_matches_the_computed_table(er, h_mil, w_mil, t_mil, z0, c0):
    r = traces.microstrip(w_mil * MIL, h_mil * MIL, t_mil * MIL, er)
    assert pf_per_inch(r) == pytest.approx(c0, abs=0.0005)
    assert r.z0_ohms == pytest.approx(z0, abs=0.05)


def test_microstrip_first_row_agrees_with_delay_over_impedance():
    # REFERENCES §4.3: tpd = 142.0 ps/in (tpd = 1.017 sqrt(0.475 er + 0.67) ns/ft, MEMORY form
    # of §4.1) over Z0 gives 2.145 pF/in, "consistent within 0.2 %" (COMPUTED there).
    r = traces.microstrip(10 * MIL, 10 * MIL, 1.4 * MIL, 4.5)
    tpd_ps_per_in = 1.017 * math.sqrt(0.475 * 4.5 + 0.67) * 1000 / 12
    assert pf_per_inch(r) == pytest.approx(tpd_ps_per_in / r.z0_ohms, rel=0.003)


def test_via_example_from_johnson_and_graham():
    # 0.53 pF for er 4.7, T 0.063 in, D1 0.028 in, D2 0.050 in: SEEN-FORUM (si-list post
    # quoting Johnson & Graham, "High-Speed Digital Design", 1993), REFERENCES §4.4.
    c = traces.via_capacitance(4.7, 0.063 * INCH, 0.028 * INCH, 0.050 * INCH)
    assert c == pytest.approx(0.53 * PF, abs=0.005 * PF)


def test_via_with_antipad_no_larger_than_pad_is_refused():
    with pytest.raises(ValueError):
        traces.via_capacitance(4.5, 1.6e-3, 0.6e-3, 0.6e-3)


def test_stripline_capacitance_is_delay_over_impedance():
    # IPC-2141 stripline Z0 = 60/sqrt(er) ln(1.9 B / (0.8 W + T)) (REFERENCES §4.2, SEEN-2ND);
    # a TEM line's C = sqrt(er) / (c Z0) (definition of propagation velocity).
    r = traces.stripline(0.15e-3, 1.0e-3, 0.035e-3, 4.5)
    z0 = 60 / math.sqrt(4.5) * math.log(1.9 * 1.0e-3 / (0.8 * 0.15e-3 + 0.035e-3))
    assert r.z0_ohms == pytest.approx(z0, rel=1e-12)
    assert r.farads_per_m == pytest.approx(math.sqrt(4.5) / (299_792_458 * z0), rel=1e-12)


def test_stripline_agrees_with_the_remembered_capacitance_form():
    # REFERENCES §4.2 (MEMORY only): C0 = 1.41 er / ln(3.8 h / (0.8 W + T)) pF/in with h the
    # trace-to-plane distance, i.e. B = 2 h for a centred trace.
    h, w, t = 8 * MIL, 5 * MIL, 1.4 * MIL
    r = traces.stripline(w, 2 * h, t, 4.2)
    assert pf_per_inch(r) == pytest.approx(1.41 * 4.2 / math.log(3.8 * h / (0.8 * w + t)), rel=0.002)


# Validity ranges: microstrip 0.1 < W/H < 2.0 and 1 < er < 15 (IPC-2141, from memory,
# REFERENCES §4.1); stripline W/(B-T) < 0.35, T/B < 0.25 (IPC-2251 draft, REFERENCES §4.2).

def test_microstrip_inside_its_range_is_not_flagged():
    assert not traces.microstrip(0.2e-3, 0.2e-3, 0.035e-3, 4.5).approximate


@pytest.mark.parametrize("w_over_h", [0.05, 2.5])
def test_microstrip_outside_width_range_is_flagged_but_computed(w_over_h):
    r = traces.microstrip(w_over_h * 0.2e-3, 0.2e-3, 0.035e-3, 4.5)
    assert r.approximate and any("W/H" in text for text in r.limits)
    assert r.farads_per_m > 0


def test_microstrip_with_permittivity_above_fifteen_is_flagged():
    r = traces.microstrip(0.2e-3, 0.2e-3, 0.035e-3, 16.0)
    assert r.approximate and any("er" in text for text in r.limits)


def test_microstrip_beyond_the_logarithms_limit_falls_back_to_parallel_plate():
    # W/H = 10 > 7.475 - 1.25 T/H (REFERENCES §4.1 geometric limit): ln argument <= 1.
    w, h = 2.0e-3, 0.2e-3
    r = traces.microstrip(w, h, 0.035e-3, 4.5)
    assert r.z0_ohms is None and r.approximate
    assert r.farads_per_m == pytest.approx(8.8541878128e-12 * 4.5 * w / h)


def test_stripline_inside_its_range_is_not_flagged():
    assert not traces.stripline(0.2e-3, 1.0e-3, 0.035e-3, 4.5).approximate


def test_stripline_too_wide_for_its_spacing_is_flagged():
    r = traces.stripline(0.4e-3, 1.0e-3, 0.035e-3, 4.5)   # W/(B-T) = 0.41
    assert r.approximate and any("W/(B-T)" in text for text in r.limits)


def test_stripline_with_thick_copper_is_flagged():
    r = traces.stripline(0.05e-3, 0.2e-3, 0.06e-3, 4.5)   # T/B = 0.3
    assert r.approximate and any("T/B" in text for text in r.limits)


# -- stackup to formulas (hand-made four-layer stackup, our own numbers) --------------------

def four_layer(er_core: float = 4.5) -> Stackup:
    L = StackupLayer
    return Stackup((
        L("F.Mask", "mask", 0.01e-3, 3.3), L("F.Cu", "copper", 0.035e-3),
        L("dielectric 1", "dielectric", 0.2e-3, 4.2), L("In1.Cu", "copper", 0.035e-3),
        L("dielectric 2", "dielectric", 1.0e-3, er_core), L("In2.Cu", "copper", 0.035e-3),
        L("dielectric 3", "dielectric", 0.2e-3, 4.2), L("B.Cu", "copper", 0.035e-3),
        L("B.Mask", "mask", 0.01e-3, 3.3)))


def test_outer_layer_is_microstrip_over_the_adjacent_dielectric():
    m = traces.layer_model(four_layer(), "B.Cu")
    assert (m.kind, m.height_m, m.epsilon_r) == ("microstrip", pytest.approx(0.2e-3), pytest.approx(4.2))


def test_inner_layer_is_stripline_between_its_neighbours():
    m = traces.layer_model(four_layer(), "In1.Cu")
    assert m.kind == "stripline"
    assert m.height_m == pytest.approx(0.2e-3 + 1.0e-3 + 0.035e-3)
    assert m.epsilon_r == pytest.approx(1.2e-3 / (0.2e-3 / 4.2 + 1.0e-3 / 4.5))   # in series
    assert m.note  # 0.2 mm above, 1.0 mm below: off-centre, said so


def test_through_via_spans_copper_to_copper():
    assert traces.via_length_m(four_layer(), ("F.Cu", "B.Cu")) == pytest.approx(1.54e-3)


def test_routed_capacitance_sums_tracks_and_vias():
    board = Board("b.kicad_pcb", 1.56e-3, four_layer(),
                  runs=(TrackRun("/SDA", "F.Cu", 0.2e-3, 0.05), TrackRun("/SDA", "In1.Cu", 0.15e-3, 0.02),
                        TrackRun("/SCL", "F.Cu", 0.2e-3, 0.5)),
                  vias=(Via("/SDA", ("F.Cu", "B.Cu"), 0.6e-3, 0.3e-3, 2),),
                  plane_clearance_m=0.25e-3)
    r = traces.routed_capacitance(board, ["/SDA"])
    top = traces.microstrip(0.2e-3, 0.2e-3, 0.035e-3, 4.2).farads_per_m * 0.05
    inner = traces.stripline(0.15e-3, 1.235e-3, 0.035e-3, 1.2e-3 / (0.2e-3 / 4.2 + 1.0e-3 / 4.5)).farads_per_m * 0.02
    via = traces.via_capacitance(1.4e-3 / (0.4e-3 / 4.2 + 1.0e-3 / 4.5), 1.54e-3, 0.6e-3, 1.1e-3)
    assert r.tracks_farads == pytest.approx(top + inner)
    assert r.vias_farads == pytest.approx(2 * via)
    assert (r.length_m, r.via_count) == (pytest.approx(0.07), 2)


def test_tracks_on_a_layer_missing_from_the_stackup_are_said_left_out():
    board = Board("b.kicad_pcb", 1.56e-3, four_layer(), runs=(TrackRun("/SDA", "In5.Cu", 0.2e-3, 0.05),))
    r = traces.routed_capacitance(board, ["/SDA"])
    assert r.tracks_farads == 0 and any("In5.Cu" in n for n in r.notes)
