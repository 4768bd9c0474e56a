"""Fit the parameters of a well to measured levels: weighted least squares.

:func:`fit` adjusts named term parameters (``"well[0].depth"``) so that computed levels, level
spacings or trap frequencies match measured values with standard uncertainties. The Jacobian of
every level comes from the Hellmann–Feynman theorem in the fixed basis of the current iterate,
∂E_k/∂p = ⟨ψ_k|∂H/∂p|ψ_k⟩ (exact for Ritz values of a fixed basis; ∂H/∂p by a central difference
of the matrix, exact for parameters that enter linearly), so no extra diagonalisation is needed.
At the solution the basis is re-chosen for the fitted well and the levels are re-checked in a
larger basis, so that basis error never passes for a fit residual.

The core does no I/O: data come as a list of mappings (the case loader reads CSV files).
"""

from __future__ import annotations

import math
import re
import warnings
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np
from scipy.optimize import least_squares

from ._checks import finite, positive, suggest
from .errors import AnharmonyWarning, ConvergenceWarning, InputError
from .hamiltonian import Channel, parse_j
from .spectrum import solve
from .terms import TERMS
from .well import Well

__all__ = ["FitResult", "FitWarning", "Measurement", "fit", "parse_parameter_path"]

_PATH = re.compile(r"^well\[(\d+)\]\.([A-Za-z_][A-Za-z0-9_]*)$")
QUANTITIES = ("level", "spacing", "rms_radius")
_DATUM_KEYS = ("quantity", "level", "levels", "value", "uncertainty", "l", "j", "name")
SINGULAR_RATIO = 1e-8  # singular value / largest below this: a direction the data cannot fix
BASIS_SHARE = 0.1  # basis error above this share of a datum's uncertainty: warn
_REL_STEP = 1e-5  # relative step of the central difference of ∂H/∂p (error ~ step² ≈ 1e-10)


class FitWarning(AnharmonyWarning):
    """The data leave a parameter (combination) undetermined, or the basis limits the fit."""


@dataclass(frozen=True)
class Measurement:
    """One measured quantity, in the unit system's energy unit.

    ``quantity="level"``: the energy of level ``levels[0]`` (0-based within its channel);
    ``quantity="spacing"``: E[levels[1]] − E[levels[0]] (a transition or trap frequency ħω);
    ``quantity="rms_radius"``: sqrt⟨r²⟩ of level ``levels[0]`` in the length unit (radial
    channels and 1D parity channels, r = |x|).
    """

    quantity: str
    levels: tuple[int, ...]
    value: float
    uncertainty: float
    l: int | None
    j: float | None
    name: str = ""

    @property
    def channel_key(self) -> tuple[int | None, float | None]:
        return (self.l, self.j)


@dataclass(frozen=True)
class FitResult:
    """Best parameters of a fit and how well the data fix them.

    Attributes
    ----------
    values, uncertainties : dict
        Parameter path → best value and its standard uncertainty (from the Jacobian; scaled by
        sqrt(χ²/dof) when the fit was asked to ``scale_covariance``).
    covariance, correlation : ndarray
        In the order of :attr:`parameters`.
    chi2 : float
        Σ residual², with residuals in units of each datum's uncertainty.
    dof : int
        Data minus parameters.
    residuals : ndarray
        (computed − measured)/uncertainty per datum, in σ.
    predictions : ndarray
        Computed value per datum at the solution (re-checked basis).
    basis_error : ndarray
        |computed(basis) − computed(larger basis)| per datum, in the energy unit.
    undetermined : list of str
        Parameter combinations the data cannot fix (empty when all are determined).
    """

    parameters: tuple[str, ...]
    values: dict[str, float]
    uncertainties: dict[str, float]
    covariance: np.ndarray
    correlation: np.ndarray
    chi2: float
    dof: int
    residuals: np.ndarray
    predictions: np.ndarray
    basis_error: np.ndarray
    data: tuple[Measurement, ...]
    well: Well = field(repr=False)
    undetermined: tuple[str, ...] = ()
    evaluations: int = 0
    energy_unit: str = ""

    @property
    def reduced_chi2(self) -> float:
        return self.chi2 / self.dof if self.dof > 0 else math.nan


