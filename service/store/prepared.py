"""Core statements compiled once per dialect and run straight on the connection's DBAPI cursor.

The upload path runs about twenty small statements per upload, and every API request one token
look-up. SQLAlchemy's execution machinery (an execution context, a result object, parameter and
event bookkeeping) costs 13-20 µs a statement on top of the database's own work: the joined
upload look-up took 19.7 µs through ``Connection.execute`` and 6.6 µs as a `Prepared` statement
(SQLite, 2026-12-02). A `Prepared` statement keeps what matters from SQLAlchemy -- its compiler
(the SQL text and parameter style of each dialect) and its type conversions (bind and result
processors, such as SQLite's datetimes stored as text) -- and works out the rest once per dialect:
the SQL string, the parameter order and the converters.

Rules of use:

* it runs on the unit of work's connection, inside its transaction (nothing here begins, commits
  or rolls back);
* every value is given: Python-side column defaults are not applied (a statement whose columns
  would need one is refused when it is first compiled), and an INSERT names its key column in
  ``RETURNING`` to give the new id;
* statement events (``before_execute`` and the like) do not see these statements; connection and
  transaction events (connect, begin, commit) still fire, as the transaction is SQLAlchemy's;
* a database error is raised as SQLAlchemy's own exception (``sqlalchemy.exc.IntegrityError``
  and so on), as ``Connection.execute`` would raise it.
"""

from __future__ import annotations

import threading
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from typing import Any

from sqlalchemy import exc as sa_exc
from sqlalchemy.engine import Connection, Dialect
from sqlalchemy.sql.elements import ClauseElement, TextClause

Processor = Callable[[Any], Any] | None


@dataclass(frozen=True)
class _Compiled:
    sql: str
    compiled: Any  # SQLCompiler: construct_params() fills in the statement's own fixed values
    order: tuple[str, ...] | None  # parameter names in placeholder order (positional styles), else None
    binds: tuple[tuple[str, Callable[[Any], Any]], ...]  # (name, converter) for parameters that need one
    results: tuple[Processor, ...]  # one converter (or None) per result column
    any_result_processor: bool


class Prepared:
    """One Core statement, compiled on first use for each dialect (and, for an INSERT or UPDATE given
    plain values, for each set of value names)."""

    def __init__(self, statement: ClauseElement) -> None:
        self.statement = statement
        self._by_key: dict[tuple[str, tuple[str, ...]], _Compiled] = {}
        self._lock = threading.Lock()

    # -- compiling ---------------------------------------------------------------------------

    def _compiled(self, dialect: Dialect, params: dict[str, Any]) -> _Compiled:
        names = tuple(params) if self._takes_column_keys else ()
        key = (dialect.name, names)
        found = self._by_key.get(key)
        if found is None:
            with self._lock:
                found = self._by_key.get(key)
                if found is None:
                    found = self._compile(dialect, list(names) if names else None)
                    self._by_key[key] = found
        return found

    @property
    def _takes_column_keys(self) -> bool:
        return getattr(self.statement, "is_dml", False) and not isinstance(self.statement, TextClause)

    def _compile(self, dialect: Dialect, column_keys: list[str] | None) -> _Compiled:
        compiled = self.statement.compile(dialect=dialect, column_keys=column_keys)
        sql = compiled.string
        if "POSTCOMPILE" in sql:
            raise ValueError("a Prepared statement cannot hold parameters rendered at execution time "
                             f"(expanding IN lists, literal LIMITs): {sql}")
        for name in ("insert_prefetch", "update_prefetch"):
            if getattr(compiled, name, None):
                raise ValueError("a Prepared statement gets every value from its caller; this one would need "
                                 f"Python-side column defaults for {[c.key for c in getattr(compiled, name)]}")
        binds = []
        for name, bind in compiled.binds.items():
            processor = bind.type.dialect_impl(dialect).bind_processor(dialect)
            if processor is not None:
                binds.append((name, processor))
        order = tuple(compiled.positiontup) if dialect.positional else None
        columns = self._result_columns()
        results = tuple(c.type.dialect_impl(dialect).result_processor(dialect, None) for c in columns)
        return _Compiled(sql=sql, compiled=compiled, order=order, binds=tuple(binds), results=results,
                         any_result_processor=any(p is not None for p in results))

    def _result_columns(self) -> Sequence[Any]:
        st = self.statement
        if isinstance(st, TextClause):
            return ()
        if getattr(st, "is_select", False):
            return list(st.selected_columns)  # type: ignore[attr-defined]
        if getattr(st, "_returning", None):
            return list(st.exported_columns)  # type: ignore[attr-defined]
        return ()

    # -- running -----------------------------------------------------------------------------

    def _execute(self, conn: Connection, params: dict[str, Any]) -> tuple[Any, _Compiled]:
        c = self._compiled(conn.dialect, params)
        values = c.compiled.construct_params(params)
        for name, processor in c.binds:
            if name in values:
                values[name] = processor(values[name])
        args: Any = tuple(values[n] for n in c.order) if c.order is not None else values
        cursor = conn.connection.dbapi_connection.cursor()  # type: ignore[union-attr]
        try:
            cursor.execute(c.sql, args)
        except conn.dialect.loaded_dbapi.Error as err:
            cursor.close()
            raise sa_exc.DBAPIError.instance(c.sql, args, err, conn.dialect.loaded_dbapi.Error,
                                             dialect=conn.dialect) from err
        except BaseException:
            cursor.close()
            raise
        return cursor, c

    def _converted(self, c: _Compiled, row: Sequence[Any]) -> tuple[Any, ...]:
        if not c.any_result_processor:
            return tuple(row)
        return tuple(v if p is None or v is None else p(v) for p, v in zip(c.results, row))

    def first(self, conn: Connection, params: dict[str, Any] | None = None) -> tuple[Any, ...] | None:
        """The first row (converted), or None."""
        cursor, c = self._execute(conn, params or {})
        try:
            row = cursor.fetchone()
        finally:
            cursor.close()
        return None if row is None else self._converted(c, row)

    def rows(self, conn: Connection, params: dict[str, Any] | None = None) -> list[tuple[Any, ...]]:
        """Every row (converted)."""
        cursor, c = self._execute(conn, params or {})
        try:
            fetched = cursor.fetchall()
        finally:
            cursor.close()
        return [self._converted(c, r) for r in fetched]

    def run(self, conn: Connection, params: dict[str, Any] | None = None) -> int:
        """Run a statement that answers no rows; the number of rows it changed."""
        cursor, _c = self._execute(conn, params or {})
        try:
            return int(cursor.rowcount)
        finally:
            cursor.close()

    def inserted_id(self, conn: Connection, params: dict[str, Any]) -> int:
        """Run an ``INSERT ... RETURNING key``; the new row's key."""
        row = self.first(conn, params)
        if row is None:  # pragma: no cover - an INSERT with RETURNING always answers a row
            raise RuntimeError("the INSERT returned no row")
        return int(row[0])
