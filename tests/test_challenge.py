"""``scorecard challenge``: champion against challenger on the same rows.

The paired test itself is held to the published formula in test_delong.py; here the command's
verdict is checked against known truth on the invented demo data (a card of three
characteristics is a weaker champion than the full card), and its counts against invariants.
"""

from __future__ import annotations

import dataclasses
import json

import pandas as pd
import pytest
from click.testing import CliRunner
from openpyxl import load_workbook

from scorecard import api
from scorecard.api import open_engine
from scorecard.build.pipeline import build_scorecard
from scorecard.cli import main
from scorecard.config import load_config
from scorecard.demo.files import DRIFTED_FILE
from scorecard.evaluation.challenge import challenge
from scorecard.outputs.cautions import CAUTION


@pytest.fixture(scope="module")
def weak_model(demo_config_path, tmp_path_factory):
    """The demo card cut down to three characteristics: a weaker champion (known truth)."""
    config = load_config(demo_config_path)
    config = dataclasses.replace(config, rejects=None, selection=dataclasses.replace(
        config.selection, max_characteristics=3))
    with open_engine(config) as engine:
        card = build_scorecard(config, engine).card
    path = tmp_path_factory.mktemp("weak") / "weak.json"
    path.write_text(card.to_json())
    return path


def test_the_full_card_beats_a_three_characteristic_champion(weak_model, model_path, demo_dir):
    result = challenge(weak_model, model_path, demo_dir / DRIFTED_FILE)
    assert result.challenger.auc > result.champion.auc
    assert result.difference.ci_low > 0 and result.difference.p_value < 0.001
    # Invariants: the swap cells add up to the rows compared; the challenger approves the
    # kept-in and swapped-in rows.
    assert result.swap["rows"].sum() == result.rows
    swapped = dict(zip(result.swap["cell"], result.swap["rows"]))
    assert swapped["swapped_in"] > 0 and swapped["swapped_out"] > 0


def test_a_card_against_itself_claims_no_difference(model_path, demo_dir):
    result = challenge(model_path, model_path, demo_dir / DRIFTED_FILE)
    assert result.difference.difference == 0
    assert "no difference" in result.text()


def test_the_command_writes_the_json_and_refuses_bad_input(weak_model, model_path, demo_dir,
                                                           tmp_path):
    out = tmp_path / "challenge.json"
    data = demo_dir / DRIFTED_FILE
    run = CliRunner().invoke(main, ["challenge", str(weak_model), str(model_path), str(data),
                                    "--json", str(out)])
    assert run.exit_code == 0, run.output
    written = json.loads(out.read_text())
    assert set(written) >= {"champion", "challenger", "difference", "swap"}
    assert set(written["difference"]) == {"auc", "ci_low", "ci_high", "p_value"}
    assert set(written["swap"]) == {"kept_in", "kept_out", "swapped_in", "swapped_out"}
    for args, words in (
            (["--approval-rate", "1.5"], "--approval-rate"),
            (["--json", str(data)], "would overwrite")):
        bad = CliRunner().invoke(main, ["challenge", str(weak_model), str(model_path), str(data),
                                        *args])
        lines = bad.stderr.strip().splitlines()
        assert bad.exit_code == 2 and len(lines) == 1 and lines[0].startswith("error:")
        assert words in lines[0]
    no_outcome = tmp_path / "no_outcome.csv"
    pd.read_csv(data).drop(columns="outcome").to_csv(no_outcome, index=False)
    bad = CliRunner().invoke(main, ["challenge", str(weak_model), str(model_path),
                                    str(no_outcome)])
    assert bad.exit_code == 2 and "column outcome" in bad.stderr


def _table(ws, first_heading):
    """The rows under the header row whose first cell is ``first_heading``, as dicts."""
    rows = list(ws.iter_rows(values_only=True))
    at = next(i for i, row in enumerate(rows) if row[0] == first_heading)
    header = [h for h in rows[at] if h is not None]
    out = []
    for row in rows[at + 1:]:
        if row[0] is None:
            break
        out.append(dict(zip(header, row)))
    return out


def _assert_book_matches_json(book, written):
    # The JSON is the product's own result (held to DeLong's formula in test_delong.py); the
    # workbook must carry the same numbers, cell for cell.
    cards = {row["Card"]: row for row in _table(book["Summary"], "Card")}
    for name in ("champion", "challenger"):
        for measure, heading in (("auc", "AUC"), ("gini", "Gini"), ("ks", "KS")):
            assert cards[name.capitalize()][heading] == pytest.approx(written[name][measure],
                                                                      abs=1e-12)
    (diff,) = _table(book["Summary"], "AUC difference")
    for key, heading in (("auc", "AUC difference"), ("ci_low", "95% interval from"),
                         ("ci_high", "95% interval to"), ("p_value", "DeLong p-value")):
        assert diff[heading] == pytest.approx(written["difference"][key], abs=1e-12)
    summary = [row[0] for row in book["Summary"].iter_rows(values_only=True)]
    assert f"Rows compared: {written['rows']:,}" in summary
    assert f"Rows left out: {written['left_out']:,}" in " ".join(map(str, summary))
    assert CAUTION in summary
    cells = {"Kept in": "kept_in", "Kept out": "kept_out", "Swapped in": "swapped_in",
             "Swapped out": "swapped_out"}
    swap = book["Swap set"]
    for row in _table(swap, "Swap set"):
        expected = written["swap"][cells[row["Swap set"]]]
        assert row["Rows"] == expected["count"]
        assert row["Bad rate"] == (None if expected["bad_rate"] is None
                                   else pytest.approx(expected["bad_rate"], abs=1e-12))
    # The header row heads every printed page of the table sheet.
    assert swap.print_title_rows == "$1:$1"


