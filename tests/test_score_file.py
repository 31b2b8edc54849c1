"""Scoring files: agreement with the build, chunked equals whole, unseen-value rules, errors."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.csv as pacsv
import pyarrow.parquet as pq
import pytest
from click.testing import CliRunner

from scorecard.api import open_engine
from scorecard.build.pipeline import build_scorecard
from scorecard.card.points import attribute_points, scaling
from scorecard.card.scorecard import LEVELS, MISSING, RANGE, UNSEEN, Bin, Characteristic, Scorecard
from scorecard.card.scoring import apply_scorecard, reasons
from scorecard.cli import main
from scorecard.config.loading import load_config
from scorecard.data.outcome import BAD, GOOD, code_outcome
from scorecard.data.read import read_frame
from scorecard.data.samples import SAMPLE_NAMES, assign_samples, parse_dates
from scorecard.demo.files import write_demo
from scorecard.errors import InputError
from scorecard.outputs.scored_file import score_file

KEEP = ["application_id", "outcome", "decided_on"]


@pytest.fixture(scope="module")
def demo(demo_config_path, demo_build, tmp_path_factory):
    """The demo scorecard, its data file and the whole file scored in one piece (CSV)."""
    folder = tmp_path_factory.mktemp("scored")
    model = folder / "scorecard.json"
    model.write_text(demo_build.card.to_json())
    source = demo_config_path.parent / "applications.csv"
    out = folder / "whole.csv"
    summary = score_file(model, source, out, keep=KEEP)
    return demo_build.card, source, out, summary


def test_scored_file_has_the_contract_columns_in_order(demo):
    card, _, out, summary = demo
    header = pd.read_csv(out, nrows=0).columns.tolist()
    assert header == (KEEP + ["score", "bad_probability"] + [f"points_{n}" for n in card.names]
                      + [f"reason_{i}" for i in range(1, 5)])
    assert summary.rows == 20_000 and summary.rejected == 0


def test_scores_reproduce_the_builds_score_histogram_of_every_sample(demo, demo_config_path,
                                                                    demo_build):
    # The build counts its holdout and out-of-time histograms from pattern counts; scoring the
    # rows one by one and redrawing the samples must give the same counts, score by score.
    config = load_config(demo_config_path)
    scored = pd.read_csv(demo[2])
    oot = config.samples.out_of_time
    label = code_outcome(scored["outcome"].astype("category"), config.data.bad,
                         config.data.good).label
    # The demo's one exclusion rule (staff applications), computed here with pandas: those
    # rows are in no sample.
    assert [r.describe() for r in config.data.exclude] == ["staff_application in [yes]"]
    staff = pd.read_csv(demo[1], usecols=["staff_application"])["staff_application"] == "yes"
    label = np.where(staff.to_numpy(), -1, label).astype(np.int8)
    late = parse_dates(scored["decided_on"], oot.column) >= np.datetime64(
        pd.Timestamp(oot.from_date), "ns")
    sample = assign_samples(label, config.samples.holdout, config.samples.seed, late)
    score = scored["score"].to_numpy()
    for code, name in SAMPLE_NAMES.items():
        hist = demo_build.histograms[name]
        for outcome, expected in ((GOOD, hist.goods), (BAD, hist.bads)):
            at = score[(sample == code) & (label == outcome)] - hist.low
            assert np.array_equal(np.bincount(at, minlength=len(expected)), expected), name
    assert (sample == 1).sum() == demo_build.samples.rows["holdout"]


def test_streamed_scores_points_and_reasons_equal_scoring_the_frame_in_memory(demo):
    card, source, out, _ = demo
    frame = read_frame(source)
    s = apply_scorecard(card, frame)
    scored = pd.read_csv(out, keep_default_na=False, na_values=[""])
    assert scored["score"].tolist() == s.score.tolist()
    assert np.array_equal(scored[[f"points_{n}" for n in card.names]].to_numpy(), s.points)
    expected = reasons(card, s.points, 4)
    got = scored[[f"reason_{i}" for i in range(1, 5)]].fillna("").to_numpy()
    assert np.array_equal(got, expected)
    probability = 1 / (1 + np.exp((s.score - card.scaling.offset) / card.scaling.factor))
    np.testing.assert_allclose(scored["bad_probability"], probability, rtol=1e-15)


def test_csv_in_tiny_chunks_is_byte_identical_and_blocks_carry_different_level_dictionaries(
        demo, tmp_path):
    card, source, whole, _ = demo
    small = tmp_path / "small.csv"
    score_file(card, source, small, keep=KEEP, chunk_rows=97, csv_block_bytes=1 << 14)
    assert small.read_bytes() == whole.read_bytes()
    # The setting above must really hand the scorer blocks whose dictionaries differ.
    reader = pacsv.open_csv(source, read_options=pacsv.ReadOptions(block_size=1 << 14),
                            convert_options=pacsv.ConvertOptions(
                                column_types={"housing": pa.dictionary(pa.int32(), pa.string())},
                                include_columns=["housing"]))
    orders = {tuple(b.column(0).dictionary.to_pylist()) for b in reader}
    assert len(orders) > 1


def _shuffled_dictionary_parquet(frame: pd.DataFrame, path, rows_per_group: int, seed: int):
    """Write ``frame`` with every row group's text columns on a freshly shuffled dictionary,
    one unused level added, and plain strings for one of them."""
    rng = np.random.default_rng(seed)
    table = pa.Table.from_pandas(frame, preserve_index=False)
    text = [n for n in frame.columns if isinstance(frame[n].dtype, pd.CategoricalDtype)]
    plain = text[0]
    schema = pa.schema([pa.field(n, pa.string()) if n == plain else table.schema.field(n)
                        for n in frame.columns])
    with pq.ParquetWriter(path, schema) as writer:
        for start in range(0, len(frame), rows_per_group):
            part = frame.iloc[start:start + rows_per_group]
            arrays = []
            for n in frame.columns:
                if n == plain:
                    arrays.append(pa.array(part[n].astype(object).where(part[n].notna(), None),
                                           type=pa.string()))
                elif n in text:
                    levels = list(part[n].cat.categories) + ["never used"]
                    levels = [levels[i] for i in rng.permutation(len(levels))]
                    codes = pd.Categorical(part[n], categories=levels).codes
                    arrays.append(pa.DictionaryArray.from_arrays(
                        pa.array(codes, type=pa.int32(), mask=codes < 0), pa.array(levels)))
                else:
                    arrays.append(pa.array(part[n]))
            writer.write_batch(pa.RecordBatch.from_arrays(arrays, schema=schema))


def test_parquet_file_and_folder_with_shuffled_dictionaries_score_like_the_csv(demo, tmp_path):
    card, source, whole, _ = demo
    frame = read_frame(source).drop(columns=["decided_on"])
    keep = ["application_id", "outcome"]
    single = tmp_path / "applications.parquet"
    _shuffled_dictionary_parquet(frame, single, 1500, seed=1)
    folder = tmp_path / "parts"
    folder.mkdir()
    for i, start in enumerate(range(0, len(frame), 7000)):
        _shuffled_dictionary_parquet(frame.iloc[start:start + 7000], folder / f"part-{i}.parquet",
                                     900, seed=10 + i)
    expected = pd.read_csv(whole).drop(columns=["decided_on"])
    for data, chunk in ((single, 333), (single, 1 << 18), (folder, 512)):
        out = tmp_path / f"scored-{chunk}.parquet"
        score_file(card, data, out, keep=keep, chunk_rows=chunk)
        got = pd.read_parquet(out)
        assert got.columns.tolist() == expected.columns.tolist()
        for column in expected.columns:
            a = got[column].astype(object).where(got[column].notna(), None).tolist()
            b = expected[column].astype(object).where(expected[column].notna(), None).tolist()
            assert a == b, (data.name, chunk, column)


def test_reason_text_writes_the_texts_of_the_model(demo, tmp_path):
    card, source, whole, _ = demo
    out = tmp_path / "text.csv"
    score_file(card, source, out, reasons=2, reason_text=True)
    codes = pd.read_csv(whole, usecols=["reason_1", "reason_2"]).fillna("")
    texts = pd.read_csv(out, usecols=["reason_1", "reason_2"]).fillna("")
    text_of = {c.reason_code: c.reason for c in card.characteristics}
    text_of[""] = ""
    assert texts.to_numpy().tolist() == [[text_of[c] for c in row] for row in codes.to_numpy()]


# Each rule of the config's scoring section, once at least.
RULES = [("neutral", "neutral", "edge"), ("reject", "worst", "neutral"),
         ("worst", "reject", "reject"), ("neutral", "neutral", "worst")]


@pytest.fixture(scope="module")
def small_demo(tmp_path_factory):
    folder = tmp_path_factory.mktemp("rules")
    config = write_demo(folder, rows=5000, seed=7)
    return folder, config.read_text()


def _build_with(folder, text, rules):
    path = folder / f"rules-{'-'.join(rules)}.yaml"
    unseen_level, unseen_missing, out_of_range = rules
    path.write_text(text + f"\nscoring: {{unseen_level: {unseen_level}, unseen_missing: "
                           f"{unseen_missing}, out_of_range: {out_of_range}}}\n")
    config = load_config(path)
    return build_scorecard(config, open_engine(config)).card


def _pick(card, kind, empty_missing=False, other_than=None):
    for c in card.characteristics:
        missing = c.bins[c.bin_index(MISSING)]
        if c.kind == kind and (not empty_missing or missing.count == 0) and c is not other_than \
                and (kind == "categorical" or not c.sentinels):
            return c
    raise AssertionError(f"the demo has no {kind} characteristic to test with")


@pytest.mark.parametrize("rules", RULES, ids=["-".join(r) for r in RULES])
def test_each_unseen_value_rule_scores_or_refuses_as_configured(small_demo, rules, tmp_path):
    folder, text = small_demo
    card = _build_with(folder, text, rules)
    unseen_level, unseen_missing, out_of_range = rules
    level_char = _pick(card, "categorical")
    missing_char = _pick(card, "numeric", empty_missing=True)
    range_char = _pick(card, "numeric", other_than=missing_char)
    low, high = range_char.development_range
    rows = pd.read_csv(folder / "applications.csv", nrows=5)
    rows.loc[1, level_char.name] = "houseboat"
    rows.loc[2, missing_char.name] = np.nan
    rows.loc[3, range_char.name] = high + 1000
    rows.loc[4, range_char.name] = low - 1
    data = tmp_path / "new.csv"
    rows.to_csv(data, index=False)
    out = tmp_path / "scored.csv"
    summary = score_file(card, data, out, keep=["application_id"])
    scored = pd.read_csv(out)

    k = len(card.characteristics)
    # Neutral is weight of evidence 0, the average risk of the development sample.
    neutral = int(attribute_points([0.0], 1.0, card.intercept, k, card.scaling).points[0])
    estimated = lambda c: [b.points for b in c.bins if b.count > 0]  # noqa: E731
    ranges = [b.points for b in range_char.bins if b.kind == RANGE]
    expected = {
        (1, level_char): {"neutral": neutral, "worst": min(estimated(level_char))},
        (2, missing_char): {"neutral": neutral, "worst": min(estimated(missing_char))},
        (3, range_char): {"neutral": neutral, "worst": min(estimated(range_char)),
                          "edge": ranges[-1]},
        (4, range_char): {"neutral": neutral, "worst": min(estimated(range_char)),
                          "edge": ranges[0]},
    }
    rule_of = {1: unseen_level, 2: unseen_missing, 3: out_of_range, 4: out_of_range}
    for (row, char), points in expected.items():
        rule = rule_of[row]
        if rule == "reject":
            assert pd.isna(scored.loc[row, "score"]) and pd.isna(scored.loc[row, "bad_probability"])
            assert pd.isna(scored.loc[row, f"points_{char.name}"])
            assert scored.loc[row, "reason_1"] == f"REJECTED:{char.name}"
        else:
            assert scored.loc[row, f"points_{char.name}"] == points[rule], (row, rule)
            total = scored.loc[row, [f"points_{n}" for n in card.names]].sum()
            assert scored.loc[row, "score"] == total
    assert not pd.isna(scored.loc[0, "score"])

    assert summary.unusual[level_char.name].unseen_levels == 1
    assert summary.unusual[missing_char.name].unseen_missing == 1
    assert summary.unusual[range_char.name].out_of_range == 2
    refused = {level_char.name: unseen_level == "reject",
               missing_char.name: unseen_missing == "reject",
               range_char.name: 2 * (out_of_range == "reject")}
    assert {n: summary.refused[n] for n in refused} == {n: int(v) for n, v in refused.items()}
    assert summary.rejected == sum(int(v) for v in refused.values())
    lines = summary.text().splitlines()
    treatment = {"reject": "refused", "edge": "end range bins"}.get(
        out_of_range, f"{expected[3, range_char].get(out_of_range)} points")
    assert f"  {range_char.name}: values outside the development range: 2 ({treatment})" in lines


def test_unseen_level_and_missing_bins_of_the_build_are_where_scoring_looks(small_demo):
    folder, text = small_demo
    card = _build_with(folder, text, ("reject", "worst", "neutral"))
    categorical = [c for c in card.characteristics if c.kind == "categorical"]
    assert categorical, "the demo card must hold a categorical characteristic for this check"
    for c in categorical:
        unseen = c.bins[c.bin_index(UNSEEN)]
        assert unseen.rejected and unseen.count == 0
        assert all(b.kind in (LEVELS, MISSING, UNSEEN) for b in c.bins)


def test_the_score_command_prints_the_summary_and_bad_input_is_one_error_line(demo, tmp_path):
    card, source, _, _ = demo
    model = tmp_path / "m.json"
    model.write_text(card.to_json())
    runner = CliRunner()
    ok = runner.invoke(main, ["score", str(model), str(source), "--out", str(tmp_path / "s.csv"),
                              "--keep", "application_id", "--reasons", "2"])
    assert ok.exit_code == 0, ok.output
    assert ok.output.startswith(f"scored 20000 rows into {tmp_path / 's.csv'}")
    assert pd.read_csv(tmp_path / "s.csv", nrows=0).columns[-1] == "reason_2"
    bad = runner.invoke(main, ["score", str(model), str(source), "--out", str(tmp_path / "s.xlsx")])
    assert bad.exit_code == 2
    assert bad.stderr.splitlines() == [f"error: {tmp_path / 's.xlsx'}: --out must end in .csv, "
                                       ".tsv, .parquet or .pq"]


@pytest.mark.parametrize("change, message", [
    (lambda f: f.drop(columns=["housing"]), "column housing: the scorecard needs it"),
    (lambda f: f.assign(months_at_address=["many"] + [1] * (len(f) - 1)),
     "cannot read the data"),
])
def test_bad_data_names_the_column_or_file(demo, tmp_path, change, message):
    card, source, _, _ = demo
    frame = change(pd.read_csv(source, nrows=50))
    data = tmp_path / "bad.csv"
    frame.to_csv(data, index=False)
    with pytest.raises(InputError, match=message):
        score_file(card, data, tmp_path / "out.csv")
    assert not (tmp_path / "out.csv").exists()


def test_numeric_looking_levels_find_the_number_labels_a_model_built_from_csv_has(tmp_path):
    # read_frame parses a column of digits as numbers, so a model built from it labels the
    # levels "1", "2", "10"; scoring reads the CSV text as written ("01", "10.0").
    bins = (Bin("1", LEVELS, 10, 5, 0.1, 30, levels=("1", "10")),
            Bin("2", LEVELS, 10, 5, -0.1, 20, levels=("2",)),
            Bin("missing", MISSING, 0, 0, 0.0, 25), Bin("unseen", UNSEEN, 0, 0, 0.0, 25))
    region = Characteristic("region", "categorical", bins, 1.0, "R1", "region")
    card = Scorecard("codes", scaling(600, 50, 20), 0.0, (region,))
    data = tmp_path / "codes.csv"
    data.write_text("id,region\n1,01\n2,2\n3,10.0\n4,3\n5,\n6,2.5\n")
    summary = score_file(card, data, tmp_path / "out.csv")
    assert pd.read_csv(tmp_path / "out.csv")["score"].tolist() == [30, 20, 30, 25, 25, 25]
    assert summary.unusual["region"].unseen_levels == 2


def test_a_parquet_file_without_a_characteristic_is_an_input_error(demo, tmp_path):
    card, source, _, _ = demo
    data = tmp_path / "no-housing.parquet"
    pd.read_csv(source, nrows=50).drop(columns=["housing"]).to_parquet(data)
    with pytest.raises(InputError, match="column housing: the scorecard needs it"):
        score_file(card, data, tmp_path / "out.csv")


def test_keep_and_output_mistakes_are_input_errors(demo, tmp_path):
    card, source, _, _ = demo
    with pytest.raises(InputError, match="--keep nope: no such column"):
        score_file(card, source, tmp_path / "a.csv", keep=["nope"])
    with pytest.raises(InputError, match="--keep score: listed twice or clashes"):
        pd.DataFrame({"score": [1], **{n: [None] for n in card.names}}).to_csv(tmp_path / "s.csv")
        score_file(card, tmp_path / "s.csv", tmp_path / "a.csv", keep=["score"])
    with pytest.raises(InputError, match="would overwrite the data"):
        score_file(card, source, source)
    empty = tmp_path / "empty.csv"
    empty.write_text("")
    with pytest.raises(InputError, match="the file is empty"):
        score_file(card, empty, tmp_path / "a.csv")
    assert source.stat().st_size > 0


def test_a_file_of_no_rows_gives_a_header_only(demo, tmp_path):
    card, source, whole, _ = demo
    data = tmp_path / "header.csv"
    data.write_text(source.read_text().splitlines()[0] + "\n")
    summary = score_file(card, data, tmp_path / "out.csv", keep=["application_id"])
    assert summary.rows == 0
    columns = ["application_id"] + pd.read_csv(whole, nrows=0).columns[3:].tolist()
    assert (tmp_path / "out.csv").read_text().splitlines() == [",".join(f'"{c}"' for c in columns)]
