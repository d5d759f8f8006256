"""Schemathesis's command line against a real uvicorn on 127.0.0.1: every operation, all checks
(but positive_data_acceptance, see test_fuzz.py), a fixed random seed, a bounded number of examples.
"""

from __future__ import annotations

import shutil
import subprocess
import sys
from pathlib import Path


def test_schemathesis_cli_all_checks(live_server: str, tmp_path: Path) -> None:
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
                exe, "run", live_server + "/v1/openapi.json", selector, "inrush_peak_batch",
                "--checks", "all", "--exclude-checks", excluded,
                "--max-examples", "10", "--seed", "20261201", "--workers", "1",
                # the contract is checked here, not the timing (see test_fuzz.py)
                "--request-timeout", "120",
            ],
            capture_output=True, text=True, timeout=900, check=False, cwd=tmp_path,
        )  # fmt: skip
        assert out.returncode == 0, out.stdout[-4000:] + out.stderr[-2000:]
