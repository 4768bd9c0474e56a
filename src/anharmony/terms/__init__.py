"""Terms of a well (DESIGN §3): one module per term or small family, and the registry.

Every module of this package is imported here, and every :class:`~.base.Term` subclass with a
``kind`` registers itself, so :data:`TERMS` (case-file name → class, in alphabetical order)
needs no list kept by hand: a new term is a new file here plus its test.
"""

from __future__ import annotations

import importlib
import pkgutil

from . import base
from .base import Term, TermError
from .coulomb import Coulomb
from .expression import Expression
from .gaussian import Gaussian
from .morse import Morse
from .polynomial import Harmonic, Polynomial, Power
from .poschl_teller import PoschlTeller
from .woods_saxon import SpinOrbit, WoodsSaxon

__all__ = [
    "TERMS",
    "Coulomb",
    "Expression",
    "Gaussian",
    "Harmonic",
    "Morse",
    "Polynomial",
    "PoschlTeller",
    "Power",
    "SpinOrbit",
    "Term",
    "TermError",
    "WoodsSaxon",
    "linear_parameters",
]

for _info in pkgutil.iter_modules(__path__):
    if _info.name != "base":
        importlib.import_module(f"{__name__}.{_info.name}")

TERMS: dict[str, type[Term]] = dict(sorted(base._REGISTRY.items()))


def linear_parameters() -> dict[str, str]:
    """{term kind: the parameter its potential is proportional to}, for the terms that have one.

    H = A + value · B for a scan of that parameter (the case files' linear scans), and λ V of
    the term is the same term with that parameter (also its dataclass field) times λ.
    """
    return {kind: cls.linear_parameter for kind, cls in TERMS.items()
            if cls.linear_parameter is not None}
