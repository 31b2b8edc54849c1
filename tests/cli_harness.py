"""The harness of the hostile-input tests: the product driven only through its command line.

Every test in the ``test_hostile_*`` files starts from a demo folder that ``scorecard demo``
wrote (2,000 invented applications, their config, a recent sample, and the model file and
workbook of the demo's build), spoils one thing, and runs a command. A refusal must keep the
contract of DESIGN.md: exit status 2, exactly one stderr line beginning ``error:`` (the last
line) that names the file, key, column, row or path at fault, no traceback, and nothing created
or changed: every file and folder under the case folder keeps its bytes and modification time.

Nothing here imports the package's modules beyond its command, so the tests hold whatever the
package's inner layout.
"""

from __future__ import annotations

import contextlib
import importlib
import json
import os
import re
import shutil
import signal
import subprocess
import sys
from pathlib import Path
from typing import NamedTuple

import pytest
from click.testing import CliRunner

CONFIG, DATA, RECENT = "scorecard.yaml", "applications.csv", "applications_recent_drifted.csv"
MODEL, WORKBOOK = "out/scorecard.json", "out/scorecard.xlsx"
ROOT = hasattr(os, "geteuid") and os.geteuid() == 0
PACKAGE_HOME = str(Path(importlib.import_module("scorecard").__file__).resolve().parents[1])


class Ran(NamedTuple):
    """What one command did: its exit status, its two streams, and whether it ended by a crash."""

    exit_code: int
    stdout: str
    stderr: str
    crashed: bool       # an exception escaped the command (a traceback, for a real process)

    @property
    def error_lines(self) -> list[str]:
        return [line for line in self.stderr.splitlines() if line.startswith("error:")]

    @property
    def warning_lines(self) -> list[str]:
        return [line for line in self.stderr.splitlines() if line.startswith("warning:")]


def run(*args, cwd: Path | None = None) -> Ran:
    """Run ``scorecard ARGS`` in this process (fast), from ``cwd`` when given."""
    main = importlib.import_module("scorecard.cli").main
    before = os.getcwd()
    if cwd is not None:
        os.chdir(cwd)
    try:
        result = CliRunner().invoke(main, [str(a) for a in args])
    finally:
        os.chdir(before)
    crashed = result.exception is not None and not isinstance(result.exception, SystemExit)
    return Ran(result.exit_code, result.stdout, result.stderr, crashed)


def run_process(*args, cwd: Path | None = None, file_size_limit: int | None = None) -> Ran:
    """Run ``python -m scorecard ARGS`` as a separate process.

    ``file_size_limit`` caps the bytes any one file of the process may hold (RLIMIT_FSIZE):
    a write past it fails as a full disk would, at the write itself.
    """
    def limit():
        if file_size_limit is not None:
            import resource
            # Ignored, the signal lets the write fail with an error instead of killing the process.
            signal.signal(signal.SIGXFSZ, signal.SIG_IGN)
            resource.setrlimit(resource.RLIMIT_FSIZE, (file_size_limit, file_size_limit))

    env = {**os.environ, "PYTHONPATH": PACKAGE_HOME, "PYTHONDONTWRITEBYTECODE": "1"}
    done = subprocess.run([sys.executable, "-m", "scorecard", *map(str, args)], cwd=cwd, env=env,
                          capture_output=True, text=True, timeout=300, preexec_fn=limit)
    return Ran(done.returncode, done.stdout, done.stderr, "Traceback" in done.stderr)


def snapshot(folder: Path) -> dict:
    """Every file and folder under ``folder``: bytes and modification time (folders: None)."""
    out = {}
    for p in sorted(folder.rglob("*")):
        if p.is_symlink():
            out[str(p.relative_to(folder))] = ("link", os.readlink(p))
        elif p.is_file():
            out[str(p.relative_to(folder))] = (p.read_bytes(), p.stat().st_mtime_ns)
        else:
            out[str(p.relative_to(folder))] = None
    return out


def assert_refused(ran: Ran, needles, folder: Path, before: dict) -> None:
    """The contract of a refusal: exit 2, one last ``error:`` line with every needle, no
    traceback, and the folder exactly as it was."""
    lines = ran.stderr.splitlines()
    errors = ran.error_lines
    assert ran.exit_code == 2, (ran.exit_code, ran.stderr)
    assert not ran.crashed and "Traceback" not in ran.stderr + ran.stdout, ran.stderr
    assert len(errors) == 1 and lines[-1] == errors[0], ran.stderr
    for needle in needles:
        assert str(needle).replace("{d}", str(folder)) in errors[0], (needle, errors[0])
    assert snapshot(folder) == before


