"""A built scorecard as one standard SQL query: points, score and reason codes per row.

The query reads a table of applications and returns, per row, the ``keep`` columns, ``score``,
``points_<name>`` for each characteristic and ``reason_1`` ... ``reason_N``, as the scored file
of ``scorecard score`` does. It uses only SELECT, WITH, CASE, comparison, IN, IS NULL and
arithmetic, so it runs unchanged in SQLite and other engines. The bad probability needs an
exponential, which not every engine offers, so the query leaves it out.

Each points column is one CASE whose branches follow the precedence of
:func:`scorecard.card.scoring.bin_codes`: missing, sentinels, outside the development range,
then the value ranges (or the groups of levels, then any other level). A bin whose rows the
scorecard refuses has no branch, so its points are NULL, the score is NULL and the reasons read
``REJECTED:<name>``. Reason codes are ranked in standard SQL without window functions: a code's
rank is one plus the number of codes with a larger pooled shortfall, or an equal one earlier in
the scorecard.

Identifiers are always double-quoted with inner quotes doubled and text literals single-quoted
with inner quotes doubled; numbers are written with ``repr`` so that they read back exactly.
"""

from __future__ import annotations

import math

from scorecard.card.scorecard import (
    LEVELS,
    MISSING,
    OUT_OF_RANGE,
    RANGE,
    SENTINEL,
    UNSEEN,
    Characteristic,
    Scorecard,
)
from scorecard.card.scoring import REFUSED_PREFIX, reason_groups
from scorecard.constraints import REASONS
from scorecard.errors import InputError
from scorecard.outputs.atomic import write_text


def quote_name(name: str) -> str:
    """A SQL identifier: double-quoted, inner double quotes doubled.

    Examples
    --------
    >>> print(quote_name('x"; DROP TABLE a; --'))
    "x""; DROP TABLE a; --"
    """
    _check_text(name, "name")
    return '"' + name.replace('"', '""') + '"'


def quote_text(value: str) -> str:
    """A SQL text literal: single-quoted, inner single quotes doubled.

    Examples
    --------
    >>> print(quote_text("owner's"))
    'owner''s'
    """
    _check_text(value, "text")
    return "'" + value.replace("'", "''") + "'"


def number(value) -> str:
    """A SQL number that reads back exactly: integers as they are, floats by ``repr``.

    Examples
    --------
    >>> number(3), number(0.1), number(-999.0)
    ('3', '0.1', '-999.0')
    """
    if isinstance(value, int):
        return str(value)
    if not math.isfinite(value):
        raise InputError(f"{value!r} is not a finite number; SQL cannot write it")
    return repr(float(value))


def _check_text(value: str, what: str) -> None:
    if "\x00" in value:
        raise InputError(f"{what} {value!r}: holds a NUL character, which SQL text cannot carry")


def scoring_query(card: Scorecard, table: str = "applications", keep=(), reasons: int = REASONS.default,
                  where: str = "") -> str:
    """The SQL query that scores every row of ``table``.

    Parameters
    ----------
    card : Scorecard
    table : str
        Name of the table of applications (one identifier, quoted as given).
    keep : sequence of str
        Columns of the table copied to the front of the result, e.g. a key.
    reasons : int
        Reason columns per row.
    where : str
        A condition on the table's rows (SQL text, as :func:`segmented_query` writes it).

    Examples
    --------
    >>> import sqlite3
    >>> from scorecard.card.scorecard import Bin, Characteristic, Scorecard, RANGE, MISSING
    >>> from scorecard.card.points import scaling
    >>> b = (Bin("< 1", RANGE, 60, 40, -0.4, 10, upper=1.0), Bin(">= 1", RANGE, 90, 10, 1.0, 30, lower=1.0),
    ...      Bin("missing", MISSING, 5, 5, 0.0, 20))
    >>> card = Scorecard("demo", scaling(600, 50, 20), 0.5,
    ...                  (Characteristic("x", "numeric", b, 1.0, "R01", "x is low", cuts=(1.0,)),))
    >>> db = sqlite3.connect(":memory:")
    >>> _ = db.execute('CREATE TABLE applications (id INTEGER, x REAL)')
    >>> _ = db.executemany("INSERT INTO applications VALUES (?, ?)", [(1, 0.5), (2, 2.0), (3, None)])
    >>> db.execute(scoring_query(card, keep=["id"], reasons=1)).fetchall()
    [(1, 10, 10, 'R01'), (2, 30, 30, None), (3, 20, 20, 'R01')]
    """
    if reasons < 0:
        raise InputError(f"--reasons {reasons}: must be at least 0")
    if not table:
        raise InputError("--table: the table name is empty")
    chars = card.characteristics
    points = [f"points_{c.name}" for c in chars]
    labels, group = reason_groups(card)
    refusing = [j for j, c in enumerate(chars) if any(b.rejected for b in c.bins)]
    inner = ([f"rank_{g + 1}" for g in range(len(labels))]
             + [f"refusal_rank_{j + 1}" for j in refusing] + (["refused"] if refusing else []))
    _check_columns(list(keep), points, reasons, inner)

    kept = [quote_name(k) for k in keep]
    point_columns = [f"{_points_case(c)} AS {quote_name(p)}" for c, p in zip(chars, points)]
    lines = ["WITH " + quote_name("points") + " AS (",
             "  SELECT " + _list(kept + point_columns, 4),
             "  FROM " + quote_name(table) + (f" WHERE {where}" if where else ""),
             ")"]
    if reasons:
        shortfall = _shortfalls(card, points, group, len(labels))
        ranks = [f"{_rank(shortfall, g)} AS {quote_name(f'rank_{g + 1}')}"
                 for g in range(len(labels))]
        if refusing:
            ranks += [f"{_refusal_rank(points, refusing, j)} AS "
                      f"{quote_name(f'refusal_rank_{j + 1}')}" for j in refusing]
            refused = " OR ".join(f"{quote_name(points[j])} IS NULL" for j in refusing)
            ranks.append(f"CASE WHEN {refused} THEN 1 ELSE 0 END AS {quote_name('refused')}")
        lines += [", " + quote_name("ranks") + " AS (",
                  "  SELECT " + _list([f"{quote_name('points')}.*"] + ranks, 4),
                  "  FROM " + quote_name("points"),
                  ")"]
    score = " + ".join(quote_name(p) for p in points)
    result = kept + [f"{score} AS {quote_name('score')}"] + [quote_name(p) for p in points]
    result += [f"{_reason(card, labels, points, refusing, r)} AS {quote_name(f'reason_{r}')}"
               for r in range(1, reasons + 1)]
    lines += ["SELECT " + _list(result, 2),
              "FROM " + quote_name("ranks" if reasons else "points")]
    return "\n".join(lines) + "\n"


