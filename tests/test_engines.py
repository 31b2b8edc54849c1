"""The engines: a build on a Dask cluster, or in chunks, equals the one-chunk local build.

The demo sample is written as a folder of Parquet files of uneven sizes and built three ways:
in memory in one chunk, in memory in many tiny chunks, and on a two-process Dask cluster. The
count tables must be identical; the fitted floats may differ only by the order of summation.
"""

from __future__ import annotations

import dataclasses
import io
import json
import math
from pathlib import Path

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.parquet as pq
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from scorecard.binning.fine import NumericLayout, candidate_cuts
from scorecard.build.pipeline import build_scorecard
from scorecard.config.loading import load_config
from scorecard.data.read import read_frame
from scorecard.engines.base import PassProgress, ordered_fold, pass_label
from scorecard.engines.local import LocalEngine
from scorecard.engines.passes import (
    RowFacts,
    coded_patterns,
    fine_counts,
    merge_fine,
    merge_patterns,
    pattern_radix,
)
from scorecard.errors import InputError

distributed = pytest.importorskip("distributed")
from scorecard.engines.dask_engine import DaskEngine, parquet_files

# Coefficients come from sums over the same patterns in the same order on every engine; the
# only freedom left is the order of a few additions, far below this tolerance.
FLOAT_TOLERANCE = 1e-9
PART_ROWS = (7000, 5000, 6000)     # the rest of the 20,000 demo rows is a fourth, small part


@pytest.fixture(scope="module")
def parquet_demo(demo_config_path, tmp_path_factory):
    """The demo as a folder of four Parquet files, and a config reading that folder."""
    root = tmp_path_factory.mktemp("parquet_demo")
    frame = read_frame(demo_config_path.parent / "applications.csv")
    folder = root / "parts"
    folder.mkdir()
    bounds = np.cumsum((0,) + PART_ROWS + (len(frame) - sum(PART_ROWS),))
    for i, (a, b) in enumerate(zip(bounds[:-1], bounds[1:])):
        table = pa.Table.from_pandas(frame.iloc[a:b], preserve_index=False)
        pq.write_table(table, folder / f"part_{i:02d}.parquet")
    text = demo_config_path.read_text().replace("source: applications.csv", f"source: {folder}")
    config_path = demo_config_path.parent / "parquet_demo.yaml"
    config_path.write_text(text)
    return load_config(config_path), folder


@pytest.fixture(scope="module")
def cluster():
    with distributed.LocalCluster(n_workers=2, processes=True, threads_per_worker=1,
                                  dashboard_address=":0") as running:
        yield running


@pytest.fixture(scope="module")
def local_build(parquet_demo):
    config, folder = parquet_demo
    return build_scorecard(config, LocalEngine(read_frame(folder)))


@pytest.fixture(scope="module")
def dask_build(parquet_demo, cluster):
    config, folder = parquet_demo
    with DaskEngine(folder, cluster.scheduler_address) as engine:
        assert len(engine.partitions) == 4
        return build_scorecard(config, engine)


def _same_json(a, b, path="model"):
    """Equal structure, strings and integers; floats equal within FLOAT_TOLERANCE."""
    if isinstance(a, dict):
        assert set(a) == set(b), path
        for key in a:
            _same_json(a[key], b[key], f"{path}.{key}")
    elif isinstance(a, list):
        assert len(a) == len(b), path
        for i, (x, y) in enumerate(zip(a, b)):
            _same_json(x, y, f"{path}[{i}]")
    elif isinstance(a, float) and not isinstance(b, bool):
        assert math.isclose(a, b, rel_tol=FLOAT_TOLERANCE, abs_tol=FLOAT_TOLERANCE), path
    else:
        assert a == b and type(a) is type(b), path


def _bins(card):
    return [(c.name, [(b.label, b.kind, b.goods, b.bads, b.points) for b in c.bins])
            for c in card.characteristics]


