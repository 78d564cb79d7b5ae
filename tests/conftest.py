"""Shared test fixtures.

The on-disk reference-data cache goes to a per-session temporary folder so that
tests never depend on (or pollute) a developer's own cache.
"""

from __future__ import annotations

import os
import tempfile

import pytest

_CACHE = tempfile.mkdtemp(prefix="cvdfilter-test-cache-")
os.environ.setdefault("CVDFILTER_CACHE_DIR", _CACHE)


@pytest.fixture
def write(tmp_path):
    """Write text to a file in tmp_path and return its path."""

    def _write(name: str, text: str):
        p = tmp_path / name
        p.write_text(text)
        return p

    return _write
