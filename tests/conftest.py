"""Shared fixtures: a real uvicorn serving the app on a free loopback port."""

from __future__ import annotations

import os
import socket
import subprocess
import sys
import time
import urllib.request
from collections.abc import Iterator

import pytest

# The kernel warm-up runs once per process when an app starts (schemathesis starts one while
# collecting tests/contract); the tests compile what they use instead, and
# tests/service/test_warmup.py checks the warm-up itself.
os.environ.setdefault("FIRSTCYCLE_WARMUP", "false")
# The tests check answers, not timing: on a loaded machine, and with kernels compiling on first
# use (no warm-up above), a legal heavy case may compute past the 30 s request deadline and
# answer 503. The deadline is lifted for every app the tests build; the deadline itself is
# tested with its own setting in tests/service/test_bounded_work.py.
os.environ.setdefault("FIRSTCYCLE_REQUEST_DEADLINE_S", "3600")


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        port: int = s.getsockname()[1]
        return port


@pytest.fixture(scope="session")
def live_server() -> Iterator[str]:
    """Base URL of the service run by uvicorn on 127.0.0.1 for the whole session."""
    port = _free_port()
    # The contract is checked against this server, not the timing (deadline lifted, see above).
    env = {**os.environ, "FIRSTCYCLE_REQUEST_DEADLINE_S": "3600"}
    proc = subprocess.Popen(
        [sys.executable, "-m", "uvicorn", "service.app:app", "--host", "127.0.0.1",
         "--port", str(port), "--log-level", "warning"],
        stderr=subprocess.DEVNULL,
        env=env,
    )  # fmt: skip
    url = f"http://127.0.0.1:{port}"
    try:
        for _ in range(300):
            try:
                with urllib.request.urlopen(url + "/readyz", timeout=1) as r:
                    if r.status == 200:
                        break
            except OSError:
                time.sleep(0.2)
        yield url
    finally:
        proc.terminate()
        proc.wait(timeout=10)
