"""Channel matrices: kinetic (with centrifugal), central well and spin–orbit.

A channel is one block of the Hamiltonian: the 1D basis without symmetry, a 1D parity, or an
(l) / (l, j) channel of a central well in d = 2, 3 (DESIGN §2). Each term says how its matrix
is made (:meth:`Term.quadrature`): polynomials exactly through the basis' coordinate powers,
others by adaptive Gauss quadrature on the basis' weight or on panels with edges at the
term's kinks (:meth:`Term.breaks`). An inverse-square term g/r² (:attr:`Term.inverse_square`)
is absorbed exactly into the centrifugal term by an effective angular momentum λ with
λ(λ + d − 2) = l(l + d − 2) + g / (ħ²/2m). A term that cannot be solved in a channel says so
(:meth:`Term.check_channel`); no term is ever left out of a channel silently.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from fractions import Fraction

import numpy as np

from .basis import HermiteBasis, RadialBasis
from .errors import InputError
from .labels import L_LETTERS, channel_label, level_label
from .terms import Term
from .units import UnitSystem
from .well import Well

__all__ = ["L_LETTERS", "Channel", "ChannelMatrices", "channel_hamiltonian", "level_label",
           "make_basis", "parse_j"]



def parse_j(j: float | str | None) -> float | None:
    """Read j as a number (2.5) or a string ("5/2"); ``None`` stays ``None``."""
    if j is None:
        return None
    if isinstance(j, str):
        try:
            value = float(Fraction(j.strip()))
        except (ValueError, ZeroDivisionError):
            raise InputError(f"j: expected a half-integer like 2.5 or '5/2'; got {j!r}") from None
    elif isinstance(j, bool) or not isinstance(j, (int, float, np.integer, np.floating)):
        raise TypeError(f"j: expected a half-integer like 2.5 or '5/2'; got {j!r}")
    else:
        value = float(j)
    if not (value > 0 and (2 * value) % 2 == 1):
        raise InputError(f"j: must be a positive half-integer; got {j!r}")
    return value


@dataclass(frozen=True)
class Channel:
    """One channel of a well: dimension, angular quantum number and (optionally) j.

    ``l`` is ``None`` for the 1D basis without symmetry; 0/1 are the even/odd 1D parities.
    """

    dimension: int
    l: int | None = 0
    j: float | None = None

    def __post_init__(self) -> None:
        if self.dimension not in (1, 2, 3):
            raise InputError(f"dimension: must be 1, 2 or 3; got {self.dimension!r}")
        if self.l is None:
            if self.dimension != 1:
                raise InputError("l: required for a central well in 2 or 3 dimensions")
        elif isinstance(self.l, bool) or not isinstance(self.l, (int, np.integer)) or self.l < 0:
            raise InputError(f"l: must be a non-negative integer; got {self.l!r}")
        elif self.dimension == 1 and self.l > 1:
            raise InputError(f"l: in 1D must be 0 (even), 1 (odd) or None; got {self.l!r}")
        if self.j is not None:
            if self.dimension != 3 or self.l is None:
                raise InputError("j: only 3D channels carry spin 1/2")
            if abs(self.j - self.l) != 0.5:
                raise InputError(f"j: must be l ± 1/2 = {self.l - 0.5 if self.l else 0.5}"
                                 f"{'' if not self.l else f' or {self.l + 0.5}'}; got {self.j}")

    @property
    def ls(self) -> float:
        """⟨l·s⟩ = [j(j+1) − l(l+1) − 3/4]/2 (0 without spin)."""
        if self.j is None:
            return 0.0
        return 0.5 * (self.j * (self.j + 1) - self.l * (self.l + 1) - 0.75)

    @property
    def label(self) -> str:
        """``x``, ``even``/``odd``, ``m=2`` (2D), ``d`` or ``d5/2`` (3D), atomic letters; see
        :func:`anharmony.labels.channel_label` for the nuclear ones."""
        return channel_label(self.dimension, self.l, self.j)

    def level_label(self, n: int, *, convention: str | None = None,
                    units: str | UnitSystem | None = None) -> str:
        """Label of level n (0-based radial index) of this channel; see :func:`level_label`."""
        return level_label(self.dimension, -1 if self.l is None else self.l, self.j, n,
                           convention=convention, units=units)


@dataclass(frozen=True)
class ChannelMatrices:
    """The Hamiltonian of one channel, split by origin, in the well's energy unit.

    ``combined``: the spin–orbit part ⟨l·s⟩ V_ls was integrated together with the potential's
    panel terms (one quadrature, see :func:`channel_hamiltonian`); ``potential`` then holds
    both and ``spin_orbit`` is zero.
    """

    kinetic: np.ndarray
    potential: np.ndarray
    spin_orbit: np.ndarray
    basis: HermiteBasis | RadialBasis
    bandwidth: int | None
    hbar_omega: float
    combined: bool = False

    @property
    def total(self) -> np.ndarray:
        return self.kinetic + self.potential + self.spin_orbit


def effective_lambda(well: Well, channel: Channel) -> tuple[float | None, tuple[Term, ...]]:
    """λ absorbing the inverse-square terms, and the terms left for the potential matrix.

    Raises
    ------
    InputError
        If a term of the well cannot be solved in this channel (:meth:`Term.check_channel`),
        e.g. an inverse-square barrier on the line without symmetry, a term that is not
        central in a radial channel, or spin–orbit without j.
    """
    inv_sq = [t for t in well.central_terms if t.inverse_square is not None]
    rest = tuple(t for t in well.central_terms if t.inverse_square is None)
    lam = None
    if channel.l is not None and inv_sq:
        g = sum(t.inverse_square for t in inv_sq)
        d, l = channel.dimension, channel.l
        c = well.units.hbar2_over_2m(well.mass)
        disc = 0.25 * (d - 2) ** 2 + l * (l + d - 2) + g / c
        if disc < 0:
            raise InputError(f"power: an attractive inverse-square strength {g} is below the "
                             "critical value (the particle falls to the centre)")
        lam = -0.5 * (d - 2) + math.sqrt(disc)
    for t in well.terms:
        t.check_channel(channel.dimension, channel.l, channel.j, lam)
    if channel.dimension == 1 and channel.l is not None and not well.is_symmetric(0.0):
        raise InputError("l: 1D parity channels need a well symmetric about x = 0; use l=None "
                         "for the basis without symmetry")
    return lam, rest


def make_basis(well: Well, channel: Channel, size: int, length: float, center: float = 0.0
               ) -> HermiteBasis | RadialBasis:
    """The oscillator basis of a channel (with λ from inverse-square terms)."""
    lam, _ = effective_lambda(well, channel)
    if channel.l is None:
        return HermiteBasis(size, length, center)
    return RadialBasis(size, length, channel.l, channel.dimension, lam)


def channel_hamiltonian(well: Well, channel: Channel, size: int, length: float,
                        center: float = 0.0, mass: float | None = None, *,
                        combined: bool = False) -> ChannelMatrices:
    """Matrices of one channel in the oscillator basis of length ``length``.

    Parameters
    ----------
    well
        The well, in its unit system.
    channel
        The channel.
    size
        Number of basis states.
    length
        Oscillator length b of the basis.
    center
        Basis centre x₀ (1D without symmetry only; radial bases are centred at r = 0, and a
        term's centre there is a radius).
    mass
        Particle mass; defaults to the well's.
    combined
        Integrate the spin–orbit term and the potential's panel terms as one function on one
        quadrature rule (half the work of a first build; :attr:`ChannelMatrices.combined`).
    """
    if mass is not None:
        well = well.with_context(well.units, mass)
    well.check_channel(channel.dimension)
    radial = channel.l is not None
    if radial:
        center = 0.0
    lam, terms = effective_lambda(well, channel)
    basis = (HermiteBasis(size, length, center) if not radial
             else RadialBasis(size, length, channel.l, channel.dimension, lam))
    c = well.units.hbar2_over_2m(well.mass)
    hw = 2.0 * c / length**2
    kinetic = hw * basis.kinetic()
    n = basis.size

    exact = np.zeros((n, n))
    band = 2 if not radial else 1
    by_kind: dict[str, list[Term]] = {"weight": [], "panels": []}
    for t in terms:
        kind = t.quadrature(radial)
        if kind != "exact":
            by_kind[kind].append(t)
            continue
        shift = t.center - center
        for p, coef in t.polynomial().items():
            # (x - c_t)^p = (ξ b − shift)^p expanded in ξ = (x − x0)/b
            for k in range(p + 1):
                w = coef * math.comb(p, k) * (-shift) ** (p - k) * length**k
                if w == 0.0:
                    continue
                exact += w * basis.coordinate_power(k) if k else w * np.eye(n)
                band = max(band, k if not radial else k // 2)
    potential = exact
    if by_kind["weight"]:
        potential = potential + basis.matrix(_summed(by_kind["weight"]), kind="weight")
    so = np.zeros((n, n))
    with_so = well.has_spin_orbit and channel.ls != 0.0
    panels: list = list(by_kind["panels"])
    fuse = combined and with_so
    if fuse:
        panels.append(_SpinOrbitPart(well.spin_orbit_value, channel.ls))
    if panels:
        breaks = sorted({x for t in panels for x in t.breaks(radial)})
        potential = potential + basis.matrix(_summed(panels), kind="panels", breaks=breaks)
    if with_so and not fuse:
        so = channel.ls * basis.matrix(well.spin_orbit_value, kind="panels")
    quadrature = by_kind["weight"] or panels
    bandwidth = band if not (quadrature or np.any(so)) else None
    return ChannelMatrices(kinetic, potential, so, basis, bandwidth, hw, fuse)


@dataclass(frozen=True)
class _SpinOrbitPart:
    """⟨l·s⟩ V_ls(r) as one more panel term of a combined quadrature."""

    value_of: object
    ls: float

    def value(self, r):
        return self.ls * self.value_of(r)  # type: ignore[operator]

    def breaks(self, radial):
        return ()


def _summed(terms):
    def f(x):
        out = np.zeros_like(np.asarray(x, dtype=float))
        for t in terms:
            out = out + t.value(x)
        return out

    return f
