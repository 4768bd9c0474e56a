"""The ``expression`` term: a formula in ``x`` (1D) or ``r`` (radial) and named parameters,
parsed by :mod:`anharmony.formula` (never ``eval``)."""

from __future__ import annotations

import math
import re
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any, ClassVar

from .base import Term, TermError, arr, center, number, require

__all__ = ["Expression"]


@dataclass(frozen=True)
class Expression(Term):
    """A formula in ``x`` (1D) or ``r`` (radial) and named parameters, parsed safely."""

    kind: ClassVar[str] = "expression"
    parameters: ClassVar[tuple[str, ...]] = ("formula", "parameters", "center")
    formula: Any = None  # anharmony.formula.Formula
    text: str = ""

    @classmethod
    def _build(cls, p, ctx):
        from ..formula import FormulaError, compile_formula

        text = require(cls.kind, p, "formula")
        if not isinstance(text, str):
            raise TermError(cls.kind, "formula", f"must be text; got {text!r}")
        params = p.get("parameters", {}) or {}
        if not isinstance(params, Mapping):
            raise TermError(cls.kind, "parameters",
                            f"must be a mapping name: value; got {params!r}")
        values = {str(k): number(cls.kind, f"parameters.{k}", v) for k, v in params.items()}
        variable = "r" if _uses_name(text, "r") else "x"
        try:
            f = compile_formula(text, variable=variable, parameters=values)
        except FormulaError as exc:
            raise TermError(cls.kind, "formula", str(exc)) from None
        return cls(center=center(cls.kind, p), formula=f, text=text)

    def value(self, x):
        return self.formula.value(arr(x) - self.center)

    def d1(self, x):
        return self.formula.d1(arr(x) - self.center)

    def d2(self, x):
        return self.formula.d2(arr(x) - self.center)

    def limits(self):
        try:
            lo, hi = self.formula.threshold(side=-1), self.formula.threshold(side=+1)
        except Exception:
            lo = hi = math.nan
        return (float(lo), float(hi))

    def check_coordinate(self, dimension: int) -> None:
        # The coordinate is x in 1D (with or without parity) and the radius r in 2D and 3D.
        allowed = "x" if dimension == 1 else "r"
        used = self.formula.variable
        if used != allowed and self.formula.uses_variable:
            where = "a 1D well" if dimension == 1 else f"a central {dimension}D channel"
            meaning = "x" if dimension == 1 else "the radius r"
            raise TermError(self.kind, "formula",
                            f"{self.text!r} uses {used!r}, but the coordinate of {where} is "
                            f"{meaning}; write the formula in {allowed!r}")

    def polynomial(self):
        return self.formula.polynomial()


def _uses_name(text: str, name: str) -> bool:
    return re.search(rf"(?<![A-Za-z0-9_]){name}(?![A-Za-z0-9_])", text) is not None
