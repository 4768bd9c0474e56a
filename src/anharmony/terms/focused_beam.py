"""The ``focused_beam`` term: the dipole potential of a focused Gaussian laser beam along z.

V(ρ, z) = −U₀ / (1 + z²/z_R²) · exp(−2ρ² / (w₀² (1 + z²/z_R²))), with the Rayleigh length
z_R given or z_R = π w₀²/λ (Grimm, Weidemüller & Ovchinnikov, Adv. At. Mol. Opt. Phys. 42, 95
(2000), eqs. for a red-detuned focused-beam trap). Symmetric about z and even in z; not central.
It has no channel on the line or in a central well: those are refused; solve it with
:func:`anharmony.geometry.solve_geometry`.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import ClassVar

import numpy as np

from .base import TermError, number, require
from .noncentral import GeometryTerm

__all__ = ["FocusedBeam"]


@dataclass(frozen=True)
class FocusedBeam(GeometryTerm):
    """``depth`` U₀ > 0, ``waist`` w₀, and ``rayleigh_length`` z_R or ``wavelength`` λ."""

    kind: ClassVar[str] = "focused_beam"
    display_name: ClassVar[str] = "beam"
    parameters: ClassVar[tuple[str, ...]] = ("depth", "waist", "rayleigh_length", "wavelength")
    linear_parameter: ClassVar[str | None] = "depth"
    dimensions: ClassVar[tuple[int, ...]] = (3,)
    depth: float = 1.0
    waist: float = 1.0
    rayleigh_length: float = 1.0

    @classmethod
    def _build(cls, p, ctx):
        depth = number(cls.kind, "depth", require(cls.kind, p, "depth"), positive=True)
        w0 = number(cls.kind, "waist", require(cls.kind, p, "waist"), positive=True)
        if ("rayleigh_length" in p) == ("wavelength" in p):
            raise TermError(cls.kind, "rayleigh_length",
                            "give exactly one of rayleigh_length or wavelength")
        if "rayleigh_length" in p:
            zr = number(cls.kind, "rayleigh_length", p["rayleigh_length"], positive=True)
        else:
            lam = number(cls.kind, "wavelength", p["wavelength"], positive=True)
            zr = math.pi * w0 * w0 / lam
        return cls(depth=depth, waist=w0, rayleigh_length=zr)

    def is_axial(self) -> bool:
        return True

    def value_axial(self, rho, z):
        rho, z = np.asarray(rho, dtype=float), np.asarray(z, dtype=float)
        s = 1.0 + (z / self.rayleigh_length) ** 2
        return -self.depth / s * np.exp(-2.0 * rho * rho / (self.waist**2 * s))

    def value_cartesian(self, x, y, z):
        x, y = np.asarray(x, dtype=float), np.asarray(y, dtype=float)
        return self.value_axial(np.sqrt(x * x + y * y), z)

    def limits(self):
        return (0.0, 0.0)

    @property
    def scale(self):
        return max(self.waist, self.rayleigh_length)
