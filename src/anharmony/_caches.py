"""Value-keyed LRU caches of the numerical core.

References, semiclassical tables and channel matrices are kept in small LRU caches keyed by
*value* (the well's frozen terms, unit system and mass, the channel, size, length and centre),
never by object identity, so a changed well never meets a stale matrix and an equal well
rebuilt by ``with_context`` still hits.
"""

from __future__ import annotations

from collections import OrderedDict
from collections.abc import Callable, Hashable
from typing import TYPE_CHECKING, Any

if TYPE_CHECKING:
    from .well import Well

__all__ = ["clear_caches"]

_CACHE_SIZES = {"reference": 64, "phase_space": 64, "matrices": 8}
_CACHES: dict[str, OrderedDict] = {name: OrderedDict() for name in _CACHE_SIZES}


def _well_key(well: Well) -> Hashable | None:
    """A hashable *value* of the well (frozen terms, unit system, mass), or ``None``.

    ``None`` (a term that cannot be hashed) turns caching off for that well: a cache must
    never guess.
    """
    key = (well.terms, well.units, well.mass)
    try:
        hash(key)
    except TypeError:
        return None
    return key


def _cached(kind: str, key: tuple, make: Callable[[], Any]) -> Any:
    """LRU lookup in cache ``kind``; a key holding ``None`` (unhashable well) is not cached."""
    if key[0] is None:
        return make()
    cache = _CACHES[kind]
    try:
        value = cache[key]
    except KeyError:
        value = make()
        cache[key] = value
        while len(cache) > _CACHE_SIZES[kind]:
            cache.popitem(last=False)
        return value
    cache.move_to_end(key)
    return value


def clear_caches() -> None:
    """Empty the reference, phase-space and channel-matrix caches of this module."""
    for cache in _CACHES.values():
        cache.clear()
