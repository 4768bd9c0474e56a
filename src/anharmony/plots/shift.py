"""Anharmonic shifts against the scanned parameter, with the low-order perturbative shifts.

The shift is ``energy − reference_energy`` (with the scan points marked, in the channel's
colour and line style: :mod:`anharmony.plots._encoding`); the RS shift to order k is
``series_partial_sum[k] − series_coefficient[0]`` = Σ_{1≤i≤k} E_i (thin and patterned; for a
coupling scan Σ_{1≤i≤k} E_i λ^i).
With ``log=True`` the axes are log–log, |shift| against the parameter, the RS shift to first
order only unless ``orders`` asks for more, and each curve gets a guide (a broad faint
segment) of the local log–log slope of the lowest-order RS shift at its small-parameter end;
the slope is written beside a level only where it differs from 1 (first order) by more than
``SLOPE_SHOWN``.
"""

from __future__ import annotations

import math
from typing import TYPE_CHECKING, Any

import numpy as np

from . import _style
from ._common import axis_label, direct_labels, finite_range, new_figure, padded, proxy
from ._encoding import channel_encoding, order_dash
from .flow import curves, perturbative

if TYPE_CHECKING:  # annotations only
    from ._common import FigureRequest, ResultView

__all__ = ["DEFAULT_ORDERS", "OPTIONS", "SIZE", "draw", "loglog_slope"]

OPTIONS = frozenset({"channel", "levels", "orders", "log", "size", "title"})
SIZE = (6.4, 4.6)
DEFAULT_ORDERS = (1, 2)
LOG_ORDERS = (1,)  # the default orders of the log–log view
SLOPE_SHOWN = 0.05  # a slope is written beside its level only where it differs from 1 by more
GUIDE_DECADES = 0.6  # length of a slope guide, in decades of the parameter


def loglog_slope(x: np.ndarray, y: np.ndarray) -> float:
    """d ln|y| / d ln x between the two smallest positive x with finite nonzero y (NaN if none)."""
    x = np.asarray(x, dtype=float)
    y = np.abs(np.asarray(y, dtype=float))
    ok = np.flatnonzero((x > 0) & np.isfinite(y) & (y > 0))
    if ok.size < 2:
        return math.nan
    ok = ok[np.argsort(x[ok])][:2]
    (x1, x2), (y1, y2) = x[ok], y[ok]
    if x1 == x2:
        return math.nan
    return float(math.log(y2 / y1) / math.log(x2 / x1))


def draw(view: ResultView, req: FigureRequest) -> Any:
    """The ``shift`` figure."""
    # log–log: first order only unless asked (second-order shifts change sign, and their
    # |·| dips to zero on a log axis say nothing)
    x, shift, bound, chans, levels, ords = curves(view, req, "shift",
                                                  LOG_ORDERS if req.log else DEFAULT_ORDERS)
    order_values = [int(k) for k in view.coord("order")] if ords else []
    if ords:
        psum = perturbative(view, ords)
        e0 = view.values("series_coefficient").astype(float)[..., 0]
    log = req.log

    fig, axes = new_figure(req.size or SIZE)
    ax = axes[0, 0]
    xs = np.where(x > 0, x, np.nan) if log else x
    ends, shown, guides = [], [], []
    drawn = bound[:, :, levels] & np.isfinite(shift[:, :, levels])
    enc = channel_encoding(view, chans, lw=1.5, marker="o", ms=2.6,
                           visible=[drawn[:, c].any() for c in chans])
    for i, c in enumerate(chans):
        col, ls = enc.styles[i].colour, enc.styles[i].linestyle
        for n in levels:
            s = np.where(bound[:, c, n], shift[:, c, n], np.nan)
            ys = np.abs(s) if log else s
            if log:
                ys = np.where(ys > 0, ys, np.nan)
            shown.append(ys[np.isfinite(xs)])
            ax.plot(xs, ys, color=col, lw=1.5, ls=ls, marker="o", ms=2.6,
                    gid=f"shift:{c}:{n}", zorder=3)
            pt_first = None
            for o, k in enumerate(ords):
                pt = psum[:, c, n, o] - e0[:, c, n]
                pt = np.where(bound[:, c, n], pt, np.nan)
                yp = np.abs(pt) if log else pt
                if log:
                    yp = np.where(yp > 0, yp, np.nan)
                if pt_first is None:
                    pt_first = yp
                ax.plot(xs, yp, color=col, lw=1.0, ls=order_dash(o, enc), alpha=0.9,
                        gid=f"pt_shift:{c}:{n}:{order_values[k]}", zorder=2)
            label = view.level_label(c, n)
            if log:
                ref = pt_first if pt_first is not None else ys
                p = loglog_slope(xs, ref)
                if math.isfinite(p):
                    if abs(p - 1.0) > SLOPE_SHOWN:  # slope 1 (first order) is the rule
                        label += f"  slope {p:.2f}"
                    guides.append((c, n, p, xs, ys, col))
            last = np.flatnonzero(np.isfinite(ys) & np.isfinite(xs))
            if last.size:
                ends.append((xs[last[-1]], ys[last[-1]], label, col))

    rng = finite_range(*shown)
    if rng is not None:
        if log:
            lo, hi = rng
            ax.set_yscale("log")
            ax.set_ylim(lo / 2.5, hi * 2.5)
        else:
            ax.set_ylim(*padded(*rng, frac=0.08))
            ax.axhline(0.0, color=_style.SOFT, lw=0.7, gid="zero", zorder=1)
    finite_x = xs[np.isfinite(xs)]
    if finite_x.size:
        lo, hi = float(finite_x.min()), float(finite_x.max())
        if log:
            ax.set_xscale("log")
            if hi > lo:
                span = math.log10(hi / lo)
                ax.set_xlim(lo / 10 ** (0.03 * span), hi * 10 ** (0.22 * span))
        else:
            span = hi - lo if hi > lo else 1.0
            ax.set_xlim(lo - 0.02 * span, hi + 0.18 * span)
    for c, n, p, xv, yv, col in guides:
        # straight segment of slope p in log–log, starting half a step below the first point
        ok = np.flatnonzero(np.isfinite(xv) & np.isfinite(yv))
        x1, y1 = xv[ok[0]], yv[ok[0]] / 2.0
        x2 = x1 * 10 ** GUIDE_DECADES
        ax.plot([x1, x2], [y1, y1 * (x2 / x1) ** p], color=col, lw=2.4, alpha=0.35,
                solid_capstyle="butt", gid=f"slope:{c}:{n}", zorder=1)
    direct_labels(ax, ends)
    units = view.energy_units
    if log:
        ax.set_ylabel(axis_label("|anharmonic shift| |E − E_ref|", units))
    else:
        ax.set_ylabel(axis_label("anharmonic shift E − E_ref", units))
    ax.set_xlabel(view.scan_label)
    names = ", ".join(view.labels[c] for c in chans)
    ax.set_title(f"shifts from the reference oscillator · channel"
                 f"{'s' if len(chans) > 1 else ''} {names}", loc="left")
    handles = [*enc.handles, *enc.level_handles("diagonaliser", lw=1.5, marker="o", ms=2.6)]
    handles += [proxy(lw=1.0, ls=order_dash(o, enc), label=f"RS shift to order "
                      f"{order_values[k]}") for o, k in enumerate(ords)]
    if guides:
        handles.append(proxy(lw=2.4, alpha=0.35, solid_capstyle="butt",
                             label="slope of the lowest-order RS shift"))
    return view.finish(fig, handles, req.title)
