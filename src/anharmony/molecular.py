"""Rotation–vibration levels of a diatomic and their Dunham constants.

:func:`rovibrational` solves the 3D radial channel l = J of a well (the rotating molecule's
centrifugal term ħ²J(J+1)/2μr² is the channel's own), :func:`dunham_fit` fits the Dunham
expansion (J. L. Dunham, Phys. Rev. 41, 721 (1932))

    E(v, J) = Σ_kl Y_kl (v + ½)^k [J(J+1)]^l

by least squares, and :func:`spectroscopic_constants` names the leading coefficients with the
trade's symbols: ωe = Y10, ωexe = −Y20, ωeye = Y30, Be = Y01, αe = −Y11, De = −Y02.

Order rule of the fit (stated once)
-----------------------------------
The model always holds Y00 and every named coefficient the data can determine (Y_k0 needs at
least k + 1 distinct v, Y_kl at least l + 1 distinct J). Higher coefficients are added in
groups of one Dunham order m = k + 2l (m = 3, 4, …; Y_kl scales like (Be/ωe)^{(k+2l)/2 − 1}
relative to ωe, Dunham 1932), each group kept only when a partial F-test rejects "no
improvement" at the ``significance`` level (default 1 %) and at least one degree of freedom is
left; the first group that fails ends the search. The search also ends when the residuals are
already at rounding level (the data are fitted exactly).

Uncertainty rule (stated once)
------------------------------
Each coefficient's ``uncertainty`` is three errors added in quadrature, each kept
(``statistical``, ``truncation``, ``level_error``): the statistical standard error (from σ,
or from the residual scatter); the *truncation* error of stopping the Dunham series; and,
where the levels' own error bounds δE are given (``level_errors``; :func:`constants_of`
gives the basis' error estimates), their bound Σ_i |∂Y/∂E_i| δE_i. Near-exact computed levels
leave almost no scatter, so the truncation error is most of it. It has two parts, added in
quadrature:

- in v: the change of each coefficient when the highest v is left out of the data and the
  order rule is applied again (the series in v + ½ converges slowly, so the change bounds
  the error of the larger set);
- in J: the change when the order in l is raised by one — the terms (k, L + 1) beside each
  fitted (k, L), L the highest l — where the data determine them; where they do not (as many
  l as distinct J), the bias those terms would cause, each of assumed size
  ``TRUNCATION_SAFETY`` × ρ_k |Y_kL|, ρ_k the larger of ρ = |Y02/Y01| (else 4 (Y01/Y10)²,
  the Kratzer ratio De/Be = 4Be²/ωe²) and the column's own |Y_kL/Y_k,L−1|: successive
  orders in J(J+1) shrink by about that ratio (Dunham 1932: Y_kl ∝ (Be/ωe)^l at fixed k).

A coefficient whose truncation error cannot be assessed (one v, one J other than 0, or left
undetermined when the highest v is dropped) gets NaN uncertainty and a note that says so.
"""

from __future__ import annotations

import math
import warnings
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field

import numpy as np

from .errors import ConvergenceWarning, InputError
from .spectrum import Spectrum, solve
from .units import UnitSystem

__all__ = ["NAMED", "Constant", "DunhamFit", "Rovibrational", "constants_of", "dunham_fit",
           "rovibrational", "spectroscopic_constants"]

NAMED: dict[str, tuple[tuple[int, int], float]] = {  # name: ((k, l), sign) with value = sign·Y_kl
    "we": ((1, 0), 1.0),
    "wexe": ((2, 0), -1.0),
    "weye": ((3, 0), 1.0),
    "Be": ((0, 1), 1.0),
    "alpha_e": ((1, 1), -1.0),
    "De": ((0, 2), -1.0),
}
ROUNDING_ULPS = 64.0  # residuals below this many ulp of max |E| count as an exact fit
TRUNCATION_SAFETY = 3.0  # assumed size of an undetermined next J order, in units of ρ|Y_kL|
_MAX_ORDER = 12  # highest Dunham order m = k + 2l tried


@dataclass(frozen=True)
class Constant:
    """A fitted constant: ``value`` ± ``uncertainty`` (one standard error), in ``unit``.

    ``uncertainty`` is ``statistical``, ``truncation`` (the Dunham model's own error; the
    uncertainty rule of the module notes) and ``level_error`` (the levels' own error bounds,
    propagated) added in quadrature. ``value`` and ``uncertainty``
    are NaN when the data cannot determine the constant, ``uncertainty`` alone when its
    truncation error cannot be assessed; then ``note`` says what is missing.
    """

    value: float
    uncertainty: float
    unit: str = ""
    note: str = ""
    statistical: float = math.nan
    truncation: float = math.nan
    level_error: float = 0.0

    def __float__(self) -> float:
        return self.value


