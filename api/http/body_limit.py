"""Request body size limit (413 as a problem document), enforced while the body streams in, and a
body read timeout (408): a client that sends its body slower than ``timeout_s`` in all is cut off."""

from __future__ import annotations

import asyncio
import json
import time

from starlette.exceptions import HTTPException
from starlette.types import ASGIApp, Message, Receive, Scope, Send

from api.http.problems import MEDIA_TYPE


class BodyTooLarge(HTTPException):
    # An HTTPException so FastAPI's body reader lets it through (it turns other errors into a 400).
    def __init__(self, limit: int):
        super().__init__(413, f"the request body is larger than this server's limit of {limit} bytes")


class BodyTooSlow(HTTPException):
    def __init__(self, timeout_s: float):
        super().__init__(408, f"the request body did not arrive within {timeout_s:g} s")


class BodySizeLimit:
    """Refuse bodies over ``max_bytes``: at once from Content-Length, or as soon as the stream passes it."""

    def __init__(self, app: ASGIApp, max_bytes: int, timeout_s: float | None = None):
        self.app = app
        self.max_bytes = max_bytes
        self.timeout_s = timeout_s

    async def __call__(self, scope: Scope, receive: Receive, send: Send) -> None:
        if scope["type"] != "http":
            await self.app(scope, receive, send)
            return
        length = dict(scope.get("headers") or ()).get(b"content-length")
        if length is not None and (not length.isdigit() or int(length) > self.max_bytes):
            await self._refuse(scope, send)
            return
        seen = 0
        complete = False
        deadline = None if self.timeout_s is None else time.monotonic() + self.timeout_s

        async def limited() -> Message:
            nonlocal seen, complete
            if complete or deadline is None:  # after the body: waiting for a disconnect is fine
                message = await receive()
            else:
                try:
                    message = await asyncio.wait_for(receive(), max(0.0, deadline - time.monotonic()))
                except TimeoutError:
                    raise BodyTooSlow(self.timeout_s) from None
            if message["type"] == "http.request":
                seen += len(message.get("body", b""))
                if seen > self.max_bytes:
                    raise BodyTooLarge(self.max_bytes)
                complete = not message.get("more_body", False)
            return message

        started = False

        async def tracked(message: Message) -> None:
            nonlocal started
            started = started or message["type"] == "http.response.start"
            await send(message)

        try:
            await self.app(scope, limited, tracked)
        except (BodyTooLarge, BodyTooSlow) as exc:
            # Raised where no exception handler runs (a middleware reading the body itself).
            if started:
                raise
            await self._refuse(scope, send, exc.status_code, exc.detail)

    async def _refuse(self, scope: Scope, send: Send, status: int = 413, detail: str | None = None) -> None:
        body = json.dumps({
            "type": "about:blank", "title": "Content Too Large" if status == 413 else "Request Timeout",
            "status": status,
            "detail": detail or f"the request body is larger than this server's limit of {self.max_bytes} bytes",
            "instance": scope.get("path", ""), "errors": [],
        }).encode()
        await send({"type": "http.response.start", "status": status, "headers": [
            (b"content-type", MEDIA_TYPE.encode()), (b"content-length", str(len(body)).encode()),
            (b"connection", b"close"),
        ]})
        await send({"type": "http.response.body", "body": body})
