"""The records store: every checked unit's verdict, limits and full results in a SQL database.

An embedded SQLite file by default (WAL, so several processes on one station write at once), or a shared
PostgreSQL server named by a URL, through SQLAlchemy Core. The schema carries a version number
(``benchnf_info``); a database of a newer version is refused, an older one upgraded in place.

Each record has a unique id made when it is created, so a retried write never duplicates it; a record and
its limits are written in one transaction, so a writer killed midway leaves no half record.
"""

from __future__ import annotations

import datetime as _dt
import json
import os
import uuid
from collections.abc import Iterator, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from ..errors import BenchError

__all__ = ["SCHEMA_VERSION", "RecordsError", "CheckRecord", "LimitRow", "Store", "connect", "records_url", "shown_url"]

SCHEMA_VERSION = 1


class RecordsError(BenchError):
    """The records database cannot be opened, read or written as asked."""


@dataclass(frozen=True)
class LimitRow:
    name: str
    measured: float | None
    limit_text: str
    lower: float | None
    upper: float | None
    margin: float | None
    unit: str
    uncertainty: float | None
    verdict: str


@dataclass(frozen=True)
class CheckRecord:
    """One unit checked against a profile, as kept."""

    serial: str
    verdict: str
    profile_name: str
    profile_sha256: str | None
    station: str
    operator: str | None
    software: str
    limits: tuple[LimitRow, ...]
    results: dict[str, Any] | None = None
    check: dict[str, Any] | None = None
    checked_at: str = field(default_factory=lambda: _dt.datetime.now(_dt.timezone.utc).isoformat(timespec="seconds"))
    record_uid: str = field(default_factory=lambda: str(uuid.uuid4()))


#: The database kinds a records store may live in (a URL's scheme before any "+driver").
SUPPORTED = ("sqlite", "postgresql")


def records_url(text: str | Path) -> str:
    """A SQLAlchemy URL from what a user gives: a file path, ``sqlite:///...`` or ``postgresql://...``.

    Raises
    ------
    RecordsError
        An in-memory database (it would keep nothing).
    MissingDependencyError
        Another kind of database than SQLite or PostgreSQL (exit status 3).
    """
    s = str(text)
    if s.startswith(("postgresql://", "postgres://")):
        return "postgresql+psycopg://" + s.split("://", 1)[1]
    if "://" in s:
        scheme = s.split("://", 1)[0].split("+", 1)[0].lower()
        if scheme not in SUPPORTED:
            from ..errors import MissingDependencyError
            raise MissingDependencyError(f"a records store lives in SQLite (a file path) or PostgreSQL "
                                         f"(postgresql://USER@HOST/DB), not {scheme}: give one of those")
        if scheme == "sqlite" and _in_memory(s.split("://", 1)[1]):
            raise RecordsError(f"{s} is an in-memory database, which keeps nothing once the command ends: give "
                               f"a file (a path, or sqlite:///FILE)")
        return s
    if _in_memory(s):
        raise RecordsError(f"{s} is an in-memory database, which keeps nothing: give a file path")
    return "sqlite:///" + str(Path(s).expanduser().resolve())


def _in_memory(rest: str) -> bool:
    """Whether the part of an SQLite URL after ``sqlite://`` (or a bare name) is an in-memory database."""
    path = rest[1:] if rest.startswith("/") else rest
    return path.split("?", 1)[0] in ("", ":memory:", "file::memory:") or "mode=memory" in path


def _tables(sa: Any) -> tuple[Any, ...]:
    md = sa.MetaData()
    info = sa.Table("benchnf_info", md, sa.Column("key", sa.String(64), primary_key=True),
                    sa.Column("value", sa.String(256), nullable=False))
    checks = sa.Table(
        "checks", md, sa.Column("id", sa.Integer, primary_key=True, autoincrement=True),
        sa.Column("record_uid", sa.String(36), nullable=False, unique=True),
        sa.Column("serial", sa.String(200), nullable=False, index=True),
        sa.Column("verdict", sa.String(16), nullable=False, index=True),
        sa.Column("checked_at", sa.String(40), nullable=False, index=True),
        sa.Column("station", sa.String(200), nullable=False, index=True), sa.Column("operator", sa.String(200)),
        sa.Column("profile_name", sa.String(400), nullable=False), sa.Column("profile_sha256", sa.String(64)),
        sa.Column("software", sa.String(64), nullable=False), sa.Column("results_json", sa.Text),
        sa.Column("check_json", sa.Text))
    limits = sa.Table(
        "limits", md, sa.Column("id", sa.Integer, primary_key=True, autoincrement=True),
        sa.Column("check_id", sa.Integer, sa.ForeignKey("checks.id", ondelete="CASCADE"), nullable=False, index=True),
        sa.Column("name", sa.String(400), nullable=False, index=True), sa.Column("measured", sa.Float),
        sa.Column("limit_text", sa.String(200)), sa.Column("lower", sa.Float), sa.Column("upper", sa.Float),
        sa.Column("margin", sa.Float), sa.Column("unit", sa.String(16)), sa.Column("uncertainty", sa.Float),
        sa.Column("verdict", sa.String(16), nullable=False))
    return md, info, checks, limits


