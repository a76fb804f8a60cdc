"""Structured request logs: one JSON line per request, each with a request id, and never a secret.

Every response carries ``X-Request-Id``: the caller's own id when it sent a plain one (letters, digits,
``.``, ``_``, ``-``; at most 64), a new random one otherwise, so a client, a proxy and our logs can name
the same request. The line holds the id, method, path (without the query string), status, duration,
client address and, once a key was accepted, the account's handle. Headers and bodies are never logged,
so neither are API keys. Other ``rigbench`` log records (warnings, errors with their traceback) are
written as JSON lines too, with the id of the request they happened in.
"""

from __future__ import annotations

import json
import logging
import re
import sys
import time
import uuid
from contextvars import ContextVar
from datetime import UTC, datetime

from starlette.types import ASGIApp, Message, Receive, Scope, Send

HEADER = b"x-request-id"
_PLAIN_ID = re.compile(rb"[A-Za-z0-9._-]{1,64}")

access_log = logging.getLogger("rigbench.access")
current_request_id: ContextVar[str | None] = ContextVar("rigbench_request_id", default=None)


class JsonLines(logging.Formatter):
    """A log record as one JSON object on one line."""

    def format(self, record: logging.LogRecord) -> str:
        line = {
            "time": datetime.fromtimestamp(record.created, UTC).isoformat(timespec="milliseconds"),
            "level": record.levelname.lower(),
            "logger": record.name,
            "message": record.getMessage(),
            "pid": record.process,  # which worker of `rigbench serve --workers N` wrote it
        }
        fields = getattr(record, "fields", None)
        if fields:
            line.update(fields)
        elif (request_id := current_request_id.get()) is not None:
            line["request_id"] = request_id
        if record.exc_info:
            line["exception"] = self.formatException(record.exc_info)
        return json.dumps(line, ensure_ascii=False, default=str)


class _StderrHandler(logging.StreamHandler):
    """Writes to whatever ``sys.stderr`` is at the time (test runners swap it)."""

    def __init__(self) -> None:
        super().__init__()
        self.setFormatter(JsonLines())

    @property
    def stream(self):  # type: ignore[override]
        return sys.stderr

    @stream.setter
    def stream(self, _value) -> None:
        pass


def configure() -> None:
    """JSON lines on stderr for the ``rigbench`` loggers (idempotent: once per process)."""
    root = logging.getLogger("rigbench")
    if not any(isinstance(h, _StderrHandler) for h in root.handlers):
        root.addHandler(_StderrHandler())
    if root.level == logging.NOTSET:
        root.setLevel(logging.INFO)


class RequestLog:
    """ASGI middleware: request id in and out, one log line per request."""

    def __init__(self, app: ASGIApp, enabled: bool = True):
        self.app = app
        self.enabled = enabled

    async def __call__(self, scope: Scope, receive: Receive, send: Send) -> None:
        if scope["type"] != "http":
            await self.app(scope, receive, send)
            return
        request_id = None
        for name, value in scope["headers"]:
            if name == HEADER:
                if _PLAIN_ID.fullmatch(value):
                    request_id = value.decode()
                break
        request_id = request_id or uuid.uuid4().hex
        state = scope.setdefault("state", {})
        state["request_id"] = request_id
        token = current_request_id.set(request_id)
        start = time.perf_counter()
        status = 500
        encoded = request_id.encode()

        started = False

        async def send_with_id(message: Message) -> None:
            nonlocal status, started
            if message["type"] == "http.response.start":
                status, started = message["status"], True
                message["headers"] = [*message.get("headers", ()), (HEADER, encoded)]
            await send(message)

        try:
            await self.app(scope, receive, send_with_id)
            # Kept on an exception: Starlette's outermost error middleware logs it after we return.
            current_request_id.reset(token)
        except Exception:
            if not started:
                # The 500 answer, sent here so that it carries the request id too; Starlette's
                # error middleware then sees a started answer, logs the exception and sends nothing.
                body = json.dumps({
                    "type": "about:blank", "title": "Internal Server Error", "status": 500,
                    "detail": "an unexpected error occurred; it has been logged", "instance": scope["path"],
                }).encode()
                await send_with_id({"type": "http.response.start", "status": 500, "headers": [
                    (b"content-type", b"application/problem+json"), (b"content-length", str(len(body)).encode())]})
                await send({"type": "http.response.body", "body": body})
            raise
        finally:
            if self.enabled and access_log.isEnabledFor(logging.INFO):
                client = scope.get("client")
                client = (state.get("client_address"),) if state.get("client_address") else client
                # A record made here, not by access_log.info(), which would walk the stack to find
                # the calling line: a cost on every request for a field the JSON line never shows.
                fields = {
                    "request_id": request_id,
                    "method": scope["method"],
                    "path": scope["path"],
                    "status": status,
                    "duration_ms": round((time.perf_counter() - start) * 1000, 3),
                    "client": client[0] if client else None,
                    "account": state.get("account"),
                }
                access_log.handle(access_log.makeRecord(
                    access_log.name, logging.INFO, "", 0, "request", (), None, extra={"fields": fields}
                ))
