"""The settings of a convergence study (a case's ``convergence:`` block, validated) and the
ladder of basis sizes it runs over."""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

from .._checks import choice, flag, integer, integers, known_keys, positive, positives
from ..errors import InputError
from .scans import GRID_HALF_WIDTH, MAX_LENGTHS

__all__ = ["DEFAULT_MAX_SIZE", "ConvergenceSettings", "size_ladder"]

DEFAULT_MAX_SIZE = 452  # size limit of tolerance-driven runs without an explicit limit: the
#                        √2 ladder's step after 320, where the last of the 25 Morse levels of
#                        benchmarks/RESULTS.md (bound by 38 cm⁻¹) first meets 1e-4 cm⁻¹
DEFAULT_FIXED_TOP = 80  # largest size of a scan without tolerance or sizes
LADDER_RATIO = math.sqrt(2.0)  # successive sizes of the default ladder
IR_LENGTHS = ("eigenvalue", "closed_form")


def size_ladder(start: int, stop: int, ratio: float = LADDER_RATIO) -> tuple[int, ...]:
    """Sizes start, start·ratio, … (rounded, distinct) up to and including ``stop``."""
    out = []
    x = float(start)
    while round(x) < stop:
        if not out or round(x) > out[-1]:
            out.append(round(x))
        x *= ratio
    out.append(int(stop))
    return tuple(out)



_KEYS = ("sizes", "lengths", "frequencies", "tolerance", "grow", "max_size", "cross_check",
         "bounds", "ir_length", "estimate")
ESTIMATES = ("extrapolate", "smaller_basis", "none")