def write_sql(card: Scorecard, path, table: str = "applications", keep=(),
              reasons: int = REASONS.default) -> None:
    """Write :func:`scoring_query` (or :func:`segmented_query`) to ``path`` (UTF-8), atomically."""
    query = segmented_query if hasattr(card, "rule") else scoring_query
    write_text(path, query(card, table, keep, reasons))


def _check_columns(keep, points, reasons, inner) -> None:
    outputs = keep + ["score"] + points + [f"reason_{r}" for r in range(1, reasons + 1)]
    for k in keep:
        if outputs.count(k) > 1 or k in inner:
            raise InputError(f"--keep {k}: listed twice or clashes with a column of the query")


def _list(items, indent: int) -> str:
    return (",\n" + " " * indent).join(items)


def _points_case(char: Characteristic) -> str:
    """CASE expression of the points of one characteristic."""
    name = quote_name(char.name)
    branches = []
    ranges = [b for b in char.bins if b.kind == RANGE]
    for b in char.bins:
        if b.kind == MISSING and not b.rejected:
            branches.append((f"{name} IS NULL", b.points))
    for b in char.bins:
        if b.kind == SENTINEL:
            branches.append((f"{name} = {number(b.value)}", b.points))
    if char.kind == "numeric":
        oor = char.bin_index(OUT_OF_RANGE)
        if oor is not None and char.development_range is not None:
            low, high = char.development_range
            outside = f"({name} < {number(low)} OR {name} > {number(high)})"
            branches.append((outside, None if char.bins[oor].rejected else char.bins[oor].points))
        for b in ranges:
            rule = f"{name} < {number(b.upper)}" if b.upper is not None else f"{name} IS NOT NULL"
            branches.append((rule, b.points))
    else:
        for b in char.bins:
            if b.kind == LEVELS and b.levels:
                branches.append((f"{name} IN ({', '.join(quote_text(lv) for lv in b.levels)})",
                                 b.points))
        unseen = char.bin_index(UNSEEN)
        if unseen is not None and not char.bins[unseen].rejected:
            branches.append((f"{name} IS NOT NULL", char.bins[unseen].points))
    for b in char.bins:
        if b.rejected and b.kind not in (MISSING, UNSEEN, OUT_OF_RANGE):
            raise InputError(f"characteristics.{char.name}: bin {b.label!r} refuses its rows; "
                             "SQL export supports refusing only missing, unseen and "
                             "out-of-range values")
    cases = "".join(f"\n      WHEN {rule} THEN {'NULL' if p is None else number(p)}"
                    for rule, p in branches)
    return f"CASE{cases}\n    END"


def _shortfalls(card: Scorecard, points, group, n_codes) -> list[str]:
    """Per reason code: points lost against the maxima, pooled over its characteristics."""
    parts = [[] for _ in range(n_codes)]
    for c, p, g in zip(card.characteristics, points, group):
        parts[g].append(f"({number(c.max_points)} - {quote_name(p)})")
    return ["(" + " + ".join(terms) + ")" for terms in parts]


