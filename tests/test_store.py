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
from service.store import ResultStore, StoredResult, result_id
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


def test_result_id_is_a_hash_of_the_request_and_version() -> None:
    """The id follows the validated request (so the order keys came in does not matter), not
    the caller's reference or the store flag, and changes with the version."""
    case = slab_request()
    reordered = dict(reversed(list(case.items())))
    request = SettlingRequest.model_validate(case)
    assert result_id(request, "1") == result_id(SettlingRequest.model_validate(reordered), "1")
    tagged = SettlingRequest.model_validate({**case, "ref": "LIMS-7", "store": True})
    assert result_id(tagged, "1") == result_id(request, "1")
    assert result_id(request, "1") != result_id(request, "2")
    tighter = SettlingRequest.model_validate({**case, "accuracy": 1e-5})
    assert result_id(request, "1") != result_id(tighter, "1")
