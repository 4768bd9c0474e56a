"""The :class:`Well`: a list of terms whose potentials add, its limits and its classification.

The terms themselves live in :mod:`anharmony.terms`, one module each.
"""

from __future__ import annotations

import difflib
import math
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from .errors import InputError
from .terms import TERMS, Term, TermError
from .units import UnitSystem, get_units

__all__ = ["CONFINING", "FINITE", "OPEN", "PERIODIC", "Classification", "TermError", "Well"]


# --------------------------------------------------------------------------- the well
def _sum(terms: Sequence[Term], method: Callable[[Term], Callable], x) -> np.ndarray:
    x = np.asarray(x, dtype=float)
    out = np.zeros_like(x)
    for t in terms:
        out = out + method(t)(x)
    return out


CONFINING = "confining"
FINITE = "finite"
PERIODIC = "periodic"
OPEN = "open"


@dataclass(frozen=True)
class Classification:
    """Kind of a well (:data:`CONFINING`, :data:`FINITE`, :data:`PERIODIC` or :data:`OPEN`),
    its threshold (``nan`` for a periodic well) and the reason, in words."""

    kind: str
    threshold: float
    reason: str


@dataclass(frozen=True)
class Well:
    """A well: a list of terms whose potentials add, in one unit system.

    Build it with :meth:`from_terms` from the same single-key mappings as the case file's
    ``well:`` list. The central potential (everything but spin–orbit) is :meth:`value`.
    """

    terms: tuple[Term, ...]
    specs: tuple[tuple[str, Any], ...] = field(default=(), repr=False)
    units: UnitSystem = field(default_factory=lambda: get_units("oscillator"))
    mass: float | None = None
    _memo: dict = field(default_factory=dict, repr=False, compare=False, hash=False)

    @classmethod
    def from_terms(cls, terms: Sequence[Mapping[str, Any]] | Sequence[Term],
                   units: str | UnitSystem = "oscillator", mass: float | None = None) -> Well:
        """Build a well from ``[{"harmonic": {...}}, {"power": {...}}, …]``.

        Besides its own parameters every term takes the generic key ``order``, its
        perturbation order (:attr:`Term.order`, default 1; see :mod:`anharmony.terms.base`).

        Raises
        ------
        TermError
            For an unknown term or a bad parameter; ``str(err)`` starts with
            ``well[i].<term>.<parameter>``.
        """
        system = get_units(units)
        if mass is not None and not (isinstance(mass, (int, float)) and mass > 0):
            raise InputError(f"mass: must be a positive number; got {mass!r}")
        if isinstance(terms, (str, bytes, Mapping)) or not isinstance(terms, Sequence):
            raise TypeError(f"terms: expected a list of single-key mappings; got {terms!r}")
        if not terms:
            raise InputError("terms: a well needs at least one term")
        built, specs = [], []
        for i, spec in enumerate(terms):
            if isinstance(spec, Term):
                built.append(spec)
                specs.append((spec.kind, spec))
                continue
            if not isinstance(spec, Mapping) or len(spec) != 1:
                raise TypeError(f"well[{i}]: expected a mapping with one term name as its key; "
                                f"got {spec!r}")
            (name, params), = spec.items()
            if name not in TERMS:
                near = difflib.get_close_matches(str(name), list(TERMS), n=1)
                hint = f" (did you mean {near[0]!r}?)" if near else ""
                raise TermError(f"well[{i}].{name}", None,
                                f"unknown term{hint}; known terms: {', '.join(TERMS)}")
            try:
                built.append(TERMS[name].from_params(params or {}, system, mass))
            except TermError as exc:
                raise TermError(f"well[{i}].{name}", exc.field, exc.message) from None
            specs.append((name, dict(params or {})))
        return cls(terms=tuple(built), specs=tuple(specs), units=system, mass=mass)

    def check_channel(self, dimension: int) -> None:
        """Raise :class:`TermError` (``well[i].<term>.<parameter>``) if a term does not fit
        channels of ``dimension``: a formula must be in ``x`` in 1D and in ``r`` in 2D/3D."""
        for i, t in enumerate(self.terms):
            try:
                t.check_coordinate(dimension)
            except TermError as exc:
                raise TermError(f"well[{i}].{t.kind}", exc.field, exc.message) from None

    def with_context(self, units: str | UnitSystem, mass: float | None) -> Well:
        """The same well rebuilt for another unit system or particle mass."""
        system = get_units(units)
        if system == self.units and mass == self.mass:
            return self
        raw = [s if isinstance(s, Term) else {k: s} for k, s in self.specs]
        return Well.from_terms(raw, system, mass)

    # perturbation orders --------------------------------------------------------------
    @property
    def orders(self) -> tuple[int, ...]:
        """The perturbation order of each term (:attr:`Term.order`; 1 unless given)."""
        return tuple(t.order for t in self.terms)

    def by_order(self) -> dict[int, Well]:
        """The terms grouped by perturbation order, ``{k: Well of the terms at order k}``.

        Ascending in k; each part keeps the units, the mass and the terms' case-file specs.
        The series (:func:`anharmony.series`) builds W_k from the part of order k; the
        potentials of the parts add up to this well's (λ = 1 is the physical well).
        """
        parts: dict[int, tuple[list[Term], list[tuple[str, Any]]]] = {}
        for t, spec in zip(self.terms, self.specs or [(t.kind, t) for t in self.terms],
                           strict=True):
            terms, specs = parts.setdefault(t.order, ([], []))
            terms.append(t)
            specs.append(spec)
        return {k: Well(terms=tuple(ts), specs=tuple(ss), units=self.units, mass=self.mass)
                for k, (ts, ss) in sorted(parts.items())}

    # central potential ----------------------------------------------------------------
    @property
    def central_terms(self) -> tuple[Term, ...]:
        return tuple(t for t in self.terms if not t.spin_orbit)

    @property
    def spin_orbit_terms(self) -> tuple[Term, ...]:
        return tuple(t for t in self.terms if t.spin_orbit)

    @property
    def has_spin_orbit(self) -> bool:
        return bool(self.spin_orbit_terms)

    def value(self, x) -> np.ndarray:
        """Central potential V(x) (spin–orbit excluded)."""
        return _sum(self.central_terms, lambda t: t.value, x)

    def d1(self, x) -> np.ndarray:
        return _sum(self.central_terms, lambda t: t.d1, x)

    def d2(self, x) -> np.ndarray:
        return _sum(self.central_terms, lambda t: t.d2, x)

    def spin_orbit_value(self, r) -> np.ndarray:
        """Sum of the spin–orbit radial forms (to be multiplied by ⟨l·s⟩)."""
        return _sum(self.spin_orbit_terms, lambda t: t.value, r)

    @property
    def scale(self) -> float:
        """The largest length scale of the terms (1 if none has one)."""
        return max((t.scale for t in self.terms if t.scale > 0), default=1.0)

    @property
    def center(self) -> float:
        """Mean centre of the terms that take a ``center`` (0 if none does)."""
        cs = [t.center for t in self.central_terms if "center" in t.parameters]
        return float(np.mean(cs)) if cs else 0.0

    def limits(self) -> tuple[float, float]:
        """Limits of the central potential at −∞ and +∞ (see :meth:`classify` for wells that
        oscillate without a limit)."""
        key = ("limits",)
        if key not in self._memo:
            self._memo[key] = self._limits()
        return self._memo[key]

    def _limits(self) -> tuple[float, float]:
        lo = hi = 0.0
        for t in self.central_terms:
            a, b = t.limits()
            lo, hi = lo + a, hi + b
        if math.isnan(lo) or math.isnan(hi):  # competing infinities or unknown limits
            far = 1e3 * self.scale + abs(self.center)
            vlo, vhi = self.value(np.array([-far, far]))
            lo = lo if not math.isnan(lo) else _far_limit(vlo, self.value(-2 * far))
            hi = hi if not math.isnan(hi) else _far_limit(vhi, self.value(2 * far))
        return (lo, hi)

    def classify(self, dimension: int = 3, symmetric: bool = False) -> Classification:
        """What kind of well this is for the channels of ``dimension`` (before any solve).

        Parameters
        ----------
        dimension
            1, 2 or 3.
        symmetric
            True for the 1D parity channels and radial channels (only x, r → +∞ counts).

        Raises
        ------
        InputError
            In a radial or parity channel (``dimension`` ≥ 2, or ``symmetric``) when a term is
            not central (a tilt, an anisotropic or deformed term): only the geometry bases
            treat those.

        Returns
        -------
        Classification
            ``kind`` is :data:`CONFINING` (V → +∞ on every side: threshold +∞, every level
            bound), :data:`FINITE` (a finite threshold: the lower of the limits),
            :data:`OPEN` (V → −∞ on a side: no level is bound, threshold −∞, series are
            formal) or :data:`PERIODIC` (V oscillates without a limit on a side, like a
            lattice; no threshold), with the reason in words.

        Notes
        -----
        A side whose limit L is finite is checked by sampling V on [R, 2R] at R = 10³ and
        10⁶ length scales of the terms (quasi-random points, so that no period aliases to a
        constant): if the spread of V does not shrink with R (it keeps more than half of
        its size, and more than 10⁻⁶ of the well's energy scale), V has no limit there.
        """
        if dimension != 1 or symmetric:
            off = [f"well[{i}] ({t.kind})" for i, t in enumerate(self.terms)
                   if not getattr(t, "central", True)]
            for t in self.terms:  # the term's own refusal first (it names the channels)
                if not getattr(t, "central", True):
                    t.check_channel(dimension, 0, None, None)
            if off:  # a radial limit would ignore the directions where V falls or rises
                raise InputError(
                    f"classify: {', '.join(off)} is not central, so a radial classification "
                    "does not apply in this channel; a well without spherical symmetry has "
                    "its threshold from anharmony.geometry.potential.geometry_threshold and, "
                    "when open, its escape barrier from ah.solve_blocks (BlockSpectra.barrier)")
        key = ("classify", dimension == 1 and not symmetric)
        if key not in self._memo:
            self._memo[key] = self._classify(both_sides=key[1])
        return self._memo[key]

    def _classify(self, both_sides: bool) -> Classification:
        lo, hi = self.limits()
        sides = ((-1.0, lo), (1.0, hi)) if both_sides else ((1.0, hi),)
        names = {-1.0: "x -> -inf", 1.0: "x -> +inf" if both_sides else "r -> +inf"}
        for side, limit in sides:
            if math.isfinite(limit) and self._oscillates(side, limit):
                return Classification(
                    PERIODIC, math.nan,
                    f"V oscillates without a limit as {names[side]} (a periodic lattice, or a "
                    "well without a threshold)")
        for side, limit in sides:
            if limit == -math.inf:
                return Classification(OPEN, -math.inf,
                                      f"V -> -inf as {names[side]}: the well is unbounded below "
                                      "and no level is bound")
        finite = [(limit, side) for side, limit in sides if math.isfinite(limit)]
        if not finite:
            return Classification(CONFINING, math.inf, "V -> +inf on every side")
        limit, side = min(finite)
        return Classification(FINITE, float(limit),
                              f"V tends to {limit:.6g} as {names[side]}, the continuum threshold")

    def _oscillates(self, side: float, limit: float) -> bool:
        u = np.modf(np.arange(1, 257) * 0.6180339887498949)[0]  # golden-ratio points in [0, 1)
        c, s = self.center, self.scale
        spreads = []
        with np.errstate(all="ignore"):
            v_center = float(self.value(np.array([c]))[0])
            for far in (1e3, 1e6):
                v = self.value(c + side * far * s * (1.0 + u))
                v = v[np.isfinite(v)]
                spreads.append(float(np.ptp(v)) if v.size else 0.0)
        size = max(abs(limit), abs(v_center - limit) if math.isfinite(v_center) else 0.0,
                   spreads[0])
        return spreads[1] > 1e-6 * size and spreads[1] > 0.5 * spreads[0]

    def threshold(self, dimension: int = 3, symmetric: bool = False) -> float:
        """Threshold of the continuum: lim V(r→∞) for central wells, the lower side in 1D.

        ``+inf`` for a confining well, ``-inf`` for one unbounded below (no level is bound).

        Raises
        ------
        InputError
            For a periodic well (:meth:`classify`): it has bands, not a threshold.
        """
        kind = self.classify(dimension, symmetric)
        if kind.kind == PERIODIC:
            raise InputError(
                f"well: {kind.reason}. Bloch bands of a periodic potential are out of scope; "
                "to study one site, add a confining envelope (e.g. a harmonic term, or a "
                "gaussian instead of the lattice)")
        return kind.threshold

    def polynomial(self, center: float = 0.0) -> dict[int, float] | None:
        """The central potential as Σ c_p (x − center)^p, or ``None`` if it is not one."""
        out: dict[int, float] = {}
        for t in self.central_terms:
            poly = t.polynomial()
            if poly is None:
                return None
            shift = t.center - center  # (x - c_t) = (x - center) - shift
            for p, c in poly.items():
                for k in range(p + 1):
                    out[k] = out.get(k, 0.0) + c * math.comb(p, k) * (-shift) ** (p - k)
        return {p: c for p, c in sorted(out.items()) if c != 0.0} or {0: 0.0}

    def is_symmetric(self, center: float | None = None, rtol: float = 1e-12) -> bool:
        """True if V(c + x) = V(c − x) on a test grid (so 1D parity channels apply)."""
        c = self.center if center is None else center
        key = ("symmetric", c, rtol)
        if key not in self._memo:
            self._memo[key] = self._is_symmetric(c, rtol)
        return self._memo[key]

    def _is_symmetric(self, c: float, rtol: float) -> bool:
        x = np.linspace(0.05, 6.0, 61) * self.scale
        a, b = self.value(c + x), self.value(c - x)
        fin = np.isfinite(a) & np.isfinite(b)
        if not np.array_equal(np.isfinite(a), np.isfinite(b)):
            return False
        return bool(np.allclose(a[fin], b[fin], rtol=rtol, atol=rtol * np.max(np.abs(a[fin]) + 1)))

    def minimum(self, radial: bool = False, near: float | None = None
                ) -> tuple[float, float, float]:
        """Local minimum nearest the centre of the terms: (position, V_min, V″ there).

        For radial wells the search is over r ≥ 0, and a minimum at r = 0 with V′(0) ≠ 0 (a
        cusp, as for Woods–Saxon) is reported with V″ = 0.
        """
        key = ("minimum", radial, near)
        if key not in self._memo:  # a well is immutable: its minimum is found once
            self._memo[key] = self._minimum(radial, near)
        return self._memo[key]

    def _minimum(self, radial: bool, near: float | None) -> tuple[float, float, float]:
        from scipy.optimize import minimize_scalar

        c = self.center if near is None else near
        span = 12.0 * self.scale
        lo = 0.0 if radial else c - span
        grid = np.linspace(lo, c + span, 4001)
        with np.errstate(all="ignore"):
            v = self.value(grid)
        v = np.where(np.isfinite(v), v, np.inf)
        inner = np.flatnonzero((v[1:-1] <= v[:-2]) & (v[1:-1] <= v[2:])) + 1
        cand = list(inner)
        if radial and v[0] <= v[1]:
            cand.append(0)
        if not cand:
            raise InputError("the well has no local minimum near its centre; give reference "
                             "frequency and center explicitly")
        i = min(cand, key=lambda k: (abs(grid[k] - c), v[k]))
        if i == 0 and radial:
            slope = float(self.d1(np.array([0.0]))[0])
            x0 = 0.0
            if abs(slope) > 1e-9 * max(1.0, abs(v[0])) / self.scale:
                return 0.0, float(v[0]), 0.0
        else:
            a, b = grid[max(i - 1, 0)], grid[min(i + 1, len(grid) - 1)]
            res = minimize_scalar(lambda t: float(self.value(np.array([t]))[0]), bounds=(a, b),
                                  method="bounded", options={"xatol": 1e-12 * max(1, abs(b))})
            x0 = float(res.x)
            # polish with Newton on V' where the derivative is available
            for _ in range(3):
                d2 = float(self.d2(np.array([x0]))[0])
                if not d2 > 0:
                    break
                x0 -= float(self.d1(np.array([x0]))[0]) / d2
        return x0, float(self.value(np.array([x0]))[0]), float(self.d2(np.array([x0]))[0])


def _far_limit(v_far: float, v_farther: float) -> float:
    if not np.isfinite(v_far):
        return float(v_far)
    if abs(v_farther) > 2.0 * abs(v_far) + 1e-300:  # still growing: treat as unbounded
        return math.copysign(math.inf, v_farther)
    return float(v_farther)
