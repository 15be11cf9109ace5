"""Stored answers with stable ids: SQLite by default, PostgreSQL through a URL (SQLAlchemy Core).

Notes
-----
A result's id is a content hash: SHA-256 of the canonical JSON of the validated request (the
model's own serialisation: every field in its declared order, defaults filled in, the
caller's ``ref`` and the ``store`` flag left out) and the service version, so the same question
to the same version has the same id wherever it is asked, and a lab system can keep it as its
trace. Records hold that canonical request (made once, for the hash and the record), the
answer (which carries the caller's ``ref``), the version and the time stored; an id already
present is never overwritten (same id, same answer).

Writes are behind the answer: the record carries the request and the answer as the JSON text
already made for the response, ``put`` only notes it among the pending and appends it to a
deque (no thread woken: waking the writer was measured to cost the request more than the write
itself), and one writer
thread per store wakes every 50 ms to insert what has gathered, in batches (``flush`` wakes it
at once); ``get`` looks among the queued before the database, so a process always finds what
it has just stored, and other processes find it within about 50 ms.
SQLite runs in WAL mode with a busy timeout,
so several worker processes can share one file; PostgreSQL serves shared deployments. Records
older than the retention are pruned when the writer starts and every ``_PRUNE_EVERY`` writes.
The database is opened on first use: a service that stores nothing creates no file.
"""

from __future__ import annotations

import hashlib
import json
import logging
import threading
import time
from collections import deque
from collections.abc import Callable
from dataclasses import dataclass
from datetime import UTC, datetime, timedelta
from pathlib import Path
from typing import Any

import sqlalchemy as sa
from pydantic import BaseModel

__all__ = ["ResultStore", "StoredResult", "canonical_request", "result_id"]

# The writer wakes this often (s) while records come, backing off to a second while none do; it
# takes at most this many records per statement, and prunes every so many writes. Whenever the
# writer needs the interpreter back (after each wake and each database call) while an answer
# is being computed, the two threads hand it to and fro and the answer slows: measured on a
# two-core machine, waking every 5 ms and inserting row by row (executemany) made every
# answer in the process 0.1-0.2 ms slower; waking every 50 ms with one statement a batch,
# storing adds 20-110 µs (mean 68) to a stored answer's median over HTTP (benchmarks/http.sh,
# benchmarks/store.py). Waking every 200 ms measured no better (within the noise over HTTP,
# worse with the answering thread kept busy) and delays what other worker processes see.
_WAKE_S = 0.05
_IDLE_WAKE_S = 1.0
_BATCH = 128  # 768 parameters a statement: within even an old SQLite's 999
_PRUNE_EVERY = 1000
# SQLite waits this long (ms) for another process's write lock before failing.
_BUSY_TIMEOUT_MS = 10_000
_LOG = logging.getLogger(__name__)
# Fields of a request that do not change its answer, left out of the id.
_NOT_HASHED = ("ref", "store")

_METADATA = sa.MetaData()
_RESULTS = sa.Table(
    "results",
    _METADATA,
    sa.Column("result_id", sa.String(64), primary_key=True),
    sa.Column("kind", sa.String(32), nullable=False),
    sa.Column("version", sa.String(32), nullable=False),
    sa.Column("stored_at", sa.DateTime(timezone=True), nullable=False, index=True),
    sa.Column("request", sa.Text, nullable=False),
    sa.Column("answer", sa.Text, nullable=False),
)


def canonical_request(request: BaseModel) -> str:
    """A validated request's canonical JSON: the model's own serialisation, every field in its
    declared order with the defaults in force filled in, ``ref`` and ``store`` left out. It is
    what the id hashes and what the store keeps as the request, so anyone can recompute a
    stored result's id from its record."""
    return request.model_dump_json(exclude=set(_NOT_HASHED))


def result_id(canonical: str, version: str) -> str:
    """The content hash of a canonical request (``canonical_request``) and the service
    version: 32 hexadecimal digits of its SHA-256."""
    return hashlib.sha256(f"{version}\n{canonical}".encode()).hexdigest()[:32]


@dataclass(frozen=True)
class StoredResult:
    """One stored answer; the request and the answer as JSON text."""

    result_id: str
    kind: str
    version: str
    stored_at: datetime
    request_json: str
    answer_json: str

    @property
    def request(self) -> dict[str, Any]:
        document: dict[str, Any] = json.loads(self.request_json)
        return document

    @property
    def answer(self) -> dict[str, Any]:
        document: dict[str, Any] = json.loads(self.answer_json)
        return document


