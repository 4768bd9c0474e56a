"""Case files (DESIGN §4): safe YAML loading, the schema, error reporting and expansion.

A case file is read with :class:`StrictLoader` (a :class:`yaml.SafeLoader` subclass that reads
``1e-3`` as a number and reports duplicate keys), checked against the pydantic schema
:class:`CaseModel` (unknown keys forbidden, numbers strict) and against the terms registry of
:mod:`anharmony.potentials`. Every problem of every file is collected and raised at once as a
:class:`CaseError`, one line per problem in the form ``file:line:col: field.path: message``.

:func:`expand` turns a case into its tasks (scan point × channel) with the reference oscillator
resolved. This module imports PyYAML and pydantic; nothing in the numerical core imports it.
"""

from __future__ import annotations

import copy
import dataclasses
import difflib
import functools
import re
import textwrap
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass, field
from fractions import Fraction
from pathlib import Path
from typing import Annotated, Any, Literal, Union

import yaml
from pydantic import (
    BaseModel,
    ConfigDict,
    Discriminator,
    Field,
    Tag,
    ValidationError,
    field_validator,
)

from .errors import CaseError
from .potentials import TERMS, TermError, Well
from .units import SYSTEMS, UnitSystem, get_units

__all__ = [
    "CASE_SCHEMA",
    "Case",
    "CaseError",
    "CaseModel",
    "ChannelSpec",
    "Problem",
    "StrictLoader",
    "Task",
    "case_from_dict",
    "expand",
    "load_case",
    "load_cases",
    "parse_yaml",
    "resolve_reference",
]

CASE_SCHEMA = 1  # version of the case-file schema this module reads
MAX_SIZE = 5000  # largest basis size accepted (a dense 5000² eigenproblem is minutes of work)
MAX_ORDERS = 400  # largest perturbation order accepted
MAX_SCAN = 100_000  # largest number of scan points accepted


# =========================================================================== problems
@dataclass(frozen=True)
class Problem:
    """One problem found in a case file.

    Attributes
    ----------
    file : str
        The file as given (or ``<dict>`` for a case built from a mapping).
    line, column : int or None
        1-based position of the offending node, ``None`` where there is none.
    path : str
        Field path in the file (``well[1].strength``); ``""`` for the file as a whole.
    message : str
        What is wrong and what was expected.
    """

    file: str
    line: int | None
    column: int | None
    path: str
    message: str

    def __str__(self) -> str:
        where = self.file if self.line is None else f"{self.file}:{self.line}:{self.column}"
        return f"{where}: {self.path}: {self.message}" if self.path else f"{where}: {self.message}"




# =========================================================================== YAML
# YAML 1.1 float resolver of PyYAML plus mantissas without a dot (1e-3, 1E+3) and unsigned
# exponents (1.0e3): PyYAML alone reads these as strings (yaml/pyyaml#173).
_FLOAT = re.compile(
    r"""^(?:[-+]?(?:[0-9][0-9_]*)\.[0-9_]*(?:[eE][-+]?[0-9]+)?
    |[-+]?(?:[0-9][0-9_]*)(?:[eE][-+]?[0-9]+)
    |\.[0-9][0-9_]*(?:[eE][-+]?[0-9]+)?
    |[-+]?[0-9][0-9_]*(?::[0-5]?[0-9])+\.[0-9_]*
    |[-+]?\.(?:inf|Inf|INF)
    |\.(?:nan|NaN|NAN))$""",
    re.X,
)


class StrictLoader(yaml.SafeLoader):
    """Safe YAML loader that reads ``1e-3`` as a float and records duplicate keys.

    Duplicate keys are not raised at once: they are appended to :attr:`duplicates` as
    ``(key, first_mark, repeat_mark)`` so that every problem of a file is reported together.
    """

    def __init__(self, stream: Any) -> None:
        super().__init__(stream)
        self.duplicates: list[tuple[Any, yaml.Mark, yaml.Mark]] = []

    def construct_mapping(self, node: yaml.MappingNode, deep: bool = False) -> dict:
        seen: dict[Any, yaml.Mark] = {}
        for key_node, _ in node.value:
            if key_node.tag == "tag:yaml.org,2002:merge":
                continue
            key = self.construct_object(key_node, deep=True)
            try:
                hash(key)
            except TypeError:
                continue  # reported by SafeLoader itself
            if key in seen:
                self.duplicates.append((key, seen[key], key_node.start_mark))
            else:
                seen[key] = key_node.start_mark
        return super().construct_mapping(node, deep=deep)


# Replace SafeLoader's float resolver in the subclass only (SafeLoader stays untouched).
StrictLoader.yaml_implicit_resolvers = {
    k: [(tag, rx) for tag, rx in v if tag != "tag:yaml.org,2002:float"]
    for k, v in yaml.SafeLoader.yaml_implicit_resolvers.items()
}
StrictLoader.add_implicit_resolver("tag:yaml.org,2002:float", _FLOAT, list("-+0123456789."))


Path_ = tuple[Any, ...]


@dataclass(frozen=True)
class _Marks:
    """Positions of the nodes of one YAML document: value and key marks by data path."""

    values: dict[Path_, yaml.Mark]
    keys: dict[Path_, yaml.Mark]
    nodes: dict[Path_, yaml.Node]
    duplicates: tuple[tuple[Path_, yaml.Mark, yaml.Mark], ...] = ()

    def find(self, path: Path_, *, key: bool = False) -> yaml.Mark | None:
        if key and path in self.keys:
            return self.keys[path]
        p = tuple(path)
        while p:
            if p in self.values:
                return self.values[p]
            p = p[:-1]
        return self.values.get((), None)


