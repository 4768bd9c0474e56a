"""Named tolerances used across the tests, each with the reason for its size."""

RTOL_EIGH = 1e-12  # eigh is backward stable; matrices here have norms of a few hundred at most
RTOL_PUBLISHED = 1e-12  # published eigenvalues are quoted to 13+ significant digits
ATOL_ORTHO = 1e-12  # Gauss rules integrate products of basis functions to rounding level
RTOL_FD = 1e-7  # Richardson-extrapolated finite differences reach ~1e-8 relative on these grids
RTOL_CONVERGED = 1e-10  # levels converged in the basis to ~1e-12 (checked against larger N)
