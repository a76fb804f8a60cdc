"""What the service believes about a request before any route sees it (pure ASGI, a few dict
operations per request):

* **the client's address**: the peer's, unless the peer is one of ``RIGBENCH_TRUSTED_PROXIES``;
  then the nearest address in ``X-Forwarded-For`` that is not a trusted proxy. Rate limits and the
  request log use it (``scope["state"]["client_address"]``). With no trusted proxy (the default) a
  forged ``X-Forwarded-For`` changes nothing.
* **the origin absolute links are built from** (``Location``, the club page's links and embed
  snippet, SVG links): ``RIGBENCH_PUBLIC_URL`` when set; else the ``Host`` header when it is in
  ``RIGBENCH_ALLOWED_HOSTS``; else the server's own address. An arbitrary ``Host`` never reaches a
  link.
* **HEAD** is answered as the GET of the same URL without the body (same status and headers).
"""

from __future__ import annotations

import ipaddress
from urllib.parse import urlsplit

from starlette.types import ASGIApp, Message, Receive, Scope, Send


class Edge:
    def __init__(self, app: ASGIApp, *, trusted_proxies: list[str], public_url: str, allowed_hosts: list[str]):
        self.app = app
        self.proxies = [ipaddress.ip_network(p, strict=False) for p in trusted_proxies]
        self.public = urlsplit(public_url) if public_url else None
        self.allowed = {h.lower() for h in allowed_hosts}

    def _trusted(self, address: str) -> bool:
        if not self.proxies:
            return False
        try:
            ip = ipaddress.ip_address(address)
        except ValueError:
            return False
        return any(ip in network for network in self.proxies)

    def client_address(self, scope: Scope) -> str:
        client = scope.get("client")
        address = client[0] if client else "unknown"
        if not self._trusted(address):
            return address
        forwarded = [value.decode("latin-1") for name, value in scope["headers"] if name == b"x-forwarded-for"]
        hops = [hop.strip() for value in forwarded for hop in value.split(",") if hop.strip()]
        for hop in reversed(hops):  # nearest first; the first one not a trusted proxy is the client
            if not self._trusted(hop):
                return hop[:64]
        return hops[0][:64] if hops else address

    def _host(self, scope: Scope, headers: list[tuple[bytes, bytes]]) -> bytes:
        if self.public is not None:
            return self.public.netloc.encode()
        given = next((value for name, value in headers if name == b"host"), b"")
        text = given.decode("latin-1").lower()
        if text and (text in self.allowed or text.rsplit(":", 1)[0] in self.allowed):
            return given
        server = scope.get("server")
        if not server:
            return b"localhost"
        host, port = server[0], server[1]
        if port is None or (scope.get("scheme"), port) in (("http", 80), ("https", 443)):
            return (f"[{host}]" if ":" in host else host).encode()
        host = f"[{host}]" if ":" in host else host
        return f"{host}:{port}".encode()

    async def __call__(self, scope: Scope, receive: Receive, send: Send) -> None:
        if scope["type"] != "http":
            await self.app(scope, receive, send)
            return
        headers = [(n, v) for n, v in scope["headers"] if n != b"host"]
        headers.append((b"host", self._host(scope, scope["headers"])))
        scope = {**scope, "headers": headers}
        if self.public is not None:
            scope["scheme"] = self.public.scheme
            if self.public.path:
                scope["root_path"] = self.public.path
        scope.setdefault("state", {})["client_address"] = self.client_address(scope)
        if scope["method"] != "HEAD":
            await self.app(scope, receive, send)
            return
        scope["method"] = "GET"

        async def without_body(message: Message) -> None:
            if message["type"] == "http.response.body":
                if message.get("more_body", False):
                    return
                message = {"type": "http.response.body", "body": b"", "more_body": False}
            await send(message)

        await self.app(scope, receive, without_body)
