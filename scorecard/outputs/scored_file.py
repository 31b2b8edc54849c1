"""``scorecard score``: apply a model file to a data file, in chunks, and write the scored rows.

The data is streamed: a CSV file block by block (pyarrow's streaming reader), a Parquet file or
folder batch by batch, so a file larger than memory goes through in bounded memory. Each chunk
is scored by :func:`scorecard.card.scoring.apply_scorecard`, the same code the build uses, and
written at once to a temporary file that replaces the output only when every row is done.

Columns of the scored file, in order: the ``keep`` columns as read, ``score``,
``bad_probability``, ``points_<name>`` for each characteristic, ``reason_1`` ... ``reason_N``.
A row that the scorecard refuses (a bin whose config rule is ``reject``) gets an empty score,
an empty bad probability, empty points for the refusing characteristic and
``REJECTED:<name>`` as its reasons. Asked to apply the exclusion rules the model file records
(``apply_exclusions``), the file has an ``exclusion_reason`` column after ``score``: for a row
a rule catches it holds the reason of the first such rule, and the score, bad probability,
points and reasons of that row are empty. Reasons are stored dictionary-encoded: a handful of labels
and one small integer per row.
"""

from __future__ import annotations

import contextlib
import itertools
from pathlib import Path
from typing import Iterator, NamedTuple

import numpy as np
import pyarrow as pa

from scorecard.card.scorecard import MISSING, OUT_OF_RANGE, UNSEEN, Scorecard
from scorecard.card.scoring import (REFUSED_PREFIX, UnusualValues, apply_scorecard, bad_probability,
                                    reason_codes)
from scorecard.card.segmented import SegmentedScorecard, apply_segmented, load_model
from scorecard.constraints import REASONS
from scorecard.data.arrow_columns import labelled, numbers
from scorecard.data.coding import Columns, level_codes, numeric_values
from scorecard.data.exclusions import first_rule
from scorecard.data.formats import (
    PARQUET_SUFFIXES,
    csv_source,
    data_format,
    is_tab_separated,
    read_spreadsheet,
    statistical_batches,
)
from scorecard.errors import InputError, first_line
from scorecard.outputs.atomic import Output, check_outputs, staged

CHUNK_ROWS = 1 << 18
CSV_BLOCK_BYTES = 1 << 24
OUTPUT_SUFFIXES = (".csv", ".tsv") + PARQUET_SUFFIXES
_TEXT = pa.dictionary(pa.int32(), pa.string())
EXCLUSION_COLUMN = "exclusion_reason"


class ScoringSummary(NamedTuple):
    """What ``scorecard score`` did: rows scored, refused, and unusual values per characteristic.

    ``excluded`` maps the reason of each exclusion rule to the rows it caught (empty unless the
    rules were applied); those rows are not counted as refused.

    ``unusual`` maps a characteristic to its :class:`~scorecard.card.scoring.UnusualValues` counts,
    ``refused`` to the rows it refused, ``treatment`` to how the scorecard scores each kind of
    unusual value (``"refused"``, ``"<p> points"`` or ``"end range bins"``).
    """

    rows: int
    rejected: int
    unusual: dict
    out: Path
    refused: dict
    treatment: dict
    excluded: dict = {}

    def text(self) -> str:
        """Lines for the command line: the totals, then one line per characteristic affected."""
        lines = [f"scored {self.rows} rows into {self.out}" +
                 (f"; {self.rejected} refused" if self.rejected else "")]
        lines += [f"  excluded ({reason}): {count}" for reason, count in self.excluded.items()]
        for name, counts in self.unusual.items():
            ways = self.treatment[name]
            parts = [f"{_CASE_WORDS[case]}: {count} ({ways[case]})"
                     for case, count in counts._asdict().items() if count]
            if parts:
                lines.append(f"  {name}: " + ", ".join(parts))
        return "\n".join(lines)


_CASE_WORDS = {"unseen_levels": "levels not seen in development",
               "unseen_missing": "missing values where development had none",
               "out_of_range": "values outside the development range"}


