"""Reading and validating case files: every problem of every file, in one message style.

:func:`load_cases` reads each file (:mod:`.loader`), validates each case with the schema
(:mod:`.schema`, one pydantic pass that also builds the terms), then the cross-field checks
(:mod:`.crossfield`), and raises one :class:`~anharmony.errors.CaseError` listing every
:class:`~.messages.Issue` as ``file:line:col: field.path: message``.
"""

from __future__ import annotations

import copy
import textwrap
from collections.abc import Mapping, Sequence
from pathlib import Path
from typing import Any

import yaml
from pydantic import ValidationError

from ..errors import CaseError
from .case import Case
from .crossfield import case_issues, model_issues
from .fitdata import FitData, read_fit_csv
from .loader import Marks, parse_yaml
from .messages import Issue, Path_, display, got, issue_at, schema_issues
from .schema import CaseModel

__all__ = ["case_from_dict", "load_case", "load_cases"]


def _validate(data: Any, name: str, marks: Marks, prefix: Path_, folder: Path,
              index: int | None, text: str, offsets: tuple[int, int] = (0, 0)
              ) -> tuple[Case | None, list[Issue]]:
    """One case: the schema, then the cross-field checks once the fields are right."""
    if not isinstance(data, Mapping):
        return None, [issue_at(marks, name, prefix, (), "a case must be a mapping of settings "
                               f"(schema, units, well, …); {got(data)}")]
    try:
        model = CaseModel.model_validate(data)
    except ValidationError as exc:
        return None, [issue_at(marks, name, prefix, s.path, s.message, key=s.at_key,
                               shown=s.shown) for s in schema_issues(exc, data, CaseModel)]
    found, target = model_issues(model)
    if found:
        return None, [issue_at(marks, name, prefix, path, msg) for path, msg in found]
    fit_data, problems = _fit_data(model, name, marks, prefix, folder)
    if problems:
        return None, problems
    out_name = model.output or (Path(name).stem + ("" if index is None else f"-{index + 1}")
                                + ".nc")
    output = Path(out_name) if Path(out_name).is_absolute() else folder / out_name
    case = Case(model, name, index, text, output, target, fit_data, *offsets)
    found = case_issues(case)
    if not found:
        return case, []
    return None, [_position(marks, name, prefix, path, msg, fit_data) for path, msg in found]


def _csv_name(case_file: str, name: str) -> str:
    """The data file as a user finds it: beside the case file (as the case file is named)."""
    return name if Path(name).is_absolute() else str(Path(case_file).parent / name)


def _fit_data(model: CaseModel, name: str, marks: Marks, prefix: Path_, folder: Path
              ) -> tuple[FitData | None, list[Issue]]:
    """The fit's data: the rows written in the case, or those of its CSV file."""
    fit = model.fit
    if fit is None:
        return None, []
    if not isinstance(fit.data, str):
        return FitData(tuple(dict(d) for d in fit.data)), []
    path = Path(fit.data) if Path(fit.data).is_absolute() else folder / fit.data
    data, problems = read_fit_csv(path, fit.data)
    shown = _csv_name(name, fit.data)
    out = []
    for p in problems:
        field = display(prefix) + "." + p.field if prefix else p.field
        if p.line is None:  # the file as a whole: at the case's fit.data
            out.append(issue_at(marks, name, prefix, ("fit", "data"), p.message))
        else:
            out.append(Issue(shown, p.line, p.column, field, p.message))
    return data, out


def _position(marks: Marks, name: str, prefix: Path_, path: Path_, msg: str,
              fit_data: FitData | None) -> Issue:
    """An issue at its case-file node, or at its row of the fit's CSV file."""
    row = path[2] if len(path) > 2 and path[:2] == ("fit", "data") else None
    if fit_data is None or fit_data.source is None or not isinstance(row, int):
        return issue_at(marks, name, prefix, path, msg)
    key = path[3] if len(path) > 3 else None
    return Issue(_csv_name(name, fit_data.name), fit_data.lines[row],
                 fit_data.columns[row].get(key, 1), display((*prefix, *path)), msg)


def _case_text(text: str, node: yaml.Node | None) -> tuple[str, tuple[int, int]]:
    """The YAML text of one entry of a ``cases:`` list, dedented into a document of its own,
    and its offsets in the file: the lines above it and the columns taken off."""
    if node is None:
        return text, (0, 0)
    start, end = node.start_mark, node.end_mark
    chunk = " " * start.column + text[start.index:end.index]
    indents = [len(ln) - len(ln.lstrip(" ")) for ln in chunk.splitlines() if ln.strip()]
    return textwrap.dedent(chunk).rstrip() + "\n", (start.line, min(indents, default=0))


def _from_text(text: str, name: str, folder: Path) -> tuple[list[Case], list[Issue]]:
    data, marks, problems = parse_yaml(text, name)
    if data is None:
        if not problems:
            problems = [Issue(name, 1, 1, "", "the file is empty; expected a case "
                                "(schema, units, well, …) or a list under cases:")]
        return [], problems
    cases: list[Case] = []
    if isinstance(data, Mapping) and "cases" in data:
        extra = [k for k in data if k != "cases"]
        for k in extra:
            problems.append(issue_at(marks, name, (), (k,), "with cases:, put every setting "
                                     "inside each case", key=True))
        items = data["cases"]
        if not isinstance(items, list) or not items:
            problems.append(issue_at(marks, name, (), ("cases",),
                                     f"must be a non-empty list of cases; {got(items)}"))
            return [], problems
        for i, item in enumerate(items):
            case, found = _validate(item, name, marks, ("cases", i), folder, i,
                                    *_case_text(text, marks.nodes.get(("cases", i))))
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
    problems: list[Issue] = []
    for p in paths:
        name = str(p)
        try:
            text = Path(p).read_text(encoding="utf-8")
        except FileNotFoundError:
            problems.append(Issue(name, None, None, "", "no such case file"))
            continue
        except (OSError, UnicodeDecodeError) as exc:
            problems.append(Issue(name, None, None, "", f"cannot read the case file: "
                                    f"{getattr(exc, 'strerror', None) or exc}"))
            continue
        found, bad = _from_text(text, name, Path(p).resolve().parent)
        cases += found
        problems += bad
    seen: dict[Path, Case] = {}
    for c in cases:
        key = c.output.resolve()
        if key in seen:
            problems.append(c.issue(("output",), f"{c.name} and {seen[key].name} would both "
                                    f"write {c.output}"))
        seen.setdefault(key, c)
    if problems:
        raise CaseError(problems)
    return cases


def load_case(path: str | Path) -> Case:
    """Load a file holding exactly one case; raise :class:`CaseError` otherwise."""
    cases = load_cases([path])
    if len(cases) != 1:
        raise CaseError([Issue(str(path), None, None, "cases",
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