@dataclass(frozen=True)
class ConvergenceSettings:
    """The ``convergence:`` block of a case, validated.

    Attributes
    ----------
    sizes : tuple of int or None
        Basis sizes; None: the default ladder 10, 14, 20, 28, 40, … (ratio √2).
    lengths : tuple of float or None
        Oscillator lengths; None means ``auto`` (a grid re-centred on the optimum).
    frequencies : tuple of float or None
        ħω values instead of lengths.
    tolerance : float or None
        Target of the error estimate; with it the basis grows until every bound level meets it.
    grow : bool or None
        Grow the basis towards the tolerance (default: whenever a tolerance is given); False
        scans every size and only flags ``converged``.
    max_size : int or None
        Size limit of a tolerance-driven run (default: the largest of ``sizes``, or 452).
    cross_check : bool
        Also run the cross-check solver of another family.
    bounds : bool
        Compute the residual bounds (variance, Weinstein, Kato–Temple).
    ir_length : str
        ``"eigenvalue"`` (Wendt et al. 2015) or ``"closed_form"`` (L₂ of More et al. 2013).
    estimate : str
        How a runner fills ``error_estimate``: ``"extrapolate"`` (this module's
        :func:`converge`), ``"smaller_basis"`` (the change from a smaller basis, computed by the
        runner) or ``"none"``. Not used by :func:`converge` itself.
    """

    sizes: tuple[int, ...] | None = None
    lengths: tuple[float, ...] | None = None
    frequencies: tuple[float, ...] | None = None
    tolerance: float | None = None
    grow: bool | None = None
    max_size: int | None = None
    cross_check: bool = False
    bounds: bool = True
    ir_length: str = "eigenvalue"
    estimate: str = "extrapolate"

    def __post_init__(self) -> None:
        # the study's own argument checks (case files are checked by their schema first)
        fix = object.__setattr__
        if self.sizes is not None:
            fix(self, "sizes", integers("sizes", self.sizes, 1, what="basis sizes",
                                        noun="sizes"))
        if isinstance(self.lengths, str) and self.lengths == "auto":
            fix(self, "lengths", None)
        if self.lengths is not None:
            fix(self, "lengths", positives("lengths", self.lengths, noun="lengths",
                                           what="oscillator lengths (or 'auto')"))
        if self.frequencies is not None:
            if self.lengths is not None:
                raise InputError("frequencies: give lengths or frequencies, not both")
            fix(self, "frequencies", positives("frequencies", self.frequencies,
                                               noun="frequencies", what="hbar*omega values"))
        if self.tolerance is not None:
            fix(self, "tolerance", positive("tolerance", self.tolerance))
        if self.grow is not None:
            flag("grow", self.grow)
        if self.max_size is not None:
            fix(self, "max_size", integer("max_size", self.max_size, 2))
        flag("cross_check", self.cross_check)
        flag("bounds", self.bounds)
        choice("ir_length", self.ir_length, IR_LENGTHS)
        choice("estimate", self.estimate, ESTIMATES)

    @classmethod
    def from_mapping(cls, block: Mapping[str, Any] | None, path: str = "convergence"
                     ) -> ConvergenceSettings:
        """Settings from a mapping of the keys above; errors name ``path.key``.

        A convenience for Python users: case files are validated by their schema
        (:class:`anharmony.cases.Convergence`), which builds the settings directly.
        """
        if block is None:
            return cls()
        known_keys(path, block, _KEYS)
        given = {k: v for k, v in block.items() if not (k == "grow" and v is None)}
        try:
            return cls(**given)
        except InputError as exc:
            raise InputError(f"{path}.{exc}") from None

    def size_axis(self, levels: int) -> tuple[int, ...]:
        """Every basis size a run with these settings can use (the ``basis_size`` axis)."""
        grow = self.grow if self.grow is not None else self.tolerance is not None
        return _ladder(self.sizes, self.max_size, self.tolerance if grow else None,
                       integer("levels", levels, 1))[0]

    def length_slots(self) -> int:
        """Most lengths a run can hold (the ``basis_length`` axis of the result file)."""
        if self.lengths is not None:
            return len(self.lengths)
        if self.frequencies is not None:
            return len(self.frequencies)
        return MAX_LENGTHS

    def work(self, levels: int, lengths: int | None = None
             ) -> tuple[tuple[int, int, int], ...]:
        """The work of one :func:`converge` run: ``(size, diagonalisations, builds)`` per size.

        A growing run rescans every size so far at each step (one Hamiltonian per length at
        the step's largest size); the count is that of a run that reaches its size limit, an
        upper bound. ``lengths`` is the number of lengths per step (default: the given grid,
        or the automatic grid of 2·GRID_HALF_WIDTH + 1 lengths, which may widen to
        MAX_LENGTHS).
        """
        grow = self.grow if self.grow is not None else self.tolerance is not None
        axis = [n for n in self.size_axis(levels) if n >= levels]
        nl = lengths if lengths is not None else (
            len(self.lengths) if self.lengths is not None else
            len(self.frequencies) if self.frequencies is not None else 2 * GRID_HALF_WIDTH + 1)
        solves = dict.fromkeys(axis, 0)
        builds = dict.fromkeys(axis, 0)
        for k in range(len(axis)) if grow else [len(axis) - 1]:
            for n in axis[: k + 1]:
                solves[n] += nl
            extra = 1 if self.bounds else 0  # the residual bounds: one more at the step's size
            solves[axis[k]] += extra
            builds[axis[k]] += nl + extra
        return tuple((n, solves[n], builds[n]) for n in axis if solves[n])

    def keywords(self) -> dict[str, Any]:
        """Keyword arguments of :func:`converge`."""
        return {"sizes": self.sizes, "lengths": self.lengths or "auto",
                "frequencies": self.frequencies, "tolerance": self.tolerance,
                "grow": self.grow, "max_size": self.max_size, "cross_check": self.cross_check,
                "bounds": self.bounds, "ir_length": self.ir_length}


def _ladder(sizes: tuple[int, ...] | None, max_size: int | None, tolerance: float | None,
            levels: int) -> tuple[tuple[int, ...], int]:
    start = max(10, levels + 4)
    if sizes is None:
        top = max_size if max_size is not None else (
            DEFAULT_MAX_SIZE if tolerance is not None else DEFAULT_FIXED_TOP)
        if top < start:
            start = max(top // 4, levels + 1, 1)
        ladder = size_ladder(start, top)
        return ladder, top
    if max_size is None or max_size <= sizes[-1] or tolerance is None:
        if max_size is not None and max_size <= sizes[-1]:
            sizes = tuple(s for s in sizes if s <= max_size) or (max_size,)
        return sizes, sizes[-1]
    more = size_ladder(sizes[-1], max_size)[1:]
    return sizes + more, max_size