def test_dask_build_gives_the_local_model(local_build, dask_build):
    _same_json(json.loads(local_build.card.to_json()), json.loads(dask_build.card.to_json()))
    assert _bins(dask_build.card) == _bins(local_build.card)
    assert dask_build.card.names == local_build.card.names
    assert [c.cuts for c in dask_build.card.characteristics] == \
        [c.cuts for c in local_build.card.characteristics]


def test_dask_build_gives_the_local_counts_patterns_and_scores(local_build, dask_build):
    assert dask_build.samples == local_build.samples
    for mine, theirs in zip(dask_build.reports, local_build.reports):
        assert (mine.name, mine.status, mine.fine_classes) == \
            (theirs.name, theirs.status, theirs.fine_classes)
        if theirs.sample_counts is not None:
            np.testing.assert_array_equal(mine.sample_counts, theirs.sample_counts)
    np.testing.assert_array_equal(dask_build.patterns.codes, local_build.patterns.codes)
    np.testing.assert_array_equal(dask_build.patterns.weights, local_build.patterns.weights)
    for name, hist in local_build.histograms.items():
        np.testing.assert_array_equal(dask_build.histograms[name].goods, hist.goods)
        np.testing.assert_array_equal(dask_build.histograms[name].bads, hist.bads)
    np.testing.assert_allclose(dask_build.selection.fit.coefficients,
                               local_build.selection.fit.coefficients, rtol=FLOAT_TOLERANCE)


def test_dask_build_excludes_the_rows_the_local_build_excludes(parquet_demo, local_build,
                                                               dask_build):
    # The demo excludes staff applications (data.exclude); pandas on the same files is the
    # reference for how many rows the rule catches (reference library).
    config, folder = parquet_demo
    staff = int((read_frame(folder)["staff_application"] == "yes").sum())
    assert [s.removed for s in local_build.waterfall.steps] == [staff] and staff > 0
    assert dask_build.waterfall == local_build.waterfall
    assert dask_build.card.exclusions == local_build.card.exclusions == config.data.exclude


def test_tiny_chunks_give_the_one_chunk_model(parquet_demo, local_build):
    config, folder = parquet_demo
    chunked = build_scorecard(config, LocalEngine(read_frame(folder), chunk_rows=997))
    # Unit weights make every count a sum of ones, exact in any order, and the patterns keep
    # their order of first appearance, so even the floats of the fit are the same bits.
    assert chunked.card.to_json() == local_build.card.to_json()
    np.testing.assert_array_equal(chunked.patterns.codes, local_build.patterns.codes)


def test_weighted_counts_agree_whatever_the_chunks(parquet_demo, local_build):
    _, folder = parquet_demo
    frame = read_frame(folder)
    n = len(frame)
    rng = np.random.default_rng(7)
    rows = RowFacts(rng.integers(0, 2, n).astype(np.int8), rng.uniform(0.5, 3.0, n),
                    rng.integers(-1, 3, n).astype(np.int8))
    lo, hi = frame["monthly_income"].min(), frame["monthly_income"].max()
    layouts = {"monthly_income": NumericLayout(candidate_cuts(lo, hi), ()),
               "housing": tuple(sorted(frame["housing"].cat.categories))}
    drafts = [r.characteristic for r in local_build.reports if r.characteristic is not None]
    radix = pattern_radix(drafts)
    results = []
    for chunk_rows in (n, 1234):
        engine = LocalEngine(frame, chunk_rows=chunk_rows)
        results.append((engine.reduce(fine_counts, merge_fine, rows, layouts),
                        engine.reduce(coded_patterns, lambda a, b: merge_patterns(a, b, radix),
                                      rows, drafts)))
    (fine_whole, patterns_whole), (fine_chunked, patterns_chunked) = results
    for name, whole in fine_whole.items():
        # Weighted sums in another order agree to rounding, not to the bit.
        np.testing.assert_allclose(fine_chunked[name].goods, whole.goods, rtol=1e-12)
        np.testing.assert_allclose(fine_chunked[name].bads, whole.bads, rtol=1e-12)
        assert fine_chunked[name].development_range == whole.development_range
    assert fine_whole["housing"].goods.sum() == pytest.approx(
        rows.weight[(rows.sample == 0) & (rows.label == 0)].sum(), rel=1e-12)
    np.testing.assert_array_equal(patterns_chunked.codes, patterns_whole.codes)
    np.testing.assert_allclose(patterns_chunked.weights, patterns_whole.weights, rtol=1e-12)
    assert patterns_whole.weights.sum() == pytest.approx(rows.weight[rows.sample >= 0].sum(),
                                                         rel=1e-12)