def _collect_marks(loader: StrictLoader, node: yaml.Node) -> _Marks:
    values: dict[Path_, yaml.Mark] = {}
    keys: dict[Path_, yaml.Mark] = {}
    nodes: dict[Path_, yaml.Node] = {}
    dups: list[tuple[Path_, yaml.Mark, yaml.Mark]] = []

    def walk(n: yaml.Node, path: Path_) -> None:
        values[path] = n.start_mark
        nodes[path] = n
        if isinstance(n, yaml.MappingNode):
            for k, v in n.value:
                try:
                    key = loader.construct_object(k, deep=True)
                    hash(key)
                except Exception:  # unhashable keys are reported by the loader
                    continue
                if (*path, key) in keys:  # a duplicate: keep the first position
                    dups.append(((*path, key), keys[(*path, key)], k.start_mark))
                    continue
                keys[(*path, key)] = k.start_mark
                walk(v, (*path, key))
        elif isinstance(n, yaml.SequenceNode):
            for i, v in enumerate(n.value):
                walk(v, (*path, i))

    walk(node, ())
    return _Marks(values, keys, nodes, tuple(dups))


def parse_yaml(text: str, name: str = "<string>") -> tuple[Any, _Marks, list[Problem]]:
    """Parse YAML text safely; return the data, the node marks and the problems found.

    Problems are YAML syntax errors and duplicate keys; the data is ``None`` after a syntax
    error.
    """
    loader = StrictLoader(text)
    loader.name = name
    marks = _Marks({}, {}, {})
    try:
        node = loader.get_single_node()
        if node is None:
            return None, marks, []
        marks = _collect_marks(loader, node)
        data = loader.construct_document(node)
    except yaml.MarkedYAMLError as exc:
        mark = exc.problem_mark or exc.context_mark
        msg = " ".join(str(s) for s in (exc.context, exc.problem) if s)
        if isinstance(exc, yaml.constructor.ConstructorError):
            msg = f"YAML: {exc.problem}; only plain data is read (safe loading)"
        else:
            msg = f"YAML syntax: {msg}"
        if "flow" in msg:
            msg += " (inside {…} or […], quote text that holds [ ] { } or commas, e.g. " \
                   "'well[1].strength')"
        line = mark.line + 1 if mark else None
        col = mark.column + 1 if mark else None
        path = next((p for p, m in marks.values.items()
                     if mark and (m.line, m.column) == (mark.line, mark.column) and p), ())
        return None, marks, [Problem(name, line, col, _display(path), msg)]
    except yaml.YAMLError as exc:
        return None, _Marks({}, {}, {}), [Problem(name, None, None, "", f"YAML: {exc}")]
    finally:
        loader.dispose()
    problems = [
        Problem(name, rep.line + 1, rep.column + 1, _display(path),
                f"duplicate key (first given at line {first.line + 1}); give each key once")
        for path, first, rep in marks.duplicates
    ]
    return data, marks, problems


# =========================================================================== schema
class _Strict(BaseModel):
    """Base of every case-file model: unknown keys forbidden, numbers strict, frozen."""

    model_config = ConfigDict(extra="forbid", strict=True, frozen=True, allow_inf_nan=False,
                              populate_by_name=True)


Positive = Annotated[float, Field(gt=0)]
Auto = Literal["auto"]


class Particle(_Strict):
    """``particle:`` the mass in the unit system's mass unit, and an optional name."""

    mass: Positive | None = None
    name: str | None = None


class Space(_Strict):
    """``space:`` dimension, angular quantum numbers, spin and an optional list of j."""

    dimension: Literal[1, 2, 3] = 3
    l: Annotated[int, Field(ge=0)] | list[Annotated[int, Field(ge=0)]] | None = None
    spin: Literal["1/2", 0.5] | None = None
    j: list[Union[Positive, str]] | None = None  # noqa: UP007 - pydantic needs the union here

    @field_validator("l")
    @classmethod
    def _unique(cls, v: Any) -> Any:
        if isinstance(v, list):
            if not v:
                raise ValueError("must list at least one l")
            if len(set(v)) != len(v):
                raise ValueError(f"lists an l twice; got {v}")
        return v

    @field_validator("j")
    @classmethod
    def _halves(cls, v: list | None) -> list | None:
        if v is None:
            return v
        if not v:
            raise ValueError("must list at least one j")
        for item in v:
            _parse_half(item)
        return v


def _parse_half(value: Any) -> float:
    """``2.5`` or ``"5/2"`` → 2.5; raise ``ValueError`` unless it is a positive half-integer."""
    try:
        x = float(Fraction(value)) if isinstance(value, str) else float(value)
    except (ValueError, ZeroDivisionError):
        raise ValueError(f"must be a half-integer like 5/2 or 2.5; got {value!r}") from None
    if not (x > 0 and (2 * x) % 2 == 1):
        raise ValueError(f"must be a half-integer like 5/2 or 2.5; got {value!r}")
    return x


class Reference(_Strict):
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
_TAGS = {"range", "list"}


