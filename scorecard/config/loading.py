"""Read and check the YAML config of a scorecard build.

The config is read in three steps, each bounded in time and memory before the next one starts:
the YAML event stream is checked for alias counts and nesting depth, the composed node graph is
checked for disallowed tags, loops and alias expansion, and only then are values read, key by
key, into plain frozen objects. Every problem raises :class:`scorecard.errors.InputError` with
one line ``<config file>: <key.path>: <what is wrong> (line N)``.

Text values (column names, levels, reason codes) are taken exactly as written in the file, so a
level written ``01`` stays the text ``"01"`` rather than becoming the number 1.
"""

from __future__ import annotations

import codecs
import datetime
import difflib
import math
import re
import warnings
from collections.abc import Callable, Iterable, Iterator, Mapping
from dataclasses import dataclass, field
from os import PathLike, fspath
from pathlib import Path
from typing import Any, Generic, NoReturn, TypeVar, Union

import yaml

from scorecard.config.rejects import METHOD_SETTINGS, REJECT_METHODS, RejectsConfig
from scorecard.errors import InputError

__all__ = [
    "BinningConfig",
    "CharacteristicOverride",
    "Config",
    "DataConfig",
    "EngineConfig",
    "EvaluationConfig",
    "FairnessConfig",
    "FrozenMapping",
    "OutOfTime",
    "OutputConfig",
    "SamplesConfig",
    "ScalingConfig",
    "RejectsConfig",
    "ScoringConfig",
    "SelectionConfig",
    "StabilityConfig",
    "check_columns",
    "load_config",
    "parse_config",
]

MAX_CONFIG_CHARACTERS = 1_000_000
MAX_ALIASES = 1000
MAX_DEPTH = 32
MAX_VALUES = 100_000

TRENDS = ("auto", "ascending", "descending", "free")
KINDS = ("numeric", "categorical")
METHODS = ("stepwise", "all")
UNSEEN_ACTIONS = ("neutral", "worst", "reject")
OUT_OF_RANGE_ACTIONS = ("edge", "neutral", "worst", "reject")

OutcomeValue = Union[str, int, float, bool]
SpecialValue = Union[str, int, float]

K = TypeVar("K")
V = TypeVar("V")


class FrozenMapping(Mapping, Generic[K, V]):
    """A read-only mapping that can be hashed and pickled.

    Parameters
    ----------
    items : mapping or iterable of (key, value) pairs, optional
        The contents; copied, so later changes to the argument do not show through.

    Examples
    --------
    >>> FrozenMapping({"age": 1})["age"]
    1
    """

    __slots__ = ("_items",)

    def __init__(self, items: Mapping[K, V] | Iterable[tuple[K, V]] = ()) -> None:
        self._items = dict(items)

    def __getitem__(self, key: K) -> V:
        return self._items[key]

    def __iter__(self) -> Iterator[K]:
        return iter(self._items)

    def __len__(self) -> int:
        return len(self._items)

    def __hash__(self) -> int:
        return hash(frozenset(self._items.items()))

    def __repr__(self) -> str:
        return f"FrozenMapping({self._items!r})"

    def __reduce__(self) -> tuple:
        return (FrozenMapping, (self._items,))


@dataclass(frozen=True, slots=True)
class DataConfig:
    """Where the rows are and how their outcome is coded (the ``data`` section).

    Attributes
    ----------
    source : Path
        CSV or Parquet file, or a folder of Parquet files, resolved against the config's folder.
    target : str
        The outcome column.
    bad, good : tuple
        Outcome values, as written in the config, that count as bad and as good. Rows with any
        other outcome are left out and counted.
    weight : str or None
        Optional sample-weight column.
    ignore : tuple of str
        Columns never used as characteristics.
    protected : tuple of str
        Columns never used as characteristics and examined in the fairness check.
    encoding : str
        Text encoding of a CSV source.
    delimiter : str
        Field separator of a CSV source, one character.
    """

    source: Path
    target: str
    bad: tuple[OutcomeValue, ...]
    good: tuple[OutcomeValue, ...]
    weight: str | None = None
    ignore: tuple[str, ...] = ()
    protected: tuple[str, ...] = ()
    encoding: str = "utf-8"
    delimiter: str = ","


@dataclass(frozen=True, slots=True)
class OutOfTime:
    """The out-of-time sample: rows whose ``column`` date is on or after ``from_date``.

    The YAML key is ``from``; the attribute is ``from_date`` because ``from`` is a Python keyword.
    """

    column: str
    from_date: datetime.date


@dataclass(frozen=True, slots=True)
class SamplesConfig:
    """How rows are split into development, holdout and out-of-time samples.

    Attributes
    ----------
    holdout : float or None
        Share of rows set aside at random (stratified by outcome); None for no holdout.
    seed : int
        Seed of the random holdout split.
    out_of_time : OutOfTime or None
        The out-of-time sample, or None for none.
    """

    holdout: float | None = 0.3
    seed: int = 2024
    out_of_time: OutOfTime | None = None


@dataclass(frozen=True, slots=True)
class BinningConfig:
    """Defaults for classing every characteristic (the ``binning`` section).

    Attributes
    ----------
    fine_bins : int
        Quantile classes before merging.
    max_bins : int
        Most classes a numeric characteristic keeps after merging (missing and special values
        have their own bins on top).
    min_bin_share : float
        Smallest share of rows in a merged class.
    min_bin_goods, min_bin_bads : int
        Fewest goods and bads in a merged class.
    trend : str
        Bad rate against value: ``auto``, ``ascending``, ``descending`` or ``free``.
    special_values : tuple
        Values that get a bin of their own, never merged into the numeric range.
    rare_level_share : float
        Categorical levels below this share of rows are pooled into one 'other levels' class.
    max_levels : int
        A categorical column with more distinct levels than this is treated as identifier-like
        and skipped.
    """

    fine_bins: int = 40
    max_bins: int = 6
    min_bin_share: float = 0.05
    min_bin_goods: int = 10
    min_bin_bads: int = 10
    trend: str = "auto"
    special_values: tuple[SpecialValue, ...] = ()
    rare_level_share: float = 0.01
    max_levels: int = 50