def parse_parameter_path(path: Any, specs: Sequence[Mapping[str, Any]]) -> tuple[int, str]:
    """``"well[i].name"`` → (i, name), checked against the term list; InputError otherwise."""
    if not isinstance(path, str) or not _PATH.match(path.strip()):
        raise InputError(f"parameters: {path!r} is not a parameter path; expected "
                         "'well[i].name', e.g. 'well[0].depth'")
    m = _PATH.match(path.strip())
    i, name = int(m.group(1)), m.group(2)
    if i >= len(specs):
        raise InputError(f"parameters: {path!r} names term {i}, but the well has "
                         f"{len(specs)} term(s) (well[0] … well[{len(specs) - 1}])")
    (kind, _), = specs[i].items()
    allowed = TERMS[kind].parameters if kind in TERMS else ()
    if name not in allowed:
        hint = suggest(name, allowed)
        raise InputError(f"parameters: {path!r}: term {kind!r} has no parameter {name!r}{hint}; "
                         f"its parameters: {', '.join(allowed)}")
    return i, name


def _level_index(where: str, value: Any) -> int:
    if isinstance(value, bool) or not isinstance(value, (int, np.integer)) or value < 0:
        raise InputError(f"{where}: must be a level index, an integer >= 0; got {value!r}")
    return int(value)


def _measurements(data: Any, l: int | None, j: Any) -> tuple[Measurement, ...]:
    if isinstance(data, (str, bytes, Mapping)) or not isinstance(data, Sequence) or not data:
        raise InputError("data: expected a non-empty list of mappings with level (or levels), "
                         "value and uncertainty")
    out = []
    for k, d in enumerate(data):
        where = f"data[{k}]"
        if not isinstance(d, Mapping):
            raise InputError(f"{where}: expected a mapping; got {d!r}")
        for key in d:
            if key not in _DATUM_KEYS:
                hint = suggest(key, _DATUM_KEYS)
                raise InputError(f"{where}.{key}: unknown key{hint}; valid keys: "
                                 f"{', '.join(_DATUM_KEYS)}")
        quantity = d.get("quantity", "spacing" if "levels" in d else "level")
        if quantity not in QUANTITIES:
            raise InputError(f"{where}.quantity: expected one of {', '.join(QUANTITIES)}; "
                             f"got {quantity!r}")
        if quantity in ("level", "rms_radius"):
            if "level" not in d:
                raise InputError(f"{where}.level: is required for quantity {quantity!r}")
            levels = (_level_index(f"{where}.level", d["level"]),)
            if quantity == "rms_radius" and d.get("l", l) is None:
                raise InputError(f"{where}.quantity: an rms radius needs a radial or 1D parity "
                                 "channel (give l); the basis without symmetry has no centre")
        else:
            pair = d.get("levels")
            if isinstance(pair, (str, bytes)) or not isinstance(pair, Sequence) or len(pair) != 2:
                raise InputError(f"{where}.levels: a spacing needs two level indices [a, b]; "
                                 f"got {pair!r}")
            levels = tuple(_level_index(f"{where}.levels[{i}]", v) for i, v in enumerate(pair))
            if levels[0] == levels[1]:
                raise InputError(f"{where}.levels: the two levels must differ; got {list(pair)}")
        if "value" not in d:
            raise InputError(f"{where}.value: is required")
        if "uncertainty" not in d:
            raise InputError(f"{where}.uncertainty: is required (a standard uncertainty > 0)")
        value = finite(f"{where}.value", d["value"])
        sigma = positive(f"{where}.uncertainty", d["uncertainty"])
        dl = d.get("l", l)
        dj = parse_j(d["j"]) if "j" in d else (parse_j(j) if "l" not in d else None)
        out.append(Measurement(quantity, levels, value, sigma, dl, dj, str(d.get("name", ""))))
    return tuple(out)


