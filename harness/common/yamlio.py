"""YAML loading that remembers where every value stood, for ``FILE:LINE:COLUMN`` errors.

The document is composed into nodes once; the walk records each node's mark under its path
(mapping keys and sequence indices), rejects duplicate keys, and the data is then built from
the same nodes. Pydantic errors are mapped back to the longest recorded prefix of their ``loc``.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any, TypeVar

import yaml
from pydantic import BaseModel, ValidationError

from harness.common.errors import InputError, InputErrors

Path_ = tuple[Any, ...]
M = TypeVar("M", bound=BaseModel)


class LoadedYaml:
    """Plain data of a YAML document and the marks of its nodes, keyed by path."""

    def __init__(self, data: Any, marks: dict[Path_, tuple[int, int]], key_marks: dict[Path_, tuple[int, int]], file: str,
                 text: str = ""):
        self.text = text  # as read, for hashing and storing beside the run
        self.data = data
        self.marks = marks
        self.key_marks = key_marks
        self.file = file

    def where(self, loc: Path_, *, key: bool = False) -> tuple[int, int]:
        """1-based line and column of the longest recorded prefix of ``loc``."""
        table = self.key_marks if key and tuple(loc) in self.key_marks else self.marks
        loc = tuple(loc)
        while loc and loc not in table:
            loc = loc[:-1]
            table = self.marks
        return table.get(loc, (1, 1))

    def error(self, loc: Path_, message: str, *, key: bool = False) -> InputError:
        line, col = self.where(loc, key=key)
        return InputError(message, self.file, line, col)


def _walk(node: yaml.Node, path: Path_, marks: dict, key_marks: dict, file: str) -> None:
    marks[path] = (node.start_mark.line + 1, node.start_mark.column + 1)
    if isinstance(node, yaml.MappingNode):
        seen: dict[Any, yaml.Node] = {}
        for key_node, value_node in node.value:
            key = key_node.value if isinstance(key_node, yaml.ScalarNode) else str(key_node.value)
            if key in seen:
                first = seen[key].start_mark.line + 1
                raise InputError(f"duplicate key '{key}' (first given on line {first})", file,
                                 key_node.start_mark.line + 1, key_node.start_mark.column + 1)
            seen[key] = key_node
            key_marks[path + (key,)] = (key_node.start_mark.line + 1, key_node.start_mark.column + 1)
            _walk(value_node, path + (key,), marks, key_marks, file)
    elif isinstance(node, yaml.SequenceNode):
        for index, item in enumerate(node.value):
            _walk(item, path + (index,), marks, key_marks, file)


def load_text(text: str, file: str = "<input>") -> LoadedYaml:
    """Parse YAML text; syntax errors and duplicate keys become :class:`InputError`."""
    loader = yaml.SafeLoader(text)
    loader.name = file
    try:
        node = loader.get_single_node()
        if node is None:
            raise InputError("the file is empty", file, 1, 1)
        marks: dict[Path_, tuple[int, int]] = {}
        key_marks: dict[Path_, tuple[int, int]] = {}
        _walk(node, (), marks, key_marks, file)
        data = loader.construct_document(node)
    except yaml.MarkedYAMLError as exc:
        mark = exc.problem_mark or exc.context_mark
        line, col = (mark.line + 1, mark.column + 1) if mark else (1, 1)
        raise InputError(f"YAML syntax: {exc.problem or exc.context}", file, line, col) from exc
    except yaml.YAMLError as exc:
        raise InputError(f"YAML: {exc}", file, 1, 1) from exc
    finally:
        loader.dispose()
    return LoadedYaml(data, marks, key_marks, file, text)


def load_file(path: str | Path) -> LoadedYaml:
    path = Path(path)
    try:
        text = path.read_text(encoding="utf-8")
    except OSError as exc:
        raise InputError(f"cannot read the file: {exc.strerror or exc}", str(path), 0, 0) from exc
    except UnicodeDecodeError as exc:
        raise InputError(f"not UTF-8 text: {exc.reason}", str(path), 1, 1) from exc
    return load_text(text, str(path))


def _clean_loc(loc: tuple[Any, ...], loaded: LoadedYaml) -> tuple[Any, ...]:
    """Keep the parts of a pydantic ``loc`` that exist in the document.

    Pydantic adds parts of its own (union tags such as ``ramp``, function names); they are
    skipped by walking the data alongside.
    """
    out: list[Any] = []
    node: Any = loaded.data
    for part in loc:
        if isinstance(node, dict) and part in node:
            node = node[part]
        elif isinstance(node, list) and isinstance(part, int) and 0 <= part < len(node):
            node = node[part]
        elif isinstance(node, dict) and isinstance(part, str) and not _is_tag(part, node):
            out.append(part)  # a missing or unknown key: point at its parent, keep the name
            node = None
            continue
        else:
            continue
        out.append(part)
    return tuple(out)


def _is_tag(part: str, node: dict[str, Any]) -> bool:
    """Parts pydantic adds: a tagged-union tag (the value of the ``kind`` key) or a wrapper name."""
    return "[" in part or part.startswith("function-") or part == node.get("kind")


def _message(err: dict[str, Any]) -> str:
    loc = ".".join(str(p) for p in err.get("_clean", err.get("loc", ())))
    kind = err.get("type", "")
    if kind == "extra_forbidden":
        return f"unknown key '{err['loc'][-1]}'"
    if kind == "missing":
        return f"'{loc}' is required" if loc else "a required key is missing"
    msg = str(err.get("msg", "invalid value"))
    msg = msg.removeprefix("Value error, ").removeprefix("Assertion failed, ")
    return f"{loc}: {msg}" if loc else msg


def validate(model: type[M], loaded: LoadedYaml, context: dict[str, Any] | None = None) -> M:
    """Validate the loaded data against ``model``; every error is located in the file."""
    try:
        return model.model_validate(loaded.data, context=context)
    except ValidationError as exc:
        errors = []
        for err in exc.errors(include_url=False):
            loc = _clean_loc(tuple(err.get("loc", ())), loaded)
            key = err.get("type") == "extra_forbidden"
            errors.append(loaded.error(loc, _message({**err, "_clean": loc}), key=key))
        raise InputErrors(errors) from exc


def load_model(model: type[M], path: str | Path, context: dict[str, Any] | None = None) -> M:
    """Load ``path`` and validate it against ``model`` in one step."""
    return validate(model, load_file(path), context)
