"""Shared pieces of the figures: a validating view of a result dataset, labels, layout helpers.

Nothing here imports matplotlib at module level; :func:`new_figure` imports it when a figure is
made. The dataset is only read, never changed.
"""

from __future__ import annotations

import math
import re
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np

from ..errors import InputError
from . import _style

__all__ = [
    "FigureRequest",
    "ResultView",
    "axis_label",
    "level_label",
    "new_figure",
    "parameter_label",
    "pretty_units",
    "spread_labels",
]



# What to put in the case to get a missing variable, by name prefix.
_HINTS = {
    "convergence_energy": " (give convergence: {sizes: [...]} in the case and run it again)",
    "series_": " (give a perturbation: section in the case and run it again)",
    "fit_": " (it is written by a case with a fit: block)",
    "case": "",
}


@dataclass(frozen=True)
class FigureRequest:
    """What the caller asked for, before it is checked against the dataset.

    Attributes
    ----------
    kind : str
        Figure kind (a key of :data:`anharmony.plots.KINDS`).
    channel : str, int, sequence of them, or None
        Channel label(s) (``"d5/2"``) or 0-based position(s); ``None``: the kind's default.
    scan_index : int or None
        Scan point (negative counts from the end); ``None``: the last point.
    levels : tuple of int or None
        0-based level indices in each channel; ``None``: the kind's default.
    orders : tuple of int or None
        Perturbative orders whose partial sums are drawn (``flow``, ``shift``).
    methods : tuple of str or None
        Resummation methods drawn (``flow``, ``series``); ``None``: all in the file.
    log : bool
        Log–log axes (``shift``).
    basis_size : int or None
        Basis size N of the energy-against-length panel (``convergence``).
    size : (float, float) or None
        Figure size in inches; ``None``: the kind's default.
    title : str or None
        Replaces the case title.
    """

    kind: str
    channel: Any = None
    scan_index: int | None = None
    levels: tuple[int, ...] | None = None
    orders: tuple[int, ...] | None = None
    methods: tuple[str, ...] | None = None
    log: bool = False
    basis_size: int | None = None
    size: tuple[float, float] | None = None
    title: str | None = None


def level_label(dimension: int, l: int, j: float | None, n: int) -> str:
    """Spectroscopic label of level n (:func:`anharmony.hamiltonian.level_label`).

    Imported on first use: the figures of a result file need no Hamiltonian.
    """
    from ..hamiltonian import level_label as label

    return label(dimension, l, j, n)


def pretty_units(units: Any, system: str | None = None, quantity: str | None = None
                 ) -> str | None:
    """Units for an axis label: ``"cm-1"`` → ``"cm⁻¹"``; ``None`` for a pure number.

    The symbols come from the one table :data:`anharmony.units.UNIT_SYMBOLS` (``show`` uses
    it too): in the dimensionless ``oscillator`` system energies are in ħω and lengths in b;
    ``trap`` energies are stored as E/h in kHz and written ``h·kHz``.
    """
    from ..units import units_symbol

    return units_symbol(None if units is None else str(units), system, quantity)


def parameter_label(view: ResultView) -> str:
    """``"quartic strength g (ħω/b⁴)"``: the scanned parameter's name and unit for an axis."""
    return axis_label(view.scan_name, view.scan_units)


def axis_label(name: str, units: str | None) -> str:
    """``"energy E (MeV)"``, or the bare name for a pure number."""
    return f"{name} ({units})" if units else name


def shell_number(dimension: int, l: int, n: int) -> int:
    """Oscillator major shell N = 2n + l (N = 2(n_spec − 1) + l with n_spec from 1); 1D: v."""
    if dimension == 1 and l < 0:
        return n
    return 2 * n + l


def spread_labels(y: Sequence[float], gap: float, lo: float | None = None,
                  hi: float | None = None) -> np.ndarray:
    """Label positions near ``y`` that are at least ``gap`` apart (order kept).

    A forward pass pushes crowded labels up; the group is then moved down by half its
    excess so labels stay centred on their data, and clamped into [lo, hi] where given.
    """
    y = np.asarray(y, dtype=float)
    if y.size == 0:
        return y
    order = np.argsort(y, kind="stable")
    ys = y[order].copy()
    out = ys.copy()
    for i in range(1, len(out)):
        out[i] = max(out[i], out[i - 1] + gap)
    out -= 0.5 * (out[-1] - ys[-1]) if len(out) > 1 else 0.0
    for i in range(1, len(out)):
        out[i] = max(out[i], out[i - 1] + gap)
    if hi is not None and out[-1] > hi:
        out -= out[-1] - hi
    if lo is not None and out[0] < lo:
        out += lo - out[0]
    res = np.empty_like(out)
    res[order] = out
    return res


