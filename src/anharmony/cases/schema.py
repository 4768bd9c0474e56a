"""The case-file schema (DESIGN §4): pydantic models with field constraints.

Every model derives from :class:`_Strict`: unknown keys are forbidden, numbers are strict (no
``yes`` → 1, no ``"1e-3"`` → 0.001; PITFALLS §3), NaN and infinity are refused, and models are
frozen. Checks of one field live on the field (``Field(gt=0)``, validators below); each term of
``well:`` is checked by the term registry of :mod:`anharmony.terms` from inside the schema,
so that one validation pass reports every field. Checks that relate several fields are in
:mod:`.crossfield`, and nowhere else.
"""

from __future__ import annotations

import re
from collections.abc import Mapping
from fractions import Fraction
from typing import Annotated, Any, Literal, Union

from pydantic import (
    AfterValidator,
    BaseModel,
    ConfigDict,
    Discriminator,
    Field,
    Tag,
    ValidationInfo,
    field_validator,
)
from pydantic_core import PydanticCustomError

from ..errors import TermError
from ..terms import TERMS
from ..units import SYSTEMS
from .messages import got, suggest

__all__ = [
    "MAX_ORDERS",
    "MAX_SCAN",
    "MAX_SHELLS",
    "MAX_SIZE",
    "Basis",
    "CaseModel",
    "Convergence",
    "Fit",
    "FitParameter",
    "Levels",
    "Particle",
    "Perturbation",
    "Range",
    "ReferenceSpec",
    "Rotation",
    "Scan",
    "Space",
    "parse_half",
]

MAX_SIZE = 5000  # largest basis size accepted (a dense 5000² eigenproblem is minutes of work)
MAX_ORDERS = 400  # largest perturbation order accepted
MAX_SCAN = 100_000  # largest number of scan points accepted


# --------------------------------------------------------------------------- field checks
def _netcdf_name(name: str) -> str:
    if not name.endswith(".nc"):
        raise ValueError(f"must name a netCDF file ending in .nc; got {name!r}")
    return name


def _term_error(message: str, where: tuple[Any, ...] = (), at_key: bool = False) -> Exception:
    # type "term": messages.py keeps the message and appends ``where`` to the term's path
    return PydanticCustomError("term", "{message}", {"message": message, "where": where,
                                                     "at_key": at_key})


def _check_term(spec: Any, info: ValidationInfo) -> dict:
    """One ``well:`` entry, built by the term registry in the case's units and mass."""
    if not isinstance(spec, Mapping) or len(spec) != 1:
        raise _term_error("must be a mapping with one term name as its key, e.g. "
                          f"'- harmonic: {{frequency: 1.0}}'; {got(spec)}")
    (name, params), = spec.items()
    if name not in TERMS:
        raise _term_error(f"unknown term {name!r}{suggest(name, TERMS)}; known terms: "
                          f"{', '.join(TERMS)}", (name,), True)
    params = {} if params is None else params
    if not isinstance(params, Mapping):
        raise _term_error(f"parameters of {name} must be a mapping; {got(params)}", (name,))
    system = info.data.get("units", "oscillator")
    system = system if system in SYSTEMS else "oscillator"
    particle = info.data.get("particle")
    mass = particle.mass if isinstance(particle, Particle) else None
    try:
        TERMS[name].from_params(params, system, mass)
    except TermError as exc:
        raise _term_error(exc.message, (name, *_field_path(exc.field)),
                          "unknown parameter" in exc.message) from None
    except (ImportError, ValueError, TypeError) as exc:  # e.g. a formula the core rejects
        raise _term_error(str(exc), (name,)) from None
    return spec


def _field_path(field: str | None) -> tuple[Any, ...]:
    """A term's field name (``coefficients[4]``, ``parameters.g``) as data-path keys."""
    if field is None:
        return ()
    root = re.match(r"[A-Za-z_0-9]+", field)
    keys: tuple[Any, ...] = (root[0],) if root else (field,)
    sub = re.fullmatch(r"[A-Za-z_0-9]+(?:\[(.+)\]|\.(.+))", field)
    if sub:
        raw = (sub[1] if sub[1] is not None else sub[2]).strip("'\"")
        keys = (*keys, int(raw) if re.fullmatch(r"-?\d+", raw) else raw)
    return keys


def _listed_once(v: list, name: str, article: str = "a") -> None:
    """A list of quantum numbers ``name`` holds at least one, and each once."""
    if not v:
        raise ValueError(f"must list at least one {name}")
    if len(set(v)) != len(v):
        raise ValueError(f"lists {article} {name} twice; got {v}")


