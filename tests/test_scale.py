"""The execution layer (local threads, a Dask LocalCluster in this process) and streamed results.

Local and cluster runs give the same bytes; an interrupted streamed run resumes to the bytes of an
uninterrupted one; the Parquet file reads back with pyarrow and pandas (reference readers of the format)
with the documented schema: the CSV view's columns and values.
"""

from __future__ import annotations

import io
import json
import subprocess
import sys
import time

import numpy as np
import pytest

from cvdfilter.errors import InputError
from cvdfilter.execution import (DaskExecutor, Executor, LocalExecutor, chunk_bounds, executor, map_chunks,
                                 parse_scheduler)

SWEEP = "notch:center=520..620/10,fwhm=20..40/20,depth=0.8"  # 22 filters
SPECS = [SWEEP, "larkhill-notch-575", "nd:t=0"]  # a sweep, a bundled file, a black filter (undefined pairs)
OBSERVERS = ["normal", "deuteranomalous", "deuteranope"]


@pytest.fixture(scope="module")
def cluster():
    """A Dask LocalCluster of 2 workers inside this process (threads, in-process transport: no network)."""
    distributed = pytest.importorskip("distributed")
    lc = distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=False, dashboard_address=None)
    client = distributed.Client(lc)
    ex = DaskExecutor(client=client)
    yield ex
    client.close()
    lc.close()


def _square(shared, lo, hi):
    time.sleep(0.01 * ((7 * lo) % 5))  # finish out of order
    return [shared * i for i in range(lo, hi)]


def _fails_on_second(shared, lo, hi):
    if lo >= 2:
        raise InputError("bad value in this chunk", source="chunk.csv")
    return hi - lo


# --- the layer ---------------------------------------------------------------------------------------

def test_parse_scheduler(monkeypatch):
    monkeypatch.delenv("CVDFILTER_SCHEDULER", raising=False)
    assert parse_scheduler(None) == ("local", None)
    assert parse_scheduler("local:3") == ("cluster", 3)
    assert parse_scheduler("tcp://127.0.0.1:8786") == ("address", "tcp://127.0.0.1:8786")
    monkeypatch.setenv("CVDFILTER_SCHEDULER", "local:2")
    assert parse_scheduler(None) == ("cluster", 2)
    assert parse_scheduler("local") == ("local", None)  # the option wins over the environment
    for bad in ("local:0", "local:x", "dask", "tcp://"):
        with pytest.raises(InputError):
            parse_scheduler(bad)


def test_results_come_in_chunk_order_with_progress():
    bounds = chunk_bounds(23, 3)
    seen = []
    out = list(map_chunks(_square, 2, bounds, scheduler=LocalExecutor(3),
                          progress=lambda done, total, i: seen.append((done, total))))
    assert [x for part in out for x in part] == [2 * i for i in range(23)]
    assert seen[-1] == (len(bounds), len(bounds)) and len(seen) == len(bounds)


def test_cluster_results_in_chunk_order(cluster):
    bounds = chunk_bounds(23, 3)
    seen = []
    out = list(cluster.map(_square, 2, bounds, progress=lambda done, total, i: seen.append(done)))
    assert [x for part in out for x in part] == [2 * i for i in range(23)]
    assert seen == list(range(1, len(bounds) + 1))


@pytest.mark.parametrize("where", ["local", "cluster"])
def test_a_chunk_failing_on_bad_input_fails_the_run(where, cluster):
    ex: Executor = LocalExecutor(2) if where == "local" else cluster
    with pytest.raises(InputError, match="chunk.csv: bad value"):
        list(ex.map(_fails_on_second, None, chunk_bounds(6, 1)))


def test_executor_names():
    with executor("local") as ex:
        assert isinstance(ex, LocalExecutor)


# --- the in-memory scorer on a cluster -----------------------------------------------------------------

def test_score_on_a_cluster_gives_the_same_bits(cluster):
    from cvdfilter.score_plan import ScoreInputs, plan_observers, run_chunks

    inp = ScoreInputs.validate(SPECS, observers=OBSERVERS, metrics="core")
    stores = []
    for where in ("local", cluster):
        plans, runner = plan_observers(inp)
        run_chunks(runner, len(inp.filters), chunk=5, scheduler=where)  # several chunks, some in parallel
        runner.mark_undefined()
        stores.append([p.store for p in plans])
    for a, b in zip(*stores):
        assert a.keys() == b.keys()
        for key in a:
            assert np.array_equal(np.asarray(a[key]), np.asarray(b[key]), equal_nan=True), key


