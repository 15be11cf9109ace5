"""Optional API-key guard for the /v1 endpoints (stored results included).

A pure ASGI middleware, so an unguarded service pays nothing and a guarded one a header
look-up: requests under ``/v1/`` must carry the key in ``X-API-Key`` (compared in constant
time), or get a 401 problem. The health check, the API documents and the metrics stay open for
load balancers and scrapers.
"""

from __future__ import annotations

import hmac
import json
from typing import Any

__all__ = ["API_KEY_HEADER", "ApiKeyGuard"]

API_KEY_HEADER = "X-API-Key"
_HEADER = API_KEY_HEADER.lower().encode()
_GUARDED_PREFIX = "/v1/"


class ApiKeyGuard:
    def __init__(self, app: Any, key: str) -> None:
        self.app = app
        self._key = key.encode()

    async def __call__(self, scope: dict[str, Any], receive: Any, send: Any) -> None:
        if scope["type"] == "http" and scope["path"].startswith(_GUARDED_PREFIX):
            given = next((v for k, v in scope["headers"] if k == _HEADER), None)
            if given is None or not hmac.compare_digest(given, self._key):
                await _refuse(send, missing=given is None)
                return
        await self.app(scope, receive, send)


async def _refuse(send: Any, missing: bool) -> None:
    detail = (
        f"this service needs its API key in the {API_KEY_HEADER} header"
        if missing
        else f"the key in the {API_KEY_HEADER} header is not this service's"
    )
    body = json.dumps(
        {
            "type": "https://mixclock.invalid/problems/unauthorized",
            "title": "Unauthorized",
            "status": 401,
            "detail": detail,
            "errors": [],
        }
    ).encode()
    await send(
        {
            "type": "http.response.start",
            "status": 401,
            "headers": [
                (b"content-type", b"application/problem+json"),
                (b"content-length", str(len(body)).encode()),
                (b"www-authenticate", f'ApiKey header="{API_KEY_HEADER}"'.encode()),
            ],
        }
    )
    await send({"type": "http.response.body", "body": body})
