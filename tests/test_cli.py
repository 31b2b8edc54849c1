"""The command layer, through click's CliRunner: the demo end to end, init, score."""

from __future__ import annotations

import json

import numpy as np
import pandas as pd
import yaml
from click.testing import CliRunner

from scorecard.card.scorecard import load_scorecard
from scorecard.card.scoring import apply_scorecard
from scorecard.cli import main
from scorecard.config.loading import parse_config
from scorecard.data.read import read_frame
from scorecard.demo.files import write_demo


def test_demo_builds_end_to_end_and_its_model_scores_the_rows(tmp_path):
    runner = CliRunner()
    result = runner.invoke(main, ["demo", "--dir", str(tmp_path), "--rows", "3000", "--quiet"])
    assert result.exit_code == 0, result.output
    workbook = tmp_path / "out" / "scorecard.xlsx"
    model = tmp_path / "out" / "scorecard.json"
    assert workbook.stat().st_size > 0 and model.stat().st_size > 0
    card = load_scorecard(model)
    assert json.loads(model.read_text())["format_version"] == 1

    out = tmp_path / "scored.csv"
    scored = runner.invoke(main, ["score", str(model), str(tmp_path / "applications.csv"),
                                  "--out", str(out), "--keep", "application_id"])
    assert scored.exit_code == 0, scored.output
    frame = pd.read_csv(out)
    rows = read_frame(tmp_path / "applications.csv")
    assert len(frame) == len(rows)
    assert list(frame.columns[:3]) == ["application_id", "score", "bad_probability"]
    assert np.array_equal(frame["score"].to_numpy(), apply_scorecard(card, rows).score)
    points = frame[[f"points_{n}" for n in card.names]].to_numpy()
    assert np.array_equal(points.sum(axis=1), frame["score"].to_numpy())


def test_build_prints_one_line_per_stage_and_quiet_silences_it(tmp_path):
    runner = CliRunner()
    runner.invoke(main, ["demo", "--dir", str(tmp_path), "--rows", "2000", "--quiet"])
    loud = runner.invoke(main, ["build", str(tmp_path / "scorecard.yaml")])
    assert loud.exit_code == 0, loud.output
    assert "model fitted on" in loud.stderr and "AUC" in loud.stdout
    quiet = runner.invoke(main, ["build", str(tmp_path / "scorecard.yaml"), "--quiet"])
    assert quiet.exit_code == 0 and quiet.stdout == "" and quiet.stderr == ""


def test_init_writes_a_config_that_loads_and_classifies_every_column(tmp_path):
    runner = CliRunner()
    write_demo(tmp_path, rows=1000)
    data = tmp_path / "applications.csv"
    out = tmp_path / "starter.yaml"
    result = runner.invoke(main, ["init", str(data), "--target", "outcome", "--out", str(out)])
    assert result.exit_code == 0, result.output
    config = parse_config(out.read_text(), out)
    raw = yaml.safe_load(out.read_text())
    listed = set(raw["characteristics"]) | set(raw["data"]["ignore"]) | {"outcome"}
    assert listed == set(pd.read_csv(data, nrows=1).columns)
    assert "application_id" in config.data.ignore
    assert config.data.bad == ("defaulted",)
    assert raw["characteristics"]["housing"] == {"kind": "categorical"}


def test_bad_input_is_one_error_line_and_exit_status_two(tmp_path):
    result = CliRunner().invoke(main, ["build", str(tmp_path / "absent.yaml")])
    assert result.exit_code == 2
    assert result.stderr.startswith("error: ") and len(result.stderr.splitlines()) == 1
    assert "Traceback" not in result.output


def _python_m_scorecard(args, before="pass", cwd=None):
    """``python -m scorecard ARGS`` in a fresh process, with ``before`` run first (and its
    exit handlers registered); the finished process."""
    import subprocess
    import sys
    script = ("import runpy, sys; " + before + f"; sys.argv = ['scorecard', *{list(args)!r}]; "
              "runpy.run_module('scorecard', run_name='__main__', alter_sys=True)")
    return subprocess.run([sys.executable, "-c", script], capture_output=True, text=True,
                          cwd=cwd)


def test_a_command_that_succeeds_ends_its_process_with_exit_handlers_run_and_output_flushed(
        tmp_path):
    # The quick exit after a success still runs the exit handlers (a library's clean-up) and
    # delivers everything the command printed; a failure exits as usual with status 2.
    config = write_demo(tmp_path / "demo", rows=2000, seed=11)
    model = tmp_path / "model.json"
    done = _python_m_scorecard(
        ["build", str(config), "--model", str(model), "--workbook", str(tmp_path / "w.xlsx")],
        before="import atexit; atexit.register(lambda: print('exit handler ran'))")
    assert done.returncode == 0, done.stderr
    lines = done.stdout.splitlines()
    assert lines[-3:] == [f"  workbook: {tmp_path / 'w.xlsx'}", f"  model: {model}",
                          "exit handler ran"]
    assert load_scorecard(model).name
    failed = _python_m_scorecard(["build", str(tmp_path / "absent.yaml")])
    assert failed.returncode == 2
    assert failed.stderr.strip().startswith("error:")
