"""The data of a case's ``fit:`` block: a CSV file of measurements, and each datum's channel.

``fit.data`` is a list of mappings in the case file or the name of a CSV file (relative to the
case file) with named columns: ``level`` (or ``levels`` as two indices ``"0 2"``), ``value``,
``uncertainty`` and optionally ``quantity``, ``l``, ``j``, ``name``. Lines starting with ``#``
and blank lines are skipped; an empty cell is a key left out. Cells are read as integers,
numbers or text by their look only: whether a value is right for its key is checked by
:func:`anharmony.fit`'s own validators (from :mod:`.crossfield`), as for data in the file.
"""

from __future__ import annotations

import csv
import re
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from ..fit import _DATUM_KEYS
from .messages import suggest

__all__ = ["CSV_COLUMNS", "CsvProblem", "FitData", "datum_channel", "read_fit_csv"]

CSV_COLUMNS = _DATUM_KEYS  # the columns a data file may have: the keys of one datum
_REQUIRED = ("value", "uncertainty")
_TEXT = ("quantity", "name", "j")  # kept as text (j may be written 5/2)
_INT = re.compile(r"[-+]?\d+")
_FLOAT = re.compile(r"[-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?")


@dataclass(frozen=True)
class FitData:
    """The data of a fit as mappings, and where each came from.

    Attributes
    ----------
    rows : tuple of dict
        One mapping per datum, with the keys :func:`anharmony.fit` accepts.
    source : pathlib.Path or None
        The CSV file, or ``None`` for data written in the case file.
    lines : tuple of int
        The CSV line of each row (empty for data in the case file).
    columns : tuple of dict
        The 1-based character column of each cell of each row, by key.
    name : str
        The CSV file as the case names it (for messages).
    """

    rows: tuple[dict[str, Any], ...]
    source: Path | None = None
    lines: tuple[int, ...] = ()
    name: str = ""
    columns: tuple[dict[str, int], ...] = ()


@dataclass(frozen=True)
class CsvProblem:
    """One problem of a data file: its line and column (1-based), the field, the message."""

    line: int | None
    column: int | None
    field: str
    message: str


def _cell(text: str) -> Any:
    """A cell as an int, a float or text, by its look (the validators judge it)."""
    t = text.strip()
    if _INT.fullmatch(t):
        return int(t)
    if _FLOAT.fullmatch(t):
        return float(t)
    return t


def _columns_of(raw: str, cells: list[str]) -> list[int]:
    """1-based character column of each cell of an (unquoted) CSV line."""
    out, at = [], 1
    for c in cells:
        out.append(at)
        at += len(c) + 1
    return out if sum(len(c) for c in cells) + len(cells) - 1 == len(raw) else [1] * len(cells)


