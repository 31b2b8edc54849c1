"""Reading the rows of a database query, streamed in chunks, into Arrow.

The query runs through SQLAlchemy on a connection that streams its result (a server-side cursor
where the driver has one), ``chunk_rows`` rows at a time. Each chunk becomes Arrow columns at
once (text dictionary-encoded, decimals as floats), so the rows are held only in that compact
form, never as the driver's row objects for the whole result. The transaction is read-only where
the database offers it and is never committed: a query cannot change the database.

The password comes from the environment variable the config names and goes only into the URL
object at connect time; every message names the URL without it and has it scrubbed out.
"""

from __future__ import annotations

import hashlib
import os
from collections.abc import Iterator

import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc

from scorecard.config.sources import DatabaseQuery
from scorecard.errors import InputError, first_line

__all__ = ["CHUNK_ROWS", "query_batches", "read_query", "rows_sha256"]

CHUNK_ROWS = 50_000


def read_query(source: DatabaseQuery, chunk_rows: int = CHUNK_ROWS) -> pa.Table:
    """The rows of a query as one Arrow table, read in chunks of ``chunk_rows`` rows.

    A column whose chunks came back with different types (an integer column with a chunk of
    decimals, a column of numbers and text in SQLite) takes the type that holds them all: the
    wider number, else text.

    Examples
    --------
    >>> import sqlite3, tempfile, pathlib
    >>> file = pathlib.Path(tempfile.mkdtemp()) / "leases.db"
    >>> with sqlite3.connect(file) as db:
    ...     _ = db.execute("CREATE TABLE a (age INTEGER, outcome TEXT)")
    ...     _ = db.executemany("INSERT INTO a VALUES (?, ?)", [(31, "repaid"), (45, "defaulted")])
    >>> q = DatabaseQuery("data.source", "sqlite:///leases.db", "SELECT * FROM a ORDER BY age",
    ...                   database_file=file)
    >>> read_query(q, chunk_rows=1).column("age").to_pylist()
    [31, 45]
    """
    batches = list(query_batches(source, chunk_rows))
    tables = [pa.Table.from_batches([b]) for b in batches]
    return _concat(tables)


def query_batches(source: DatabaseQuery, chunk_rows: int = CHUNK_ROWS
                  ) -> Iterator[pa.RecordBatch]:
    """Record batches of at most ``chunk_rows`` rows, in the order the database returns them.

    At least one batch is yielded (an empty one when the query returns no rows), so the column
    names are always known.

    Raises
    ------
    InputError
        One line naming ``<key>.password_variable``, ``<key>.url`` or ``<key>.query``: the
        variable is not set; no such kind of database, or its driver is not installed; the
        database cannot be reached; the query is refused or returns no rows.
    """
    if chunk_rows < 1:
        raise ValueError(f"chunk_rows must be at least 1, not {chunk_rows}")
    from sqlalchemy import exc

    password = _password(source)
    engine = _engine(source, password)
    try:
        try:
            connection = engine.connect()
        except exc.DBAPIError as error:
            _fail(source, "url", f"cannot connect to {source.shown_url}: {_reason(error)}",
                  password)
        with connection:
            _make_read_only(connection)
            try:
                # Run exactly as written: no bind parameters are looked for in its text.
                result = connection.execution_options(
                    yield_per=chunk_rows).exec_driver_sql(source.query)
            except (exc.DBAPIError, exc.StatementError) as error:
                _fail(source, "query", f"the database refused the query: {_reason(error)}",
                      password)
            if not result.returns_rows:
                _fail(source, "query", "returns no rows: it must be a query such as SELECT",
                      password)
            names = [str(name) for name in result.keys()]
            try:
                found = False
                for rows in result.partitions(chunk_rows):
                    found = True
                    yield _batch(names, rows)
                if not found:
                    yield _batch(names, [])
            except exc.DBAPIError as error:
                _fail(source, "query", f"reading the rows failed: {_reason(error)}", password)
            # Leaving the block rolls the transaction back: nothing is ever committed.
    finally:
        engine.dispose()


