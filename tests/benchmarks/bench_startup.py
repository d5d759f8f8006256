"""Time to ready and the first requests after it, with a real server (run on demand).

    NUMBA_CACHE_DIR=/tmp/empty-cache python tests/benchmarks/bench_startup.py   # cold cache
    python tests/benchmarks/bench_startup.py                                    # warm cache
    FIRSTCYCLE_WARMUP=false python tests/benchmarks/bench_startup.py            # no warm-up

Starts ``firstcycle serve`` on 127.0.0.1, polls ``/healthz`` and ``/readyz`` every 0.1 s and
prints when each first answered 200, then sends each simulating demo request twice (first and
second time) and prints the worker's resident memory. Nothing is asserted; a timed assertion
would only measure the machine. Traffic stays on 127.0.0.1.
"""

from __future__ import annotations

import json
import re
import shutil
import socket
import subprocess
import sys
import tempfile
import time
import urllib.request
from pathlib import Path

from service.examples import CLEARANCE_REQUESTS, DIP_REQUESTS, PEAK_REQUESTS, STATISTICS_REQUESTS

REQUESTS = (
    ("/v1/inrush/peak", PEAK_REQUESTS["northgate_main_unit"]),
    ("/v1/clearance", CLEARANCE_REQUESTS["northgate_main_unit"]),
    ("/v1/generator-dip", DIP_REQUESTS["northgate_backfeed"]),
    ("/v1/inrush/statistics", STATISTICS_REQUESTS["northgate_backfeed"]),
)


def main() -> None:
    exe = shutil.which("firstcycle", path=str(Path(sys.executable).parent)) or "firstcycle"
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        port = s.getsockname()[1]
    base = f"http://127.0.0.1:{port}"
    log = tempfile.NamedTemporaryFile("w+", suffix=".log")  # noqa: SIM115
    t0 = time.perf_counter()
    server = subprocess.Popen(
        [exe, "serve", "--port", str(port), "--log-level", "warning"], stderr=log
    )
    health = ready = None
    try:
        while ready is None and time.perf_counter() - t0 < 900 and server.poll() is None:
            for path in ("/healthz", "/readyz"):
                try:
                    with urllib.request.urlopen(base + path, timeout=2):
                        if path == "/healthz" and health is None:
                            health = time.perf_counter() - t0
                        if path == "/readyz":
                            ready = time.perf_counter() - t0
                except OSError:
                    pass
            time.sleep(0.1)
        if ready is None or health is None:
            sys.exit("the server did not become ready")
        m = re.search(r'"warmup_s": ([0-9.]+)', Path(log.name).read_text())
        print(f"/healthz after {health:.2f} s, /readyz after {ready:.2f} s"
              + (f" (warm-up {m.group(1)} s)" if m else ""))  # fmt: skip
        for path, body in REQUESTS:
            req = urllib.request.Request(
                base + path, json.dumps(body).encode(), {"content-type": "application/json"}
            )
            times = []
            for _ in range(2):
                t = time.perf_counter()
                urllib.request.urlopen(req, timeout=600).read()
                times.append(time.perf_counter() - t)
            print(f"{path:24s} first {times[0]:6.2f} s   second {times[1]:6.2f} s")
        status = Path(f"/proc/{server.pid}/status").read_text()
        rss = re.search(r"VmRSS:\s+(\d+)", status)
        print(f"worker RSS {int(rss.group(1)) / 1024:.0f} MiB" if rss else "")
    finally:
        server.terminate()
        server.wait(timeout=20)


if __name__ == "__main__":
    main()