def new_figure(size: tuple[float, float], nrows: int = 1, ncols: int = 1,
               **grid: Any) -> tuple[Any, np.ndarray]:
    """A :class:`matplotlib.figure.Figure` on the Agg canvas (no pyplot state) and its axes."""
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    fig = Figure(figsize=size, layout="constrained")
    FigureCanvasAgg(fig)
    axes = fig.subplots(nrows, ncols, squeeze=False, **grid)
    return fig, axes


def _int(name: str, value: Any) -> int:
    if isinstance(value, bool) or not isinstance(value, (int, np.integer)):
        if isinstance(value, str) and re.fullmatch(r"-?\d+", value.strip()):
            return int(value)
        raise InputError(f"{name}: must be an integer; got {value!r}")
    return int(value)


class ResultView:
    """Read-only access to a result dataset (DESIGN §6) with checks that name what is wrong.

    Parameters
    ----------
    ds
        The dataset (as written by :mod:`anharmony.store`).
    kind
        The figure being made (named in error messages).
    """

    def __init__(self, ds: Any, kind: str) -> None:
        self.ds = ds
        self.kind = kind
        self.attrs = dict(ds.attrs)

    # ------------------------------------------------------------------ variables
    def has(self, name: str) -> bool:
        return name in self.ds.variables

    def var(self, name: str) -> Any:
        """The variable ``name``; ``ValueError`` naming the figure if the file lacks it."""
        if name not in self.ds.variables:
            hint = next((h for prefix, h in _HINTS.items() if name.startswith(prefix)), "")
            raise InputError(f"{self.kind} figure: the result has no variable {name!r}, which "
                             f"this figure needs{hint}")
        return self.ds[name]

    def values(self, name: str) -> np.ndarray:
        return np.asarray(self.var(name).values)

    def units(self, name: str, quantity: str | None = None) -> str | None:
        return pretty_units(self.var(name).attrs.get("units"), self.unit_system, quantity)

    @property
    def unit_system(self) -> str | None:
        v = self.attrs.get("unit_system")
        return None if v is None else str(v)

    @property
    def energy_units(self) -> str | None:
        return self.units("energy", "energy") if self.has("energy") else pretty_units(
            self.attrs.get("energy_units"), self.unit_system, "energy")

    @property
    def title(self) -> str:
        return str(self.attrs.get("title") or "anharmony result")

    @property
    def dimension(self) -> int:
        d = self.attrs.get("dimension")
        if d is None:
            raise InputError(f"{self.kind} figure: the result has no 'dimension' attribute")
        return int(d)

    # ------------------------------------------------------------------ channels
    @property
    def labels(self) -> list[str]:
        n = self.ds.sizes.get("channel", 0)
        if self.has("label"):
            return [str(s) for s in self.values("label")]
        return [str(i) for i in range(n)]

    def l_of(self, c: int) -> int:
        return int(self.values("l")[c])

    def j_of(self, c: int) -> float | None:
        if not self.has("j"):
            return None
        j = float(self.values("j")[c])
        return j if math.isfinite(j) else None

    def level_label(self, c: int, n: int) -> str:
        if self.has("level_label"):  # stored by the run
            return str(self.values("level_label")[c, n])
        return level_label(self.dimension, self.l_of(c), self.j_of(c), n)

    def one_channel(self, channel: Any, figure: str) -> int:
        """Position of the single channel a ``figure`` shows (default the first)."""
        chans = self.channels(channel, default_all=False)
        if len(chans) > 1:
            raise InputError(f"channel: the {figure} figure shows one channel; got "
                             f"{len(chans)} ({', '.join(self.labels[i] for i in chans)})")
        return chans[0]

    def channels(self, channel: Any, *, default_all: bool) -> list[int]:
        """Positions of the requested channel(s); all or the first when ``channel`` is None."""
        labels = self.labels
        if not labels:
            raise InputError(f"{self.kind} figure: the result has no channels")
        if channel is None:
            return list(range(len(labels))) if default_all else [0]
        items = [channel] if isinstance(channel, (str, int, np.integer)) else list(channel)
        if not items:
            raise InputError("channel: expected a channel label or position; got an empty list")
        out: list[int] = []
        for item in items:
            c = self._one_channel(item, labels)
            if c not in out:
                out.append(c)
        return out

    def _one_channel(self, item: Any, labels: list[str]) -> int:
        listed = ", ".join(labels)
        if isinstance(item, str) and not re.fullmatch(r"-?\d+", item.strip()):
            text = item.strip()
            if text in labels:
                return labels.index(text)
            folded = [s.lower() for s in labels]
            if text.lower() in folded:
                return folded.index(text.lower())
            raise InputError(f"channel: the result has no channel {item!r}; its channels are "
                             f"{listed}")
        c = _int("channel", item)
        if not -len(labels) <= c < len(labels):
            raise InputError(f"channel: position {c} is out of range; the result has "
                             f"{len(labels)} channel(s): {listed}")
        return c % len(labels)

    # ------------------------------------------------------------------ scan and levels
    @property
    def scan_size(self) -> int:
        return int(self.ds.sizes.get("scan", 1))

    def scan_position(self, scan_index: Any) -> int:
        """0-based scan position; ``None`` is the last point, negatives count from the end."""
        n = self.scan_size
        if scan_index is None:
            return n - 1
        i = _int("scan_index", scan_index)
        if not -n <= i < n:
            raise InputError(f"scan_index: {i} is out of range; the result has {n} scan "
                             f"point(s), 0…{n - 1}")
        return i % n

    def level_indices(self, levels: Any, default: Sequence[int] | None = None) -> list[int]:
        """Checked level indices; ``default`` (or every level) when ``levels`` is None."""
        n = int(self.ds.sizes.get("level", 0))
        if levels is None:
            return [k for k in (default if default is not None else range(n)) if k < n]
        items = [levels] if isinstance(levels, (int, np.integer, str)) else list(levels)
        if not items:
            raise InputError("levels: expected at least one level index; got an empty list")
        out = []
        for item in items:
            k = _int("levels", item)
            if not 0 <= k < n:
                raise InputError(f"levels: {k} is out of range; the result has {n} level(s) "
                                 f"per channel, 0…{n - 1}")
            if k not in out:
                out.append(k)
        return out

    def coord(self, name: str) -> np.ndarray:
        if name in self.ds.coords or name in self.ds.variables:
            return np.asarray(self.ds[name].values)
        return np.arange(int(self.ds.sizes.get(name, 0)))

    def pick(self, name: str, values: Any, available: Sequence[Any], what: str) -> list[int]:
        """Positions of ``values`` in ``available`` (a coordinate); message lists them."""
        avail = list(available)
        out = []
        for v in values:
            matches = [i for i, a in enumerate(avail) if str(a) == str(v)]
            if not matches:
                shown = ", ".join(str(a) for a in avail) or "none"
                raise InputError(f"{name}: the result has no {what} {v!r}; it has {shown}")
            out.append(matches[0])
        return out

    # ------------------------------------------------------------------ scan axis
    @property
    def scan_parameter(self) -> str:
        if self.has("scan_value"):
            p = self.var("scan_value").attrs.get("parameter")
            if p:
                return str(p)
        return str(self.attrs.get("scan_parameter", "coupling"))

    @property
    def scan_units(self) -> str | None:
        """Screen symbol of the scanned parameter's unit (``ħω/b⁴``, ``h·kHz``)."""
        if not self.has("scan_value"):
            return None
        attrs = self.var("scan_value").attrs
        if "display_units" in attrs:  # written by the run from the unit table
            return str(attrs["display_units"]) or None
        return pretty_units(attrs.get("units"), self.unit_system, None)

    @property
    def scan_name(self) -> str:
        """The parameter in the trade's words (``quartic strength g``); older files: its path."""
        if self.has("scan_value") and self.var("scan_value").attrs.get("display_name"):
            return str(self.var("scan_value").attrs["display_name"])
        p = self.scan_parameter
        return "coupling λ" if p in ("coupling", "lambda") else p

    @property
    def scan_label(self) -> str:
        """The axis label of the scanned parameter, used by every kind of figure."""
        return parameter_label(self)

    def scan_text(self, i: int) -> str:
        """``"well[1].strength = 0.5 MeV"`` for scan point i."""
        if not self.has("scan_value"):
            return ""
        value = float(self.values("scan_value")[i])
        unit = self.scan_units
        name = "λ" if self.scan_name.startswith("coupling") else self.scan_name
        return f"{name} = {value:.4g}" + (f" {unit}" if unit else "")

    def bound_mask(self, values: np.ndarray) -> np.ndarray:
        """The ``bound`` flags (scan, channel, level); where absent, the finite ``values``."""
        return self.values("bound").astype(bool) if self.has("bound") else np.isfinite(values)

    def at_scan(self, text: str, i: int) -> str:
        """``text`` followed by `` at <scan point i>`` when the scan has a value."""
        where = self.scan_text(i)
        return text + (f" at {where}" if where else "")

    # ------------------------------------------------------------------ decoration
    def decorate(self, fig: Any, title: str | None = None) -> None:
        """The case title (or ``title``) as the figure's title."""
        fig.suptitle(title or self.title, x=0.02, ha="left", color=_style.INK)

    def finish(self, fig: Any, handles: Sequence[Any], title: str | None,
               ncols: int | None = None) -> Any:
        """The key of line styles below the axes and the figure title; returns ``fig``."""
        style_legend(fig, handles, ncols=ncols)
        self.decorate(fig, title)
        return fig