@dataclass(frozen=True, slots=True)
class CharacteristicOverride:
    """Manual settings for one characteristic; None means "use the binning defaults".

    Attributes
    ----------
    kind : str or None
        ``numeric`` or ``categorical``; given ``cuts`` imply numeric and ``groups`` categorical.
    trend : str or None
        Replaces ``binning.trend`` for this characteristic.
    cuts : tuple of float or None
        Strictly increasing cut points that fix the numeric classes.
    groups : tuple of tuple of str or None
        Levels grouped into classes; no level is in two groups.
    special_values : tuple or None
        Replaces ``binning.special_values`` for this characteristic.
    use : bool
        False keeps the characteristic out of selection.
    reason : str or None
        Plain-language text shown when this characteristic is a reason code.
    reason_code : str or None
        Short code shown with the reason.
    """

    kind: str | None = None
    trend: str | None = None
    cuts: tuple[float, ...] | None = None
    groups: tuple[tuple[str, ...], ...] | None = None
    special_values: tuple[SpecialValue, ...] | None = None
    use: bool = True
    reason: str | None = None
    reason_code: str | None = None


@dataclass(frozen=True, slots=True)
class SelectionConfig:
    """Which characteristics enter the model (the ``selection`` section)."""

    min_iv: float = 0.02
    max_correlation: float = 0.6
    max_vif: float = 5.0
    method: str = "stepwise"
    entry_p_value: float = 0.05
    max_characteristics: int = 12
    keep: tuple[str, ...] = ()


@dataclass(frozen=True, slots=True)
class ScalingConfig:
    """Score scale: ``base_score`` at good:bad odds ``base_odds``, ``pdo`` points per doubling."""

    base_score: float = 600.0
    base_odds: float = 50.0
    pdo: float = 20.0


@dataclass(frozen=True, slots=True)
class OutputConfig:
    """Where the workbook and the model file go, resolved against the config's folder."""

    workbook: Path = Path("out/scorecard.xlsx")
    model: Path = Path("out/scorecard.json")


@dataclass(frozen=True, slots=True)
class EngineConfig:
    """Where the passes over the rows run.

    Attributes
    ----------
    dask : str or None
        None runs in this process with numpy; ``"local"`` starts a local Dask cluster; a
        ``"tcp://host:port"`` address uses a running Dask scheduler.
    """

    dask: str | None = None


@dataclass(frozen=True, slots=True)
class ScoringConfig:
    """How new rows are scored.

    Attributes
    ----------
    unseen_level : str
        Points for a categorical level not seen in development: ``neutral``, ``worst`` or
        ``reject``.
    unseen_missing : str
        Points for a missing value where development had none: same choices.
    out_of_range : str
        Points for a value beyond the development range: ``edge``, ``neutral``, ``worst`` or
        ``reject``.
    reasons : int
        Reason codes given per scored row.
    """

    unseen_level: str = "neutral"
    unseen_missing: str = "neutral"
    out_of_range: str = "edge"
    reasons: int = 4


@dataclass(frozen=True, slots=True)
class EvaluationConfig:
    """Number of score bands in the gains and calibration tables."""

    score_bands: int = 10


@dataclass(frozen=True, slots=True)
class StabilityConfig:
    """Population stability thresholds: at or above ``watch`` to watch, ``shift`` for a shift."""

    watch: float = 0.10
    shift: float = 0.25
    score_bands: int = 10


@dataclass(frozen=True, slots=True)
class FairnessConfig:
    """Settings of the fairness check over the protected columns.

    Attributes
    ----------
    approval_rates : tuple of float
        Approval rates at which cutoffs are examined, strictly increasing, each in (0, 1).
    cutoffs : tuple of float
        Extra explicit cutoff scores, strictly increasing.
    proxy_cramers_v : float
        Association (Cramér's V) with a protected column above which a characteristic is
        flagged as a possible proxy.
    min_group_size : int
        Smallest group reported on its own.
    impact_ratio : float
        Approval-rate ratio below which a group is flagged.
    """

    approval_rates: tuple[float, ...] = (0.5, 0.7, 0.9)
    cutoffs: tuple[float, ...] = ()
    proxy_cramers_v: float = 0.15
    min_group_size: int = 50
    impact_ratio: float = 0.8


@dataclass(frozen=True, slots=True)
class Config:
    """A validated scorecard config.

    Attributes are named as the YAML keys. ``config_file`` (the name used in messages) and
    ``key_lines`` (key path such as ``"data.ignore[1]"`` -> 1-based line) are not compared.
    """

    data: DataConfig
    name: str = "scorecard"
    samples: SamplesConfig = field(default_factory=SamplesConfig)
    binning: BinningConfig = field(default_factory=BinningConfig)
    characteristics: FrozenMapping[str, CharacteristicOverride] = field(
        default_factory=FrozenMapping
    )
    selection: SelectionConfig = field(default_factory=SelectionConfig)
    scaling: ScalingConfig = field(default_factory=ScalingConfig)
    output: OutputConfig = field(default_factory=OutputConfig)
    engine: EngineConfig = field(default_factory=EngineConfig)
    scoring: ScoringConfig = field(default_factory=ScoringConfig)
    evaluation: EvaluationConfig = field(default_factory=EvaluationConfig)
    stability: StabilityConfig = field(default_factory=StabilityConfig)
    fairness: FairnessConfig = field(default_factory=FairnessConfig)
    rejects: RejectsConfig | None = None
    config_file: str = field(default="", compare=False)
    key_lines: FrozenMapping[str, int] = field(
        default_factory=FrozenMapping, compare=False, repr=False
    )


