"""Connection hygiene below the ASGI app: a deadline for the request line and headers.

uvicorn closes idle keep-alive connections (``timeout_keep_alive``) but starts no timer while a
request's headers are still arriving, so a client that opens a connection and sends nothing,
or half a header block, holds it for as long as it likes. :class:`HeaderDeadlineProtocol` is
uvicorn's httptools protocol with one timer: armed when a connection opens and when the next
request's first byte arrives, cleared when its headers are complete. When it fires, the client
gets ``408 Request Timeout`` and the connection is closed. The body has its own deadline in the
app (:class:`service.app.BodyGuard`). Behind a reverse proxy the proxy's own header timeout
does the same job earlier (see README).
"""

from __future__ import annotations

import asyncio

from uvicorn.protocols.http.httptools_impl import HttpToolsProtocol

from service.settings import get_settings

_TIMEOUT_RESPONSE = (
    b"HTTP/1.1 408 Request Timeout\r\n"
    b"content-type: text/plain; charset=utf-8\r\n"
    b"connection: close\r\n"
    b"content-length: 36\r\n\r\n"
    b"request headers not received in time"
)


class HeaderDeadlineProtocol(HttpToolsProtocol):
    """uvicorn's httptools protocol with a deadline for each request's headers."""

    _header_timer: asyncio.TimerHandle | None = None

    def _arm(self) -> None:
        if self._header_timer is None:
            timeout = get_settings().header_timeout_s
            self._header_timer = self.loop.call_later(timeout, self._header_deadline)

    def _disarm(self) -> None:
        if self._header_timer is not None:
            self._header_timer.cancel()
            self._header_timer = None

    def _header_deadline(self) -> None:
        self._header_timer = None
        if not self.transport.is_closing():
            self.transport.write(_TIMEOUT_RESPONSE)
            self.transport.close()

    def connection_made(self, transport: asyncio.Transport) -> None:  # type: ignore[override]
        super().connection_made(transport)
        self._arm()

    def connection_lost(self, exc: Exception | None) -> None:
        self._disarm()
        super().connection_lost(exc)

    def on_message_begin(self) -> None:
        self._arm()
        super().on_message_begin()

    def on_headers_complete(self) -> None:
        self._disarm()
        super().on_headers_complete()
