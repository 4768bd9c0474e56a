"""Figures from result datasets (DESIGN §6), headless, on matplotlib's object-oriented API.

:func:`make_figure` draws one of the figure kinds of :data:`KINDS` from a result dataset and
returns a :class:`matplotlib.figure.Figure` on the Agg canvas (no pyplot state, nothing shown);
:func:`save_figure` writes it as PNG, PDF or SVG through a temporary file and a rename.

matplotlib is imported only inside the functions that draw, so importing this package (or
``anharmony``) does not import it.

Every data curve carries a ``gid`` naming what it shows (``"energy:<channel>:<level>"``,
``"partial_sum:<channel>:<level>:<order>"``, …), so tests and scripts can read the plotted
numbers back from ``ax.lines``.
"""

from __future__ import annotations

import math
import os
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from .._atomic import atomic_write
from ..errors import InputError
from . import _style, convergence, flow, residuals, scheme, series, shift, well
from ._common import FigureRequest, ResultView, level_label, pretty_units

__all__ = [
    "DEFAULT_DPI",
    "FORMATS",
    "KINDS",
    "FigureKind",
    "FigureRequest",
    "level_label",
    "make_figure",
    "pretty_units",
    "save_figure",
]

DEFAULT_DPI = 120  # sharp on screen, small files; pass dpi=300 for print
FORMATS = ("png", "pdf", "svg")


@dataclass(frozen=True)
class FigureKind:
    """One kind of figure.

    Attributes
    ----------
    name : str
        The ``--kind`` name.
    summary : str
        One line for help texts.
    draw : callable
        ``draw(view, request) -> Figure``.
    options : frozenset of str
        The options of :func:`make_figure` this kind uses.
    size : (float, float)
        Default size in inches.
    """

    name: str
    summary: str
    draw: Callable[[ResultView, FigureRequest], Any]
    options: frozenset[str]
    size: tuple[float, float]


KINDS: dict[str, FigureKind] = {
    "flow": FigureKind("flow", "energies against the scanned parameter per channel: "
                       "diagonaliser, perturbative partial sums, resummed values",
                       flow.draw, flow.OPTIONS, flow.SIZE),
    "shift": FigureKind("shift", "anharmonic shifts against the scanned parameter with the "
                        "low-order perturbative ones (log-log with log=True)",
                        shift.draw, shift.OPTIONS, shift.SIZE),
    "series": FigureKind("series", "|E_k| against order k with a large-order fit, and the "
                         "partial sums beside the exact level", series.draw, series.OPTIONS,
                         series.SIZE),
    "convergence": FigureKind("convergence", "|E(N) - E_inf| against basis size N, and energy "
                              "against basis length or size with the extrapolated value",
                              convergence.draw, convergence.OPTIONS, convergence.SIZE),
    "well": FigureKind("well", "the well with its levels and probability densities at one "
                       "scan point in one channel", well.draw, well.OPTIONS, well.SIZE),
    "scheme": FigureKind("scheme", "level scheme: levels per channel with spectroscopic "
                         "labels beside the reference oscillator's shells",
                         scheme.draw, scheme.OPTIONS, scheme.SIZE),
    "residuals": FigureKind("residuals", "residuals of a fit per datum in standard "
                            "uncertainties, with the 1 and 2 sigma bands", residuals.draw,
                            residuals.OPTIONS, residuals.SIZE),
}

_OPTION_DEFAULTS = {"channel": None, "scan_index": None, "levels": None, "orders": None,
                    "methods": None, "log": False, "basis_size": None, "size": None,
                    "title": None}


def _check_size(name: str, size: Any) -> tuple[float, float] | None:
    if size is None:
        return None
    try:
        w, h = (float(v) for v in size)
    except (TypeError, ValueError):
        raise InputError(f"{name}: expected (width, height) in inches; got {size!r}") from None
    if not (math.isfinite(w) and math.isfinite(h) and 0.5 <= w <= 60 and 0.5 <= h <= 60):
        raise InputError(f"{name}: width and height must be between 0.5 and 60 inches; "
                         f"got {size!r}")
    return w, h


def _tuple(value: Any) -> tuple | None:
    if value is None:
        return None
    if isinstance(value, (str, int)):
        return (value,)
    return tuple(value)


