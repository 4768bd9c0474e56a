"""Independent reference levels of wells without spherical symmetry, numpy/scipy only.

Never imports anharmony. Methods (common practice, no source beyond the textbook ones named):

- :func:`plane_levels`: the 2D Schrödinger operator −k ∇² + V(x, y) by second-order central
  finite differences on a uniform grid (the five-point Laplacian) in a box with Dirichlet
  walls, lowest eigenvalues by shift-invert Lanczos (``scipy.sparse.linalg.eigsh``), and
  Richardson extrapolation in the grid step over three grids (error h² + h⁴ eliminated; the
  spread against two grids is returned as the reference's own accuracy).
- :func:`axial_levels`: one Λ block of an axial well, −k [ρ⁻¹ ∂_ρ ρ ∂_ρ − Λ²/ρ² + ∂_z²] + V(ρ, z),
  on a cell-centred ρ grid (ρ_i = (i − ½) h, symmetrised with √ρ) times a uniform z grid,
  Dirichlet at the outer walls, the same extrapolation.
- :func:`line_levels`: the 1D operator −k d²/dx² + V(x), three-point differences, the same
  extrapolation.
- :func:`product_levels`: a 2D polynomial well Σ ½ω_i² x_i² + g (x² + y²)² (ħ = m = 1) in a
  large product basis of harmonic-oscillator states, x_i = (a_i + a_i†)/√(2ω_i) from the
  ladder matrices (textbook operator algebra), dense diagonalisation; converged to rounding
  when the basis is much larger than the levels need.

A box cuts an open well (V → −∞ beyond it): the levels below the escape barrier are then the
quasi-bound levels (their tunnelling width is far below the accuracy asked of them).
"""

from __future__ import annotations

import numpy as np
import scipy.sparse as sp
import scipy.sparse.linalg as sla

__all__ = ["axial_levels", "line_levels", "plane_levels", "product_levels"]

_FACTORS = (1.0, 1.5, 2.0)  # grid refinements of the extrapolation


def _second(n: int, h: float) -> sp.spmatrix:
    main = np.full(n, 2.0 / h**2)
    off = np.full(n - 1, -1.0 / h**2)
    return sp.diags([main, off, off], [0, 1, -1])


def _lowest(h: sp.spmatrix, count: int, sigma: float) -> np.ndarray:
    vals = sla.eigsh(h.tocsc(), k=count, sigma=sigma, which="LM", return_eigenvectors=False)
    return np.sort(vals)


def _extrapolate(rows: list[np.ndarray]) -> tuple[np.ndarray, np.ndarray]:
    """E(h) = E₀ + a h² + c h⁴ through three grids; spread: E₀ against two grids (h²)."""
    hs = 1.0 / np.asarray(_FACTORS)
    a = np.vstack([np.ones(3), hs**2, hs**4]).T
    e0 = np.linalg.solve(a, np.array(rows))[0]
    two = np.linalg.solve(a[1:, :2], np.array(rows[1:]))[0]
    return e0, np.abs(e0 - two)


def line_levels(v, k: float, box: tuple[float, float], n: int, count: int,
                sigma: float) -> tuple[np.ndarray, np.ndarray]:
    """Lowest ``count`` levels above ``sigma`` of −k d²/dx² + V on ``box`` (n points at the
    coarsest grid); returns (levels, accuracy)."""
    rows = []
    for f in _FACTORS:
        m = int(n * f)
        x = np.linspace(box[0], box[1], m + 2)[1:-1]
        h = x[1] - x[0]
        rows.append(_lowest(k * _second(m, h) + sp.diags(v(x)), count, sigma))
    return _extrapolate(rows)


def plane_levels(v, k: float, box: tuple[float, float, float, float], n: tuple[int, int],
                 count: int, sigma: float) -> tuple[np.ndarray, np.ndarray]:
    """Lowest ``count`` levels above ``sigma`` of −k ∇² + V(x, y) in the box
    (x₀, x₁, y₀, y₁), n = (n_x, n_y) points at the coarsest grid; (levels, accuracy)."""
    rows = []
    for f in _FACTORS:
        mx, my = int(n[0] * f), int(n[1] * f)
        x = np.linspace(box[0], box[1], mx + 2)[1:-1]
        y = np.linspace(box[2], box[3], my + 2)[1:-1]
        tx, ty = _second(mx, x[1] - x[0]), _second(my, y[1] - y[0])
        xx, yy = np.meshgrid(x, y, indexing="ij")
        h = k * (sp.kron(tx, sp.eye(my)) + sp.kron(sp.eye(mx), ty)) + sp.diags(v(xx, yy).ravel())
        rows.append(_lowest(h, count, sigma))
    return _extrapolate(rows)


def axial_levels(v, k: float, lam: int, rho_max: float, z_box: tuple[float, float],
                 n: tuple[int, int], count: int, sigma: float
                 ) -> tuple[np.ndarray, np.ndarray]:
    """Lowest ``count`` levels above ``sigma`` of one Λ block of an axial well V(ρ, z);
    (levels, accuracy)."""
    rows = []
    for f in _FACTORS:
        nr, nz = int(n[0] * f), int(n[1] * f)
        h = rho_max / nr
        rho = (np.arange(nr) + 0.5) * h
        up, down = rho + h / 2, rho - h / 2
        main = k * (up + down) / h**2 / rho + k * lam**2 / rho**2
        off = -k * up[:-1] / h**2 / np.sqrt(rho[:-1] * rho[1:])
        t_rho = sp.diags([main, off, off], [0, 1, -1])
        z = np.linspace(z_box[0], z_box[1], nz + 2)[1:-1]
        t_z = k * _second(nz, z[1] - z[0])
        rr, zz = np.meshgrid(rho, z, indexing="ij")
        ham = sp.kron(t_rho, sp.eye(nz)) + sp.kron(sp.eye(nr), t_z) + sp.diags(v(rr, zz).ravel())
        rows.append(_lowest(ham, count, sigma))
    return _extrapolate(rows)


def product_levels(frequencies: tuple[float, float], g: float, sizes: tuple[int, int],
                   count: int) -> np.ndarray:
    """Lowest ``count`` levels of Σ ½ω_i² x_i² + g (x² + y²)² in the product basis of
    ``sizes`` oscillator states per axis (ħ = m = 1)."""
    mats = []
    for w, n in zip(frequencies, sizes, strict=True):
        a = np.diag(np.sqrt(np.arange(1.0, n)), 1)
        x = (a + a.T) / np.sqrt(2.0 * w)
        mats.append((w * np.diag(np.arange(n) + 0.5), x @ x))
    (hx, x2), (hy, y2) = mats
    ix, iy = np.eye(len(hx)), np.eye(len(hy))
    r2 = np.kron(x2, iy) + np.kron(ix, y2)
    h = np.kron(hx, iy) + np.kron(ix, hy) + g * r2 @ r2
    return np.linalg.eigvalsh(h)[:count]
