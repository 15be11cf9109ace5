"""What storing an answer adds to the request that asks for it (run by hand).

The same quick series case is answered in process through the endpoint's own path, without and
with a store (SQLite in a temporary folder, written behind), in alternating rounds so that the
machine's drift falls on both alike; each round's median per request is compared. The writer
thread's work competes for the interpreter while it runs, so it is part of what is measured.
"""

from __future__ import annotations

import json
import statistics
import sys
import tempfile
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent.parent))

from service.api.cases import to_case
from service.api.estimates import _respond
from service.models import SettlingRequest
from service.solver import Solver
from service.store import ResultStore
from service.units import Units

ROUNDS = 15
PER_ROUND = 400


def main() -> None:
    example = Path(__file__).resolve().parent.parent / "openapi_examples"
    case = json.loads((example / "settling-time.bead-release.json").read_text())["value"]
    solver, units = Solver(), Units()
    store = ResultStore.in_folder(Path(tempfile.mkdtemp()))
    requests = [
        SettlingRequest.model_validate({**case, "store": True, "accuracy": 1e-4 * (1 + i * 1e-6)})
        for i in range(PER_ROUND)
    ]
    translations = [to_case(request, units) for request in requests]

    def round_ms(kept: ResultStore | None) -> float:
        samples = []
        for request, translation in zip(requests, translations, strict=True):
            started = time.perf_counter()
            _respond(request, translation, solver, kept)
            samples.append(time.perf_counter() - started)
        return statistics.median(samples) * 1e3

    round_ms(None)
    round_ms(store)
    differences = []
    for _ in range(ROUNDS):
        plain, stored = round_ms(None), round_ms(store)
        differences.append((stored - plain) * 1e3)
        store.flush()
    store.close()
    print(
        f"storing adds {statistics.median(differences):.1f} µs per answer (median of {ROUNDS} "
        f"rounds; range {min(differences):.1f} to {max(differences):.1f} µs)"
    )


if __name__ == "__main__":
    main()
