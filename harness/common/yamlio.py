"""YAML loading that remembers where every value stood, for ``FILE:LINE:COLUMN`` errors.

The document is composed into nodes once; the walk records each node's mark under its path
(mapping keys and sequence indices), rejects duplicate keys, and the data is then built from
the same nodes. Pydantic errors are mapped back to the longest recorded prefix of their ``loc``.

Every input file passes the same guards before it is parsed into a model, so hostile or broken
input ends in one located error instead of a hang, a ``MemoryError`` or a ``RecursionError``:
only regular files of at most ``MAX_FILE_BYTES`` are read (never a FIFO, a device or a
directory); nesting deeper than ``MAX_DEPTH`` and documents of more than ``MAX_NODES`` values
are refused while composing. Anchors and aliases are allowed (a sequence may reuse a block of
limits), but every alias counts as the values it stands for, so an alias bomb hits ``MAX_NODES``
after a few thousand values; an alias inside the value it names is refused. Dates stay text
(the implicit YAML timestamp is not resolved) so that models parse them, with their own errors.
"""

from __future__ import annotations

import os
import stat
from pathlib import Path
from typing import Any, TypeVar

import yaml
from pydantic import BaseModel, ValidationError

from harness.common.errors import InputError, InputErrors

Path_ = tuple[Any, ...]
M = TypeVar("M", bound=BaseModel)

# The largest real input (a record with a measurement chain) is 3.5 kB, 255 values and 7 levels
# deep; these bounds leave wide room and keep the pure-Python parser well under a second.
MAX_FILE_BYTES = 1024 * 1024
MAX_DEPTH = 32
MAX_NODES = 20_000
_TIMESTAMP = "tag:yaml.org,2002:timestamp"


class _GuardedLoader(yaml.SafeLoader):
    """A safe loader that counts values (aliases expanded) and depth while composing."""

    yaml_implicit_resolvers = {
        first: [(tag, regexp) for tag, regexp in resolvers if tag != _TIMESTAMP]
        for first, resolvers in yaml.SafeLoader.yaml_implicit_resolvers.items()
    }

    def __init__(self, text: str, file: str):
        super().__init__(text)
        self.name = file
        self._depth = 0
        self._nodes = 0
        self._sizes: dict[int, int] = {}  # id(anchored node) -> values it stands for, once composed

    def _refuse(self, message: str, mark: yaml.Mark) -> InputError:
        return InputError(message, self.name, mark.line + 1, mark.column + 1)

    def _count(self, values: int, mark: yaml.Mark) -> None:
        self._nodes += values
        if self._nodes > MAX_NODES:
            raise self._refuse(f"more than {MAX_NODES} values (aliases counted as what they stand for); "
                               "an input file of the harness is far smaller", mark)

    def compose_node(self, parent: Any, index: Any) -> Any:
        event = self.peek_event()
        if isinstance(event, yaml.AliasEvent):
            node = self.anchors.get(event.anchor)
            if node is not None:
                size = self._sizes.get(id(node))
                if size is None:
                    raise self._refuse(f"alias '*{event.anchor}' stands inside the value it names", event.start_mark)
                self._count(size, event.start_mark)
            return super().compose_node(parent, index)
        self._depth += 1
        if self._depth > MAX_DEPTH:
            raise self._refuse(f"nested more than {MAX_DEPTH} levels deep", event.start_mark)
        before = self._nodes
        self._count(1, event.start_mark)
        node = super().compose_node(parent, index)
        self._depth -= 1
        if getattr(event, "anchor", None) is not None:
            self._sizes[id(node)] = self._nodes - before
        return node

    def construct_object(self, node: yaml.Node, deep: bool = False) -> Any:
        try:
            return super().construct_object(node, deep)
        except (ValueError, OverflowError) as exc:  # e.g. a 5000-digit integer, '!!timestamp 2026-02-30'
            mark = node.start_mark
            reason = str(exc).split(";")[0]  # drop Python's advice on its own integer-digit limit
            raise InputError(f"cannot read this value: {reason}", self.name, mark.line + 1, mark.column + 1) from None


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
    """Parse YAML text; syntax errors, duplicate keys and the guards' refusals become :class:`InputError`."""
    loader: _GuardedLoader | None = None
    try:
        loader = _GuardedLoader(text, file)
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
    except yaml.reader.ReaderError as exc:
        line, col = _position(text, exc.position)
        raise InputError(f"control character U+{exc.character:04X} is not allowed in a YAML file", file, line, col) from exc
    except yaml.YAMLError as exc:
        raise InputError(f"YAML: {exc}", file, 1, 1) from exc
    finally:
        if loader is not None:
            loader.dispose()
    return LoadedYaml(data, marks, key_marks, file, text)


