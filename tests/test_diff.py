"""What changed between two builds: diff of model files, and what build prints."""

from __future__ import annotations

import json
import shutil

from click.testing import CliRunner

from scorecard.api import open_engine
from scorecard.build.pipeline import build_scorecard
from scorecard.cli import main
from scorecard.config.loading import load_config
from scorecard.demo.files import write_demo
from scorecard.evaluation.model_diff import diff_scorecards


def _build_with(config_path, tmp_path, old: str, new: str, accepts_only: bool = False):
    folder = tmp_path / ("edited" if old != new else "unedited")
    shutil.copytree(config_path.parent, folder)
    path = folder / config_path.name
    text = path.read_text()
    assert old in text
    text = text.replace(old, new)
    if accepts_only:
        # Without reject inference: the declined applicants' inferred outcomes come from the
        # accepts-only card, so with them an edit of one characteristic reaches the counts,
        # and possibly the bins, of every other.
        start = text.index("\nrejects:")
        text = text[:start] + text[text.index("\n\n", start + 1):]
    path.write_text(text)
    config = load_config(path)
    return build_scorecard(config, open_engine(config)).card


def test_diff_of_a_build_with_itself_is_empty(demo_build, tmp_path):
    # Invariant: nothing changed, nothing reported.
    card = demo_build.card
    result = diff_scorecards(card, card)
    assert result.empty and result.lines() == []
    path = tmp_path / "model.json"
    path.write_text(card.to_json())
    run = CliRunner().invoke(main, ["diff", str(path), str(path)])
    assert run.exit_code == 0 and run.output.strip() == "no changes"


def test_moving_one_cut_names_exactly_that_characteristics_bins(demo_config_path, tmp_path):
    before = _build_with(demo_config_path, tmp_path, "rejects:", "rejects:", accepts_only=True)
    char = next(c for c in before.characteristics if c.name == "credit_utilisation")
    cuts = list(char.cuts)
    moved = list(cuts)
    moved[2] = round(cuts[2] - 0.05, 3)          # one cut moved, the others kept
    after = _build_with(demo_config_path, tmp_path, "characteristics:\n",
                        "characteristics:\n  credit_utilisation: {cuts: [%s]}\n"
                        % ", ".join(f"{x:g}" for x in moved), accepts_only=True)
    result = diff_scorecards(before, after)
    assert [c.name for c in result.changed if c.rules_changed] == ["credit_utilisation"]
    change = next(c for c in result.changed if c.name == "credit_utilisation")
    gone = {a.attribute for a in change.attributes if a.points_after is None}
    new = {a.attribute for a in change.attributes if a.points_before is None}
    # The two bins on either side of the moved cut, before and after.
    assert gone == {f"{cuts[1]:g} to < {cuts[2]:g}", f"{cuts[2]:g} to < {cuts[3]:g}"}
    assert new == {f"{moved[1]:g} to < {moved[2]:g}", f"{moved[2]:g} to < {moved[3]:g}"}
    old_points = {b.label: b.points for b in char.bins}
    new_char = next(c for c in after.characteristics if c.name == "credit_utilisation")
    new_points = {b.label: b.points for b in new_char.bins}
    for a in change.attributes:
        assert a.points_before == old_points.get(a.attribute)
        assert a.points_after == new_points.get(a.attribute)
    lines = result.lines()
    assert any(line.startswith("credit_utilisation: bins cuts ") for line in lines)
    assert not result.entered and not result.left and not result.scaling


def test_a_characteristic_that_left_carries_the_newer_builds_reason(demo_build,
                                                                    demo_config_path, tmp_path):
    after = _build_with(demo_config_path, tmp_path, "characteristics:\n",
                        "characteristics:\n  housing: {use: false}\n")
    result = diff_scorecards(demo_build.card, after)
    assert [m.name for m in result.left] == ["housing"]
    fate = next(f for f in after.fates if f.name == "housing")
    assert (result.left[0].stage, result.left[0].reason) == (fate.stage, fate.reason)
    assert f"left: housing ({fate.stage}: {fate.reason})" in result.lines()


def test_scaling_and_performance_changes_are_one_line_each(demo_build, demo_config_path,
                                                           tmp_path):
    after = _build_with(demo_config_path, tmp_path, "pdo: 20", "pdo: 25")
    result = diff_scorecards(demo_build.card, after)
    assert result.scaling == {"pdo": (20, 25)}
    assert "scaling pdo: 20 -> 25" in result.lines()
    # The same model on another scale ranks the same rows alike, up to rounding of points.
    assert not result.entered and not result.left


def test_diff_json_and_old_model_files(demo_build, tmp_path):
    raw = json.loads(demo_build.card.to_json())
    raw.pop("development"), raw.pop("fates")
    raw["characteristics"] = raw["characteristics"][1:]
    old, new = tmp_path / "old.json", tmp_path / "new.json"
    old.write_text(json.dumps(raw))
    new.write_text(demo_build.card.to_json())
    out = tmp_path / "diff.json"
    run = CliRunner().invoke(main, ["diff", str(old), str(new), "--json", str(out)])
    assert run.exit_code == 0, run.output
    data = json.loads(out.read_text())
    first = demo_build.card.characteristics[0].name
    assert [m["name"] for m in data["entered"]] == [first]
    assert data["left"] == [] and data["performance"] == {}
    overwrite = CliRunner().invoke(main, ["diff", str(old), str(new), "--json", str(new)])
    assert overwrite.exit_code == 2 and overwrite.output.startswith("error: ")
    assert "--json would overwrite" in overwrite.output


def test_build_lists_what_it_left_out_and_the_diff_against_the_file_it_replaces(tmp_path):
    config = write_demo(tmp_path / "demo", rows=3000, seed=5)
    first = CliRunner().invoke(main, ["build", str(config)])
    assert first.exit_code == 0, first.output
    model = config.parent / "out" / "scorecard.json"
    card = json.loads(model.read_text())
    dropped = [f for f in card["fates"] if f["status"] != "in model"]
    assert dropped
    for f in dropped:
        assert f"  {f['name']}: {f['status']} at {f['stage']}: {f['reason']}" in first.output
    assert "against the model file it replaced" not in first.output
    again = CliRunner().invoke(main, ["build", str(config)])
    assert "against the model file it replaced: no changes" in again.output
    text = config.read_text().replace("pdo: 20", "pdo: 30")
    config.write_text(text)
    edited = CliRunner().invoke(main, ["build", str(config)])
    assert "  scaling pdo: 20 -> 30" in edited.output
    quiet = CliRunner().invoke(main, ["build", str(config), "--quiet"])
    assert quiet.output == ""
