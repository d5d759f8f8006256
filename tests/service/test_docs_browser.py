"""The interactive docs work offline: headless Chromium against a real uvicorn on 127.0.0.1.

Chromium records every request it makes in a NetLog; the test asserts the operations are
listed on the page and that no request went anywhere but the loopback live_server. CI installs
Debian's ``chromium`` (.ci/run); elsewhere the test is skipped when no browser is present.
"""

from __future__ import annotations

import json
import os
import shutil
import subprocess
from pathlib import Path
from urllib.parse import urlparse

import pytest

BROWSER = shutil.which("chromium") or shutil.which("chromium-browser")
pytestmark = pytest.mark.skipif(
    BROWSER is None and not os.environ.get("CI"), reason="no Chromium on this machine"
)


def test_docs_page_lists_operations_offline(live_server: str, tmp_path: Path) -> None:
    assert BROWSER is not None, "CI must install Debian's chromium (.ci/run)"
    netlog = tmp_path / "netlog.json"
    out = subprocess.run(
        [
            BROWSER, "--headless", "--no-sandbox", "--disable-gpu",
            "--disable-background-networking", "--disable-component-update", "--no-first-run",
            "--disable-sync", "--disable-quic", f"--user-data-dir={tmp_path / 'profile'}",
            f"--log-net-log={netlog}", "--virtual-time-budget=15000", "--dump-dom",
            live_server + "/docs",
        ],
        capture_output=True, text=True, timeout=120, check=False,
    )  # fmt: skip
    dom = out.stdout
    for op in ("/v1/inrush/peak", "/v1/inrush/envelope", "/v1/sheet/inrush/peak.txt"):
        assert op in dom, f"{op} not rendered; stderr: {out.stderr[-500:]}"
    text = netlog.read_text(encoding="utf-8").rstrip()
    try:
        events = json.loads(text)
    except json.JSONDecodeError:  # a log cut short when the browser exits: close it
        events = json.loads(text.rstrip(",") + "]}")
    # Requests made on behalf of the page: those whose network partition (the top-frame site)
    # or initiator is the docs origin. Chromium's own service traffic (time sync, sign-in
    # probes; refused by this machine's closed network) belongs to no page and is not counted.
    site = "http://127.0.0.1"
    page: set[str] = set()
    for e in events.get("events", []):
        p = e.get("params")
        if not (isinstance(p, dict) and isinstance(p.get("url"), str)):
            continue
        nik = str(p.get("network_isolation_key", ""))
        initiator = str(p.get("initiator", ""))
        if nik.startswith(site) or initiator.startswith(site):
            page.add(p["url"])
    assert any("/static/swagger-ui/swagger-ui-bundle.js" in u for u in page)
    # the docs load the contract as served to this deployment (/docs/openapi.json: the key
    # scheme shown only when keys are configured), not the committed /v1/openapi.json
    assert any(u.endswith("/docs/openapi.json") for u in page)
    outside = {u for u in page if urlparse(u).hostname != "127.0.0.1"}
    assert not outside, f"the page requested outside loopback: {sorted(outside)[:5]}"