def test_score_scheduler_argument_gives_the_same_document(cluster):
    from cvdfilter import score

    a = score(SWEEP, observers=OBSERVERS, metrics="core")
    b = score(SWEEP, observers=OBSERVERS, metrics="core", scheduler=cluster)
    assert a.to_json() == b.to_json()


# --- streamed output ----------------------------------------------------------------------------------

def test_filter_source_builds_the_same_filters_as_load_filters():
    from cvdfilter import load_filters
    from cvdfilter.filter_source import FilterSource

    specs = [SWEEP, "larkhill-notch-575", "notch:center=500..600/25,fwhm=30,od=1..2/0.5,shape=flat",
             "longpass:edge=500..560/20,width=10,min=0.1", "nd:t=0.2..0.8/0.3"]
    src, fs = FilterSource.from_specs(specs), load_filters(specs)
    assert len(src) == len(fs)
    for lo, hi in [(0, len(fs)), (3, 9), (20, 27), (len(fs) - 2, len(fs))]:
        part = src.chunk(lo, hi)
        assert np.array_equal(part.transmittance, fs.transmittance[lo:hi])
        assert part.names == fs.names[lo:hi] and part.info == fs.info[lo:hi] and part.sources == fs.sources[lo:hi]


def test_a_sweep_beyond_the_in_memory_limit_is_counted_not_built():
    from cvdfilter.filter_source import FilterSource
    from cvdfilter.spectra.filters import MAX_SWEEP_MEMBERS

    src = FilterSource.from_specs("notch:center=400..699.99/0.01,fwhm=10..109/1,depth=0.8")
    assert len(src) == 30_000 * 100 > MAX_SWEEP_MEMBERS
    part = src.chunk(len(src) - 3, len(src))
    assert part.names[-1] == "notch:center=699.99,depth=0.8,fwhm=109"
    with pytest.raises(InputError, match="depth must be between 0 and 1"):
        FilterSource.from_specs("notch:center=400..700/1,fwhm=30,depth=0.5..1.5/0.5")


def test_streamed_csv_equals_the_csv_view(tmp_path):
    from cvdfilter import score, score_to_file

    card = score(SPECS, observers=OBSERVERS, metrics="core")
    manifest = score_to_file(SPECS, tmp_path / "s.csv", chunk=1024, observers=OBSERVERS, metrics="core")
    assert (tmp_path / "s.csv").read_text() == card.to_csv()
    assert manifest["rows"] == len(card) * len(OBSERVERS) and manifest["complete"]
    assert not list(tmp_path.glob(".*parts*"))  # the parts folder is gone


def test_parquet_reads_back_with_the_documented_schema(tmp_path):
    pa = pytest.importorskip("pyarrow")
    pq = pytest.importorskip("pyarrow.parquet")
    pd = pytest.importorskip("pandas")
    from cvdfilter import score_to_file
    from cvdfilter.cautions import CAVEAT

    score_to_file(SPECS, tmp_path / "s.csv", chunk=7, observers=OBSERVERS, metrics="core")
    manifest = score_to_file(SPECS, tmp_path / "s.parquet", chunk=7, observers=OBSERVERS, metrics="core")
    table = pq.read_table(tmp_path / "s.parquet")
    with open(tmp_path / "s.csv") as fh:
        header = fh.readline().strip().split(",")
    assert table.column_names == header == manifest["columns"]  # the CSV's columns, in its order
    assert pq.ParquetFile(tmp_path / "s.parquet").num_row_groups == len(manifest["chunks"]) == 4
    types = {"string": pa.string(), "double": pa.float64(), "int64": pa.int64(), "bool": pa.bool_()}
    assert [table.schema.field(c).type for c in header] == [types[t] for t in manifest["types"]]
    assert table.schema.field("discriminable_pairs.with").type == pa.int64()
    assert table.schema.field("red_green_gain").type == pa.float64()
    meta = json.loads(table.schema.metadata[b"cvdfilter"])
    assert meta["caveat"] == CAVEAT and meta["tool"] == "cvdfilter"
    df = pd.read_parquet(tmp_path / "s.parquet")
    ref = pd.read_csv(tmp_path / "s.csv", keep_default_na=False, na_values=[""])
    assert df.shape == ref.shape == (24 * len(OBSERVERS), len(header))
    for c in header:  # every value, not a sample
        a, b = df[c], ref[c]
        if a.dtype == bool:
            b = b.map({True: True, False: False, "true": True, "false": False})
        if a.dtype.kind in "fi" and b.dtype.kind in "fi":
            assert np.array_equal(a.to_numpy(float), b.to_numpy(float), equal_nan=True), c
        else:  # text: an empty CSV cell is an empty string or a null
            def cells(col):
                return [None if pd.isna(x) or x == "" else str(x) for x in col]

            assert cells(a) == cells(b), c
    assert df.loc[df["name"] == "nd:t=0", "discriminable_pairs.with"].isna().all()  # undefined: null


