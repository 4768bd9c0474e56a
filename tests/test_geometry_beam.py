"""A focused Gaussian beam: harmonic frequencies and levels against an independent solver."""

import numpy as np
import pytest
import scipy.sparse as sp
from scipy.sparse.linalg import eigsh

import anharmony as ah
from anharmony.errors import InputError, TermError
from anharmony.geometry import AnisotropicHarmonic, FocusedBeam, solve_geometry, trap_frequencies

U0, W0, ZR = 100.0, 1.0, 3.0  # oscillator units (ħ = m = 1): a trap ~20 ħω_z deep
RTOL_HESSIAN = 1e-7  # Richardson central differences, steps 5% of b: error ~(0.05)^4 · V'''' terms
ATOL_FD = 2e-5  # FD Richardson (h = 0.02, 0.01) measured within 5e-6 of (0.01, 0.005)

# these checks compare levels of deliberately small oscillator spaces (the same space in two
# bases, or against a reference with its own tolerance); the ConvergenceWarning those spaces
# raise is checked in test_geometry_refusals.py
pytestmark = pytest.mark.filterwarnings("ignore::anharmony.errors.ConvergenceWarning")


def _beam():
    return ah.Well.from_terms([FocusedBeam.from_params(
        {"depth": U0, "waist": W0, "rayleigh_length": ZR})])


def test_trap_frequencies_match_the_focused_beam_formulas():
    # ω_⊥ = sqrt(4U₀/(m w₀²)), ω_z = sqrt(2U₀/(m z_R²)): Grimm, Weidemüller & Ovchinnikov,
    # Adv. At. Mol. Opt. Phys. 42, 95 (2000)
    tf = trap_frequencies(_beam())
    expected = np.sort([np.sqrt(4 * U0 / W0**2)] * 2 + [np.sqrt(2 * U0 / ZR**2)])
    np.testing.assert_allclose(tf.frequencies, expected, rtol=RTOL_HESSIAN)
    np.testing.assert_allclose(np.abs(tf.axes[:, 0]), [0, 0, 1], atol=1e-9)  # weak axis = z
    assert tf.value == pytest.approx(-U0, rel=1e-14)


def test_wavelength_gives_the_rayleigh_length():
    # z_R = π w₀²/λ (Gaussian beam optics; Siegman, Lasers, 1986, ch. 17)
    beam = FocusedBeam.from_params({"depth": 1.0, "waist": 2.0, "wavelength": 0.5})
    assert beam.rayleigh_length == pytest.approx(np.pi * 4.0 / 0.5, rel=1e-15)
    with pytest.raises(TermError, match="rayleigh_length"):
        FocusedBeam.from_params({"depth": 1.0, "waist": 2.0})


def test_trap_frequencies_of_a_displaced_anisotropic_oscillator():
    # the Hessian of Σ ½ k_i (x_i − c_i)² is diag(k_i) at x = c (textbook)
    well = ah.Well.from_terms([AnisotropicHarmonic.from_params(
        {"frequencies": [2.0, 0.5, 1.0], "centers": [0.3, -1.0, 0.2]})])
    tf = trap_frequencies(well)
    np.testing.assert_allclose(tf.frequencies, [0.5, 1.0, 2.0], rtol=RTOL_HESSIAN)
    np.testing.assert_allclose(tf.minimum, [0.3, -1.0, 0.2], atol=1e-8)
    with pytest.raises(InputError, match="start"):
        trap_frequencies(well, start=[0.0, 0.0])


