"""The well at one scan point in one channel, with its levels and probability densities.

Result files do not store potentials or wavefunctions, so the well is rebuilt from the case text
kept in the file (global attribute ``case``) at the chosen scan value and solved again by the
core (:func:`anharmony.scan.scan`) in the basis the run used (size ``basis_size``, length
``length``, the stored reference oscillator). For a ``coupling`` scan the well drawn is
V_λ = V_ref + λ (V − V_ref), the levels those of H_ref + λ (H − H_ref); with term orders
V_λ = (1 − λ) V_ref + Σ_k λ^k V_k, the path of the series (:func:`anharmony.scan.scan`).

Level lines are the stored energies, drawn between the classical turning points; each density
(|ψ|² in 1D, the radial density r^{d−1} R² for central wells) sits on its level, all on one
common scale.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

import numpy as np

from ..errors import InputError
from . import _style
from ._common import axis_label, direct_labels, finite_range, new_figure, proxy

if TYPE_CHECKING:  # annotations only
    from ._common import FigureRequest, ResultView

__all__ = ["OPTIONS", "SIZE", "WellPicture", "draw", "rebuild"]

OPTIONS = frozenset({"channel", "scan_index", "levels", "size", "title"})
SIZE = (6.4, 4.8)
GRID_POINTS = 1200  # samples of the coordinate: smooth curves, small files
DENSITY_CUT = 2e-3  # the view ends where every density is below this fraction of its peak
DENSITY_HEIGHT = 0.75  # tallest density peak, as a fraction of the typical level spacing
REBUILD_MISMATCH = 1e-3  # of the level spacing: beyond this the rebuilt levels are not the file's


@dataclass(frozen=True)
class WellPicture:
    """What the ``well`` figure draws, in the case's units.

    Attributes
    ----------
    coords : ndarray
        x (1D) or r ≥ 0 (central wells).
    potential : ndarray
        The well V at the coordinates (spin–orbit and centrifugal terms excluded).
    effective : ndarray or None
        V + centrifugal (+ ⟨l·s⟩ spin–orbit) term where it differs from V.
    densities : ndarray
        (levels, coords): |ψ|² (1D) or r^{d−1} R² (radial), each normalised to 1.
    energies : ndarray
        The recomputed energies of those levels (the figure draws the stored ones).
    """

    coords: np.ndarray
    potential: np.ndarray
    effective: np.ndarray | None
    densities: np.ndarray
    energies: np.ndarray


def _case(view: ResultView) -> Any:
    text = view.attrs.get("case")
    if not text:
        raise InputError("well figure: the result has no 'case' attribute (the case text), "
                         "from which the well is rebuilt")
    from ..cases import CaseError, case_from_dict, parse_yaml

    data, _, problems = parse_yaml(str(text), "<case attribute>")
    if problems or not isinstance(data, dict):
        first = problems[0] if problems else "not a mapping"
        raise InputError(f"well figure: the case text stored in the result is not readable "
                         f"({first})")
    try:
        return case_from_dict(data, name="<case attribute>")
    except CaseError as exc:
        first = str(exc).splitlines()[0] if str(exc) else "invalid"
        raise InputError(f"well figure: the case text stored in the result is not a valid "
                         f"case ({first})") from None


def rebuild(view: ResultView, p: int, c: int, count: int, coords: np.ndarray | None = None
            ) -> WellPicture:
    """Solve the well of channel c at scan point p again (the core's :func:`~anharmony.scan.scan`
    with the stored basis and reference) and return its lowest ``count`` densities.

    ``coords`` defaults to the extent of the basis (the turning point of its highest state).
    """
    from ..reference import Reference
    from ..scan import scan

    case = _case(view)
    d = view.dimension
    l_val = view.l_of(c)
    l = None if l_val < 0 else l_val
    size = int(view.attrs.get("basis_size") or case.model.basis.size)
    b = float(view.values("length")[p])
    x0 = float(view.values("reference_center")[p]) if (
        l is None and view.has("reference_center")) else 0.0
    value = float(view.values("scan_value")[p]) if view.has("scan_value") else None
    coupling = case.scan_target.kind == "coupling"
    well = case.well_at(None if coupling else value)
    mass = case.mass_at(None if coupling else value)
    hw = float(view.values("reference_frequency" if view.has("reference_frequency")
                           else "frequency")[p])
    b_ref = float(view.values("reference_length")[p]) if view.has("reference_length") else b
    vmin = float(view.values("reference_v_min")[p]) if view.has("reference_v_min") else \
        float(well.value(np.array([x0]))[0])
    ref = Reference(hw, b_ref, x0, vmin, "given", "the reference stored in the result")
    count = max(1, min(count, size))
    # coupling: H_ref + λ (H − H_ref); otherwise the case's well at this scan value
    lam = value if coupling and value is not None else 1.0
    res = scan(well, d, l, view.j_of(c), parameter="coupling", values=[lam], size=size,
               length=b, units=case.units, mass=mass, levels=count, reference=ref,
               vectors=True, warn=False)  # a figure of stored results
    radial = l is not None and d > 1
    if coords is None:
        top = (2 * (size - 1) + (l or 0) + 0.5 * d) if l is not None else (size - 0.5)
        reach = 1.05 * b * math.sqrt(2.0 * top)
        coords = np.linspace(0.0, reach, GRID_POINTS) if radial else \
            np.linspace(x0 - reach, x0 + reach, GRID_POINTS)
    with np.errstate(divide="ignore", invalid="ignore"):  # r = 0 is patched in functions()
        psi = res.wavefunctions(0, np.abs(coords) if l is not None else coords)
    if radial:
        dens = psi**2 * np.abs(coords) ** (d - 1)
    elif l is not None:
        dens = 0.5 * psi**2  # parity channel: ψ(x) = sgn(x)^l R(|x|)/√2, R normalised on x > 0
    else:
        dens = psi**2
    with np.errstate(all="ignore"):
        v, so = res.potential(0, coords)
        eff = None
        if radial:
            kin = res.units.hbar2_over_2m(res.mass)
            cent = (l + 0.5 * (d - 3)) * (l + 0.5 * (d - 1))  # u = r^{(d−1)/2} R
            extra = np.zeros_like(coords)
            if cent != 0 and l > 0:  # l = 0 in 2D: −¼/r² is an artefact of u = √r R
                extra = extra + kin * cent / coords**2
            if so is not None and res.channel.ls != 0.0:
                extra = extra + res.channel.ls * so
            if np.any(extra != 0):
                eff = v + extra
    return WellPicture(coords, np.asarray(v, dtype=float), eff, dens, res.energies[0])


def _turning_points(x: np.ndarray, v: np.ndarray, e: float) -> tuple[float, float]:
    """Outermost points where V crosses E (linear interpolation); the ends if none."""
    inside = np.flatnonzero(np.isfinite(v) & (v <= e))
    if inside.size == 0:
        return float(x[0]), float(x[-1])
    i, k = int(inside[0]), int(inside[-1])

    def cross(a: int, b: int) -> float:
        va, vb = v[a], v[b]
        if not (np.isfinite(va) and np.isfinite(vb)) or va == vb:
            return float(x[b])
        t = (e - va) / (vb - va)
        return float(x[a] + t * (x[b] - x[a]))

    left = cross(i - 1, i) if i > 0 else float(x[0])
    right = cross(k, k + 1) if k + 1 < len(x) else float(x[-1])
    return left, right


def draw(view: ResultView, req: FigureRequest) -> Any:
    """The ``well`` figure."""
    p = view.scan_position(req.scan_index)
    c = view.one_channel(req.channel, "well")
    energy = view.values("energy").astype(float)[p, c]
    bound = view.bound_mask(view.values("energy"))[p, c]
    default = [n for n in range(energy.size) if bound[n] and math.isfinite(energy[n])]
    levels = view.level_indices(req.levels, default=default)
    levels = [n for n in levels if math.isfinite(energy[n])]
    count = (max(levels) + 1) if levels else 1
    radial = view.l_of(c) >= 0 and view.dimension > 1
    pic = rebuild(view, p, c, count)
    x = pic.coords
    if levels:
        dens = pic.densities[levels]
        peak = dens.max(axis=1, keepdims=True)
        alive = np.any(dens > DENSITY_CUT * peak, axis=0)
        idx = np.flatnonzero(alive)
        lo, hi = x[idx[0]], x[idx[-1]]
        pad = 0.12 * (hi - lo)
        hi = min(x[-1], hi + pad)
        if radial:
            lo = 0.0
        elif view.l_of(c) >= 0:  # parity channel: symmetric about x = 0
            hi = max(abs(lo), abs(hi))
            lo = -hi
        else:
            lo = max(x[0], lo - pad)
        points = GRID_POINTS + 1 if lo == -hi else GRID_POINTS  # odd: x = 0 is a sample
        pic = rebuild(view, p, c, count, np.linspace(lo, hi, points))
        x = pic.coords
    veff = pic.effective if pic.effective is not None else pic.potential

    fig, axes = new_figure(req.size or SIZE)
    ax = axes[0, 0]
    e_units = view.energy_units
    es = np.array([energy[n] for n in levels])
    spacing = float(np.median(np.diff(np.sort(es)))) if es.size > 1 else math.nan
    if not (math.isfinite(spacing) and spacing > 0):
        vmin = float(np.nanmin(veff)) if np.isfinite(veff).any() else 0.0
        spacing = (float(es[0]) - vmin) if es.size and es[0] > vmin else (
            float(view.values("frequency")[p]) if view.has("frequency") else 1.0)
    scale = DENSITY_HEIGHT * spacing / float(pic.densities[levels].max()) if levels else 0.0

    ax.plot(x, pic.potential, color=_style.INK, lw=1.6, gid="potential", zorder=3)
    handles = [proxy(lw=1.6, label="well V")]
    if pic.effective is not None:
        ax.plot(x, pic.effective, color=_style.INK, lw=1.0, ls=(0, (5, 2)),
                gid="effective_potential", zorder=3)
        handles.append(proxy(lw=1.0, ls=(0, (5, 2)), label="V + centrifugal"
                             + (" + spin–orbit" if view.has("j") else "")))
    if levels:
        # the densities come from a new diagonalisation; say so if it does not reproduce the file
        moved = max(abs(pic.energies[n] - energy[n]) for n in levels)
        if moved > REBUILD_MISMATCH * spacing:
            ax.text(0.99, 0.01, f"note: the rebuilt well's levels differ from the file's by up "
                    f"to {moved:.3g}", transform=ax.transAxes, ha="right", va="bottom",
                    fontsize=6.5, color=_style.INK, gid="rebuild_note")
    ends = []
    for i, n in enumerate(levels):
        col = _style.colour(i)
        e = float(energy[n])
        a, b = _turning_points(x, veff, e)
        ax.plot([a, b], [e, e], color=col, lw=1.8, gid=f"level:{c}:{n}", zorder=4)
        y = e + scale * pic.densities[n]
        ax.fill_between(x, e, y, color=col, alpha=0.22, lw=0, zorder=2)
        ax.plot(x, y, color=col, lw=0.9, gid=f"density:{c}:{n}", zorder=4)
        ends.append((float(x[-1]), e, f"{view.level_label(c, n)}  {e:.5g}", col))
    density = {3: "r²R(r)²", 2: "r R(r)²"}.get(view.dimension, "|ψ(x)|²") if radial \
        else "|ψ(x)|²"
    handles += [proxy(lw=1.8, color=_style.colour(0), label="level (stored energy)"),
                proxy(lw=0.9, color=_style.colour(0), label=f"probability density {density} "
                      "(common scale)")]

    ylo_hi = finite_range(es, veff[np.isfinite(veff)].min() if np.isfinite(veff).any() else [])
    if ylo_hi is not None:
        lo, hi = ylo_hi
        top = (float(es.max()) if es.size else hi) + 1.1 * spacing
        ax.set_ylim(lo - 0.08 * (top - lo), top)
    thr = float(view.values("threshold")[p, c]) if view.has("threshold") else math.nan
    if math.isfinite(thr) and thr <= ax.get_ylim()[1]:
        ax.axhline(thr, color=_style.SOFT, lw=0.8, ls=(0, (4, 3)), gid="threshold", zorder=1)
        handles.append(proxy(color=_style.SOFT, lw=0.8, ls=(0, (4, 3)), label="threshold"))
    span = x[-1] - x[0]
    ax.set_xlim(x[0], x[-1] + 0.2 * span)
    direct_labels(ax, ends, gap_frac=0.04)
    length_units = view.units("length", "length") if view.has("length") else None
    ax.set_xlabel(axis_label("r" if radial else "x", length_units))
    ax.set_ylabel(axis_label("energy E", e_units))
    ax.set_title(view.at_scan(f"well and levels · {view.labels[c]}", p), loc="left")
    return view.finish(fig, handles, req.title, ncols=3)
