"""Compile every numba kernel into its cache (``cache=True``, beside each module) before pytest.

On a clean clone the cache is empty, and each pytest-xdist worker would compile the kernels it
meets first, the same kernels in both workers at once. .ci/check runs this script in the
background beside ruff and mypy instead, so the workers load the compiled kernels from the cache.

It sends the service's own warm-up requests (service.warmup: every kernel signature a demo
request reaches, tests/service/test_warmup.py checks that). Nothing is checked here: the tests
check the answers.
"""

from __future__ import annotations

import os
import sys
import time

# a first call that compiles may outlast the request deadline on a loaded machine
os.environ.setdefault("FIRSTCYCLE_REQUEST_DEADLINE_S", "3600")
os.environ.setdefault("FIRSTCYCLE_WARMUP", "false")
os.environ.setdefault("OMP_NUM_THREADS", "1")

from service import warmup
from service.app import create_app


def main() -> int:
    t0 = time.perf_counter()
    app = create_app()
    warmup.run(app)
    print(f"kernels compiled into numba's cache in {time.perf_counter() - t0:.0f} s")
    return 0


if __name__ == "__main__":
    sys.exit(main())
