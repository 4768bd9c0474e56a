"""The result of :func:`~anharmony.convergence.converge`: the levels of one channel with their
error estimates, extrapolations, bounds and the scan behind them, and their result-file
variables."""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, field

import numpy as np

from ..errors import InputError
from ..hamiltonian import Channel
from ..reference import Reference
from ..units import UnitSystem
from .bounds import ResidualBounds
from .extrapolate import Extrapolation
from .mesh import CrossCheck
from .scans import BasisScan

__all__ = ["METHODS", "MODELS", "ConvergenceReport"]

METHODS = ("exponential", "power", "infrared", "infrared_binding")
MODELS = METHODS  # the ``model`` axis of :meth:`ConvergenceReport.variables`


@dataclass(frozen=True)
class ConvergenceReport:
    """Convergence of the lowest levels of one channel.

    Attributes
    ----------
    channel : Channel
    levels : int
    energies : ndarray, shape (levels,)
        Lowest Ritz value of each level at the final size (over the length grid); each an
        upper bound on its exact level.
    best_lengths : ndarray, shape (levels,)
        Grid length giving each level's Ritz value.
    optimal_lengths : ndarray, shape (levels,)
        Each level's optimal length at the final size (parabola-refined).
    joint_length : float
        Length minimising the sum of the bound levels at the final size.
    size : int
        Final (largest) basis size.
    bound : ndarray of bool
        Below the threshold.
    extrapolated, uncertainty : ndarray
        E∞ of the used extrapolation and its uncertainty (NaN/inf when none applied).
    error_estimate : ndarray
        Estimated |E − E_exact| of :attr:`energies`.
    converged : ndarray of bool
        error_estimate < tolerance, bound levels only.
    method : tuple of str
        What error_estimate uses per level: ``exponential``, ``power``, ``infrared``,
        ``kato_temple``, ``difference`` or ``none``.
    reason : tuple of str
        Why, per level.
    extrapolations : tuple of dict
        Per level, the kept fit of every model (valid or not), by method name.
    spread : ndarray
        Largest difference between the E∞ of the valid models (NaN with fewer than two).
    scan : BasisScan
        The final scan: energy(level, size, length) (:attr:`scan_energies`).
    bounds : ResidualBounds or None
        Variance-based bounds of each level at its best basis.
    cross_check : CrossCheck or None
    tolerance : float
        The tolerance used for ``converged`` (the default DEFAULT_RTOL · ħω_ref without one).
    tolerance_driven : bool
    size_limit : int
    stopped : str
        Why the basis stopped growing.
    history : tuple
        (size, error_estimate per level) after each size step.
    messages : tuple of str
        The texts of the warnings about non-converged levels.
    notes : tuple of str
        Statements that go with the numbers (upper bounds, Kato–Temple assumption).
    center_reason : str
        Why the basis has its centre :attr:`center` (the line without symmetry).
    """

    channel: Channel
    levels: int
    energies: np.ndarray
    best_lengths: np.ndarray
    optimal_lengths: np.ndarray
    joint_length: float
    size: int
    bound: np.ndarray
    extrapolated: np.ndarray
    uncertainty: np.ndarray
    error_estimate: np.ndarray
    converged: np.ndarray
    method: tuple[str, ...]
    reason: tuple[str, ...]
    extrapolations: tuple[dict[str, Extrapolation], ...]
    spread: np.ndarray
    scan: BasisScan
    bounds: ResidualBounds | None
    cross_check: CrossCheck | None
    tolerance: float
    tolerance_driven: bool
    size_limit: int
    stopped: str
    threshold: float
    units: UnitSystem
    reference: Reference
    history: tuple[tuple[int, tuple[float, ...]], ...] = ()
    messages: tuple[str, ...] = ()
    notes: tuple[str, ...] = field(default=())
    center_reason: str = ""

    @property
    def center(self) -> float:
        """Centre x₀ of the basis (the line without symmetry; 0 for radial channels)."""
        return float(self.scan.center)

    @property
    def sizes(self) -> np.ndarray:
        return self.scan.sizes

    @property
    def lengths(self) -> np.ndarray:
        return self.scan.lengths

    @property
    def scan_energies(self) -> np.ndarray:
        """energy(level, size, length) of the final scan, shape (levels, S, B)."""
        return self.scan.energies[: self.levels]

    @property
    def cross_check_difference(self) -> np.ndarray:
        """:attr:`energies` − cross-check levels (NaN without a cross-check)."""
        if self.cross_check is None:
            return np.full(self.levels, np.nan)
        return self.cross_check.difference(self.energies)

    def error_of(self, energies: Sequence[float]) -> np.ndarray:
        """Error estimate of other values of the same levels: |E − energies_k| + error_k.

        Use it for the energies of another basis of the same channel (e.g. the case's
        ``basis:`` block), by the triangle inequality.
        """
        e = np.asarray(energies, dtype=float)
        k = min(e.size, self.levels)
        out = np.full(e.size, np.nan)
        out[:k] = np.abs(e[:k] - self.energies[:k]) + self.error_estimate[:k]
        return out

    def variables(self, basis_sizes: Sequence[int] | None = None,
                  length_slots: int | None = None) -> dict[str, tuple[tuple[str, ...],
                                                                   np.ndarray, dict[str, str]]]:
        """The report as result-file variables of one (scan point, channel) cell.

        Parameters
        ----------
        basis_sizes
            The ``basis_size`` axis shared by all cells (e.g. the union of every channel's
            sizes); entries this report lacks are NaN. Default: this report's sizes.
        length_slots
            Length of the ``basis_length`` axis (an index: each channel has its own grid,
            given by ``convergence_length``); default: this report's grid size.

        Returns
        -------
        dict
            ``name → (dims, values, attrs)`` with dims drawn from ``level``, ``basis_size``,
            ``basis_length`` and ``model``; ``attrs`` hold ``units`` and ``long_name``.
            Stack the cells along (scan, channel) in front of these dims.
        """
        sizes = np.asarray(self.sizes if basis_sizes is None else basis_sizes, dtype=int)
        nb = self.lengths.size if length_slots is None else int(length_slots)
        if nb < self.lengths.size:
            raise InputError(f"length_slots: {nb} is fewer than the {self.lengths.size} "
                             "lengths of this report")
        e_unit, l_unit = self.units.energy, self.units.length
        lev = self.levels
        grid = np.full((lev, sizes.size, nb), np.nan)
        irl = np.full((sizes.size, nb), np.nan)
        for i, n in enumerate(sizes):
            hit = np.flatnonzero(self.sizes == n)
            if hit.size:
                grid[:, i, : self.lengths.size] = self.scan_energies[:, hit[0], :]
                irl[i, : self.lengths.size] = self.scan.ir_lengths[hit[0], :]
        pad = np.full(nb, np.nan)
        b = pad.copy()
        b[: self.lengths.size] = self.lengths
        hw = pad.copy()
        hw[: self.lengths.size] = self.scan.frequencies
        fits = [[self.extrapolations[k].get(m) for m in METHODS] for k in range(lev)]
        model_e = np.array([[f.value if f is not None else np.nan for f in row] for row in fits])
        model_u = np.array([[f.uncertainty if f is not None else np.inf for f in row]
                            for row in fits])
        model_ok = np.array([[int(f is not None and f.valid) for f in row] for row in fits],
                            dtype=np.int8)
        bnd = self.bounds
        nan = np.full(lev, np.nan)
        xc = self.cross_check

        def e(name: str) -> dict[str, str]:
            return {"units": e_unit, "long_name": name}

        def ln(name: str) -> dict[str, str]:
            return {"units": l_unit, "long_name": name}

        return {
            "convergence_energy": (("level", "basis_size", "basis_length"), grid,
                                   e("Ritz value in the basis (size, length); an upper bound "
                                     "on the exact level")),
            "convergence_length": (("basis_length",), b, ln("oscillator length of the scan")),
            "convergence_frequency": (("basis_length",), hw,
                                      e("hbar*omega of the scan's oscillator lengths")),
            "convergence_infrared_length": (("basis_size", "basis_length"), irl,
                                            ln("infrared length L of the basis (Wendt et al. "
                                               "2015)")),
            "convergence_size": ((), np.array(self.size), {"units": "1", "long_name":
                                                          "largest basis size of the run"}),
            "optimal_length": (("level",), self.optimal_lengths,
                               ln("length minimising the level at the largest size")),
            "joint_length": ((), np.array(self.joint_length),
                             ln("length minimising the sum of the bound levels")),
            "extrapolated_energy": (("level",), self.extrapolated,
                                    e("level extrapolated to the infinite basis")),
            "extrapolation_uncertainty": (("level",), self.uncertainty,
                                          e("uncertainty of extrapolated_energy")),
            "extrapolation_spread": (("level",), self.spread,
                                     e("spread of the valid extrapolation models")),
            "model_energy": (("level", "model"), model_e, e("extrapolation of each model")),
            "model_uncertainty": (("level", "model"), model_u,
                                  e("uncertainty of each model's extrapolation")),
            "model_valid": (("level", "model"), model_ok,
                            {"units": "1", "long_name": "1 where the model applies"}),
            "error_estimate": (("level",), self.error_estimate,
                               e("estimated |E - E_exact| of the Ritz value")),
            "converged": (("level",), self.converged.astype(np.int8),
                          {"units": "1", "long_name": "1 where error_estimate < tolerance "
                                                      "for a bound level"}),
            "error_method": (("level",), np.array(self.method, dtype=str),
                             {"long_name": "what error_estimate is based on"}),
            "error_reason": (("level",), np.array(self.reason, dtype=str),
                             {"long_name": "why error_estimate uses error_method"}),
            "variance_sigma": (("level",), bnd.sigma if bnd is not None else nan,
                               e("sqrt(<H^2> - <H>^2) of the Ritz vector")),
            "weinstein_lower": (("level",), bnd.weinstein_lower if bnd is not None else nan,
                                e("E - sigma: [E - sigma, E + sigma] holds an eigenvalue")),
            "weinstein_upper": (("level",), bnd.weinstein_upper if bnd is not None else nan,
                                e("E + sigma")),
            "kato_temple_lower": (("level",), bnd.kato_temple_lower if bnd is not None else nan,
                                  {**e("Kato-Temple lower bound"),
                                   "comment": bnd.assumption if bnd is not None else ""}),
            "cross_check_energy": (("level",), xc.energies if xc is not None else nan,
                                   {**e("level from the cross-check solver"),
                                    "comment": xc.method if xc is not None else ""}),
            "cross_check_uncertainty": (("level",), xc.uncertainty if xc is not None else nan,
                                        e("change of the cross-check over its last mesh")),
            "cross_check_difference": (("level",), self.cross_check_difference,
                                       e("Ritz value minus cross-check level")),
            "convergence_stopped": ((), np.array(self.stopped),
                                    {"long_name": "why the basis stopped growing"}),
        }

    def summary(self) -> str:
        """A plain-text table of the levels (for logs; the library itself prints nothing)."""
        u = self.units.energy
        lines = [f"channel {self.channel.label}: size {self.size}, {self.stopped}"]
        for k in range(self.levels):
            lab = self.channel.level_label(k)
            lines.append(
                f"  {lab:>8} E = {self.energies[k]:.12g} {u}  error <= {self.error_estimate[k]:.2e}"
                f" ({self.method[k]})  {'converged' if self.converged[k] else 'NOT converged'}"
                f"{'' if self.bound[k] else '  [above threshold]'}")
        lines += [f"  note: {n}" for n in self.notes]
        return "\n".join(lines)
