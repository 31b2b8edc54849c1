"""Faults: interrupted builds, builds racing for one output, and inputs that must stay untouched.

The README's contract: "Outputs are written whole or not at all, and inputs are never changed." The checks
here interrupt a build while it writes (by an exception in this process, and by a signal to a
separate process), race two processes for the same output paths, and build and score from
read-only inputs.
"""

from __future__ import annotations

import json
import os
import shutil
import signal
import subprocess
import sys
import textwrap
from pathlib import Path

import openpyxl
import pytest
from click.testing import CliRunner

import scorecard.api
from scorecard.api import open_engine
from scorecard.build.pipeline import build_scorecard
from scorecard.card.scorecard import load_scorecard
from scorecard.cli import main
from scorecard.config.loading import load_config
from scorecard.demo.files import write_demo
from scorecard.errors import InputError
from scorecard.outputs.atomic import StagedOutputs
from scorecard.outputs.workbook import SHEETS

PREVIOUS_WORKBOOK = b"PK\x03\x04 the workbook of an earlier build"
PREVIOUS_MODEL = '{"format_version": 1, "note": "the model of an earlier build"}\n'


@pytest.fixture(scope="module")
def demo_folder(tmp_path_factory) -> Path:
    folder = tmp_path_factory.mktemp("faults") / "demo"
    write_demo(folder, rows=2000, seed=2024)
    return folder


@pytest.fixture
def case(demo_folder, tmp_path) -> Path:
    """A copy of the demo with an earlier build's workbook and model in out/."""
    folder = tmp_path / "case"
    shutil.copytree(demo_folder, folder)
    (folder / "out").mkdir()
    (folder / "out" / "scorecard.xlsx").write_bytes(PREVIOUS_WORKBOOK)
    (folder / "out" / "scorecard.json").write_text(PREVIOUS_MODEL)
    return folder


def previous_outputs_intact(folder: Path) -> bool:
    return ((folder / "out" / "scorecard.xlsx").read_bytes() == PREVIOUS_WORKBOOK
            and (folder / "out" / "scorecard.json").read_text() == PREVIOUS_MODEL)


def leftovers(folder: Path) -> list[str]:
    """Files in out/ other than the workbook and the model (temporary files, say)."""
    return sorted(p.name for p in (folder / "out").iterdir()
                  if p.name not in ("scorecard.xlsx", "scorecard.json"))


def half_save_then(exc: BaseException):
    """A stand-in for openpyxl's save that writes the start of a workbook, then fails."""
    def save(self, filename):
        filename.write(b"PK\x03\x04 half a workbook")
        raise exc
    return save


# A write that fails is bad input of the place written (one error line naming it); an
# interruption stays an interruption.
@pytest.mark.parametrize(("exc", "raised"), [(OSError(28, "No space left on device"), InputError),
                                             (KeyboardInterrupt(), KeyboardInterrupt)],
                         ids=["disk-full", "interrupted"])
def test_a_build_failing_while_writing_the_workbook_leaves_the_old_outputs(case, monkeypatch, exc,
                                                                          raised):
    monkeypatch.setattr(openpyxl.Workbook, "save", half_save_then(exc))
    with pytest.raises(raised):
        scorecard.api.build(case / "scorecard.yaml")
    assert previous_outputs_intact(case)
    assert leftovers(case) == []


def test_a_build_failing_while_writing_the_model_leaves_the_old_workbook(case, monkeypatch):
    def half_write(self, key, text):
        def fail(tmp):
            tmp.write_text(text[:100])
            raise OSError(28, "No space left on device")
        self.write(key, fail)
    monkeypatch.setattr(StagedOutputs, "write_text", half_write)
    with pytest.raises(InputError, match="scorecard.json: output.model: cannot write: no space"):
        scorecard.api.build(case / "scorecard.yaml")
    assert leftovers(case) == []
    assert previous_outputs_intact(case)


KILLED_WHILE_SAVING = textwrap.dedent("""\
    import os, pathlib, signal, sys
    from scorecard.cli import main

    real_write = pathlib.Path.write_bytes

    def write_bytes(self, data):
        if not self.name.endswith(".partial"):
            return real_write(self, data)
        real_write(self, bytes(data[:len(data) // 2]))   # the process dies with half a file
        os.kill(os.getpid(), getattr(signal, sys.argv[1]))
        signal.pause()

    pathlib.Path.write_bytes = write_bytes
    sys.exit(main(sys.argv[2:]))
""")


