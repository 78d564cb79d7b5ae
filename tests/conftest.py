"""Shared test fixtures.

The on-disk reference-data cache goes to a per-session temporary folder so that
tests never depend on (or pollute) a developer's own cache, nor write into the
home directory: CVDFILTER_CACHE_DIR is set here for this process and every
command the tests start (a value in the caller's environment is overridden).
"""

from __future__ import annotations

import os
import tempfile

import pytest

_CACHE = tempfile.mkdtemp(prefix="cvdfilter-test-cache-")
os.environ["CVDFILTER_CACHE_DIR"] = _CACHE
os.environ.pop("CVDFILTER_CACHE", None)


@pytest.fixture
def write(tmp_path):
    """Write text to a file in tmp_path and return its path."""

    def _write(name: str, text: str):
        p = tmp_path / name
        p.write_text(text)
        return p

    return _write


def pytest_sessionfinish(session, exitstatus):
    """Remove the session's cache folder (tests that need a cache of their own make one in tmp_path)."""
    import shutil

    shutil.rmtree(_CACHE, ignore_errors=True)
