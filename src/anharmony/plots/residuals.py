"""Residuals of a fit per datum, in standard uncertainties, with the ±1σ and ±2σ bands.

Each datum is a marker at (fit_prediction − fit_measured)/fit_sigma on a stem from zero,
named by its datum name on the x axis; the bands are guides (a residual outside ±2σ deserves a
look). The title carries χ² and the degrees of freedom. Needs the ``fit_*`` variables that a
case with a ``fit:`` block writes.
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

import numpy as np

from . import _style
from ._common import fit_ylim, new_figure, proxy

if TYPE_CHECKING:  # annotations only
    from ._common import FigureRequest, ResultView

__all__ = ["OPTIONS", "SIZE", "draw"]

OPTIONS = frozenset({"size", "title"})
SIZE = (6.4, 4.0)


def draw(view: ResultView, req: FigureRequest) -> Any:
    """The ``residuals`` figure."""
    r = view.values("fit_residual").astype(float)
    names = [str(n) for n in view.coord("fit_datum")]
    x = np.arange(r.size, dtype=float)
    fig, axes = new_figure(req.size or SIZE)
    ax = axes[0, 0]
    ax.axhspan(-2.0, 2.0, color=_style.SOFT, alpha=0.10, lw=0, gid="band:2", zorder=0)
    ax.axhspan(-1.0, 1.0, color=_style.SOFT, alpha=0.18, lw=0, gid="band:1", zorder=0)
    ax.axhline(0.0, color=_style.SOFT, lw=0.7, gid="zero", zorder=1)
    col = _style.colour(0)
    for i in range(r.size):
        ax.plot([x[i], x[i]], [0.0, r[i]], color=col, lw=1.0, zorder=2)
    ax.plot(x, r, ls="none", marker="o", ms=5.0, color=col, gid="residual", zorder=3)
    fit_ylim(ax, [r, np.array([-2.2, 2.2])], frac=0.08)
    ax.set_xticks(x, names, rotation=30 if max(map(len, names), default=0) > 6 else 0,
                  ha="right" if max(map(len, names), default=0) > 6 else "center")
    ax.set_xlim(-0.6, r.size - 0.4)
    ax.set_ylabel("residual (fitted − measured) / σ")
    ax.set_xlabel("datum")
    chi2 = float(view.attrs.get("fit_chi2", np.nan))
    dof = int(view.attrs.get("fit_dof", 0))
    params = ", ".join(str(p) for p in view.coord("fit_parameter"))
    ax.set_title(f"fit residuals · χ² = {chi2:.3g}, dof = {dof} · fitted {params}", loc="left")
    handles = [proxy(ls="none", marker="o", ms=5.0, color=col, label="residual"),
               proxy(lw=6.0, alpha=0.35, color=_style.SOFT, label="±1σ"),
               proxy(lw=6.0, alpha=0.15, color=_style.SOFT, label="±2σ")]
    return view.finish(fig, handles, req.title)