def test_the_workbook_carries_the_json_numbers(weak_model, model_path, demo_dir, tmp_path):
    out, book_path = tmp_path / "c.json", tmp_path / "c.xlsx"
    run = CliRunner().invoke(main, ["challenge", str(weak_model), str(model_path),
                                    str(demo_dir / DRIFTED_FILE), "--json", str(out),
                                    "--workbook", str(book_path)])
    assert run.exit_code == 0, run.output
    written = json.loads(out.read_text())
    book = load_workbook(book_path)
    assert book.sheetnames == ["Summary", "Swap set"]
    _assert_book_matches_json(book, written)
    summary = [row[0] for row in book["Summary"].iter_rows(values_only=True)]
    assert any(str(line).startswith("The challenger ranks better") for line in summary)
    # The files compared, by name only: the report may travel, the machine's folders stay.
    named = {"Champion": weak_model.name, "Challenger": model_path.name,
             "Data": DRIFTED_FILE}
    assert [f"{k}: {v}" for k, v in named.items()] == [
        line for line in summary if ": " in str(line) and str(line).split(":")[0] in named]
    assert written["files"] == {k.lower(): v for k, v in named.items()}
    assert run.output.splitlines()[0] == (f"champion {weak_model.name} against challenger "
                                          f"{model_path.name} on {DRIFTED_FILE}")
    shown = [str(c) for row in book["Summary"].iter_rows(values_only=True) for c in row if c]
    assert not any(str(tmp_path) in c or str(demo_dir) in c for c in shown + [run.output])


def test_the_workbook_is_refused_over_an_input(weak_model, model_path, demo_dir, tmp_path):
    data = demo_dir / DRIFTED_FILE
    before = {p: p.read_bytes() for p in (weak_model, model_path)}
    for target in (weak_model, model_path):
        bad = CliRunner().invoke(main, ["challenge", str(weak_model), str(model_path), str(data),
                                        "--workbook", str(target)])
        lines = bad.stderr.strip().splitlines()
        assert bad.exit_code == 2 and len(lines) == 1 and lines[0].startswith("error:")
        assert "--workbook" in lines[0]
    # The same path for the JSON and the workbook is refused too, and nothing is written.
    same = tmp_path / "both.xlsx"
    bad = CliRunner().invoke(main, ["challenge", str(weak_model), str(model_path), str(data),
                                    "--workbook", str(same), "--json", str(same)])
    assert bad.exit_code == 2 and bad.stderr.startswith("error:") and not same.exists()
    assert all(p.read_bytes() == b for p, b in before.items())


def test_a_segmented_champion_gives_the_segment_sheet(tmp_path):
    # The segmented simulation of test_segments.py (known truth: x1 reverses between segments).
    from test_segments import simulate, write_case

    one, segmented = write_case(tmp_path, simulate(3000, 3).drop(columns="tenure"))
    simulate(2000, 4).to_csv(tmp_path / "fresh.csv", index=False)
    api.build(one)
    api.build(segmented)
    out, book_path = tmp_path / "c.json", tmp_path / "c.xlsx"
    api.challenge(tmp_path / "out/segmented.json", tmp_path / "out/one.json",
                  tmp_path / "fresh.csv", json_path=out, workbook=book_path)
    written = json.loads(out.read_text())
    book = load_workbook(book_path)
    assert book.sheetnames == ["Summary", "Swap set", "By segment"]
    _assert_book_matches_json(book, written)
    segments = {row["Segment"]: row for row in _table(book["By segment"], "Segment")}
    assert set(segments) == set(written["segments"]) == {"new", "existing"}
    for name, expected in written["segments"].items():
        row = segments[name]
        assert row["Rows"] == expected["rows"]
        for card in ("champion", "challenger"):
            for measure in ("auc", "gini", "ks"):
                heading = f"{card.capitalize()} {measure.upper() if measure != 'gini' else 'Gini'}"
                assert row[heading] == pytest.approx(expected[card][measure], abs=1e-12)
        assert row["AUC difference"] == pytest.approx(expected["difference"]["auc"], abs=1e-12)
        assert row["DeLong p-value"] == pytest.approx(expected["difference"]["p_value"],
                                                      abs=1e-12)
    assert sum(s["rows"] for s in written["segments"].values()) == written["rows"]
    assert book["By segment"].print_title_rows == "$1:$1"
