"""The on-disk reference cache and the in-process memo (cvdfilter.spectra.cache).

Checks: only reference data reach the disk (never a user's curve or a result on
it), the key follows library versions and the package's code, arrays and
observers handed out are read-only, the location and the switches are the
documented ones, old key folders are evicted, and `cvdfilter cache info|clear`.
"""

from __future__ import annotations

import json
import os
import pathlib
import subprocess
import sys
import tempfile

import numpy as np
import pytest
from typer.testing import CliRunner

from cvdfilter.cli.app import app
from cvdfilter.spectra import cache

runner = CliRunner()


def _env(tmp_path, **extra):
    env = {k: v for k, v in os.environ.items() if not k.startswith("CVDFILTER_")}
    env.update({"CVDFILTER_CACHE_DIR": str(tmp_path / "cache"), **extra})
    return env


def _run(args, env):
    r = subprocess.run([sys.executable, "-m", "cvdfilter", *args], env=env, capture_output=True, text=True,
                       timeout=600)
    assert r.returncode == 0, r.stderr
    return r


def _cache_files(tmp_path) -> set[str]:
    return {p.name for p in (tmp_path / "cache").rglob("*.npz")}


def test_tests_never_use_the_real_home_cache():
    # conftest.py points the cache at a temporary folder for the whole session.
    assert pathlib.Path(os.environ["CVDFILTER_CACHE_DIR"]).is_relative_to(tempfile.gettempdir())
    assert cache.cache_root() == pathlib.Path(os.environ["CVDFILTER_CACHE_DIR"])


def test_user_data_and_results_never_reach_the_disk(tmp_path):
    a = tmp_path / "lens_a.csv"
    b = tmp_path / "lens_b.csv"
    wl = np.arange(400, 701, 5)
    a.write_text("nm,T (fraction)\n" + "".join(f"{w},{0.9 - 0.5 * np.exp(-((w - 575) / 15) ** 2):.4f}\n" for w in wl))
    b.write_text("nm,T (fraction)\n" + "".join(f"{w},{0.8 - 0.4 * np.exp(-((w - 540) / 20) ** 2):.4f}\n" for w in wl))
    env = _env(tmp_path)
    _run(["score", str(a)], env)
    first = _cache_files(tmp_path)
    assert first, "reference data are cached"
    # New user curves, a user's pigment shift, daylight and Planck temperatures add nothing on disk.
    _run(["score", str(b), "--observer", "deuteranomalous:shift=7.3", "--illuminant", "daylight:cct=5600"], env)
    _run(["inspect", str(b)], env)
    _run(["score", "notch:center=555,fwhm=25,depth=0.7", "--illuminant", "planck:t=3100", "--metrics", "core"], env)
    assert _cache_files(tmp_path) - first <= {f for f in _cache_files(tmp_path) if f.startswith(("illuminant-",
                                                                                                 "cmfs-"))}
    for name in _cache_files(tmp_path):
        assert not name.startswith(("resample", "rendition", "narrow", "daylight", "planck", "cie2006-shifted")), name
    marker = next((tmp_path / "cache").rglob(cache.MARKER))
    parts = json.loads(marker.read_text())
    assert {"cvdfilter", "numpy", "scipy", "colour-science", "code_sha256"} <= set(parts)


def test_cache_off_writes_nothing(tmp_path):
    _run(["score", "larkhill-notch-575", "--metrics", "core"], _env(tmp_path, CVDFILTER_CACHE="off"))
    assert not (tmp_path / "cache").exists()
    _run(["score", "larkhill-notch-575", "--metrics", "core"], _env(tmp_path, CVDFILTER_CACHE_DIR="off"))
    assert not (tmp_path / "off").exists() and not (tmp_path / "cache").exists()


def test_location(monkeypatch, tmp_path):
    monkeypatch.delenv("CVDFILTER_CACHE_DIR")
    monkeypatch.setenv("XDG_CACHE_HOME", str(tmp_path / "xdg"))
    assert cache.cache_root() == tmp_path / "xdg" / "cvdfilter"
    monkeypatch.delenv("XDG_CACHE_HOME")
    monkeypatch.setenv("HOME", str(tmp_path / "home"))
    if sys.platform.startswith("linux"):
        assert cache.cache_root() == tmp_path / "home" / ".cache" / "cvdfilter"
    monkeypatch.setenv("CVDFILTER_CACHE_DIR", str(tmp_path / "mine"))
    assert cache.cache_root() == tmp_path / "mine"
    assert cache.cache_dir().parent == tmp_path / "mine" and cache.enabled()
    monkeypatch.setenv("CVDFILTER_CACHE", "off")
    assert cache.cache_dir() is None and not cache.enabled()


