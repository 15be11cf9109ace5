"""What storing an answer adds to it (run by hand: python benchmarks/store.py).

Two figures:

1. Through the application, in process (the ASGI call itself, no network, so that the
   machine's network stack adds no noise): blocks of 1000 distinct quick series requests
   without ``store``, with it, and without it again, in turn, ten times over, on one
   application whose store is SQLite in a temporary folder written behind by its thread.
   Blocks rather than single requests, so that whatever the writer thread costs the answers
   while it works falls on the stored block that gave it the work; the third block is the
   control, its difference from the first the machine's own drift (and whatever the writing
   leaves behind it). Reported: the median over the rounds of the time per answer a block
   adds, with the quartiles. The answering thread is kept busy all the time, the worst case
   for the writer, which must take the interpreter from it; over HTTP with one connection the
   server idles between requests and the writer mostly works then (benchmarks/http.sh).
   Two references each run in a process of their own: one that never stores (its unstored
   answers), and one that makes the id and the record but drops the record instead of
   queueing it (what storing costs without the writing).
2. The writer's own work per record, as the CPU time of the thread that inserts them
   (``time.thread_time``, untouched by what else the machine does), for a batch of the size a
   worker answering 1000 stored requests a second gathers between two wakes, and a full batch.
"""

from __future__ import annotations

import asyncio
import json
import statistics
import subprocess
import sys
import tempfile
import time
from collections.abc import MutableMapping
from datetime import UTC, datetime
from pathlib import Path
from typing import Any

sys.path.insert(0, str(Path(__file__).resolve().parent.parent))

from service.app import create_app
from service.settings import Settings
from service.store import _BATCH, _WAKE_S, ResultStore, StoredResult

ROUNDS = 10
BLOCK = 1000
# Records a writer gathers between two wakes at 1000 stored answers a second, and a full batch.
BATCHES = (round(1000 * _WAKE_S), _BATCH)
EXAMPLE = Path(__file__).resolve().parent.parent / "openapi_examples"


async def through_the_app(
    case: dict[str, Any], mode: str = "write"
) -> tuple[list[float], list[float], float, bytes]:
    """Per round: µs an answer a stored block adds, and a second unstored block (control);
    the median time of an unstored answer; an answer's JSON. ``mode``: "write" (as served),
    "discard" (the id and the record made, the record dropped instead of queued: what
    storing costs without the writing) or "never" (every block unstored: a process whose
    writer never starts)."""
    app = create_app(Settings(data_dir=Path(tempfile.mkdtemp())))
    if mode == "discard":
        setattr(app.state.store, "put", lambda record: None)  # noqa: B010 (an instance's own)
    never_store = mode == "never"
    answers: list[bytes] = []

    async def call(body: bytes) -> None:
        async def receive() -> MutableMapping[str, Any]:
            return {"type": "http.request", "body": body, "more_body": False}

        async def send(message: MutableMapping[str, Any]) -> None:
            if message["type"] == "http.response.start" and message["status"] != 200:
                raise RuntimeError(f"status {message['status']}")
            if message["type"] == "http.response.body" and not answers:
                answers.append(message["body"])

        scope = {
            "type": "http",
            "asgi": {"version": "3.0"},
            "http_version": "1.1",
            "method": "POST",
            "scheme": "http",
            "path": "/v1/settling-time",
            "raw_path": b"/v1/settling-time",
            "query_string": b"",
            "root_path": "",
            "headers": [(b"content-type", b"application/json"), (b"host", b"bench")],
            "client": ("127.0.0.1", 1),
            "server": ("127.0.0.1", 80),
        }
        await app(scope, receive, send)

    async def block(first: int, store: bool) -> float:
        bodies = [
            json.dumps(
                {**case, "store": store, "accuracy": 1e-4 * (1 + (first + i) * 1e-9)}
            ).encode()
            for i in range(BLOCK)
        ]
        started = time.perf_counter()
        for body in bodies:
            await call(body)
        return (time.perf_counter() - started) / BLOCK * 1e6

    added, control, plain = [], [], []
    async with app.router.lifespan_context(app):
        await block(0, False)  # warm both paths
        await block(BLOCK, not never_store)
        for number in range(ROUNDS):
            first = (number + 2) * 3 * BLOCK
            before = await block(first, False)
            stored = await block(first + BLOCK, not never_store)
            after = await block(first + 2 * BLOCK, False)
            added.append(stored - before)
            control.append(after - before)
            plain.append(before)
    return added, control, statistics.median(plain), answers[0]


def writer_part(answer_json: str, request_json: str, size: int) -> float:
    """The inserting thread's CPU time per record (µs) for batches of ``size`` new records."""
    store = ResultStore.in_folder(Path(tempfile.mkdtemp()))
    now = datetime.now(UTC)

    def batch(start: int) -> list[StoredResult]:
        return [
            StoredResult(f"{start + i:032x}", "settling", "bench", now, request_json, answer_json)
            for i in range(size)
        ]

    store._insert(batch(0))  # open the database and warm the statement
    batches = max(20, 4000 // size)
    spent = 0.0
    for number in range(1, batches + 1):
        records = batch(number * size)
        started = time.thread_time()
        store._insert(records)
        spent += time.thread_time() - started
    store.close()
    return spent / (batches * size) * 1e6


def main() -> None:
    case = json.loads((EXAMPLE / "settling-time.bead-release.json").read_text())["value"]
    if "--mode" in sys.argv:  # a reference, run in a process of its own
        added, _, plain, _ = asyncio.run(through_the_app(case, sys.argv[-1]))
        print(f"{plain:.1f} {statistics.median(added):.1f}")
        return

    def in_own_process(mode: str) -> tuple[float, float]:
        done = subprocess.run(
            [sys.executable, __file__, "--mode", mode], capture_output=True, text=True, check=True
        )
        plain, added = done.stdout.split()
        return float(plain), float(added)

    never, _ = in_own_process("never")
    _, discarded = in_own_process("discard")
    added, control, plain, answer = asyncio.run(through_the_app(case))
    print(
        f"an unstored answer through the app: median {plain:.0f} µs beside stored ones, "
        f"{never:.0f} µs in a process that never stores"
    )
    for label, values in (("storing adds", added), ("control (unstored again)", control)):
        quartiles = statistics.quantiles(values, n=4)
        print(
            f"{label}: {statistics.median(values):.1f} µs an answer (quartiles "
            f"{quartiles[0]:.1f} to {quartiles[2]:.1f}; {ROUNDS} rounds of {BLOCK})"
        )
    print(
        f"the id and the record alone (record dropped, not written; own process): adds "
        f"{discarded:.1f} µs, so the writing's share is {statistics.median(added) - discarded:.1f}"
    )
    request = json.dumps(case)
    for size in BATCHES:
        per_record = writer_part(answer.decode(), request, size)
        print(f"writer: {per_record:.1f} µs of its thread's CPU a record, in batches of {size}")


if __name__ == "__main__":
    main()