def _position(text: str, index: int) -> tuple[int, int]:
    """1-based line and column of a character index."""
    before = text[:index]
    return before.count("\n") + 1, index - (before.rfind("\n") + 1) + 1


def read_input(path: str | Path) -> str:
    """The text of an input file, refused unless it is a regular UTF-8 file of at most ``MAX_FILE_BYTES``.

    The file is opened without blocking and checked on the open descriptor, so a FIFO cannot
    stall the open and a file swapped after a check is still caught; the read stops one byte past
    the bound, so ``/dev/zero`` or a growing file cannot fill memory.
    """
    name = str(path)
    try:
        fd = os.open(path, os.O_RDONLY | getattr(os, "O_NONBLOCK", 0) | getattr(os, "O_BINARY", 0))
    except OSError as exc:
        raise InputError(f"cannot read the file: {exc.strerror or exc}", name) from exc
    try:
        kind = _file_kind(os.fstat(fd).st_mode)
        if kind is not None:
            raise InputError(f"not a regular file but {kind}; give the path of a YAML file", name)
        data = _read_at_most(fd, MAX_FILE_BYTES + 1)
    except OSError as exc:
        raise InputError(f"cannot read the file: {exc.strerror or exc}", name) from exc
    finally:
        os.close(fd)
    if len(data) > MAX_FILE_BYTES:
        raise InputError(f"larger than {MAX_FILE_BYTES // 1024} KiB; an input file of the harness is far smaller", name)
    try:
        return data.decode("utf-8")
    except UnicodeDecodeError as exc:
        good = data[: exc.start].decode("utf-8")
        raise InputError(f"not UTF-8 text: {exc.reason}", name, *_position(good, len(good))) from exc


def _read_at_most(fd: int, limit: int) -> bytes:
    chunks: list[bytes] = []
    size = 0
    while size < limit:
        chunk = os.read(fd, min(65536, limit - size))
        if not chunk:
            break
        chunks.append(chunk)
        size += len(chunk)
    return b"".join(chunks)


def _file_kind(mode: int) -> str | None:
    """None for a regular file, else what it is, in words."""
    if stat.S_ISREG(mode):
        return None
    for test, words in ((stat.S_ISDIR, "a directory"), (stat.S_ISFIFO, "a FIFO (named pipe)"),
                        (stat.S_ISCHR, "a character device"), (stat.S_ISBLK, "a block device"),
                        (stat.S_ISSOCK, "a socket")):
        if test(mode):
            return words
    return "a special file"


def load_file(path: str | Path) -> LoadedYaml:
    return load_text(read_input(path), str(path))


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
    bound = _bound_message(err)
    msg = bound or str(err.get("msg", "invalid value"))
    msg = msg.removeprefix("Value error, ").removeprefix("Assertion failed, ")
    return f"{loc}: {msg}" if loc else msg


_BOUNDS = {"less_than_equal": ("le", "at most"), "less_than": ("lt", "below"),
           "greater_than_equal": ("ge", "at least"), "greater_than": ("gt", "above")}


def _bound_message(err: dict[str, Any]) -> str | None:
    """'1e+308 must be at most 3600' rather than pydantic's wording, which omits the value given.

    Quantities are held in SI units (V, A, W, s), so the numbers are in the field's SI unit."""
    kind = _BOUNDS.get(str(err.get("type")))
    if kind is None:
        return None
    key, words = kind
    value, bound = err.get("input"), (err.get("ctx") or {}).get(key)
    if not isinstance(bound, (int, float)) or isinstance(value, bool) or not isinstance(value, (int, float, str)):
        return None
    given = f"'{value}'" if isinstance(value, str) else f"{value:g}"
    return f"{given} must be {words} {bound:g}"


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
