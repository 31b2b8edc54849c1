"""What ``data.source`` and ``rejects.source`` may be: a file, or a query against a database.

A file is a path, resolved against the config's folder. A query is a mapping::

    source:
      url: postgresql+psycopg://scorer@warehouse.example/leases
      query: SELECT * FROM applications ORDER BY application_id
      password_variable: LEASES_DB_PASSWORD

The URL is a SQLAlchemy database URL without a password: the password is read from the named
environment variable when the build connects (:mod:`scorecard.data.database`), so it never sits
in the config, the workbook, the model file or a message. A URL that holds a password is refused.
The URL of an SQLite file is resolved against the config's folder like any other path.
"""

from __future__ import annotations

import re
import warnings
from dataclasses import dataclass, replace
from pathlib import Path

import yaml

from scorecard.config import values as v
from scorecard.config.messages import display, message
from scorecard.config.nodes import Source

__all__ = ["DatabaseQuery", "is_query", "resolve_source", "source_value"]

URL_EXAMPLE = "postgresql+psycopg://scorer@db.example/leases"
# Query parameters through which some drivers take a password: refused like one in the URL.
_PASSWORD_PARAMETERS = ("password", "passwd", "pwd")
_VARIABLE = re.compile(r"[A-Za-z_][A-Za-z0-9_]*")
_ORDER_BY = re.compile(r"\border\s+by\b", re.IGNORECASE)
# Settings of a data file that a query has no use for.
FILE_SETTINGS = ("encoding", "delimiter", "decimal", "sheet")


@dataclass(frozen=True, slots=True)
class DatabaseQuery:
    """Rows returned by a query against a database.

    Attributes
    ----------
    key : str
        Where the config gives it (``data.source`` or ``rejects.source``), for messages.
    url : str
        The SQLAlchemy database URL as written in the config, without a password.
    query : str
        The query; its rows, in the order returned, are the data.
    password_variable : str or None
        The environment variable holding the password; None when the database needs none.
    database_file : Path or None
        For an SQLite file, the file, resolved against the config's folder.
    config_file : str or None
        The config that gives the query, and ``lines``, the line of each of its keys: the
        messages of a failed read name them like those of the config reader.

    Examples
    --------
    >>> q = DatabaseQuery("data.source", "sqlite:///leases.db", "SELECT * FROM applications")
    >>> str(q)
    'data.source (sqlite:///leases.db)'
    """

    key: str
    url: str
    query: str
    password_variable: str | None = None
    database_file: Path | None = None
    config_file: str | None = None
    lines: tuple[tuple[str, int], ...] = ()

    def problem(self, key: str, what: str) -> str:
        """A one-line message about ``key`` of the query (``url``, ``query`` ...)."""
        where = f"{self.key}.{key}"
        if self.config_file is None:
            return f"{where}: {what}"
        return message(self.config_file, where, what, dict(self.lines).get(key))

    def __str__(self) -> str:
        return f"{self.key} ({self.shown_url})"

    @property
    def shown_url(self) -> str:
        """The URL as written, an SQLite file named without its folder (for the workbook)."""
        if self.database_file is None:
            return self.url
        return f"{self.url.split(':', 1)[0]}:///{self.database_file.name}"


def is_query(source) -> bool:
    """True when a source is a database query rather than a file."""
    return isinstance(source, DatabaseQuery)


def source_value(key: str):
    """The reader of a source key: the path as written, or a :class:`DatabaseQuery`."""

    def read(source: Source, path: tuple, node: yaml.Node) -> str | DatabaseQuery:
        if not isinstance(node, yaml.MappingNode):
            return v.text(source, path, node)
        values = v.section(source, path, node, {
            "url": v.text, "query": v.text, "password_variable": _variable})
        v.require(source, path, values, ("url", "query"))
        _check_url(source, path + ("url",), values["url"])
        if not _ORDER_BY.search(values["query"]):
            # The holdout and out-of-time samples are drawn over the rows in order.
            where = path + ("query",)
            warnings.warn(message(source.file, display(where),
                                  "has no ORDER BY: the rows may come back in another order "
                                  "next time, which changes every random draw made over them "
                                  "(such as the holdout sample)",
                                  source.lines.get(where)), UserWarning, stacklevel=2)
        lines = tuple((name, source.lines[path + (name,)]) for name in values)
        return DatabaseQuery(key=key, **values, config_file=source.file, lines=lines)

    return read


def resolve_source(base: Path, written: str | DatabaseQuery) -> Path | DatabaseQuery:
    """A file source as a path under ``base``; an SQLite file of a query likewise."""
    if not is_query(written):
        return base / Path(written).expanduser()
    from sqlalchemy.engine import make_url
    url = make_url(written.url)
    if url.get_backend_name() != "sqlite" or url.database in (None, "", ":memory:") \
            or url.database.startswith("file:"):
        return written
    return replace(written, database_file=base / Path(url.database).expanduser())


def _variable(source: Source, path: tuple, node: yaml.Node) -> str:
    name = source.text(path, node)
    if not _VARIABLE.fullmatch(name):
        source.fail(path, "must be the name of an environment variable, such as "
                          "LEASES_DB_PASSWORD (letters, digits and _)")
    return name


def _check_url(source: Source, path: tuple, written: str) -> None:
    """Refuse a URL that does not parse or that holds a password; never repeat its text."""
    from sqlalchemy.engine import make_url
    from sqlalchemy.exc import ArgumentError
    try:
        url = make_url(written)
    except (ArgumentError, ValueError):
        source.fail(path, f"is not a database URL such as {URL_EXAMPLE}")
    if url.password is not None or any(k.lower() in _PASSWORD_PARAMETERS for k in url.query):
        source.fail(path, "holds a password: leave it out of the config and name the "
                          "environment variable that holds it in password_variable")