def load_config(path: str | PathLike) -> Config:
    """Read, check and resolve a YAML config file.

    Parameters
    ----------
    path : str or path-like
        The config file. Relative paths inside it are resolved against its folder.

    Returns
    -------
    Config

    Raises
    ------
    InputError
        The file is missing, unreadable, too large, not UTF-8, or its content is not a valid
        config; the message names the file, the key path and its line.

    Examples
    --------
    >>> config = load_config("lease.yaml")  # doctest: +SKIP
    >>> config.binning.max_bins  # doctest: +SKIP
    6
    """
    file = _file_name(path)
    return parse_config(_read_text(file), file)


def parse_config(text: str, path: str | PathLike) -> Config:
    """Check and resolve a YAML config given as text.

    Parameters
    ----------
    text : str
        The YAML document.
    path : str or path-like
        Where the config lives: named in messages, its folder anchors relative paths and its
        stem is the default ``name``. The file itself is not read.

    Returns
    -------
    Config

    Raises
    ------
    InputError
        The text is not a valid config; the message names the file, the key path and its line.

    Examples
    --------
    >>> text = "data: {source: x.csv, target: y, bad: [1], good: [0]}"
    >>> parse_config(text, "/data/lease.yaml").data.source
    PosixPath('/data/x.csv')
    """
    if not isinstance(text, str):
        raise TypeError(f"text must be a str, got {type(text).__name__}")
    file = _file_name(path)
    if len(text) > MAX_CONFIG_CHARACTERS:
        raise InputError(
            _message(file, "", f"is {len(text)} characters long, more than a config can be "
                               f"({MAX_CONFIG_CHARACTERS}); was a data file given instead?")
        )
    source = _Source(file)
    root = _compose(source, text)
    if root is None or _is_null(root):
        raise InputError(_message(file, "", "is empty; a config needs at least a data section"))
    source.record((), root)
    if not isinstance(root, yaml.MappingNode):
        source.fail((), f"must be a mapping of keys such as 'data:', got {_describe(root)}")
    _expanded_size(source, root, (), {}, set())
    base = Path(file).expanduser().absolute().parent
    return _read_config(source, root, base, Path(file).stem)


def check_columns(config: Config, columns: Iterable[str]) -> None:
    """Check that every column the config names is present in the data.

    Checked: the target, the weight, ignored and protected columns, the out-of-time date
    column, characteristics with an override and forced-in characteristics.

    Parameters
    ----------
    config : Config
    columns : iterable of str
        Column names of the data.

    Raises
    ------
    InputError
        For the first named column that is absent, naming its key path and line.

    Examples
    --------
    >>> config = parse_config("data: {source: x.csv, target: y, bad: [1], good: [0]}", "c.yaml")
    >>> check_columns(config, ["y", "age"])
    """
    present = set(columns)
    for path, column in _named_columns(config):
        if column not in present:
            spelled = [name for name in present if isinstance(name, str)]
            what = f"column '{column}' is not in the data{_did_you_mean(column, spelled)}"
            key = _display(path)
            raise InputError(_message(config.config_file, key, what, config.key_lines.get(key)))


def _named_columns(config: Config) -> Iterator[tuple[tuple, str]]:
    data = config.data
    yield ("data", "target"), data.target
    if data.weight is not None:
        yield ("data", "weight"), data.weight
    for key in ("ignore", "protected"):
        for index, column in enumerate(getattr(data, key)):
            yield ("data", key, index), column
    if config.samples.out_of_time is not None:
        yield ("samples", "out_of_time", "column"), config.samples.out_of_time.column
    for name in config.characteristics:
        yield ("characteristics", name), name
    for index, column in enumerate(config.selection.keep):
        yield ("selection", "keep", index), column


# ---- messages and key paths -------------------------------------------------------------------

_PLAIN_KEY = re.compile(r"[^.\[\]'\"]+")


def _display(path: tuple) -> str:
    """Key path as users write it: ``characteristics.housing.groups[1][0]``."""
    parts = []
    for part in path:
        if isinstance(part, int):
            parts.append(f"[{part}]")
        elif _PLAIN_KEY.fullmatch(part):
            parts.append(("." if parts else "") + part)
        else:
            parts.append(f"[{part!r}]")
    return "".join(parts)


def _message(file: str, key: str, what: str, line: int | None = None) -> str:
    text = ": ".join(part for part in (file, key, what) if part)
    # Values quoted from the file may hold line breaks or control characters; a message is one line.
    text = "".join(char if char.isprintable() else repr(char)[1:-1] for char in text)
    return text if line is None else f"{text} (line {line})"


def _did_you_mean(word: str, options: Iterable[str]) -> str:
    matches = difflib.get_close_matches(word, list(options), n=1)
    return f"; did you mean '{matches[0]}'?" if matches else ""


def _shorten(text: str, limit: int = 40) -> str:
    return text if len(text) <= limit else text[: limit - 3] + "..."


_YAML_TAG = "tag:yaml.org,2002:"
_PLAIN_TAGS = frozenset({"str", "int", "float", "bool", "null", "timestamp", "map", "seq", "merge"})


def _short_tag(node: yaml.Node) -> str:
    return node.tag.removeprefix(_YAML_TAG)


def _is_null(node: yaml.Node) -> bool:
    return isinstance(node, yaml.ScalarNode) and _short_tag(node) == "null"


def _describe(node: yaml.Node) -> str:
    if isinstance(node, yaml.MappingNode):
        return "a mapping"
    if isinstance(node, yaml.SequenceNode):
        return "a list"
    if _is_null(node):
        return "nothing"
    if _short_tag(node) == "bool":
        return f"the yes/no value {node.value}"
    return f"'{_shorten(node.value)}'"


