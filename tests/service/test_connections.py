"""Connection hygiene against a real server (`firstcycle serve` on 127.0.0.1, raw sockets).

A body that never completes or trickles gets 408 within the body deadline; headers that never
complete get 408 and a closed connection within the header deadline; a chunked body over the
size limit gets 413 problem+json. Every loop and wait is bounded; traffic stays on loopback.
"""

from __future__ import annotations

import json
import os
import socket
import subprocess
import sys
import time
import urllib.request
from collections.abc import Iterator

import pytest

from service.examples import PEAK_REQUESTS

DEADLINE_S = 1.0  # body and header deadlines of the server under test
SLACK_S = 5.0  # scheduling slack on a busy 2-core machine


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return int(s.getsockname()[1])


@pytest.fixture(scope="module")
def server() -> Iterator[tuple[str, int]]:
    port = _free_port()
    env = {
        **os.environ,
        "FIRSTCYCLE_WARMUP": "false",
        "FIRSTCYCLE_BODY_TIMEOUT_S": str(DEADLINE_S),
        "FIRSTCYCLE_HEADER_TIMEOUT_S": str(DEADLINE_S),
        "FIRSTCYCLE_MAX_BODY_BYTES": "2048",
    }
    proc = subprocess.Popen(
        [sys.executable, "-m", "service.cli", "serve", "--port", str(port),
         "--log-level", "warning"],
        env=env, stderr=subprocess.DEVNULL,
    )  # fmt: skip
    try:
        for _ in range(300):
            try:
                with urllib.request.urlopen(f"http://127.0.0.1:{port}/readyz", timeout=1):
                    break
            except OSError:
                time.sleep(0.1)
        yield "127.0.0.1", port
    finally:
        proc.terminate()
        proc.wait(timeout=20)


def _read_all(sock: socket.socket, limit_s: float) -> tuple[bytes, float]:
    """Everything the server sends until it closes (or ``limit_s``), and when it closed."""
    t0 = time.monotonic()
    sock.settimeout(0.5)
    data = b""
    while time.monotonic() - t0 < limit_s:
        try:
            part = sock.recv(65536)
        except TimeoutError:
            continue
        except ConnectionResetError:  # cut off with a reset: closed all the same
            break
        if not part:
            break
        data += part
    return data, time.monotonic() - t0


def _head(path: str, extra: str) -> bytes:
    return (f"POST {path} HTTP/1.1\r\nHost: 127.0.0.1\r\nContent-Type: application/json\r\n"
            f"{extra}\r\n").encode()  # fmt: skip


def test_short_body_gets_408(server: tuple[str, int]) -> None:
    with socket.create_connection(server, timeout=5) as s:
        s.sendall(_head("/v1/inrush/peak", "Content-Length: 100\r\n") + b'{"transformer":')
        data, took = _read_all(s, DEADLINE_S + SLACK_S)
    assert data.startswith(b"HTTP/1.1 408"), data[:200]
    assert b"application/problem+json" in data
    assert took < DEADLINE_S + SLACK_S


def test_trickling_body_gets_408(server: tuple[str, int]) -> None:
    with socket.create_connection(server, timeout=5) as s:
        s.sendall(_head("/v1/inrush/peak", "Content-Length: 1000\r\n"))
        t0 = time.monotonic()
        data = b""
        reset = False
        for _ in range(int((DEADLINE_S + SLACK_S) / 0.2)):  # one byte every 0.2 s
            try:
                s.sendall(b" ")
            except OSError:  # closed by the server (a reset or a broken pipe)
                reset = True
                break
            s.settimeout(0.2)
            try:
                data += s.recv(65536)
            except TimeoutError:
                continue
            except ConnectionResetError:
                reset = True
                break
            if data:
                break
        more, _ = _read_all(s, SLACK_S)
        data += more
    # The server answers 408 and closes. A byte the client sends after that close is answered
    # with a TCP reset, and Linux then drops the 408 still unread in the client's buffer (RFC
    # 9293 section 3.10.7.4, a reset flushes the queues): the connection cut within the
    # deadline is what is checked then.
    assert data.startswith(b"HTTP/1.1 408") or (reset and not data), data[:200]
    assert time.monotonic() - t0 < DEADLINE_S + 2 * SLACK_S


@pytest.mark.parametrize(
    "sent",
    [b"", b"POST /v1/inrush/peak HTTP/1.1\r\nHost: 127.0.0.1\r\nContent-Le"],
    ids=["nothing", "half-headers"],
)
def test_unfinished_headers_are_cut_off(server: tuple[str, int], sent: bytes) -> None:
    with socket.create_connection(server, timeout=5) as s:
        s.sendall(sent)
        data, took = _read_all(s, DEADLINE_S + SLACK_S)
    assert data.startswith(b"HTTP/1.1 408"), data[:200]
    assert took < DEADLINE_S + SLACK_S  # closed by the server, not by the test's limit


def test_chunked_body_over_limit_gets_413(server: tuple[str, int]) -> None:
    chunk = b"x" * 1000
    body = b"".join(b"%x\r\n%s\r\n" % (len(chunk), chunk) for _ in range(3)) + b"0\r\n\r\n"
    with socket.create_connection(server, timeout=5) as s:
        s.sendall(_head("/v1/inrush/peak", "Transfer-Encoding: chunked\r\n") + body)
        data, _ = _read_all(s, SLACK_S)
    head, _, payload = data.partition(b"\r\n\r\n")
    assert head.startswith(b"HTTP/1.1 413"), data[:200]
    assert b"application/problem+json" in head
    assert json.loads(payload)["type"] == "urn:firstcycle:problem:body-too-large"


def test_normal_request_still_answers(server: tuple[str, int]) -> None:
    body = json.dumps({**PEAK_REQUESTS["northgate_lighting"], "method": "analytic"}).encode()
    with socket.create_connection(server, timeout=5) as s:
        s.sendall(
            _head("/v1/inrush/peak", f"Content-Length: {len(body)}\r\nConnection: close\r\n") + body
        )
        data, _ = _read_all(s, 30)
    assert data.startswith(b"HTTP/1.1 200"), data[:300]
