"""The result store, on SQLite and on PostgreSQL (the same tests on both)."""

from __future__ import annotations

import json
import os
import threading
from collections.abc import Iterator
from datetime import UTC, datetime, timedelta
from pathlib import Path

import pytest
import sqlalchemy as sa

from service.models import SettlingRequest
from service.store import ResultStore, StoredResult, canonical_request, result_id
from tests.conftest import slab_request

POSTGRES_URL = os.environ.get("MIXCLOCK_TEST_POSTGRES_URL")
POSTGRES_SKIP = (
    "PostgreSQL not available: set MIXCLOCK_TEST_POSTGRES_URL to run the store's tests on it "
    "(.ci/run installs and starts one)"
)


@pytest.fixture(params=["sqlite", "postgresql"])
def url(request: pytest.FixtureRequest, tmp_path: Path) -> Iterator[str]:
    if request.param == "sqlite":
        yield f"sqlite:///{tmp_path / 'results.sqlite3'}"
        return
    if not POSTGRES_URL:
        pytest.skip(POSTGRES_SKIP)
    engine = sa.create_engine(POSTGRES_URL)
    with engine.begin() as connection:
        connection.execute(sa.text("DROP TABLE IF EXISTS results"))
    engine.dispose()
    yield POSTGRES_URL


def _record(identity: str, answer: float = 1.0, age_days: float = 0.0) -> StoredResult:
    return StoredResult(
        result_id=identity,
        kind="settling-time",
        version="test",
        stored_at=datetime.now(UTC) - timedelta(days=age_days),
        request_json=json.dumps({"body": {"shape": "slab"}, "ref": "x"}),
        answer_json=json.dumps({"time_s": answer}),
    )


def test_a_stored_record_comes_back_before_and_after_writing(url: str) -> None:
    store = ResultStore(url)
    store.put(_record("a1"))
    assert store.get("a1") is not None  # still queued: found in the queue
    store.flush()
    store.close()
    again = ResultStore(url)  # another process, the same database
    record = again.get("a1")
    assert record is not None
    assert record.answer == {"time_s": 1.0}
    assert record.request["body"] == {"shape": "slab"}
    assert again.get("missing") is None
    again.close()


def test_nothing_is_overwritten(url: str) -> None:
    store = ResultStore(url)
    store.put(_record("same", answer=1.0))
    store.flush()
    store.put(_record("same", answer=2.0))
    store.flush()
    record = store.get("same")
    assert record is not None and record.answer == {"time_s": 1.0}
    store.close()


def test_retention_prunes_old_records(url: str) -> None:
    store = ResultStore(url, retention_days=1.0)
    store.put(_record("old", age_days=10))
    store.put(_record("new"))
    store.flush()
    assert store.prune() == 1
    assert store.get("old") is None
    assert store.get("new") is not None
    store.close()


def test_a_failed_write_is_tried_again(url: str, monkeypatch: pytest.MonkeyPatch) -> None:
    """The database failing once (a dropped connection, a full disk) loses no record: the
    batch goes back to the front of the queue, the writer drops its connection and lives on."""
    store = ResultStore(url)
    real_insert = store._insert
    failures: list[int] = []

    def fail_once(batch: list[StoredResult]) -> None:
        if not failures:
            failures.append(len(batch))
            raise sa.exc.OperationalError("INSERT", {}, Exception("connection lost"))
        real_insert(batch)

    monkeypatch.setattr(store, "_insert", fail_once)
    for i in range(5):
        store.put(_record(f"r{i}"))
    store.flush()
    assert failures == [5]
    store.close()
    reader = ResultStore(url)
    assert [reader.get(f"r{i}") is not None for i in range(5)] == [True] * 5
    reader.close()


def test_a_batch_larger_than_one_statement_is_written_whole(url: str) -> None:
    """More records than one statement takes (several statements, in order)."""
    store = ResultStore(url)
    for i in range(300):
        store.put(_record(f"many{i}", answer=float(i)))
    store.flush()
    store.close()
    reader = ResultStore(url)
    found = [reader.get(f"many{i}") for i in range(300)]
    assert [r.answer["time_s"] if r else None for r in found] == [float(i) for i in range(300)]
    reader.close()


def test_several_writers_share_one_database(url: str) -> None:
    """Two stores (as two worker processes would) writing at once lose nothing."""
    stores = [ResultStore(url), ResultStore(url)]
    stores[0].get("warm-up")  # create the table before the race

    def write(store: ResultStore, prefix: str) -> None:
        for i in range(200):
            store.put(_record(f"{prefix}{i}"))
        store.flush()

    threads = [
        threading.Thread(target=write, args=(s, p)) for s, p in zip(stores, "xy", strict=True)
    ]
    for thread in threads:
        thread.start()
    for thread in threads:
        thread.join()
    reader = ResultStore(url)
    assert all(reader.get(f"{p}{i}") is not None for p in "xy" for i in range(200))
    for store in (*stores, reader):
        store.close()


def _id(request: SettlingRequest, version: str = "1") -> str:
    return result_id(canonical_request(request), version)


def test_result_id_is_a_hash_of_the_request_and_version() -> None:
    """The id follows the validated request (so the order keys came in does not matter), not
    the caller's reference or the store flag, and changes with the version."""
    case = slab_request()
    reordered = dict(reversed(list(case.items())))
    request = SettlingRequest.model_validate(case)
    assert _id(request) == _id(SettlingRequest.model_validate(reordered))
    tagged = SettlingRequest.model_validate({**case, "ref": "LIMS-7", "store": True})
    assert _id(tagged) == _id(request)
    assert _id(request, "1") != _id(request, "2")
    tighter = SettlingRequest.model_validate({**case, "accuracy": 1e-5})
    assert _id(request) != _id(tighter)


EXAMPLES = Path(__file__).resolve().parent.parent / "openapi_examples"


@pytest.mark.parametrize(
    "example", sorted(EXAMPLES.glob("settling-time.*.json")), ids=lambda path: path.stem
)
def test_the_canonical_request_reads_back_as_the_same_request(example: Path) -> None:
    """The store keeps the canonical request: read back it must be the same request (same
    canonical JSON, so the same id), for every example the API documents."""
    request = SettlingRequest.model_validate(json.loads(example.read_text())["value"])
    canonical = canonical_request(request)
    again = SettlingRequest.model_validate_json(canonical)
    assert canonical_request(again) == canonical
    assert again == request.model_copy(update={"ref": None, "store": False})
