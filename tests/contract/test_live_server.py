"""Schemathesis's command line against a real uvicorn on 127.0.0.1: every operation, all checks
(but positive_data_acceptance, see test_fuzz.py), a fixed random seed, a bounded number of examples.

The server's work budget (the ``fuzz_server`` fixture of tests/conftest.py) is a tenth of the
default's (4 M winding-steps, about 0.4 s of CPU): a heavier generated request is answered with
the budget's 422, which the checks hold to the contract like any answer, and the run stays within
the suite's CI time (at the default budget it took 6.5 min of the 2-core machine). The heaviest
legal requests at the default limits are run by tests/benchmarks/bench_heaviest.py, the budget
itself is tested in tests/service/test_bounded_work.py. Five examples an operation: the
in-process fuzz (test_fuzz.py) generates more of each; this run adds the real server's transport
(uvicorn, the middleware, the network stack). Its phases are the schema's examples, fuzzing and
the stateful links; the coverage phase (schemathesis's deterministic boundary and negative
values, about 17 700 cases here, 170 s of the 200 s this test took) runs in process in
test_fuzz.py through the same app and middleware, so over the network it repeated that.
"""

from __future__ import annotations

import shutil
import subprocess
import sys
from pathlib import Path


def test_schemathesis_cli_all_checks(fuzz_server: str, tmp_path: Path) -> None:
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
                exe, "run", fuzz_server + "/v1/openapi.json", selector, "inrush_peak_batch",
                "--checks", "all", "--exclude-checks", excluded,
                "--max-examples", "5", "--seed", "20261201", "--workers", "1",
                "--phases", "examples,fuzzing,stateful",
                # the contract is checked here, not the timing (see test_fuzz.py)
                "--request-timeout", "120",
            ],
            capture_output=True, text=True, timeout=900, check=False, cwd=tmp_path,
        )  # fmt: skip
        assert out.returncode == 0, out.stdout[-4000:] + out.stderr[-2000:]