def run_killed(case: Path, signal_name: str) -> subprocess.CompletedProcess:
    script = case / "killed_while_saving.py"
    script.write_text(KILLED_WHILE_SAVING)
    return subprocess.run([sys.executable, str(script), signal_name, "build", "--quiet",
                           str(case / "scorecard.yaml")], capture_output=True, timeout=120)


@pytest.mark.parametrize("signal_name", ["SIGKILL", "SIGTERM"])
def test_a_build_killed_while_writing_leaves_the_old_outputs(case, signal_name):
    done = run_killed(case, signal_name)
    assert done.returncode == -getattr(signal, signal_name), done.stderr
    assert previous_outputs_intact(case)
    # A terminated build removes its temporary file; SIGKILL cannot be caught, so there the
    # half-written temporary file may stay (it never replaces an output).
    if signal_name == "SIGTERM":
        assert leftovers(case) == []


def expected_model(config_path: Path) -> str:
    config = load_config(config_path)
    return build_scorecard(config, open_engine(config)).card.to_json()


def test_two_builds_racing_for_one_output_leave_one_whole_file(case):
    # Two configs that differ in their scale, both writing the same workbook and model.
    text = (case / "scorecard.yaml").read_text()
    configs = []
    for pdo in (20, 40):
        path = case / f"pdo{pdo}.yaml"
        path.write_text(text.replace("pdo: 20", f"pdo: {pdo}")
                        .replace("out/scorecard.xlsx", "out/shared.xlsx")
                        .replace("out/scorecard.json", "out/shared.json"))
        configs.append(path)
    runs = [subprocess.Popen([sys.executable, "-m", "scorecard", "build", "--quiet", str(p)],
                             stdout=subprocess.PIPE, stderr=subprocess.PIPE) for p in configs]
    for run in runs:
        _, err = run.communicate(timeout=180)
        assert run.returncode == 0, err.decode()
    written = (case / "out" / "shared.json").read_text()
    assert written in {expected_model(p) for p in configs}
    load_scorecard(case / "out" / "shared.json")
    book = openpyxl.load_workbook(case / "out" / "shared.xlsx", read_only=True)
    assert book.sheetnames[:len(SHEETS)] == list(SHEETS)
    assert [p.name for p in (case / "out").iterdir() if p.name.endswith(".partial")] == []


def fingerprint(path: Path) -> tuple:
    stat = path.stat()
    return path.read_bytes(), stat.st_mtime_ns, stat.st_ctime_ns, stat.st_mode


def test_a_build_and_a_scoring_leave_read_only_inputs_untouched(case, tmp_path):
    inputs = [case / "applications.csv", case / "scorecard.yaml"]
    for path in inputs:
        os.chmod(path, 0o444)
    before = [fingerprint(p) for p in inputs]
    runner = CliRunner()
    built = runner.invoke(main, ["build", "--quiet", str(case / "scorecard.yaml")])
    assert built.exit_code == 0, built.stderr
    scored = runner.invoke(main, ["score", str(case / "out" / "scorecard.json"),
                                  str(case / "applications.csv"), "--out", str(tmp_path / "s.csv")])
    assert scored.exit_code == 0, scored.stderr
    assert [fingerprint(p) for p in inputs] == before
    assert json.loads((case / "out" / "scorecard.json").read_text())["format_version"] == 1


def test_scoring_refuses_to_write_over_its_input(case):
    data = case / "applications.csv"
    before = fingerprint(data)
    model = case / "model.json"
    model.write_text(expected_model(case / "scorecard.yaml"))
    result = CliRunner().invoke(main, ["score", str(model), str(data), "--out", str(data)])
    assert result.exit_code == 2 and result.stderr.startswith("error:")
    assert fingerprint(data) == before


@pytest.mark.parametrize("option", ["--model", "--workbook"])
def test_a_build_refuses_to_write_over_its_data(case, option):
    data = case / "applications.csv"
    before = fingerprint(data)
    result = CliRunner().invoke(main, ["build", "--quiet", str(case / "scorecard.yaml"),
                                       option, str(data)])
    assert fingerprint(data) == before
    assert result.exit_code == 2 and result.stderr.startswith("error:")
