"""The ``mixclock`` command: ``mixclock serve`` starts the service."""

from __future__ import annotations

import argparse
from collections.abc import Sequence

from service.settings import get_settings

__all__ = ["main"]


def main(argv: Sequence[str] | None = None) -> int:
    settings = get_settings()
    parser = argparse.ArgumentParser(prog="mixclock", description="mixclock settling-time service")
    commands = parser.add_subparsers(dest="command", required=True)
    serve = commands.add_parser("serve", help="start the HTTP service")
    serve.add_argument("--host", default=settings.host)
    serve.add_argument("--port", type=int, default=settings.port)
    serve.add_argument("--workers", type=int, default=settings.workers)
    arguments = parser.parse_args(argv)
    if arguments.command == "serve":
        import uvicorn

        uvicorn.run(
            "service.app:app",
            host=arguments.host,
            port=arguments.port,
            workers=arguments.workers,
            log_level=settings.log_level,
        )
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
