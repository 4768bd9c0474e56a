"""A validated case: its channels, its scan target and the settings at each scan point.

:class:`Case` wraps the validated :class:`~.schema.CaseModel` with what the runner needs:
the channels (:class:`ChannelSpec`), what the scan parameter points at (:class:`ScanTarget`,
from :func:`parse_scan_path`), the well and settings at each scan value, and the settings of
the convergence study.
"""

from __future__ import annotations

import dataclasses
import functools
import math
import re
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from ..convergence.settings import LADDER_RATIO
from ..errors import InputError
from ..labels import channel_label
from ..terms import TERMS, linear_parameters
from ..units import UnitSystem, get_units
from ..well import Well
from .fitdata import FitData, datum_channel
from .messages import Issue, display, suggest
from .schema import CaseModel, FitParameter, Space, parse_half

__all__ = [
    "LINEAR_PARAMETERS",
    "Case",
    "ChannelSpec",
    "ScanTarget",
    "channels_of",
    "parse_scan_path",
]

@dataclass(frozen=True)
class ChannelSpec:
    """One channel of a case: dimension, l (``None``: 1D without symmetry) and j."""

    dimension: int
    l: int | None
    j: float | None = None

    @property
    def label(self) -> str:
        """``s1/2``, ``d5/2``, ``p`` (3D), ``m=1`` (2D), ``even``/``odd``/``x`` (1D)."""
        return channel_label(self.dimension, self.l, self.j)

    @property
    def ls(self) -> float:
        """⟨l·s⟩ = [j(j+1) − l(l+1) − 3/4]/2, 0 without spin."""
        if self.j is None or self.l is None:
            return 0.0
        return 0.5 * (self.j * (self.j + 1) - self.l * (self.l + 1) - 0.75)


# Parameters that enter the Hamiltonian linearly (H = A + value · B), by term: the one table
# of this fact on the case side (a scan over one of them is built once and solved per point).
LINEAR_PARAMETERS: dict[str, frozenset[str]] = {
    kind: frozenset({name}) for kind, name in linear_parameters().items()}


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
    linked: tuple[ScanTarget, ...] = ()  # more targets set to the same value (scan.linked)


_SETTINGS = {("particle", "mass"), ("reference", "frequency"), ("reference", "length"),
             ("reference", "center"), ("basis", "length")}