def _rank(shortfall, g: int) -> str:
    """Rank of code g among a row's reasons; NULL when the code lost nothing."""
    own = shortfall[g]
    above = [f"CASE WHEN {s} {'>=' if h < g else '>'} {own} THEN 1 ELSE 0 END"
             for h, s in enumerate(shortfall) if h != g]
    return f"CASE WHEN {own} > 0 THEN " + " + ".join(["1"] + above) + " END"


def _refusal_rank(points, refusing, j: int) -> str:
    """Position of characteristic j among the characteristics that refused the row."""
    earlier = [f"CASE WHEN {quote_name(points[i])} IS NULL THEN 1 ELSE 0 END"
               for i in refusing if i < j]
    return f"CASE WHEN {quote_name(points[j])} IS NULL THEN " + " + ".join(["1"] + earlier) + " END"


def _reason(card: Scorecard, labels, points, refusing, r: int) -> str:
    """The r-th reason: a refusal when the row was refused, else the r-th ranked code."""
    ranked = " ".join(f"WHEN {quote_name(f'rank_{g + 1}')} = {r} THEN {quote_text(code)}"
                      for g, code in enumerate(labels))
    if not refusing:
        return f"CASE {ranked} END"
    refusals = " ".join(
        f"WHEN {quote_name(f'refusal_rank_{j + 1}')} = {r} "
        f"THEN {quote_text(REFUSED_PREFIX + card.characteristics[j].name)}" for j in refusing)
    return f"CASE WHEN {quote_name('refused')} = 1 THEN CASE {refusals} END {ranked} END"


SEGMENT = "segment"
_ROW_SEGMENT = "segment_of_the_row"


def segmented_query(model, table: str = "applications", keep=(),
                    reasons: int = REASONS.default) -> str:
    """One SQL query scoring every row of ``table`` with the card of its segment.

    A CASE on the segment column names each row's segment; each card's query (as
    :func:`scoring_query` writes it) scores the rows of its segment, and the parts are joined by
    UNION ALL with the columns ``keep``, ``segment``, ``score``, ``points_<name>`` for every
    characteristic of any card (NULL where the row's card lacks it) and the reasons. A row with
    no segment gets NULL scores and ``REJECTED:<segment column>``. SQL promises no row order:
    join the result to the table by a ``keep`` key.
    """
    rule = model.rule
    if not table:
        raise InputError("--table: the table name is empty")
    column = quote_name(rule.column)
    if rule.cuts is not None:
        branches = [f"WHEN {column} < {number(cut)} THEN {quote_text(name)}"
                    for cut, name in zip(rule.cuts, rule.names)]
        branches.append(f"WHEN {column} IS NOT NULL THEN {quote_text(rule.names[-1])}")
    else:
        branches = [f"WHEN {column} IN ({', '.join(quote_text(lv) for lv in levels)}) "
                    f"THEN {quote_text(name)}" for levels, name in zip(rule.groups, rule.names)]
    names = [f"points_{n}" for n in model.names]
    outputs = list(keep) + [SEGMENT, "score"] + names + [f"reason_{r}" for r in range(1, reasons + 1)]
    for k in keep:
        if outputs.count(k) > 1 or k == _ROW_SEGMENT:
            raise InputError(f"--keep {k}: listed twice or clashes with a column of the query")
    inner = quote_name("segmented")
    lines = [f"WITH {inner} AS (",
             f"  SELECT *, CASE {' '.join(branches)} END AS {quote_name(_ROW_SEGMENT)}",
             f"  FROM {quote_name(table)}", ")"]
    kept = [quote_name(k) for k in keep]
    parts = []
    for index, (name, card) in enumerate(zip(rule.names, model.cards)):
        query = scoring_query(card, "segmented", keep, reasons,
                              where=f"{quote_name(_ROW_SEGMENT)} = {quote_text(name)}")
        own = set(card.names)
        columns = kept + [f"{quote_text(name)} AS {quote_name(SEGMENT)}", quote_name("score")]
        columns += [quote_name(p) if n in own else f"NULL AS {quote_name(p)}"
                    for n, p in zip(model.names, names)]
        columns += [quote_name(f"reason_{r}") for r in range(1, reasons + 1)]
        parts.append(f"SELECT {_list(columns, 2)}\nFROM (\n{query.rstrip()}\n) AS "
                     f"{quote_name(f'card_{index + 1}')}")
    nothing = kept + [f"NULL AS {quote_name(c)}" for c in [SEGMENT, "score"] + names]
    nothing += [(f"{quote_text(REFUSED_PREFIX + rule.column)}" if r == 1 else "NULL")
                + f" AS {quote_name(f'reason_{r}')}" for r in range(1, reasons + 1)]
    parts.append(f"SELECT {_list(nothing, 2)}\nFROM {inner}\n"
                 f"WHERE {quote_name(_ROW_SEGMENT)} IS NULL")
    return "\n".join(lines) + "\n" + "\nUNION ALL\n".join(parts) + "\n"