def assert_done(ran: Ran) -> None:
    assert ran.exit_code == 0, (ran.exit_code, ran.stderr)
    assert not ran.crashed and "Traceback" not in ran.stderr + ran.stdout, ran.stderr


# ---- the demo folder ----------------------------------------------------------------------------

@pytest.fixture(scope="module")
def demo_folder(tmp_path_factory) -> Path:
    """A demo folder as ``scorecard demo`` leaves it: data, config and the outputs of a build."""
    folder = tmp_path_factory.mktemp("hostile") / "demo"
    ran = run("demo", "--dir", folder, "--rows", 2000, "--seed", 2024, "--quiet")
    assert_done(ran)
    assert (folder / MODEL).is_file() and (folder / WORKBOOK).is_file()
    return folder


@pytest.fixture
def case(demo_folder, tmp_path) -> Path:
    """A fresh copy of the demo folder, modification times kept."""
    folder = tmp_path / "case"
    shutil.copytree(demo_folder, folder, copy_function=shutil.copy2)
    return folder


def model_of(path: Path) -> dict:
    return json.loads(Path(path).read_text(encoding="utf-8"))


def characteristics_of(path: Path) -> list[str]:
    return [c["name"] for c in model_of(path)["characteristics"]]


# ---- spoiling the folder ------------------------------------------------------------------------

def edit_config(folder: Path, old: str, new: str) -> None:
    path = folder / CONFIG
    text = path.read_text(encoding="utf-8")
    assert old in text, old
    path.write_text(text.replace(old, new, 1), encoding="utf-8")


def add_override(folder: Path, yaml_line: str) -> None:
    """Add ``name: {...}`` as the first entry under ``characteristics:``."""
    edit_config(folder, "\ncharacteristics:\n", f"\ncharacteristics:\n  {yaml_line}\n")


def sentinel_key(folder: Path) -> str:
    """The config key of the values that stand for a fact (named differently over time)."""
    text = (folder / CONFIG).read_text(encoding="utf-8")
    return "sentinels" if re.search(r"^\s*sentinels:", text, re.M) else "special_values"


def data_lines(folder: Path, name: str = DATA) -> list[str]:
    return (folder / name).read_text(encoding="utf-8").splitlines(keepends=True)


def write_lines(folder: Path, lines: list[str], name: str = DATA) -> None:
    (folder / name).write_text("".join(lines), encoding="utf-8")


def set_cells(folder: Path, column: str, values: dict, name: str = DATA) -> None:
    """Set ``column`` of data rows (counted from 1) to the given texts."""
    lines = data_lines(folder, name)
    at = lines[0].rstrip("\n").split(",").index(column)
    for row, value in values.items():
        fields = lines[row].rstrip("\n").split(",")
        fields[at] = value
        lines[row] = ",".join(fields) + "\n"
    write_lines(folder, lines, name)


def column_values(folder: Path, column: str, name: str = DATA) -> list[str]:
    lines = data_lines(folder, name)
    at = lines[0].rstrip("\n").split(",").index(column)
    return [line.rstrip("\n").split(",")[at] for line in lines[1:]]


def edit_rows(folder: Path, fn, name: str = DATA) -> None:
    """Rewrite every data row by ``fn(fields: dict) -> dict`` (header unchanged)."""
    lines = data_lines(folder, name)
    header = lines[0].rstrip("\n").split(",")
    out = [lines[0]]
    for line in lines[1:]:
        fields = dict(zip(header, line.rstrip("\n").split(",")))
        out.append(",".join(fn(fields)[h] for h in header) + "\n")
    write_lines(folder, out, name)


# ---- places that cannot be written ------------------------------------------------------------

@contextlib.contextmanager
def mounted_tmpfs(where: Path, options: str):
    """A tmpfs mounted at ``where`` (needs root); skips the test where mounting is not allowed."""
    where.mkdir(parents=True, exist_ok=True)
    done = subprocess.run(["mount", "-t", "tmpfs", "-o", options, "tmpfs", str(where)],
                          capture_output=True)
    if done.returncode != 0:
        pytest.skip(f"cannot mount a tmpfs here: {done.stderr.decode().strip()}")
    try:
        yield where
    finally:
        subprocess.run(["umount", "-l", str(where)], capture_output=True)


@contextlib.contextmanager
def read_only_folder(where: Path):
    """A folder this process cannot write into: mode 555, or a read-only tmpfs for root."""
    if not ROOT:
        where.mkdir(parents=True, exist_ok=True)
        os.chmod(where, 0o555)
        try:
            yield where
        finally:
            os.chmod(where, 0o755)
        return
    if shutil.which("mount") is None:
        pytest.skip("root writes into any folder, and mount is not available")
    with mounted_tmpfs(where, "ro,size=1m") as place:
        yield place

