"""Outputs appear whole or not at all, and never in place of an input.

Every output is written to a temporary file in the destination folder and moved into place
with :func:`os.replace`, which is atomic on one file system: a killed run leaves the previous
file intact, and two runs writing the same path never interleave (the last one wins whole).

One rule holds for every command's outputs (:func:`check_outputs`, then :func:`staged`): no
output may be an input, a folder or another output of the same run, compared as resolved real
paths; and a place that cannot be written is one :class:`~scorecard.errors.InputError` naming
the output, with nothing left behind.
"""

from __future__ import annotations

import contextlib
import gc
import io
import os
import sys
import tempfile
from pathlib import Path
from typing import NamedTuple

from scorecard.errors import InputError


@contextlib.contextmanager
def atomic_path(path):
    """Yield a temporary path beside ``path``; on success move it onto ``path``.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> target = pathlib.Path(tempfile.mkdtemp()) / "out.txt"
    >>> with atomic_path(target) as tmp:
    ...     _ = tmp.write_text("whole")
    >>> target.read_text()
    'whole'
    """
    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    fd, name = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".partial", dir=path.parent)
    os.close(fd)
    tmp = Path(name)
    # mkstemp makes the file private; outputs get the usual permissions of new files.
    umask = os.umask(0)
    os.umask(umask)
    os.chmod(tmp, 0o666 & ~umask)
    try:
        yield tmp
        os.replace(tmp, path)
    finally:
        if tmp.exists():
            tmp.unlink()


def write_text(path, text: str) -> None:
    """Write ``text`` (UTF-8) to ``path`` atomically."""
    with atomic_path(path) as tmp:
        tmp.write_text(text, encoding="utf-8")


# ---- the one rule for every command's outputs ----------------------------------------------------

class Output(NamedTuple):
    """One file a run writes.

    Attributes
    ----------
    name : str
        How the user named it, for messages: an option (``--out``) or a config key
        (``output.model``).
    path : Path
        Where it goes, as given.
    suffixes : tuple of str
        Endings the file name may have (lower case); empty for any.
    """

    name: str
    path: Path
    suffixes: tuple[str, ...] = ()


def _real(path) -> Path:
    # resolve() follows links and '..' through every part that exists, so './x', 'x' and a
    # link to x are one path.
    return Path(os.path.abspath(path)).resolve()


def _either(words) -> str:
    words = list(words)
    return words[0] if len(words) == 1 else ", ".join(words[:-1]) + " or " + words[-1]


def _nearest_existing(path: Path) -> Path:
    for folder in path.parents:
        if os.path.lexists(folder):
            return folder
    return Path(path.anchor or ".")


def check_outputs(outputs, inputs) -> tuple[Output, ...]:
    """Refuse outputs that would destroy something or cannot be written, before any work.

    No output may be an input (or lie inside an input folder), a folder, or the same file as
    another output of the run; its name must carry one of its suffixes; and its folder must be
    one this process can create or write into. Paths are compared after resolving links.

    Parameters
    ----------
    outputs : iterable of Output
        Every file the run will write.
    inputs : mapping
        What each input is (``"the data"``) to its path.

    Returns
    -------
    tuple of Output

    Raises
    ------
    InputError
        Naming the output's path and option, and the input or output it collides with.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> folder = pathlib.Path(tempfile.mkdtemp())
    >>> _ = (folder / "rows.csv").write_text("x\\n1\\n")
    >>> check_outputs([Output("--out", folder / "rows.csv")], {"the data": folder / "rows.csv"})
    Traceback (most recent call last):
    ...
    scorecard.errors.InputError: .../rows.csv: --out would overwrite the data .../rows.csv; inputs are never modified
    """
    outputs = tuple(outputs)
    real_inputs = [(what, Path(path), _real(path)) for what, path in inputs.items()
                   if path is not None]
    seen: dict[Path, Output] = {}
    for out in outputs:
        path = Path(out.path)
        real = _real(path)
        for what, given, real_input in real_inputs:
            if real == real_input:
                raise InputError(f"{path}: {out.name} would overwrite {what} {given}; "
                                 "inputs are never modified")
            if real_input in real.parents and real_input.is_dir():
                raise InputError(f"{path}: {out.name} would sit inside {what} {given}; "
                                 "inputs are never modified")
        if real in seen:
            raise InputError(f"{path}: {out.name} is the same file as {seen[real].name}")
        seen[real] = out
        if path.is_dir():
            raise InputError(f"{path}: {out.name} is a folder, not a file")
    for out in outputs:
        path = Path(out.path)
        if out.suffixes and path.suffix.lower() not in out.suffixes:
            raise InputError(f"{path}: {out.name} must end in {_either(out.suffixes)}")
        _check_writable(out)
    return outputs


