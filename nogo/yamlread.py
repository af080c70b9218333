"""Safe YAML reading that remembers where every key came from.

PyYAML's safe loader is extended so that no file can make nogo lie, hang or
run out of memory:

* a mapping that repeats a key is an error (YAML says keys are unique; PyYAML
  would silently keep the last one); a key must be a plain string or number
  (``true``, ``null``, a date or a list as a key is refused: quote it);
* every mapping and sequence carries the line of each of its items, so later
  stages can point at the exact line of a bad key;
* nesting is bounded (:data:`MAX_DEPTH` levels) and so is alias expansion:
  the node graph is composed first (aliases share nodes, so composing is
  cheap) and its expanded size counted before anything is constructed; it
  may exceed the number of written nodes at most :data:`EXPANSION_RATIO`
  times, and never :data:`MAX_EXPANDED_NODES`;
* explicit tags are limited to the plain scalar ones (``!!str``, ``!!int``,
  ``!!float``, ``!!bool``, ``!!null``, ``!!timestamp``) on scalars, and
  ``!!map``/``!!seq`` on mappings and sequences; a conversion that fails
  (``!!int abc``) is an :class:`InputError` with the line; ``!!pairs``,
  ``!!omap``, ``!!set``, ``!!binary`` and custom tags are refused.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

import datetime

import yaml
from yaml.nodes import MappingNode, ScalarNode, SequenceNode

from .errors import InputError, Where


class Node:
    """Mixin: the file and 1-based line where a mapping or list starts."""

    file: str | None = None
    line: int | None = None


class YMap(dict, Node):
    """A mapping that knows the line of each key."""

    def __init__(self, *a, **k):
        super().__init__(*a, **k)
        self.key_lines: dict[Any, int] = {}

    def where(self, key: Any = None, path: str | None = None) -> Where:
        line = self.key_lines.get(key, self.line) if key is not None else self.line
        return Where(self.file, line, path)


class YList(list, Node):
    """A sequence that knows the line of each item."""

    def __init__(self, *a, **k):
        super().__init__(*a, **k)
        self.item_lines: list[int] = []

    def where(self, index: int | None = None, path: str | None = None) -> Where:
        line = self.line
        if index is not None and index < len(self.item_lines):
            line = self.item_lines[index]
        return Where(self.file, line, path)


#: deepest nesting of mappings and sequences accepted
MAX_DEPTH = 64
#: expanded nodes (aliases followed) may exceed the written ones at most this many times ...
EXPANSION_RATIO = 10
#: ... and never this many (a shipped theory has a few hundred)
MAX_EXPANDED_NODES = 200_000
#: a file longer than this is refused before parsing (characters)
MAX_TEXT = 20_000_000

_T = "tag:yaml.org,2002:"
_SCALAR_TAGS = {_T + t for t in ("str", "int", "float", "bool", "null", "timestamp", "merge", "value")}
_REFUSED = {_T + "pairs": "ordered pairs (!!pairs)", _T + "omap": "an ordered map (!!omap)",
            _T + "set": "a set (!!set)", _T + "binary": "binary data (!!binary)"}


def _line(node) -> int:
    return node.start_mark.line + 1


def _short(text: str, n: int = 40) -> str:
    text = str(text)
    return text if len(text) <= n else text[:n] + "…"


def _check_graph(root, filename: str | None) -> None:
    """Refuse deep nesting, alias bombs and tags other than the plain ones, before construction."""
    weight: dict[int, int] = {}
    distinct = 0
    # iterative post-order walk; the composer already bounded the depth
    stack = [(root, False)]
    while stack:
        node, done = stack.pop()
        key = id(node)
        if key in weight and not done:
            continue
        if not done:
            _check_tag(node, filename)
            distinct += 1
            weight[key] = 0  # placeholder: a node that contains itself weighs at least this
            stack.append((node, True))
            if isinstance(node, SequenceNode):
                stack.extend((child, False) for child in node.value)
            elif isinstance(node, MappingNode):
                for k, v in node.value:
                    stack.append((k, False))
                    stack.append((v, False))
            continue
        if isinstance(node, ScalarNode):
            w = 1 + len(node.value) // 64
        elif isinstance(node, SequenceNode):
            w = 1 + sum(weight.get(id(c), 0) for c in node.value)
        else:
            w = 1 + sum(weight.get(id(k), 0) + weight.get(id(v), 0) for k, v in node.value)
        weight[key] = w
        limit = min(MAX_EXPANDED_NODES, max(2_000, EXPANSION_RATIO * distinct))
        if w > MAX_EXPANDED_NODES:
            _too_big(node, w, limit, filename)
    total = weight.get(id(root), 0)
    limit = min(MAX_EXPANDED_NODES, max(2_000, EXPANSION_RATIO * distinct))
    if total > limit:
        _too_big(root, total, limit, filename)


def _too_big(node, size: int, limit: int, filename: str | None) -> None:
    raise InputError(
        f"the YAML aliases (*name) expand to more than {limit} nodes (here at least {size})",
        Where(filename, _line(node)),
        "write the values out; aliases may repeat a part a few times, not blow the file up")


def _check_tag(node, filename: str | None) -> None:
    tag = node.tag or ""
    where = Where(filename, _line(node))
    if tag in _REFUSED:
        raise InputError(f"{_REFUSED[tag]} is not accepted in nogo files", where,
                         "use a plain mapping {key: value} or a list [a, b]")
    if isinstance(node, ScalarNode):
        if tag in _SCALAR_TAGS:
            return
        if tag in (_T + "map", _T + "seq"):
            kind = "mapping" if tag.endswith("map") else "list"
            raise InputError(f"the tag !!{tag.rsplit(':', 1)[-1]} asks for a {kind}, but '{_short(node.value)}' "
                             "is a single value", where, "drop the tag")
    elif tag in _SCALAR_TAGS:
        kind = "list" if isinstance(node, SequenceNode) else "mapping"
        raise InputError(f"the tag {tag.replace(_T, '!!')} asks for a single value, but this is a {kind}", where,
                         "drop the tag")
    elif isinstance(node, SequenceNode) and tag == _T + "seq":
        return
    elif isinstance(node, MappingNode) and tag == _T + "map":
        return
    shown = tag.replace(_T, "!!")
    if isinstance(node, ScalarNode) or shown.startswith("!!"):
        raise InputError(f"the tag {shown} is not accepted here", where,
                         "nogo files use plain values; the only tags allowed are !!str, !!int, !!float, "
                         "!!bool and !!null on single values")
    raise InputError(f"the tag {shown} is not accepted in nogo files", where, "drop the tag")


def _loader_for(filename: str | None):
    class _Loader(yaml.SafeLoader):
        _depth = 0

        def compose_node(self, parent, index):
            self._depth += 1
            try:
                if self._depth > MAX_DEPTH:
                    mark = self.peek_event().start_mark
                    raise InputError(f"the YAML is nested more than {MAX_DEPTH} levels deep",
                                     Where(filename, mark.line + 1), "flatten the structure")
                return super().compose_node(parent, index)
            finally:
                self._depth -= 1

    def construct_mapping(loader, node, deep=True):
        if not isinstance(node, MappingNode):
            raise InputError("expected a mapping here", Where(filename, _line(node)))
        loader.flatten_mapping(node)
        out = YMap()
        out.file, out.line = filename, _line(node)
        shown: dict[Any, Any] = {}
        for key_node, value_node in node.value:
            key = loader.construct_object(key_node, deep=True)
            kw = Where(filename, _line(key_node))
            if not isinstance(key_node, ScalarNode):
                raise InputError("a key must be a name or a number, not a list or a mapping", kw)
            if isinstance(key, bool) or key is None or isinstance(key, (datetime.date, bytes)) \
                    or not isinstance(key, (str, int, float)):
                what = ("a boolean" if isinstance(key, bool) else "empty (null)" if key is None
                        else "a date" if isinstance(key, datetime.date) else "not a plain value")
                raise InputError(f"the key '{_short(key_node.value)}' "
                                 f"is read as {what}", kw,
                                 "keys are names or numbers; put quotes around it to make it a name")
            if key in out:
                first = shown[key]
                same = "" if repr(first) == repr(key) else f" ('{_short(first)}' and '{_short(key)}' are the same number)"
                raise InputError(
                    f"duplicate key '{_short(key)}' (first given on line {out.key_lines[key]}){same}",
                    Where(filename, _line(key_node), _short(key)),
                    "each key may appear once in a mapping; merge the two entries")
            out[key] = loader.construct_object(value_node, deep=True)
            out.key_lines[key] = _line(key_node)
            shown[key] = key
        return out

    def construct_sequence(loader, node, deep=True):
        if not isinstance(node, SequenceNode):
            raise InputError("expected a list here", Where(filename, _line(node)))
        out = YList(loader.construct_object(child, deep=True) for child in node.value)
        out.file, out.line = filename, _line(node)
        out.item_lines = [_line(child) for child in node.value]
        return out

    def guarded(tag, original):
        def construct(loader, node):
            try:
                return original(loader, node)
            except InputError:
                raise
            except Exception:  # noqa: BLE001 - any conversion failure of a tagged scalar is the file's
                raise InputError(f"'{_short(getattr(node, 'value', ''))}' is not a valid {tag.replace(_T, '!!')}",
                                 Where(filename, _line(node)), "drop the tag or fix the value") from None
        return construct

    for tag in ("int", "float", "bool", "null", "timestamp", "str"):
        full = _T + tag
        _Loader.add_constructor(full, guarded(full, yaml.SafeLoader.yaml_constructors[full]))
    _Loader.add_constructor(yaml.resolver.BaseResolver.DEFAULT_MAPPING_TAG, construct_mapping)
    _Loader.add_constructor(yaml.resolver.BaseResolver.DEFAULT_SEQUENCE_TAG, construct_sequence)
    return _Loader


def read_yaml_text(text: str, filename: str | None = None) -> Any:
    """Parse YAML *text* within the limits above; every problem is an :class:`InputError` with the line."""
    if len(text) > MAX_TEXT:
        raise InputError(f"the file is longer than {MAX_TEXT} characters", Where(filename))
    loader = _loader_for(filename)(text)
    try:
        node = loader.get_single_node()
        if node is None:
            return None
        _check_graph(node, filename)
        return loader.construct_document(node)
    except yaml.MarkedYAMLError as exc:
        mark = exc.problem_mark or exc.context_mark
        line = mark.line + 1 if mark else None
        problem = exc.problem or exc.context or "not valid YAML"
        raise InputError(f"not valid YAML: {_short(problem, 200)}", Where(filename, line)) from None
    except yaml.YAMLError as exc:  # pragma: no cover - rare non-marked errors
        raise InputError(f"not valid YAML: {_short(exc, 200)}", Where(filename)) from None
    except RecursionError:  # pragma: no cover - MAX_DEPTH keeps far below the interpreter's limit
        raise InputError("the YAML is nested too deeply", Where(filename), "flatten the structure") from None
    finally:
        loader.dispose()


def read_yaml_file(path: str | Path) -> Any:
    """Read a YAML file safely; a missing or unreadable file is an InputError."""
    p = Path(path)
    try:
        if p.is_dir():
            raise InputError("this is a folder, not a file", Where(str(path)))
        text = p.read_text(encoding="utf-8")
    except FileNotFoundError:
        raise InputError("no such file", Where(str(path))) from None
    except (OSError, UnicodeDecodeError, ValueError) as exc:
        raise InputError(f"cannot read the file: {_short(exc, 200)}", Where(str(path))) from None
    return read_yaml_text(text, str(path))