class Store:
    """An open records database. Use :func:`connect`."""

    def __init__(self, engine: Any, url: str) -> None:
        import sqlalchemy as sa
        self._sa, self.engine, self.url = sa, engine, url
        self._md, self._info, self._checks, self._limits = _tables(sa)

    # -- writing ----------------------------------------------------------------------------------
    def add(self, rec: CheckRecord) -> bool:
        """Keep `rec` (and its limits) in one transaction; False if a record of that id is there already."""
        sa = self._sa
        try:
            with self.engine.begin() as conn:
                if conn.execute(sa.select(self._checks.c.id).where(
                        self._checks.c.record_uid == rec.record_uid)).first() is not None:
                    return False
                check_id = conn.execute(self._checks.insert().values(
                    record_uid=rec.record_uid, serial=rec.serial, verdict=rec.verdict, checked_at=rec.checked_at,
                    station=rec.station, operator=rec.operator, profile_name=rec.profile_name,
                    profile_sha256=rec.profile_sha256, software=rec.software,
                    results_json=json.dumps(rec.results) if rec.results is not None else None,
                    check_json=json.dumps(rec.check) if rec.check is not None else None)).inserted_primary_key[0]
                if rec.limits:
                    conn.execute(self._limits.insert(), [dict(check_id=check_id, **row.__dict__) for row in rec.limits])
        except sa.exc.IntegrityError:
            return False  # the same record written by a retry that raced this one
        except sa.exc.SQLAlchemyError as err:
            raise RecordsError(f"cannot write to the records database {shown_url(self.url)}: {_first_line(err)}") from err
        return True

    # -- reading ----------------------------------------------------------------------------------
    def checks(self, *, serial: str | None = None, station: str | None = None, verdict: str | None = None,
               since: str | None = None, until: str | None = None) -> list[dict[str, Any]]:
        """Records (without their JSON), oldest first, filtered."""
        c = self._checks.c
        q = self._sa.select(c.id, c.record_uid, c.serial, c.verdict, c.checked_at, c.station, c.operator,
                            c.profile_name, c.profile_sha256, c.software).order_by(c.checked_at, c.id)
        for col, value in ((c.serial, serial), (c.station, station), (c.verdict, verdict)):
            if value is not None:
                q = q.where(col == value)
        if since is not None:
            q = q.where(c.checked_at >= since)
        if until is not None:
            q = q.where(c.checked_at <= until)
        return self._rows(q)

    def limits_of(self, check_ids: Sequence[int]) -> dict[int, list[dict[str, Any]]]:
        """Limit rows per record id."""
        out: dict[int, list[dict[str, Any]]] = {i: [] for i in check_ids}
        if not check_ids:
            return out
        q = self._sa.select(self._limits).where(self._limits.c.check_id.in_(list(check_ids))).order_by(
            self._limits.c.id)
        for row in self._rows(q):
            out[row["check_id"]].append(row)
        return out

    def measured_values(self, name: str, *, latest_per_serial: bool = True) -> list[dict[str, Any]]:
        """A limit's measured values with their bounds, in time order (by default each serial's latest check)."""
        lim, chk = self._limits.c, self._checks.c
        q = (self._sa.select(chk.serial, chk.checked_at, chk.station, chk.operator, chk.profile_sha256, lim.measured,
                             lim.lower, lim.upper)
             .join_from(self._limits, self._checks, lim.check_id == chk.id)
             .where(lim.name == name, lim.measured.is_not(None)).order_by(chk.checked_at, chk.id))
        rows = self._rows(q)
        if latest_per_serial:
            last: dict[str, dict[str, Any]] = {}
            for r in rows:
                last[r["serial"]] = r
            rows = sorted(last.values(), key=lambda r: r["checked_at"])
        return rows

    def limit_names(self) -> list[str]:
        q = self._sa.select(self._limits.c.name).distinct().order_by(self._limits.c.name)
        return [r["name"] for r in self._rows(q)]

    def result_of(self, check_id: int) -> Any:
        """The typed result kept with a record (any registered kind), validated by its schema; None if none."""
        q = self._sa.select(self._checks.c.results_json).where(self._checks.c.id == check_id)
        rows = self._rows(q)
        text = rows[0]["results_json"] if rows else None
        if text is None:
            return None
        from ..registry import result_from_dict
        where = f"the results kept with record {check_id} in {shown_url(self.url)}"
        try:
            return result_from_dict(json.loads(text), where=where)
        except ValueError as err:  # not JSON, or not a result of ours (FormatError is a ValueError)
            raise RecordsError(f"{err}" if isinstance(err, BenchError) else f"{where} is not JSON ({err})") from err

    def _rows(self, query: Any) -> list[dict[str, Any]]:
        try:
            with self.engine.connect() as conn:
                rows = [dict(r._mapping) for r in conn.execute(query)]
        except self._sa.exc.SQLAlchemyError as err:
            raise RecordsError(f"cannot read the records database {shown_url(self.url)}: {_first_line(err)}") from err
        for row in rows:
            _check_row(row, self.url)
        return rows

    def close(self) -> None:
        self.engine.dispose()