def rows_sha256(frame: pd.DataFrame) -> str:
    """SHA-256 of the rows read: the column names and types, then one hash per row in order.

    The per-row hashes are pandas' (the same values give the same hash whatever the chunks or
    the order of a text column's levels), so a run can be checked against the rows it read.

    Examples
    --------
    >>> a = pd.DataFrame({"age": [31, 45], "housing": pd.Categorical(["owner", "renter"])})
    >>> b = a.assign(housing=pd.Categorical(["owner", "renter"], ["renter", "owner"]))
    >>> rows_sha256(a) == rows_sha256(b), rows_sha256(a) == rows_sha256(a.iloc[::-1])
    (True, False)
    """
    digest = hashlib.sha256()
    for name, dtype in frame.dtypes.items():
        kind = "text" if isinstance(dtype, pd.CategoricalDtype) else str(dtype)
        digest.update(f"{name}\t{kind}\n".encode("utf-8"))
    digest.update(pd.util.hash_pandas_object(frame, index=False).to_numpy().tobytes())
    return digest.hexdigest()


def _password(source: DatabaseQuery) -> str | None:
    name = source.password_variable
    if name is None:
        return None
    value = os.environ.get(name)
    if not value:
        raise InputError(source.problem("password_variable", f"the environment variable {name} "
                                                             "is not set; it must hold the "
                                                             "database password"))
    return value


def _engine(source: DatabaseQuery, password: str | None):
    """A SQLAlchemy engine for the URL, with the password put in only here."""
    from sqlalchemy import create_engine, exc
    from sqlalchemy.engine import make_url

    url = make_url(source.url)
    if source.database_file is not None:
        if not source.database_file.is_file():
            # SQLite would create an empty database: an input is never created or changed.
            _fail(source, "url", f"the database file {source.database_file.name} does not "
                                 "exist", password)
        url = url.set(database=str(source.database_file))
    if password is not None:
        url = url.set(password=password)
    try:
        return create_engine(url)
    except exc.NoSuchModuleError:
        _fail(source, "url", f"'{url.drivername}' is not a kind of database SQLAlchemy knows",
              password)
    except ImportError as error:
        _fail(source, "url", f"the database driver for {url.drivername} is not installed "
                             f"({first_line(error)}): install it with pip", password)
    except (exc.ArgumentError, TypeError) as error:
        _fail(source, "url", f"cannot use this URL: {first_line(error)}", password)


def _make_read_only(connection) -> None:
    """Ask the database to refuse writes in this transaction, where it has such a setting."""
    name = connection.dialect.name
    if name == "postgresql":
        connection.exec_driver_sql("SET TRANSACTION READ ONLY")
    elif name == "sqlite":
        connection.exec_driver_sql("PRAGMA query_only = ON")


def _reason(error) -> str:
    """The driver's own first line, without SQLAlchemy's wrapping and its statement."""
    return first_line(getattr(error, "orig", None) or error)


def _fail(source: DatabaseQuery, key: str, what: str, password: str | None):
    if password:
        what = what.replace(password, "***")
    raise InputError(source.problem(key, what)) from None


def _batch(names: list[str], rows) -> pa.RecordBatch:
    columns = list(zip(*rows)) if rows else [()] * len(names)
    return pa.RecordBatch.from_arrays([_array(values) for values in columns], names=names)


def _array(values) -> pa.Array:
    """One column of a chunk as Arrow: numbers, dates and flags as they come, decimals as
    floats, text dictionary-encoded (empty text missing); values of mixed kinds as text."""
    try:
        array = pa.array(values, from_pandas=True)
    except (pa.ArrowException, TypeError, ValueError, OverflowError):
        # Mixed kinds in one column (SQLite allows that) read as text, as in a CSV file; this
        # loop runs only for such columns.
        array = pa.array([None if value is None else str(value) for value in values],
                         pa.string())
    if pa.types.is_decimal(array.type):
        array = pc.cast(array, pa.float64())
    if pa.types.is_string(array.type) or pa.types.is_large_string(array.type):
        # Empty text is missing, as an empty field of a CSV file is.
        array = pc.if_else(pc.equal(array, ""), pa.scalar(None, array.type), array)
        array = array.dictionary_encode()
    return array


def _concat(tables: list[pa.Table]) -> pa.Table:
    try:
        return pa.concat_tables(tables, promote_options="permissive")
    except (pa.ArrowTypeError, pa.ArrowInvalid):
        pass
    # Some column came back as numbers in one chunk and as text in another: all text.
    mixed = {i for i in range(tables[0].num_columns)
             if len({t.schema.types[i] for t in tables
                     if not pa.types.is_null(t.schema.types[i])}) > 1}
    return pa.concat_tables([_as_text(t, mixed) for t in tables], promote_options="permissive")


def _as_text(table: pa.Table, positions: set[int]) -> pa.Table:
    columns = [pc.cast(column, pa.string()).dictionary_encode() if i in positions else column
               for i, column in enumerate(table.columns)]
    return pa.Table.from_arrays(columns, names=table.column_names)