def _starts(parameters: Any, specs: list[dict[str, Any]]) -> tuple[list[str], np.ndarray,
                                                                      np.ndarray, np.ndarray]:
    """Paths, starting values and bounds from a list of paths or a mapping of them."""
    if isinstance(parameters, str) or not isinstance(parameters, (Sequence, Mapping)) \
            or not parameters:
        raise InputError("parameters: expected a non-empty list of parameter paths such as "
                         "['well[0].depth'], or a mapping path → start value or "
                         "{start: …, bounds: [lo, hi]}")
    items = parameters.items() if isinstance(parameters, Mapping) else \
        [(p, None) for p in parameters]
    paths, x0, lo, hi = [], [], [], []
    for path, spec in items:
        i, name = parse_parameter_path(path, specs)
        path = f"well[{i}].{name}"
        if path in paths:
            raise InputError(f"parameters: {path!r} is listed twice")
        (_, params), = specs[i].items()
        start, bounds = None, (-math.inf, math.inf)
        if isinstance(spec, Mapping):
            unknown = set(spec) - {"start", "bounds"}
            if unknown:
                raise InputError(f"parameters.{path}: unknown key {sorted(unknown)[0]!r}; "
                                 "expected start and bounds")
            start = spec.get("start")
            if "bounds" in spec:
                b = spec["bounds"]
                if isinstance(b, (str, bytes)) or not isinstance(b, Sequence) or len(b) != 2:
                    raise InputError(f"parameters.{path}.bounds: expected [lo, hi]; got {b!r}")
                bounds = tuple(-math.inf if v is None else finite(
                    f"parameters.{path}.bounds", v) for v in b)
                if not bounds[0] < bounds[1]:
                    raise InputError(f"parameters.{path}.bounds: need lo < hi; got {list(b)}")
        elif spec is not None:
            start = spec
        if start is None:
            if name not in (params or {}):
                raise InputError(f"parameters: {path!r} has no value in the well to start from; "
                                 "give a start value")
            start = params[name]
        start = finite(f"parameters.{path} (start)", start)
        if not bounds[0] <= start <= bounds[1]:
            raise InputError(f"parameters.{path}: start {start} lies outside the bounds "
                             f"{list(bounds)}")
        paths.append(path)
        x0.append(start)
        lo.append(bounds[0])
        hi.append(bounds[1])
    return paths, np.array(x0), np.array(lo), np.array(hi)


