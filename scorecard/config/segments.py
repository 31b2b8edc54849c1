"""The ``segments`` section: one card per segment of the applicants, all on one scale.

A segment is picked by one column: by groups of its levels (``groups: {name: [levels]}``) or by
cuts of a numeric column (``cuts: [...]``, optionally with ``names``). Every card is scaled with
the same base score, base odds and points to double the odds, so one cut-off means one odds in
every segment.
"""

from __future__ import annotations

import yaml

from scorecard.config import values as v
from scorecard.config.messages import display, shorten
from scorecard.config.nodes import Source, is_null
from scorecard.config.schema import SegmentsConfig

__all__ = ["SegmentsConfig", "read_segments"]


_SCHEMA = {
    "column": v.text,
    "groups": None,        # read by _groups: a mapping of name to levels
    "cuts": v.list_of(v.finite, increasing=True, nonempty=True),
    "names": v.list_of(v.text, unique=True, nonempty=True),
}
_levels = v.list_of(v.text, unique=True, nonempty=True)


def read_segments(source: Source, node: yaml.Node | None) -> SegmentsConfig | None:
    """The segments section, or None when absent: a column and exactly one of groups and cuts.

    Examples
    --------
    >>> text = "{column: customer, groups: {new: [new], existing: [renewal, repeat]}}"
    >>> read_segments(Source("c.yaml"), yaml.compose(text)).names
    ('new', 'existing')
    >>> read_segments(Source("c.yaml"), yaml.compose("{column: tenure, cuts: [12]}")).names
    ('tenure < 12', 'tenure >= 12')
    """
    if node is None or is_null(node):
        return None
    path = ("segments",)
    found = source.mapping(path, node, tuple(_SCHEMA))
    values = {k: (_groups if k == "groups" else _SCHEMA[k])(source, path + (k,), n)
              for k, n in found.items()}
    v.require(source, path, values, ("column",))
    column, groups, cuts = values["column"], values.get("groups"), values.get("cuts")
    if (groups is None) == (cuts is None):
        if groups is not None:
            source.fail(path + ("cuts",), "cannot be given with groups: give groups of levels "
                                          "or cuts of a numeric column, not both")
        source.fail(path + ("groups",), "is required: groups of the column's levels by segment "
                                        "name (or give cuts of a numeric column)")
    if groups is not None:
        if "names" in values:
            source.fail(path + ("names",), "applies to cuts only: the groups' keys name the "
                                           "segments")
        return SegmentsConfig(column, groups=groups, names=tuple(n for n, _ in groups))
    names = values.get("names") or _cut_names(column, cuts)
    if len(names) != len(cuts) + 1:
        source.fail(path + ("names",), f"must list {len(cuts) + 1} names, one more than the "
                                       f"cuts; got {len(names)}")
    return SegmentsConfig(column, cuts=cuts, names=tuple(names))


def _groups(source: Source, path: tuple, node: yaml.Node) -> tuple:
    found = source.mapping(path, node)
    if len(found) < 2:
        source.fail(path, "must name at least two segments")
    first_at: dict[str, tuple] = {}
    out = []
    for name, levels_node in found.items():
        levels = _levels(source, path + (name,), levels_node)
        for index, level in enumerate(levels):
            if level in first_at:
                source.fail(path + (name, index), f"level '{shorten(level)}' is already listed "
                                                  f"at {display(first_at[level])}")
            first_at[level] = path + (name, index)
        out.append((name, levels))
    return tuple(out)


def _cut_names(column: str, cuts: tuple[float, ...]) -> tuple[str, ...]:
    inner = [f"{lo:g} <= {column} < {hi:g}" for lo, hi in zip(cuts, cuts[1:])]
    return (f"{column} < {cuts[0]:g}", *inner, f"{column} >= {cuts[-1]:g}")