_NUMBERS = ("measured", "lower", "upper", "margin", "uncertainty")
_TEXTS = ("serial", "verdict", "checked_at", "station", "profile_name", "name", "unit", "limit_text", "software")


def _check_row(row: dict[str, Any], url: str) -> None:
    """Every value read is of its column's kind: a database edited outside benchnf is refused in one line."""
    import math
    for key, value in row.items():
        bad = ((key in _NUMBERS and value is not None and (isinstance(value, bool) or not isinstance(value, (int, float))
                                                             or not math.isfinite(value)))
               or (key in _TEXTS and value is not None and not isinstance(value, str)))
        if bad:
            which = row.get("check_id") or row.get("id") or row.get("serial", "?")
            kind = "number" if key in _NUMBERS else "text"
            raise RecordsError(f"the records database {shown_url(url)} holds {value!r} in {key} (record {which}), not "
                               f"a {kind}: it was changed outside benchnf; correct or remove that record")


def _first_line(err: BaseException) -> str:
    text = str(getattr(err, "orig", None) or err)
    return " ".join(text.strip().splitlines()[:1]) or type(err).__name__


def shown_url(url: str) -> str:
    """The URL without a password."""
    if "@" in url and "://" in url:
        scheme, rest = url.split("://", 1)
        creds, host = rest.rsplit("@", 1)
        return f"{scheme}://{creds.split(':', 1)[0]}@{host}"
    return url


def _sqlite_pragmas(engine: Any, *, read_only: bool) -> None:
    from sqlalchemy import event

    @event.listens_for(engine, "connect")
    def _on_connect(dbapi_conn: Any, _record: Any) -> None:
        cur = dbapi_conn.cursor()
        cur.execute("PRAGMA busy_timeout=30000")  # first: switching to WAL takes a lock others may hold
        if not read_only:
            cur.execute("PRAGMA journal_mode=WAL")
        cur.execute("PRAGMA foreign_keys=ON")
        cur.close()


def _writable(path: Path) -> bool:
    """Whether SQLite can write the database here: the file (if any) and its folder (for the WAL files)."""
    return os.access(path.parent, os.W_OK) and (not path.exists() or os.access(path, os.W_OK))


def _read_only_url(path: Path) -> str:
    """A URL that opens `path` for reading only, without the WAL files SQLite cannot make on a read-only
    folder (an archive on a read-only share or medium: nobody writes it while it is read)."""
    from urllib.parse import quote
    return f"sqlite:///file:{quote(str(path.resolve()))}?mode=ro&immutable=1&uri=true"


def _sqlite_file(path: Path, url: str, *, create: bool) -> tuple[str, bool]:
    """Check an SQLite file before opening it: (the URL to open, whether it is opened for reading only)."""
    if not path.parent.is_dir():
        raise RecordsError(f"the folder of the records database {path} does not exist: create it first")
    if not create and not path.is_file():
        raise RecordsError(f"no records database at {path}: check or batch with --records make one")
    if _writable(path):
        return url, False
    if create:
        raise RecordsError(f"the records database {path} cannot be written (the file or its folder is "
                           f"read-only): give --records a writable place")
    wal = path.with_name(path.name + "-wal")
    if wal.is_file() and wal.stat().st_size > 0:
        raise RecordsError(f"the records database {path} is read-only and its last writes are still in "
                           f"{wal.name}: open it once where it can be written, then read it here")
    return _read_only_url(path), True