class _Interrupted(Exception):
    pass


class _DiesAfter(LocalExecutor):
    """A run killed after ``n`` chunks were written."""

    def __init__(self, n: int) -> None:
        super().__init__(1)
        self.n = n

    def map(self, fn, shared, bounds, *, progress=None):
        for i, out in enumerate(super().map(fn, shared, bounds, progress=progress)):
            if i == self.n:
                raise _Interrupted
            yield out


@pytest.mark.parametrize("fmt", ["parquet", "csv"])
def test_an_interrupted_run_resumes_to_the_same_bytes(tmp_path, fmt):
    if fmt == "parquet":
        pytest.importorskip("pyarrow")
    from cvdfilter import score_to_file
    from cvdfilter.io.chunked import FORMATS

    kw = dict(chunk=5, observers=OBSERVERS, metrics="core")
    whole = tmp_path / f"whole.{fmt}"
    score_to_file(SPECS, whole, **kw)
    out = tmp_path / f"resumed.{fmt}"
    with pytest.raises(_Interrupted):
        score_to_file(SPECS, out, scheduler=_DiesAfter(2), **kw)
    assert not out.exists()  # no partial output
    assert not list(tmp_path.glob(".resumed*.tmp*"))  # nor a half-written temporary file
    parts = tmp_path / f".resumed.{fmt}.cvdfilter-parts"
    assert len(list(parts.glob(f"part-*{FORMATS[fmt]}"))) == 2
    manifest = score_to_file(SPECS, out, **kw)
    assert manifest["resumed_chunks"] == 2
    assert out.read_bytes() == whole.read_bytes()
    assert not parts.exists()


def test_a_killed_runs_temporary_output_is_removed(tmp_path):
    pytest.importorskip("pyarrow")
    from cvdfilter import score_to_file

    stale = tmp_path / ".s.cvdfilter-999999-0badc0de.tmp.parquet"  # a half-written file of a process now gone
    stale.write_bytes(b"PAR1")
    score_to_file(SWEEP, tmp_path / "s.parquet", chunk=8, observers=["normal"], metrics="photometry")
    assert not stale.exists() and (tmp_path / "s.parquet").exists()


def test_parts_of_other_settings_are_not_reused(tmp_path):
    from cvdfilter import score_to_file

    out = tmp_path / "s.csv"
    with pytest.raises(_Interrupted):
        score_to_file(SPECS, out, scheduler=_DiesAfter(2), chunk=5, observers=OBSERVERS, metrics="core")
    manifest = score_to_file(SPECS, out, chunk=5, observers=OBSERVERS, metrics="core", weber_fraction=0.03)
    assert manifest["resumed_chunks"] == 0


def test_streamed_parquet_local_and_cluster_same_bytes(tmp_path, cluster):
    pytest.importorskip("pyarrow")
    from cvdfilter import score_to_file

    kw = dict(chunk=4, observers=OBSERVERS + ["protanope"], metrics="core")
    score_to_file(SPECS, tmp_path / "local.parquet", **kw)
    score_to_file(SPECS, tmp_path / "cluster.parquet", scheduler=cluster, **kw)
    assert (tmp_path / "local.parquet").read_bytes() == (tmp_path / "cluster.parquet").read_bytes()


def test_streamed_population_rows_equal_the_csv_view(tmp_path):
    from cvdfilter import score, score_to_file

    obs = ["normal", "deuteranomalous:n=5,seed=2"]
    card = score(SWEEP, observers=obs, metrics="contrast,discrimination")
    score_to_file(SWEEP, tmp_path / "p.csv", chunk=8, observers=obs, metrics="contrast,discrimination")
    assert (tmp_path / "p.csv").read_text() == card.to_csv()


# --- the CLI ------------------------------------------------------------------------------------------

def _cli(*args, cwd):
    return subprocess.run([sys.executable, "-m", "cvdfilter", "score", *args], capture_output=True, text=True,
                          cwd=cwd)