@dataclass(frozen=True)
class Rovibrational:
    """Levels E(v, J) of the radial channels l = J of a well.

    Attributes
    ----------
    J : ndarray of int
    v : ndarray of int
        Vibrational quantum numbers 0 … levels − 1.
    energies : ndarray, shape (len(J), len(v))
        E(v, J) in the unit system's energy unit, NaN where the level is not bound.
    bound : ndarray of bool, same shape
    bottom : float
        Value of the well at its minimum (the J = 0 well bottom).
    unit : str
        Energy unit.
    spectra : tuple of Spectrum
        The solved channels, one per J.
    """

    J: np.ndarray
    v: np.ndarray
    energies: np.ndarray
    bound: np.ndarray
    bottom: float
    unit: str
    spectra: tuple[Spectrum, ...] = field(repr=False)

    def term_values(self, origin: str = "lowest") -> np.ndarray:
        """E(v, J) measured from the lowest level (``"lowest"``) or the well bottom."""
        if origin == "lowest":
            return self.energies - np.nanmin(self.energies)
        if origin == "bottom":
            return self.energies - self.bottom
        raise InputError(f"origin: expected 'lowest' or 'bottom'; got {origin!r}")

    def _row(self, j: int) -> int:
        hit = np.flatnonzero(j == self.J)
        if not hit.size:
            raise InputError(f"J: the vibrational term values need J = {j} among the J "
                             f"solved; got J = {self.J.tolist()}")
        return int(hit[0])

    def G(self, origin: str = "lowest") -> np.ndarray:
        """Vibrational term values G(v) = E(v, 0) from the lowest level or the well bottom."""
        return self.term_values(origin)[self._row(0)]

    def F(self) -> np.ndarray:
        """Rotational term values F_v(J) = E(v, J) − E(v, 0), shape (len(J), len(v))."""
        return self.energies - self.energies[self._row(0)][None, :]


def _j_list(J) -> np.ndarray:
    values = [J] if isinstance(J, (int, np.integer)) else list(J)
    if not values or any(isinstance(j, bool) or not isinstance(j, (int, np.integer)) or j < 0
                         for j in values) or len(set(values)) != len(values):
        raise InputError(f"J: expected distinct integers >= 0; got {J!r}")
    return np.array(sorted(int(j) for j in values))


def rovibrational(well, J: Sequence[int] | int = (0, 1, 2), levels: int = 6,
                  units: str | UnitSystem = "molecular", mass: float | None = None,
                  size: int = 80, length: float | str = "auto",
                  reference: str | Mapping[str, float] = "auto") -> Rovibrational:
    """Rotation–vibration levels E(v, J) of a well: the 3D radial channel l = J for each J.

    Parameters
    ----------
    well : Well
        The potential V(r) of the nuclei's separation r.
    J
        Rotational quantum numbers.
    levels
        Vibrational levels per J (v = 0 … levels − 1).
    units, mass
        Unit system and reduced mass (``molecular``: cm⁻¹, Å, u).
    size, length, reference
        Basis of every channel (as in :func:`~anharmony.solve`). With ``length="auto"`` the
        length chosen for the lowest J is used for every J, so that all channels share one
        basis.

    Returns
    -------
    Rovibrational
        Levels above the dissociation threshold are NaN and flagged unbound; a
        :class:`~anharmony.errors.ConvergenceWarning` names them.
    """
    js = _j_list(J)
    spectra = []
    for j in js:
        s = solve(well, dimension=3, l=int(j), size=size, length=length, units=units,
                  mass=mass, levels=levels, reference=reference)
        if length == "auto":
            length = s.basis.length
        spectra.append(s)
    energies = np.array([s.energies for s in spectra])
    bound = np.array([s.bound for s in spectra])
    if not bound.all():
        where = [f"J={j} v={v}" for j, v in zip(js[np.nonzero(~bound)[0]],
                                                 np.nonzero(~bound)[1], strict=True)]
        warnings.warn(f"levels above the dissociation threshold are left out (NaN): "
                      f"{', '.join(where)}", ConvergenceWarning, stacklevel=2)
    energies = np.where(bound, energies, np.nan)
    w = spectra[0].well
    bottom = float(w.minimum(radial=True)[1])
    return Rovibrational(js, np.arange(levels), energies, bound, bottom,
                         spectra[0].units.energy, tuple(spectra))