def test_dask_collect_keeps_the_row_order_of_the_local_reader(parquet_demo, cluster):
    config, folder = parquet_demo
    frame = read_frame(folder)
    with DaskEngine(folder, cluster.scheduler_address) as engine:
        ids, = engine.collect(lambda part: (part["application_id"].to_numpy(),))
        assert engine.n_rows == len(frame) == 20_000
        assert engine._lengths == list(PART_ROWS) + [20_000 - sum(PART_ROWS)]
        head = engine.sample_rows(5)
    np.testing.assert_array_equal(ids, frame["application_id"].to_numpy())
    assert list(head.columns) == list(frame.columns)
    assert isinstance(head["housing"].dtype, pd.CategoricalDtype)


def test_dask_passes_read_only_the_columns_they_name(parquet_demo, cluster):
    _, folder = parquet_demo
    with DaskEngine(folder, cluster.scheduler_address) as engine:
        seen = engine.reduce(lambda part: (frozenset(part.columns), len(part)),
                             lambda a, b: (a[0] | b[0], a[1] + b[1]),
                             columns=["housing", "no_such_column", "monthly_income"])
        ids, = engine.collect(lambda part: (part.index.to_numpy(),), columns=["housing"])
    # Names the data lack are left for the pass to report; every row still comes.
    assert seen == (frozenset({"monthly_income", "housing"}), 20_000)
    assert len(ids) == 20_000


def test_input_error_on_a_worker_reaches_the_caller(parquet_demo, cluster):
    _, folder = parquet_demo
    def refuse(part):
        raise InputError("column housing: refused on purpose")
    with DaskEngine(folder, cluster.scheduler_address) as engine:
        with pytest.raises(InputError, match="column housing: refused on purpose"):
            engine.reduce(refuse, lambda a, b: a)


def test_a_local_cluster_has_two_worker_processes_and_closes(parquet_demo):
    _, folder = parquet_demo
    engine = DaskEngine(folder, "local")
    try:
        assert len(engine.client.scheduler_info()["workers"]) == 2
        count = engine.reduce(lambda part: len(part), lambda a, b: a + b)
        assert count == 20_000
    finally:
        engine.close()
    assert engine.client.status == "closed"
    assert engine._cluster.status.name == "closed"


@pytest.mark.parametrize("name, message", [
    ("data.csv", "the Dask engine reads Parquet"),
    ("empty_folder", "holds no Parquet files"),
    ("folder_with_notes", "cannot read the Parquet data"),
    ("absent.parquet", "data file not found"),
])
def test_a_source_the_dask_engine_cannot_read_is_named(tmp_path, name, message):
    path = tmp_path / name
    if name == "data.csv":
        path.write_text("a,b\n1,2\n")
    elif name.endswith("folder"):
        path.mkdir()
    elif name == "folder_with_notes":
        path.mkdir()
        (path / "notes.txt").write_text("not a Parquet file")
    with pytest.raises(InputError, match=message) as caught:
        parquet_files(path)
    assert str(path) in str(caught.value)


def test_an_unreachable_scheduler_is_an_input_error(parquet_demo, monkeypatch):
    _, folder = parquet_demo
    monkeypatch.setattr("scorecard.engines.dask_engine.CONNECT_TIMEOUT", "1s")
    with pytest.raises(InputError, match=r"engine.dask: cannot reach the Dask scheduler at "
                                         r"tcp://127.0.0.1:9"):
        DaskEngine(folder, "tcp://127.0.0.1:9")


