"""The two versions the service carries, and which is which.

``API_VERSION`` is the version of the API contract (``info.version`` of openapi/v1/openapi.json):
it changes only when the contract does (an addition raises the minor number; a breaking change
gets a new ``/v2`` path beside ``/v1``). ``PACKAGE_VERSION`` is the version of the firstcycle
software (``pyproject.toml``): it changes with every release of the code, including releases
that leave the contract as it is.
"""

from __future__ import annotations

from importlib.metadata import PackageNotFoundError, version

API_VERSION = "1.0.0"

try:
    PACKAGE_VERSION = version("firstcycle")
except PackageNotFoundError:  # run from a source tree that was never installed
    PACKAGE_VERSION = "unknown"
