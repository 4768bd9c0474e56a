"""Axial (cylindrical) oscillator basis for wells symmetric about the z axis.

|n_ρ Λ n_z⟩ = R_{n_ρ}^{|Λ|}(ρ) e^{iΛφ}/√(2π) · φ_{n_z}((z − c_z)/b_z): the 2D radial oscillator
functions of :class:`anharmony.basis.RadialBasis` (dimension 2, l = |Λ|, length b_⊥) times
Hermite functions of :class:`anharmony.basis.HermiteBasis` (length b_z). A well symmetric about
z conserves Λ, so one Λ is one block (its matrices do not depend on the sign of Λ); a well also
even in z − c_z conserves the parity π = (−1)^{Λ + n_z} and the block splits in two.

Kinetic energy (with the centrifugal Λ²/ρ² term) and polynomials in ρ² and z are exact
(products of the banded 1D matrices); everything else by the tensor product of the 2D radial
Gauss–Laguerre rule (in t = ρ²/b_⊥²) and the Gauss–Hermite rule in z, contracted z first.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from functools import cached_property, lru_cache

import numpy as np

from ..basis import HermiteBasis, RadialBasis
from .cartesian import PANEL_RTOL, QUADRATURE_RTOL, contract_first_axis, settle

__all__ = ["AxialBasis"]


@lru_cache(maxsize=256)
def _rule(basis: RadialBasis | HermiteBasis, points: int, kind: str, breaks: tuple
          ) -> tuple[np.ndarray, np.ndarray]:
    """The 1D rule of a factor basis (frozen, hence a safe key): the settle loop, both parity
    blocks and the potential and spin–orbit integrals of one Λ ask for the same rules."""
    nodes, u = basis.quadrature(points, kind, breaks)
    nodes.setflags(write=False)
    u.setflags(write=False)
    return nodes, u


class AxialBasis:
    """The states (n_ρ, n_z) of one |Λ|.

    Parameters
    ----------
    states
        Int array (states, 2) of (n_ρ, n_z).
    lam
        |Λ|.
    lengths
        (b_⊥, b_z).
    center
        c_z, the centre along the axis.
    """

    def __init__(self, states: np.ndarray, lam: int, lengths: tuple[float, float],
                 center: float = 0.0) -> None:
        self.states = np.asarray(states, dtype=np.intp).reshape(-1, 2)
        self.lam = abs(int(lam))
        self.lengths = (float(lengths[0]), float(lengths[1]))
        self.center = float(center)

    @property
    def size(self) -> int:
        return len(self.states)

    @cached_property
    def radial(self) -> RadialBasis:
        return RadialBasis(int(self.states[:, 0].max()) + 1, self.lengths[0], self.lam, 2)

    @cached_property
    def axis(self) -> HermiteBasis:
        return HermiteBasis(int(self.states[:, 1].max()) + 1, self.lengths[1], self.center)

    def frequencies(self, hbar2_2m: float) -> np.ndarray:
        """(ħω_⊥, ħω_z) = 2 (ħ²/2m) / b²."""
        return np.array([2.0 * hbar2_2m / b**2 for b in self.lengths])

    def shells(self) -> np.ndarray:
        """Major shell N = 2n_ρ + |Λ| + n_z of each state."""
        return 2 * self.states[:, 0] + self.lam + self.states[:, 1]

    def _product(self, fr: np.ndarray | None, fz: np.ndarray | None, idx: np.ndarray
                 ) -> np.ndarray:
        s = self.states[idx]
        out = np.ones((len(idx), len(idx)))
        for col, f in ((0, fr), (1, fz)):
            n = s[:, col]
            out *= (n[:, None] == n[None, :]) if f is None else f[np.ix_(n, n)]
        return out

    def kinetic(self, idx: np.ndarray, hbar2_2m: float) -> np.ndarray:
        """ħω_⊥ T_⊥ (centrifugal part included) + ħω_z T_z, exact."""
        hw_perp, hw_z = self.frequencies(hbar2_2m)
        return (self._product(hw_perp * self.radial.kinetic(), None, idx)
                + self._product(None, hw_z * self.axis.kinetic(), idx))

    def polynomial(self, poly: dict[tuple[int, int], float], idx: np.ndarray) -> np.ndarray:
        """Exact matrix of Σ c ρ^p_ρ z^p_z (p_ρ even; z absolute)."""
        b_perp, b_z = self.lengths
        out = np.zeros((len(idx), len(idx)))
        for (pr, pz), c in poly.items():
            if c == 0.0:
                continue
            fr = b_perp**pr * self.radial.coordinate_power(pr) if pr else None
            fz = None
            if pz:
                fz = np.zeros((self.axis.size, self.axis.size))
                for k in range(pz + 1):
                    w = math.comb(pz, k) * self.center ** (pz - k) * b_z**k
                    if w != 0.0:
                        fz += w * (self.axis.coordinate_power(k) if k else np.eye(self.axis.size))
            out += c * self._product(fr, fz, idx)
        return out

    def quadrature(self, f: Callable[[np.ndarray, np.ndarray], np.ndarray], idx: np.ndarray,
                   rtol: float | None = None, kind: str = "weight") -> np.ndarray:
        """⟨s|f(ρ, z)|s′⟩ on the states ``idx``, grown until settled (see ``settle``).

        ``kind="weight"``: Gauss–Laguerre in ρ²/b_⊥² times Gauss–Hermite in z (exponential
        convergence for f analytic in ρ² and z); ``"panels"``: the bases' composite
        Gauss–Legendre rules, with a panel edge at z = 0 (a central term with a cusp at r = 0).
        """
        if rtol is None:
            rtol = QUADRATURE_RTOL if kind == "weight" else PANEL_RTOL
        if kind == "weight":
            return settle(lambda m: self._quad(f, idx, m, kind),
                          [self.radial.size + 16, self.axis.size + 16], rtol, "axial")
        start = [self.radial.size + 24, self.axis.size + 24]  # the bases' first panel level
        return settle(lambda m: self._quad(f, idx, m, kind), start, rtol, "axial",
                      lambda m: int(1.35 * m) + 8)  # basis.py's counter: a new level each step

    def _quad(self, f, idx, points, kind="weight"):
        breaks = (0.0,) if kind == "panels" else ()
        rho, ur = _rule(self.radial, int(points[0]), kind, ())
        z, uz = _rule(self.axis, int(points[1]), kind, breaks)
        with np.errstate(over="ignore", invalid="ignore"):
            v = np.broadcast_to(np.asarray(f(rho[:, None], z[None, :]), dtype=float),
                                (len(rho), len(z)))
        fmax = float(np.max(np.abs(v[np.isfinite(v)]), initial=0.0))
        nz = uz.shape[1]
        uzz = (uz[:, :, None] * uz[:, None, :]).reshape(len(z), nz * nz)
        g = (v @ uzz).reshape(len(rho), nz, nz)
        s = self.states[idx]
        return contract_first_axis(ur, g, s[:, 0], s[:, 1]), fmax
