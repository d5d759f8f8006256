"""Compile every numba kernel into its cache (``cache=True``, beside each module) before pytest.

On a clean clone the cache is empty, and each pytest-xdist worker would compile the kernels it
meets first, the same kernels in both workers at once. .ci/check runs this script in the
background beside ruff and mypy instead, so the workers load the compiled kernels from the cache.

It sends the service's own warm-up requests (service.warmup: every kernel signature a demo
request reaches) and one network energisation, whose kernel call differs from the generator
dip's in one argument's type (a writable step array, not a read-only broadcast), so numba
compiles it as a second signature. Nothing is checked here: the tests check the answers.
"""

from __future__ import annotations

import os
import sys
import time

# a first call that compiles may outlast the request deadline on a loaded machine
os.environ.setdefault("FIRSTCYCLE_REQUEST_DEADLINE_S", "3600")
os.environ.setdefault("FIRSTCYCLE_WARMUP", "false")
os.environ.setdefault("OMP_NUM_THREADS", "1")

from fastapi.testclient import TestClient

from service import warmup
from service.app import create_app
from service.examples import NETWORK_REQUESTS


def main() -> int:
    t0 = time.perf_counter()
    app = create_app()
    warmup.run(app)
    client = TestClient(app)  # no lifespan: no second warm-up thread
    body = next(iter(NETWORK_REQUESTS.values()))
    status = client.post("/v1/network-energization", json=body).status_code
    if status != 200:
        print(f"kernel warm-up: /v1/network-energization answered {status}", file=sys.stderr)
        return 1
    print(f"kernels compiled into numba's cache in {time.perf_counter() - t0:.0f} s")
    return 0


if __name__ == "__main__":
    sys.exit(main())
