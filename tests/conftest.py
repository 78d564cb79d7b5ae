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


def _assert_no_jump(labs, what):
    """Mean and max CIEDE2000 between neighbours; no step larger than 3x a neighbouring step (plus a floor).

    The floors (0.05 mean, 0.3 max) keep rounding-sized steps from counting as jumps; the jump this guards
    against was 10-15 mean, 28-30 max between steps of 0.01-0.2 (docs/models.md, section 5).
    """
    import colour
    import numpy as np

    d = [colour.delta_E(a, b, method="CIE 2000") for a, b in zip(labs[:-1], labs[1:])]
    for stat, floor in ((np.mean, 0.05), (np.max, 0.3)):
        steps = [float(stat(x)) for x in d]
        for i, step in enumerate(steps):
            neighbours = steps[max(i - 1, 0):i] + steps[i + 1:i + 2]
            assert step <= 3.0 * max(neighbours) + floor, (what, stat.__name__, steps)


@pytest.fixture(scope="session")
def no_jump():
    """The continuity rule for rendering and simulation defaults (session-scoped: usable under hypothesis)."""
    return _assert_no_jump


def pytest_sessionfinish(session, exitstatus):
    """Remove the session's cache folder (tests that need a cache of their own make one in tmp_path)."""
    import shutil

    shutil.rmtree(_CACHE, ignore_errors=True)
