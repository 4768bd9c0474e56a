"""One channel of a well, resolved once for every convergence tool.

The convergence tools all need the same things: the well in its unit system, the channel, the
reference oscillator (for the starting length and, in 1D, the centre), the threshold, ħ²/2m, and
the part of the potential that is not folded into the kinetic matrix (everything but the
inverse-square terms, plus the spin–orbit form times ⟨l·s⟩). :func:`make_problem` validates the
arguments the way :func:`anharmony.solve` does and returns a frozen :class:`Problem`.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

import numpy as np

from ..basis import HermiteBasis, RadialBasis
from ..hamiltonian import (
    Channel,
    ChannelMatrices,
    channel_hamiltonian,
    effective_lambda,
    make_basis,
)
from ..spectrum import Reference, reference_oscillator, resolve_channel
from ..terms import Term
from ..units import UnitSystem
from ..well import Well

__all__ = ["Problem", "make_problem"]


@dataclass(frozen=True)
class Problem:
    """A resolved channel of a well (internal to :mod:`anharmony.convergence`)."""

    well: Well
    channel: Channel
    reference: Reference
    center: float
    threshold: float
    hbar2_2m: float
    units: UnitSystem
    mass: float | None
    lam: float | None  # effective λ when inverse-square terms are absorbed
    rest: tuple[Term, ...]  # central terms left for the potential matrix

    @property
    def radial(self) -> bool:
        return self.channel.l is not None

    @property
    def nu(self) -> float:
        """ν = λ + d/2 − 1 of the radial channel (−1/2 and 1/2 for the 1D parities)."""
        lam = float(self.channel.l if self.lam is None else self.lam)
        return lam + 0.5 * self.channel.dimension - 1.0

    @property
    def lowest_shell(self) -> float:
        """Angular part of the highest-shell formula N = 2(size − 1) + λ (0 in 1D)."""
        if not self.radial:
            return 0.0
        return float(self.channel.l if self.lam is None else self.lam)

    def basis(self, size: int, length: float) -> HermiteBasis | RadialBasis:
        return make_basis(self.well, self.channel, size, length, self.center)

    def hamiltonian(self, size: int, length: float) -> ChannelMatrices:
        return channel_hamiltonian(self.well, self.channel, size, length, self.center)

    def frequency(self, length: float) -> float:
        return 2.0 * self.hbar2_2m / length**2

    def potential(self, coords: np.ndarray) -> np.ndarray:
        """Potential not contained in the kinetic matrix, at physical coordinates."""
        coords = np.asarray(coords, dtype=float)
        out = np.zeros_like(coords)
        with np.errstate(all="ignore"):
            for t in self.rest:
                out = out + t.value(coords)
            if self.well.has_spin_orbit and self.channel.ls != 0.0:
                out = out + self.channel.ls * self.well.spin_orbit_value(coords)
        return out

    @property
    def polynomial(self) -> bool:
        """True when every matrix of the channel is exact and banded (a polynomial well)."""
        if self.well.has_spin_orbit and self.channel.ls != 0.0:
            return False
        return all(t.quadrature(self.radial) == "exact" for t in self.rest)

    @property
    def smooth(self) -> bool:
        """True when the well is analytic in the basis variable (fast, super-algebraic UV).

        Terms exact or integrated on the basis' own weight are analytic in x (1D) or r²
        (radial), so the oscillator basis converges faster than any power of N (common
        practice, no source); terms that need panels are not.
        """
        if self.well.has_spin_orbit and self.channel.ls != 0.0:
            return False
        return all(t.quadrature(self.radial) != "panels" for t in self.rest)

    @property
    def breaks(self) -> tuple[float, ...]:
        """Coordinates where a term has a kink (Coulomb sphere radius, power-law centre)."""
        return tuple(sorted({x for t in self.rest for x in t.breaks(self.radial)}))


def make_problem(well: Well, dimension: int, l: int | None, j: Any,
                 units: str | UnitSystem, mass: float | None, levels: int,
                 reference: str | Mapping[str, float]) -> Problem:
    """Validate the channel arguments as :func:`anharmony.solve` does and resolve them."""
    if not isinstance(well, Well):
        raise TypeError(f"well: expected an anharmony.Well; got {type(well).__name__}")
    if isinstance(dimension, bool) or dimension not in (1, 2, 3):
        raise ValueError(f"dimension: must be 1, 2 or 3; got {dimension!r}")
    well, channel = resolve_channel(well, dimension, l, j, units, mass)
    system = well.units
    ref = reference_oscillator(well, dimension, l, None, levels, reference, channel.j)
    radial = channel.l is not None
    lam, rest = effective_lambda(well, channel)
    return Problem(
        well=well, channel=channel, reference=ref, center=0.0 if radial else ref.center,
        threshold=float(well.threshold(dimension, symmetric=radial)),
        hbar2_2m=system.hbar2_over_2m(mass), units=system, mass=mass, lam=lam, rest=rest)


def check_count(name: str, value: Any, minimum: int = 1) -> int:
    """An integer ≥ ``minimum``, or a ValueError naming the parameter."""
    if isinstance(value, bool) or not isinstance(value, (int, np.integer)) or value < minimum:
        raise ValueError(f"{name}: must be an integer >= {minimum}; got {value!r}")
    return int(value)


def check_positive(name: str, value: Any) -> float:
    """A finite positive number, or a ValueError naming the parameter."""
    if isinstance(value, bool) or not isinstance(value, (int, float, np.integer, np.floating)) \
            or not math.isfinite(value) or value <= 0:
        raise ValueError(f"{name}: must be a positive number; got {value!r}")
    return float(value)
