"""The command layer starts without the heavy libraries: each command imports what it needs.

Common practice for command-line tools (click's own advice on lazy loading of subcommands):
``scorecard --help`` should not pay for pandas, scipy, openpyxl or Dask. These check which
modules are loaded, in a fresh interpreter, not how long anything takes.
"""

import json
import os
import subprocess
import sys

import pytest

HEAVY = ("pandas", "scipy", "statsmodels", "openpyxl", "dask", "pyarrow")


def loaded_after(statement: str) -> list[str]:
    """The heavy top-level packages that a fresh interpreter holds after ``statement``."""
    script = (f"import sys, json; {statement}; "
              f"print(json.dumps(sorted(m for m in {HEAVY!r} if m in sys.modules)))")
    out = subprocess.run([sys.executable, "-c", script], capture_output=True, text=True,
                         check=True).stdout
    return json.loads(out)


@pytest.mark.parametrize("module", ["scorecard.cli", "scorecard.api"])
def test_importing_the_command_layer_loads_no_heavy_library(module):
    assert loaded_after(f"import {module}") == []


def test_help_loads_no_heavy_library():
    statement = ("from click.testing import CliRunner; from scorecard.cli import main; "
                 "assert CliRunner().invoke(main, ['--help']).exit_code == 0")
    assert loaded_after(statement) == []


def test_scoring_loads_neither_scipy_nor_the_workbook_writer():
    # Scoring needs numpy and pyarrow; the statistics and the workbook belong to builds.
    loaded = loaded_after("import scorecard.outputs.scored_file")
    assert "scipy" not in loaded and "openpyxl" not in loaded and "dask" not in loaded


def test_the_build_pipeline_does_not_load_scipy_stats():
    # scipy.stats alone takes about half a second to import; the build's measures need only
    # scipy.special (the chi-square tail of the additivity screen is special.chdtrc).
    script = ("import sys, scorecard.build.pipeline, scorecard.outputs.workbook; "
              "print('scipy.stats' in sys.modules)")
    out = subprocess.run([sys.executable, "-c", script], capture_output=True, text=True,
                         check=True).stdout
    assert out.strip() == "False"


@pytest.fixture(scope="module")
def small_scoring_case(demo_build, demo_dir, tmp_path_factory):
    """The demo model (it records an exclusion rule), a segmented model of two copies of its
    card, and the first 200 rows of the demo data as CSV and Parquet."""
    import pyarrow.csv as pacsv
    import pyarrow.parquet as pq

    from scorecard.card.segmented import SegmentedScorecard, SegmentRule

    folder = tmp_path_factory.mktemp("startup")
    card = demo_build.card
    (folder / "model.json").write_text(card.to_json(), encoding="utf-8")
    rule = SegmentRule("customer", ("new", "existing"), groups=(("new",), ("existing",)))
    segmented = SegmentedScorecard("demo", rule, (card, card))
    (folder / "segmented.json").write_text(segmented.to_json(), encoding="utf-8")
    table = pacsv.read_csv(demo_dir / "applications.csv").slice(0, 200)
    pacsv.write_csv(table, folder / "small.csv")
    pq.write_table(table, folder / "small.parquet")
    return folder


@pytest.mark.parametrize("model, data, out, options", [
    ("model.json", "small.csv", "scored.csv", []),
    ("model.json", "small.csv", "excluded.csv", ["--apply-exclusions"]),
    ("segmented.json", "small.csv", "segmented.csv", []),
    ("model.json", "small.parquet", "scored.parquet", ["--keep", "application_id"]),
])
def test_scoring_a_small_file_loads_neither_pandas_nor_the_build_libraries(
        small_scoring_case, model, data, out, options):
    # What a fresh ``scorecard score`` pays before its first row is its imports: it reads and
    # writes through pyarrow's CSV and Parquet modules and scores on numpy, never pandas.
    folder = small_scoring_case
    args = ["score", str(folder / model), str(folder / data), "--out", str(folder / out)]
    statement = ("from click.testing import CliRunner; from scorecard.cli import main; "
                 f"result = CliRunner().invoke(main, {args + options!r}); "
                 "assert result.exit_code == 0, result.output")
    assert loaded_after(statement) == ["pyarrow"]
    assert (folder / out).stat().st_size > 0


def _blas_threads_after_import(**settings) -> str:
    env = {k: v for k, v in os.environ.items()
           if k not in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS")}
    script = "import os, scorecard.cli; print(os.environ.get('OPENBLAS_NUM_THREADS'))"
    return subprocess.run([sys.executable, "-c", script], capture_output=True, text=True,
                          check=True, env={**env, **settings}).stdout.strip()


def test_the_command_asks_for_one_blas_thread_unless_the_user_chose():
    assert _blas_threads_after_import() == "1"
    assert _blas_threads_after_import(OPENBLAS_NUM_THREADS="3") == "3"
    assert _blas_threads_after_import(OMP_NUM_THREADS="2") == "None"
