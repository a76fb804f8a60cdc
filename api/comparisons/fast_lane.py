"""The hot route's own lane: an anonymous JSON comparison goes straight to the route function.

``POST /v1/comparisons`` is the route a club page or a script calls most. FastAPI's request machinery
costs about as much as the comparison of a few rigs: route matching, the content type parsed as a mail
header, dependency solving (the optional key, the request), the exception-handling layers. This ASGI
middleware, the innermost of the app's own (inside the request log, CORS and the body size limit),
takes a request that needs none of it — no ``Authorization`` header, no query string, a JSON body with
a ``Content-Length`` of at most :data:`MAX_BODY_BYTES`, an answer in JSON — reads the body, validates it
exactly as FastAPI would (``json.loads``, then :class:`~api.schemas.ComparisonRequest`) and calls
:func:`~api.comparisons.routes.create_comparison` itself, with no caller (what the key dependency gives
a request without a key).

Everything else goes on to the app untouched. So does any request the lane cannot answer — a body
that does not parse or validate, a refused comparison, any exception — with the body it has read
replayed, so that every error comes from the route and its handlers, word for word. The lane has no
side effect before it answers (an anonymous inline comparison reads nothing and counts nothing), so
handing on is safe. tests/api/comparisons/test_fast_lane.py checks that both lanes answer alike.
"""

from __future__ import annotations

import inspect
import json

from starlette.requests import Request
from starlette.types import ASGIApp, Message, Receive, Scope, Send

from api.http.negotiation import prefers_csv

PATH = "/v1/comparisons"

#: Larger bodies (hundreds of rigs) take the ordinary way: the lane saves little on them.
MAX_BODY_BYTES = 256 * 1024


def _plain_json(value: bytes) -> bool:
    media = value.split(b";", 1)[0].strip().lower()
    return media == b"application/json"


class ComparisonFastLane:
    """ASGI middleware: answers eligible ``POST /v1/comparisons`` requests by calling the route directly."""

    def __init__(self, app: ASGIApp):
        self.app = app

    async def __call__(self, scope: Scope, receive: Receive, send: Send) -> None:
        if not (scope["type"] == "http" and scope["path"] == PATH and scope["method"] == "POST"
                and not scope.get("query_string")):
            await self.app(scope, receive, send)
            return
        length = content_type = accept = None
        for name, value in scope["headers"]:
            if name == b"authorization":
                await self.app(scope, receive, send)
                return
            if name == b"content-length":
                length = value
            elif name == b"content-type":
                content_type = value
            elif name == b"accept":
                accept = value
        if (length is None or not length.isdigit() or int(length) > MAX_BODY_BYTES
                or content_type is None or not _plain_json(content_type)
                or (accept is not None and prefers_csv(accept.decode("latin-1")))):
            await self.app(scope, receive, send)
            return
        body, complete = await _read_body(receive)
        if not complete:
            return  # the client went away
        request = Request(scope, receive)
        response = await _answer(request, body)
        if response is None:
            await self.app(scope, _replay(body, receive), send)
            return
        await response(scope, receive, send)


async def _read_body(receive: Receive) -> tuple[bytes, bool]:
    chunks = []
    while True:
        message = await receive()
        if message["type"] == "http.disconnect":
            return b"", False
        chunks.append(message.get("body", b""))
        if not message.get("more_body", False):
            return b"".join(chunks), True


#: The route's parameters the lane knows how to give. Should the route take anything more (a new
#: dependency), the lane stands aside and every request goes the ordinary way.
ROUTE_PARAMETERS = ("body", "request", "caller")


_checked: dict[object, bool] = {}  # route function -> whether the lane may call it (checked once)


def _route():
    from api.comparisons.routes import create_comparison

    usable = _checked.get(create_comparison)
    if usable is None:
        usable = _checked[create_comparison] = (
            tuple(inspect.signature(create_comparison).parameters) == ROUTE_PARAMETERS
        )
    return create_comparison if usable else None


async def _answer(request: Request, body: bytes):
    """The route's response, or None when the ordinary way must answer (and explain)."""
    from api.schemas import ComparisonRequest

    create_comparison = _route()
    if create_comparison is None:
        return None

    try:
        parsed = ComparisonRequest.model_validate(json.loads(body))
    except Exception:  # not JSON, invalid, or worse: the ordinary way answers it as it would anyway
        return None
    try:
        return await create_comparison(body=parsed, request=request, caller=None)
    except Exception:  # the route's handlers say what went wrong, through the ordinary way
        return None


def _replay(body: bytes, receive: Receive) -> Receive:
    """A receive that gives the already-read body once, then whatever the client sends next."""
    given = False

    async def again() -> Message:
        nonlocal given
        if not given:
            given = True
            return {"type": "http.request", "body": body, "more_body": False}
        return await receive()

    return again