@settings(max_examples=60, deadline=None)
@given(st.lists(st.text(alphabet="abcdef", min_size=1, max_size=3), min_size=1, max_size=40))
def test_ordered_fold_equals_a_left_to_right_fold(parts):
    # Concatenation is associative but not commutative: any reordering would show.
    assert ordered_fold(lambda a, b: a + b, parts) == "".join(parts)


def test_ordered_fold_merges_each_part_about_log2_times():
    depth = ordered_fold(lambda a, b: max(a, b) + 1, [0] * 64)
    assert depth == 6


class _Terminal(io.StringIO):
    def isatty(self):
        return True


class _Log:
    def __init__(self, stream, quiet=False):
        self.stream, self.quiet, self.lines = stream, quiet, []

    def __call__(self, text):
        self.lines.append(text)


def test_a_terminal_sees_rows_done_per_chunk_and_the_line_is_wiped():
    log = _Log(_Terminal())
    engine = LocalEngine(pd.DataFrame({"x": np.arange(10)}), chunk_rows=4, progress=log)
    assert engine.reduce(lambda c: int(c["x"].sum()), lambda a, b: a + b) == 45
    text = log.stream.getvalue()
    assert [f"{n} of 10 rows" in text for n in (4, 8, 10)] == [True] * 3
    assert text.endswith("\r\x1b[K")
    assert log.lines == []          # the build's own stage lines stay the only lines


@pytest.mark.parametrize("stream, quiet", [(io.StringIO(), False), (_Terminal(), True)])
def test_no_live_line_off_a_terminal_or_when_quiet(stream, quiet):
    engine = LocalEngine(pd.DataFrame({"x": np.arange(10)}), chunk_rows=4,
                         progress=_Log(stream, quiet))
    engine.collect(lambda c: (c["x"].to_numpy(),))
    assert stream.getvalue() == ""


def test_pass_labels_name_the_pass_even_inside_a_lambda():
    from scorecard.engines.passes import column_summary, fine_counts
    assert pass_label(fine_counts) == "counting fine classes"
    assert pass_label(lambda c: column_summary(c, {}, {})) == "summarising columns"
    assert pass_label(len) == "reading rows"
    p = PassProgress(None, "x", 10)
    p.advance(5)
    assert p.done == 5 and not p.live


def test_extreme_values_are_found_alike_on_every_engine(parquet_demo, cluster, tmp_path):
    # The bulk of a column and the rows of its extreme values come from count tables merged in
    # row order, so a Dask build and a chunked build report the same rows as one chunk.
    config, folder = parquet_demo
    frame = read_frame(folder)
    frame["credit_utilisation"] = frame["credit_utilisation"].astype(float)
    rows = [3, 7500, 19990]                        # in the first, second and last part
    frame.loc[rows, "credit_utilisation"] = [1e308, -1e300, 1e300]
    parts = tmp_path / "parts"
    parts.mkdir()
    bounds = np.cumsum((0,) + PART_ROWS + (len(frame) - sum(PART_ROWS),))
    for i, (a, b) in enumerate(zip(bounds[:-1], bounds[1:])):
        pq.write_table(pa.Table.from_pandas(frame.iloc[a:b], preserve_index=False),
                       parts / f"part_{i:02d}.parquet")
    path = tmp_path / "extreme.yaml"
    path.write_text(Path(config.config_file).read_text().replace(str(folder), str(parts)))
    # The declined applications stay beside the demo's config; this build is of accepts alone.
    extreme = dataclasses.replace(load_config(path), rejects=None)
    with pytest.warns(UserWarning, match="credit_utilisation"):
        whole = build_scorecard(extreme, LocalEngine(read_frame(parts)))
        chunked = build_scorecard(extreme, LocalEngine(read_frame(parts), chunk_rows=997))
        with DaskEngine(parts, cluster.scheduler_address) as engine:
            spread = build_scorecard(extreme, engine)
    expected = "3 values far beyond the rest (rows 4, 7501, 19991)"
    assert whole.extreme_values["credit_utilisation"].startswith(expected)
    for other in (chunked, spread):
        assert other.extreme_values == whole.extreme_values
        assert _bins(other.card) == _bins(whole.card)
    assert "credit_utilisation" in whole.card.names