def _line(node: yaml.Node) -> int:
    return node.start_mark.line + 1


# ---- reading the file and the YAML safely -------------------------------------------------------


def _file_name(path: str | PathLike) -> str:
    if not isinstance(path, (str, PathLike)):
        raise TypeError(f"path must be a str or path-like, got {type(path).__name__}")
    file = fspath(path)
    if not isinstance(file, str) or not file:
        raise ValueError("path must name the config file")
    return file


def _read_text(file: str) -> str:
    location = Path(file).expanduser()
    try:
        if location.is_dir():
            raise InputError(_message(file, "", "is a folder, not a config file"))
        if location.stat().st_size > MAX_CONFIG_CHARACTERS * 4:
            raise InputError(_message(file, "", "is far too large for a config; "
                                                "was a data file given instead?"))
        raw = location.read_bytes()
    except FileNotFoundError:
        raise InputError(_message(file, "", "no such file")) from None
    except PermissionError:
        raise InputError(_message(file, "", "cannot be read: permission denied")) from None
    except OSError as error:
        raise InputError(_message(file, "", f"cannot be read: {error.strerror or error}")) from None
    try:
        return raw.decode("utf-8-sig")
    except UnicodeDecodeError as error:
        line = raw.count(b"\n", 0, error.start) + 1
        raise InputError(_message(file, "", "is not UTF-8 text", line)) from None


def _compose(source: _Source, text: str) -> yaml.Node | None:
    """Compose the node graph once the event stream has been found small and shallow."""
    try:
        _check_events(source, text)
        loader = yaml.SafeLoader(text)
        try:
            return loader.get_single_node()
        finally:
            loader.dispose()
    except yaml.YAMLError as error:
        raise InputError(_syntax_message(source.file, text, error)) from None


def _check_events(source: _Source, text: str) -> None:
    # Streaming events stops at the first excess, so a hostile document costs little; composing
    # is recursive and pure-Python scanning grows with depth, hence the depth bound first.
    aliases = depth = 0
    for event in yaml.parse(text, Loader=yaml.SafeLoader):
        if isinstance(event, yaml.AliasEvent):
            aliases += 1
            if aliases > MAX_ALIASES:
                source.fail_at(event.start_mark.line + 1, (),
                               f"uses more than {MAX_ALIASES} aliases, more than a config needs")
        elif isinstance(event, yaml.CollectionStartEvent):
            depth += 1
            if depth > MAX_DEPTH:
                source.fail_at(event.start_mark.line + 1, (),
                               f"nests lists and mappings more than {MAX_DEPTH} levels deep")
        elif isinstance(event, yaml.CollectionEndEvent):
            depth -= 1


def _syntax_message(file: str, text: str, error: yaml.YAMLError) -> str:
    if isinstance(error, yaml.MarkedYAMLError):
        mark = error.problem_mark or error.context_mark
        problem = ", ".join(part for part in (error.context, error.problem) if part)
        opened = error.context_mark
        if opened is not None and mark is not None and opened.line != mark.line \
                and (error.context or "").startswith("while"):
            # An unclosed bracket or quote is noticed lines later; its start is what to fix.
            problem += f" (it started at line {opened.line + 1})"
        return _message(file, "", f"YAML syntax error: {problem}", mark.line + 1 if mark else None)
    if isinstance(error, yaml.reader.ReaderError):
        line = text.count("\n", 0, error.position) + 1
        return _message(file, "", "contains a character YAML does not allow", line)
    return _message(file, "", f"YAML syntax error: {error}")


