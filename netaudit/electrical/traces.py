"""Capacitance of routed copper: surface microstrip, stripline and vias.

Pure arithmetic on SI floats (metres, farads). The closed forms are the IPC ones most
design guides quote; each function says where its formula and its validity range come from.
Outside a formula's range the value is still computed and flagged ``approximate`` with the
limits it broke; where the formula has no value at all (its logarithm would not be positive,
a very wide trace over a thin dielectric) the parallel-plate value is used instead and said so.

References:
    IPC-2141 / IPC-D-317A surface microstrip, as quoted in Analog Devices MT-094
        "Microstrip and Stripline Design": Z0 = 87/sqrt(er + 1.41) * ln(5.98 H / (0.8 W + T)),
        C0 = 0.67 (er + 1.41) / ln(5.98 H / (0.8 W + T)) pF/inch; valid for 0.1 < W/H < 2.0
        and 1 < er < 15 (the range is from memory).
    IPC-2141 stripline: Z0 = 60/sqrt(er) * ln(1.9 B / (0.8 W + T)), B the plane-to-plane
        spacing; validity W/(B - T) < 0.35, T/B < 0.25, 1 < er < 15 from IPC-2251 (4th working
        draft, February 2001), as the Clemson CVEL and LearnEMC calculator notes quote it.
    H. Johnson, M. Graham, "High-Speed Digital Design: A Handbook of Black Magic", Prentice
        Hall 1993 (vias): C = 1.41 er T D1 / (D2 - D1) pF with T, D1, D2 in inches.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from ..model import Board, Stackup, StackupLayer

INCH_M = 0.0254
PF = 1e-12
C0_M_PER_S = 299_792_458.0          # speed of light in vacuum (SI definition)
EPSILON_0 = 8.8541878128e-12        # F/m, CODATA 2018
FR4_EPSILON_R = 4.5                 # FR-4 default (common practice, no source; REFERENCES §4.5)
DEFAULT_PLANE_CLEARANCE_M = 0.2e-3  # gap round a via in a plane when the board says none
                                    # (common practice, no source)


@dataclass(frozen=True)
class TraceCapacitance:
    """Capacitance per metre of one trace geometry, and whether the formula was in range."""

    farads_per_m: float
    z0_ohms: float | None            # None where the parallel-plate fallback was used
    approximate: bool = False
    limits: tuple[str, ...] = ()     # the validity limits the geometry broke, in words


def _range_note(name: str, value: float, low: float | None, high: float | None) -> str | None:
    if (low is not None and value <= low) or (high is not None and value >= high):
        bounds = (f"{low:g} < {name} < {high:g}" if low is not None and high is not None
                  else f"{name} < {high:g}" if high is not None else f"{name} > {low:g}")
        return f"{name} = {value:.3g} outside {bounds}"
    return None


def microstrip(width_m: float, height_m: float, copper_m: float, epsilon_r: float) -> TraceCapacitance:
    """Surface microstrip over one plane: C0 = 0.67 (er + 1.41) / ln(5.98 H / (0.8 W + T)) pF/in.

    IPC-2141 / IPC-D-317A form quoted in Analog Devices MT-094; validity 0.1 < W/H < 2.0 and
    1 < er < 15 (from memory). ``height_m`` H is the dielectric between the trace and its
    plane, ``copper_m`` T the trace thickness. Solder mask over the trace is not modelled.
    """
    _positive(width=width_m, height=height_m, epsilon_r=epsilon_r)
    limits = [n for n in (_range_note("W/H", width_m / height_m, 0.1, 2.0),
                          _range_note("er", epsilon_r, 1.0, 15.0)) if n]
    arg = 5.98 * height_m / (0.8 * width_m + copper_m)
    if arg <= 1.0:
        return _parallel_plate(width_m, height_m, epsilon_r, 1, limits + [
            "W/H beyond the formula's limit 7.475 - 1.25 T/H: parallel-plate value, fringing ignored"])
    log = math.log(arg)
    c_pf_per_in = 0.67 * (epsilon_r + 1.41) / log
    return TraceCapacitance(c_pf_per_in * PF / INCH_M, 87.0 / math.sqrt(epsilon_r + 1.41) * log,
                            bool(limits), tuple(limits))


def stripline(width_m: float, spacing_m: float, copper_m: float, epsilon_r: float) -> TraceCapacitance:
    """Centred stripline between two planes ``spacing_m`` (B) apart.

    IPC-2141: Z0 = 60/sqrt(er) ln(1.9 B / (0.8 W + T)). The capacitance follows from Z0 and
    the propagation velocity of a TEM line in the dielectric, v = c/sqrt(er), as
    C = 1/(v Z0) = sqrt(er)/(c Z0); in pF/inch that is 1.41 er / ln(1.9 B/(0.8 W + T)).
    Validity W/(B - T) < 0.35, T/B < 0.25, 1 < er < 15 (IPC-2251 draft, via CVEL/LearnEMC).
    """
    _positive(width=width_m, spacing=spacing_m, epsilon_r=epsilon_r)
    limits = [n for n in (_range_note("W/(B-T)", width_m / (spacing_m - copper_m), None, 0.35)
                          if spacing_m > copper_m else "T >= B",
                          _range_note("T/B", copper_m / spacing_m, None, 0.25),
                          _range_note("er", epsilon_r, 1.0, 15.0)) if n]
    arg = 1.9 * spacing_m / (0.8 * width_m + copper_m)
    if arg <= 1.0 or spacing_m <= copper_m:
        gap = max(spacing_m - copper_m, spacing_m * 0.5) / 2.0
        return _parallel_plate(width_m, gap, epsilon_r, 2, limits + [
            "trace too wide for the formula: parallel-plate value to both planes, fringing ignored"])
    z0 = 60.0 / math.sqrt(epsilon_r) * math.log(arg)
    return TraceCapacitance(math.sqrt(epsilon_r) / (C0_M_PER_S * z0), z0, bool(limits), tuple(limits))


def via_capacitance(epsilon_r: float, length_m: float, pad_m: float, antipad_m: float) -> float:
    """Johnson & Graham (1993): C = 1.41 er T D1 / (D2 - D1) pF, dimensions in inches.

    ``length_m`` T is the via's length through the board, ``pad_m`` D1 the pad diameter and
    ``antipad_m`` D2 the clearance hole in the planes it passes. Only the ratio of the
    diameters matters, so T alone carries the inch conversion.
    """
    _positive(epsilon_r=epsilon_r, length=length_m, pad=pad_m)
    if antipad_m <= pad_m:
        raise ValueError(f"antipad diameter {antipad_m} must exceed the pad diameter {pad_m}")
    return 1.41 * epsilon_r * (length_m / INCH_M) * pad_m / (antipad_m - pad_m) * PF


def _parallel_plate(width_m: float, gap_m: float, epsilon_r: float, plates: int,
                    limits: list[str]) -> TraceCapacitance:
    return TraceCapacitance(plates * EPSILON_0 * epsilon_r * width_m / gap_m, None, True, tuple(limits))


def _positive(**values: float) -> None:
    for name, v in values.items():
        if not v > 0 or math.isinf(v):
            raise ValueError(f"{name} must be a positive number, not {v!r}")


# -- from a board's stackup to the formulas ------------------------------------------------

@dataclass(frozen=True)
class LayerModel:
    """How a copper layer's traces are modelled: microstrip over H, or stripline in B."""

    kind: str                      # "microstrip" | "stripline"
    height_m: float                # microstrip H, or stripline B (plane to plane)
    copper_m: float
    epsilon_r: float
    note: str = ""                 # an assumption worth saying, else ""