def score_file(model, data, out, keep=(), reasons: int | None = None, *,
               reason_text: bool = False, apply_exclusions: bool = False,
               encoding: str = "utf-8", delimiter: str = ",",
               chunk_rows: int = CHUNK_ROWS, csv_block_bytes: int = CSV_BLOCK_BYTES) -> ScoringSummary:
    """Score every row of ``data`` with a scorecard and write ``out`` (CSV or Parquet).

    Parameters
    ----------
    model : path or Scorecard
        A model file written by ``scorecard build``, or the scorecard itself.
    data : path
        CSV file (``.csv``, ``.txt``; ``.tsv`` is tab-separated), Parquet file or folder of
        Parquet files.
    out : path
        The scored file; ``.csv``/``.tsv`` or ``.parquet``/``.pq``. Written atomically; it may
        not be an input (:func:`scorecard.outputs.atomic.check_outputs`).
    keep : sequence of str
        Input columns copied to the front of the output.
    reasons : int, optional
        Reason columns per row (0 for none); the scorecard's own number when None.
    reason_text : bool
        Write each reason's text instead of its code.
    apply_exclusions : bool
        Apply the model's exclusion rules (``data.exclude`` of its build): a row a rule
        catches gets the rule's reason in ``exclusion_reason`` and no score. By default every
        row is scored.
    encoding, delimiter : str
        How to read a CSV file.
    chunk_rows : int
        Most rows scored at a time; bounds the memory of the per-row arrays.
    csv_block_bytes : int
        Bytes of CSV read at a time; each block carries its own level dictionaries.

    Returns
    -------
    ScoringSummary

    Examples
    --------
    >>> import tempfile, pathlib, pandas as pd
    >>> from scorecard.card.scorecard import Bin, Characteristic, Scorecard, RANGE, MISSING
    >>> from scorecard.card.points import scaling
    >>> b = (Bin("< 1", RANGE, 60, 40, -0.4, 580, upper=1.0), Bin(">= 1", RANGE, 90, 10, 1.0, 620, lower=1.0),
    ...      Bin("missing", MISSING, 5, 5, 0.0, 600))
    >>> card = Scorecard("demo", scaling(600, 50, 20), 0.5,
    ...                  (Characteristic("x", "numeric", b, 1.0, "R01", "x is low", cuts=(1.0,)),))
    >>> folder = pathlib.Path(tempfile.mkdtemp())
    >>> pd.DataFrame({"id": [1, 2, 3], "x": [0.5, 2.0, None]}).to_csv(folder / "in.csv", index=False)
    >>> print(score_file(card, folder / "in.csv", folder / "out.csv", keep=["id"], reasons=1).rows)
    3
    >>> print((folder / "out.csv").read_text())
    "id","score","bad_probability","points_x","reason_1"
    1,580,0.038461538461538...,580,"R01"
    2,620,0.0099009900990098...,620,
    3,600,0.019607843137254...,600,"R01"
    <BLANKLINE>
    """
    data, out = Path(data), Path(out)
    given = isinstance(model, (Scorecard, SegmentedScorecard))
    inputs = {"the data": data}
    if not given:
        inputs["the model file"] = model
    target = check_outputs([Output("--out", out, OUTPUT_SUFFIXES)], inputs)
    card = model if given else load_model(model)
    reasons = card.reasons if reasons is None else reasons
    keep = tuple(keep)
    if reasons < 0:
        raise InputError(f"--reasons {reasons}: must be at least 0")
    if chunk_rows < 1 or csv_block_bytes < 1:
        raise ValueError("chunk_rows and csv_block_bytes must be positive")
    if apply_exclusions and isinstance(card, SegmentedScorecard):
        raise InputError("--apply-exclusions: applies to single cards so far, not to a "
                         "segmented model")
    if apply_exclusions and not card.exclusions:
        raise InputError(f"--apply-exclusions: {model if card is not model else 'the model'} "
                         "records no exclusion rules (its build had no data.exclude)")
    counts = _Counts(card, apply_exclusions)
    with _open_source(card, data, keep, encoding, delimiter, chunk_rows,
                      csv_block_bytes, apply_exclusions) as (schema, batches):
        out_schema = scored_schema(card, schema, keep, reasons, apply_exclusions)

        def write_rows(tmp: Path) -> None:
            with _open_writer(tmp, out, out_schema) as write:
                for batch in batches:
                    scored, scores, caught = scored_batch(card, batch, keep, reasons, reason_text,
                                                          out_schema, apply_exclusions)
                    write(scored)
                    counts.add(scores, caught)

        with staged(target) as pending:
            pending.write("--out", write_rows)
    return counts.summary(out)


