"""One message style for case files: ``file:line:col: field.path: message``.

Every problem of a case file — YAML syntax, duplicate keys, schema errors, term parameters,
cross-field checks — becomes an :class:`Issue`. Pydantic's errors are turned into our wording
here and only here (:func:`schema_issues`): ``must be a number; got 'O.1'``, ``unknown key
(did you mean 'size'?); valid keys: …``. Near-miss suggestions come from
:func:`anharmony._checks.suggest`, the same as the core's.
"""

from __future__ import annotations

import re
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Any

from pydantic import BaseModel, ValidationError

from .._checks import got as _got
from .._checks import suggest

__all__ = ["Issue", "Path_", "display", "got", "issue_at", "schema_issues", "suggest"]

Path_ = tuple[Any, ...]  # a data path: keys and list indices, ("well", 1, "power", "strength")


@dataclass(frozen=True)
class Issue:
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


def display(path: Sequence[Any]) -> str:
    """``("well", 1, "strength")`` → ``well[1].strength``."""
    out = ""
    for item in path:
        if isinstance(item, int):
            out += f"[{item}]"
        elif out:
            out += f".{item}"
        else:
            out = str(item)
    return out


def term_display(path: Path_) -> str:
    """``well[i].<term>.<param>`` is written ``well[i].<param>``, as in scan paths (DESIGN §4)."""
    if len(path) >= 4 and path[0] == "well":
        return display((path[0], path[1], *path[3:]))
    return display(path)


def got(value: Any) -> str:
    """``got <value>``, with a hint where YAML turned a word into true/false."""
    hint = ""
    if isinstance(value, bool):
        hint = " (YAML reads yes/no/on/off/true/false as true or false: quote it if you mean text)"
    return _got(value) + hint


def issue_at(marks: Any, file: str, prefix: Path_, path: Path_, message: str, *,
             key: bool = False, shown: str | None = None) -> Issue:
    """The :class:`Issue` of ``message`` at ``prefix + path``, positioned by ``marks``.

    ``key`` points at the key instead of its value (unknown keys); ``shown`` replaces the
    displayed part after ``prefix`` (term parameters are shown without the term name).
    """
    line, col = marks.position((*prefix, *path), key=key)
    disp = shown if shown is not None else display(path)
    full = display(prefix) + ("." + disp if prefix and disp and not disp.startswith("[")
                              else disp)
    return Issue(file, line, col, full, message)


# --------------------------------------------------------------------------- pydantic → text
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
_BOUNDS = {"greater_than": "greater than", "greater_than_equal": "at least",
           "less_than": "less than", "less_than_equal": "at most"}
UNION_TAGS = {"range", "list"}  # tags of the schema's discriminated unions (not data keys)


def _model_for(root: type[BaseModel], loc: Sequence[Any]) -> type[BaseModel] | None:
    """The pydantic model that holds the key at ``loc`` (for near-miss suggestions)."""
    cls: Any = root
    for item in loc[:-1]:
        if isinstance(item, int) or item in UNION_TAGS:
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


def keys_of(cls: type[BaseModel]) -> list[str]:
    """The case-file names of a model's keys."""
    return [f.alias or n for n, f in cls.model_fields.items()]


def message(err: Mapping[str, Any], root: type[BaseModel]) -> str:
    """Our wording of one pydantic error (``must be …; got …``)."""
    kind, loc, value, ctx = err["type"], err["loc"], err.get("input"), err.get("ctx") or {}
    if kind == "extra_forbidden":
        cls = _model_for(root, loc)
        valid = keys_of(cls) if cls else []
        return (f"unknown key{suggest(loc[-1], valid)}"
                + (f"; valid keys: {', '.join(valid)}" if valid else ""))
    if kind == "literal_error":
        expected = re.findall(r"'([^']*)'|(\b[0-9.]+\b)", ctx.get("expected", ""))
        names = [a or b for a, b in expected]
        if len(names) == 1:
            return f"must be {names[0]!r}; {got(value)}"
        return (f"must be one of {', '.join(names)}; {got(value)}"
                + (suggest(value, names) if isinstance(value, str) else ""))
    if kind in _BOUNDS:
        bound = next(iter(ctx.values()))
        bound = f"{bound:g}" if isinstance(bound, float) else bound
        return f"must be {_BOUNDS[kind]} {bound}; {got(value)}"
    if kind == "too_short":
        return f"must have at least {ctx.get('min_length')} entries; got {len(value or [])}"
    if kind == "too_long":
        return f"must have at most {ctx.get('max_length')} entries"
    if kind in ("union_tag_invalid", "union_tag_not_found"):
        return f"must be a mapping {{from, to, steps}} or a list of numbers; {got(value)}"
    if kind == "value_error":
        return str(ctx.get("error", err["msg"]))
    if kind in ("case", "term"):  # our own PydanticCustomError: the message is ours already
        return str(err["msg"])
    if kind == "missing":
        return "is required"
    if kind in _PHRASES:
        return f"{_PHRASES[kind]}; {got(value)}"
    return f"{err['msg']}; {got(value)}"


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
    if err["type"] == "term":  # the term's own field, inside well[i]
        out.extend((err.get("ctx") or {}).get("where", ()))
    return tuple(out)


def _expectation(text: str) -> str:
    text = text.split("; got ")[0]
    return text[len("must be "):] if text.startswith("must be ") else text


@dataclass(frozen=True)
class SchemaIssue:
    """One field's problem from the schema, before it is given a position."""

    path: Path_
    message: str
    at_key: bool = False
    shown: str | None = None


def schema_issues(exc: ValidationError, data: Any, root: type[BaseModel]
                  ) -> list[SchemaIssue]:
    """One :class:`SchemaIssue` per field from pydantic's errors.

    A union reports one error per member; those at one path are merged into one message, and
    a member's error is dropped where another member got further into the value.
    """
    cleaned = [(_clean_loc(e, data), e) for e in exc.errors(include_url=False)]
    locs = {loc for loc, _ in cleaned}
    keep = [(loc, e) for loc, e in cleaned
            if not any(len(o) > len(loc) and o[:len(loc)] == loc for o in locs)]
    grouped: dict[Path_, list[Mapping[str, Any]]] = {}
    for loc, e in keep:
        grouped.setdefault(loc, []).append(e)
    out = []
    for loc, errs in grouped.items():
        first = errs[0]
        if first["type"] == "term":
            ctx = first.get("ctx") or {}
            out.append(SchemaIssue(loc, message(first, root), bool(ctx.get("at_key")),
                                   term_display(loc)))
        elif len(errs) == 1:
            out.append(SchemaIssue(loc, message(first, root), first["type"] == "extra_forbidden"))
        else:
            parts: list[str] = []
            for e in errs:
                phrase = _expectation(message(e, root))
                if phrase not in parts:
                    parts.append(phrase)
            out.append(SchemaIssue(loc, f"must be {' or '.join(parts)}; {got(first.get('input'))}"))
    return out