def _fd_levels(lam, h, k, rmax=1.4, zmax=4.0):
    """Independent solver (scipy only): −½∇² + V on a (ρ, z) grid, for e^{iΛφ} states.

    ρ_i = (i + ½)h (no point on the axis), the radial operator in the symmetric
    conservative form −(1/ρ)∂_ρ(ρ∂_ρ) + Λ²/ρ², 3-point z stencil, Dirichlet walls far out.
    """
    nr, nz = round(rmax / h), 2 * round(zmax / h) + 1
    r = (np.arange(nr) + 0.5) * h
    z = (np.arange(nz) - (nz - 1) // 2) * h
    rp, rm = r + h / 2, r - h / 2
    main = 0.5 * (rp + rm) / (r * h * h) + 0.5 * lam**2 / r**2
    off = -0.5 * rp[:-1] / np.sqrt(r[:-1] * r[1:]) / (h * h)
    tr = sp.diags([off, main, off], [-1, 0, 1])
    ones = np.ones(nz)
    tz = sp.diags([-0.5 * ones[1:] / h**2, ones / h**2, -0.5 * ones[1:] / h**2], [-1, 0, 1])
    rr, zz = np.meshgrid(r, z, indexing="ij")
    s = 1.0 + (zz / ZR) ** 2
    v = -U0 / s * np.exp(-2.0 * rr**2 / (W0**2 * s))
    hmat = sp.kron(tr, sp.eye(nz)) + sp.kron(sp.eye(nr), tz) + sp.diags(v.ravel())
    e = eigsh(hmat.tocsc(), k=k, sigma=-U0, which="LM", return_eigenvectors=False)
    return np.sort(e)


@pytest.fixture(scope="module")
def fd_reference():
    """Richardson extrapolation of the O(h²) scheme: (4 E(h/2) − E(h)) / 3."""
    out = {}
    for lam, k in ((0, 3), (1, 2)):
        coarse, fine = _fd_levels(lam, 0.02, k), _fd_levels(lam, 0.01, k)
        out[lam] = (4.0 * fine - coarse) / 3.0
    return out


def test_axial_levels_match_finite_differences(fd_reference):
    well = _beam()
    b_perp, b_z = 1.1 / np.sqrt(20.0), 1.0 / np.sqrt(np.sqrt(2 * U0 / ZR**2))
    for lam, ref in fd_reference.items():
        spec = solve_geometry(well, 3, geometry="axial", omega=lam, shells=28, levels=len(ref),
                              truncation="energy", lengths=[b_perp, b_z])
        np.testing.assert_allclose(spec.energies, ref, atol=ATOL_FD)
        assert spec.labels[0] == f"{lam}{'+' if lam == 0 else '-'}[{lam}0{lam}]"
        # the error bars (nested truncations, pessimistic) stay small and cover the deviation
        assert np.all(spec.error_estimate < 5 * ATOL_FD)
        assert np.all(np.abs(spec.energies - ref) <= spec.error_estimate + ATOL_FD)


def test_cartesian_levels_match_finite_differences(fd_reference):
    well = _beam()
    b_perp, b_z = 1.1 / np.sqrt(20.0), 1.0 / np.sqrt(np.sqrt(2 * U0 / ZR**2))
    spec = solve_geometry(well, 3, shells=22, levels=8, truncation="energy",
                          lengths=[b_perp, b_perp, b_z], error_estimate=False)
    # lowest eight: n_z = 0…4 with Λ = 0 and the Λ = ±1 pair (labels (1,0,0), (0,1,0))
    lam0 = spec.energies[[i for i, lab in enumerate(spec.labels) if lab.startswith("(0,0,")]]
    lam1 = spec.energies[[i for i, lab in enumerate(spec.labels)
                          if lab in ("(1,0,0)", "(0,1,0)")]]
    np.testing.assert_allclose(lam0[:3], fd_reference[0], atol=ATOL_FD)
    np.testing.assert_allclose(lam1, [fd_reference[1][0]] * 2, atol=ATOL_FD)
    assert np.all(spec.bound) and spec.threshold == 0.0


def test_beam_auto_lengths_from_the_hessian():
    spec = solve_geometry(_beam(), 3, geometry="axial", omega=0, shells=8, levels=1)
    expected = (1.0 / np.sqrt(np.sqrt(4 * U0)), 1.0 / np.sqrt(np.sqrt(2 * U0 / ZR**2)))
    np.testing.assert_allclose(spec.lengths, expected, rtol=1e-6)  # b = sqrt(ħ/(mω))
