"""Reading a config file's text and composing its YAML safely, before any value is read.

Two checks, each bounded in time and memory before the next step starts, guard against
hostile or mistaken YAML (a "billion laughs" of nested aliases, deep nesting, loops, object
tags):

1. the event stream is checked for the number of aliases and the nesting depth, which stops at
   the first excess and so costs little even on a hostile document;
2. the composed node graph is checked for tags other than plain data, loops through aliases,
   and the number of values once every alias is written out, visiting each node once.

Every problem raises :class:`scorecard.errors.InputError` with one line naming the file, the
key path where known, and the line.
"""

from __future__ import annotations

from collections.abc import Iterator
from os import PathLike, fspath
from pathlib import Path
from typing import NoReturn

import yaml

from scorecard.config.messages import display, message, shorten
from scorecard.config.nodes import YAML_TAG, line_of, short_tag
from scorecard.errors import InputError

__all__ = ["MAX_ALIASES", "MAX_CONFIG_CHARACTERS", "MAX_DEPTH", "MAX_VALUES", "check_graph",
           "compose", "file_name", "read_text"]

MAX_CONFIG_CHARACTERS = 1_000_000
MAX_ALIASES = 1000
MAX_DEPTH = 32
MAX_VALUES = 100_000

_PLAIN_TAGS = frozenset({"str", "int", "float", "bool", "null", "timestamp", "map", "seq", "merge"})


def _fail(file: str, line: int | None, path: tuple, what: str) -> NoReturn:
    raise InputError(message(file, display(path), what, line))


def file_name(path: str | PathLike) -> str:
    """The config file's name as given, for messages; TypeError or ValueError if it is none.

    Examples
    --------
    >>> file_name(Path("configs") / "lease.yaml")
    'configs/lease.yaml'
    """
    if not isinstance(path, (str, PathLike)):
        raise TypeError(f"path must be a str or path-like, got {type(path).__name__}")
    file = fspath(path)
    if not isinstance(file, str) or not file:
        raise ValueError("path must name the config file")
    return file


def read_text(file: str) -> str:
    """The text of a config file, refused in one line if it cannot be a config.

    Parameters
    ----------
    file : str
        Path of the config file.

    Returns
    -------
    str
        The file decoded as UTF-8 (a leading byte-order mark is dropped).

    Raises
    ------
    InputError
        The file is missing, a folder, unreadable, far too large or not UTF-8.

    Examples
    --------
    >>> read_text("no-such-config.yaml")
    Traceback (most recent call last):
    ...
    scorecard.errors.InputError: no-such-config.yaml: no such file
    """
    location = Path(file).expanduser()
    try:
        if location.is_dir():
            raise InputError(message(file, "", "is a folder, not a config file"))
        if location.stat().st_size > MAX_CONFIG_CHARACTERS * 4:
            raise InputError(message(file, "", "is far too large for a config; "
                                               "was a data file given instead?"))
        raw = location.read_bytes()
    except FileNotFoundError:
        raise InputError(message(file, "", "no such file")) from None
    except PermissionError:
        raise InputError(message(file, "", "cannot be read: permission denied")) from None
    except OSError as error:
        raise InputError(message(file, "", f"cannot be read: {error.strerror or error}")) from None
    try:
        return raw.decode("utf-8-sig")
    except UnicodeDecodeError as error:
        line = raw.count(b"\n", 0, error.start) + 1
        raise InputError(message(file, "", "is not UTF-8 text", line)) from None


def compose(text: str, file: str) -> yaml.Node | None:
    """Compose the node graph once the text is short and its event stream small and shallow.

    Parameters
    ----------
    text : str
        The YAML document.
    file : str
        The config file, for messages.

    Returns
    -------
    yaml.Node or None
        The root node; None for an empty document.

    Raises
    ------
    InputError
        The text is too long, uses too many aliases, nests too deep or is not valid YAML.

    Examples
    --------
    >>> compose("binning: {max_bins: 6}", "lease.yaml").value[0][0].value
    'binning'
    >>> compose("[" * 40, "lease.yaml")
    Traceback (most recent call last):
    ...
    scorecard.errors.InputError: lease.yaml: nests lists and mappings more than 32 levels deep (line 1)
    """
    if len(text) > MAX_CONFIG_CHARACTERS:
        raise InputError(
            message(file, "", f"is {len(text)} characters long, more than a config can be "
                              f"({MAX_CONFIG_CHARACTERS}); was a data file given instead?")
        )
    try:
        _check_events(file, text)
        loader = yaml.SafeLoader(text)
        try:
            return loader.get_single_node()
        finally:
            loader.dispose()
    except yaml.YAMLError as error:
        raise InputError(_syntaxmessage(file, text, error)) from None