def _check_writable(out: Output) -> None:
    folder = _nearest_existing(Path(out.path))
    if not folder.is_dir():
        raise InputError(f"{out.path}: {out.name}: cannot write there: {folder} is not a folder")
    if not os.access(folder, os.W_OK | os.X_OK):
        raise InputError(f"{out.path}: {out.name}: cannot write there: the folder {folder} "
                         "is not writable")


def _reason(exc: OSError) -> str:
    text = exc.strerror or str(exc) or type(exc).__name__
    return text[:1].lower() + text[1:]


class StagedOutputs:
    """Temporary files for a run's outputs, moved into place together (see :func:`staged`)."""

    def __init__(self, outputs: tuple[Output, ...]):
        self.outputs = outputs
        self.pending: list[Path] = []
        self.made: list[Path] = []          # folders this run created, outermost first

    def _index(self, key) -> int:
        """The output named ``key`` (its option or key), or else at path ``key``."""
        for i, out in enumerate(self.outputs):
            if out.name == key:
                return i
        return next(i for i, out in enumerate(self.outputs) if Path(out.path) == Path(key))

    def _failed(self, index: int, exc: OSError) -> InputError:
        out = self.outputs[index]
        return InputError(f"{out.path}: {out.name}: cannot write: {_reason(exc)}")

    def _open(self) -> None:
        for index, out in enumerate(self.outputs):
            path = Path(out.path)
            try:
                missing = [p for p in reversed(path.parents) if not os.path.lexists(p)]
                for folder in missing:
                    folder.mkdir()
                    self.made.append(folder)
                fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".partial",
                                           dir=path.parent)
                os.close(fd)
                self.pending.append(Path(tmp))
                umask = os.umask(0)
                os.umask(umask)
                os.chmod(tmp, 0o666 & ~umask)
            except OSError as exc:
                raise self._failed(index, exc) from None

    def path(self, key) -> Path:
        """The temporary file to write the output ``key`` (its name or path) into."""
        return self.pending[self._index(key)]

    def write(self, key, produce) -> None:
        """Call ``produce(temporary path)`` for output ``key``; a failed write names it."""
        index = self._index(key)
        try:
            produce(self.pending[index])
        except OSError as exc:
            raise self._failed(index, exc) from None

    def write_text(self, key, text: str) -> None:
        """Write ``text`` (UTF-8) as output ``key``."""
        self.write(key, lambda tmp: tmp.write_text(text, encoding="utf-8"))

    def _commit(self) -> None:
        for index, tmp in enumerate(self.pending):
            try:
                os.replace(tmp, self.outputs[index].path)
            except OSError as exc:
                raise self._failed(index, exc) from None

    def _discard(self) -> None:
        for tmp in self.pending:
            with contextlib.suppress(OSError):
                tmp.unlink()
        for folder in reversed(self.made):
            with contextlib.suppress(OSError):
                folder.rmdir()


@contextlib.contextmanager
def staged(outputs):
    """Yield a :class:`StagedOutputs` holding a temporary file beside each output.

    Every temporary file is made when the block starts, so a place that cannot be written is
    found before any output is produced. When the block ends normally every output is moved
    into place, in order; when it fails, the temporary files and any folder the run created
    are removed and no output is touched. Every :class:`OSError` of a write becomes an
    :class:`InputError` naming the output's path.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> folder = pathlib.Path(tempfile.mkdtemp())
    >>> plan = check_outputs([Output("--json", folder / "new" / "a.json", (".json",))], {})
    >>> with staged(plan) as out:
    ...     out.write_text("--json", "{}")
    >>> (folder / "new" / "a.json").read_text()
    '{}'
    """
    outputs = StagedOutputs(tuple(outputs))
    try:
        outputs._open()
        yield outputs
        outputs._commit()
    except BaseException:
        outputs._discard()
        raise
    outputs.pending.clear()
    outputs.made.clear()


def save_book(book, path) -> None:
    """Save an openpyxl workbook to ``path`` atomically.

    The zip archive is assembled in memory and written in one go. openpyxl streams each sheet
    through a temporary file first; when the disk refuses one, its half-closed streams would
    fail again when collected and print a traceback, so a failed save collects them at once,
    quietly, and raises a plain OSError.
    """
    buffer = io.BytesIO()
    failed = None
    hook = sys.unraisablehook
    sys.unraisablehook = _ignore
    try:
        try:
            book.save(buffer)
        except OSError as exc:
            failed = OSError(exc.errno, exc.strerror)
        if failed is not None:
            gc.collect()
    finally:
        sys.unraisablehook = hook
    if failed is not None:
        raise failed
    with atomic_path(path) as tmp:
        tmp.write_bytes(buffer.getbuffer())


def _ignore(unraisable) -> None:
    """An unraisable-exception hook that drops the exception."""