class _Model:
    """Levels of the data's channels as a function of the parameter vector."""

    def __init__(self, specs, paths, data, dimension, units, mass, size, length):
        self.specs, self.paths, self.data = specs, paths, data
        self.dimension, self.units, self.mass = dimension, units, mass
        self.size = size
        self.length = length  # "auto", a number, or a dict channel → b fixed during a pass
        self.index = [parse_parameter_path(p, specs) for p in paths]
        self.channels = sorted({d.channel_key for d in data}, key=lambda k: (
            -1 if k[0] is None else k[0], k[1] or 0.0))
        self.needed = {k: 1 + max(max(d.levels) for d in data if d.channel_key == k)
                       for k in self.channels}
        self.evaluations = 0
        self._last: tuple[bytes, Any] | None = None

    def well(self, x: np.ndarray) -> Well:
        specs = [{k: dict(v or {})} for s in self.specs for k, v in s.items()]
        for (i, name), value in zip(self.index, x, strict=True):
            (kind, params), = specs[i].items()
            params[name] = float(value)
            if kind == "gaussian" and name in ("range", "waist"):  # exactly one of the two
                params.pop("waist" if name == "range" else "range", None)
        return Well.from_terms(specs, self.units, self.mass)

    def spectra(self, x: np.ndarray, size: int | None = None, length: Any = None):
        well = self.well(x)
        out = {}
        for key in self.channels:
            l, j = key
            b = length if length is not None else self.length
            if isinstance(b, dict):
                b = b[key]
            with warnings.catch_warnings():  # the basis is judged once, at the solution
                warnings.simplefilter("ignore", ConvergenceWarning)
                out[key] = solve(well, self.dimension, l, j, size=size or self.size, length=b,
                                 units=self.units, mass=self.mass,
                                 levels=min(self.needed[key], size or self.size))
        return well, out

    def predict(self, spectra) -> np.ndarray:
        vals = []
        for d in self.data:
            e = spectra[d.channel_key].energies
            if max(d.levels) >= e.size:
                raise InputError(f"data: level {max(d.levels)} of channel "
                                 f"{_channel_name(self.dimension, d)} needs a basis of at least "
                                 f"{max(d.levels) + 1} states")
            if d.quantity == "rms_radius":
                vals.append(_rms(spectra[d.channel_key], d.levels[0]))
            else:
                vals.append(e[d.levels[0]] if d.quantity == "level"
                            else e[d.levels[1]] - e[d.levels[0]])
        return np.array(vals)

    def evaluate(self, x: np.ndarray):
        """(predictions, Jacobian of the predictions) at x, cached for the last x."""
        key = np.asarray(x, dtype=float).tobytes()
        if self._last is not None and self._last[0] == key:
            return self._last[1]
        self.evaluations += 1
        _, spectra = self.spectra(x)
        pred = self.predict(spectra)
        grids = {k: _density_grid(s) for k, s in spectra.items()}
        jac = np.zeros((len(self.data), len(x)))
        for p in range(len(x)):
            h = _REL_STEP * max(abs(x[p]), 1e-3)
            xp, xm = x.copy(), x.copy()
            xp[p] += h
            xm[p] -= h
            wp, wm = self.well(xp), self.well(xm)
            dlev = {}
            for k, spec in spectra.items():
                nodes, dens = grids[k]
                dv = (wp.value(nodes) - wm.value(nodes)) / (2.0 * h)
                if spec.channel.ls:
                    dv = dv + spec.channel.ls * (wp.spin_orbit_value(nodes)
                                                 - wm.spin_orbit_value(nodes)) / (2.0 * h)
                dlev[k] = dens @ dv  # Hellmann–Feynman: ⟨ψ_k|∂H/∂p|ψ_k⟩
            radii = None
            if any(d.quantity == "rms_radius" for d in self.data):
                # ⟨r²⟩ moves with the eigenvectors (no Hellmann–Feynman): central differences
                # of the model itself in the same fixed basis
                radii = (self.predict(self.spectra(xp)[1])
                         - self.predict(self.spectra(xm)[1])) / (2.0 * h)
            for r, d in enumerate(self.data):
                g = dlev[d.channel_key]
                if d.quantity == "rms_radius":
                    jac[r, p] = radii[r]
                else:
                    jac[r, p] = g[d.levels[0]] if d.quantity == "level" \
                        else g[d.levels[1]] - g[d.levels[0]]
        self._last = (key, (pred, jac, spectra))
        return self._last[1]


_PANELS, _PANEL_POINTS = 96, 16  # composite Gauss–Legendre for ⟨ψ|∂V/∂p|ψ⟩ (smooth ∂V/∂p)


def _density_grid(spec) -> tuple[np.ndarray, np.ndarray]:
    """Nodes and |ψ_k|²·weight (levels × nodes) over the span of the basis functions.

    The span is where the highest basis function has decayed: |ξ| ≲ sqrt(2N + 1) + 8 in 1D,
    ρ ≲ sqrt(4N + 2l + 3) + 8 radially (oscillator turning point plus ~8 lengths of e^{−ξ²/2}).
    """
    basis, n = spec.basis, spec.basis.size
    t, w = np.polynomial.legendre.leggauss(_PANEL_POINTS)
    radial = spec.channel.l is not None
    b = basis.length
    if radial:
        lo, hi = 0.0, b * (math.sqrt(4.0 * n + 2.0 * (spec.channel.l or 0) + 3.0) + 8.0)
    else:
        half = b * (math.sqrt(2.0 * n + 1.0) + 8.0)
        lo, hi = basis.center - half, basis.center + half
    edges = np.linspace(lo, hi, _PANELS + 1)
    mid, rad = 0.5 * (edges[1:] + edges[:-1]), 0.5 * (edges[1:] - edges[:-1])
    nodes = (mid[:, None] + rad[:, None] * t[None, :]).ravel()
    weights = (rad[:, None] * w[None, :]).ravel()
    if radial:
        weights = weights * nodes ** (spec.channel.dimension - 1)
    psi = spec.vectors.T @ basis.functions(nodes)
    return nodes, psi * psi * weights[None, :]


