"""Safe YAML reading that remembers where every value came from.

The loaded document is made of plain ``dict``/``list``/scalars; beside it a
``Marks`` index maps each field path (a tuple of keys and indexes) to its
line and column, so a validation error on ``("loads", 3, "rated_kw")`` can be
reported as ``plant.yaml:88:15``.

Only YAML's safe subset is accepted. Duplicate keys are an error (YAML says
they are, PyYAML silently keeps the last). Aliases are allowed for
convenience but the expanded size of the document is bounded, so an alias
bomb is refused instead of eating the machine.
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from typing import Any

import yaml

from workpack.errors import InputError, Problem

# Far above any real plant (a 10,000-item plant expands to ~200,000 nodes).
MAX_EXPANDED_NODES = 5_000_000
MAX_FILE_BYTES = 50 * 1024 * 1024

# Python refuses to read integers longer than this (int_max_str_digits); so do we.
MAX_DIGITS = 4300
# Far deeper than any workpack file (a plant nests about six levels).
MAX_DEPTH = 100

Path = tuple[str | int, ...]

_SURROGATE = re.compile("[\ud800-\udfff]")
# YAML 1.1's printable set (5.1); anything else is refused by the reader, which
# gives only an offset (in bytes, with libyaml): we find the place ourselves.
_NOT_PRINTABLE = re.compile(
    "[^\x09\x0a\x0d\x20-\x7e\x85\xa0-\ud7ff\ue000-\ufffd\U00010000-\U0010ffff]")


@dataclass
class Marks:
    """Where each value of a loaded document stands in its file.

    Keeps the composed YAML tree and walks it only when a place is asked
    for: errors are rare, and marking every value up front costs as much as
    parsing.
    """

    file: str
    root: yaml.Node | None = None

    def locate(self, path: Path, at_key: bool = False) -> tuple[int, int]:
        """Line and column (1-based) of the value at ``path``, or of its nearest parent.

        With ``at_key``, the place of the last key itself (for an unknown field).
        """
        node = self.root
        if node is None:
            return (0, 0)
        for position, part in enumerate(path):
            found = _child(node, part)
            if found is None:
                break
            key_node, node = found
            if at_key and position == len(path) - 1 and key_node is not None:
                node = key_node
            if getattr(node, "is_alias", False):
                break  # what lies inside was written at the anchor, not here
        return (node.start_mark.line + 1, node.start_mark.column + 1)

    def problem(self, path: Path, message: str, at_key: bool = False) -> Problem:
        line, column = self.locate(path, at_key)
        return Problem(self.file, line, column, format_path(path), message)


@dataclass
class TableMarks(Marks):
    """Places of values read from a table (CSV): known up front, one per cell."""

    places: dict[Path, tuple[int, int]] | None = None

    def locate(self, path: Path, at_key: bool = False) -> tuple[int, int]:
        places = self.places or {}
        while path not in places and path:
            path = path[:-1]
        return places.get(path, (0, 0))


def _child(node: yaml.Node, part: str | int) -> tuple[yaml.Node | None, yaml.Node] | None:
    """(key node, value node) of ``part`` inside ``node``, or None."""
    if isinstance(node, yaml.SequenceNode) and isinstance(part, int):
        return (None, node.value[part]) if 0 <= part < len(node.value) else None
    if isinstance(node, yaml.MappingNode):
        for key_node, value_node in node.value:
            if isinstance(key_node, yaml.ScalarNode) and key_node.value == str(part):
                return key_node, value_node
    return None


def format_path(path: Path) -> str:
    text = ""
    for part in path:
        if isinstance(part, int):
            text += f"[{part}]"
        else:
            text += ("." if text else "") + str(part)
    return text


# libyaml's parser where installed (about ten times faster); same safe constructor.
_SafeBase: type = getattr(yaml, "CSafeLoader", yaml.SafeLoader)


class _DepthLimit:
    """Refuses nesting deeper than MAX_DEPTH where composing is done in Python.

    PyYAML's composer recurses once per level; without a limit a few hundred
    nested brackets end in a RecursionError with no place. libyaml's composer
    has its own limit (1,000) and reports it with a place.
    """

    _depth = 0

    def compose_node(self, parent: Any, index: Any) -> Any:
        self._depth += 1
        try:
            if self._depth > MAX_DEPTH:
                event = self.peek_event()  # type: ignore[attr-defined]
                raise yaml.composer.ComposerError(
                    None, None, f"values nested more than {MAX_DEPTH} levels deep",
                    event.start_mark)
            return super().compose_node(parent, index)  # type: ignore[misc]
        finally:
            self._depth -= 1


class _StrictLoader(_DepthLimit, _SafeBase):  # type: ignore[misc, valid-type]
    """Safe loader that refuses duplicate keys."""


def _construct_mapping(loader: _StrictLoader, node: yaml.MappingNode, deep: bool = False) -> Any:
    if not isinstance(node, yaml.MappingNode):
        raise yaml.constructor.ConstructorError(
            None, None, f"expected a mapping, found {_node_kind(node)}", node.start_mark)
    loader.flatten_mapping(node)
    seen: dict[Any, yaml.Node] = {}
    for key_node, _ in node.value:
        key = loader.construct_object(key_node, deep=True)  # type: ignore[no-untyped-call]
        try:
            hash(key)
        except TypeError:
            raise yaml.constructor.ConstructorError(
                None, None, "a mapping key must be a plain value", key_node.start_mark
            ) from None
        if key in seen:
            first = seen[key].start_mark.line + 1
            raise yaml.constructor.ConstructorError(
                None, None, f"duplicate key {key!r} (first given on line {first})",
                key_node.start_mark,
            )
        seen[key] = key_node
    return loader.construct_mapping(node, deep=deep)


_StrictLoader.add_constructor(
    yaml.resolver.BaseResolver.DEFAULT_MAPPING_TAG,
    _construct_mapping,  # type: ignore[arg-type]
)


def _construct_timestamp(loader: Any, node: yaml.ScalarNode) -> Any:
    if not isinstance(node, yaml.ScalarNode):
        raise yaml.constructor.ConstructorError(
            None, None, f"expected a date, found {_node_kind(node)}", node.start_mark)
    try:
        return yaml.constructor.SafeConstructor.construct_yaml_timestamp(loader, node)
    except ValueError as error:  # 2026-02-30: the date library's words, with a place
        raise yaml.constructor.ConstructorError(
            None, None, f"{_shown(node.value)} is not a real date or time ({error})",
            node.start_mark) from None
    except (AttributeError, TypeError, IndexError):  # !!timestamp on a text that is none
        raise yaml.constructor.ConstructorError(
            None, None, f"{_shown(node.value)} is not a date (expected YYYY-MM-DD)",
            node.start_mark) from None


def _node_kind(node: yaml.Node) -> str:
    return {yaml.ScalarNode: "a single value", yaml.SequenceNode: "a list",
            yaml.MappingNode: "a mapping"}.get(type(node), "something else")


def _shown(text: str, limit: int = 40) -> str:
    """A value as quoted in a message: escaped, and shortened when long."""
    return repr(text if len(text) <= limit else text[:limit] + "…")


# What a value tagged (or resolved) as each type must look like, for the message.
_SCALAR_NAMES = {"int": "a whole number", "float": "a number", "bool": "true or false",
                 "null": "nothing (null)", "str": "text"}


def _checked_scalar(tag: str) -> Any:
    """PyYAML's constructor for ``tag``, turning its ValueError/KeyError into a placed error.

    ``!!int 1.5``, ``!!float abc``, ``!!bool maybe`` and a 5,000-digit integer reach
    Python's own conversions, which raise bare exceptions without a place.
    """
    name = tag.rsplit(":", 1)[-1]
    construct = yaml.constructor.SafeConstructor.yaml_constructors[tag]

    def checked(loader: Any, node: yaml.Node) -> Any:
        if not isinstance(node, yaml.ScalarNode):
            raise yaml.constructor.ConstructorError(
                None, None, f"expected {_SCALAR_NAMES[name]}, found {_node_kind(node)}",
                node.start_mark)
        text = str(node.value)
        if name == "int" and sum(char.isdigit() for char in text) > MAX_DIGITS:
            raise yaml.constructor.ConstructorError(
                None, None, f"a number of {len(text):,} characters is too long "
                f"(at most {MAX_DIGITS} digits)", node.start_mark)
        try:
            value = construct(loader, node)
        except (ValueError, KeyError, IndexError, TypeError, AttributeError, OverflowError):
            raise yaml.constructor.ConstructorError(
                None, None, f"{_shown(text)} is not {_SCALAR_NAMES[name]}",
                node.start_mark) from None
        if isinstance(value, str) and _SURROGATE.search(value):
            raise yaml.constructor.ConstructorError(
                None, None, "the text holds an unpaired surrogate escape (\\ud800 to "
                "\\udfff): write the character itself", node.start_mark)
        return value

    return checked


def _refuse_tag(loader: Any, suffix: str, node: yaml.Node) -> Any:
    raise yaml.constructor.ConstructorError(
        None, None, f"tag {node.tag!r} is not allowed: write plain values only",
        node.start_mark)


class _PythonSafeLoader(_DepthLimit, yaml.SafeLoader):
    """The pure-Python safe loader, depth-limited."""


_PurePython: type = _StrictLoader if _SafeBase is yaml.SafeLoader else _PythonSafeLoader


class _AliasPlacingLoader(_PurePython):  # type: ignore[misc, valid-type]
    """Pure-Python loader that gives each alias use its own place.

    libyaml hands back the anchored node itself for ``*alias``, so an error
    in a value reached through an alias would point at the anchor. Files with
    anchors are rare and small; they take this slower path.
    """

    def compose_node(self, parent: Any, index: Any) -> Any:
        if self.check_event(yaml.events.AliasEvent):
            event = self.peek_event()
            node = super().compose_node(parent, index)
            placed = type(node)(node.tag, node.value, event.start_mark, event.end_mark)
            placed.is_alias = True  # type: ignore[attr-defined]
            return placed
        return super().compose_node(parent, index)


for _loader in (_StrictLoader, _AliasPlacingLoader):
    for _name in _SCALAR_NAMES:
        _loader.add_constructor(f"tag:yaml.org,2002:{_name}", _checked_scalar(
            f"tag:yaml.org,2002:{_name}"))
    # Bytes, sets and ordered pairs are no values a workpack file holds.
    for _name in ("binary", "set", "omap", "pairs"):
        _loader.add_constructor(f"tag:yaml.org,2002:{_name}",
                                lambda loader, node: _refuse_tag(loader, "", node))
    _loader.add_constructor("tag:yaml.org,2002:timestamp", _construct_timestamp)
    _loader.add_multi_constructor("!", _refuse_tag)
    _loader.add_multi_constructor("tag:", _refuse_tag)
_AliasPlacingLoader.add_constructor(
    yaml.resolver.BaseResolver.DEFAULT_MAPPING_TAG,
    _construct_mapping,  # type: ignore[arg-type]
)


def _expanded_size(root: yaml.Node) -> int:
    """Number of nodes after every alias is expanded, computed without expanding."""
    sizes: dict[int, int] = {}
    in_progress: set[int] = set()

    def size(node: yaml.Node) -> int:
        key = id(node)
        if key in in_progress:
            raise yaml.composer.ComposerError(
                None, None, "an alias refers to a value that contains it", node.start_mark
            )
        if key in sizes:
            return sizes[key]
        in_progress.add(key)
        total = 1
        if isinstance(node, yaml.SequenceNode):
            total += sum(size(child) for child in node.value)
        elif isinstance(node, yaml.MappingNode):
            total += sum(size(k) + size(v) for k, v in node.value)
        total = min(total, MAX_EXPANDED_NODES + 1)
        in_progress.discard(key)
        sizes[key] = total
        return total

    return size(root)


def _yaml_problem(error: yaml.MarkedYAMLError, file: str, text: str = "") -> Problem:
    """One line for a YAML error, at the place a person should look."""
    mark = error.problem_mark or error.context_mark
    what = error.problem or error.context or "malformed YAML"
    context = error.context or ""
    opened = error.context_mark
    if context.endswith(("flow mapping", "flow sequence")) and opened is not None:
        bracket = "{" if context.endswith("mapping") else "["
        if mark is None or mark.line != opened.line or "end" in what:
            # Unclosed: the parser notices lines later; show where it opened.
            mark = opened
            what += f" (a '{bracket}' opened here is not closed)"
        else:
            what += f" (inside the '{bracket}' opened at column {opened.column + 1})"
    elif "flow node" in context and mark is not None and (
        mark.line >= len(text.rstrip().splitlines())  # past the last line: the file ended
    ):
        what += " (the file ends inside brackets: a '[' or '{' is not closed)"
    elif "expected" in what and "block" in context:
        what += " (check the indentation of this line against the lines above)"
    line, column = (mark.line + 1, mark.column + 1) if mark else (0, 0)
    return Problem(file, line, column, "", f"YAML: {what}")


def find_unprintable(text: str) -> tuple[int, int, str] | None:
    """(line, column, character) of the first character outside YAML's printable set.

    Lines are counted at LF, and at a CR not followed by LF.
    """
    found = _NOT_PRINTABLE.search(text)
    if found is None:
        return None
    head = text[: found.start()].replace("\r\n", "\n").replace("\r", "\n")
    line = head.count("\n") + 1
    column = len(head) - (head.rfind("\n") + 1) + 1
    return line, column, found.group()


def _unprintable(text: str, file: str, error: yaml.reader.ReaderError) -> Problem:
    """The reader's complaint at the line and column of the character it refused."""
    found = find_unprintable(text)
    if found is None:
        return Problem(file, 0, 0, "", f"YAML: {error.reason}")
    line, column, char = found
    return Problem(file, line, column, "", f"YAML: character U+{ord(char):04X} is "
                   "not allowed (a control character; only tab and line breaks are)")