def scored_schema(card: Scorecard, source: pa.Schema, keep=(), reasons: int = REASONS.default,
                  exclusions: bool = False) -> pa.Schema:
    """Schema of the scored file for input columns ``source``; InputError on a name clash."""
    fields = [source.field(k) for k in keep]
    if isinstance(card, SegmentedScorecard):
        fields.append(pa.field("segment", _TEXT))
    fields.append(pa.field("score", pa.int64()))
    if exclusions:
        fields.append(pa.field(EXCLUSION_COLUMN, _TEXT))
    fields.append(pa.field("bad_probability", pa.float64()))
    fields += [pa.field(f"points_{c.name}", pa.int64()) for c in card.characteristics]
    fields += [pa.field(f"reason_{i + 1}", _TEXT) for i in range(reasons)]
    names = [f.name for f in fields]
    for k in keep:
        if names.count(k) > 1:
            raise InputError(f"--keep {k}: listed twice or clashes with an output column")
    return pa.schema(fields)


def scored_batch(card: Scorecard, batch: pa.RecordBatch, keep=(), reasons: int = REASONS.default,
                 reason_text: bool = False, schema: pa.Schema | None = None,
                 exclusions: bool = False):
    """Score one batch of rows; return the output batch, the raw :class:`Scores` and the
    number of the exclusion rule that caught each row (0: none; all 0 unless ``exclusions``)."""
    schema = schema or scored_schema(card, batch.schema, keep, reasons, exclusions)
    if isinstance(card, SegmentedScorecard):
        scored, s = _segmented_batch(card, batch, keep, reasons, reason_text, schema)
        return scored, s, np.zeros(batch.num_rows, dtype=np.int16)
    s = apply_scorecard(card, _characteristic_frame(card, batch))
    caught = np.zeros(batch.num_rows, dtype=np.int16)
    if exclusions:
        caught = first_rule(batch, card.exclusions)
    out = caught > 0
    arrays = _kept(batch, keep, schema)
    arrays.append(numbers(s.score, s.rejected | out))
    if exclusions:
        arrays.append(labelled(caught.astype(np.int32) - 1,
                               [rule.reason for rule in card.exclusions]))
    arrays.append(numbers(bad_probability(card, s.score), s.rejected | out))
    arrays += [numbers(s.points[:, j], s.refused[:, j] | out)
               for j in range(len(card.characteristics))]
    if reasons:
        ranked = reason_codes(card, s.points, reasons, s.refused, reason_text)
        arrays += [labelled(ranked.index[:, i], ranked.labels, out) for i in range(reasons)]
    return pa.RecordBatch.from_arrays(arrays, schema=schema), s, caught


def _kept(batch: pa.RecordBatch, keep, schema: pa.Schema) -> list:
    """The ``keep`` columns as read, cast only where a later file of a folder differs."""
    arrays = [batch.column(k) for k in keep]
    return [a if a.type == schema.field(k).type else a.cast(schema.field(k).type)
            for a, k in zip(arrays, keep)]


def _segmented_batch(model: SegmentedScorecard, batch, keep, reasons, reason_text, schema):
    """Each row scored by its segment's card; a characteristic the row's card lacks is empty,
    and a row with no segment gets no score and ``REJECTED:<segment column>``."""
    s = apply_segmented(model, _characteristic_frame(model, batch))
    arrays = _kept(batch, keep, schema)
    arrays.append(labelled(s.segment, model.rule.names))
    arrays.append(numbers(s.score, s.rejected))
    arrays.append(numbers(bad_probability(model, s.score), s.rejected))
    arrays += [numbers(s.points[:, j], s.refused[:, j] | ~s.used[:, j])
               for j in range(len(model.names))]
    if reasons:
        labels = [REFUSED_PREFIX + model.rule.column]
        index = np.full((len(s.score), reasons), -1, dtype=np.int32)
        index[s.segment < 0, 0] = 0
        for card, (rows, scores) in zip(model.cards, s.parts):
            ranked = reason_codes(card, scores.points, reasons, scores.refused, reason_text)
            to_all = np.array([_label_index(labels, lb) for lb in ranked.labels] + [-1],
                              dtype=np.int32)
            index[rows] = to_all[ranked.index]       # -1 (no reason) stays -1
        arrays += [labelled(index[:, i], labels) for i in range(reasons)]
    return pa.RecordBatch.from_arrays(arrays, schema=schema), s


def _label_index(labels: list, label: str) -> int:
    if label not in labels:
        labels.append(label)
    return labels.index(label)


