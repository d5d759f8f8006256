"""Load test on loopback: a mix of operations for a bounded time (run on demand).

    python tests/benchmarks/bench_load.py [--seconds 60] [--connections 64] [--workers 2]

Starts the service (uvicorn, N workers) on 127.0.0.1, then runs one ``wrk`` (Debian package
``wrk``) per operation at the same time, the connections split between them, so the load is a
mix and each operation gets its own latency percentiles. Prints req/s, p50/p99 per operation,
errors and non-2xx counts, the total rate and its 2xx part, and the resident memory of each
worker at start (every worker has logged the end of its warm-up, no request sent yet), after
half the run (at most a minute) and at the end. Targets: zero errors and zero unexpected
non-2xx; analytic peak p99 under 50 ms; worker memory growth from start to end under 5 % (the
warm-up before ready compiles everything, so load should add nothing but its buffers). Nothing
is asserted; traffic stays on 127.0.0.1.
"""

from __future__ import annotations

import argparse
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

from service.examples import ENVELOPE_REQUESTS, PEAK_REQUESTS, SHEET_REQUESTS

MIX = {
    "peak (analytic)": ("POST", "/v1/inrush/peak",
                        dict(PEAK_REQUESTS["northgate_lighting"], method="analytic"), 4),
    "peak (simulated, delta)": ("POST", "/v1/inrush/peak", PEAK_REQUESTS["northgate_main_unit"],
                                1),
    "peak (simulated, wye)": ("POST", "/v1/inrush/peak", PEAK_REQUESTS["northgate_backfeed"], 1),
    "envelope": ("POST", "/v1/inrush/envelope", ENVELOPE_REQUESTS["northgate_lighting"], 1),
    "sheet peak.txt": ("GET", SHEET_REQUESTS["northgate_main_unit"][1], None, 1),
}  # fmt: skip

LUA = """
wrk.method = "{method}"
wrk.headers["Content-Type"] = "application/json"
{body}
done = function(summary, latency, requests)
  io.write(string.format("JSON {{\\"requests\\": %d, \\"non2xx\\": %d, \\"errors\\": %d, "
    .. "\\"p50_us\\": %d, \\"p99_us\\": %d, \\"duration_us\\": %d}}\\n",
    summary.requests, summary.errors.status, summary.errors.connect + summary.errors.read
    + summary.errors.write + summary.errors.timeout,
    latency:percentile(50), latency:percentile(99), summary.duration))
end
"""


def _worker_rss_kb(pid: int) -> dict[int, int]:
    """Resident memory of each worker process (the children of ``pid``, or ``pid`` alone)."""
    children = Path(f"/proc/{pid}/task/{pid}/children")
    pids = [int(p) for p in children.read_text().split()] if children.exists() else []
    out = {}
    for p in pids or [pid]:
        status = Path(f"/proc/{p}/status")
        cmdline = Path(f"/proc/{p}/cmdline")
        if cmdline.exists() and b"resource_tracker" in cmdline.read_bytes():
            continue  # multiprocessing's helper, not a worker
        if status.exists():
            m = re.search(r"VmRSS:\s+(\d+)", status.read_text())
            out[p] = int(m.group(1)) if m else 0
    return out


def _mib(rss: dict[int, int]) -> str:
    return ", ".join(f"{kb / 1024:.1f}" for kb in rss.values()) + " MiB"


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--seconds", type=int, default=60)
    ap.add_argument("--connections", type=int, default=64)
    ap.add_argument("--workers", type=int, default=2)
    args = ap.parse_args()
    wrk = shutil.which("wrk")
    if wrk is None:
        sys.exit("wrk not found: apt-get install wrk")
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        port = s.getsockname()[1]
    base = f"http://127.0.0.1:{port}"
    log = tempfile.NamedTemporaryFile("w+", suffix=".log")  # noqa: SIM115
    server = subprocess.Popen(
        [sys.executable, "-m", "uvicorn", "service.app:app", "--host", "127.0.0.1", "--port",
         str(port), "--workers", str(args.workers), "--log-level", "warning",
         "--no-access-log"],
        stderr=log,
    )  # fmt: skip
    try:
        t0 = time.monotonic()
        while Path(log.name).read_text().count('"warm-up done"') < args.workers:
            if time.monotonic() - t0 > 900 or server.poll() is not None:
                sys.exit("the workers did not finish their warm-up")
            time.sleep(0.2)
        with urllib.request.urlopen(base + "/readyz", timeout=5) as r:
            assert r.status == 200
        print(f"every worker ready after {time.monotonic() - t0:.1f} s")
        rss_start = _worker_rss_kb(server.pid)
        weights = sum(w for *_, w in MIX.values())
        procs = {}
        tmp = Path(tempfile.mkdtemp())
        for name, (method, path, body, w) in MIX.items():
            script = tmp / f"{abs(hash(name))}.lua"
            lua_body = f"wrk.body = {json.dumps(json.dumps(body))}" if body else ""
            script.write_text(LUA.format(method=method, body=lua_body))
            conns = max(1, round(args.connections * w / weights))
            procs[name] = subprocess.Popen(
                [wrk, "-t1", f"-c{conns}", f"-d{args.seconds}s", "--timeout", "30s",
                 "-s", str(script), base + path],
                stdout=subprocess.PIPE, text=True,
            )  # fmt: skip
        mid = min(60, args.seconds // 2)
        time.sleep(mid)
        rss_mid = _worker_rss_kb(server.pid)
        results = {name: p.communicate()[0] for name, p in procs.items()}
        rss_end = _worker_rss_kb(server.pid)
    finally:
        server.terminate()
        server.wait(timeout=20)
    print(f"{args.seconds} s, {args.connections} connections, {args.workers} workers")
    total = answered = 0.0
    for name, text in results.items():
        m = re.search(r"^JSON (.*)$", text, re.M)
        if not m:
            print(f"{name}: no result\n{text}")
            continue
        r = json.loads(m.group(1))
        rate = r["requests"] / (r["duration_us"] / 1e6)
        total += rate
        # 503 busy answers are fast and count in the rate: the 2xx rate is the work done
        answered += (r["requests"] - r["non2xx"]) / (r["duration_us"] / 1e6)
        p50, p99 = r["p50_us"] / 1e3, r["p99_us"] / 1e3
        print(f"{name:26s} {rate:8.1f} req/s  p50 {p50:8.2f} ms  p99 {p99:8.2f} ms  "
              f"errors {r['errors']}  non-2xx {r['non2xx']}")  # fmt: skip
    print(f"total {total:.1f} req/s, of which 2xx {answered:.1f} req/s")
    print(f"worker RSS: start (ready) {_mib(rss_start)}; at {mid} s {_mib(rss_mid)}; "
          f"end {_mib(rss_end)}")  # fmt: skip
    for pid, start in rss_start.items():
        end = rss_end.get(pid, 0)
        growth = (end - start) / start * 100 if start else float("nan")
        print(f"worker {pid}: {growth:+.1f} % from ready to the end (target under 5 %)")


if __name__ == "__main__":
    main()
