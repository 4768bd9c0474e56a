"""Level scheme: the levels of each channel side by side, beside the reference oscillator.

One column per channel with a bar at each bound level and its spectroscopic label (``1d5/2``);
the first column holds the shells of the reference oscillator, N = 2(n − 1) + l, with faint
guides across the figure so the anharmonic shift of every level can be read off. Spin–orbit
partners share a colour.
"""

from __future__ import annotations

import math
from typing import TYPE_CHECKING, Any

import numpy as np

from ..errors import InputError
from . import _style
from ._common import (
    axis_label,
    finite_range,
    new_figure,
    padded,
    proxy,
    shell_number,
    spread_labels,
)

if TYPE_CHECKING:  # annotations only
    from ._common import FigureRequest, ResultView

__all__ = ["OPTIONS", "SIZE", "draw"]

OPTIONS = frozenset({"channel", "scan_index", "levels", "size", "title"})
SIZE = (7.2, 5.0)
BAR = (-0.32, 0.18)  # bar extent about the column centre; labels start at its right end
LABEL_GAP = 0.032  # minimum label spacing, as a fraction of the energy axis


def draw(view: ResultView, req: FigureRequest) -> Any:
    """The ``scheme`` figure."""
    p = view.scan_position(req.scan_index)
    chans = view.channels(req.channel, default_all=True)
    energy = view.values("energy").astype(float)[p]
    bound = view.bound_mask(view.values("energy"))[p]
    ref = view.values("reference_energy").astype(float)[p]
    wanted = view.level_indices(req.levels)
    d = view.dimension

    fig, axes = new_figure(req.size or SIZE)
    ax = axes[0, 0]
    shells: dict[int, float] = {}
    columns: list[tuple[float, list[tuple[float, str, str]]]] = []
    all_e = []
    ls_seen: list[int] = []
    for col_i, c in enumerate(chans, start=1):
        l_val = view.l_of(c)
        if l_val not in ls_seen:
            ls_seen.append(l_val)
        colr = _style.colour(ls_seen.index(l_val))
        items = []
        for n in wanted:
            e = energy[c, n]
            if not (bound[c, n] and math.isfinite(e)):
                continue
            ax.plot([col_i + BAR[0], col_i + BAR[1]], [e, e], color=colr, lw=2.0,
                    solid_capstyle="butt", gid=f"level:{c}:{n}", zorder=3)
            items.append((e, view.level_label(c, n), colr))
            all_e.append(e)
            big_n = shell_number(d, l_val, n)
            if math.isfinite(ref[c, n]):
                shells.setdefault(big_n, float(ref[c, n]))
        columns.append((col_i, items))
    for big_n, e in sorted(shells.items()):
        ax.plot([BAR[0], BAR[1]], [e, e], color=_style.INK, lw=2.0, solid_capstyle="butt",
                gid=f"shell:{big_n}", zorder=3)
        ax.plot([BAR[1], len(chans) + BAR[1]], [e, e], color=_style.SOFT, lw=0.5,
                ls=(0, (1, 2)), gid=f"shell_guide:{big_n}", zorder=1)
    columns.insert(0, (0, [(e, f"N={big_n}", _style.INK) for big_n, e in sorted(shells.items())]))

    rng = finite_range(all_e, list(shells.values()))
    if rng is None:
        raise InputError(f"scheme figure: no bound level at scan point {p} in channel(s) "
                         f"{', '.join(view.labels[c] for c in chans)}")
    lo, hi = padded(*rng, frac=0.06)
    thr = view.values("threshold").astype(float)[p, chans] if view.has("threshold") else []
    handles = []
    for t in np.unique(np.asarray(thr)[np.isfinite(thr)]):
        if t <= hi + 0.1 * (hi - lo):
            ax.axhline(t, color=_style.SOFT, lw=0.8, ls=(0, (4, 3)), gid="threshold", zorder=1)
            hi = max(hi, t + 0.03 * (hi - lo))
            handles = [proxy(color=_style.SOFT, lw=0.8, ls=(0, (4, 3)), label="threshold")]
    ax.set_ylim(lo, hi)
    for x, items in columns:
        if not items:
            continue
        ys = spread_labels([it[0] for it in items], LABEL_GAP * (hi - lo), lo, hi)
        for (e, text, colr), y in zip(items, ys, strict=True):
            ax.text(x + BAR[1] + 0.04, y, text, color=colr, fontsize=6.5, va="center",
                    ha="left")
            if abs(y - e) > 0.2 * LABEL_GAP * (hi - lo):  # a moved label gets a leader
                ax.plot([x + BAR[1], x + BAR[1] + 0.035], [e, y], color=colr, lw=0.4,
                        gid="leader", zorder=2)
    ax.set_xlim(-0.6, len(chans) + 0.75)
    ax.set_xticks(range(len(chans) + 1))
    hw = float(view.values("frequency")[p]) if view.has("frequency") else math.nan
    e_units = view.energy_units
    osc = "oscillator" + (f"\nħω = {hw:.4g}" + (f" {e_units}" if e_units and e_units != "ħω"
                                                 else "") if math.isfinite(hw) else "")
    ax.set_xticklabels([osc, *(view.labels[c] for c in chans)], fontsize=7)
    ax.tick_params(axis="x", length=0)
    ax.grid(axis="x", visible=False)
    ax.spines["bottom"].set_visible(False)
    ax.set_ylabel(axis_label("energy E", e_units))
    ax.set_title(view.at_scan("level scheme", p) + " · bound levels", loc="left")
    return view.finish(fig, handles, req.title)