def _characteristic_frame(card: Scorecard, batch: pa.RecordBatch) -> Columns:
    """The characteristic columns prepared for scoring: numbers as float64, levels coded."""
    kinds = {c.name: c.kind for c in card.characteristics}
    if isinstance(card, SegmentedScorecard):
        kinds[card.rule.column] = card.rule.kind
    return Columns({name: numeric_values(batch.column(name), name) if kind == "numeric"
                    else level_codes(batch.column(name)) for name, kind in kinds.items()},
                   batch.num_rows)


class _Counts:
    """Running totals over the chunks."""

    def __init__(self, card: Scorecard, applied: bool):
        self.card, self.applied = card, applied
        self.rows = self.rejected = 0
        self.unusual = {c.name: UnusualValues(0, 0, 0) for c in card.characteristics}
        self.refused = {c.name: 0 for c in card.characteristics}
        self.caught = np.zeros(len(card.exclusions) + 1, dtype=np.int64)

    def add(self, scores, caught: np.ndarray) -> None:
        self.rows += len(scores.score)
        self.rejected += int((scores.rejected & (caught == 0)).sum())
        self.caught += np.bincount(caught, minlength=len(self.caught))
        for j, c in enumerate(self.card.characteristics):
            before, now = self.unusual[c.name], scores.unusual[c.name]
            self.unusual[c.name] = UnusualValues(*(a + b for a, b in zip(before, now)))
            self.refused[c.name] += int(scores.refused[:, j].sum())

    def summary(self, out: Path) -> ScoringSummary:
        treatment = {c.name: {"unseen_levels": _treatment(c, UNSEEN),
                              "unseen_missing": _treatment(c, MISSING),
                              "out_of_range": _treatment(c, OUT_OF_RANGE)}
                     for c in self.card.characteristics}
        excluded = {}
        for rule, count in zip(self.card.exclusions, self.caught[1:]):
            excluded[rule.reason] = excluded.get(rule.reason, 0) + int(count)
        return ScoringSummary(self.rows, self.rejected, self.unusual, out, self.refused, treatment,
                              excluded if self.applied else {})


def _treatment(char, kind: str) -> str:
    index = char.bin_index(kind)
    if index is None:
        return "end range bins" if kind == OUT_OF_RANGE else "no bin"
    b = char.bins[index]
    return "refused" if b.rejected else f"{b.points} points"


@contextlib.contextmanager
def _open_source(card, path: Path, keep, encoding, delimiter, chunk_rows, block_bytes,
                 exclusions: bool = False):
    """Yield (schema, iterator of batches of at most ``chunk_rows`` rows) for the data file;
    with ``exclusions`` the batches hold the columns of the model's exclusion rules too."""
    if not path.exists():
        raise InputError(f"{path}: data file not found")
    rules = card.exclusions if exclusions else ()
    with contextlib.ExitStack() as stack:
        try:
            schema, batches = _batches(card, path, keep, encoding, delimiter, chunk_rows,
                                       block_bytes, stack, rules)
        except (pa.ArrowInvalid, pa.ArrowKeyError, OSError, UnicodeDecodeError) as exc:
            raise InputError(f"{path}: cannot read the data: {first_line(exc)}") from None
        yield schema, _guarded(path, batches, chunk_rows)


def _batches(card, path: Path, keep, encoding, delimiter, chunk_rows, block_bytes, stack, rules):
    # Levels are read straight into dictionaries: one string per distinct level, not per row.
    levels = [c.name for c in card.characteristics if c.kind == "categorical"]
    if isinstance(card, SegmentedScorecard) and card.rule.kind == "categorical":
        levels.append(card.rule.column)
    if path.is_dir():
        import pyarrow.dataset as pads
        form = pads.ParquetFileFormat(dictionary_columns=levels)
        dataset = pads.dataset(path, format=form)
        columns = _needed(card, path, dataset.schema.names, keep, rules)
        return dataset.schema, dataset.to_batches(columns=columns, batch_size=chunk_rows)
    kind = data_format(path)
    if kind == "parquet":
        import pyarrow.parquet as pq
        columns = _needed(card, path, pq.read_schema(path).names, keep, rules)
        file = stack.enter_context(pq.ParquetFile(path, read_dictionary=levels))
        return file.schema_arrow, file.iter_batches(batch_size=chunk_rows, columns=columns)
    if kind in ("csv", "zip"):
        reader = _csv_reader(card, path, keep, encoding, delimiter, block_bytes, rules)
        stack.callback(reader.close)
        return reader.schema, reader
    if kind == "statistical":
        batches = statistical_batches(path, encoding, chunk_rows)
        first = next(batches, None)
        if first is None:
            raise InputError(f"{path}: the dataset holds no rows")
        columns = _needed(card, path, first.schema.names, keep, rules)
        rest = (b.select(columns) for b in batches)
        return first.select(columns).schema, itertools.chain([first.select(columns)], rest)
    table = read_spreadsheet(path, None)
    columns = _needed(card, path, table.column_names, keep, rules)
    table = table.select(columns)
    return table.schema, table.to_batches(max_chunksize=chunk_rows)



