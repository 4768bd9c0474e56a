"""Reading case-file YAML: safe loading, numbers like ``1e-3``, duplicate keys, positions.

:class:`StrictLoader` is a :class:`yaml.SafeLoader` subclass (plain data only, PITFALLS §2)
that reads ``1e-3`` as a float and records duplicate keys. It also bounds the work of reading
a hostile file: nesting deeper than :data:`MAX_DEPTH`, aliases that refer to the node holding
them, and aliases that expand the document beyond :data:`MAX_NODES` values ("billion laughs")
are refused at their line, and a value its tag cannot read (``!!int 12abc``, a 5000-digit
integer, ``!!timestamp 2001-13-45``) is an error at its line instead of an exception.
Dates are not read as dates: ``title: 2001-12-14`` is text. :func:`parse_yaml` returns the data,
the position (:class:`Marks`) of every node by its data path, and the problems found — YAML
syntax errors and duplicate keys — as :class:`~.messages.Issue` objects, so that the schema's
problems can be reported at the same ``file:line:col``.
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from typing import Any

import yaml
from yaml.composer import ComposerError

from .messages import Issue, Path_, display

__all__ = ["MAX_DEPTH", "MAX_NODES", "Marks", "StrictLoader", "collect_marks", "parse_yaml"]

#: Deepest nesting of mappings and lists a case file may have (a case needs about six).
MAX_DEPTH = 40
#: Most values (scalars, lists, mappings) a case file may expand to through its aliases; a
#: case with a long inline fit table holds a few thousand, so this only stops alias bombs.
MAX_NODES = 200_000

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
        self._depth = 0
        self._open: set[str] = set()      # anchors whose node is still being composed
        self._sizes: dict[int, int] = {}  # id(node) -> values it expands to, aliases followed

    def compose_node(self, parent: Any, index: Any) -> yaml.Node:
        """Compose one node, refusing deep nesting, alias loops and alias bombs at their line."""
        event = self.peek_event()
        if isinstance(event, yaml.AliasEvent) and event.anchor in self._open:
            raise TooMuch(None, None, f"the alias *{event.anchor} refers to a node that "
                                "holds it (a loop); give the values instead", event.start_mark)
        self._depth += 1
        if self._depth > MAX_DEPTH:
            raise TooMuch(None, None, f"nesting deeper than {MAX_DEPTH} levels; a case "
                                "file needs a few", event.start_mark)
        anchor = None if isinstance(event, yaml.AliasEvent) else event.anchor
        if anchor is not None:
            self._open.add(anchor)
        try:
            node = super().compose_node(parent, index)
        finally:
            self._depth -= 1
            self._open.discard(anchor)
        if id(node) not in self._sizes:  # a new node (an alias returns a composed one)
            if isinstance(node, yaml.MappingNode):
                parts = [n for pair in node.value for n in pair]
            elif isinstance(node, yaml.SequenceNode):
                parts = node.value
            else:
                parts = []
            size = 1 + sum(self._sizes.get(id(n), 1) for n in parts)
            if size > MAX_NODES:
                raise TooMuch(None, None, f"through its aliases (*name) this part "
                                    f"expands to more than {MAX_NODES} values; write the "
                                    "values out or use fewer aliases", node.start_mark)
            self._sizes[id(node)] = size
        return node

    def construct_object(self, node: yaml.Node, deep: bool = False) -> Any:
        """Construct a value; one its tag cannot read is an error at the node's line."""
        try:
            value = super().construct_object(node, deep=deep)
            if isinstance(value, str) and _UNWRITABLE.search(value):
                char = _UNWRITABLE.search(value).group()
                raise UnreadableValue(None, None, f"the text holds the character "
                                      f"#x{ord(char):04x}, which is "
                                      + ("half of a UTF-16 pair, not a character"
                                         if 0xD800 <= ord(char) <= 0xDFFF else
                                         "a control character")
                                      + "; remove it", node.start_mark)
            return value
        except yaml.MarkedYAMLError:
            raise
        except (ValueError, OverflowError, TypeError, AttributeError, KeyError, IndexError,
                RecursionError) as exc:
            shown = str(node.value) if isinstance(node, yaml.ScalarNode) else node.tag
            if len(shown) > 40:
                shown = f"{shown[:20]}…({len(shown)} characters)"
            tag = node.tag.rsplit(":", 1)[-1]
            why = (str(exc).split(": value has")[0].split("; use sys.")[0]
                   if isinstance(exc, (ValueError, OverflowError)) else
                   "not in the form this tag reads")
            raise UnreadableValue(None, None, f"cannot read {shown!r} as {tag} ({why})",
                                  node.start_mark) from None

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


# Text no file name, netCDF attribute or terminal can carry: lone surrogates (from "\ud800"
# escapes) and control characters other than tab and newline (from "\0", "\x07" escapes).
_UNWRITABLE = re.compile("[\ud800-\udfff\x00-\x08\x0b\x0c\x0e-\x1f\x7f]")


class UnreadableValue(yaml.constructor.ConstructorError):
    """A scalar its tag cannot read (``!!float abc``): bad data, not an unsafe tag."""


class TooMuch(ComposerError):
    """A document beyond the bounds of a case file: too deep, an alias loop or bomb."""


# Replace SafeLoader's float resolver in the subclass only (SafeLoader stays untouched), and
# drop its timestamp resolver: a case file holds no dates, and 2001-13-45 must stay text.
_DROPPED = ("tag:yaml.org,2002:float", "tag:yaml.org,2002:timestamp")
StrictLoader.yaml_implicit_resolvers = {
    k: [(tag, rx) for tag, rx in v if tag not in _DROPPED]
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
    marks = Marks({}, {}, {})
    try:
        loader = StrictLoader(text)
    except yaml.reader.ReaderError as exc:  # a character YAML does not allow (NUL, …)
        return None, marks, [_reader_issue(exc, text, name)]
    loader.name = name
    try:
        node = loader.get_single_node()
        if node is None:
            return None, marks, []
        marks = collect_marks(loader, node)
        data = loader.construct_document(node)
    except yaml.MarkedYAMLError as exc:
        mark = exc.problem_mark or exc.context_mark
        msg = " ".join(str(s) for s in (exc.context, exc.problem) if s)
        if isinstance(exc, (UnreadableValue, TooMuch)):
            msg = f"YAML: {exc.problem}"
        elif isinstance(exc, yaml.constructor.ConstructorError):
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
    except yaml.reader.ReaderError as exc:
        return None, marks, [_reader_issue(exc, text, name)]
    except yaml.YAMLError as exc:
        return None, Marks({}, {}, {}), [Issue(name, 1, 1, "", f"YAML: {exc}")]
    finally:
        loader.dispose()
    problems = [
        Issue(name, rep.line + 1, rep.column + 1, display(path),
                f"duplicate key (first given at line {first.line + 1}); give each key once")
        for path, first, rep in marks.duplicates
    ]
    return data, marks, problems



def _reader_issue(exc: yaml.reader.ReaderError, text: str, name: str) -> Issue:
    """A character YAML does not allow, at its line and column."""
    pos = max(0, min(int(exc.position), len(text)))
    line = text.count("\n", 0, pos) + 1
    col = pos - (text.rfind("\n", 0, pos) + 1) + 1
    char = exc.character  # PyYAML gives the code point (an int); bytes or text otherwise
    code = (char if isinstance(char, int) else ord(char[:1]) if isinstance(char, str) and char
            else char[0] if isinstance(char, bytes) and char else 0)
    return Issue(name, line, col, "", f"the character #x{code:04x} is not allowed in a YAML "
                 "file (control characters other than tab and newline are not); remove it")
