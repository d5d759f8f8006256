"""HTTP overhead of POST /v1/inrush/peak (analytic) against a trivial endpoint of the same app.

    python tests/benchmarks/bench_http.py [--requests 2000]

Starts uvicorn on 127.0.0.1 (a free port), sends the same number of sequential keep-alive
requests to GET /healthz and to POST /v1/inrush/peak with method "analytic", and prints p50 and
p99 latencies and their ratios (target: overhead ratio <= 2). Nothing is asserted.
"""

from __future__ import annotations

import argparse
import http.client
import json
import socket
import subprocess
import sys
import time

import numpy as np

from service.examples import PEAK_REQUESTS


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        port: int = s.getsockname()[1]
        return port


def _wait(port: int, timeout: float = 60.0) -> None:
    end = time.monotonic() + timeout
    while time.monotonic() < end:
        try:
            c = http.client.HTTPConnection("127.0.0.1", port, timeout=2)
            c.request("GET", "/readyz")
            if c.getresponse().status == 200:
                return
        except OSError:
            time.sleep(0.2)
    raise RuntimeError("server did not start")


def _run(port: int, method: str, path: str, body: bytes | None, n: int) -> np.ndarray:
    conn = http.client.HTTPConnection("127.0.0.1", port, timeout=30)
    headers = {"content-type": "application/json"} if body else {}
    out = np.empty(n)
    for k in range(n):
        t0 = time.perf_counter()
        conn.request(method, path, body=body, headers=headers)
        resp = conn.getresponse()
        resp.read()
        out[k] = time.perf_counter() - t0
        if resp.status != 200:
            raise RuntimeError(f"{path}: {resp.status}")
    return out


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--requests", type=int, default=2000)
    args = ap.parse_args()
    port = _free_port()
    server = subprocess.Popen(
        [sys.executable, "-m", "uvicorn", "service.app:app", "--host", "127.0.0.1",
         "--port", str(port), "--log-level", "warning"],
    )  # fmt: skip
    try:
        _wait(port)
        req = dict(PEAK_REQUESTS["northgate_main_unit"], method="analytic")
        body = json.dumps(req).encode()
        _run(port, "POST", "/v1/inrush/peak", body, 50)  # warm up
        _run(port, "GET", "/healthz", None, 50)
        base = _run(port, "GET", "/healthz", None, args.requests)
        peak = _run(port, "POST", "/v1/inrush/peak", body, args.requests)
    finally:
        server.terminate()
        server.wait(timeout=10)
    for name, arr in (("GET /healthz", base), ("POST /v1/inrush/peak (analytic)", peak)):
        print(f"{name:34s} p50 {np.percentile(arr, 50) * 1e3:7.3f} ms"
              f"   p99 {np.percentile(arr, 99) * 1e3:7.3f} ms")  # fmt: skip
    r50 = np.percentile(peak, 50) / np.percentile(base, 50)
    r99 = np.percentile(peak, 99) / np.percentile(base, 99)
    print(f"overhead ratio p50 {r50:.2f}, p99 {r99:.2f} (target <= 2)")


if __name__ == "__main__":
    main()
