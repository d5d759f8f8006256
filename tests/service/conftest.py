"""Fixtures for the HTTP layer: an in-process client of a fresh app."""

from __future__ import annotations

import os
from collections.abc import Iterator

import pytest
from fastapi.testclient import TestClient

from service.app import create_app
from service.settings import get_settings

# The kernel warm-up runs once per process at app start; here the tests compile what they use,
# and tests/service/test_warmup.py checks the warm-up itself.
os.environ.setdefault("FIRSTCYCLE_WARMUP", "false")


@pytest.fixture
def client() -> Iterator[TestClient]:
    get_settings.cache_clear()
    with TestClient(create_app(), raise_server_exceptions=False) as c:
        yield c
    get_settings.cache_clear()