def make_figure(dataset: Any, kind: str, *, channel: str | int | Sequence[str | int] | None = None,
                scan_index: int | None = None, levels: Sequence[int] | int | None = None,
                orders: Sequence[int] | int | None = None,
                methods: Sequence[str] | str | None = None, log: bool = False,
                basis_size: int | None = None, size: tuple[float, float] | None = None,
                title: str | None = None) -> Any:
    """Draw one figure of a result.

    Parameters
    ----------
    dataset
        A result :class:`xarray.Dataset` (DESIGN §6), or the path of a result file.
    kind
        One of :data:`KINDS`: ``flow``, ``shift``, ``series``, ``convergence``, ``well``,
        ``scheme``, ``residuals`` (a fit's residuals; needs a result with a fit).
    channel
        Channel label (``"d5/2"``) or 0-based position, or several (``flow``, ``shift``,
        ``scheme``); default: every channel for those, the first for the others.
    scan_index
        Scan point of ``series``, ``convergence``, ``well`` and ``scheme``; default the last
        (λ = 1 for a coupling scan); negative values count from the end.
    levels
        0-based level indices per channel; default: all (``series``, ``convergence``: the
        lowest; ``well``, ``scheme``: the bound ones).
    orders
        Orders k whose RS partial sums are drawn in ``flow`` and ``shift`` (default 1 and 2).
    methods
        Resummation methods drawn (``flow``, ``series``); default all in the file.
    log
        Log–log axes for ``shift`` (|shift| against the parameter, with the low-order slope).
    basis_size
        N of the energy-against-length panel of ``convergence`` (default the largest).
    size
        (width, height) in inches; default per kind.
    title
        Replaces the case title (the ``title`` attribute).

    Returns
    -------
    matplotlib.figure.Figure

    Raises
    ------
    ValueError
        With one line naming the problem: an unknown kind, a channel, level, order or scan
        point the file does not have, an option the kind does not use, or a variable the
        figure needs that is missing from the file.
    """
    if not isinstance(kind, str) or kind not in KINDS:
        raise InputError(f"kind: unknown figure kind {kind!r}; expected one of "
                         f"{', '.join(KINDS)}")
    spec = KINDS[kind]
    given = {"channel": channel, "scan_index": scan_index, "levels": levels, "orders": orders,
             "methods": methods, "log": log, "basis_size": basis_size, "size": size,
             "title": title}
    for name, value in given.items():
        if name not in spec.options and value != _OPTION_DEFAULTS[name]:
            users = [k for k, s in KINDS.items() if name in s.options]
            raise InputError(f"{name}: not an option of the {kind} figure (it applies to "
                             f"{', '.join(users)})")
    if not isinstance(log, bool):
        raise InputError(f"log: must be true or false; got {log!r}")
    if title is not None and not isinstance(title, str):
        raise InputError(f"title: must be text; got {title!r}")
    request = FigureRequest(kind=kind, channel=channel, scan_index=scan_index,
                            levels=_tuple(levels), orders=_tuple(orders),
                            methods=_tuple(methods), log=log, basis_size=basis_size,
                            size=_check_size("size", size), title=title)
    ds = _open(dataset)
    from matplotlib import rc_context

    with rc_context(_style.RC):
        return spec.draw(ResultView(ds, kind), request)


def _open(dataset: Any) -> Any:
    if isinstance(dataset, (str, os.PathLike)):
        from ..store import read_dataset

        return read_dataset(dataset)
    if not (hasattr(dataset, "data_vars") and hasattr(dataset, "attrs")):
        raise InputError(f"dataset: expected an xarray.Dataset or a result file path; got "
                         f"{type(dataset).__name__}")
    return dataset


def save_figure(fig: Any, path: str | os.PathLike, dpi: float | None = None,
                size: tuple[float, float] | None = None) -> Path:
    """Write a figure as PNG, PDF or SVG (chosen by the suffix), atomically.

    Parameters
    ----------
    fig
        A figure from :func:`make_figure`.
    path
        Target file; ``.png``, ``.pdf`` or ``.svg``.
    dpi
        Resolution (PNG pixels = inches · dpi); default :data:`DEFAULT_DPI`.
    size
        (width, height) in inches, replacing the figure's size.

    Returns
    -------
    pathlib.Path
        The file written.

    Notes
    -----
    The image goes to a temporary file in the target folder that is renamed into place, so a
    reader never sees half a file and an interrupted save leaves the old file whole.
    """
    target = Path(path)
    fmt = target.suffix.lower().lstrip(".")
    if fmt not in FORMATS:
        raise InputError(f"output: unknown image format {target.suffix or '(no suffix)'!r} "
                         f"of {target}; expected .png, .pdf or .svg")
    folder = target.parent
    if not folder.is_dir():
        raise InputError(f"output: the folder {folder} does not exist")
    if dpi is not None and (isinstance(dpi, bool) or not isinstance(dpi, (int, float))
                            or not math.isfinite(dpi) or not 10 <= dpi <= 2400):
        raise InputError(f"dpi: must be a number between 10 and 2400; got {dpi!r}")
    wh = _check_size("size", size)
    if wh is not None:
        fig.set_size_inches(*wh)
    from matplotlib import rc_context

    from .._version import __version__

    software = f"anharmony {__version__}"
    metadata = {"png": {"Software": software},
                "pdf": {"Creator": software, "Producer": software, "CreationDate": None},
                "svg": {"Creator": software, "Date": None}}[fmt]

    def write(tmp: str) -> None:
        with rc_context(_style.RC):
            fig.savefig(tmp, format=fmt, dpi=dpi or DEFAULT_DPI, metadata=metadata)

    return atomic_write(target, write, f".tmp.{fmt}")
