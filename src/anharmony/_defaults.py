"""Default values a function can tell apart from the same value passed by its caller.

``solve(..., size=60)`` and ``solve(...)`` must behave alike for the central geometry, but
the Cartesian and axial geometries refuse a ``size`` that was written (they are cut by
``shells``). A default made with :func:`unset` equals, hashes and computes like the plain
value; only ``value is DEFAULT`` tells that the caller left it out.
"""

from __future__ import annotations

__all__ = ["is_unset", "plain", "unset"]


class _UnsetInt(int):
    __slots__ = ()

    def __repr__(self) -> str:
        return int.__repr__(self)

    def __reduce__(self):  # pickles as the plain value: a copy is a value, not a default
        return (int, (int(self),))


class _UnsetFloat(float):
    __slots__ = ()

    def __repr__(self) -> str:
        return float.__repr__(self)

    def __reduce__(self):
        return (float, (float(self),))


def unset(value: int | float) -> int | float:
    """``value`` marked as a default (an ``int`` or ``float`` subclass instance)."""
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        raise TypeError(f"unset: expected an int or a float; got {value!r}")
    return _UnsetInt(value) if isinstance(value, int) else _UnsetFloat(value)


def is_unset(value: object) -> bool:
    """Whether ``value`` is a default made by :func:`unset` (the caller did not write it)."""
    return type(value) in (_UnsetInt, _UnsetFloat)


def plain(value: object) -> object:
    """The plain ``int``/``float`` of a default made by :func:`unset`; anything else as is."""
    if type(value) is _UnsetInt:
        return int(value)
    if type(value) is _UnsetFloat:
        return float(value)
    return value