@dataclass(frozen=True)
class DunhamFit:
    """Least-squares Dunham coefficients Y_kl of E(v, J) (order rule in the module notes).

    Attributes
    ----------
    coefficients : dict (k, l) -> Constant
    residuals : ndarray
        Data minus model, in the order of the data (NaNs dropped).
    rss : float
        Residual sum of squares (weighted with 1/σ² when σ were given).
    dof : int
        Data points minus coefficients.
    history : tuple of str
        The order search, one line per step.
    """

    coefficients: dict[tuple[int, int], Constant]
    residuals: np.ndarray
    rss: float
    dof: int
    history: tuple[str, ...]
    unit: str = ""

    def Y(self, k: int, l: int) -> Constant:
        """Y_kl (NaN when not in the model)."""
        return self.coefficients.get(
            (k, l), Constant(math.nan, math.nan, self.unit, f"Y{k}{l} is not in the model"))

    def constants(self) -> dict[str, Constant]:
        """The named constants ωe, ωexe, ωeye, Be, αe, De (keys of :data:`NAMED`)."""
        out = {}
        for name, ((k, l), sign) in NAMED.items():
            c = self.coefficients.get((k, l))
            if c is None:
                out[name] = Constant(math.nan, math.nan, self.unit,
                                     f"not determined: Y{k}{l} needs {k + 1} distinct v and "
                                     f"{l + 1} distinct J")
            else:
                note = f"{'' if sign > 0 else '−'}Y{k}{l}" + c.note[len(f"Y{k}{l}"):]
                out[name] = Constant(sign * c.value, c.uncertainty, self.unit, note,
                                     c.statistical, c.truncation, c.level_error)
        return out


def _columns(v: np.ndarray, jj: np.ndarray, terms: list[tuple[int, int]]) -> np.ndarray:
    return np.stack([(v + 0.5) ** k * jj**l for k, l in terms], axis=1)


def _lsq(x: np.ndarray, y: np.ndarray, w: np.ndarray):
    """Weighted least squares with scaled columns; returns coefficients, covariance, RSS."""
    xs = x * w[:, None]
    scale = np.max(np.abs(xs), axis=0)
    scale[scale == 0] = 1.0
    a = xs / scale
    coef, _, rank, sv = np.linalg.lstsq(a, y * w, rcond=None)
    if rank < a.shape[1]:
        return None
    r = y * w - a @ coef
    vt = np.linalg.svd(a, full_matrices=False)[2]
    cov = (vt.T / sv**2) @ vt
    return coef / scale, cov / np.outer(scale, scale), float(r @ r)


def dunham_fit(v, J, energies, sigma=None, significance: float = 0.01,
               unit: str = "", level_errors=None) -> DunhamFit:
    """Fit E(v, J) = Σ Y_kl (v + ½)^k [J(J+1)]^l (order and uncertainty rules in the module
    notes).

    Parameters
    ----------
    v, J, energies
        Equal-length sequences (or broadcastable arrays) of the levels; NaN energies are
        dropped.
    sigma
        Standard errors of the energies. Given: weighted least squares, statistical errors
        from the covariance (XᵀWX)⁻¹. ``None``: equal weights, the covariance scaled by the
        residual variance RSS/dof.
    significance
        Level of the partial F-test that admits a higher order.
    unit
        Energy unit, carried into the constants.
    level_errors
        Error bounds of the energies themselves (e.g. a basis' error estimates), shaped like
        them: propagated as Σ_i |∂Y_kl/∂E_i| δE_i (no cancellation assumed: such errors are
        systematic) into each coefficient's ``level_error``.

    Returns
    -------
    DunhamFit
        Each coefficient's uncertainty holds its statistical, truncation and level errors.
    """
    v, J, e = np.broadcast_arrays(*(np.asarray(a, dtype=float) for a in (v, J, energies)))
    keep = np.isfinite(e)
    delta = None
    if level_errors is not None:
        delta = np.broadcast_to(np.asarray(level_errors, dtype=float), keep.shape)[keep].ravel()
        if np.any(delta < 0):
            raise InputError("level_errors: error bounds must be >= 0")
    v, J, e = v[keep].ravel(), J[keep].ravel(), e[keep].ravel()
    if sigma is None:
        w = np.ones_like(e)
    else:
        s = np.broadcast_to(np.asarray(sigma, dtype=float), keep.shape)[keep].ravel()
        if np.any(~(s > 0)):
            raise InputError("sigma: standard errors must be positive numbers")
        w = 1.0 / s
    if not 0 < significance < 1:
        raise InputError(f"significance: must lie between 0 and 1; got {significance!r}")
    jj = J * (J + 1.0)
    terms, (coef, cov, rss), history = _search(v, jj, e, w, significance)
    dof = e.size - len(terms)
    if sigma is None:
        cov = cov * (rss / dof if dof else math.nan)
    stat = np.sqrt(np.abs(np.diag(cov)))
    trunc_v, why_v, lost_v = _truncation_in_v(v, jj, e, w, significance, terms, coef)
    trunc_j, why_j = _truncation_in_j(v, jj, w, terms, coef, e)
    trunc = np.hypot(trunc_v, trunc_j)
    history.append(f"truncation: {why_v}; {why_j}")
    lev = np.zeros(len(terms)) if delta is None else _propagated(v, jj, w, terms, delta)
    resid = e - _columns(v, jj, terms) @ coef
    coefficients = {}
    for i, kl in enumerate(terms):
        note = f"Y{kl[0]}{kl[1]}"
        if not math.isfinite(trunc[i]):
            why = lost_v if math.isnan(trunc_v[i]) else why_j
            note += f"; truncation error not assessed ({why})"
        if not math.isfinite(lev[i]):
            note += "; the levels' error bounds are not all finite"
        total = math.sqrt(stat[i] ** 2 + trunc[i] ** 2 + lev[i] ** 2)
        coefficients[kl] = Constant(float(coef[i]), total, unit, note, float(stat[i]),
                                    float(trunc[i]), float(lev[i]))
    return DunhamFit(coefficients, resid, rss, dof, tuple(history), unit)


