"""Schemathesis's command line against a real uvicorn on 127.0.0.1: every operation, all checks
(but positive_data_acceptance, see test_fuzz.py), a fixed random seed, a bounded number of examples.
"""

from __future__ import annotations

import shutil
import socket
import subprocess
import sys
import time
import urllib.request
from collections.abc import Iterator
from pathlib import Path

import pytest


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        port: int = s.getsockname()[1]
        return port


@pytest.fixture(scope="module")
def base_url() -> Iterator[str]:
    port = _free_port()
    proc = subprocess.Popen(
        [sys.executable, "-m", "uvicorn", "service.app:app", "--host", "127.0.0.1",
         "--port", str(port), "--log-level", "warning"],
        stderr=subprocess.DEVNULL,
    )  # fmt: skip
    url = f"http://127.0.0.1:{port}"
    try:
        for _ in range(150):
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


def test_schemathesis_cli_all_checks(base_url: str, tmp_path: Path) -> None:
    exe = shutil.which("schemathesis", path=str(Path(sys.executable).parent)) or shutil.which(
        "schemathesis"
    )
    assert exe, "schemathesis is a test dependency"
    runs = (
        ("--exclude-operation-id", "positive_data_acceptance"),
        # a batch answers 200 with a per-item problem for an invalid case, by design
        ("--include-operation-id", "positive_data_acceptance,negative_data_rejection"),
    )
    for selector, excluded in runs:
        out = subprocess.run(
            [
                exe, "run", base_url + "/v1/openapi.json", selector, "inrush_peak_batch",
                "--checks", "all", "--exclude-checks", excluded,
                "--max-examples", "10", "--seed", "20261201", "--workers", "1",
            ],
            capture_output=True, text=True, timeout=900, check=False, cwd=tmp_path,
        )  # fmt: skip
        assert out.returncode == 0, out.stdout[-4000:] + out.stderr[-2000:]