def _expanded_size(source: _Source, node: yaml.Node, path: tuple, sizes: dict,
                   open_nodes: set) -> int:
    """Values in ``node`` with every alias written out; refuses loops, tags and excess.

    Each node is sized once (aliases share nodes), so the cost follows the file, not the
    expansion. The walk follows document order, so every anchored node is first met where it
    is written and the recursion is no deeper than the text's own nesting.
    """
    if id(node) in sizes:
        return sizes[id(node)]
    if id(node) in open_nodes:
        source.fail_at(_line(node), path, "loops back into itself through an alias")
    _check_tag(source, node, path)
    open_nodes.add(id(node))
    total = 1 + sum(
        _expanded_size(source, child, child_path, sizes, open_nodes)
        for child_path, child in _children(node, path)
    )
    open_nodes.discard(id(node))
    if total > MAX_VALUES:
        source.fail_at(_line(node), path,
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


def _check_tag(source: _Source, node: yaml.Node, path: tuple) -> None:
    if node.tag.startswith(_YAML_TAG) and _short_tag(node) in _PLAIN_TAGS:
        return
    shown = "!!" + _short_tag(node) if node.tag.startswith(_YAML_TAG) else node.tag
    source.fail_at(_line(node), path,
                   f"the tag '{_shorten(shown)}' is not allowed; a config holds only text, "
                   "numbers, yes/no values, dates, lists and mappings")


# ---- reading values from nodes ------------------------------------------------------------------

_MERGE_TAG = _YAML_TAG + "merge"


class _Source:
    """The config being read: its name for messages and the line of every key read so far."""

    def __init__(self, file: str) -> None:
        self.file = file
        self.lines: dict[tuple, int] = {}
        self._constructor = yaml.constructor.SafeConstructor()

    def record(self, path: tuple, node: yaml.Node) -> None:
        self.lines[path] = _line(node)

    def fail(self, path: tuple, what: str) -> NoReturn:
        """Raise for ``path`` at its line, or its nearest recorded parent's if it is absent."""
        known = path
        while known and known not in self.lines:
            known = known[:-1]
        self.fail_at(self.lines.get(known), path, what)

    def fail_at(self, line: int | None, path: tuple, what: str) -> NoReturn:
        raise InputError(_message(self.file, _display(path), what, line))

    def value(self, path: tuple, node: yaml.Node, tags: tuple[str, ...], wanted: str) -> Any:
        """The constructed value of a scalar whose tag is one of ``tags``."""
        if not isinstance(node, yaml.ScalarNode) or _short_tag(node) not in tags:
            self.fail(path, f"must be {wanted}, got {_describe(node)}")
        try:
            return self._constructor.construct_object(node)
        except (ValueError, yaml.YAMLError):
            pass
        self.fail(path, f"must be {wanted}, got '{_shorten(node.value)}'")

    def text(self, path: tuple, node: yaml.Node) -> str:
        """A scalar exactly as written in the file."""
        if not isinstance(node, yaml.ScalarNode) or _is_null(node):
            self.fail(path, f"must be text, got {_describe(node)}")
        if not node.value:
            self.fail(path, "must not be empty")
        return node.value

    def items(self, path: tuple, node: yaml.Node) -> list[tuple[tuple, yaml.Node]]:
        if not isinstance(node, yaml.SequenceNode):
            self.fail(path, f"must be a list, got {_describe(node)}")
        for index, item in enumerate(node.value):
            self.record(path + (index,), item)
        return [(path + (index,), item) for index, item in enumerate(node.value)]

    def mapping(self, path: tuple, node: yaml.Node | None,
                known: tuple[str, ...] | None = None) -> dict[str, yaml.Node]:
        """Keys of a mapping (merge keys applied) with their value nodes; null is empty.

        Keys outside ``known`` are refused with a suggestion; None accepts any key.
        """
        if node is None or _is_null(node):
            return {}
        if not isinstance(node, yaml.MappingNode):
            self.fail(path, f"must be a mapping of keys, got {_describe(node)}")
        found: dict[str, yaml.Node] = {}
        explicit, merged = self._pairs(path, node)
        for key_node, value_node in explicit:
            key = self._key(path, key_node, known)
            if key in found:
                self.fail_at(_line(key_node), path + (key,),
                             f"is given twice (first at line {self.lines[path + (key,)]})")
            self.record(path + (key,), key_node)
            found[key] = value_node
        for key_node, value_node in merged:
            key = self._key(path, key_node, known)
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
                    self.fail_at(_line(key_node), path,
                                 "'<<' must merge a mapping or a list of mappings")
                inner_explicit, inner_merged = self._pairs(path, merge_source)
                merged.extend(inner_explicit + inner_merged)
        return explicit, merged

    def _key(self, path: tuple, node: yaml.Node, known: tuple[str, ...] | None) -> str:
        if not isinstance(node, yaml.ScalarNode) or _is_null(node) or not node.value:
            self.fail_at(_line(node), path, "has a key that is not plain text")
        key = node.value
        if known is not None and key not in known:
            hint = _did_you_mean(key, known) or f"; known keys are {', '.join(known)}"
            self.fail_at(_line(node), path + (key,), "unknown key" + hint)
        return key


Reader = Callable[[_Source, tuple, yaml.Node], Any]


def _text(source: _Source, path: tuple, node: yaml.Node) -> str:
    return source.text(path, node)


def _flag(source: _Source, path: tuple, node: yaml.Node) -> bool:
    return source.value(path, node, ("bool",), "yes/no (true or false)")


def _optional(reader: Reader) -> Reader:
    """``reader``, with null read as None."""

    def read(source: _Source, path: tuple, node: yaml.Node) -> Any:
        return None if _is_null(node) else reader(source, path, node)

    return read


def _whole(minimum: int) -> Reader:
    def read(source: _Source, path: tuple, node: yaml.Node) -> int:
        value = source.value(path, node, ("int",), "a whole number")
        if value < minimum:
            source.fail(path, f"must be at least {minimum}, got {value}")
        return value

    return read


# YAML 1.1 reads an exponent without a decimal point (1e-3) as text; users mean a number.
_PLAIN_EXPONENT = re.compile(r"[-+]?(\d+\.?\d*|\.\d+)[eE][-+]?\d+")


def _finite(source: _Source, path: tuple, node: yaml.Node) -> float:
    unquoted = node.tag == _YAML_TAG + "str" and node.style is None
    if unquoted and _PLAIN_EXPONENT.fullmatch(node.value):
        raw = node.value
    else:
        raw = source.value(path, node, ("int", "float"), "a number")
    try:
        value = float(raw)
    except OverflowError:
        value = math.inf
    if not math.isfinite(value):
        source.fail(path, f"must be a finite number, got {_shorten(node.value)}")
    return value


def _number(low: float | None = None, high: float | None = None, *,
            low_open: bool = False, high_open: bool = False) -> Reader:
    """A finite number within the given bounds (open bounds exclude the bound itself)."""
    limits = []
    if low is not None:
        limits.append(f"above {low}" if low_open else f"at least {low}")
    if high is not None:
        limits.append(f"below {high}" if high_open else f"at most {high}")

    def read(source: _Source, path: tuple, node: yaml.Node) -> float:
        value = _finite(source, path, node)
        too_low = low is not None and (value <= low if low_open else value < low)
        too_high = high is not None and (value >= high if high_open else value > high)
        if too_low or too_high:
            source.fail(path, f"must be {' and '.join(limits)}, got {node.value}")
        return value

    return read


def _choice(options: tuple[str, ...]) -> Reader:
    def read(source: _Source, path: tuple, node: yaml.Node) -> str:
        value = source.text(path, node)
        if value not in options:
            source.fail(path, f"must be one of {', '.join(options)}, got '{_shorten(value)}'"
                              + _did_you_mean(value, options))
        return value

    return read


def _list_of(item: Reader, *, unique: bool = False, increasing: bool = False,
             nonempty: bool = False) -> Reader:
    def read(source: _Source, path: tuple, node: yaml.Node) -> tuple:
        values: list = []
        first_at: dict = {}
        for item_path, item_node in source.items(path, node):
            value = item(source, item_path, item_node)
            if unique:
                if value in first_at:
                    source.fail(item_path, f"'{_shorten(item_node.value)}' is already listed at "
                                           f"{_display(first_at[value])}")
                first_at[value] = item_path
            if increasing and values and value <= values[-1]:
                source.fail(item_path, f"must be larger than the value before it, got "
                                       f"{item_node.value} after {values[-1]:g}")
            values.append(value)
        if nonempty and not values:
            source.fail(path, "must list at least one value")
        return tuple(values)

    return read


def _outcome_value(source: _Source, path: tuple, node: yaml.Node) -> OutcomeValue:
    value = source.value(path, node, ("str", "int", "float", "bool"), "text, a number or yes/no")
    if value == "" or (isinstance(value, float) and not math.isfinite(value)):
        source.fail(path, f"must be text, a number or yes/no, got {_describe(node)}")
    return value


def _special_value(source: _Source, path: tuple, node: yaml.Node) -> SpecialValue:
    tag = _short_tag(node)
    if isinstance(node, yaml.ScalarNode) and tag == "str":
        return source.text(path, node)
    if tag == "float":
        return _finite(source, path, node)
    return source.value(path, node, ("int",), "a number or text")


def _date(source: _Source, path: tuple, node: yaml.Node) -> datetime.date:
    value = source.value(path, node, ("timestamp", "str"), "a date like 2025-07-01")
    if isinstance(value, str):
        try:
            value = datetime.date.fromisoformat(value)
        except ValueError:
            source.fail(path, f"must be a date like 2025-07-01, got '{_shorten(node.value)}'")
    if isinstance(value, datetime.datetime):
        source.fail(path, f"must be a date like 2025-07-01 without a time, got '{node.value}'")
    return value


def _encoding(source: _Source, path: tuple, node: yaml.Node) -> str:
    value = source.text(path, node)
    try:
        codecs.lookup(value)
    except LookupError:
        source.fail(path, f"'{_shorten(value)}' is not a known text encoding")
    return value


def _delimiter(source: _Source, path: tuple, node: yaml.Node) -> str:
    value = source.text(path, node)
    if len(value) != 1 or value in "\r\n\"":
        source.fail(path, f"must be one character such as ',' or ';', got {_describe(node)}")
    return value


_DASK_ADDRESS = re.compile(r"tcp://([A-Za-z0-9.-]+|\[[0-9A-Fa-f:.]+\]):(\d{1,5})")


def _dask_address(source: _Source, path: tuple, node: yaml.Node) -> str:
    value = source.text(path, node)
    address = _DASK_ADDRESS.fullmatch(value)
    if value != "local" and not (address and 1 <= int(address.group(2)) <= 65535):
        source.fail(path, "must be local or an address like tcp://host:8786, "
                          f"got {_describe(node)}")
    return value


def _engine(source: _Source, path: tuple, node: yaml.Node) -> EngineConfig:
    if isinstance(node, yaml.ScalarNode) and not _is_null(node):
        if source.text(path, node) != "local":
            source.fail(path, "must be local, {dask: local} or {dask: 'tcp://host:8786'}, "
                              f"got {_describe(node)}")
        return EngineConfig()
    values = _section(source, path, node, {"dask": _dask_address})
    return EngineConfig(**values)


def _out_of_time(source: _Source, path: tuple, node: yaml.Node) -> OutOfTime:
    values = _section(source, path, node, {"column": _text, "from": _date})
    _require(source, path, values, ("column", "from"))
    return OutOfTime(column=values["column"], from_date=values["from"])


def _section(source: _Source, path: tuple, node: yaml.Node | None,
             schema: dict[str, Reader]) -> dict[str, Any]:
    """The keys present in a mapping, each read by its reader in ``schema``."""
    found = source.mapping(path, node, tuple(schema))
    return {key: schema[key](source, path + (key,), value) for key, value in found.items()}


def _require(source: _Source, path: tuple, values: dict, keys: tuple[str, ...]) -> None:
    for key in keys:
        if key not in values:
            source.fail(path + (key,), "is required but missing")


# ---- the sections ------------------------------------------------------------------------------

_columns = _list_of(_text, unique=True)
_outcomes = _list_of(_outcome_value, unique=True, nonempty=True)
_special_values = _list_of(_special_value, unique=True)
_above_zero_to_one = _number(0, 1, low_open=True)

_DATA_SCHEMA = {
    "source": _text, "target": _text, "bad": _outcomes, "good": _outcomes,
    "weight": _optional(_text), "ignore": _columns, "protected": _columns,
    "encoding": _encoding, "delimiter": _delimiter,
}
_SAMPLES_SCHEMA = {
    "holdout": _optional(_number(0, 1, low_open=True, high_open=True)),
    "seed": _whole(0),
    "out_of_time": _optional(_out_of_time),
}
_BINNING_SCHEMA = {
    "fine_bins": _whole(2), "max_bins": _whole(2),
    "min_bin_share": _number(0, 0.5, high_open=True),
    "min_bin_goods": _whole(0), "min_bin_bads": _whole(0),
    "trend": _choice(TRENDS), "special_values": _special_values,
    "rare_level_share": _number(0, 0.5, high_open=True),
    "max_levels": _whole(2),
}
_OVERRIDE_SCHEMA = {
    "kind": _optional(_choice(KINDS)), "trend": _optional(_choice(TRENDS)),
    "cuts": _optional(_list_of(_finite, increasing=True, nonempty=True)),
    "groups": _optional(_list_of(_list_of(_text, nonempty=True), nonempty=True)),
    "special_values": _optional(_special_values), "use": _flag,
    "reason": _optional(_text), "reason_code": _optional(_text),
}
_SELECTION_SCHEMA = {
    "min_iv": _number(0), "max_correlation": _above_zero_to_one,
    "max_vif": _number(1, low_open=True),
    "method": _choice(METHODS), "entry_p_value": _above_zero_to_one,
    "max_characteristics": _whole(1), "keep": _columns,
}
_SCALING_SCHEMA = {
    "base_score": _number(), "base_odds": _number(0, low_open=True),
    "pdo": _number(0, low_open=True),
}
_OUTPUT_SCHEMA = {"workbook": _text, "model": _text}
_SCORING_SCHEMA = {
    "unseen_level": _choice(UNSEEN_ACTIONS), "unseen_missing": _choice(UNSEEN_ACTIONS),
    "out_of_range": _choice(OUT_OF_RANGE_ACTIONS), "reasons": _whole(0),
}
_EVALUATION_SCHEMA = {"score_bands": _whole(2)}
_STABILITY_SCHEMA = {
    "watch": _number(0, low_open=True), "shift": _number(0, low_open=True),
    "score_bands": _whole(2),
}
_FAIRNESS_SCHEMA = {
    "approval_rates": _list_of(_number(0, 1, low_open=True, high_open=True),
                               increasing=True, nonempty=True),
    "cutoffs": _list_of(_finite, increasing=True),
    "proxy_cramers_v": _above_zero_to_one, "min_group_size": _whole(1),
    "impact_ratio": _above_zero_to_one,
}
_TOP_KEYS = (
    "name", "data", "samples", "binning", "characteristics", "selection", "scaling", "output",
    "engine", "scoring", "evaluation", "stability", "fairness", "rejects",
)


def _read_config(source: _Source, root: yaml.MappingNode, base: Path, default_name: str) -> Config:
    top = source.mapping((), root, _TOP_KEYS)
    name = _text(source, ("name",), top["name"]) if "name" in top else default_name
    data = _read_data(source, top.get("data"), base)
    samples = _read_samples(source, top.get("samples"))
    characteristics = _read_characteristics(source, top.get("characteristics"))
    selection = SelectionConfig(**_section(source, ("selection",), top.get("selection"),
                                           _SELECTION_SCHEMA))
    reserved = _reserved_columns(data, samples)
    _check_overrides(source, characteristics, reserved)
    _check_keep(source, selection, characteristics, reserved)
    engine = top.get("engine")
    return Config(
        data=data,
        name=name,
        samples=samples,
        binning=_read_binning(source, top.get("binning")),
        characteristics=characteristics,
        selection=selection,
        scaling=ScalingConfig(**_section(source, ("scaling",), top.get("scaling"),
                                         _SCALING_SCHEMA)),
        output=_read_output(source, top.get("output"), base),
        engine=EngineConfig() if engine is None else _engine(source, ("engine",), engine),
        scoring=ScoringConfig(**_section(source, ("scoring",), top.get("scoring"),
                                         _SCORING_SCHEMA)),
        evaluation=EvaluationConfig(**_section(source, ("evaluation",), top.get("evaluation"),
                                               _EVALUATION_SCHEMA)),
        stability=_read_stability(source, top.get("stability")),
        fairness=FairnessConfig(**_section(source, ("fairness",), top.get("fairness"),
                                           _FAIRNESS_SCHEMA)),
        rejects=_read_rejects(source, top.get("rejects"), base),
        config_file=source.file,
        key_lines=FrozenMapping((_display(path), line) for path, line in source.lines.items()
                                if path),
    )


def _resolve(base: Path, written: str | Path) -> Path:
    return base / Path(written).expanduser()


def _read_data(source: _Source, node: yaml.Node | None, base: Path) -> DataConfig:
    values = _section(source, ("data",), node, _DATA_SCHEMA)
    _require(source, ("data",), values, ("source", "target", "bad", "good"))
    data = DataConfig(**{**values, "source": _resolve(base, values["source"])})
    _refuse_shared(source, ("data", "good"), data.good, data.bad, "data.bad")
    _refuse_shared(source, ("data", "protected"), data.protected, data.ignore, "data.ignore")
    _refuse_shared(source, ("data", "ignore"), data.ignore, (data.target,), "data.target")
    _refuse_shared(source, ("data", "protected"), data.protected, (data.target,), "data.target")
    if data.weight is not None and data.weight == data.target:
        source.fail(("data", "weight"), f"'{data.weight}' is also data.target; "
                                        "the weight must be another column")
    return data


def _refuse_shared(source: _Source, path: tuple, values: tuple, others: tuple, where: str) -> None:
    # Equality as in Python: 1, 1.0 and true are one value, as they are when rows are matched.
    for index, value in enumerate(values):
        if value in others:
            source.fail(path + (index,), f"'{value}' is also in {where}")


def _read_samples(source: _Source, node: yaml.Node | None) -> SamplesConfig:
    samples = SamplesConfig(**_section(source, ("samples",), node, _SAMPLES_SCHEMA))
    if samples.holdout is None and samples.out_of_time is None:
        warnings.warn(
            _message(source.file, "samples", "no holdout and no out-of-time sample; every figure "
                                             "will come from the rows the model was fitted on"),
            UserWarning,
            stacklevel=2,
        )
    return samples


def _read_binning(source: _Source, node: yaml.Node | None) -> BinningConfig:
    values = _section(source, ("binning",), node, _BINNING_SCHEMA)
    binning = BinningConfig(**values)
    if binning.fine_bins < binning.max_bins:
        key = "fine_bins" if "fine_bins" in values else "max_bins"
        source.fail(("binning", key), f"fine_bins ({binning.fine_bins}) must be at least "
                                      f"max_bins ({binning.max_bins})")
    return binning


def _read_characteristics(source: _Source, node: yaml.Node | None
                          ) -> FrozenMapping[str, CharacteristicOverride]:
    found = source.mapping(("characteristics",), node)
    return FrozenMapping(
        (name, _read_override(source, ("characteristics", name), value))
        for name, value in found.items()
    )


def _read_override(source: _Source, path: tuple, node: yaml.Node) -> CharacteristicOverride:
    values = _section(source, path, node, _OVERRIDE_SCHEMA)
    cuts, groups, kind = values.get("cuts"), values.get("groups"), values.get("kind")
    if cuts is not None and groups is not None:
        source.fail(path + ("groups",), "cannot be given with cuts: cuts class a numeric "
                                        "characteristic, groups a categorical one")
    if cuts is not None and kind == "categorical":
        source.fail(path + ("cuts",), "class numeric characteristics, but kind is categorical")
    if groups is not None and kind == "numeric":
        source.fail(path + ("groups",), "class categorical characteristics, but kind is numeric")
    if groups is not None:
        _check_groups(source, path + ("groups",), groups)
    implied = "numeric" if cuts is not None else "categorical" if groups is not None else None
    return CharacteristicOverride(**{**values, "kind": kind or implied})


def _check_groups(source: _Source, path: tuple, groups: tuple[tuple[str, ...], ...]) -> None:
    first_at: dict[str, tuple] = {}
    for group_index, group in enumerate(groups):
        for level_index, level in enumerate(group):
            where = path + (group_index, level_index)
            if level in first_at:
                source.fail(where, f"level '{_shorten(level)}' is already listed at "
                                   f"{_display(first_at[level])}")
            first_at[level] = where


def _reserved_columns(data: DataConfig, samples: SamplesConfig) -> dict[str, str]:
    """Columns that can never be characteristics, each with the key that reserves it."""
    reserved = {column: "data.protected" for column in data.protected}
    reserved.update({column: "data.ignore" for column in data.ignore})
    if samples.out_of_time is not None:
        reserved[samples.out_of_time.column] = "samples.out_of_time.column"
    if data.weight is not None:
        reserved[data.weight] = "data.weight"
    reserved[data.target] = "data.target"
    return reserved


def _check_overrides(source: _Source, characteristics: Mapping[str, CharacteristicOverride],
                     reserved: dict[str, str]) -> None:
    for name in characteristics:
        if name in reserved:
            source.fail(("characteristics", name),
                        f"'{name}' is named in {reserved[name]}, so it is never a characteristic")


def _check_keep(source: _Source, selection: SelectionConfig,
                characteristics: Mapping[str, CharacteristicOverride],
                reserved: dict[str, str]) -> None:
    path = ("selection", "keep")
    for index, column in enumerate(selection.keep):
        if column in reserved:
            source.fail(path + (index,), f"'{column}' is named in {reserved[column]}, "
                                         "so it cannot be forced in")
        if column in characteristics and not characteristics[column].use:
            source.fail(path + (index,), f"'{column}' has use: false under characteristics, "
                                         "so it cannot be forced in")
    if len(selection.keep) > selection.max_characteristics:
        source.fail(path, f"forces in {len(selection.keep)} characteristics, more than "
                          f"selection.max_characteristics ({selection.max_characteristics})")


def _read_output(source: _Source, node: yaml.Node | None, base: Path) -> OutputConfig:
    values = _section(source, ("output",), node, _OUTPUT_SCHEMA)
    defaults = OutputConfig()
    output = OutputConfig(
        workbook=_resolve(base, values.get("workbook", defaults.workbook)),
        model=_resolve(base, values.get("model", defaults.model)),
    )
    if output.workbook == output.model:
        source.fail(("output", "model"), "is the same file as output.workbook")
    return output


def _read_stability(source: _Source, node: yaml.Node | None) -> StabilityConfig:
    values = _section(source, ("stability",), node, _STABILITY_SCHEMA)
    stability = StabilityConfig(**values)
    if stability.watch >= stability.shift:
        key = "shift" if "shift" in values else "watch"
        source.fail(("stability", key), f"watch ({stability.watch:g}) must be below "
                                        f"shift ({stability.shift:g})")
    return stability


_REJECTS_SCHEMA = {
    "source": _text, "method": _choice(REJECT_METHODS), "bands": _whole(2),
    "uplift": _number(0, low_open=True), "seed": _optional(_whole(0)),
    "cutoff": _optional(_finite),
    "reject_bad_rate": _optional(_number(0, 1, low_open=True, high_open=True)),
    "known_outcome": _optional(_text), "encoding": _encoding, "delimiter": _delimiter,
}


def _read_rejects(source: _Source, node: yaml.Node | None, base: Path) -> RejectsConfig | None:
    if node is None or _is_null(node):
        return None
    path = ("rejects",)
    values = _section(source, path, node, _REJECTS_SCHEMA)
    _require(source, path, values, ("source",))
    method = values.get("method", "fuzzy")
    for key in values:
        if key in METHOD_SETTINGS["parcelling"] + METHOD_SETTINGS["hard_cutoff"] \
                and key not in METHOD_SETTINGS[method]:
            users = [m for m, keys in METHOD_SETTINGS.items() if key in keys]
            source.fail(path + (key,), f"applies to method {' and '.join(users)} only, "
                                       f"not {method}")
    if values.get("cutoff") is not None and values.get("reject_bad_rate") is not None:
        source.fail(path + ("reject_bad_rate",), "cannot be given with cutoff: give the score "
                                                 "or the bad rate that sets it")
    return RejectsConfig(**{**values, "source": _resolve(base, values["source"])})
