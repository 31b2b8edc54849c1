"""The run manifest: what a build read and which software made it, so a run can be repeated.

The data file is identified by its SHA-256. A folder of files (Parquet parts) is identified by
the SHA-256 of a listing with one line ``<relative path> <SHA-256 of the file>`` per file, in
sorted path order, so the same files give the same hash whatever order the file system lists.
Rows from a database query are identified by the URL (which never holds the password), the
query, and the hash of the rows the build read (:func:`scorecard.data.database.rows_sha256`).
"""

from __future__ import annotations

import datetime
import hashlib
from importlib import metadata
from pathlib import Path
from typing import NamedTuple

from scorecard.config.sources import is_query

PACKAGES = ("scorecard", "numpy", "pandas", "scipy", "openpyxl", "pyarrow", "sqlalchemy")
CHUNK = 1 << 20


class Manifest(NamedTuple):
    """Facts that identify one build."""

    config_file: str
    config_sha256: str
    data_source: str
    data_sha256: str
    seed: int
    versions: tuple[tuple[str, str], ...]
    run_time: str
    data_query: str = ""            # the query, when the data came from a database
    exclusions: tuple[str, ...] = ()    # each rule of data.exclude with its reason, in order


def file_sha256(path) -> str:
    """SHA-256 of a file's bytes, read in chunks.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> p = pathlib.Path(tempfile.mkdtemp()) / "a.txt"
    >>> _ = p.write_bytes(b"abc")
    >>> file_sha256(p)[:16]
    'ba7816bf8f01cfea'
    """
    digest = hashlib.sha256()
    with open(path, "rb") as handle:
        for block in iter(lambda: handle.read(CHUNK), b""):
            digest.update(block)
    return digest.hexdigest()


def source_sha256(path) -> str:
    """SHA-256 of a data file, or of the sorted listing of a folder's file hashes.

    Returns a sentence instead of a hash when the path cannot be read here (for example a
    source that only a remote cluster can see).
    """
    path = Path(path)
    try:
        if path.is_dir():
            files = sorted(p for p in path.rglob("*") if p.is_file())
            listing = "".join(f"{p.relative_to(path).as_posix()} {file_sha256(p)}\n" for p in files)
            return hashlib.sha256(listing.encode("utf-8")).hexdigest()
        return file_sha256(path)
    except OSError as exc:
        return f"not readable here ({exc.__class__.__name__})"


def package_versions(names=PACKAGES) -> tuple[tuple[str, str], ...]:
    """Installed version of each package, or ``not installed``."""
    out = []
    for name in names:
        try:
            out.append((name, metadata.version(name)))
        except metadata.PackageNotFoundError:
            out.append((name, "not installed"))
    return tuple(out)


def run_manifest(config, now: datetime.datetime | None = None,
                 rows_sha256: str | None = None) -> Manifest:
    """The manifest of a build from its config; ``now`` defaults to the current UTC time.

    ``rows_sha256`` is the hash of the rows a database query returned (a query cannot be read
    again here); a data file is hashed here.
    """
    now = now or datetime.datetime.now(datetime.timezone.utc)
    config_file = config.config_file
    config_hash = source_sha256(config_file) if config_file else "no config file (built from text)"
    source = config.data.source
    if is_query(source):
        data = {"data_source": source.url, "data_query": source.query,
                "data_sha256": rows_sha256 or "not recorded (the build did not hash the rows)"}
    else:
        data = {"data_source": str(source), "data_sha256": source_sha256(source)}
    return Manifest(
        config_file=str(config_file), config_sha256=config_hash, **data,
        seed=int(config.samples.seed), versions=package_versions(),
        run_time=now.replace(microsecond=0).isoformat(),
        exclusions=tuple(f"{rule.describe()}: {rule.reason}" for rule in config.data.exclude))