def test_cli_parquet_and_streamed_csv(tmp_path):
    pytest.importorskip("pyarrow")
    r = _cli(SWEEP, "--observer", "normal", "--metrics", "core", "-o", "s.parquet", cwd=tmp_path)
    assert r.returncode == 0, r.stderr
    assert "wrote s.parquet" in r.stderr and (tmp_path / "s.parquet.manifest.json").exists()
    r = _cli(SWEEP, "--observer", "normal", "--metrics", "core", "-o", "s.csv", "--stream", "--scheduler", "local",
             cwd=tmp_path)
    assert r.returncode == 0, r.stderr
    import csv

    rows = list(csv.reader(io.StringIO((tmp_path / "s.csv").read_text())))
    assert len(rows) == 1 + 22


@pytest.mark.parametrize("args, needle", [
    (["--scheduler", "nowhere", "nd:t=0.5"], "is not a scheduler"),
    (["-f", "parquet", "nd:t=0.5"], "give -o FILE.parquet"),
    (["--stream", "-f", "json", "-o", "x.json", "nd:t=0.5"], "--stream writes csv or parquet"),
])
def test_cli_bad_scheduler_or_stream_one_line_exit_2(tmp_path, args, needle):
    r = _cli(*args, cwd=tmp_path)
    assert r.returncode == 2 and needle in r.stderr
    assert len(r.stderr.strip().splitlines()) == 1 and "Traceback" not in r.stderr
    assert not [p for p in tmp_path.iterdir()]


# --- notebook views -----------------------------------------------------------------------------------

def test_dataframe_and_xarray_views():
    pytest.importorskip("pandas")
    pytest.importorskip("xarray")
    from cvdfilter import score

    obs = ["normal", "deuteranope", "deuteranomalous:n=4,seed=1"]
    card = score(["nd:t=0.5", "notch:center=570,fwhm=30,depth=0.8", "nd:t=0"], observers=obs, metrics="core")
    df = card.to_dataframe()
    assert len(df) == 3 * (2 + 5)  # fixed observers one row each, the population one per statistic
    assert list(df["filter"][:7]) == ["nd:t=0.5"] * 7
    row = df[(df["filter"] == "notch:center=570,depth=0.8,fwhm=30") & (df["observer"] == "deuteranope")]
    assert row["blue_yellow_gain"].item() == card.per_observer[1]["blue_yellow_gain"][1]  # full precision
    assert np.isnan(df[(df["filter"] == "nd:t=0") & (df["observer"] == "normal")]["discriminable_with"].item())
    assert df.attrs["caveat"]
    ds = card.to_xarray()
    assert ds["value"].dims == ("filter", "observer", "member", "metric")
    assert ds.sizes["member"] == 4 and list(ds["n_members"].values) == [1, 1, 4]
    assert list(ds["observer"].values) == [o.spec for o in card.observers]
    got = ds["value"].isel(observer=2).sel(metric="red_green_gain").values
    assert np.array_equal(got, card.per_observer[2]["red_green_gain"], equal_nan=True)
    assert np.isnan(ds["value"].sel(observer="normal", member=1).values).all()


def test_render_batch_on_a_cluster_writes_the_same_files(tmp_path, cluster):
    import pathlib

    from cvdfilter.cli.render_cmd import _batch
    from cvdfilter.rendering import Renderer

    stimuli = str(pathlib.Path(__file__).resolve().parent.parent / "examples" / "stimuli")
    r = subprocess.run([sys.executable, "-m", "cvdfilter", "render", stimuli, "--filter", "larkhill-notch-575",
                        "--observer", "deuteranope", "--out", str(tmp_path / "local"), "-q"],
                       capture_output=True, text=True)
    assert r.returncode == 0, r.stderr
    options = {"fmt": "auto", "cube_kind": None, "wavelengths": None, "max_megapixels": 150.0}
    _batch([stimuli], Renderer("larkhill-notch-575", observer="deuteranope"), options,
           views=["original", "filtered", "observer", "observer-filtered"], panel=False, out=str(tmp_path / "dask"),
           jobs=1, force=False, quiet=True, scheduler=cluster)
    local = sorted(p.relative_to(tmp_path / "local") for p in (tmp_path / "local").rglob("*.png"))
    assert len(local) == 12
    for rel in local:
        assert (tmp_path / "local" / rel).read_bytes() == (tmp_path / "dask" / rel).read_bytes(), rel


def test_tasks_on_a_cluster_give_the_same_document(cluster):
    from cvdfilter import tasks

    kw = dict(observers=["normal", "deuteranope"], tasks=["plates", "rayleigh"], trials=5, seed=1)
    assert tasks("larkhill-notch-575", **kw).to_json() == tasks("larkhill-notch-575", scheduler=cluster, **kw).to_json()


# --- populations through the layer --------------------------------------------------------------------