class ResultStore:
    """One per application: the database (opened on first use) and its writer thread."""

    def __init__(self, url: str, retention_days: float | None = None) -> None:
        self.url = url
        self.retention_days = retention_days
        self._engine: sa.Engine | None = None
        self._open_lock = threading.Lock()
        # records waiting for the writer: appending to a deque takes no lock and wakes no
        # thread, so a request never hands the interpreter to the writer
        self._incoming: deque[StoredResult] = deque()
        self._wake = threading.Event()
        self._stopping = False
        self._busy = False
        self._pending: dict[str, StoredResult] = {}
        self._pending_lock = threading.Lock()
        self._writer: threading.Thread | None = None
        self._driver: tuple[Any, Any] | None = None  # the writer's own connection
        self._written = 0

    @classmethod
    def in_folder(cls, folder: Path, retention_days: float | None = None) -> ResultStore:
        """The default store: an SQLite file in ``folder`` (made when first used)."""
        return cls(f"sqlite:///{folder / 'results.sqlite3'}", retention_days)

    def put(self, record: StoredResult) -> None:
        """Queue a record for writing; the answer does not wait for the database."""
        with self._pending_lock:
            if record.result_id in self._pending:
                return
            self._pending[record.result_id] = record
        self._start_writer()
        self._incoming.append(record)

    def get(self, result_id: str) -> StoredResult | None:
        with self._pending_lock:
            pending = self._pending.get(result_id)
        if pending is not None:
            return pending
        with self._connect() as connection:
            row = connection.execute(
                sa.select(_RESULTS).where(_RESULTS.c.result_id == result_id)
            ).first()
        if row is None:
            return None
        stored_at = row.stored_at if row.stored_at.tzinfo else row.stored_at.replace(tzinfo=UTC)
        return StoredResult(
            row.result_id, row.kind, row.version, stored_at, row.request, row.answer
        )

    def flush(self, timeout_s: float = 30.0) -> None:
        """Wake the writer and wait until every queued record is written (TimeoutError if
        the database does not take them in ``timeout_s``)."""
        deadline = time.monotonic() + timeout_s
        while self._writer is not None and (self._incoming or self._busy):
            if time.monotonic() > deadline:
                raise TimeoutError(f"{len(self._incoming)} stored answers not yet written")
            self._wake.set()
            time.sleep(0.001)

    def close(self) -> None:
        """Write what is queued, stop the writer and release the database."""
        if self._writer is not None:
            self._stopping = True
            self._wake.set()
            self._writer.join()
            self._writer = None
            self._stopping = False
        self._drop_connection()
        if self._engine is not None:
            self._engine.dispose()
            self._engine = None

    def prune(self, now: datetime | None = None) -> int:
        """Delete records older than the retention; how many went."""
        if self.retention_days is None:
            return 0
        cutoff = (now or datetime.now(UTC)) - timedelta(days=self.retention_days)
        with self._connect() as connection:
            deleted = connection.execute(sa.delete(_RESULTS).where(_RESULTS.c.stored_at < cutoff))
            connection.commit()
        return int(deleted.rowcount or 0)

    def _connect(self) -> sa.Connection:
        return self._open().connect()

    def _open(self) -> sa.Engine:
        with self._open_lock:
            if self._engine is None:
                self._engine = _create_engine(self.url)
                _METADATA.create_all(self._engine, checkfirst=True)
            return self._engine

    def _start_writer(self) -> None:
        if self._writer is not None:
            return
        with self._open_lock:
            if self._writer is not None:
                return
            self._writer = threading.Thread(target=self._write_loop, name="result-writer")
            self._writer.daemon = True
            self._writer.start()

    def _write_loop(self) -> None:
        """Every ``_WAKE_S`` while records come (less often while none do), or when woken, write
        what has queued in batches; on stop, write the rest and return. When the database
        fails, the batch goes back to the front of the queue and is tried again a second
        later (on stop, what cannot be written is reported as lost)."""
        pause = _WAKE_S
        try:
            self.prune()
        except sa.exc.SQLAlchemyError:
            _LOG.exception("pruning old stored answers failed; will try again later")
        while True:
            self._wake.wait(pause)
            self._wake.clear()
            stopping = self._stopping
            wrote = False
            try:
                while self._incoming:
                    self._busy = True
                    count = min(_BATCH, len(self._incoming))
                    batch = [self._incoming.popleft() for _ in range(count)]
                    try:
                        self._insert(batch)
                    except Exception:
                        self._incoming.extendleft(reversed(batch))
                        raise
                    wrote = True
                if self._written >= _PRUNE_EVERY:
                    self._written = 0
                    self.prune()
            except Exception:
                self._drop_connection()
                if stopping:
                    _LOG.exception("%d stored answers could not be written", len(self._incoming))
                    return
                _LOG.exception("storing answers failed; trying again in %s s", _IDLE_WAKE_S)
                pause = _IDLE_WAKE_S
                continue
            finally:
                self._busy = False
            if stopping:
                self._drop_connection()
                return
            pause = _WAKE_S if wrote else min(2 * pause, _IDLE_WAKE_S)

    def _insert(self, batch: list[StoredResult]) -> None:
        connection = self._writer_connection()
        driver = _DRIVERS[self._open().dialect.name]
        row = f"({', '.join([driver.placeholder] * _FIELDS)})"
        # One statement of many rows, on the driver's own connection in autocommit (the
        # statement is its own transaction): the driver gives the interpreter up while the
        # database works and the writer then waits to have it back, so the fewer calls a
        # batch takes, the less the writer and the answering thread hand the interpreter to
        # and fro (executemany did it for every row; measured in benchmarks/store.py).
        statement = (
            f"INSERT INTO results ({_COLUMNS}) VALUES {', '.join([row] * len(batch))} "
            "ON CONFLICT (result_id) DO NOTHING"
        )
        values = tuple(
            value
            for r in batch
            for value in (
                r.result_id,
                r.kind,
                r.version,
                driver.stamp(r.stored_at),
                r.request_json,
                r.answer_json,
            )
        )
        cursor = connection.cursor()
        try:
            cursor.execute(statement, values)
        finally:
            cursor.close()
        with self._pending_lock:
            for record in batch:
                self._pending.pop(record.result_id, None)
        self._written += len(batch)

    def _writer_connection(self) -> Any:
        """The writer's own driver connection (taken out of the pool, in autocommit)."""
        if self._driver is None:
            engine = self._open()
            proxied = engine.raw_connection()
            driver: Any = proxied.driver_connection
            proxied.detach()  # autocommit must not go back to the pool
            _DRIVERS[engine.dialect.name].autocommit(driver)
            self._driver = (proxied, driver)
        return self._driver[1]

    def _drop_connection(self) -> None:
        if self._driver is not None:
            try:
                self._driver[0].close()
            except Exception:  # already broken: nothing more to release
                _LOG.debug("closing the writer's connection failed", exc_info=True)
            self._driver = None


