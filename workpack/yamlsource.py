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

from dataclasses import dataclass
from typing import Any

import yaml

from workpack.errors import InputError, Problem

# Far above any real plant (a 10,000-item plant expands to ~200,000 nodes).
MAX_EXPANDED_NODES = 5_000_000
MAX_FILE_BYTES = 50 * 1024 * 1024

Path = tuple[str | int, ...]


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


class _StrictLoader(_SafeBase):  # type: ignore[misc, valid-type]
    """Safe loader that refuses duplicate keys."""


def _construct_mapping(loader: _StrictLoader, node: yaml.MappingNode, deep: bool = False) -> Any:
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
    try:
        return yaml.constructor.SafeConstructor.construct_yaml_timestamp(loader, node)
    except ValueError as error:  # 2026-02-30: the date library's words, with a place
        raise yaml.constructor.ConstructorError(
            None, None, f"{node.value!r} is not a real date or time ({error})",
            node.start_mark) from None


def _refuse_tag(loader: Any, suffix: str, node: yaml.Node) -> Any:
    raise yaml.constructor.ConstructorError(
        None, None, f"tag {node.tag!r} is not allowed: write plain values only",
        node.start_mark)


class _AliasPlacingLoader(_StrictLoader if _SafeBase is yaml.SafeLoader  # type: ignore[misc]
                          else yaml.SafeLoader):
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


def _yaml_problem(error: yaml.MarkedYAMLError, file: str) -> Problem:
    """One line for a YAML error, at the place a person should look."""
    mark = error.problem_mark or error.context_mark
    what = error.problem or error.context or "malformed YAML"
    context = error.context or ""
    if "flow" in context and error.context_mark is not None:
        # An unclosed [ or {: the parser notices lines later; show where it opened.
        mark = error.context_mark
        bracket = "{" if context.endswith("mapping") else "["
        what += f" (a '{bracket}' opened here is not closed)"
    elif "expected" in what and "block" in context:
        what += " (check the indentation of this line against the lines above)"
    line, column = (mark.line + 1, mark.column + 1) if mark else (0, 0)
    return Problem(file, line, column, "", f"YAML: {what}")


def parse_yaml(text: str, file: str) -> tuple[Any, Marks]:
    """Parse YAML text into plain data and the marks of every value.

    Raises InputError (one line, with file:line:col) on any YAML problem.
    """
    marks = Marks(file)
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
        raise InputError([_yaml_problem(error, file)]) from None
    except yaml.YAMLError as error:
        raise InputError([Problem(file, 0, 0, "", f"YAML: {error}")]) from None
    except RecursionError:
        raise InputError([Problem(file, 0, 0, "", "YAML nests too deeply")]) from None
    marks.root = root
    return data, marks