# --------------------------------------------------------------------------- models
class _Strict(BaseModel):
    """Base of every case-file model: unknown keys forbidden, numbers strict, frozen."""

    model_config = ConfigDict(extra="forbid", strict=True, frozen=True, allow_inf_nan=False,
                              populate_by_name=True)


Positive = Annotated[float, Field(gt=0)]
Auto = Literal["auto"]


#: Masses accepted, in the unit system's mass unit: from an electron in u (5.5e-4) to a
#: levitated nanoparticle (about 1e10 u), with room on both sides; beyond them ħ²/2m leaves
#: the range where the kinetic energy is meaningful in the system's units.
MASS_RANGE = (1e-15, 1e15)


class Particle(_Strict):
    """``particle:`` the mass in the unit system's mass unit, and an optional name."""

    mass: Annotated[float, Field(ge=MASS_RANGE[0], le=MASS_RANGE[1])] | None = None
    name: str | None = None


MAX_SHELLS = 60  # largest N_max accepted (a 3D Cartesian basis of 60 shells is ~40 000 states)


class Space(_Strict):
    """``space:`` dimension, angular quantum numbers, spin and an optional list of j.

    ``geometry`` is ``central`` (channels l or (l, j)), ``cartesian`` or ``axial`` (DESIGN
    §10); the last two are cut by ``shells`` (N_max) with ``truncation`` and take no l, spin
    or j (the cross-field checks say so).
    """

    geometry: Literal["central", "cartesian", "axial"] = "central"
    shells: Annotated[int, Field(ge=0, le=MAX_SHELLS)] | None = None
    truncation: Literal["shells", "energy"] | None = None
    dimension: Literal[1, 2, 3] = 3
    l: Annotated[int, Field(ge=0)] | list[Annotated[int, Field(ge=0)]] | None = None
    spin: Literal["1/2", 0.5] | None = None
    j: list[Union[Positive, str]] | None = None  # noqa: UP007 - pydantic needs the union here

    @field_validator("l")
    @classmethod
    def _unique(cls, v: Any) -> Any:
        if isinstance(v, list):
            _listed_once(v, "l", "an")
        return v

    @field_validator("j")
    @classmethod
    def _halves(cls, v: list | None) -> list | None:
        if v is None:
            return v
        if not v:
            raise ValueError("must list at least one j")
        for item in v:
            parse_half(item)
        return v


def parse_half(value: Any) -> float:
    """``2.5`` or ``"5/2"`` → 2.5; raise ``ValueError`` unless it is a positive half-integer."""
    try:
        x = float(Fraction(value)) if isinstance(value, str) else float(value)
    except (ValueError, ZeroDivisionError):
        raise ValueError(f"must be a half-integer like 5/2 or 2.5; got {value!r}") from None
    if not (x > 0 and (2 * x) % 2 == 1):
        raise ValueError(f"must be a half-integer like 5/2 or 2.5; got {value!r}")
    return x


class ReferenceSpec(_Strict):
    """``reference:`` the reference oscillator: ħω (or ``auto``), or its length b; centre."""

    frequency: Positive | Auto | None = None
    length: Positive | None = None
    center: float | None = None


class Basis(_Strict):
    """``basis:`` states per channel and the basis length (``auto``: the reference's)."""

    size: Annotated[int, Field(ge=1, le=MAX_SIZE)] = 40
    length: Positive | Auto = "auto"


class Levels(_Strict):
    """``levels:`` how many levels per channel, counted from the lowest."""

    count: Annotated[int, Field(ge=1, le=MAX_SIZE)] = 5


class Range(_Strict):
    """``values: {from, to, steps}``: evenly spaced values, both ends included."""

    from_: float = Field(alias="from")
    to: float
    steps: Annotated[int, Field(ge=1, le=MAX_SCAN)]


def _values_kind(v: Any) -> str:
    return "range" if isinstance(v, (Mapping, Range)) else "list"


ScanValues = Annotated[
    Union[  # noqa: UP007 - tagged union
        Annotated[Range, Tag("range")],
        Annotated[list[float], Field(min_length=1, max_length=MAX_SCAN), Tag("list")],
    ],
    Discriminator(_values_kind),
]