def test_key_follows_code_and_libraries(monkeypatch, tmp_path):
    src = tmp_path / "module.py"
    src.write_text("X = 1\n")
    monkeypatch.setattr(cache, "_package_files", lambda: [("cvdfilter/module.py", src)])
    cache.key_parts.cache_clear()
    try:
        before = cache.cache_dir()
        src.write_text("X = 2\n")  # an edit to the package's code
        cache.key_parts.cache_clear()
        after_edit = cache.cache_dir()
        monkeypatch.setattr(cache, "_library_version", lambda name: "9.9" if name == "numpy" else "1.0")
        cache.key_parts.cache_clear()
        after_upgrade = cache.cache_dir()
    finally:
        monkeypatch.undo()
        cache.key_parts.cache_clear()
    assert len({before, after_edit, after_upgrade}) == 3


def test_package_hash_covers_code_and_tables():
    labels = [label for label, _ in cache._package_files()]
    assert "cvdfilter/spectra/cache.py" in labels
    assert any(label.startswith("cvdfilter.cone_data/") and label.endswith(".csv") for label in labels)


def test_cached_and_memo_arrays_are_read_only():
    calls = []

    def build():
        calls.append(1)
        return {"v": np.arange(5.0)}

    for fetch in (cache.cached_arrays, cache.memo_arrays):
        key = f"test-read-only-{fetch.__name__}"
        one, two = fetch(key, build), fetch(key, build)
        assert one is not two  # a new dict each call: nobody can swap another caller's entry
        assert not one["v"].flags.writeable
        with pytest.raises(ValueError):
            one["v"][0] = 42.0
    assert len(calls) == 2  # built once per function


def test_memo_is_bounded(monkeypatch):
    monkeypatch.setattr(cache, "MEMO_SIZE", 3)
    for i in range(10):
        cache.memo_arrays(f"test-bounded-{i}", lambda: {"v": np.zeros(2)})
    assert len(cache._memo) <= 3


def test_observers_and_reference_data_are_immutable():
    import cvdfilter as cf

    obs = cf.observer("deuteranope")
    for arr in (obs.fundamentals, obs.wavelengths, obs.base.fundamentals):
        with pytest.raises(ValueError):
            arr[0] = 1.0
    with pytest.raises(TypeError):
        obs.params["age"] = 80  # type: ignore[index]
    from cvdfilter.observers.fundamentals import cie1931_cmfs

    with pytest.raises(ValueError):
        cie1931_cmfs()[0, 0] = 1.0  # reference data from the cache
    # a user's shifted pigment is handed out as a private, writeable copy
    from cvdfilter.observers import cie2006

    a = cie2006.shifted_absorbance(1, 6.5)
    a[:] = 0.0
    assert cie2006.shifted_absorbance(1, 6.5).max() == pytest.approx(1.0, abs=0.02)


def test_spline_evaluation_matches_scipy():
    # The shifted pigments evaluate the cubic spline of the CIE 2006 log absorbance with
    # numpy alone; reference: scipy.interpolate.CubicSpline on the same table.
    from scipy.interpolate import CubicSpline

    from cvdfilter.observers import cie2006

    t = cie2006._tables()
    x = np.linspace(380.0, 840.0, 997)
    for cone in range(3):
        ok = np.isfinite(t["log_abs"][:, cone])
        ref = CubicSpline(t["wl"][ok], t["log_abs"][ok, cone], extrapolate=False)
        xs = np.clip(x, ref.x[0], ref.x[-1])
        np.testing.assert_allclose(cie2006._spline_eval(cone, xs), ref(xs), rtol=1e-12, atol=1e-12)
        np.testing.assert_allclose(cie2006._spline_eval(cone, xs, nu=1), ref(xs, 1), rtol=1e-10, atol=1e-12)