def parse_scan_path(path: str, well: Sequence[Mapping]) -> ScanTarget:
    """Resolve ``scan.parameter``; raise ``ValueError`` with a message naming what is missing."""
    text = path.strip()
    if text in ("coupling", "lambda"):
        return ScanTarget("coupling", linear=True)
    m = re.fullmatch(r"well\[(\d+)\]\.([A-Za-z_][A-Za-z0-9_]*)"
                     r"(?:\[(-?\d+)\]|\.([A-Za-z_][A-Za-z0-9_]*))?", text)
    if m:
        i, name, index, sub = int(m[1]), m[2], m[3], m[4]
        if i >= len(well):
            raise InputError(f"{text!r}: the well has {len(well)} term(s), well[0]"
                             f"…well[{len(well) - 1}]; there is no well[{i}]")
        spec = well[i]
        if not isinstance(spec, Mapping) or len(spec) != 1:
            raise InputError(f"{text!r}: well[{i}] is not a valid term")
        (term, params), = spec.items()
        if term not in TERMS:
            raise InputError(f"{text!r}: well[{i}] is not a known term")
        params = params or {}
        valid = [p for p in TERMS[term].parameters if p != "formula"]
        if name not in valid:
            raise InputError(f"{text!r}: {term} has no parameter {name!r}{suggest(name, valid)};"
                             f" its parameters are {', '.join(valid)}")
        if index is not None or sub is not None:
            container = params.get(name)
            key: Any = int(index) if index is not None else sub
            if not isinstance(container, Mapping) or key not in container:
                have = list(container) if isinstance(container, Mapping) else []
                raise InputError(f"{text!r}: well[{i}].{name} has no entry {key!r}"
                                 + (f"; it has {', '.join(map(str, have))}" if have else ""))
            linear = name == "coefficients"
            return ScanTarget("term", i, (term, name, key), linear=linear)
        if name in ("coefficients", "parameters"):
            raise InputError(f"{text!r}: name one entry, e.g. well[{i}].{name}[4]"
                             if name == "coefficients" else
                             f"{text!r}: name one entry, e.g. well[{i}].parameters.g")
        return ScanTarget("term", i, (term, name), linear=name in LINEAR_PARAMETERS.get(term, ()))
    parts = tuple(text.split("."))
    if parts in _SETTINGS:
        return ScanTarget("setting", keys=parts)
    choices = ["coupling", "well[i].<parameter>", *(".".join(s) for s in sorted(_SETTINGS))]
    raise InputError(f"{text!r} is not a parameter of the case{suggest(text, choices)}; "
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
    scan_target : ScanTarget
        What ``scan.parameter`` points at.
    fit_data : FitData or None
        The data of the ``fit:`` block (read from its CSV file where it names one).
    line_offset, column_offset : int
        Where ``text`` sits in ``file``: the lines above it and the indentation taken off
        (0 for a file of one case); :meth:`issue` uses them to point into the file.
    """

    model: CaseModel
    file: str
    index: int | None
    text: str
    output: Path
    scan_target: ScanTarget = field(default=ScanTarget("coupling", linear=True))
    fit_data: FitData | None = None
    line_offset: int = field(default=0, compare=False)
    column_offset: int = field(default=0, compare=False)

    def issue(self, path: Sequence[Any], message: str) -> Issue:
        """The problem ``message`` at the field ``path`` of this case, at its file position.

        ``path`` is a data path inside the case (``("well", 0)``, ``("output",)``); the issue
        names the file, line and column of that node (or its nearest given ancestor) and the
        field as the file spells it (``cases[1].output`` inside a ``cases:`` list).
        """
        from .loader import parse_yaml

        prefix: tuple[Any, ...] = () if self.index is None else ("cases", self.index)
        line = col = None
        if self.file != "<dict>":
            line, col = parse_yaml(self.text, self.file)[1].position(tuple(path))
        if line is not None:
            line += self.line_offset
            col = (col or 1) + self.column_offset
        return Issue(self.file, line, col, display((*prefix, *path)), message)

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
        return channels_of(self.model.space)

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
        for target in (t, *t.linked):
            _set_target(data, target, value)
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

    # --------------------------------------------------------------- fit
    def fit_parameters(self) -> dict[str, Any]:
        """``fit.parameters`` as :func:`anharmony.fit` takes them (path → start or mapping)."""
        out: dict[str, Any] = {}
        for path, spec in (self.model.fit.parameters if self.model.fit else {}).items():
            if isinstance(spec, FitParameter):
                spec = {k: v for k, v in (("start", spec.start), ("bounds", spec.bounds))
                        if v is not None}
            out[path] = spec
        return out

    def fit_rows(self, rows: Sequence[Mapping[str, Any]] | None = None
                 ) -> list[dict[str, Any]]:
        """The fit's data (or ``rows``) with each datum's channel written out (``l``, and
        ``j`` with spin).

        Raises
        ------
        ValueError
            From :func:`.fitdata.datum_channel` for a datum whose channel is not the case's
            (the validation reports it first).
        """
        if rows is None:
            rows = self.fit_data.rows if self.fit_data else ()
        out = []
        for d in rows:
            l, j = datum_channel(d, self.channels())
            row = {k: v for k, v in d.items() if k not in ("l", "j")}
            row["l"] = l
            if j is not None:
                row["j"] = j
            out.append(row)
        return out

    def fit_length(self) -> float | str:
        """The basis length of the fit: ``basis.length``, else that of a reference given as a
        number, else ``"auto"`` (re-chosen by :func:`anharmony.fit` for the fitted well)."""
        length = self.basis_length_at(None)
        if length != "auto":
            return length
        spec = self.reference_spec(None)
        if isinstance(spec, dict) and "length" in spec:
            return float(spec["length"])
        if isinstance(spec, dict) and "frequency" in spec:  # b = sqrt(ħ/mω) = sqrt(2 (ħ²/2m)/ħω)
            return math.sqrt(2.0 * self.units.hbar2_over_2m(self.mass) / float(spec["frequency"]))
        return "auto"

    def fitted(self, values: Mapping[str, float]) -> Case:
        """The same case with the well's parameters set to fitted ``values`` (path → value),
        so that the levels of the fitted well are computed as any case's (the text is kept)."""
        well = [{k: dict(v or {})} for t in self.model.well for k, v in t.items()]
        for path, value in values.items():
            m = re.fullmatch(r"well\[(\d+)\]\.([A-Za-z_][A-Za-z0-9_]*)", path)
            if m is None:
                raise InputError(f"{path!r} is not a parameter path well[i].name")
            (kind, params), = well[int(m[1])].items()
            params[m[2]] = float(value)
            if kind == "gaussian" and m[2] in ("range", "waist"):  # exactly one of the two
                params.pop("waist" if m[2] == "range" else "range", None)
        model = self.model.model_copy(update={"well": well})
        return dataclasses.replace(self, model=model)

    def fit_arguments(self) -> dict[str, Any]:
        """Keyword arguments of :func:`anharmony.fit` for this case's ``fit:`` block."""
        if self.model.fit is None:
            raise InputError(f"{self.name}: the case has no fit: block")
        return {"terms": [dict(t) for t in self.model.well], "dimension": self.dimension,
                "l": None, "j": None, "parameters": self.fit_parameters(),
                "data": self.fit_rows(), "size": self.model.basis.size,
                "length": self.fit_length(), "units": self.model.units, "mass": self.mass,
                "scale_covariance": self.model.fit.scale_covariance}

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
        s = conv.settings()
        sizes = s.sizes
        if sizes is None and s.max_size is None and not conv.grows:
            sizes = _ladder_down(self.model.basis.size, self.model.levels.count)
        return dataclasses.replace(s, tolerance=float(conv.tolerance), grow=conv.grows,
                                   sizes=sizes)

    def with_cross_check(self) -> Case:
        """The same case with ``convergence.cross_check: true`` (the text is kept)."""
        conv = self.model.convergence.model_copy(update={"cross_check": True})
        return dataclasses.replace(self, model=self.model.model_copy(update={"convergence": conv}))


def _set_target(data: dict[str, Any], t: ScanTarget, value: float) -> None:
    """Set the parameter ``t`` points at to ``value`` in ``data`` (copying what it changes)."""
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


def channels_of(space: Space) -> list[ChannelSpec]:
    d = space.dimension
    ls = space.l if isinstance(space.l, list) else ([space.l] if space.l is not None else None)
    if d == 1:
        if ls is None:
            return [ChannelSpec(1, None)]
        return [ChannelSpec(1, l) for l in ls]
    ls = ls if ls is not None else [0]
    if space.spin is None:
        return [ChannelSpec(d, l) for l in ls]
    wanted = {parse_half(j) for j in space.j} if space.j else None
    out = []
    for l in ls:
        for j in (l - 0.5, l + 0.5):
            if j > 0 and (wanted is None or j in wanted):
                out.append(ChannelSpec(d, l, j))
    return out


