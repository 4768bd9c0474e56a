"""Reading case-file YAML: safe loading, numbers like ``1e-3``, duplicate keys, positions.

:class:`StrictLoader` is a :class:`yaml.SafeLoader` subclass (plain data only, PITFALLS §2)
that reads ``1e-3`` as a float and records duplicate keys. :func:`parse_yaml` returns the data,
the position (:class:`Marks`) of every node by its data path, and the problems found — YAML
syntax errors and duplicate keys — as :class:`~.messages.Issue` objects, so that the schema's
problems can be reported at the same ``file:line:col``.
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from typing import Any

import yaml

from .messages import Issue, Path_, display

__all__ = ["Marks", "StrictLoader", "collect_marks", "parse_yaml"]

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


@dataclass(frozen=True)
class Marks:
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

    def position(self, path: Path_, *, key: bool = False) -> tuple[int | None, int | None]:
        """1-based (line, column) of the node at ``path`` (or its nearest ancestor)."""
        mark = self.find(path, key=key)
        return (mark.line + 1, mark.column + 1) if mark else (None, None)


def collect_marks(loader: StrictLoader, node: yaml.Node) -> Marks:
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
    return Marks(values, keys, nodes, tuple(dups))


def parse_yaml(text: str, name: str = "<string>") -> tuple[Any, Marks, list[Issue]]:
    """Parse YAML text safely; return the data, the node marks and the problems found.

    Problems are YAML syntax errors and duplicate keys; the data is ``None`` after a syntax
    error.
    """
    loader = StrictLoader(text)
    loader.name = name
    marks = Marks({}, {}, {})
    try:
        node = loader.get_single_node()
        if node is None:
            return None, marks, []
        marks = collect_marks(loader, node)
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
        return None, marks, [Issue(name, line, col, display(path), msg)]
    except yaml.YAMLError as exc:
        return None, Marks({}, {}, {}), [Issue(name, None, None, "", f"YAML: {exc}")]
    finally:
        loader.dispose()
    problems = [
        Issue(name, rep.line + 1, rep.column + 1, display(path),
                f"duplicate key (first given at line {first.line + 1}); give each key once")
        for path, first, rep in marks.duplicates
    ]
    return data, marks, problems

