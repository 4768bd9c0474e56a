"""Checks of the core's own arguments: one message template, one error class.

Every public function of the numerical core validates its arguments at the boundary and then
trusts them (STYLE.md items 3 and 5). These helpers do the checking with one wording,
``name: must be …; got value``, and raise :class:`anharmony.errors.InputError` (a
``ValueError``). ``name`` is whatever the caller wants the user to see: an argument name
(``tolerance``) or a path (``convergence.sizes[1]``).

Case files are validated by their own schema (:mod:`anharmony.cases.schema`); these helpers
are for the Python API, where no YAML positions exist.
"""

from __future__ import annotations

import difflib
import math
from collections.abc import Collection, Iterable, Mapping, Sequence
from numbers import Integral, Real
from typing import Any

from .errors import InputError

__all__ = [
    "choice",
    "flag",
    "got",
    "integer",
    "integers",
    "known_keys",
    "length_or_auto",
    "numbers",
    "positive",
    "positives",
    "suggest",
]

NEAR_MISS_CUTOFF = 0.6  # difflib ratio above which a name counts as a misspelling


def suggest(word: Any, options: Iterable[Any]) -> str:
    """``" (did you mean 'size'?)"`` for the closest of ``options``, or ``""``."""
    names = [str(o) for o in options]
    near = difflib.get_close_matches(str(word), names, n=1, cutoff=NEAR_MISS_CUTOFF)
    return f" (did you mean {near[0]!r}?)" if near else ""


def got(value: Any, limit: int = 60) -> str:
    """``got <repr>``, shortened to ``limit`` characters."""
    text = repr(value)
    return f"got {text[:limit] + '…' if len(text) > limit else text}"


def _is_real(value: Any) -> bool:
    return isinstance(value, Real) and not isinstance(value, bool)


def _float(value: Any) -> float:
    """``float(value)``, with an integer beyond the float range read as ±inf (not finite)."""
    try:
        return float(value)
    except OverflowError:
        return math.inf if value > 0 else -math.inf


def finite(name: str, value: Any) -> float:
    """A finite real number (not a bool), as a float."""
    if not _is_real(value) or not math.isfinite(_float(value)):
        raise InputError(f"{name}: must be a finite number; {got(value)}")
    return float(value)


def positive(name: str, value: Any) -> float:
    """A finite number > 0, as a float."""
    if not _is_real(value) or not math.isfinite(_float(value)) or not float(value) > 0:
        raise InputError(f"{name}: must be a positive number; {got(value)}")
    return float(value)


def length_or_auto(name: str, value: Any) -> float | None:
    """A positive number as a float, or ``None`` for the word ``"auto"``."""
    if isinstance(value, str) and value == "auto":
        return None
    if not _is_real(value) or not math.isfinite(_float(value)) or not float(value) > 0:
        raise InputError(f"{name}: must be a positive number or 'auto'; {got(value)}")
    return float(value)


def integer(name: str, value: Any, minimum: int | None = None,
            maximum: int | None = None) -> int:
    """An integer (not a bool, not a float) within ``[minimum, maximum]``, as an int."""
    ok = isinstance(value, Integral) and not isinstance(value, bool)
    if ok and minimum is not None and value < minimum:
        ok = False
    if ok and maximum is not None and value > maximum:
        ok = False
    if not ok:
        if minimum is not None and maximum is not None:
            what = f"an integer from {minimum} to {maximum}"
        elif minimum is not None:
            what = f"an integer >= {minimum}"
        elif maximum is not None:
            what = f"an integer <= {maximum}"
        else:
            what = "an integer"
        raise InputError(f"{name}: must be {what}; {got(value)}")
    return int(value)


def flag(name: str, value: Any) -> bool:
    """``True`` or ``False`` (not 0/1, not text)."""
    if not isinstance(value, bool):
        raise InputError(f"{name}: must be true or false; {got(value)}")
    return value


def choice(name: str, value: Any, options: Collection[Any]) -> Any:
    """One of ``options``; a misspelt name gets a near-miss suggestion."""
    try:
        ok = value in options
    except TypeError:  # unhashable
        ok = False
    if not ok:
        hint = suggest(value, options) if isinstance(value, str) else ""
        raise InputError(f"{name}: must be one of {', '.join(map(str, options))}; "
                         f"{got(value)}{hint}")
    return value


def _sequence(name: str, values: Any, what: str) -> Sequence[Any]:
    if getattr(values, "ndim", None) == 1 and hasattr(values, "tolist"):
        values = values.tolist()  # a 1-D array counts as a list
    if isinstance(values, (str, bytes)) or not isinstance(values, Sequence) or not values:
        raise InputError(f"{name}: must be a non-empty list of {what}; {got(values)}")
    return values


def _distinct(name: str, out: tuple[Any, ...], values: Any, noun: str) -> tuple[Any, ...]:
    if len(set(out)) != len(out):
        raise InputError(f"{name}: {noun} must be distinct; {got(list(values))}")
    return tuple(sorted(out))


def numbers(name: str, values: Any, count: int | None = None, *,
            what: str = "finite numbers") -> tuple[float, ...]:
    """A non-empty list of finite numbers (``count`` of them if given), in the given order."""
    seq = _sequence(name, values, what)
    if count is not None and len(seq) != count:
        raise InputError(f"{name}: must be a list of {count} {what}; {got(values)}")
    out = []
    for i, v in enumerate(seq):
        if not _is_real(v) or not math.isfinite(_float(v)):
            raise InputError(f"{name}[{i}]: must be a finite number; {got(v)}")
        out.append(float(v))
    return tuple(out)


def positives(name: str, values: Any, *, what: str = "positive numbers",
              noun: str = "values") -> tuple[float, ...]:
    """A non-empty list of distinct positive numbers, sorted; items are named ``name[i]``."""
    out = tuple(positive(f"{name}[{i}]", v)
                for i, v in enumerate(_sequence(name, values, what)))
    return _distinct(name, out, values, noun)


def integers(name: str, values: Any, minimum: int | None = None, *,
             what: str = "integers", noun: str = "values") -> tuple[int, ...]:
    """A non-empty list of distinct integers ≥ ``minimum``, sorted."""
    out = tuple(integer(f"{name}[{i}]", v, minimum)
                for i, v in enumerate(_sequence(name, values, what)))
    return _distinct(name, out, values, noun)


def known_keys(name: str, mapping: Any, allowed: Collection[str]) -> Mapping[str, Any]:
    """A mapping whose keys are all in ``allowed``; an unknown key gets a suggestion."""
    if not isinstance(mapping, Mapping):
        raise InputError(f"{name}: must be a mapping; {got(mapping)}")
    for key in mapping:
        if key not in allowed:
            raise InputError(f"{name}.{key}: unknown key{suggest(key, allowed)}; valid keys: "
                             f"{', '.join(allowed)}")
    return mapping