def series_epsilon(layers: list[StackupLayer] | tuple[StackupLayer, ...]) -> float:
    """Dielectrics stacked between two conductors act as capacitors in series:
    er = sum(h) / sum(h / er) (parallel-plate reasoning; common practice, no source)."""
    total = sum(d.thickness_m for d in layers)
    if total <= 0:
        return FR4_EPSILON_R
    return total / sum(d.thickness_m / (d.epsilon_r or FR4_EPSILON_R) for d in layers)


def layer_model(stackup: Stackup, layer: str) -> LayerModel | None:
    """The model of copper ``layer``: an outer layer is microstrip over the dielectric
    down to the next copper layer (taken as its plane); an inner layer is stripline between
    the copper layers either side of it. None when the stackup has no such copper layer."""
    layers = stackup.layers
    index = next((i for i, item in enumerate(layers) if item.kind == "copper" and item.name == layer), None)
    if index is None:
        return None
    copper = layers[index]
    above = _dielectrics(layers[:index][::-1])
    below = _dielectrics(layers[index + 1:])
    has_above = any(item.kind == "copper" for item in layers[:index])
    has_below = any(item.kind == "copper" for item in layers[index + 1:])
    if has_above and has_below:
        both = above + below
        spacing = sum(d.thickness_m for d in both) + copper.thickness_m
        note = "" if _near(sum(d.thickness_m for d in above), sum(d.thickness_m for d in below)) else \
            "off-centre stripline taken as centred"
        return LayerModel("stripline", spacing, copper.thickness_m, series_epsilon(both), note)
    if has_below or has_above:
        side, note = (below if has_below else above), ""
    else:
        side, note = (below or above), "single copper layer: no plane, microstrip over the whole board"
    height = sum(d.thickness_m for d in side)
    if height <= 0:
        return None
    return LayerModel("microstrip", height, copper.thickness_m, series_epsilon(side), note)


