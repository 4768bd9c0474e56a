"""The Rayleigh–Schrödinger series of one scan point: growth of |E_k| and the partial sums.

Left: |E_k| against k on a log scale with the large-order estimate of
:func:`anharmony.series.large_order` (dashed). Right: the partial sums
at λ = 1 against the order, beside the diagonaliser's level (solid, with its error band), the
resummed values and the optimally truncated sum.
"""

from __future__ import annotations

import math
from typing import TYPE_CHECKING, Any

import numpy as np

from ..errors import InputError
from . import _style
from ._common import FigureRequest, ResultView, axis_label, fit_ylim, method_name, new_figure, proxy
from .flow import chosen_methods

if TYPE_CHECKING:  # annotations only
    from ._common import FigureRequest, ResultView

__all__ = ["OPTIONS", "SIZE", "draw", "large_order_curve", "nonzero_mask"]

OPTIONS = frozenset({"channel", "scan_index", "levels", "methods", "size", "title"})
SIZE = (7.6, 4.2)
ZERO_RATIO = 1e-9  # |E_k| below this fraction of its neighbours is a vanishing order


def nonzero_mask(e: np.ndarray) -> np.ndarray:
    """True where E_k is finite and not a vanishing order (tiny next to its neighbours)."""
    a = np.abs(np.asarray(e, dtype=float))
    ok = np.isfinite(a) & (a > 0)
    if a.size < 2:
        return ok
    padded_a = np.concatenate([[0.0], np.where(np.isfinite(a), a, 0.0), [0.0]])
    neighbour = np.maximum(padded_a[:-2], padded_a[2:])
    return ok & ~(a < ZERO_RATIO * neighbour)


def large_order_curve(k: np.ndarray, e: np.ndarray) -> tuple[np.ndarray, np.ndarray, str] | None:
    """The large-order estimate of |E_k| over the fitted (upper) orders, and its formula.

    The growth (a, p, b) is that of :func:`anharmony.series.large_order` (ratio method):
    |E_k| ≈ C a^m Γ(p m + b) for factorial growth, C a^m m^b for geometric growth, with
    m = k / step (step 2 when every odd order vanishes). The amplitude C is matched to the
    drawn orders (least squares in log|E_k|), because the ratio method's extrapolated constant
    is sensitive when only a few orders are known. ``None`` when the series is too short or
    not finite.
    """
    from ..series import large_order

    e = np.asarray(e, dtype=float)
    if not np.all(np.isfinite(e)):
        return None
    clean = np.where(nonzero_mask(e), e, 0.0)  # vanishing orders exactly zero, as the fit expects
    try:
        fit = large_order(list(clean))
    except (ValueError, ZeroDivisionError, ArithmeticError):
        return None
    if not (math.isfinite(fit.rate) and fit.rate > 0 and math.isfinite(fit.constant)
            and fit.constant > 0 and math.isfinite(fit.shift)):
        return None
    step = int(fit.step)
    kmax = float(np.max(k))
    m = np.arange(max(1, math.floor(kmax / step / 2)), math.floor(kmax / step) + 1, dtype=float)
    if fit.kind == "factorial":
        arg = fit.power * m + fit.shift
        if np.any(arg <= 0):
            return None
        from scipy.special import gammaln

        log_shape = m * math.log(fit.rate) + gammaln(arg)
    else:
        log_shape = m * math.log(fit.rate) + fit.shift * np.log(m)
    # amplitude matched to the orders drawn (geometric mean of |E_k| / shape)
    data = np.abs(e[(m * step).astype(int)])
    use = data > 0
    if not use.any():
        return None
    log_c = float(np.mean(np.log(data[use]) - log_shape[use]))
    y = np.exp(log_c + log_shape)
    var = "k" if step == 1 else "m"  # the axis is k; m = k/step only for a series in λ²
    if fit.kind == "factorial":
        lead = var if fit.power == 1 else f"{fit.power}{var}"
        formula = (f"|E_k| ≈ {math.exp(log_c):.2g}·{fit.rate:.3g}^{var}·Γ({lead}"
                   f"{fit.shift:+.2f})")
    else:
        formula = f"|E_k| ≈ {math.exp(log_c):.2g}·{fit.rate:.3g}^{var}·{var}^{fit.shift:.2f}"
        if fit.supported:
            formula += f", radius {fit.radius:.3g}"
    if step > 1:
        formula += f", m = k/{step}"
    formula += f" ({fit.orders} orders" + (")" if fit.supported else ", not settled)")
    return m * step, y, formula