class Scan(_Strict):
    """``scan:`` one parameter by its path in the file (or ``coupling``) and its values."""

    parameter: str
    values: ScanValues

    def points(self) -> list[float]:
        """The scan values as floats."""
        v = self.values
        if isinstance(v, Range):
            if v.steps == 1:
                return [v.from_]
            step = (v.to - v.from_) / (v.steps - 1)
            return [v.from_ + i * step if i < v.steps - 1 else v.to for i in range(v.steps)]
        return [float(x) for x in v]


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
      ``none``): no study; ``error_estimate`` is the change of each level from a basis of
      N − N//4 states to N (or not estimated);
    - any other block runs :func:`anharmony.convergence.converge` per (scan point, channel),
      and ``estimate`` defaults to ``extrapolate`` (the study's error estimate);
    - the basis grows towards the tolerance (``grow``) only when ``tolerance`` is written (or
      ``grow: true``); otherwise the study only sets the flags of the case's own basis;
    - without ``lengths`` or ``frequencies`` a study that does not grow scans the sizes at the
      case's basis length (no ``basis_length`` axis); one that grows re-optimises the length
      (``lengths: auto``).
    """

    sizes: list[Annotated[int, Field(ge=1, le=MAX_SIZE)]] | None = None
    lengths: Annotated[list[Positive], Field(min_length=1)] | Auto | None = None
    frequencies: Annotated[list[Positive], Field(min_length=1)] | None = None
    tolerance: Positive = 1e-6
    grow: bool | None = None
    max_size: Annotated[int, Field(ge=2, le=MAX_SIZE)] | None = None
    cross_check: bool = False
    bounds: bool = True
    ir_length: Literal["eigenvalue", "closed_form"] = "eigenvalue"
    # how error_estimate is found: the study's estimate (extrapolate), the change of each level
    # from a basis of N - N//4 states (or the largest smaller convergence size) to N states, or
    # not at all; default: extrapolate when the block has any key, else smaller_basis
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

    def settings_mapping(self) -> dict[str, Any]:
        """The block as the mapping of :meth:`ConvergenceSettings.from_mapping` (written keys)."""
        out = {k: getattr(self, k) for k in sorted(self.written)}
        out["estimate"] = self.method
        return out


class CaseModel(_Strict):
    """The schema of one case (DESIGN §4)."""

    schema_: Literal[1] = Field(alias="schema")
    title: str = ""
    units: Literal["oscillator", "nuclear", "molecular", "trap", "dot", "atomic"] = "oscillator"
    particle: Particle = Field(default_factory=Particle)
    space: Space = Field(default_factory=Space)
    well: list[dict[Any, Any]] = Field(min_length=1)
    reference: Reference = Field(default_factory=Reference)
    basis: Basis = Field(default_factory=Basis)
    levels: Levels = Field(default_factory=Levels)
    scan: Scan | None = None
    perturbation: Perturbation | None = None
    convergence: Convergence = Field(default_factory=Convergence)
    output: str | None = None

    def to_dict(self) -> dict[str, Any]:
        """The case as plain data, with the file's key names (``schema``, ``from``)."""
        return self.model_dump(mode="python", by_alias=True, exclude_none=True)


# =========================================================================== error text
_PHRASES = {
    "float_type": "must be a number",
    "float_parsing": "must be a number",
    "int_type": "must be an integer",
    "int_parsing": "must be an integer",
    "int_from_float": "must be an integer",
    "string_type": "must be text",
    "bool_type": "must be true or false",
    "list_type": "must be a list",
    "dict_type": "must be a mapping",
    "model_type": "must be a mapping",
    "model_attributes_type": "must be a mapping",
    "finite_number": "must be a finite number",
    "missing": "is required",
}


def _model_for(loc: Sequence[Any]) -> type[BaseModel] | None:
    """The pydantic model that holds the key at ``loc`` (for near-miss suggestions)."""
    cls: Any = CaseModel
    for item in loc[:-1]:
        if isinstance(item, int) or item in _TAGS:
            continue
        fields = {f.alias or n: f for n, f in cls.model_fields.items()}
        if item not in fields:
            return None
        cls = _find_model(fields[item].annotation)
        if cls is None:
            return None
    return cls


def _find_model(annotation: Any) -> type[BaseModel] | None:
    if isinstance(annotation, type) and issubclass(annotation, BaseModel):
        return annotation
    for arg in getattr(annotation, "__args__", ()) or ():
        found = _find_model(arg)
        if found is not None:
            return found
    meta = getattr(annotation, "__origin__", None)
    return _find_model(meta) if meta is not None and meta is not annotation else None


def _keys_of(cls: type[BaseModel]) -> list[str]:
    return [f.alias or n for n, f in cls.model_fields.items()]


def _suggest(word: Any, choices: Iterable[str]) -> str:
    near = difflib.get_close_matches(str(word), list(choices), n=1, cutoff=0.6)
    return f" (did you mean {near[0]!r}?)" if near else ""


def _got(value: Any) -> str:
    text = repr(value)
    hint = ""
    if isinstance(value, bool):
        hint = " (YAML reads yes/no/on/off/true/false as true or false: quote it if you mean text)"
    return f"got {text[:60] + '…' if len(text) > 60 else text}{hint}"


def _message(err: Mapping[str, Any]) -> str:
    kind, loc, value, ctx = err["type"], err["loc"], err.get("input"), err.get("ctx") or {}
    if kind == "extra_forbidden":
        cls = _model_for(loc)
        valid = _keys_of(cls) if cls else []
        return (f"unknown key{_suggest(loc[-1], valid)}"
                + (f"; valid keys: {', '.join(valid)}" if valid else ""))
    if kind == "literal_error":
        expected = re.findall(r"'([^']*)'|(\b[0-9.]+\b)", ctx.get("expected", ""))
        names = [a or b for a, b in expected]
        if len(names) == 1:
            return f"must be {names[0]!r}; {_got(value)}"
        return (f"must be one of {', '.join(names)}; {_got(value)}"
                + (_suggest(value, names) if isinstance(value, str) else ""))
    if kind in ("greater_than", "greater_than_equal", "less_than", "less_than_equal"):
        word = {"greater_than": "greater than", "greater_than_equal": "at least",
                "less_than": "less than", "less_than_equal": "at most"}[kind]
        bound = next(iter(ctx.values()))
        return f"must be {word} {bound}; {_got(value)}"
    if kind in ("too_short", "too_long"):
        if kind == "too_short":
            return f"must have at least {ctx.get('min_length')} entries; got {len(value or [])}"
        return f"must have at most {ctx.get('max_length')} entries"
    if kind == "union_tag_invalid" or kind == "union_tag_not_found":
        return f"must be a mapping {{from, to, steps}} or a list of numbers; {_got(value)}"
    if kind == "missing":
        return "is required"
    if kind == "value_error":
        return str(ctx.get("error", err["msg"]))
    if kind in _PHRASES:
        return f"{_PHRASES[kind]}; {_got(value)}"
    return f"{err['msg']}; {_got(value)}"


def _clean_loc(err: Mapping[str, Any], data: Any) -> Path_:
    """The part of a pydantic ``loc`` that is a path in the data (union tags dropped)."""
    loc = err["loc"]
    out: list[Any] = []
    node = data
    for i, item in enumerate(loc):
        in_map = isinstance(node, Mapping) and item in node
        in_list = isinstance(node, list) and isinstance(item, int) and 0 <= item < len(node)
        if in_map or in_list:
            out.append(item)
            node = node[item]
        elif i == len(loc) - 1 and err["type"] in ("missing", "extra_forbidden"):
            out.append(item)
    return tuple(out)


def _expectation(message: str) -> str:
    text = message.split("; got ")[0]
    return text[len("must be "):] if text.startswith("must be ") else text


def _schema_problems(exc: ValidationError, data: Any) -> list[tuple[Path_, str, bool]]:
    """One ``(path, message, at_key)`` per field from pydantic's errors.

    A union reports one error per member; those at one path are merged into one message, and
    a member's error is dropped where another member got further into the value.
    """
    errors = list(exc.errors(include_url=False))
    cleaned = [(_clean_loc(e, data), e) for e in errors]
    cleaned = [(loc, e) for loc, e in cleaned
               if not (loc[:1] == ("well",) and len(loc) > 1)]  # terms: checked separately
    locs = {loc for loc, _ in cleaned}
    keep = [(loc, e) for loc, e in cleaned
            if not any(len(o) > len(loc) and o[:len(loc)] == loc for o in locs)]
    grouped: dict[Path_, list[Mapping[str, Any]]] = {}
    for loc, e in keep:
        grouped.setdefault(loc, []).append(e)
    out = []
    for loc, errs in grouped.items():
        if len(errs) == 1:
            out.append((loc, _message(errs[0]), errs[0]["type"] == "extra_forbidden"))
            continue
        parts = []
        for e in errs:
            phrase = _expectation(_message(e))
            if phrase not in parts:
                parts.append(phrase)
        out.append((loc, f"must be {' or '.join(parts)}; {_got(errs[0].get('input'))}", False))
    return out


def _display(path: Sequence[Any]) -> str:
    out = ""
    for item in path:
        if isinstance(item, int):
            out += f"[{item}]"
        elif out:
            out += f".{item}"
        else:
            out = str(item)
    return out


# =========================================================================== cases
@dataclass(frozen=True)
class ChannelSpec:
    """One channel of a case: dimension, l (``None``: 1D without symmetry) and j."""

    dimension: int
    l: int | None
    j: float | None = None

    @property
    def label(self) -> str:
        """``s1/2``, ``d5/2``, ``p`` (3D), ``m=1`` (2D), ``even``/``odd``/``x`` (1D)."""
        if self.dimension == 1:
            return "x" if self.l is None else ("even", "odd")[self.l]
        if self.dimension == 2:
            return f"m={self.l}"
        letter = _LETTERS[self.l] if self.l < len(_LETTERS) else f"[l={self.l}]"
        if self.j is None:
            return letter
        return f"{letter}{round(2 * self.j)}/2"

    @property
    def ls(self) -> float:
        """⟨l·s⟩ = [j(j+1) − l(l+1) − 3/4]/2, 0 without spin."""
        if self.j is None or self.l is None:
            return 0.0
        return 0.5 * (self.j * (self.j + 1) - self.l * (self.l + 1) - 0.75)


_LETTERS = "spdfghiklmnoqrtuvwxyz"  # spectroscopic letters, j skipped (trade convention)

# Parameters that enter the Hamiltonian linearly (H = A + value · B).
_LINEAR = {
    ("harmonic", "stiffness"), ("power", "strength"), ("gaussian", "depth"),
    ("woods_saxon", "depth"), ("spin_orbit", "strength"), ("coulomb", "charge"),
    ("morse", "depth"), ("poschl_teller", "depth"),
}


@dataclass(frozen=True)
class ScanTarget:
    """What a scan parameter path points at.

    ``kind`` is ``"coupling"``, ``"term"`` (``term`` index, ``keys`` inside its parameters),
    or ``"setting"`` (``keys`` into the case, e.g. ``("particle", "mass")``).
    """

    kind: str
    term: int | None = None
    keys: tuple[Any, ...] = ()
    linear: bool = False


_SETTINGS = {("particle", "mass"), ("reference", "frequency"), ("reference", "length"),
             ("reference", "center"), ("basis", "length")}


def _parse_scan_path(path: str, well: Sequence[Mapping]) -> ScanTarget:
    """Resolve ``scan.parameter``; raise ``ValueError`` with a message naming what is missing."""
    text = path.strip()
    if text in ("coupling", "lambda"):
        return ScanTarget("coupling", linear=True)
    m = re.fullmatch(r"well\[(\d+)\]\.([A-Za-z_][A-Za-z0-9_]*)"
                     r"(?:\[(-?\d+)\]|\.([A-Za-z_][A-Za-z0-9_]*))?", text)
    if m:
        i, name, index, sub = int(m[1]), m[2], m[3], m[4]
        if i >= len(well):
            raise ValueError(f"{text!r}: the well has {len(well)} term(s), well[0]"
                             f"…well[{len(well) - 1}]; there is no well[{i}]")
        spec = well[i]
        if not isinstance(spec, Mapping) or len(spec) != 1:
            raise ValueError(f"{text!r}: well[{i}] is not a valid term")
        (term, params), = spec.items()
        if term not in TERMS:
            raise ValueError(f"{text!r}: well[{i}] is not a known term")
        params = params or {}
        valid = [p for p in TERMS[term].parameters if p != "formula"]
        if name not in valid:
            raise ValueError(f"{text!r}: {term} has no parameter {name!r}{_suggest(name, valid)};"
                             f" its parameters are {', '.join(valid)}")
        if index is not None or sub is not None:
            container = params.get(name)
            key: Any = int(index) if index is not None else sub
            if not isinstance(container, Mapping) or key not in container:
                have = list(container) if isinstance(container, Mapping) else []
                raise ValueError(f"{text!r}: well[{i}].{name} has no entry {key!r}"
                                 + (f"; it has {', '.join(map(str, have))}" if have else ""))
            linear = name == "coefficients"
            return ScanTarget("term", i, (term, name, key), linear=linear)
        if name in ("coefficients", "parameters"):
            raise ValueError(f"{text!r}: name one entry, e.g. well[{i}].{name}[4]"
                             if name == "coefficients" else
                             f"{text!r}: name one entry, e.g. well[{i}].parameters.g")
        return ScanTarget("term", i, (term, name), linear=(term, name) in _LINEAR)
    parts = tuple(text.split("."))
    if parts in _SETTINGS:
        return ScanTarget("setting", keys=parts)
    choices = ["coupling", "well[i].<parameter>", *(".".join(s) for s in sorted(_SETTINGS))]
    raise ValueError(f"{text!r} is not a parameter of the case{_suggest(text, choices)}; "
                     f"expected one of "
                     f"{', '.join(choices)}")


@dataclass(frozen=True)
class Case:
    """One validated case.

    Attributes
    ----------
    model : CaseModel
        The validated settings.
    file : str
        The case file as given (``<dict>`` for a case built from data).
    index : int or None
        Position in the file's ``cases:`` list, ``None`` for a file holding one case.
    text : str
        The case's own YAML text (the whole file for a single case); results store it.
    output : pathlib.Path
        Where the result goes (``output:`` relative to the case file's folder).
    """

    model: CaseModel
    file: str
    index: int | None
    text: str
    output: Path
    scan_target: ScanTarget = field(default=ScanTarget("coupling", linear=True))

    # --------------------------------------------------------------- derived settings
    @property
    def name(self) -> str:
        """``file`` or ``file#k`` (k the 1-based position in ``cases:``)."""
        return self.file if self.index is None else f"{self.file}#{self.index + 1}"

    @property
    def units(self) -> UnitSystem:
        return get_units(self.model.units)

    @property
    def mass(self) -> float | None:
        return self.model.particle.mass

    @property
    def dimension(self) -> int:
        return self.model.space.dimension

    @property
    def scan_parameter(self) -> str:
        return self.model.scan.parameter.strip() if self.model.scan else "coupling"

    def scan_values(self) -> list[float]:
        """Scan values; a case without ``scan:`` has the one point λ = 1 (the physical well)."""
        return self.model.scan.points() if self.model.scan else [1.0]

    def channels(self) -> list[ChannelSpec]:
        """The channels of the case, in file order of l, j = l − ½ before l + ½."""
        return _channels(self.model.space)

    @functools.cached_property
    def _data(self) -> dict[str, Any]:
        return self.model.to_dict()

    def settings_at(self, value: float | None) -> dict[str, Any]:
        """The case data with the scanned parameter set to ``value`` (``coupling``: as is).

        The result shares unchanged parts with the case: read it, do not modify it.
        """
        data = dict(self._data)
        t = self.scan_target
        if value is None or t.kind == "coupling":
            return data
        if t.kind == "term":
            term, *keys = t.keys
            well = list(data["well"])
            params = dict(well[t.term][term] or {})
            if len(keys) == 2:
                params[keys[0]] = {**params[keys[0]], keys[1]: value}
            else:
                params[keys[0]] = value
            well[t.term] = {term: params}
            data["well"] = well
        else:
            section, key = t.keys
            data[section] = {**data.get(section, {}), key: value}
        return data

    def well_at(self, value: float | None = None) -> Well:
        """The well at one scan value (the physical well for ``coupling`` scans)."""
        data = self.settings_at(value)
        mass = data.get("particle", {}).get("mass")
        return Well.from_terms(data["well"], self.model.units, mass)

    def mass_at(self, value: float | None = None) -> float | None:
        return self.settings_at(value).get("particle", {}).get("mass")

    def reference_spec(self, value: float | None = None) -> Any:
        """The ``reference`` argument of the core: ``"auto"`` or ``{"frequency": …}`` etc."""
        ref = self.settings_at(value).get("reference", {})
        spec: dict[str, float] = {}
        if isinstance(ref.get("frequency"), (int, float)):
            spec["frequency"] = float(ref["frequency"])
        if ref.get("length") is not None:
            spec["length"] = float(ref["length"])
        if ref.get("center") is not None:
            spec["center"] = float(ref["center"])
        return spec if ("frequency" in spec or "length" in spec) else (
            "auto" if "center" not in spec else {"center": spec["center"]})

    def basis_length_at(self, value: float | None = None) -> float | str:
        length = self.settings_at(value).get("basis", {}).get("length", "auto")
        return length if length == "auto" else float(length)

    def to_dict(self) -> dict[str, Any]:
        return self.model.to_dict()

    # --------------------------------------------------------------- convergence study
    def study_settings(self) -> Any:
        """The :class:`~anharmony.convergence.ConvergenceSettings` of the study, or None.

        ``tolerance`` is the case's (given or default), ``grow`` follows
        :attr:`Convergence.grows`, and a study without sizes (or ``max_size``) that does not
        grow scans a √2 ladder that ends at the case's basis size. ``lengths`` stays None both
        for the automatic grid and for a study at the basis length
        (:attr:`Convergence.scans_lengths` tells which).

        Raises
        ------
        ValueError
            From the study's own validation, as ``convergence.<key>: message``.
        """
        conv = self.model.convergence
        if not conv.study:
            return None
        from .convergence import ConvergenceSettings

        s = ConvergenceSettings.from_mapping(conv.settings_mapping())
        sizes = s.sizes
        if sizes is None and s.max_size is None and not conv.grows:
            sizes = _ladder_down(self.model.basis.size, self.model.levels.count)
        return dataclasses.replace(s, tolerance=float(conv.tolerance), grow=conv.grows,
                                   sizes=sizes)

    def with_cross_check(self) -> Case:
        """The same case with ``convergence.cross_check: true`` (the text is kept)."""
        conv = self.model.convergence.model_copy(update={"cross_check": True})
        return dataclasses.replace(self, model=self.model.model_copy(update={"convergence": conv}))


LADDER_RATIO = 2.0 ** 0.5  # successive sizes of a study's default ladder (as the study's own)


def _ladder_down(top: int, levels: int) -> tuple[int, ...]:
    """Sizes top, top/√2, top/2, … down to max(10, levels + 4): a study of the case's basis.

    The largest size is the case's own, so the study's estimate is that of its levels. A basis
    too small for that start goes down to max(top // 4, levels + 1) instead.
    """
    start = max(10, levels + 4)
    if top < start * LADDER_RATIO:
        start = max(top // 4, levels + 1, 1)
    out = {int(top)}
    x = float(top)
    while round(x / LADDER_RATIO) >= start:
        x /= LADDER_RATIO
        out.add(round(x))
    return tuple(sorted(out))


def _channels(space: Space) -> list[ChannelSpec]:
    d = space.dimension
    ls = space.l if isinstance(space.l, list) else ([space.l] if space.l is not None else None)
    if d == 1:
        if ls is None:
            return [ChannelSpec(1, None)]
        return [ChannelSpec(1, l) for l in ls]
    ls = ls if ls is not None else [0]
    if space.spin is None:
        return [ChannelSpec(d, l) for l in ls]
    wanted = {_parse_half(j) for j in space.j} if space.j else None
    out = []
    for l in ls:
        for j in (l - 0.5, l + 0.5):
            if j > 0 and (wanted is None or j in wanted):
                out.append(ChannelSpec(d, l, j))
    return out


# =========================================================================== validation
def _check_terms(well: Any, units: str, mass: Any) -> list[tuple[Path_, str, bool]]:
    """Check every term; return ``(data path, message, at_key)`` per problem."""
    out: list[tuple[Path_, str, bool]] = []
    if not isinstance(well, list):
        return out  # reported by the schema
    system = units if units in SYSTEMS else "oscillator"
    m = mass if isinstance(mass, (int, float)) and not isinstance(mass, bool) and mass > 0 \
        else None
    for i, spec in enumerate(well):
        if not isinstance(spec, Mapping) or len(spec) != 1:
            out.append((("well", i), "must be a mapping with one term name as its key, e.g. "
                        f"'- harmonic: {{frequency: 1.0}}'; {_got(spec)}", False))
            continue
        (name, params), = spec.items()
        if name not in TERMS:
            out.append((("well", i, name), f"unknown term {name!r}{_suggest(name, TERMS)}; "
                        f"known terms: {', '.join(TERMS)}", True))
            continue
        if params is None:
            params = {}
        if not isinstance(params, Mapping):
            out.append((("well", i, name), f"parameters of {name} must be a mapping; "
                        f"{_got(params)}", False))
            continue
        try:
            TERMS[name].from_params(params, system, m)
        except TermError as exc:
            fld = exc.field
            if fld is None:
                out.append((("well", i, name), exc.message, False))
                continue
            root = re.match(r"[A-Za-z_0-9]+", fld)
            keys: tuple[Any, ...] = (root[0],) if root else (fld,)
            sub = re.fullmatch(r"[A-Za-z_0-9]+(?:\[(.+)\]|\.(.+))", fld)
            if sub:
                raw = sub[1] if sub[1] is not None else sub[2]
                raw = raw.strip("'\"")
                key = int(raw) if re.fullmatch(r"-?\d+", raw) else raw
                keys = (*keys, key)
            at_key = "unknown parameter" in exc.message
            out.append((("well", i, name, *keys), exc.message, at_key))
        except (ImportError, ValueError, TypeError) as exc:  # e.g. a formula the core rejects
            out.append((("well", i, name), str(exc), False))
    return out


def _term_display(path: Path_) -> str:
    # well[i].<term>.<param> is written well[i].<param>, as in scan paths (DESIGN §4).
    if len(path) >= 4 and path[0] == "well":
        return _display((path[0], path[1], *path[3:]))
    return _display(path)


def _validate(data: Any, name: str, marks: _Marks, prefix: Path_, folder: Path,
              index: int | None, text: str) -> tuple[Case | None, list[Problem]]:
    problems: list[Problem] = []

    def add(path: Path_, message: str, *, key: bool = False, shown: str | None = None) -> None:
        mark = marks.find((*prefix, *path), key=key)
        line, col = (mark.line + 1, mark.column + 1) if mark else (None, None)
        disp = shown if shown is not None else _display(path)
        full = _display(prefix) + ("." + disp if prefix and disp and not disp.startswith("[")
                                   else disp)
        problems.append(Problem(name, line, col, full, message))

    if not isinstance(data, Mapping):
        add((), f"a case must be a mapping of settings (schema, units, well, …); {_got(data)}")
        return None, problems
    model = None
    try:
        model = CaseModel.model_validate(data)
    except ValidationError as exc:
        for loc, message, at_key in _schema_problems(exc, data):
            add(loc, message, key=at_key)
    units = data.get("units", "oscillator")
    mass = (data.get("particle") or {}).get("mass") if isinstance(data.get("particle"),
                                                                  Mapping) else None
    term_problems = _check_terms(data.get("well"), units, mass)
    for path, message, at_key in term_problems:
        add(path, message, key=at_key, shown=_term_display(path))
    if model is None or term_problems:
        return None, problems

    # cross-field checks --------------------------------------------------------------
    space = model.space
    has_so = any(next(iter(t)) == "spin_orbit" for t in model.well)
    if space.spin is not None and space.dimension != 3:
        add(("space", "spin"), f"spin applies in 3 dimensions only; dimension is "
            f"{space.dimension}")
    if space.j is not None and space.spin is None:
        add(("space", "j"), "j needs spin: 1/2")
    if has_so and space.spin is None:
        add(("space",), "the well has a spin_orbit term: add spin: 1/2 to space")
    if space.dimension == 1 and space.l is not None:
        bad = [l for l in (space.l if isinstance(space.l, list) else [space.l]) if l > 1]
        if bad:
            add(("space", "l"), f"in 1D, l is the parity (0 even, 1 odd); got {bad[0]}")
    if not problems:
        if not _channels(space):
            add(("space", "j"), "no channel has these j for the listed l")
        elif space.j is not None:
            js = {_parse_half(j) for j in space.j}
            reach = {c.j for c in _channels(space.model_copy(update={"j": None}))}
            for j in sorted(js - reach):
                add(("space", "j"), f"j = {Fraction(j)} is not l ± 1/2 for any listed l")
    if space.dimension == 1 and space.l is not None:
        try:
            symmetric = Well.from_terms(model.well, model.units,
                                        model.particle.mass).is_symmetric(0.0)
        except (ValueError, TypeError):
            symmetric = True  # reported elsewhere
        if not symmetric:
            add(("space", "l"), "1D parity channels need a well symmetric about x = 0; "
                "leave l out for the basis without symmetry")
    if model.levels.count > model.basis.size:
        add(("levels", "count"), f"asks for {model.levels.count} levels from a basis of "
            f"{model.basis.size} states; raise basis.size or lower levels.count")
    if model.reference.frequency is not None and model.reference.length is not None:
        add(("reference", "length"), "give frequency or length, not both")
    if model.reference.center is not None and space.dimension != 1:
        add(("reference", "center"), "a centre applies to 1D wells only")
    conv = model.convergence
    if conv.sizes is not None and len(set(conv.sizes)) != len(conv.sizes):
        add(("convergence", "sizes"), f"lists a size twice; got {conv.sizes}")
    if conv.lengths is not None and conv.frequencies is not None:
        add(("convergence", "frequencies"), "give lengths or frequencies, not both")
    if conv.grow and conv.method != "extrapolate":
        add(("convergence", "grow"), "growing the basis needs the study's error estimate "
            f"(estimate: extrapolate); got estimate: {conv.method}")
    if model.output is not None and not model.output.endswith(".nc"):
        add(("output",), f"must name a netCDF file ending in .nc; got {model.output!r}")

    target = ScanTarget("coupling", linear=True)
    if model.scan is not None:
        try:
            target = _parse_scan_path(model.scan.parameter, model.well)
        except ValueError as exc:
            add(("scan", "parameter"), str(exc))
    if problems:
        return None, problems

    out_name = model.output or (Path(name).stem + ("" if index is None else f"-{index + 1}")
                                + ".nc")
    output = Path(out_name) if Path(out_name).is_absolute() else folder / out_name
    case = Case(model, name, index, text, output, target)
    for path, message in _study_problems(case):
        add(path, message)
    if problems:
        return None, problems
    if model.scan is not None and target.kind != "coupling":
        # every scan point must give a valid case
        for k, value in enumerate(model.scan.points()):
            try:
                settings = case.settings_at(value)
                CaseModel.model_validate(settings)
                case.well_at(value)
            except TermError as exc:
                add(("scan", "values"), f"at {model.scan.parameter} = {value:g}: "
                    f"{exc.message}" + ("" if k == 0 else f" (scan point {k})"))
                break
            except ValidationError as exc:
                err = exc.errors(include_url=False)[0]
                add(("scan", "values"), f"at {model.scan.parameter} = {value:g}: "
                    f"{_message(err)}")
                break
            except (ValueError, TypeError) as exc:
                add(("scan", "values"), f"at {model.scan.parameter} = {value:g}: {exc}")
                break
    return (None if problems else case), problems


def _study_problems(case: Case) -> list[tuple[Path_, str]]:
    """Checks of the ``convergence:`` block beyond its types (the study's own validation)."""
    conv = case.model.convergence
    if not conv.study:
        return []
    if case.scan_target.kind == "coupling" and case.model.scan is not None:
        for i, spec in enumerate(case.model.well):
            if next(iter(spec)) == "expression":
                return [(("convergence",), f"a study of a coupling scan needs the well at each "
                         f"lambda, and the expression term well[{i}] cannot be scaled by "
                         "lambda; scan a parameter of its formula instead")]
    try:
        settings = case.study_settings()
    except ValueError as exc:  # "convergence.sizes[1]: message"
        where, _, message = str(exc).partition(": ")
        return [(_parse_path(where), message or str(exc))]
    count = case.model.levels.count
    top = max(settings.size_axis(count))
    if top < count:
        key = "max_size" if "max_size" in conv.written else "sizes"
        return [(("convergence", key), f"the largest basis size of the study is {top}, fewer "
                 f"than the {count} levels asked for (levels.count)")]
    return []


def _parse_path(text: str) -> Path_:
    """``convergence.sizes[1]`` → ``("convergence", "sizes", 1)``."""
    out: list[Any] = []
    for name, index in re.findall(r"([A-Za-z_][A-Za-z0-9_]*)|\[(\d+)\]", text):
        out.append(name if name else int(index))
    return tuple(out)


def _case_text(text: str, node: yaml.Node | None) -> str:
    """The YAML text of one entry of a ``cases:`` list, dedented into a document of its own."""
    if node is None:
        return text
    start, end = node.start_mark, node.end_mark
    chunk = " " * start.column + text[start.index:end.index]
    return textwrap.dedent(chunk).rstrip() + "\n"


def _from_text(text: str, name: str, folder: Path) -> tuple[list[Case], list[Problem]]:
    data, marks, problems = parse_yaml(text, name)
    if data is None:
        if not problems:
            problems = [Problem(name, 1, 1, "", "the file is empty; expected a case "
                                "(schema, units, well, …) or a list under cases:")]
        return [], problems
    cases: list[Case] = []
    if isinstance(data, Mapping) and "cases" in data:
        extra = [k for k in data if k != "cases"]
        for k in extra:
            m = marks.find((k,), key=True)
            problems.append(Problem(name, m.line + 1 if m else None,
                                    m.column + 1 if m else None, str(k),
                                    "with cases:, put every setting inside each case"))
        items = data["cases"]
        if not isinstance(items, list) or not items:
            m = marks.find(("cases",))
            problems.append(Problem(name, m.line + 1 if m else None, m.column + 1 if m else None,
                                    "cases", f"must be a non-empty list of cases; {_got(items)}"))
            return [], problems
        for i, item in enumerate(items):
            case, found = _validate(item, name, marks, ("cases", i), folder, i,
                                    _case_text(text, marks.nodes.get(("cases", i))))
            problems += found
            if case is not None:
                cases.append(case)
    else:
        case, found = _validate(data, name, marks, (), folder, None, text)
        problems += found
        if case is not None:
            cases.append(case)
    problems.sort(key=lambda p: (p.line or 0, p.column or 0))
    return ([] if problems else cases), problems


def load_cases(paths: str | Path | Sequence[str | Path]) -> list[Case]:
    """Load and validate one or more case files.

    Parameters
    ----------
    paths
        A case file or a list of them; each holds one case or a list under ``cases:``.

    Returns
    -------
    list of Case
        Every case of every file, in order.

    Raises
    ------
    CaseError
        With every problem of every file (``.problems``), including two cases that would
        write the same result file.
    """
    if isinstance(paths, (str, Path)):
        paths = [paths]
    cases: list[Case] = []
    problems: list[Problem] = []
    for p in paths:
        name = str(p)
        try:
            text = Path(p).read_text(encoding="utf-8")
        except FileNotFoundError:
            problems.append(Problem(name, None, None, "", "no such case file"))
            continue
        except (OSError, UnicodeDecodeError) as exc:
            problems.append(Problem(name, None, None, "", f"cannot read the case file: "
                                    f"{getattr(exc, 'strerror', None) or exc}"))
            continue
        found, bad = _from_text(text, name, Path(p).resolve().parent)
        cases += found
        problems += bad
    seen: dict[Path, Case] = {}
    for c in cases:
        key = c.output.resolve()
        if key in seen:
            problems.append(Problem(c.file, None, None, "output" if c.index is None
                                    else f"cases[{c.index}].output",
                                    f"{c.name} and {seen[key].name} would both write {c.output}"))
        seen.setdefault(key, c)
    if problems:
        raise CaseError(problems)
    return cases


def load_case(path: str | Path) -> Case:
    """Load a file holding exactly one case; raise :class:`CaseError` otherwise."""
    cases = load_cases([path])
    if len(cases) != 1:
        raise CaseError([Problem(str(path), None, None, "cases",
                                 f"holds {len(cases)} cases; use load_cases")])
    return cases[0]


def case_from_dict(data: Mapping[str, Any], name: str = "<dict>",
                   folder: str | Path = ".") -> Case:
    """Validate a case given as data (the same keys as a case file)."""
    text = yaml.safe_dump(_plain(data), sort_keys=False, allow_unicode=True)
    _, marks, _ = parse_yaml(text, name)
    case, problems = _validate(copy.deepcopy(dict(data)), name, marks, (), Path(folder), None,
                               text)
    if problems or case is None:
        raise CaseError(problems)
    return case


def _plain(obj: Any) -> Any:
    if isinstance(obj, Mapping):
        return {k: _plain(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [_plain(v) for v in obj]
    return obj


# =========================================================================== tasks
@dataclass(frozen=True)
class Task:
    """One unit of work: one scan point in one channel, with its reference oscillator.

    Attributes
    ----------
    case : Case
    scan_index : int
    scan_value : float
    channel : ChannelSpec
    reference : object
        The resolved :class:`anharmony.spectrum.Reference` (or ``None`` before the core has
        one).
    """

    case: Case
    scan_index: int
    scan_value: float
    channel: ChannelSpec
    reference: Any = None


def resolve_reference(case: Case, value: float | None) -> Any:
    """The reference oscillator of the case at one scan value (one per point, all channels).

    It is resolved for the channel of lowest l (and lowest j) and shared by every channel, so
    that each scan point has one ħω and b (DESIGN §6). For ``coupling`` scans it is the
    reference of the physical well (λ = 1) at every point.
    """
    from .spectrum import reference_oscillator

    if case.scan_target.kind == "coupling":
        value = None
    first = min(case.channels(), key=lambda c: (-1 if c.l is None else c.l, c.j or 0.0))
    return reference_oscillator(case.well_at(value), case.dimension, l=first.l,
                                mass=case.mass_at(value), levels=case.model.levels.count,
                                reference=case.reference_spec(value), j=first.j)


def expand(case: Case, *, resolve: bool = True) -> list[Task]:
    """The tasks of a case: every scan point × every channel.

    Parameters
    ----------
    case
        A validated case.
    resolve
        Resolve the reference oscillator of each scan point (needs the numerical core).
    """
    tasks = []
    refs: dict[int, Any] = {}
    for k, value in enumerate(case.scan_values()):
        if resolve:
            refs[k] = resolve_reference(case, value) if (
                k == 0 or case.scan_target.kind != "coupling") else refs[0]
        for ch in case.channels():
            tasks.append(Task(case, k, value, ch, refs.get(k)))
    return tasks