def _check_events(file: str, text: str) -> None:
    # Streaming events stops at the first excess, so a hostile document costs little; composing
    # is recursive and pure-Python scanning grows with depth, hence the depth bound first.
    aliases = depth = 0
    for event in yaml.parse(text, Loader=yaml.SafeLoader):
        if isinstance(event, yaml.AliasEvent):
            aliases += 1
            if aliases > MAX_ALIASES:
                _fail(file, event.start_mark.line + 1, (),
                      f"uses more than {MAX_ALIASES} aliases, more than a config needs")
        elif isinstance(event, yaml.CollectionStartEvent):
            depth += 1
            if depth > MAX_DEPTH:
                _fail(file, event.start_mark.line + 1, (),
                      f"nests lists and mappings more than {MAX_DEPTH} levels deep")
        elif isinstance(event, yaml.CollectionEndEvent):
            depth -= 1


def _syntaxmessage(file: str, text: str, error: yaml.YAMLError) -> str:
    if isinstance(error, yaml.MarkedYAMLError):
        mark = error.problem_mark or error.context_mark
        problem = ", ".join(part for part in (error.context, error.problem) if part)
        opened = error.context_mark
        if opened is not None and mark is not None and opened.line != mark.line \
                and (error.context or "").startswith("while"):
            # An unclosed bracket or quote is noticed lines later; its start is what to fix.
            problem += f" (it started at line {opened.line + 1})"
        return message(file, "", f"YAML syntax error: {problem}", mark.line + 1 if mark else None)
    if isinstance(error, yaml.reader.ReaderError):
        line = text.count("\n", 0, error.position) + 1
        return message(file, "", "contains a character YAML does not allow", line)
    return message(file, "", f"YAML syntax error: {error}")


def check_graph(root: yaml.Node, file: str) -> None:
    """Refuse loops, tags other than plain data, and excess once aliases are written out.

    Parameters
    ----------
    root : yaml.Node
        The composed document.
    file : str
        The config file, for messages.

    Raises
    ------
    InputError
        Naming the key path and line of the first node at fault.

    Examples
    --------
    >>> check_graph(compose("a: &x [1, 2]\\nb: *x", "lease.yaml"), "lease.yaml")
    >>> check_graph(compose("a: !!python/name:os.system x", "lease.yaml"), "lease.yaml")
    Traceback (most recent call last):
    ...
    scorecard.errors.InputError: lease.yaml: a: the tag '!!python/name:os.system' is not allowed; a config holds only text, numbers, yes/no values, dates, lists and mappings (line 1)
    """
    _expanded_size(file, root, (), {}, set())


def _expanded_size(file: str, node: yaml.Node, path: tuple, sizes: dict,
                   open_nodes: set) -> int:
    """Values in ``node`` with every alias written out; refuses loops, tags and excess.

    Each node is sized once (aliases share nodes), so the cost follows the file, not the
    expansion. The walk follows document order, so every anchored node is first met where it
    is written and the recursion is no deeper than the text's own nesting.
    """
    if id(node) in sizes:
        return sizes[id(node)]
    if id(node) in open_nodes:
        _fail(file, line_of(node), path, "loops back into itself through an alias")
    _check_tag(file, node, path)
    open_nodes.add(id(node))
    total = 1 + sum(
        _expanded_size(file, child, child_path, sizes, open_nodes)
        for child_path, child in _children(node, path)
    )
    open_nodes.discard(id(node))
    if total > MAX_VALUES:
        _fail(file, line_of(node), path,
              f"holds more than {MAX_VALUES} values once its aliases are written out")
    sizes[id(node)] = total
    return total


def _children(node: yaml.Node, path: tuple) -> Iterator[tuple[tuple, yaml.Node]]:
    if isinstance(node, yaml.SequenceNode):
        for index, item in enumerate(node.value):
            yield path + (index,), item
    elif isinstance(node, yaml.MappingNode):
        for key, value in node.value:
            yield path, key
            yield path + (key.value if isinstance(key, yaml.ScalarNode) else "?",), value


def _check_tag(file: str, node: yaml.Node, path: tuple) -> None:
    if node.tag.startswith(YAML_TAG) and short_tag(node) in _PLAIN_TAGS:
        return
    shown = "!!" + short_tag(node) if node.tag.startswith(YAML_TAG) else node.tag
    _fail(file, line_of(node), path,
          f"the tag '{shorten(shown)}' is not allowed; a config holds only text, "
          "numbers, yes/no values, dates, lists and mappings")