def connect(url_or_path: str | Path, *, create: bool = True) -> Store:
    """Open (and, with `create`, make or upgrade) the records database; one line on any failure."""
    from .._optional import require
    sa = require("sqlalchemy", extra="records", purpose="the records store")
    url = records_url(url_or_path)
    read_only = False
    if url.startswith("sqlite:///"):
        url, read_only = _sqlite_file(Path(url[len("sqlite:///"):]), url, create=create)
    elif url.startswith("postgresql+psycopg://"):
        require("psycopg", extra="records", purpose="a PostgreSQL records store")
    try:
        engine = sa.create_engine(url, future=True, pool_pre_ping=True,
                                  **({"connect_args": {"timeout": 30}} if url.startswith("sqlite") else {}))
    except (sa.exc.ArgumentError, sa.exc.NoSuchModuleError, ValueError) as err:
        raise RecordsError(f"{shown_url(str(url_or_path))} is not a records URL (give a file path, sqlite:///FILE or "
                           f"postgresql://USER@HOST/DB): {_first_line(err)}") from err
    if url.startswith("sqlite"):
        _sqlite_pragmas(engine, read_only=read_only)
    store = Store(engine, url)
    _prepare(store, create=create)
    return store


#: Tries at making a new store's tables while other processes make them too (each waits its turn).
_CREATE_TRIES = 40


def _prepare(store: Store, *, create: bool) -> None:
    """Make (or check) the store's tables. Many processes may start on a new database at once: on
    PostgreSQL a transaction-scoped advisory lock lets one make the tables while the others wait; on SQLite
    the loser of the race sees "already exists" or "locked" and tries again once the winner has committed."""
    import random
    import time
    sa = store._sa
    for attempt in range(_CREATE_TRIES):
        try:
            return _prepare_once(store, create=create)
        except (sa.exc.OperationalError, sa.exc.ProgrammingError, sa.exc.IntegrityError) as err:
            if not create or attempt == _CREATE_TRIES - 1 or not _a_race(err):
                raise RecordsError(f"cannot open the records database {shown_url(store.url)}: "
                                   f"{_first_line(err)}") from err
            time.sleep(0.02 + 0.08 * random.random())


def _a_race(err: Exception) -> bool:
    text = str(err).lower()
    return any(w in text for w in ("already exists", "locked", "busy", "duplicate", "unique"))


def _prepare_once(store: Store, *, create: bool) -> None:
    sa = store._sa
    try:
        with store.engine.begin() as conn:
            if create and store.engine.dialect.name == "postgresql":
                conn.execute(sa.text("SELECT pg_advisory_xact_lock(7415020261)"))  # benchnf's own key
            if create:
                store._md.create_all(conn, checkfirst=True)
            row = conn.execute(sa.select(store._info.c.value).where(store._info.c.key == "schema_version")).first()
            if row is None:
                if create:
                    conn.execute(store._info.insert().values(key="schema_version", value=str(SCHEMA_VERSION)))
            elif int(row[0]) > SCHEMA_VERSION:
                raise RecordsError(f"the records database {shown_url(store.url)} has schema version {row[0]}, newer than "
                                   f"this benchnf's {SCHEMA_VERSION}: use the benchnf that made it, or upgrade")
    except (sa.exc.OperationalError, sa.exc.ProgrammingError, sa.exc.IntegrityError):
        raise  # perhaps another process making the tables at the same moment: _prepare decides
    except sa.exc.SQLAlchemyError as err:
        raise RecordsError(f"cannot open the records database {shown_url(store.url)}: {_first_line(err)}") from err


def iter_export_rows(store: Store) -> Iterator[dict[str, Any]]:
    """One row per check, one column per limit's measured value (for CSV export)."""
    recs = store.checks()
    lims = store.limits_of([r["id"] for r in recs])
    for r in recs:
        row = {k: r[k] for k in ("serial", "checked_at", "verdict", "station", "operator", "profile_name",
                                 "profile_sha256", "software")}
        for lim in lims[r["id"]]:
            row[lim["name"]] = lim["measured"]
        yield row