def _dielectrics(layers) -> list[StackupLayer]:
    out = []
    for item in layers:
        if item.kind == "copper":
            break
        if item.kind == "dielectric":
            out.append(item)
    return out


def _near(a: float, b: float) -> bool:
    return abs(a - b) <= 0.05 * max(a, b)


def via_length_m(stackup: Stackup, layers: tuple[str, str]) -> float | None:
    """Copper-to-copper length of a via joining ``layers`` (both copper layers included)."""
    names = [item.name for item in stackup.layers]
    try:
        a, b = sorted((names.index(layers[0]), names.index(layers[1])))
    except ValueError:
        return None
    return sum(item.thickness_m for item in stackup.layers[a:b + 1])


def via_epsilon(stackup: Stackup, layers: tuple[str, str]) -> float:
    names = [item.name for item in stackup.layers]
    try:
        a, b = sorted((names.index(layers[0]), names.index(layers[1])))
    except ValueError:
        return FR4_EPSILON_R
    return series_epsilon([d for d in stackup.layers[a:b + 1] if d.kind == "dielectric"])


@dataclass(frozen=True)
class RoutedCapacitance:
    """The routed capacitance of a set of nets on a board."""

    tracks_farads: float
    vias_farads: float
    length_m: float
    via_count: int
    approximate: tuple[str, ...] = ()   # layer/width geometries outside the formulas' ranges
    notes: tuple[str, ...] = ()


def routed_capacitance(board: Board, nets) -> RoutedCapacitance:
    """Sum over ``nets`` of track length x capacitance per length of its layer and width,
    plus each via's Johnson & Graham capacitance (antipad = pad + 2 x the board's plane
    clearance)."""
    tracks_f = vias_f = length = 0.0
    count = 0
    approx: dict[str, None] = {}
    notes: dict[str, None] = {}
    clearance = board.plane_clearance_m or DEFAULT_PLANE_CLEARANCE_M
    for net in nets:
        for run in board.runs_of(net):
            length += run.length_m
            model = layer_model(board.stackup, run.layer)
            if model is None:
                notes[f"layer {run.layer} is not in the stackup: its tracks left out"] = None
                continue
            if model.note:
                notes[f"{run.layer}: {model.note}"] = None
            calc = (microstrip if model.kind == "microstrip" else stripline)(
                run.width_m, model.height_m, model.copper_m, model.epsilon_r)
            if calc.approximate:
                approx[f"{run.layer} {run.width_m * 1e3:g} mm {model.kind}: "
                       + "; ".join(calc.limits)] = None
            tracks_f += calc.farads_per_m * run.length_m
        for via in board.vias_of(net):
            count += via.count
            span = via_length_m(board.stackup, via.layers)
            if span is None or via.diameter_m <= 0:
                notes[f"via on {'-'.join(via.layers)} outside the stackup: left out"] = None
                continue
            each = via_capacitance(via_epsilon(board.stackup, via.layers), span, via.diameter_m,
                                   via.diameter_m + 2 * clearance)
            vias_f += each * via.count
    return RoutedCapacitance(tracks_f, vias_f, length, count, tuple(approx), tuple(notes))