def test_population_on_a_cluster_gives_the_same_document(cluster, monkeypatch):
    # Populations go through the execution layer: small member blocks and chunks so that the run has several
    # blocks of several chunks, some in parallel; JSON bytes equal locally and on the cluster.
    import cvdfilter.score_population as sp
    from cvdfilter import score

    monkeypatch.setattr(sp, "MEMBER_BLOCK", 4)
    monkeypatch.setattr(sp, "SETS_PER_CHUNK", 20)  # 5 filters per chunk
    kw = dict(observers=["deuteranomalous:n=7,seed=3", "protanope:n=3,seed=1", "normal"], metrics="core",
              members=True)
    a = score(SPECS, **kw)
    b = score(SPECS, scheduler=cluster, **kw)
    assert a.to_json() == b.to_json()


def test_population_work_pickles_for_process_workers():
    # What a cluster of worker processes receives (the run's shared work, once per worker) computes the same
    # bits after a pickle: a task builds its member block there.
    import pickle

    from cvdfilter.execution import chunk_bounds
    from cvdfilter.score_plan import ScoreInputs
    from cvdfilter.score_population import _PopulationWork, _run_task

    groups = ("contrast", "discrimination", "confusion")
    inp = ScoreInputs.validate(SPECS, observers=["deuteranomalous:n=5,seed=2"], metrics="core")
    pop = inp.observers[0]
    work = _PopulationWork(inp, pop, groups, chunk_bounds(pop.n, 2), chunk_bounds(len(inp.filters), 4))
    light = pickle.loads(pickle.dumps(work))
    for t in range(len(work.tasks())):
        a, b = _run_task(work, t, t + 1), _run_task(light, t, t + 1)
        assert a.keys() == b.keys()
        for key in a:
            assert np.array_equal(a[key], b[key], equal_nan=True), key


# --- the discernible-colours measure through the layer -------------------------------------------------

def test_discernible_over_scenes_on_a_cluster_gives_the_same_document(cluster, monkeypatch):
    # Two scenes (pooled counts), a normal observer counted first and reused as a base, a dichromat, a
    # population; small chunks so each observer has several; JSON bytes equal locally and on the cluster.
    import pickle

    import cvdfilter.score_discernible as sd
    from cvdfilter import score
    from cvdfilter.spectra.scenes import synthetic_scene

    monkeypatch.setattr(sd, "CHUNK_PIXEL_STATES", 3 * 48 * 64)  # 3 rows per chunk
    scenes = [synthetic_scene(seed=5, shape=(48, 64)), synthetic_scene(seed=6, shape=(40, 40))]
    kw = dict(scenes=scenes, metrics="discernible", members=True,
              observers=["normal", "deuteranope", "deuteranomalous:n=3,seed=2", "normal"])
    a = score(["notch:center=540..600/20,fwhm=30,depth=0.8", "nd:t=0.5", "nd:t=0"], **kw)
    b = score(["notch:center=540..600/20,fwhm=30,depth=0.8", "nd:t=0.5", "nd:t=0"], scheduler=cluster, **kw)
    assert a.to_json() == b.to_json()
    shipped = []
    import cvdfilter.execution as execution

    real = execution.map_chunks

    def spy(fn, shared, bounds, **k):
        shipped.append(pickle.loads(pickle.dumps(shared)))  # what a worker process receives
        return real(fn, shipped[-1], bounds, **k)

    monkeypatch.setattr(execution, "map_chunks", spy)
    c = score(["notch:center=540..600/20,fwhm=30,depth=0.8", "nd:t=0.5", "nd:t=0"], **kw)
    assert len(shipped) == 1 and c.to_json() == a.to_json()


def test_score_opens_one_cluster_for_fixed_observers_populations_and_scenes(monkeypatch):
    # local:N given as a name: one executor for the whole score() call, closed after it; same document.
    pytest.importorskip("distributed")
    import cvdfilter.execution as execution
    from cvdfilter import score
    from cvdfilter.spectra.scenes import synthetic_scene

    opened = []

    def on_cluster(scheduler=None):  # what local:2 opens, with threads for workers
        assert scheduler == "local:2"
        opened.append(DaskExecutor(n_workers=2, processes=False))
        return opened[-1]

    kw = dict(observers=["normal", "deuteranomalous:n=3,seed=1"], metrics=["contrast", "discernible"],
              scenes=[synthetic_scene(seed=5, shape=(24, 24))])
    a = score(SPECS, **kw)
    monkeypatch.setattr(execution, "executor", on_cluster)
    b = score(SPECS, scheduler="local:2", **kw)
    assert len(opened) == 1 and opened[0].client.status == "closed"
    assert a.to_json() == b.to_json()
