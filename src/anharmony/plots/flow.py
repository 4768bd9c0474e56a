"""Level flow: energies against the scanned parameter, per channel.

The diagonaliser's levels are drawn in their channel's colour and line style (colour by l,
j = l − ½ dashed and j = l + ½ solid where spin–orbit channels exist, parity in 1D, Ω^π blocks
of geometry results: :mod:`anharmony.plots._encoding`; discretised-continuum states dotted
and grey), the Rayleigh–Schrödinger partial sums at the chosen orders thin and patterned in
the channel's colour, and the resummed values open markers. Each curve is labelled at its
right end; one small key explains the encoding.
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

import numpy as np

from . import _style
from ._common import axis_label, direct_labels, fit_ylim, method_name, new_figure, proxy
from ._encoding import channel_encoding, order_dash

if TYPE_CHECKING:  # annotations only
    from ._common import FigureRequest, ResultView

__all__ = ["DEFAULT_ORDERS", "OPTIONS", "SIZE", "chosen_methods", "chosen_orders", "curves",
           "draw", "is_coupling", "perturbative"]

OPTIONS = frozenset({"channel", "levels", "orders", "methods", "size", "title"})
SIZE = (6.4, 4.6)
DEFAULT_ORDERS = (1, 2)  # first and second order: what is usually compared with the exact level


def chosen_orders(view: ResultView, orders: Any, default: tuple[int, ...]) -> list[int]:
    """Positions along ``order`` of the requested orders (default: those of ``default``)."""
    if not view.has("order") and orders is None:
        return []
    available = [int(k) for k in view.coord("order")]
    if orders is None:
        return [available.index(k) for k in default if k in available]
    return view.pick("orders", list(orders), available, "perturbative order")


def is_coupling(view: ResultView) -> bool:
    """True for a scan of the coupling λ of H = H_ref + λ (H − H_ref)."""
    return view.scan_parameter in ("coupling", "lambda")


def perturbative(view: ResultView, positions: list[int]) -> np.ndarray:
    """RS partial sums at each scan point, shape (scan, channel, level, len(positions)).

    For a coupling scan the partial sums are Σ_{i≤k} E_i λ^i at the scanned λ (the file's
    ``series_partial_sum`` holds them at λ = 1); otherwise ``series_partial_sum`` itself.
    """
    if not positions:
        return np.zeros((*view.values("energy").shape, 0))
    if is_coupling(view):
        coef = view.values("series_coefficient").astype(float)
        lam = view.values("scan_value").astype(float)
        k = view.coord("order").astype(float)
        terms = coef * lam[:, None, None, None] ** k[None, None, None, :]
        sums = np.cumsum(terms, axis=-1)
        return sums[..., positions]
    return view.values("series_partial_sum").astype(float)[..., positions]


def chosen_methods(view: ResultView, methods: Any) -> list[int]:
    if not view.has("method"):
        if methods:
            view.var("series_resummed")
        return []
    available = [str(m) for m in view.coord("method")]
    if methods is None:
        return list(range(len(available)))
    return view.pick("methods", list(methods), available, "resummation method")


def curves(view: ResultView, req: FigureRequest, name: str, orders: tuple[int, ...]
           ) -> tuple[np.ndarray, np.ndarray, np.ndarray, list[int], list[int], list[int]]:
    """What a figure against the scanned parameter draws: the scan values, the variable
    ``name``, the bound flags, and the chosen channels, levels and order positions."""
    values = view.values(name).astype(float)
    return (view.values("scan_value").astype(float), values, view.bound_mask(values),
            view.channels(req.channel, default_all=True), view.level_indices(req.levels),
            chosen_orders(view, req.orders, orders))


def draw(view: ResultView, req: FigureRequest) -> Any:
    """The ``flow`` figure."""
    x, energy, bound, chans, levels, ords = curves(view, req, "energy", DEFAULT_ORDERS)
    meths = chosen_methods(view, req.methods)
    psum = perturbative(view, ords)
    resum = view.values("series_resummed").astype(float) if meths else None
    if resum is not None and is_coupling(view):  # resummed values are at λ = 1 only
        resum = np.where(np.isclose(x, 1.0, rtol=0, atol=1e-12)[:, None, None, None], resum,
                         np.nan)
    order_values = [int(k) for k in view.coord("order")] if ords else []
    method_values = [str(m) for m in view.coord("method")] if meths else []

    fig, axes = new_figure(req.size or SIZE)
    ax = axes[0, 0]
    shown = []
    ends = []
    any_continuum = False
    drawn = bound[:, :, levels] & np.isfinite(energy[:, :, levels])
    enc = channel_encoding(view, chans, lw=1.6, visible=[drawn[:, c].any() for c in chans])
    for i, c in enumerate(chans):
        col, ls = enc.styles[i].colour, enc.styles[i].linestyle
        for n in levels:
            e = energy[:, c, n]
            exact = np.where(bound[:, c, n], e, np.nan)
            shown.append(e)
            ax.plot(x, exact, color=col, lw=1.6, ls=ls, marker="." if x.size < 2 else None,
                    gid=f"energy:{c}:{n}", zorder=3)
            cont = np.where(bound[:, c, n], np.nan, e)
            if np.isfinite(cont).any():
                any_continuum = True
                ax.plot(x, cont, color=_style.CONTINUUM, lw=1.0, ls=":",
                        gid=f"continuum:{c}:{n}", zorder=2)
            for o, k in enumerate(ords):
                ax.plot(x, psum[:, c, n, o], color=col, lw=1.0, ls=order_dash(o, enc), alpha=0.9,
                        gid=f"partial_sum:{c}:{n}:{order_values[k]}", zorder=2)
            for q, m in enumerate(meths):
                ax.plot(x, resum[:, c, n, m], ls="none", marker=_style.method_marker(
                    method_values[m], q), mfc="white", mec=col, mew=0.9, ms=4.0,
                    gid=f"resummed:{c}:{n}:{method_values[m]}", zorder=4)
            last = np.flatnonzero(np.isfinite(exact))
            if last.size:
                ends.append((x[last[-1]], exact[last[-1]], view.level_label(c, n), col))

    # the frame holds the bound levels (and the threshold): a discretised continuum reaching
    # far above would squeeze them into a strip; its lines are clipped at the frame's top
    bound_vals = [np.where(drawn[:, c, k], energy[:, c, n], np.nan)
                  for c in chans for k, n in enumerate(levels)]
    frame = shown
    if any_continuum and np.isfinite(np.concatenate(bound_vals)).any():
        frame = list(bound_vals)
        if view.has("threshold"):
            thr_all = view.values("threshold").astype(float)[:, chans]
            frame.append(thr_all[np.isfinite(thr_all)])
    rng = fit_ylim(ax, frame, 0.12 if frame is not shown else 0.08)
    if view.has("threshold"):
        thr = view.values("threshold").astype(float)[:, chans]
        for t in np.unique(thr[np.isfinite(thr)]):
            if rng is not None and rng[0] - 0.1 * (rng[1] - rng[0]) <= t <= \
                    rng[1] + 0.1 * (rng[1] - rng[0]):
                ax.axhline(t, color=_style.SOFT, lw=0.8, ls=(0, (4, 3)), gid="threshold",
                           zorder=1)
    if x.size:
        lo, hi = float(np.nanmin(x)), float(np.nanmax(x))
        span = hi - lo if hi > lo else 1.0
        ax.set_xlim(lo - 0.02 * span, hi + 0.13 * span)  # room for the labels at the right
    direct_labels(ax, ends)
    ax.set_xlabel(view.scan_label)
    ax.set_ylabel(axis_label("energy E", view.energy_units))
    labels = [view.labels[c] for c in chans]
    names = (", ".join(labels) if len(labels) <= 6
             else f"{', '.join(labels[:3])}, …, {labels[-1]} ({len(labels)})")
    ax.set_title(f"levels against {view.scan_name} · channel{'s' if len(chans) > 1 else ''} "
                 f"{names}", loc="left")
    handles = [*enc.handles, *enc.level_handles("diagonaliser", lw=1.6)]
    handles += [proxy(lw=1.0, ls=order_dash(o, enc), label=f"RS partial sum to order "
                      f"{order_values[k]}") for o, k in enumerate(ords)]
    handles += [proxy(ls="none", marker=_style.method_marker(method_values[m], q), mfc="white",
                      mew=0.9, label=method_name(method_values[m])) for q, m in enumerate(meths)]
    if any_continuum:
        handles.append(proxy(color=_style.CONTINUUM, ls=":", label="discretised continuum"))
    if view.has("threshold") and any(ln.get_gid() == "threshold" for ln in ax.lines):
        handles.append(proxy(color=_style.SOFT, lw=0.8, ls=(0, (4, 3)), label="threshold"))
    return view.finish(fig, handles, req.title)