def _guarded(path: Path, batches, chunk_rows: int) -> Iterator[pa.RecordBatch]:
    """Batches cut to ``chunk_rows``; read errors become InputError naming the file."""
    try:
        for batch in batches:
            for start in range(0, batch.num_rows, chunk_rows):
                yield batch.slice(start, chunk_rows)
    except (pa.ArrowInvalid, OSError, UnicodeDecodeError) as exc:
        raise InputError(f"{path}: cannot read the data: {first_line(exc)}") from None


def _needed(card, path: Path, names, keep, rules=()) -> list[str]:
    """The columns to read; InputError naming a column that is absent or repeated."""
    names = list(names)
    for name in names:
        if names.count(name) > 1:
            raise InputError(f"{path}: column {name}: the name appears more than once")
    for k in keep:
        if k not in names:
            raise InputError(f"--keep {k}: no such column in {path}")
    for c in card.characteristics:
        if c.name not in names:
            raise InputError(f"{path}: column {c.name}: the scorecard needs it but the data "
                             "lacks it")
    for rule in rules:
        if rule.column not in names:
            raise InputError(f"{path}: column {rule.column}: the exclusion rule "
                             f"'{rule.describe()}' needs it but the data lacks it")
    segment = [card.rule.column] if isinstance(card, SegmentedScorecard) else []
    if segment and segment[0] not in names:
        raise InputError(f"{path}: column {segment[0]}: the segmented model picks its card by "
                         "it but the data lacks it")
    return list(dict.fromkeys(list(keep) + list(card.names) + segment
                              + [r.column for r in rules]))


def _csv_reader(card, path: Path, keep, encoding, delimiter, block_bytes, rules=()):
    import pyarrow.csv as pacsv
    if path.stat().st_size == 0:
        raise InputError(f"{path}: the file is empty")
    parse = pacsv.ParseOptions(delimiter="\t" if is_tab_separated(path) else delimiter)
    header = pacsv.open_csv(csv_source(path), read_options=pacsv.ReadOptions(encoding=encoding,
                                                                 block_size=1 << 20),
                            parse_options=parse)
    names = header.schema.names
    header.close()
    columns = _needed(card, path, names, keep, rules)
    # Types are fixed for the characteristics, so that a block whose first rows are all missing
    # cannot be read as another type; levels keep their text, dictionary-encoded per block.
    # A column only exclusion rules read is a number where a rule compares it with a bound,
    # else text (an 'in' rule matches numbers written as text by their value).
    types = {r.column: pa.float64() if r.condition in ("below", "at_least") else _TEXT
             for r in sorted(rules, key=lambda r: r.condition in ("below", "at_least"))}
    types.update({c.name: pa.float64() if c.kind == "numeric" else _TEXT
                  for c in card.characteristics})
    if isinstance(card, SegmentedScorecard):
        types[card.rule.column] = pa.float64() if card.rule.kind == "numeric" else _TEXT
    convert = pacsv.ConvertOptions(strings_can_be_null=True, column_types=types,
                                   include_columns=columns)
    return pacsv.open_csv(csv_source(path), read_options=pacsv.ReadOptions(encoding=encoding,
                                                               block_size=block_bytes),
                          parse_options=parse, convert_options=convert)


@contextlib.contextmanager
def _open_writer(tmp: Path, out: Path, schema: pa.Schema):
    """Yield a function that writes one batch to ``tmp`` in the format of ``out``."""
    suffix = out.suffix.lower()
    if suffix in PARQUET_SUFFIXES:
        import pyarrow.parquet as pq
        writer = pq.ParquetWriter(tmp, schema)
    else:
        import pyarrow.csv as pacsv
        options = pacsv.WriteOptions(delimiter="\t" if suffix == ".tsv" else ",")
        writer = pacsv.CSVWriter(tmp, schema, write_options=options)
    try:
        yield writer.write_batch
    finally:
        writer.close()