class Scan(_Strict):
    """``scan:`` one parameter by its path in the file (or ``coupling``) and its values;
    ``linked`` lists more paths set to the same value at every point (the deformation of a
    ``deformed_spin_orbit`` term beside its ``deformed_woods_saxon``)."""

    parameter: str
    values: ScanValues
    linked: Annotated[list[str], Field(min_length=1)] | None = None

    def points(self) -> list[float]:
        """The scan values as floats."""
        v = self.values
        if isinstance(v, Range):
            if v.steps == 1:
                return [v.from_]
            step = (v.to - v.from_) / (v.steps - 1)
            return [v.from_ + i * step if i < v.steps - 1 else v.to for i in range(v.steps)]
        return [float(x) for x in v]


MAX_J = 200  # highest rotational quantum number accepted


class JRange(_Strict):
    """``J: {from, to}``: every integer from ``from`` to ``to``, both included."""

    from_: Annotated[int, Field(ge=0, le=MAX_J)] = Field(alias="from")
    to: Annotated[int, Field(ge=0, le=MAX_J)]


MAX_PARTICLES = 10_000  # particles a filling accepts (the heaviest nuclei hold about 300)


class Filling(_Strict):
    """``filling:`` independent particles placed in the levels of every channel, lowest first
    (:func:`anharmony.fill_shells`): the Fermi level, the gap above it, the occupancies and
    the rms radius of the filled orbitals, per scan point."""

    particles: Annotated[int, Field(ge=0, le=MAX_PARTICLES)]


class Rotation(_Strict):
    """``rotation:`` rovibrational levels E(v, J) of a diatomic and its Dunham constants.

    ``J`` lists the rotational quantum numbers (distinct integers >= 0) or gives
    ``{from, to}``. Which other fields it combines with is checked in :mod:`.crossfield`.
    """

    J: Union[JRange, list[Annotated[int, Field(ge=0, le=MAX_J)]]]  # noqa: UP007

    @field_validator("J")
    @classmethod
    def _distinct(cls, v: Any) -> Any:
        if isinstance(v, list):
            _listed_once(v, "J")
        elif v.to < v.from_:
            raise ValueError(f"to must not be below from; got from: {v.from_}, to: {v.to}")
        return v

    def values(self) -> list[int]:
        """The rotational quantum numbers, ascending."""
        v = self.J
        return sorted(v) if isinstance(v, list) else list(range(v.from_, v.to + 1))


class Perturbation(_Strict):
    """``perturbation:`` Rayleigh–Schrödinger orders, exact rationals and resummations."""

    orders: Annotated[int, Field(ge=0, le=MAX_ORDERS)] = 12
    exact: bool | Auto = "auto"
    resum: list[Literal["pade", "borel_pade"]] = Field(
        default_factory=lambda: ["pade", "borel_pade"])


class Convergence(_Strict):
    """``convergence:`` the convergence study of each (scan point, channel), or a quick estimate.

    Extend this model (not a copy of it) when new convergence settings are added. The keys are
    those of :class:`anharmony.convergence.ConvergenceSettings`; how a block is read:

    - no block, an empty block, or only ``tolerance`` with ``estimate: smaller_basis`` (or
      ``none``): no study; ``error_estimate`` is the core's own a-posteriori estimate of
      :func:`anharmony.solve` (nested ¾N and ½N blocks of the same matrix; README "Error
      bars"), or, when ``sizes`` lists a smaller size, the change from the largest of those to
      N (or not estimated);
    - any other block runs :func:`anharmony.convergence.converge` per (scan point, channel),
      and ``estimate`` defaults to ``extrapolate`` (the study's error estimate);
    - the basis grows towards the tolerance (``grow``) only when ``tolerance`` is written (or
      ``grow: true``); otherwise the study only sets the flags of the case's own basis;
    - without ``lengths`` or ``frequencies`` a study that does not grow scans the sizes at the
      case's basis length (no ``basis_length`` axis); one that grows re-optimises the length
      (``lengths: auto``).
    """

    sizes: Annotated[list[Annotated[int, Field(ge=1, le=MAX_SIZE)]],
                     Field(min_length=1)] | None = None
    lengths: Annotated[list[Positive], Field(min_length=1)] | Auto | None = None
    frequencies: Annotated[list[Positive], Field(min_length=1)] | None = None
    tolerance: Positive = 1e-6
    grow: bool | None = None
    max_size: Annotated[int, Field(ge=2, le=MAX_SIZE)] | None = None
    cross_check: bool = False
    bounds: bool = True
    ir_length: Literal["eigenvalue", "closed_form"] = "eigenvalue"
    # how error_estimate is found: the study's estimate (extrapolate), the solver's nested-block
    # estimate (or the change from the largest smaller convergence size to N), or not at all;
    # default: extrapolate when the block has any key, else smaller_basis
    estimate: Literal["extrapolate", "smaller_basis", "none"] | None = None

    @property
    def written(self) -> frozenset[str]:
        """The keys given in the case file."""
        return frozenset(self.model_fields_set)

    @property
    def method(self) -> str:
        """How ``error_estimate`` is found: ``extrapolate``, ``smaller_basis`` or ``none``."""
        if self.estimate is not None:
            return self.estimate
        return "extrapolate" if self.written else "smaller_basis"

    @property
    def study(self) -> bool:
        """Whether the convergence study runs (see the class docstring)."""
        return self.method == "extrapolate" or bool(self.written - {"estimate", "tolerance"})

    @property
    def grows(self) -> bool:
        """Whether the basis grows towards the tolerance."""
        if not self.study:
            return False
        if self.grow is not None:
            return self.grow
        return "tolerance" in self.written and self.method == "extrapolate"

    @property
    def scans_lengths(self) -> bool:
        """Whether the study has a length axis (``basis_length``); else it uses the basis'."""
        return self.study and (self.lengths is not None or self.frequencies is not None
                               or self.grows)

    def settings(self) -> Any:
        """The block as :class:`anharmony.convergence.ConvergenceSettings` (written keys only;
        the study's defaults for the rest)."""
        from ..convergence import ConvergenceSettings

        given = {k: getattr(self, k) for k in self.written if k != "estimate"}
        for key in ("sizes", "lengths", "frequencies"):
            if isinstance(given.get(key), list):
                given[key] = tuple(given[key])
        return ConvergenceSettings(**given, estimate=self.method)


