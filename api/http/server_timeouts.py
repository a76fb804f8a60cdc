"""A header read timeout for ``rigbench serve``: uvicorn closes idle keep-alive connections, but a
client that opens a connection and sends its headers slowly (or never finishes them) would hold it
open for ever. These protocol classes close a connection whose request headers are not complete
``RIGBENCH_HEADER_TIMEOUT_S`` after the connection opened or the previous answer was sent.

The body has its own timeout (api.http.body_limit). For a public deployment, run rigbench behind a
reverse proxy, which also buffers slow clients (README).
"""

from __future__ import annotations

import asyncio
import os

from uvicorn.protocols.http.h11_impl import H11Protocol

try:
    from uvicorn.protocols.http.httptools_impl import HttpToolsProtocol
except ImportError:  # httptools not installed: h11 only
    HttpToolsProtocol = H11Protocol

#: Read by each worker process (the protocol classes are built by uvicorn, not by us).
ENVIRONMENT = "RIGBENCH_HEADER_TIMEOUT_S"
DEFAULT_S = 10.0


def _timeout_s() -> float:
    try:
        return float(os.environ.get(ENVIRONMENT, DEFAULT_S))
    except ValueError:
        return DEFAULT_S


class _HeaderTimeout:
    """Mixed into a uvicorn protocol: a timer runs while the connection waits for headers."""

    _header_timer: asyncio.TimerHandle | None = None

    def _arm(self) -> None:
        if self._header_timer is None:
            self._header_timer = self.loop.call_later(_timeout_s(), self._headers_too_slow)

    def _waiting_for_headers(self) -> bool:
        return self.cycle is None or self.cycle.response_complete

    def _headers_too_slow(self) -> None:
        self._header_timer = None
        if self._waiting_for_headers() and not self.transport.is_closing():
            self.transport.close()

    def connection_made(self, transport) -> None:  # type: ignore[override]
        super().connection_made(transport)
        self._arm()

    def data_received(self, data: bytes) -> None:
        if self._waiting_for_headers():
            self._arm()  # a new request begins: its headers must be complete in time
        super().data_received(data)
        if not self._waiting_for_headers() and self._header_timer is not None:
            self._header_timer.cancel()
            self._header_timer = None

    def connection_lost(self, exc) -> None:  # type: ignore[override]
        if self._header_timer is not None:
            self._header_timer.cancel()
            self._header_timer = None
        super().connection_lost(exc)


class H11WithHeaderTimeout(_HeaderTimeout, H11Protocol):
    pass


class HttpToolsWithHeaderTimeout(_HeaderTimeout, HttpToolsProtocol):
    pass


def protocol() -> type:
    """The fastest protocol installed, with the header timeout."""
    try:
        import httptools  # noqa: F401
    except ImportError:
        return H11WithHeaderTimeout
    return HttpToolsWithHeaderTimeout


#: For ``uvicorn --http api.http.server_timeouts:HeaderTimeoutProtocol``.
HeaderTimeoutProtocol = protocol()