def finite_range(*arrays: Any) -> tuple[float, float] | None:
    """(min, max) over the finite entries of the arrays, or None if there are none."""
    vals = [np.asarray(a, dtype=float).ravel() for a in arrays]
    flat = np.concatenate(vals) if vals else np.zeros(0)
    flat = flat[np.isfinite(flat)]
    if flat.size == 0:
        return None
    return float(flat.min()), float(flat.max())


def fit_ylim(ax: Any, values: Sequence[Any], frac: float) -> tuple[float, float] | None:
    """Set the y range to the finite ``values`` widened by ``frac``; returns (min, max)."""
    rng = finite_range(*values)
    if rng is not None:
        ax.set_ylim(*padded(*rng, frac=frac))
    return rng


def padded(lo: float, hi: float, frac: float = 0.06) -> tuple[float, float]:
    """[lo, hi] widened by ``frac`` of its span (a unit span around a single value)."""
    span = hi - lo
    if not span > 0:
        span = max(abs(lo), 1.0) * 0.2
    return lo - frac * span, hi + frac * span


METHOD_NAMES = {"pade": "Padé", "borel_pade": "Borel–Padé", "borel": "Borel",
                "optimal": "optimal truncation"}


def method_name(method: str) -> str:
    """Display name of a resummation method."""
    return METHOD_NAMES.get(str(method), str(method).replace("_", " "))


