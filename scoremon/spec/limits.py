"""The limits on what a YAML file (a spec, a thresholds file) may ask of scoremon.

YAML can ask for unbounded time and memory in few bytes: aliases that repeat a list that
repeats a list (a 342-byte file can stand for billions of values), or nesting deep enough to
exhaust Python's recursion. :func:`compose` builds PyYAML's node tree under three limits and
refuses, with the line and column where a limit was passed, before any document is built:

* :data:`MAX_FILE_BYTES`  the file's size (checked before it is read);
* :data:`MAX_DEPTH`       lists and mappings nested inside each other;
* :data:`MAX_VALUES`      values (scalars, lists and mappings) the document holds once every
                          alias is expanded; counted while composing, each node once, so the
                          count itself costs no more than reading the file.

A spec with 1,200 features of ten bins and a baseline holds about 100,000 values, nested six
deep, in about 2 MiB; the limits leave ample room above that.
"""
from __future__ import annotations

from pathlib import Path
from typing import Any

import yaml

MAX_FILE_BYTES = 16 * 2**20  # 16 MiB
MAX_DEPTH = 64
MAX_VALUES = 2_000_000


class LimitError(Exception):
    """A limit was passed at ``line``:``column`` (1-based); the message says which and how to fix."""

    def __init__(self, line: int, column: int, message: str):
        self.line, self.column = line, column
        super().__init__(message)


class _LimitedLoader(yaml.SafeLoader):
    """PyYAML's safe loader, counting depth and expanded values while it composes nodes."""

    def __init__(self, stream):
        super().__init__(stream)
        self._depth = 0
        self._sizes: dict[int, int] = {}  # id(node) → values it stands for, aliases expanded

    def compose_node(self, parent, index):
        if self.check_event(yaml.AliasEvent):
            mark = self.peek_event().start_mark
            node = super().compose_node(parent, index)
            if id(node) not in self._sizes:
                raise LimitError(mark.line + 1, mark.column + 1, "an alias refers to the list or mapping that holds "
                                                                 "it, which never ends; remove the alias")
            return node
        mark = self.peek_event().start_mark
        self._depth += 1
        if self._depth > MAX_DEPTH:
            raise LimitError(mark.line + 1, mark.column + 1, f"lists and mappings are nested more than {MAX_DEPTH} "
                                                             "levels deep; a spec needs about six")
        try:
            node = super().compose_node(parent, index)
        finally:
            self._depth -= 1
        if isinstance(node, yaml.SequenceNode):
            size = 1 + sum(self._sizes[id(item)] for item in node.value)
        elif isinstance(node, yaml.MappingNode):
            size = 1 + sum(self._sizes[id(key)] + self._sizes[id(value)] for key, value in node.value)
        else:
            size = 1
        if size > MAX_VALUES:
            raise LimitError(mark.line + 1, mark.column + 1, f"this part holds more than {MAX_VALUES:,} values once "
                                                             "its aliases are expanded; write the values out or use "
                                                             "fewer aliases")
        self._sizes[id(node)] = size
        return node


def check_file_size(path: Path) -> None:
    """Raise :class:`LimitError` (at 1:1) when the file at ``path`` is larger than :data:`MAX_FILE_BYTES`."""
    if path.stat().st_size > MAX_FILE_BYTES:
        raise LimitError(1, 1, _too_large())


def compose(text: str) -> yaml.Node | None:
    """PyYAML's node tree of ``text`` (None for an empty document), within the limits.

    Raises :class:`LimitError` when a limit is passed and :class:`yaml.YAMLError` when the text
    is not YAML.
    """
    return _read(text, lambda loader: loader.get_single_node())


def load(text: str) -> Any:
    """Plain Python data from ``text`` by YAML's safe rules, within the limits (as :func:`compose`)."""
    return _read(text, lambda loader: loader.get_single_data())


def _read(text: str, take):
    if len(text) > MAX_FILE_BYTES:
        raise LimitError(1, 1, _too_large())
    loader = _LimitedLoader(text)
    try:
        return take(loader)
    finally:
        loader.dispose()


def _too_large() -> str:
    return f"the file is larger than {MAX_FILE_BYTES // 2**20} MiB; a spec is a few hundred KiB at most"