def test_linear_resampling_matches_colour_science():
    # Linear resampling runs in numpy; reference: colour-science's LinearInterpolator with a
    # constant Extrapolator (hold the end values), and zero outside for outside="zero".
    from colour.algebra import Extrapolator, LinearInterpolator

    from cvdfilter.spectra.grid import DEFAULT_GRID, resample

    rng = np.random.default_rng(3)
    wl = np.sort(rng.uniform(395.0, 705.0, 61))
    vals = rng.uniform(0.0, 1.0, (61, 3))
    target = DEFAULT_GRID.wavelengths
    edge = resample(wl, vals, DEFAULT_GRID, outside="edge")
    zero = resample(wl, vals, DEFAULT_GRID, outside="zero")
    inside = (target >= wl[0]) & (target <= wl[-1])
    for j in range(3):
        ref = Extrapolator(LinearInterpolator(wl, vals[:, j]), method="Constant")(target)
        np.testing.assert_allclose(edge[:, j], ref, rtol=0, atol=1e-14)
        np.testing.assert_allclose(zero[inside, j], ref[inside], rtol=0, atol=1e-14)
        assert np.all(zero[~inside, j] == 0)


def test_old_key_folders_are_evicted_and_foreign_files_kept(monkeypatch, tmp_path):
    root = tmp_path / "root"
    root.mkdir()
    monkeypatch.setenv("CVDFILTER_CACHE_DIR", str(root))
    for i in range(5):
        old = root / f"v0.0.{i}-0000"
        old.mkdir()
        (old / cache.MARKER).write_text("{}")
        (old / "x.npz").write_bytes(b"0")
        os.utime(old, (1_000_000 + i, 1_000_000 + i))
    mine = root / "my-notes"
    mine.mkdir()
    (mine / "keep.txt").write_text("not the cache's")
    monkeypatch.setattr(cache, "_prepared", set())
    monkeypatch.setattr(cache, "_memory", {})
    cache.cached_arrays("test-evict", lambda: {"v": np.ones(3)})
    kept = sorted(p.name for p in root.iterdir() if (p / cache.MARKER).exists())
    assert len(kept) == cache.KEEP_FOLDERS
    assert cache.cache_dir().name in kept and "v0.0.4-0000" in kept  # the newest old folder survives
    assert (mine / "keep.txt").exists()

    r = runner.invoke(app, ["cache", "info", "--format", "json"])
    assert r.exit_code == 0, r.output
    info = json.loads(r.stdout)
    assert info["root"] == str(root) and info["enabled"] and len(info["folders"]) == cache.KEEP_FOLDERS
    r = runner.invoke(app, ["cache", "info"])
    assert r.exit_code == 0 and str(root) in r.stdout and "(current)" in r.stdout

    r = runner.invoke(app, ["cache", "clear"])
    assert r.exit_code == 0, r.output
    assert "removed 3 cache folder(s)" in r.stdout
    assert sorted(p.name for p in root.iterdir()) == ["my-notes"]  # the user's own folder is untouched
    assert (mine / "keep.txt").exists()
    # the cache still works after a clear
    assert cache.cached_arrays("test-evict", lambda: {"v": np.ones(3)})["v"].sum() == 3


def test_cache_command_bad_action():
    r = runner.invoke(app, ["cache", "purge"])
    assert r.exit_code == 2 and "info or clear" in r.output


def test_observers_pickle_for_worker_processes():
    # render --jobs sends observers to worker processes: read-only parameters must still pickle.
    import copy
    import pickle

    import cvdfilter as cf

    obs = cf.observer("deuteranomalous:shift=8")
    back = pickle.loads(pickle.dumps(obs))
    assert back.params == obs.params and back.spec == obs.spec
    np.testing.assert_array_equal(back.fundamentals, obs.fundamentals)
    with pytest.raises(TypeError):
        back.params["shift"] = 2
    assert copy.deepcopy(obs).params == obs.params
    assert json.loads(json.dumps(obs.params)) == dict(obs.params)


def test_grid_wavelengths_are_read_only():
    from cvdfilter.spectra.grid import DEFAULT_GRID

    with pytest.raises(ValueError):
        DEFAULT_GRID.wavelengths[0] = 0.0
