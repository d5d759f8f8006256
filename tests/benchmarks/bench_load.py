"""Load test on loopback: a mix of operations for a bounded time (run on demand).

    python tests/benchmarks/bench_load.py [--seconds 60] [--connections 64] [--workers 2]

Starts the service (uvicorn, N workers) on 127.0.0.1, then runs one ``wrk`` (Debian package
``wrk``) per operation at the same time, the connections split between them, so the load is a
mix and each operation gets its own latency percentiles. Prints req/s, p50/p99 per operation,
errors and non-2xx counts, and the resident memory of the server processes at start, after the
first minute (or half the run) and at the end. Targets (issue "Integrators and operations"):
zero errors and zero unexpected non-2xx; analytic peak p99 under 50 ms; memory growth from
minute one to the end under 10 %. Nothing is asserted; traffic stays on 127.0.0.1.
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


def _rss_kb(pid: int) -> int:
    total = 0
    pids = [pid]
    children = Path(f"/proc/{pid}/task/{pid}/children")
    if children.exists():
        pids += [int(p) for p in children.read_text().split()]
    for p in pids:
        status = Path(f"/proc/{p}/status")
        if status.exists():
            m = re.search(r"VmRSS:\s+(\d+)", status.read_text())
            total += int(m.group(1)) if m else 0
    return total


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
    server = subprocess.Popen(
        [sys.executable, "-m", "uvicorn", "service.app:app", "--host", "127.0.0.1", "--port",
         str(port), "--workers", str(args.workers), "--log-level", "warning",
         "--no-access-log"],
        stderr=subprocess.DEVNULL,
    )  # fmt: skip
    try:
        for _ in range(300):
            try:
                with urllib.request.urlopen(base + "/readyz", timeout=1):
                    break
            except OSError:
                time.sleep(0.2)
        for _, (method, path, body, _w) in MIX.items():  # warm every worker's kernels
            for _ in range(4 * args.workers):
                data = json.dumps(body).encode() if body else None
                headers = {"content-type": "application/json"}
                req = urllib.request.Request(base + path, data=data, method=method, headers=headers)
                urllib.request.urlopen(req, timeout=60).read()
        rss_start = _rss_kb(server.pid)
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
        rss_mid = _rss_kb(server.pid)
        results = {name: p.communicate()[0] for name, p in procs.items()}
        rss_end = _rss_kb(server.pid)
    finally:
        server.terminate()
        server.wait(timeout=20)
    print(f"{args.seconds} s, {args.connections} connections, {args.workers} workers")
    total = 0.0
    for name, text in results.items():
        m = re.search(r"^JSON (.*)$", text, re.M)
        if not m:
            print(f"{name}: no result\n{text}")
            continue
        r = json.loads(m.group(1))
        rate = r["requests"] / (r["duration_us"] / 1e6)
        total += rate
        p50, p99 = r["p50_us"] / 1e3, r["p99_us"] / 1e3
        print(f"{name:26s} {rate:8.1f} req/s  p50 {p50:8.2f} ms  p99 {p99:8.2f} ms  "
              f"errors {r['errors']}  non-2xx {r['non2xx']}")  # fmt: skip
    print(f"total {total:.1f} req/s")
    growth = (rss_end - rss_mid) / rss_mid * 100 if rss_mid else float("nan")
    print(f"server RSS: start {rss_start / 1024:.1f} MiB, at {mid} s {rss_mid / 1024:.1f} MiB, "
          f"end {rss_end / 1024:.1f} MiB ({growth:+.1f} % from {mid} s to the end)")  # fmt: skip


if __name__ == "__main__":
    main()
