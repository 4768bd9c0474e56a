"""Convergence in the basis: |E(N) − E∞| against the basis size, and E against the length.

Left: |E(N) − E∞| against N on a log scale, one curve per stored basis length, with the case
tolerance. Right: the energy against the oscillator length b at one basis size N (when the file
holds a length scan, dimension ``basis_length``), else against N, beside the extrapolated value
E∞ and its band.

E∞ and its band are the file's ``extrapolated_energy`` and ``extrapolation_uncertainty``
(written by a convergence study) when present; otherwise the best level of the run
(``energy``) and its ``error_estimate``. The lengths of a length scan are read per scan point
and channel from ``convergence_length`` (``basis_length`` is a slot index).
"""

from __future__ import annotations

import math
from typing import TYPE_CHECKING, Any

import numpy as np

from ..errors import InputError
from . import _style
from ._common import FigureRequest, ResultView, axis_label, fit_ylim, new_figure, proxy

if TYPE_CHECKING:  # annotations only
    from ._common import FigureRequest, ResultView

__all__ = ["EXTRAPOLATED", "EXTRAPOLATED_ERROR", "OPTIONS", "SIZE", "draw", "limit"]

OPTIONS = frozenset({"channel", "scan_index", "levels", "basis_size", "size", "title"})
SIZE = (7.6, 4.2)
EXTRAPOLATED = "extrapolated_energy"
EXTRAPOLATED_ERROR = "extrapolation_uncertainty"
_MARKERS = ("o", "s", "^", "D", "v", "P")


def _at(view: ResultView, name: str, p: int) -> np.ndarray:
    """Variable ``name`` at scan point p (if it has a scan dimension), as floats."""
    var = view.var(name)
    if "scan" in var.dims:
        var = var.isel(scan=p)
    return np.asarray(var.values, dtype=float)


def limit(view: ResultView, p: int, c: int, n: int) -> tuple[float, float, str]:
    """(E∞, its uncertainty, what it is) for level n of channel c at scan point p."""
    if view.has(EXTRAPOLATED):
        e = float(_at(view, EXTRAPOLATED, p)[c, n])
        u = float(_at(view, EXTRAPOLATED_ERROR, p)[c, n]) if view.has(EXTRAPOLATED_ERROR) \
            else math.nan
        return e, u, "extrapolated E∞"
    e = float(_at(view, "energy", p)[c, n])
    u = float(_at(view, "error_estimate", p)[c, n]) if view.has("error_estimate") else math.nan
    return e, u, "E∞: best level ± error estimate"


