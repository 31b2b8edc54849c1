"""The model file: round trip, and refusal of files edited into inconsistency."""

import json
from dataclasses import replace

import pytest

from scorecard.card.scorecard import Scorecard, load_scorecard
from scorecard.errors import InputError


def test_round_trip_is_exact(demo_build):
    card = demo_build.card
    assert Scorecard.from_json(card.to_json()) == card
    assert json.loads(card.to_json())["format_version"] == 1


def _edited(card, change):
    raw = json.loads(card.to_json())
    change(raw)
    return json.dumps(raw)


@pytest.mark.parametrize("change, message", [
    (lambda r: r.update(format_version=2), "format_version 2 is not supported"),
    (lambda r: r["scaling"].update(offset=1.0), "factor and offset do not match"),
    (lambda r: r["characteristics"][0]["cuts"].reverse(), "cuts must be strictly increasing"),
    (lambda r: r["characteristics"][0]["bins"][0].update(points=1.5), "points must be integers"),
    (lambda r: r["characteristics"][0]["bins"][0].update(kind="blob"), "unknown kind"),
    (lambda r: r.update(characteristics=[]), "the model has none"),
    (lambda r: r.pop("intercept"), "incomplete or malformed"),
])
def test_hand_edited_model_is_refused(demo_build, change, message):
    numeric_first = sorted(demo_build.card.characteristics, key=lambda c: c.kind != "numeric")
    card = replace(demo_build.card, characteristics=tuple(numeric_first))
    with pytest.raises(InputError, match=message):
        Scorecard.from_json(_edited(card, change), "m.json")


def test_unreadable_model_file(tmp_path):
    bad = tmp_path / "m.json"
    bad.write_text("{not json")
    with pytest.raises(InputError, match="m.json: not a model file"):
        load_scorecard(bad)
    with pytest.raises(InputError, match="cannot read"):
        load_scorecard(tmp_path / "absent.json")


def test_a_model_file_written_before_sentinels_were_so_named_still_loads(demo_build):
    card = demo_build.card
    with_sentinel = [c for c in card.characteristics if c.sentinels]
    assert with_sentinel, "the demo card should keep -999 in late_payments_12m apart"
    raw = json.loads(card.to_json())
    assert all("special_values" not in c for c in raw["characteristics"])
    for char in raw["characteristics"]:
        # The earlier spelling: the key special_values and bins of kind "special".
        char["special_values"] = char.pop("sentinels")
        for bin_ in char["bins"]:
            if bin_["kind"] == "sentinel":
                bin_["kind"] = "special"
    assert Scorecard.from_json(json.dumps(raw), "old.json") == card


def test_a_cut_at_zero_survives_the_model_file():
    # Regression: a bound of 0.0 equals False and was once left out of the file.
    from scorecard.card.points import scaling as make_scaling
    from scorecard.card.scorecard import RANGE, Bin, Characteristic
    bins = (Bin("< 0", RANGE, 5, 5, 0.0, 10, upper=0.0), Bin(">= 0", RANGE, 9, 1, 1.0, 30, lower=0.0))
    char = Characteristic("x", "numeric", bins, 1.0, "R01", "x is low", cuts=(0.0,))
    card = Scorecard("zero", make_scaling(600, 50, 20), 0.5, (char,))
    assert Scorecard.from_json(card.to_json()) == card
