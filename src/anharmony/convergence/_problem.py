"""One channel of a well, resolved once for every convergence tool.

The convergence tools all need the same things: the well in its unit system, the channel, the
reference oscillator (for the starting length and, in 1D, the centre), the threshold, ħ²/2m, and
the part of the potential that is not folded into the kinetic matrix (everything but the
inverse-square terms, plus the spin–orbit form times ⟨l·s⟩). :func:`make_problem` validates the
arguments the way :func:`anharmony.solve` does and returns a frozen :class:`Problem`.
"""

from __future__ import annotations

import re
from collections.abc import Callable, Mapping
from dataclasses import dataclass, replace
from typing import Any, TypeVar

import numpy as np

from .._checks import integer
from ..basis import HermiteBasis, RadialBasis
from ..hamiltonian import (
    Channel,
    ChannelMatrices,
    channel_hamiltonian,
    effective_lambda,
    make_basis,
)
from ..reference import Reference, basis_centre, reference_oscillator
from ..request import resolve_channel
from ..terms import Term
from ..units import UnitSystem
from ..well import Well

F = TypeVar("F", bound=Callable[..., Any])

__all__ = ["Problem", "make_problem", "shared_docs", "with_covering_centre"]

# Parameter entries every convergence front end shares with :func:`anharmony.solve` (numpydoc),
# put into a docstring where a line holds only the marker ``[name]``
SHARED_DOCS = {
    "channel parameters": """\
well : Well
    The well (:meth:`anharmony.Well.from_terms`).
dimension : {1, 2, 3}
    Dimension of the space.
l : int or None
    Angular quantum number; in 1D ``None`` is the line without symmetry, 0/1 the even/odd
    parity of a symmetric well.
j : float, str or None
    Total angular momentum (3D with spin–orbit terms): 2.5 or ``"5/2"``.""",
    "units and mass": """\
units : str or UnitSystem
    Unit system of DESIGN §5.
mass : float or None
    Particle mass in the system's mass unit (default per system).""",
}


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
    center_reason: str = "the reference oscillator's centre"

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


def shared_docs(func: F) -> F:
    """Put the :data:`SHARED_DOCS` entries into ``func``'s docstring at their markers."""
    def put(match: re.Match[str]) -> str:
        indent, key = match.group(1), match.group(2)
        return "\n".join(indent + line for line in SHARED_DOCS[key].splitlines())

    if func.__doc__:
        func.__doc__ = re.sub(r"^( *)\[(.+?)\]$", put, func.__doc__, flags=re.MULTILINE)
    return func


def make_problem(well: Well, dimension: int, l: int | None, j: float | str | None,
                 units: str | UnitSystem, mass: float | None, levels: int,
                 reference: str | Mapping[str, float]) -> Problem:
    """Validate the channel arguments as :func:`anharmony.solve` does and resolve them.

    The well, dimension, l, j, units and mass are checked by the same code as
    :func:`anharmony.solve` (:func:`anharmony.spectrum.resolve_channel`), so a bad value gets
    the same error; ``levels`` by :func:`anharmony._checks.integer`.
    """
    levels = integer("levels", levels, 1)
    well, channel = resolve_channel(well, dimension, l, j, units, mass)
    system = well.units
    ref = reference_oscillator(well, dimension, l, None, levels, reference, channel.j)
    radial = channel.l is not None
    lam, rest = effective_lambda(well, channel)
    return Problem(
        well=well, channel=channel, reference=ref, center=0.0 if radial else ref.center,
        threshold=float(well.threshold(dimension, symmetric=radial)),
        hbar2_2m=system.hbar2_over_2m(mass), units=system, mass=mass, lam=lam, rest=rest)


def with_covering_centre(problem: Problem, levels: int, tolerance: float, size: int
                         ) -> Problem:
    """The problem with the basis centre of :func:`anharmony.reference.basis_centre` for a
    basis of ``size`` states (the line without symmetry: the centre of the phase-space disk
    that holds the highest requested level's orbit and its tails to ``tolerance``, as deep as
    that basis allows); other channels unchanged."""
    if problem.radial:
        return problem
    x0, why = basis_centre(problem.well, problem.channel, levels, tolerance,
                           problem.reference, size)
    return replace(problem, center=float(x0), center_reason=why)
