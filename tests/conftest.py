"""Shared fixtures.

Every test gets its own empty result cache (``COSTCHECK_CACHE_DIR`` in a temporary folder,
inherited by CLI subprocesses), so no test reads a developer's cache or another test's
entries: a cached result can never hide a change a test is meant to see.
"""

from __future__ import annotations

import pytest


@pytest.fixture(autouse=True)
def private_result_cache(tmp_path_factory, monkeypatch):
    directory = tmp_path_factory.mktemp("result-cache")
    monkeypatch.setenv("COSTCHECK_CACHE_DIR", str(directory))
    return directory
