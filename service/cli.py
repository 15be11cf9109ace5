"""The ``mixclock`` command: ``mixclock serve`` starts the service; ``mixclock solve`` answers one
case from a file or standard input, as the API would."""

from __future__ import annotations

import argparse
import json
import sys
from collections.abc import Sequence
from typing import Any, TextIO

from pydantic import ValidationError

from service.settings import get_settings

__all__ = ["main"]

# Exit codes of ``mixclock solve``: answered, the case was refused, the input was not JSON.
_ANSWERED, _REFUSED, _UNREADABLE = 0, 2, 3


def main(argv: Sequence[str] | None = None) -> int:
    settings = get_settings()
    parser = argparse.ArgumentParser(prog="mixclock", description="mixclock settling-time service")
    commands = parser.add_subparsers(dest="command", required=True)
    serve = commands.add_parser("serve", help="start the HTTP service")
    serve.add_argument("--host", default=settings.host)
    serve.add_argument("--port", type=int, default=settings.port)
    serve.add_argument("--workers", type=int, default=settings.workers)
    solve = commands.add_parser(
        "solve",
        help="answer one settling-time case (the JSON of POST /v1/settling-time)",
        description="Answer one case: a readable summary, or the API's JSON with --json. A "
        "refused case prints the API's messages, each with the JSON Pointer of its field, and "
        f"exits {_REFUSED}; input that is not JSON exits {_UNREADABLE}.",
    )
    solve.add_argument("case", nargs="?", default="-", help="a JSON file, or - for standard input")
    solve.add_argument("--json", action="store_true", help="print the API's JSON response")
    arguments = parser.parse_args(argv)
    if arguments.command == "solve":
        return _solve(arguments.case, arguments.json, sys.stdout, sys.stderr)
    import os
    import tempfile

    import uvicorn

    if arguments.workers > 1 and not os.environ.get("PROMETHEUS_MULTIPROC_DIR"):
        # every worker keeps its metrics in files here, and /metrics adds them up
        os.environ["PROMETHEUS_MULTIPROC_DIR"] = tempfile.mkdtemp(prefix="mixclock-metrics-")
    uvicorn.run(
        "service.app:app",
        host=arguments.host,
        port=arguments.port,
        workers=arguments.workers,
        log_level=settings.log_level,
    )
    return 0


def _solve(source: str, as_json: bool, out: TextIO, err: TextIO) -> int:
    """Read, validate, translate and answer one case, as POST /v1/settling-time does."""
    from service.api.cases import to_case
    from service.api.estimates import settling_response
    from service.api.problems import validation_items
    from service.errors import MixclockError
    from service.models import SettlingRequest
    from service.solver import Solver
    from service.units import Units

    try:
        if source == "-":
            text = sys.stdin.read()
        else:
            with open(source, encoding="utf-8") as stream:
                text = stream.read()
        document = json.loads(text)
    except (OSError, UnicodeDecodeError, json.JSONDecodeError) as exc:
        err.write(f"mixclock: cannot read a JSON case from {source!r}: {exc}\n")
        return _UNREADABLE
    try:
        request = SettlingRequest.model_validate(document)
        translation = to_case(request, Units())
        answer = Solver().settle(translation.case)
    except ValidationError as exc:
        # located as FastAPI locates a request body's errors
        errors = [{**error, "loc": ("body", *error["loc"])} for error in exc.errors()]
        items = validation_items(errors, document)
        return _refused([(item.pointer, item.detail) for item in items], as_json, out, err)
    except MixclockError as exc:
        return _refused([(exc.pointer, exc.detail)], as_json, out, err)
    response = settling_response(translation, answer)
    if as_json:
        out.write(response.model_dump_json(indent=2) + "\n")
    else:
        out.write(_summary(response.model_dump()))
    return _ANSWERED


def _refused(problems: list[tuple[str, str]], as_json: bool, out: TextIO, err: TextIO) -> int:
    if as_json:
        errors = [{"pointer": pointer, "detail": detail} for pointer, detail in problems]
        out.write(json.dumps({"errors": errors}, indent=2, ensure_ascii=False) + "\n")
    else:
        err.write("mixclock: the case was refused:\n")
        for pointer, detail in problems:
            err.write(f"  {pointer or '/'}: {detail}\n")
    return _REFUSED


def _summary(response: dict[str, Any]) -> str:
    """The answer as a few lines of text for a terminal."""
    method = response["method"]
    lines = [
        f"Settled after {response['time_text']} ({response['time_s']:.6g} s), "
        f"{response['time_definition'].replace('_', ' ')}.",
        f"Fourier number {response['fourier_number']:.4g} on Lc = "
        f"{response['characteristic_length_m']:.4g} m ({response['length_convention']}); "
        f"D = {response['diffusivity_m2_per_s']:.4g} m²/s.",
        f"Method: {method['engine']} ({method['path']}), resolution {method['resolution']}, "
        f"estimated relative error {method['estimated_relative_error']:.2g}.",
        "Measures then: "
        + ", ".join(
            f"{name} {value:.4g}"
            for name, value in response["measures"].items()
            if value is not None
        ),
    ]
    schedule = response.get("schedule")
    if schedule:
        lines.append(
            f"Schedule: ∫D dt = {schedule['integrated_diffusivity_m2']:.4g} m²"
            + (
                f", met in segment {schedule['met_in_segment']}"
                if schedule["met_in_segment"] is not None
                else f", the soak needs {schedule['extra_soak_s']:.6g} s more"
            )
        )
    for title, entries in (
        ("Warnings", [f"{w['code']}: {w['message']}" for w in response["warnings"]]),
        ("Assumptions", response["assumptions"]),
        ("Cautions", response["cautions"]),
    ):
        if entries:
            lines.append(f"{title}:")
            lines.extend(f"  - {entry}" for entry in entries)
    return "\n".join(lines) + "\n"


if __name__ == "__main__":
    raise SystemExit(main())
