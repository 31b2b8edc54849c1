"""What a modeller sees in a notebook: the build result, the scorecard and a characteristic as
HTML tables, and every workbook table as a DataFrame.

The notebook check runs a small notebook in a real Jupyter kernel with nbclient (a reference
library) and reads the HTML that the kernel returned.
"""

from __future__ import annotations

import pytest

from scorecard.card.points import scaling
from scorecard.card.scorecard import LEVELS, Bin, Characteristic, Scorecard


def test_every_workbook_table_is_a_dataframe_that_matches_the_card(demo_build):
    tables = demo_build.tables()
    assert {"Characteristics", "Bins", "Model", "Points", "Score bands"} <= set(tables)
    points = tables["Points"]
    card = demo_build.card
    assert len(points) == sum(len(c.bins) for c in card.characteristics)
    assert points["Points"].tolist() == [b.points for c in card.characteristics for b in c.bins]
    bins = tables["Bins"]
    in_model = bins[bins["Characteristic"] == card.characteristics[0].name]
    assert in_model["Rows"].tolist() == [b.count for b in card.characteristics[0].bins]


def test_html_views_hold_the_points_and_escape_names():
    bins = (Bin("<b>low</b>", LEVELS, 60, 40, -0.4, 10, levels=("<b>low</b>",)),
            Bin("high", LEVELS, 90, 10, 1.0, 30, levels=("high",)))
    char = Characteristic("<script>x</script>", "categorical", bins, 1.0, "R01", "x is low")
    card = Scorecard("demo", scaling(600, 50, 20), 0.5, (char,))
    html = card._repr_html_()
    assert "<script>" not in html and "&lt;script&gt;" in html
    assert "&lt;b&gt;low&lt;/b&gt;" in char._repr_html_()
    assert card.frame()["Points"].tolist() == [10, 30]
    assert char.frame()["Bad rate"].tolist() == [0.4, 0.1]


def test_a_notebook_shows_the_tables(demo_config_path, tmp_path):
    nbformat = pytest.importorskip("nbformat")
    nbclient = pytest.importorskip("nbclient")
    pytest.importorskip("ipykernel")
    cells = [
        "from scorecard import api",
        f"result = api.build({str(demo_config_path)!r}, workbook={str(tmp_path / 'w.xlsx')!r},"
        f" model={str(tmp_path / 'm.json')!r})",
        "result",
        "result.card",
        "result.card.characteristics[0]",
        "result.tables()['Bins'].shape[1]",
    ]
    book = nbformat.v4.new_notebook(cells=[nbformat.v4.new_code_cell(c) for c in cells])
    nbclient.NotebookClient(book, timeout=300, kernel_name="python3").execute()
    html = [o["data"].get("text/html", "") for cell in book.cells for o in cell.get("outputs", [])
            if o.get("output_type") == "execute_result"]
    assert "<table" in html[0] and "Characteristics" in html[0]
    assert "<table" in html[1] and "points to double the odds" in html[1]
    assert "<table" in html[2] and "Weight of evidence" in html[2]
    plain = book.cells[5]["outputs"][0]["data"]["text/plain"]
    assert plain == "12"