def _deep_place(root: yaml.Node) -> tuple[int, int]:
    """Line and column of the first value nested deeper than MAX_DEPTH (walked, not recursed)."""
    stack: list[tuple[yaml.Node, int]] = [(root, 1)]
    seen: set[int] = set()
    while stack:
        node, depth = stack.pop()
        if depth > MAX_DEPTH:
            return node.start_mark.line + 1, node.start_mark.column + 1
        if id(node) in seen:
            continue
        seen.add(id(node))
        if isinstance(node, yaml.SequenceNode):
            stack.extend((child, depth + 1) for child in reversed(node.value))
        elif isinstance(node, yaml.MappingNode):
            for key, value in reversed(node.value):
                stack.extend(((value, depth + 1), (key, depth + 1)))
    return 0, 0


def parse_yaml(text: str, file: str) -> tuple[Any, Marks]:
    """Parse YAML text into plain data and the marks of every value.

    Raises InputError (one line, with file:line:col) on any YAML problem.
    """
    marks = Marks(file)
    root = None
    if len(text.encode("utf-8", "surrogatepass")) > MAX_FILE_BYTES:
        raise InputError([Problem(file, 0, 0, "", f"file is larger than {MAX_FILE_BYTES} bytes")])
    try:
        loader = (_AliasPlacingLoader if "*" in text and "&" in text else _StrictLoader)(text)
        try:
            root = loader.get_single_node()
            if root is None:
                return None, marks
            # Aliases need anchors: skip the size walk for the common anchor-free file.
            if "&" in text and _expanded_size(root) > MAX_EXPANDED_NODES:
                raise InputError([Problem(
                    file, root.start_mark.line + 1, root.start_mark.column + 1, "",
                    "aliases expand to more than "
                    f"{MAX_EXPANDED_NODES:,} values; refusing (write the values out instead)",
                )])
            # Marks keep the merged (<<) keys too: flatten before collecting.
            data = loader.construct_document(root)
        finally:
            loader.dispose()
    except yaml.MarkedYAMLError as error:
        raise InputError([_yaml_problem(error, file, text)]) from None
    except yaml.reader.ReaderError as error:
        raise InputError([_unprintable(text, file, error)]) from None
    except yaml.YAMLError as error:
        raise InputError([Problem(file, 0, 0, "", f"YAML: {error}")]) from None
    except RecursionError:
        line, column = _deep_place(root) if root is not None else (0, 0)
        raise InputError([Problem(file, line, column, "", "YAML: values nested more than "
                                  f"{MAX_DEPTH} levels deep")]) from None
    marks.root = root
    return data, marks