def _rms(spec: Any, k: int) -> float:
    """sqrt⟨r²⟩ of level k (exact from the banded r² operator)."""
    return float(math.sqrt(spec.coordinate_moment(2)[k]))


def _channel_name(dimension: int, d: Measurement) -> str:
    if d.l is None:
        return "x"
    return Channel(dimension, d.l, d.j).label


def fit(terms: Sequence[Mapping[str, Any]], dimension: int = 3, l: int | None = 0,
        j: Any = None, *, parameters: Sequence[str] | Mapping[str, Any],
        data: Sequence[Mapping[str, Any]], size: int = 60, length: float | str = "auto",
        units: str = "oscillator", mass: float | None = None,
        scale_covariance: bool = False, max_evaluations: int = 200) -> FitResult:
    """Fit term parameters of a well to measured levels and spacings.

    Parameters
    ----------
    terms
        The well as a list of single-key mappings (as in a case file's ``well:``), holding the
        starting values.
    dimension, l, j
        The channel a datum uses when it names none (each datum may carry ``l`` and ``j``).
    parameters
        Paths ``"well[i].name"`` of the parameters to fit, or a mapping path → start value, or
        path → ``{"start": …, "bounds": [lo, hi]}``.
    data
        Mappings with ``level`` (0-based index in its channel) or ``quantity: spacing`` with
        ``levels: [a, b]`` (E_b − E_a), ``value`` and ``uncertainty`` (standard, > 0) in the
        unit system's energy unit, and optionally ``l``, ``j``, ``name``.
    size, length
        Basis of every channel: the length is fixed within a least-squares pass (so that the
        Hellmann–Feynman Jacobian is exact); with ``"auto"`` it is re-chosen for the fitted
        well and the fit repeated once.
    scale_covariance
        Multiply the covariance by χ²/dof (when the uncertainties are only relative).

    Returns
    -------
    FitResult

    Raises
    ------
    InputError
        For a parameter path that does not exist, a bad datum, zero or negative uncertainties,
        more parameters than data, or a level the well does not hold.

    Notes
    -----
    Minimises Σ ((E_model − E_measured)/σ)² with ``scipy.optimize.least_squares`` (trust-region
    reflective). Covariance (JᵀJ)⁻¹ of the σ-weighted Jacobian from its SVD; singular values
    below 1e-8 of the largest mark parameter combinations the data cannot fix (reported, and a
    :class:`FitWarning`). Hellmann–Feynman: Feynman, Phys. Rev. 56, 340 (1939).
    """
    if isinstance(terms, (str, bytes, Mapping)) or not isinstance(terms, Sequence) or not terms:
        raise InputError("terms: expected a list of single-key mappings, as in a case file's "
                         "well: list")
    specs = []
    for i, s in enumerate(terms):
        if not isinstance(s, Mapping) or len(s) != 1:
            raise InputError(f"terms[{i}]: expected a mapping with one term name as its key; "
                             f"got {s!r}")
        specs.append({k: dict(v or {}) for k, v in s.items()})
    Well.from_terms(specs, units, mass)  # the starting well must be valid
    measurements = _measurements(data, l, j)
    paths, x0, lo, hi = _starts(parameters, specs)
    if len(paths) > len(measurements):
        raise InputError(f"parameters: {len(paths)} parameters cannot be fixed by "
                         f"{len(measurements)} data; give at least as many data as parameters")
    if isinstance(size, bool) or not isinstance(size, (int, np.integer)) or size < 2:
        raise InputError(f"size: must be an integer >= 2; got {size!r}")

    model = _Model(specs, paths, measurements, dimension, units, mass, int(size), length)
    values = np.array([d.value for d in measurements])
    sigma = np.array([d.uncertainty for d in measurements])
    _check_levels_exist(model, x0)

    def residual(x):
        return (model.evaluate(x)[0] - values) / sigma

    def jacobian(x):
        return model.evaluate(x)[1] / sigma[:, None]

    x = x0
    passes = 2 if length == "auto" else 1
    for _ in range(passes):
        if length == "auto":  # fix b per channel at the current iterate's automatic choice
            _, spectra = model.spectra(x, length="auto")
            model.length = {k: s.basis.length for k, s in spectra.items()}
            model._last = None
        res = least_squares(residual, x, jac=jacobian, bounds=(lo, hi), method="trf",
                            x_scale="jac", max_nfev=max_evaluations, xtol=1e-12, ftol=1e-12,
                            gtol=1e-12)
        x = res.x
    pred, jac, spectra = model.evaluate(x)
    r = (pred - values) / sigma
    chi2 = float(r @ r)
    dof = len(measurements) - len(paths)

    # basis re-check: the same well in a basis half as large again, and the solver's estimate
    _, big = model.spectra(x, size=int(1.5 * model.size))
    basis_error = np.maximum(np.abs(model.predict(big) - pred), _estimates(model, spectra))
    bad = np.flatnonzero(basis_error > BASIS_SHARE * sigma)
    if bad.size:
        warnings.warn(
            f"fit: the basis error of data {', '.join(str(k) for k in bad)} exceeds "
            f"{BASIS_SHARE:g} of their uncertainty (largest {basis_error[bad].max():.2e}); "
            "increase size", FitWarning, stacklevel=2)

    jw = jac / sigma[:, None]
    _, s, vt = np.linalg.svd(jw, full_matrices=False)
    smax = s[0] if s.size else 0.0
    keep = s > SINGULAR_RATIO * smax
    undetermined = []
    for k in np.flatnonzero(~keep):
        combo = " + ".join(f"{c:.3g}·{p}" for c, p in zip(vt[k], paths, strict=True)
                           if abs(c) > 1e-3)
        undetermined.append(combo)
    inv = np.where(keep, 1.0 / np.where(keep, s, 1.0) ** 2, 0.0)  # pseudo-inverse
    cov = (vt.T * inv) @ vt
    if undetermined:
        warnings.warn(f"fit: the data cannot fix the parameter combination(s) "
                      f"{'; '.join(undetermined)}; their uncertainties are not meaningful",
                      FitWarning, stacklevel=2)
    if scale_covariance:
        if dof <= 0:
            raise InputError("scale_covariance: needs more data than parameters (dof > 0)")
        cov = cov * (chi2 / dof)
    err = np.sqrt(np.clip(np.diag(cov), 0.0, None))
    for k in np.flatnonzero(~keep):  # parameters in an undetermined direction: no error bar
        err = np.where(np.abs(vt[k]) > 1e-3, np.inf, err)
    with np.errstate(invalid="ignore", divide="ignore"):
        corr = cov / np.outer(np.where(err > 0, err, 1.0), np.where(err > 0, err, 1.0))
    well = model.well(x)
    return FitResult(
        parameters=tuple(paths), values=dict(zip(paths, map(float, x), strict=True)),
        uncertainties=dict(zip(paths, map(float, err), strict=True)), covariance=cov,
        correlation=corr, chi2=chi2, dof=dof, residuals=r, predictions=pred,
        basis_error=basis_error, data=measurements, well=well,
        undetermined=tuple(undetermined), evaluations=model.evaluations,
        energy_unit=well.units.energy)


def _estimates(model: _Model, spectra) -> np.ndarray:
    """Each datum's error bar from the solver's own a-posteriori estimate of its levels."""
    out = []
    for d in model.data:
        est = spectra[d.channel_key].error_estimate
        # an energy error bar says nothing about a radius: the larger basis judges those
        out.append(0.0 if d.quantity == "rms_radius" else sum(float(est[k]) for k in d.levels))
    return np.array(out)


def _check_levels_exist(model: _Model, x0: np.ndarray) -> None:
    """Every datum's levels exist and are bound at the starting values."""
    _, spectra = model.spectra(x0)
    for k, d in enumerate(model.data):
        spec = spectra[d.channel_key]
        top = max(d.levels)
        nbound = int(np.count_nonzero(spec.bound))
        if top >= spec.energies.size or not spec.bound[top]:
            raise InputError(
                f"data[{k}]: level {top} of channel {_channel_name(model.dimension, d)} is not a "
                f"bound level of the well at the starting values (it holds {nbound} bound "
                f"level(s) there: 0 … {nbound - 1})")
