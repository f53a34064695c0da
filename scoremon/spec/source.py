"""Reading a spec file: YAML text to plain Python data, with the line and column of every key.

PyYAML's composer keeps a mark on every node; we walk the node tree ourselves so that each
path (``("features", 2, "bins", 1, "upper")``) maps to where it stands in the file. Validation
errors are then reported at the exact key a user must edit.

Hostile files (an alias bomb, deep nesting, a huge file) are refused before any document is
built (:mod:`scoremon.spec.limits`). Syntax errors stop reading at once. A key given twice or a key that is not a plain name is
recorded in :attr:`SpecSource.problems` instead, so that validation can report it together
with everything else.
"""
from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import yaml

from ..errors import Problem, SpecError
from . import limits


@dataclass
class SpecSource:
    """A parsed spec file: the data and where each part of it stands."""

    data: Any
    file: str
    key_marks: dict[tuple, tuple[int, int]] = field(default_factory=dict)
    value_marks: dict[tuple, tuple[int, int]] = field(default_factory=dict)
    texts: dict[tuple, str] = field(default_factory=dict)
    problems: list[Problem] = field(default_factory=list)  # keys given twice or not plain names

    def written(self, path: tuple) -> str | None:
        """A scalar exactly as the file writes it (``NO`` where YAML reads false), if known."""
        return self.texts.get(tuple(path))

    def locate(self, path: tuple) -> tuple[int, int]:
        """Line and column (1-based) of the deepest part of ``path`` present in the file."""
        path = tuple(path)
        while path:
            for marks in (self.key_marks, self.value_marks):
                if path in marks:
                    return marks[path]
            path = path[:-1]
        return self.value_marks.get((), (1, 1))

    def locate_value(self, path: tuple) -> tuple[int, int]:
        """Like :meth:`locate`, but prefer the value's own position over its key's."""
        path = tuple(path)
        if path in self.value_marks:
            return self.value_marks[path]
        return self.locate(path)

    def problem(self, path: tuple, message: str, *, at_value: bool = False) -> Problem:
        line, column = self.locate_value(path) if at_value else self.locate(path)
        return Problem(line, column, format_path(path), message, self.file)


VERSION_PATH = ("model", "version")


def format_path(path: tuple) -> str:
    """``("features", 2, "bins")`` → ``features[2].bins``."""
    text = ""
    for part in path:
        if isinstance(part, int):
            text += f"[{part}]"
        else:
            text += f".{part}" if text else str(part)
    return text


def read_spec_text(text: str, file: str = "<spec>") -> SpecSource:
    """Parse YAML text into a :class:`SpecSource`; keys given twice go to its ``problems``.

    Raises :class:`SpecError` when the text is not YAML or is empty.
    """
    try:
        node = limits.compose(text)
    except limits.LimitError as error:
        raise SpecError([Problem(error.line, error.column, "", str(error), file)]) from None
    except yaml.MarkedYAMLError as error:
        mark = error.problem_mark or error.context_mark
        line, column = (mark.line + 1, mark.column + 1) if mark else (1, 1)
        raise SpecError([Problem(line, column, "", _yaml_message(error), file)]) from error
    except yaml.YAMLError as error:
        raise SpecError([Problem(1, 1, "", f"not valid YAML: {error}", file)]) from error
    source = SpecSource(data=None, file=file)
    if node is None:
        raise SpecError([Problem(1, 1, "", "the file is empty; a spec needs at least model, intercept, scaling, "
                                          "features and grades", file)])
    source.data = _build(node, (), source, source.problems)
    return source


def _yaml_message(error: yaml.MarkedYAMLError) -> str:
    """PyYAML's complaint, where the construct it was reading began, and what usually fixes it."""
    what = error.problem or "cannot be read"
    context, start = error.context, error.context_mark
    if context and not context.startswith("while"):
        what = f"{context} {what}"  # e.g. "expected a single document in the stream but found another"
    elif context and start is not None and error.problem_mark is not None and start.line != error.problem_mark.line:
        place = context.replace("while parsing ", "").replace("while scanning ", "")
        what = f"{what} (in {place} that starts at line {start.line + 1}, column {start.column + 1})"
    return f"not valid YAML: {what}; {_yaml_hint(what)}"


