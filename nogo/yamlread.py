"""Safe YAML reading that remembers where every key came from.

PyYAML's safe loader is extended in two ways: a mapping that repeats a key is
an error (YAML says keys are unique; PyYAML would silently keep the last
one), and every mapping and sequence carries the line of each of its items,
so later stages can point at the exact line of a bad key.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

import yaml

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


def _loader_for(filename: str | None):
    class _Loader(yaml.SafeLoader):
        pass

    def construct_mapping(loader, node, deep=True):
        loader.flatten_mapping(node)
        out = YMap()
        out.file, out.line = filename, node.start_mark.line + 1
        for key_node, value_node in node.value:
            key = loader.construct_object(key_node, deep=True)
            try:
                hash(key)
            except TypeError:
                raise InputError("a mapping key must be a plain value",
                                 Where(filename, key_node.start_mark.line + 1)) from None
            if key in out:
                raise InputError(
                    f"duplicate key '{key}' (first given on line {out.key_lines[key]})",
                    Where(filename, key_node.start_mark.line + 1, str(key)),
                    "each key may appear once in a mapping; merge the two entries")
            out[key] = loader.construct_object(value_node, deep=True)
            out.key_lines[key] = key_node.start_mark.line + 1
        return out

    def construct_sequence(loader, node, deep=True):
        out = YList(loader.construct_object(child, deep=True) for child in node.value)
        out.file, out.line = filename, node.start_mark.line + 1
        out.item_lines = [child.start_mark.line + 1 for child in node.value]
        return out

    _Loader.add_constructor(yaml.resolver.BaseResolver.DEFAULT_MAPPING_TAG, construct_mapping)
    _Loader.add_constructor(yaml.resolver.BaseResolver.DEFAULT_SEQUENCE_TAG, construct_sequence)
    return _Loader


def read_yaml_text(text: str, filename: str | None = None) -> Any:
    """Parse YAML *text*; errors become :class:`InputError` with the line."""
    try:
        return yaml.load(text, Loader=_loader_for(filename))  # noqa: S506 - SafeLoader subclass
    except yaml.MarkedYAMLError as exc:
        mark = exc.problem_mark or exc.context_mark
        line = mark.line + 1 if mark else None
        problem = exc.problem or exc.context or "not valid YAML"
        raise InputError(f"not valid YAML: {problem}", Where(filename, line)) from None
    except yaml.YAMLError as exc:  # pragma: no cover - rare non-marked errors
        raise InputError(f"not valid YAML: {exc}", Where(filename)) from None


def read_yaml_file(path: str | Path) -> Any:
    """Read a YAML file safely; a missing or unreadable file is an InputError."""
    p = Path(path)
    try:
        text = p.read_text(encoding="utf-8")
    except FileNotFoundError:
        raise InputError("no such file", Where(str(path))) from None
    except (OSError, UnicodeDecodeError) as exc:
        raise InputError(f"cannot read the file: {exc}", Where(str(path))) from None
    return read_yaml_text(text, str(path))
