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

from scorecard.api import open_engine
from scorecard.build.pipeline import build_scorecard
from scorecard.cli import main
from scorecard.config import load_config
from scorecard.demo.files import DRIFTED_FILE
from scorecard.evaluation.challenge import challenge


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