def draw(view: ResultView, req: FigureRequest) -> Any:
    """The ``series`` figure."""
    p = view.scan_position(req.scan_index)
    c = view.one_channel(req.channel, "series")
    levels = view.level_indices(req.levels, default=[0])
    coef = view.values("series_coefficient").astype(float)
    psum = view.values("series_partial_sum").astype(float)
    if coef.shape[-1] == 0:
        raise InputError("series figure: the result holds no perturbation series (order has "
                         "length 0); run the case with a perturbation: section")
    energy = view.values("energy").astype(float)
    err = view.values("error_estimate").astype(float) if view.has("error_estimate") else None
    meths = chosen_methods(view, req.methods)
    resum = view.values("series_resummed").astype(float) if meths else None
    method_values = [str(m) for m in view.coord("method")] if meths else []
    k = view.coord("order").astype(float)
    has_opt = view.has("series_optimal_order") and view.has("series_optimal")
    if has_opt:
        opt_k = view.values("series_optimal_order")
        opt_e = view.values("series_optimal").astype(float)

    fig, axes = new_figure(req.size or SIZE, 1, 2)
    left, right = axes[0]
    units = view.energy_units
    level_handles = []
    right_vals = []
    for i, n in enumerate(levels):
        col = _style.colour(i)
        e = coef[p, c, n]
        shown = np.where(nonzero_mask(e), np.abs(e), np.nan)
        left.plot(k, shown, color=col, lw=0.9, marker="o", ms=3.0, gid=f"coefficient:{c}:{n}",
                  zorder=3)
        est = large_order_curve(k, e)
        name = view.level_label(c, n)
        if est is not None:
            kf, yf, formula = est
            left.plot(kf, yf, color=col, lw=1.0, ls=_style.dash(0), alpha=0.85,
                      gid=f"large_order:{c}:{n}", zorder=2)
            # lines of their own (the formula, then its remark): the legend stays narrow
            name += "\nlarge orders: " + formula.replace(" (", "\n(", 1)
        ps = psum[p, c, n]
        right.plot(k, ps, color=col, lw=0.9, marker="s", ms=2.8, gid=f"partial_sum:{c}:{n}",
                   zorder=3)
        ex = energy[p, c, n]
        kspan = [float(k.min()), float(k.max())]
        right.plot(kspan, [ex, ex], color=col, lw=1.6, gid=f"exact:{c}:{n}", zorder=2)
        if err is not None and math.isfinite(err[p, c, n]) and err[p, c, n] > 0:
            right.axhspan(ex - err[p, c, n], ex + err[p, c, n], color=col, alpha=0.15, lw=0,
                          gid=f"error_band:{c}:{n}")
        for q, m in enumerate(meths):
            v = resum[p, c, n, m]
            right.plot(kspan, [v, v], color=col, lw=0.9, ls=_style.dash(q + 1),
                       marker=_style.method_marker(method_values[m], q), markevery=[1],
                       mfc="white", mec=col, gid=f"resummed:{c}:{n}:{method_values[m]}",
                       zorder=2)
            right_vals.append([v])
        upto = len(k)
        if has_opt and int(opt_k[p, c, n]) >= 0:
            ko = int(opt_k[p, c, n]) - 1  # the sum stops before the smallest term
            right.plot([ko], [opt_e[p, c, n]], ls="none", marker="*", ms=8, mfc=col,
                       mec=_style.INK, mew=0.5, gid=f"optimal:{c}:{n}", zorder=5)
            upto = max(ko + 2, 3)
            right_vals.append([opt_e[p, c, n]])
        right_vals.append(ps[:upto])
        right_vals.append([ex])
        level_handles.append(proxy(color=col, lw=1.6, label=name))

    fit_ylim(right, right_vals, 0.12)
    left.set_yscale("log")
    left.set_xlabel("order k")
    left.set_ylabel(axis_label("|E_k|", units))
    right.set_xlabel("order k")
    right.set_ylabel(axis_label("partial sum E_0 + … + E_k at λ = 1", units))
    where = f"{view.labels[c]} at {view.scan_text(p)}" if view.scan_text(p) else view.labels[c]
    left.set_title(f"RS coefficients · {where}", loc="left")
    right.set_title("partial sums beside the exact level", loc="left")
    handles = [proxy(lw=0.9, marker="o", ms=3.0, label="|E_k|"),
                proxy(lw=1.0, ls=_style.dash(0), label="large-order estimate"),
                proxy(lw=0.9, marker="s", ms=2.8, label="partial sum"),
                proxy(lw=1.6, label="diagonaliser ± error estimate")]
    handles += [proxy(lw=0.9, ls=_style.dash(q + 1), marker=_style.method_marker(
        method_values[m], q), mfc="white", label=method_name(method_values[m]))
        for q, m in enumerate(meths)]
    if has_opt:
        handles.append(proxy(ls="none", marker="*", ms=8, mec=_style.INK, mew=0.5,
                             label="optimal truncation"))
    # inside the axes, away from the y axis, in the corner the coefficients leave empty:
    # upper right when they fall with k (a convergent-looking series), lower right otherwise
    falling = [np.nanmax(np.abs(coef[p, c, n][:2])) > np.nanmax(np.abs(coef[p, c, n][-2:]))
               for n in levels if np.isfinite(coef[p, c, n]).any()]
    left.legend(handles=level_handles, loc="upper right" if all(falling) else "lower right",
                fontsize=6.5, handlelength=1.6, borderaxespad=0.8, frameon=True,
                framealpha=0.85, edgecolor="none")
    return view.finish(fig, handles, req.title, ncols=4)
