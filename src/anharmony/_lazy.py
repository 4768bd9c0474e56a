"""Names of a package imported on first use (PEP 562), so that importing it stays light."""

from __future__ import annotations

from collections.abc import Callable, Mapping
from importlib import import_module
from typing import Any

__all__ = ["lazy_names"]


def lazy_names(package: str, table: Mapping[str, str], namespace: dict[str, Any]
               ) -> tuple[Callable[[str], Any], Callable[[], list[str]]]:
    """``__getattr__`` and ``__dir__`` for a package whose ``table`` maps each public name to
    the submodule that defines it; a name is imported once and then kept in ``namespace``."""

    def __getattr__(name: str) -> Any:
        if name in table:
            value = getattr(import_module(f".{table[name]}", package), name)
            namespace[name] = value
            return value
        raise AttributeError(f"module {package!r} has no attribute {name!r}")

    def __dir__() -> list[str]:
        return sorted(set(namespace) | set(namespace.get("__all__", ())))

    return __getattr__, __dir__
