"""Shared fixtures: a real uvicorn serving the app on a free loopback port."""

from __future__ import annotations

import contextlib
import os
import socket
import subprocess
import sys
import time
import urllib.request
from collections.abc import Iterator
from pathlib import Path

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


# The longest files, first in collection order (measured with --durations on the 2-core machine,
# longest first: the live-server schemathesis run, the in-process fuzz of every operation, the
# scipy references of the solver and of the generator, the service's consistency checks). Under
# .ci/check's `-n auto --dist loadfile --no-loadscope-reorder` xdist hands the files out in this
# order, so the long ones do not end the run on one worker. Only the order changes: every test
# still runs.
FIRST = (
    "tests/contract/test_live_server.py",
    "tests/contract/test_fuzz.py",
    "tests/references/test_solver_vs_scipy.py",
    "tests/references/test_generator_references.py",
    "tests/references/test_solver_vs_scipy_substeps.py",
    "tests/service/test_consistency.py",
    "tests/references/test_machine_vs_scipy.py",
    "tests/contract/test_generated_client.py",
    "tests/service/test_warmup.py",
)


def pytest_collection_modifyitems(config: pytest.Config, items: list[pytest.Item]) -> None:
    # pytest-xdist keys the tests it schedules and reports by node id: two items with one id run
    # and report as one, and the run still passes (schemathesis 4.32's parametrize under pytest
    # 9.2 gave every operation of a fuzz test the same id, and 20 of 22 fuzz tests never ran).
    seen: dict[str, int] = {}
    for item in items:
        seen[item.nodeid] = seen.get(item.nodeid, 0) + 1
    repeated = sorted(node for node, count in seen.items() if count > 1)
    if repeated:
        raise pytest.UsageError(
            f"{len(repeated)} test node ids are shared by several tests (under xdist only one "
            f"of each would run): {', '.join(repeated[:5])}"
        )
    rank = {path: n for n, path in enumerate(FIRST)}

    def key(item: pytest.Item) -> int:
        return rank.get(Path(item.path).relative_to(config.rootpath).as_posix(), len(FIRST))

    items.sort(key=key)  # stable: each file's tests, and the other files, keep their order


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        port: int = s.getsockname()[1]
        return port


@contextlib.contextmanager
def serve(extra_env: dict[str, str] | None = None) -> Iterator[str]:
    """Run the service under uvicorn on a free loopback port; yields its base URL."""
    port = _free_port()
    # The contract is checked against this server, not the timing (deadline lifted, see above).
    env = {**os.environ, "FIRSTCYCLE_REQUEST_DEADLINE_S": "3600", **(extra_env or {})}
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


@pytest.fixture(scope="session")
def live_server() -> Iterator[str]:
    """Base URL of the service run by uvicorn on 127.0.0.1 for the whole session."""
    with serve() as url:
        yield url


@pytest.fixture(scope="session")
def fuzz_server() -> Iterator[str]:
    """Like ``live_server``, with a tenth of the default work budget (tests/contract/
    test_live_server.py says why)."""
    with serve({"FIRSTCYCLE_MAX_REQUEST_STEPS": "4000000"}) as url:
        yield url