def read_fit_csv(path: Path, name: str) -> tuple[FitData | None, list[CsvProblem]]:
    """Read a data file; return the data, or ``None`` and the problems found.

    Parameters
    ----------
    path
        The file (resolved against the case file's folder).
    name
        The file as written in the case (used in messages).
    """
    try:
        text = path.read_text(encoding="utf-8")
    except FileNotFoundError:
        return None, [CsvProblem(None, None, "fit.data", f"no such data file {name!r} (looked "
                                 f"for {path}); the name is relative to the case file")]
    except (OSError, UnicodeDecodeError) as exc:
        return None, [CsvProblem(None, None, "fit.data", f"cannot read the data file {name!r}: "
                                 f"{getattr(exc, 'strerror', None) or exc}")]
    lines = [(k + 1, raw) for k, raw in enumerate(text.splitlines())
             if raw.strip() and not raw.lstrip().startswith("#")]
    if not lines:
        return None, [CsvProblem(None, None, "fit.data", f"the data file {name!r} is empty; "
                                 "expected a header line (level,value,uncertainty) and rows")]
    head_line, head_raw = lines[0]
    header = [h.strip() for h in next(csv.reader([head_raw]))]
    problems: list[CsvProblem] = []
    cols = _columns_of(head_raw, header)
    for h, col in zip(header, cols, strict=True):
        if h not in CSV_COLUMNS:
            problems.append(CsvProblem(head_line, col, "fit.data",
                                       f"unknown column {h!r}{suggest(h, CSV_COLUMNS)}; valid "
                                       f"columns: {', '.join(CSV_COLUMNS)}"))
    for h in sorted({h for h in header if header.count(h) > 1}):
        problems.append(CsvProblem(head_line, 1, "fit.data", f"column {h!r} appears twice"))
    missing = [h for h in _REQUIRED if h not in header]
    if "level" not in header and "levels" not in header:
        missing.insert(0, "level (or levels)")
    if missing:
        problems.append(CsvProblem(head_line, 1, "fit.data",
                                   f"missing column(s) {', '.join(missing)}; the header has "
                                   f"{', '.join(header) or 'no names'}"))
    if problems:
        return None, problems
    rows, at, where = [], [], []
    for line, raw in lines[1:]:
        cells = next(csv.reader([raw]))
        k = len(rows)
        if len(cells) != len(header):
            problems.append(CsvProblem(line, 1, f"fit.data[{k}]", f"row has {len(cells)} "
                                       f"cell(s); the header has {len(header)} columns"))
            rows.append({})
            continue
        row: dict[str, Any] = {}
        cols = dict(zip(header, _columns_of(raw, cells), strict=True))
        for h, c in zip(header, cells, strict=True):
            col = cols[h]
            if not c.strip():
                if h in _REQUIRED:
                    problems.append(CsvProblem(line, col, f"fit.data[{k}].{h}", "is empty"))
                continue
            if h in _TEXT:
                row[h] = c.strip()
            elif h == "levels":
                row[h] = [_cell(p) for p in c.split()]
            else:
                row[h] = _cell(c)
        rows.append(row)
        at.append(line)
        where.append(cols)
    if not rows and not problems:
        problems.append(CsvProblem(head_line, 1, "fit.data", f"the data file {name!r} has a "
                                   "header but no rows"))
    if problems:
        return None, problems
    return FitData(tuple(rows), path, tuple(at), name, tuple(where)), []


def datum_channel(d: Mapping[str, Any], channels: Sequence[Any]) -> tuple[Any, Any]:
    """The case channel (l, j) a datum refers to; ``ValueError((key, message))`` otherwise.

    A datum names ``l`` (and ``j`` with spin) unless the case's channels leave one choice:
    one l, and for that l one j.
    """
    from ..hamiltonian import parse_j

    have = ", ".join(c.label for c in channels)
    ls = sorted({c.l for c in channels}, key=lambda v: -1 if v is None else v)
    if "l" in d:
        l = d["l"]
        if isinstance(l, bool) or not isinstance(l, int) or l < 0:
            raise ValueError(("l", f"must be an integer >= 0; got {l!r}"))
        if ls == [None]:
            raise ValueError(("l", f"the case uses the 1D basis without symmetry (channel x); "
                              f"leave l out, or give space.l for parity channels; got {l}"))
        if l not in ls:
            raise ValueError(("l", f"the case has no channel with l = {l}; its channels: {have}"
                              " (add it to space.l)"))
    elif len(ls) == 1:
        l = ls[0]
    else:
        raise ValueError(("", f"name the channel with l: the case has {len(ls)} channels "
                          f"({have})"))
    js = [c.j for c in channels if c.l == l]
    if "j" in d:
        try:
            j = parse_j(d["j"])
        except (TypeError, ValueError) as exc:
            raise ValueError(("j", str(exc).partition(": ")[2])) from None
        if j not in js:
            have_j = ", ".join(c.label for c in channels if c.l == l)
            raise ValueError(("j", f"the case has no channel l = {l}, j = {d['j']}; its "
                              f"channels with that l: {have_j}"))
    elif len(js) == 1:
        j = js[0]
    else:
        raise ValueError(("", f"name j: l = {l} has the channels "
                          f"{', '.join(c.label for c in channels if c.l == l)}"))
    return l, j