def draw(view: ResultView, req: FigureRequest) -> Any:
    """The ``convergence`` figure."""
    p = view.scan_position(req.scan_index)
    c = view.one_channel(req.channel, "convergence")
    levels = view.level_indices(req.levels, default=[0])
    conv_var = view.var("convergence_energy")
    if "basis_size" not in conv_var.dims:
        raise InputError("convergence figure: convergence_energy has no basis_size dimension")
    conv = _at(view, "convergence_energy", p)  # (channel, level, basis_size[, basis_length])
    sizes = view.coord("basis_size").astype(float)
    if sizes.size == 0:
        raise InputError("convergence figure: the result holds no basis-size scan; add "
                         "convergence: {sizes: [...]} to the case")
    has_length = "basis_length" in conv_var.dims
    if has_length:
        order = [d for d in conv_var.dims if d != "scan"]
        conv = np.moveaxis(conv, [order.index(d) for d in
                                  ("channel", "level", "basis_size", "basis_length")],
                           [0, 1, 2, 3])
        if view.has("convergence_length"):
            lengths = _at(view, "convergence_length", p)
            lengths = lengths[c] if lengths.ndim > 1 else lengths
        else:
            lengths = view.coord("basis_length").astype(float)
        keep = np.isfinite(lengths)  # slots past the channel's own length grid are NaN
        conv, lengths = conv[..., keep], lengths[keep]
    else:
        conv = conv[..., None]
        lengths = np.array([_at(view, "length", p).item()]) if view.has("length") else \
            np.array([math.nan])
    if req.basis_size is not None and not has_length:
        raise InputError("basis_size: this result holds no basis-length scan (dimension "
                         "basis_length), so there is no energy-against-length panel to choose "
                         "N for")
    if req.basis_size is None:  # the largest size that holds data for this channel
        filled = np.flatnonzero(np.isfinite(conv[c, levels[0]]).any(axis=-1))
        ni = int(filled[-1]) if filled.size else int(np.argmax(sizes))
    else:
        ni = view.pick("basis_size", [req.basis_size], [int(s) for s in sizes],
                       "basis size")[0]
    length_units = view.units("length", "length") if view.has("length") else None
    e_units = view.energy_units

    fig, axes = new_figure(req.size or SIZE, 1, 2)
    left, right = axes[0]
    handles = []
    right_vals = []
    tol = view.attrs.get("tolerance")
    for i, n in enumerate(levels):
        col = _style.colour(i)
        e_inf, u_inf, what = limit(view, p, c, n)
        for b in range(conv.shape[3]):
            d = np.abs(conv[c, n, :, b] - e_inf)
            d = np.where(d > 0, d, np.nan)
            left.plot(sizes, d, color=col, lw=1.0, ls=_style.dash(b - 1) if b else "-",
                      marker=_MARKERS[b % len(_MARKERS)], ms=3.2, mfc="white" if b else col,
                      gid=f"difference:{c}:{n}:{b}", zorder=3)
        if i > 0:  # the right panel shows the first level only: spacings would hide the rest
            handles.append(proxy(color=col, lw=1.2, label=view.level_label(c, n)))
            continue
        if has_length:
            xr_, yr = lengths, conv[c, n, ni, :]
            gid = f"energy_vs_length:{c}:{n}"
        else:
            xr_, yr = sizes, conv[c, n, :, 0]
            gid = f"energy_vs_size:{c}:{n}"
        right.plot(xr_, yr, color=col, lw=1.2, marker="o", ms=3.2, gid=gid, zorder=3)
        xs = [float(np.nanmin(xr_)), float(np.nanmax(xr_))] if np.isfinite(xr_).any() else \
            [0.0, 1.0]
        right.plot(xs, [e_inf, e_inf], color=_style.INK, lw=1.0, ls=(0, (6, 2)),
                   gid=f"extrapolated:{c}:{n}", zorder=2)
        if math.isfinite(u_inf) and u_inf > 0:
            right.axhspan(e_inf - u_inf, e_inf + u_inf, color=col, alpha=0.18, lw=0,
                          gid=f"extrapolated_band:{c}:{n}")
        right_vals += [yr, [e_inf]]
        handles.append(proxy(color=col, lw=1.2, label=view.level_label(c, n)))
    if isinstance(tol, (int, float, np.floating)) and tol > 0:
        left.axhline(float(tol), color=_style.SOFT, lw=0.8, ls=(0, (4, 3)), gid="tolerance",
                     zorder=1)
        handles.append(proxy(color=_style.SOFT, lw=0.8, ls=(0, (4, 3)),
                             label=f"case tolerance {float(tol):g}"))
    if conv.shape[3] > 1 or has_length:
        for b in range(conv.shape[3]):
            handles.append(proxy(lw=1.0, ls=_style.dash(b - 1) if b else "-",
                                 marker=_MARKERS[b % len(_MARKERS)],
                                 mfc="white" if b else _style.INK,
                                 label=f"b = {lengths[b]:.4g}" + (f" {length_units}"
                                                                  if length_units else "")))
    handles.append(proxy(lw=1.0, ls=(0, (6, 2)), label=what))
    fit_ylim(right, right_vals, 0.1)
    left.set_yscale("log")
    left.set_xlabel("basis size N")
    left.set_ylabel(axis_label("|E(N) − E∞|", e_units))
    if has_length:
        right.set_xlabel(axis_label("oscillator length b", length_units))
        right.set_title(f"{view.level_label(c, levels[0])} against b at N = {int(sizes[ni])}",
                        loc="left")
    else:
        right.set_xlabel("basis size N")
        unit = f" {length_units}" if length_units and length_units != "b" else ""
        b_text = f", b = {lengths[0]:.4g}{unit}" if math.isfinite(lengths[0]) else ""
        right.set_title(f"{view.level_label(c, levels[0])} against N{b_text}", loc="left")
    right.set_ylabel(axis_label("energy E", e_units))
    right.ticklabel_format(axis="y", useOffset=False)  # absolute energies, no "1e-6 + 3.45"
    left.set_title(view.at_scan(f"basis convergence · {view.labels[c]}", p), loc="left")
    return view.finish(fig, handles, req.title, ncols=4)