def _sqlite_stamp(moment: datetime) -> str:
    """A time as SQLAlchemy's SQLite DateTime stores it (UTC, no offset)."""
    return moment.astimezone(UTC).strftime("%Y-%m-%d %H:%M:%S.%f")


def _sqlite_autocommit(driver: Any) -> None:
    driver.isolation_level = None


def _psycopg_autocommit(driver: Any) -> None:
    driver.autocommit = True


@dataclass(frozen=True)
class _Driver:
    """What the writer needs to know of a database's driver."""

    placeholder: str  # its parameter placeholder
    stamp: Callable[[datetime], Any]  # how it takes a time
    autocommit: Callable[[Any], None]  # how a connection of it is put in autocommit


_COLUMNS = "result_id, kind, version, stored_at, request, answer"
_FIELDS = 6
_DRIVERS = {
    "sqlite": _Driver("?", _sqlite_stamp, _sqlite_autocommit),
    "postgresql": _Driver("%s", lambda moment: moment, _psycopg_autocommit),
}


def _create_engine(url: str) -> sa.Engine:
    if not url.startswith("sqlite"):
        return sa.create_engine(url, pool_pre_ping=True)
    path = url.removeprefix("sqlite:///")
    if path and path != ":memory:":
        Path(path).parent.mkdir(parents=True, exist_ok=True)
    engine = sa.create_engine(url, connect_args={"timeout": _BUSY_TIMEOUT_MS / 1000})

    @sa.event.listens_for(engine, "connect")
    def _pragmas(connection: Any, record: Any) -> None:
        cursor = connection.cursor()
        cursor.execute("PRAGMA journal_mode=WAL")
        # WAL with synchronous=NORMAL: a crash cannot corrupt the file; a power cut may lose
        # the last few stored answers, which a caller can recompute from its request
        cursor.execute("PRAGMA synchronous=NORMAL")
        cursor.execute(f"PRAGMA busy_timeout={_BUSY_TIMEOUT_MS}")
        cursor.close()

    return engine