def direct_labels(ax: Any, items: Sequence[tuple[float, float, str, str]],
                  gap_frac: float = 0.045, dx_frac: float = 0.01) -> list[Any]:
    """Text labels just right of points ``(x, y, text, colour)``, spread so they do not overlap.

    Call after the axis limits are fixed (on a linear or log y axis).
    """
    items = [it for it in items if math.isfinite(it[0]) and math.isfinite(it[1])]
    if not items:
        return []
    y0, y1 = ax.get_ylim()
    x0, x1 = ax.get_xlim()
    logy = ax.get_yscale() == "log"
    logx = ax.get_xscale() == "log"
    fy = np.log10 if logy else (lambda v: np.asarray(v, dtype=float))
    gy = (lambda v: 10.0 ** v) if logy else (lambda v: v)
    ys = fy(np.array([it[1] for it in items]))
    lo, hi = float(fy(y0)), float(fy(y1))
    # labels are spread apart among those at the same x only (a curve that ends inside the
    # frame keeps its label beside its end, not pushed along by the labels at the right edge)
    xs = np.array([it[0] for it in items], dtype=float)  # points of the scan: exact repeats
    placed = np.empty(len(items))
    for x_end in np.unique(xs):
        group = np.flatnonzero(xs == x_end)
        placed[group] = spread_labels(ys[group], gap_frac * (hi - lo), lo, hi)
    texts = []
    for (x, _, text, col), yp in zip(items, placed, strict=True):
        if logx:
            xp = 10.0 ** (math.log10(x) + dx_frac * (math.log10(x1) - math.log10(x0)))
        else:
            xp = x + dx_frac * (x1 - x0)
        texts.append(ax.text(xp, float(gy(yp)), text, color=col, fontsize=6.5, va="center",
                             ha="left", clip_on=False))
    return texts


def style_legend(fig: Any, handles: Sequence[Any], ncols: int | None = None) -> Any:
    """The key of line styles, below the axes."""
    if not handles:
        return None
    return fig.legend(handles=list(handles), loc="outside lower center",
                      ncols=ncols or min(len(handles), 4))


def proxy(**kw: Any) -> Any:
    """A legend handle that is not part of any axes (keeps ``ax.lines`` to plotted data)."""
    from matplotlib.lines import Line2D

    kw.setdefault("color", _style.INK)
    return Line2D([], [], **kw)
