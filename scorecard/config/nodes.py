"""YAML nodes as the config reader sees them, and the :class:`Source` that reads them.

A :class:`Source` is the config being read: it remembers the line of every key it has met, so
that a problem found later (a rule across two keys, a column absent from the data) still names
its line, and it turns a node into a value only when the node's tag is one that was asked for.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any, NoReturn

import yaml

from scorecard.config.messages import did_you_mean, display, message, shorten
from scorecard.errors import InputError

__all__ = ["Source", "YAML_TAG", "describe", "is_null", "line_of", "short_tag"]

YAML_TAG = "tag:yaml.org,2002:"
_MERGE_TAG = YAML_TAG + "merge"


def short_tag(node: yaml.Node) -> str:
    """The node's tag without the YAML prefix: ``'int'``, ``'str'``, ``'map'``.

    Examples
    --------
    >>> short_tag(yaml.compose("6"))
    'int'
    """
    return node.tag.removeprefix(YAML_TAG)


def is_null(node: yaml.Node) -> bool:
    """True for a scalar read as null (``null``, ``~`` or nothing).

    Examples
    --------
    >>> is_null(yaml.compose("a: ~").value[0][1]), is_null(yaml.compose("0"))
    (True, False)
    """
    return isinstance(node, yaml.ScalarNode) and short_tag(node) == "null"


def describe(node: yaml.Node) -> str:
    """What a node holds, in words for a message.

    Examples
    --------
    >>> describe(yaml.compose("[1, 2]")), describe(yaml.compose("yes")), describe(yaml.compose("six"))
    ('a list', 'the yes/no value yes', "'six'")
    """
    if isinstance(node, yaml.MappingNode):
        return "a mapping"
    if isinstance(node, yaml.SequenceNode):
        return "a list"
    if is_null(node):
        return "nothing"
    if short_tag(node) == "bool":
        return f"the yes/no value {node.value}"
    return f"'{shorten(node.value)}'"


def line_of(node: yaml.Node) -> int:
    """The 1-based line where a node starts.

    Examples
    --------
    >>> line_of(yaml.compose("a: 1\\nb: 2").value[1][0])
    2
    """
    return node.start_mark.line + 1


class Source:
    """The config being read: its name for messages and the line of every key read so far.

    Parameters
    ----------
    file : str
        The config file as the user named it, for messages.

    Examples
    --------
    >>> source = Source("lease.yaml")
    >>> found = source.mapping((), yaml.compose("binning:\\n  max_bins: 6"))
    >>> inner = source.mapping(("binning",), found["binning"])
    >>> source.value(("binning", "max_bins"), inner["max_bins"], ("int",), "a whole number")
    6
    >>> source.lines[("binning", "max_bins")]
    2
    """

    def __init__(self, file: str) -> None:
        self.file = file
        self.lines: dict[tuple, int] = {}
        self._constructor = yaml.constructor.SafeConstructor()

    def record(self, path: tuple, node: yaml.Node) -> None:
        self.lines[path] = line_of(node)

    def fail(self, path: tuple, what: str) -> NoReturn:
        """Raise for ``path`` at its line, or its nearest recorded parent's if it is absent."""
        known = path
        while known and known not in self.lines:
            known = known[:-1]
        self.fail_at(self.lines.get(known), path, what)

    def fail_at(self, line: int | None, path: tuple, what: str) -> NoReturn:
        raise InputError(message(self.file, display(path), what, line))

    def value(self, path: tuple, node: yaml.Node, tags: tuple[str, ...], wanted: str) -> Any:
        """The constructed value of a scalar whose tag is one of ``tags``."""
        if not isinstance(node, yaml.ScalarNode) or short_tag(node) not in tags:
            self.fail(path, f"must be {wanted}, got {describe(node)}")
        try:
            return self._constructor.construct_object(node)
        except (ValueError, yaml.YAMLError):
            pass
        self.fail(path, f"must be {wanted}, got '{shorten(node.value)}'")

    def text(self, path: tuple, node: yaml.Node) -> str:
        """A scalar exactly as written in the file."""
        if not isinstance(node, yaml.ScalarNode) or is_null(node):
            self.fail(path, f"must be text, got {describe(node)}")
        if not node.value:
            self.fail(path, "must not be empty")
        return node.value

    def items(self, path: tuple, node: yaml.Node) -> list[tuple[tuple, yaml.Node]]:
        if not isinstance(node, yaml.SequenceNode):
            self.fail(path, f"must be a list, got {describe(node)}")
        for index, item in enumerate(node.value):
            self.record(path + (index,), item)
        return [(path + (index,), item) for index, item in enumerate(node.value)]

    def mapping(self, path: tuple, node: yaml.Node | None,
                known: tuple[str, ...] | None = None,
                renamed: Mapping[str, str] | None = None) -> dict[str, yaml.Node]:
        """Keys of a mapping (merge keys applied) with their value nodes; null is empty.

        Keys outside ``known`` are refused with a suggestion; None accepts any key. A key in
        ``renamed`` (a former name, mapped to its new one) is refused with the new name.
        """
        renamed = renamed or {}
        if node is None or is_null(node):
            return {}
        if not isinstance(node, yaml.MappingNode):
            self.fail(path, f"must be a mapping of keys, got {describe(node)}")
        found: dict[str, yaml.Node] = {}
        explicit, merged = self._pairs(path, node)
        for key_node, value_node in explicit:
            key = self._key(path, key_node, known, renamed)
            if key in found:
                self.fail_at(line_of(key_node), path + (key,),
                             f"is given twice (first at line {self.lines[path + (key,)]})")
            self.record(path + (key,), key_node)
            found[key] = value_node
        for key_node, value_node in merged:
            key = self._key(path, key_node, known, renamed)
            if key not in found:
                self.record(path + (key,), key_node)
                found[key] = value_node
        return found

    def _pairs(self, path: tuple, node: yaml.MappingNode) -> tuple[list, list]:
        """Explicit pairs, and pairs brought in by ``<<`` merge keys, earliest first."""
        explicit, merged = [], []
        for key_node, value_node in node.value:
            if key_node.tag != _MERGE_TAG:
                explicit.append((key_node, value_node))
                continue
            is_list = isinstance(value_node, yaml.SequenceNode)
            sources = value_node.value if is_list else [value_node]
            for merge_source in sources:
                if not isinstance(merge_source, yaml.MappingNode):
                    self.fail_at(line_of(key_node), path,
                                 "'<<' must merge a mapping or a list of mappings")
                inner_explicit, inner_merged = self._pairs(path, merge_source)
                merged.extend(inner_explicit + inner_merged)
        return explicit, merged

    def _key(self, path: tuple, node: yaml.Node, known: tuple[str, ...] | None,
             renamed: Mapping[str, str]) -> str:
        if not isinstance(node, yaml.ScalarNode) or is_null(node) or not node.value:
            self.fail_at(line_of(node), path, "has a key that is not plain text")
        key = node.value
        if key in renamed:
            self.fail_at(line_of(node), path + (key,), f"renamed; write {renamed[key]}")
        if known is not None and key not in known:
            hint = did_you_mean(key, known) or f"; known keys are {', '.join(known)}"
            self.fail_at(line_of(node), path + (key,), "unknown key" + hint)
        return key