def _search(v: np.ndarray, jj: np.ndarray, e: np.ndarray, w: np.ndarray,
            significance: float) -> tuple[list[tuple[int, int]], tuple, list[str]]:
    """The order search of the module notes: the terms kept, their fit, the history."""
    from scipy.stats import f as f_dist

    nv, nj = np.unique(v).size, np.unique(jj).size

    def ok(k: int, l: int) -> bool:
        return k <= nv - 1 and l <= nj - 1

    terms = [(0, 0)] + [kl for kl, _ in NAMED.values() if ok(*kl)]
    if len(terms) >= e.size:
        raise InputError(f"energies: {e.size} levels cannot determine the {len(terms)} "
                         f"coefficients {terms}; give more v or J")
    fit = _lsq(_columns(v, jj, terms), e, w)
    if fit is None:
        raise InputError(f"v, J: the levels do not determine the coefficients {terms}")
    floor = (ROUNDING_ULPS * np.finfo(float).eps * float(np.max(np.abs(e * w)))) ** 2 * e.size
    history = [f"base {terms}: rss {fit[2]:.3e}"]
    for m in range(3, _MAX_ORDER + 1):
        if fit[2] <= floor:
            history.append("residuals at rounding level: stop")
            break
        group = [(k, (m - k) // 2) for k in range(m, -1, -1)
                 if (m - k) % 2 == 0 and ok(k, (m - k) // 2) and (k, (m - k) // 2) not in terms]
        if not group:
            continue
        trial = terms + group
        dof = e.size - len(trial)
        if dof < 1:
            history.append(f"order {m} {group}: no degrees of freedom left: stop")
            break
        new = _lsq(_columns(v, jj, trial), e, w)
        if new is None:
            history.append(f"order {m} {group}: not determined by the data: stop")
            break
        f_stat = ((fit[2] - new[2]) / len(group)) / (new[2] / dof) if new[2] > 0 else math.inf
        p = float(f_dist.sf(f_stat, len(group), dof)) if math.isfinite(f_stat) else 0.0
        if p >= significance:
            history.append(f"order {m} {group}: F = {f_stat:.3g}, p = {p:.2g}: rejected, stop")
            break
        history.append(f"order {m} {group}: F = {f_stat:.3g}, p = {p:.2g}: kept")
        terms, fit = trial, new
    return terms, fit, history


def _propagated(v, jj, w, terms, delta) -> np.ndarray:
    """Σ_i |∂Y/∂E_i| δE_i: the level errors' bound on each coefficient (rows of the
    weighted pseudo-inverse, columns scaled as in :func:`_lsq`)."""
    xs = _columns(v, jj, terms) * w[:, None]
    scale = np.max(np.abs(xs), axis=0)
    scale[scale == 0] = 1.0
    gain = np.linalg.pinv(xs / scale) / scale[:, None] * w[None, :]
    return np.abs(gain) @ delta


def _truncation_in_v(v, jj, e, w, significance, terms, coef) -> tuple[np.ndarray, str, str]:
    """|change| of each coefficient when the highest v is left out (NaN: not assessed), how
    it was found, and why a NaN."""
    out = np.full(len(terms), math.nan)
    if np.unique(v).size < 2:
        return out, "in v: one v only", "one v only"
    keep = v < v.max()
    try:
        sub_terms, (sub, _, _), _ = _search(v[keep], jj[keep], e[keep], w[keep], significance)
    except InputError:
        why = "too few levels without the highest v; give one more v"
        return out, "in v: " + why, why
    for i, kl in enumerate(terms):  # a coefficient the smaller set cannot hold stays NaN
        if kl in sub_terms:
            out[i] = abs(sub[sub_terms.index(kl)] - coef[i])
    return out, "in v: highest v left out", ("not determined without the highest v; give "
                                              "one more v")


def _truncation_in_j(v, jj, w, terms, coef, e) -> tuple[np.ndarray, str]:
    """The coefficients' error from the J(J+1) orders not fitted (module notes)."""
    nj = np.unique(jj).size
    if nj == 1:
        if float(jj[0]) == 0.0:
            return np.zeros(len(terms)), "in J: J = 0 only"
        return np.full(len(terms), math.nan), "in J: one J only"
    top = max(l for _, l in terms)
    ks = [k for k, l in terms if l == top]
    nxt = [(k, top + 1) for k in ks]
    x = _columns(v, jj, terms)
    if top + 1 <= nj - 1 and e.size - len(terms) - len(nxt) >= 1:
        new = _lsq(np.hstack([x, _columns(v, jj, nxt)]), e, w)
        if new is not None:
            return np.abs(new[0][:len(terms)] - coef), f"in J: l raised to {top + 1}"
    c = dict(zip(terms, coef, strict=True))
    if (0, 2) in c and (0, 1) in c and c[(0, 1)] != 0:
        rho = abs(c[(0, 2)] / c[(0, 1)])
    elif (0, 1) in c and (1, 0) in c and c[(1, 0)] != 0:
        rho = 4.0 * (c[(0, 1)] / c[(1, 0)]) ** 2
    else:
        return np.full(len(terms), math.nan), "in J: no ratio of J orders (needs Y01 and Y10)"
    bias = np.zeros(len(terms))
    for k, (kn, ln) in zip(ks, nxt, strict=True):
        ratio = rho  # this column's own ratio of its last two J orders, where larger
        if c.get((k, top - 1), 0.0) != 0.0:
            ratio = max(rho, abs(c[(k, top)] / c[(k, top - 1)]))
        size = TRUNCATION_SAFETY * ratio * abs(c[(k, top)])
        response = _lsq(x, _columns(v, jj, [(kn, ln)])[:, 0], w)
        if response is None:
            return np.full(len(terms), math.nan), "in J: not determined"
        bias += (size * response[0]) ** 2
    return np.sqrt(bias), (f"in J: bias of l = {top + 1} terms of size "
                           f"{TRUNCATION_SAFETY:g}ρ_k|Y_k{top}|, ρ_k >= {rho:.3g}")


def spectroscopic_constants(well, units: str | UnitSystem = "molecular",
                            mass: float | None = None, levels: int = 6,
                            J: Sequence[int] = (0, 1, 2), size: int = 80,
                            length: float | str = "auto",
                            reference: str | Mapping[str, float] = "auto"
                            ) -> dict[str, Constant]:
    """ωe, ωexe, ωeye, Be, αe, De of a well from a Dunham fit of its computed levels.

    Solves :func:`rovibrational` (arguments as there), fits :func:`dunham_fit` to the bound
    levels measured from the well bottom with equal weights, and returns the named constants
    (keys of :data:`NAMED`), each with ``.value`` and ``.uncertainty`` (statistical and
    truncation error, module notes) in the energy unit. A constant whose truncation error
    cannot be assessed has NaN uncertainty, and a :class:`~anharmony.errors.ConvergenceWarning`
    names it.
    """
    return constants_of(rovibrational(well, J, levels, units, mass, size, length, reference))


def constants_of(rv: Rovibrational) -> dict[str, Constant]:
    """The named constants of already computed levels (a Dunham fit with equal weights of the
    term values from the well bottom), as :func:`spectroscopic_constants` returns them."""
    vv, jj = np.meshgrid(rv.v, rv.J)
    bounds = np.array([s.error_estimate[:rv.v.size] for s in rv.spectra])
    fit = dunham_fit(vv, jj, rv.term_values("bottom"), unit=rv.unit, level_errors=bounds)
    out = fit.constants()
    blind = [f"{n} ({c.note.split('; ', 1)[1]})" for n, c in out.items()
             if math.isfinite(c.value) and not math.isfinite(c.uncertainty)]
    if blind:
        warnings.warn("Dunham constants without an uncertainty: " + "; ".join(blind),
                      ConvergenceWarning, stacklevel=2)
    return out