class FitParameter(_Strict):
    """One fitted parameter: its start value (default: the well's) and optional bounds."""

    start: float | None = None
    bounds: Annotated[list[float | None], Field(min_length=2, max_length=2)] | None = None


def _fit_data(data: Any) -> list[dict[str, Any]] | str:
    """``fit.data``: a non-empty list of mappings, or the name of a CSV file."""
    need = ("must be a list of data (mappings with level or levels, value, uncertainty) or "
            "the name of a CSV file ending in .csv")
    if isinstance(data, str):
        if not data.strip().lower().endswith(".csv"):
            raise ValueError(f"{need}; {got(data)}")
        return data
    if not isinstance(data, list) or not data:
        raise ValueError(f"{need}; {got(data)}")
    for k, d in enumerate(data):
        if not isinstance(d, Mapping):
            raise ValueError(f"entry {k} must be a mapping such as {{level: 0, value: 1.5, "
                             f"uncertainty: 0.01}}; {got(d)}")
    return [dict(d) for d in data]


class Fit(_Strict):
    """``fit:`` parameters of the well fitted to measured levels and spacings.

    ``parameters`` maps a path (``well[0].depth``) to a start value or ``{start, bounds}``;
    ``data`` is a list of mappings with the keys :func:`anharmony.fit` reads (quantity, level,
    levels, value, uncertainty, l, j, name) or a CSV file with those columns. The data's own
    checks are :func:`anharmony.fit`'s, called from :mod:`.crossfield`.
    """

    parameters: Annotated[dict[str, float | FitParameter | None], Field(min_length=1)]
    data: Annotated[Any, AfterValidator(_fit_data)]
    scale_covariance: bool = False


class CaseModel(_Strict):
    """The schema of one case (DESIGN §4)."""

    schema_: Literal[1] = Field(alias="schema")
    title: str = ""
    units: Literal["oscillator", "nuclear", "molecular", "trap", "dot", "atomic"] = "oscillator"
    particle: Particle = Field(default_factory=Particle)
    space: Space = Field(default_factory=Space)
    well: list[Annotated[Any, AfterValidator(_check_term)]] = Field(min_length=1)
    reference: ReferenceSpec = Field(default_factory=ReferenceSpec)
    basis: Basis = Field(default_factory=Basis)
    levels: Levels = Field(default_factory=Levels)
    scan: Scan | None = None
    perturbation: Perturbation | None = None
    convergence: Convergence = Field(default_factory=Convergence)
    fit: Fit | None = None
    rotation: Rotation | None = None
    filling: Filling | None = None
    output: Annotated[str, AfterValidator(_netcdf_name)] | None = None

    def to_dict(self) -> dict[str, Any]:
        """The case as plain data, with the file's key names (``schema``, ``from``)."""
        return self.model_dump(mode="python", by_alias=True, exclude_none=True)

