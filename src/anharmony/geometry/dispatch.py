"""``anharmony.solve(..., geometry=...)``: the Cartesian and axial geometries behind ``solve``.

:func:`anharmony.solve` stays the central-channel solver by default; with
``geometry="cartesian"`` or ``"axial"`` (or any of the geometry arguments) it hands the call
to :func:`solve_in_geometry`, which checks the combination of arguments and calls
:func:`~anharmony.geometry.solve_geometry` with the same well, units, mass and level count.

How ``solve``'s central arguments map (DESIGN §10, docs/geometries.md):

- ``l`` and ``j`` name central channels: refused when written (blocks are chosen by
  ``parity`` and ``omega``);
- ``size`` counts the states of one channel: refused when written, the basis is cut by
  ``shells`` (N_max, default :data:`DEFAULT_SHELLS`) — a count of states would cut through
  an oscillator shell and break the degeneracies the geometry is meant to show;
- ``length``: ``"auto"`` (lengths from the Hessian at the minimum, or the reference
  oscillator of a central well) or one number, used on every axis;
- ``reference`` and ``tolerance``: refused when written (no reference series and no
  ``converged`` flag here; ``error_estimate`` comes from the nested truncations below N_max,
  :func:`~anharmony.geometry.nested.nested_error`).
"""

from __future__ import annotations

import math
from typing import Any

from .._checks import got
from .._defaults import is_unset
from ..errors import InputError
from .solve import GEOMETRIES, GeometrySpectrum, solve_geometry

__all__ = ["DEFAULT_SHELLS", "SOLVE_GEOMETRIES", "solve_in_geometry"]

SOLVE_GEOMETRIES = ("central", *GEOMETRIES)
DEFAULT_SHELLS = 12  # N_max when shells is left out (solve_geometry's default)

_ONLY_OTHER = {  # argument → what it is for, when given with the central geometry
    "omega": "selects an Ω block of geometry='axial'",
    "parity": "selects blocks of geometry='cartesian' or 'axial' (a central channel has "
              "parity (-1)^l; in 1D l=0/1 are the parities)",
    "shells": "cuts the basis of geometry='cartesian' or 'axial' (a central channel is "
              "sized by size)",
    "truncation": "chooses the cut of geometry='cartesian' or 'axial'",
}


def solve_in_geometry(well: Any, dimension: Any, l: Any, j: Any, *, geometry: Any,
                      omega: Any, parity: Any, shells: Any, truncation: Any, size: Any,
                      length: Any, units: Any, mass: Any, levels: Any, reference: Any,
                      tolerance: Any) -> GeometrySpectrum:
    """The checks of :func:`anharmony.solve` for ``geometry=``, then :func:`solve_geometry`."""
    if not isinstance(geometry, str) or geometry not in SOLVE_GEOMETRIES:
        raise InputError(f"geometry: expected one of {', '.join(SOLVE_GEOMETRIES)}; "
                         f"{got(geometry)}")
    given = {"omega": omega, "parity": parity, "shells": shells, "truncation": truncation}
    if geometry == "central":
        name = next(k for k, v in given.items() if v is not None)
        raise InputError(f"{name}: {_ONLY_OTHER[name]}; got {name}={given[name]!r} with "
                         "geometry='central'")
    blocks = "parity triples" if geometry == "cartesian" else "Λ^π blocks"
    if not (is_unset(l) or l is None):
        raise InputError(f"l: the {geometry} geometry has no l channels (its blocks are "
                         f"{blocks}); leave l out and choose blocks with parity"
                         + (" or omega" if geometry == "axial" else "") + f"; got l={l!r}")
    if j is not None:
        raise InputError(f"j: the {geometry} geometry has no (l, j) channels, and spin–orbit "
                         f"terms are not available in it yet; got j={j!r}")
    if not is_unset(size):
        raise InputError(f"size: counts the states of one central channel; the {geometry} "
                         f"basis is cut by shells=N_max instead (default {DEFAULT_SHELLS}); "
                         f"got size={size!r}")
    if not is_unset(tolerance):
        raise InputError(f"tolerance: the {geometry} geometry reports error_estimate (from "
                         "the nested truncations below N_max) but no converged flag; leave "
                         f"tolerance out; got tolerance={tolerance!r}")
    if not (isinstance(reference, str) and reference == "auto"):
        raise InputError(f"reference: the {geometry} geometry takes its basis from the "
                         "Hessian at the minimum (or a central well's reference oscillator); "
                         "give length= for one length on every axis, or per-axis lengths and "
                         "centres to anharmony.solve_geometry; "
                         f"got reference={reference!r}")
    if isinstance(length, str) and length == "auto":
        lengths = None
    elif isinstance(length, bool) or not isinstance(length, (int, float)) or \
            not math.isfinite(length) or length <= 0:
        raise InputError(f"length: must be a positive number (one length on every axis) or "
                         f"'auto'; {got(length)}")
    else:
        lengths = [float(length)]
    return solve_geometry(well, dimension, geometry=geometry, omega=omega, parity=parity,
                          shells=DEFAULT_SHELLS if shells is None else shells,
                          lengths=lengths, truncation="shells" if truncation is None
                          else truncation, units=units, mass=mass, levels=levels)