def _yaml_hint(what: str) -> str:
    if "'\\t'" in what:
        return "indent with spaces (YAML does not allow tabs)"
    if "mapping values are not allowed" in what:
        return "quote a value that contains ': ', or indent this key like its neighbours"
    if "flow mapping" in what or "flow sequence" in what:
        return "close the bracket or add the missing comma"
    if "<block end>" in what:
        return "indent this line like the keys it belongs with"
    if "another document" in what:
        return "keep one spec per file and remove the extra '---'"
    return "fix the syntax at this point"


def read_spec_file(path: str | Path) -> SpecSource:
    """Read and parse a spec file. Raises :class:`SpecError` when it is missing or not YAML."""
    path = Path(path)
    try:
        limits.check_file_size(path)
        text = path.read_text(encoding="utf-8")
    except limits.LimitError as error:
        raise SpecError([Problem(error.line, error.column, "", str(error), str(path))]) from None
    except FileNotFoundError as error:
        raise SpecError([Problem(1, 1, "", "no such file; check the path", str(path))]) from error
    except (OSError, UnicodeDecodeError) as error:
        raise SpecError([Problem(1, 1, "", f"cannot read the file: {error}", str(path))]) from error
    return read_spec_text(text, str(path))


def _mark(node: yaml.Node) -> tuple[int, int]:
    return node.start_mark.line + 1, node.start_mark.column + 1


def _build(node: yaml.Node, path: tuple, source: SpecSource, problems: list[Problem]) -> Any:
    source.value_marks[path] = _mark(node)
    if isinstance(node, yaml.MappingNode):
        result: dict[Any, Any] = {}
        for key_node, value_node in node.value:
            key = _scalar(key_node)
            if not isinstance(key, (str, int)) or isinstance(key, bool):
                line, column = _mark(key_node)
                problems.append(Problem(line, column, format_path(path), f"a key must be a plain name, not "
                                                                         f"{_describe_key(key)}; write a word "
                                                                         "followed by ':'", source.file))
                continue
            key = str(key)
            child = path + (key,)
            if key in result:
                line, column = _mark(key_node)
                first = source.key_marks[child][0]
                problems.append(Problem(line, column, format_path(child),
                                        f"key appears twice (first on line {first}); keep one", source.file))
                continue
            source.key_marks[child] = _mark(key_node)
            result[key] = _build(value_node, child, source, problems)
        return result
    if isinstance(node, yaml.SequenceNode):
        items = []
        for position, item in enumerate(node.value):
            child = path + (position,)
            source.key_marks[child] = _mark(item)
            items.append(_build(item, child, source, problems))
        return items
    source.texts[path] = node.value
    value = _scalar(node)
    if path == VERSION_PATH and isinstance(value, (int, float)) and not isinstance(value, bool):
        return node.value  # `version: 1.10` is the text "1.10", not the number 1.1
    return value


def _describe_key(key: Any) -> str:
    if isinstance(key, yaml.SequenceNode):
        return "a list"
    if isinstance(key, yaml.MappingNode):
        return "a mapping"
    return repr(key)


_CONSTRUCTOR = yaml.SafeLoader("")


def _scalar(node: yaml.Node) -> Any:
    """A scalar's Python value (int, float, str, bool, date or None) by YAML's safe rules."""
    if not isinstance(node, yaml.ScalarNode):
        return node  # a mapping or list used as a key; reported by the caller
    try:
        return _CONSTRUCTOR.construct_object(node, deep=True)
    except (ValueError, yaml.YAMLError):
        return node.value  # e.g. an impossible date: validation reports it with its position
