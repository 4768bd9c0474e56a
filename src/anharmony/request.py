"""Validation of a channel request: the one check of (well, dimension, l, j, units, mass),
shared by solve, series and convergence, and the checks of levels and lengths."""

from __future__ import annotations

import math
from typing import Any

import numpy as np

from .errors import InputError
from .hamiltonian import Channel, parse_j
from .units import UnitSystem, get_units
from .well import Well

__all__ = ["resolve_channel"]


def _channel_from(dimension: int, l: int | None, j: Any) -> Channel:
    if isinstance(dimension, bool) or dimension not in (1, 2, 3):
        raise InputError(f"dimension: must be 1, 2 or 3; got {dimension!r}")
    return Channel(dimension, l, parse_j(j))


def resolve_channel(well: Well, dimension: int, l: int | None, j: Any,
                    units: str | UnitSystem, mass: float | None) -> tuple[Well, Channel]:
    """Validate a channel request against a well; return the well in ``units`` and the channel.

    Raises ``ValueError`` naming the argument: a bad dimension, l or j, j missing where the
    well has spin–orbit terms, or a 1D parity channel of a well that is not symmetric; a
    :class:`TermError` for a formula not in the channel's coordinate (``Well.check_channel``).
    """
    if not isinstance(well, Well):
        raise TypeError(f"well: expected an anharmony.Well; got {type(well).__name__}")
    system = get_units(units)
    if mass is not None and (isinstance(mass, bool) or not isinstance(mass, (int, float))
                             or not math.isfinite(mass) or mass <= 0):
        raise InputError(f"mass: must be a positive number; got {mass!r}")
    well = well.with_context(system, mass)
    channel = _channel_from(dimension, l, j)
    well.check_channel(channel.dimension)
    if well.has_spin_orbit and channel.dimension == 3 and channel.l and channel.j is None:
        raise InputError(f"j: required with spin_orbit terms (l = {channel.l}: "
                         f"j = {channel.l - 0.5} or {channel.l + 0.5})")
    if channel.dimension == 1 and channel.l is not None and not well.is_symmetric(0.0):
        raise InputError("l: 1D parity channels need a well symmetric about x = 0; use l=None "
                         "for the basis without symmetry")
    return well, channel


def _check_levels(levels: Any, size: int) -> int:
    if isinstance(levels, bool) or not isinstance(levels, (int, np.integer)) or levels < 1:
        raise InputError(f"levels: must be an integer >= 1; got {levels!r}")
    if levels > size:
        raise InputError(f"levels: {levels} levels need a basis of at least that size; "
                         f"got size={size}")
    return int(levels)


def _positive(name: str, value: Any) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float, np.integer, np.floating)) \
            or not math.isfinite(value) or value <= 0:
        raise InputError(f"{name}: must be a positive number; got {value!r}")
    return float(value)
