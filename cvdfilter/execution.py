"""Where chunks of work run: the one execution layer (in this process on threads, or on a Dask cluster).

Every heavy command cuts its work into chunks (ranges ``lo:hi`` of filters, members or files) and hands a
*pure* chunk function to an :class:`Executor`, which returns each chunk's result **in chunk order**, whatever
order the chunks finished in. The caller assembles the results (copies slices into arrays, writes rows), so
the numbers do not depend on where, or in which order, the chunks ran: the same chunking gives the same bits.

Schedulers (``--scheduler`` on the command line, ``CVDFILTER_SCHEDULER`` in the environment):

``local`` (default)
    This process; chunks on threads (numpy releases the GIL in its array loops). ``CVDFILTER_THREADS``
    sets the number of threads.
``local:N``
    A ``dask.distributed.LocalCluster`` of N worker processes (one thread each) started for this run and
    closed after it.
``tcp://HOST:PORT`` (or ``tls://``, ``ws://``...)
    A running ``dask.distributed`` scheduler; its workers need the same cvdfilter version installed.

Dask and distributed are an optional extra (``pip install cvdfilter[cluster]``), imported only when a Dask
scheduler is named. A chunk's constant data (the runner, with its reference arrays) is shipped to the
workers once (``Client.scatter``), not with every chunk; at most a window of chunks is in flight, so memory
stays bounded however many chunks a run has. A worker lost mid-run is retried by Dask; an exception raised
by a chunk (an :class:`~cvdfilter.errors.InputError` on bad input) ends the run and is raised here.

Public: :func:`executor`, :func:`map_chunks`, :func:`chunk_bounds`, :func:`parse_scheduler`,
:func:`opens_cluster`, :class:`Executor`, :class:`LocalExecutor`, :class:`DaskExecutor`, :data:`SCHEDULER_ENV`.
"""

from __future__ import annotations

import contextlib
import os
import threading
from collections.abc import Callable, Iterable, Iterator, Sequence
from typing import Any

from .errors import InputError

__all__ = ["executor", "map_chunks", "chunk_bounds", "parse_scheduler", "opens_cluster", "Executor",
           "LocalExecutor", "DaskExecutor", "SCHEDULER_ENV", "SCHEDULER_HELP"]

#: Environment variable with the default scheduler.
SCHEDULER_ENV = "CVDFILTER_SCHEDULER"
#: Help text of the ``--scheduler`` option (shared by the commands that take it).
SCHEDULER_HELP = ("Where the chunks run: local (this process, threads; default), local:N (a Dask LocalCluster "
                  "of N workers for this run) or tcp://HOST:PORT (a running Dask scheduler); default from "
                  "$CVDFILTER_SCHEDULER. Dask needs the cluster extra: pip install cvdfilter[cluster].")

#: ``progress(done_chunks, total_chunks, result_index)`` after each chunk finishes (in finishing order).
ChunkProgress = Callable[[int, int, int], None]


def chunk_bounds(n: int, chunk: int) -> list[tuple[int, int]]:
    """``[(0, chunk), (chunk, 2 chunk), ..., (.., n)]``: the fixed chunking every executor uses.

    >>> chunk_bounds(5, 2)
    [(0, 2), (2, 4), (4, 5)]
    """
    if chunk < 1:
        raise ValueError(f"chunk must be at least 1, got {chunk}")
    return [(lo, min(n, lo + chunk)) for lo in range(0, n, chunk)]


def parse_scheduler(scheduler: str | None) -> tuple[str, Any]:
    """``None``/``""`` (then ``$CVDFILTER_SCHEDULER``, else ``local``) -> ``("local", threads or None)``,
    ``("cluster", n_workers)`` or ``("address", address)``; InputError for anything else.

    >>> parse_scheduler("local:2"), parse_scheduler("tcp://127.0.0.1:8786")
    (('cluster', 2), ('address', 'tcp://127.0.0.1:8786'))
    """
    text = (scheduler if scheduler else os.environ.get(SCHEDULER_ENV, "")).strip() or "local"
    source = "--scheduler" if scheduler else SCHEDULER_ENV
    if text == "local":
        return "local", None
    if text.startswith("local:"):
        n = text.partition(":")[2]
        if not n.isdigit() or int(n) < 1:
            raise InputError(f"{source} {text}: local:N needs a whole number of workers N >= 1",
                             hint="e.g. local:2")
        return "cluster", int(n)
    if "://" in text and text.partition("://")[2]:
        return "address", text
    raise InputError(f"{source} {text!r} is not a scheduler",
                     hint="use local, local:N or a Dask scheduler address such as tcp://HOST:8786")


_blas_lock = threading.Lock()
_blas_users = 0
_blas_limits: Any = None


@contextlib.contextmanager
def single_threaded_blas():
    """BLAS on one thread while any chunk of this process runs (re-entrant, shared by threads).

    The executors parallelise over chunks; a matrix product's last bit can depend on how many threads
    BLAS splits it over, so every chunk runs its products on one BLAS thread, here and on a cluster's
    workers alike (threadpoolctl). The limit must be set from the thread that starts the chunks (one set in
    a pool thread does not take effect), so each executor's ``map`` enters it as well as each chunk. Same
    BLAS build: the same bits (the products' shapes are kept in one kernel class by
    :mod:`cvdfilter.catch_products`).
    """
    global _blas_users, _blas_limits
    with _blas_lock:
        if _blas_users == 0:
            from threadpoolctl import threadpool_limits

            _blas_limits = threadpool_limits(limits=1, user_api="blas")
        _blas_users += 1
    try:
        yield
    finally:
        with _blas_lock:
            _blas_users -= 1
            if _blas_users == 0:
                _blas_limits.restore_original_limits()
                _blas_limits = None


def _threads() -> int:
    from .score_plan import workers

    return workers()


class Executor:
    """Runs ``fn(shared, lo, hi)`` for every chunk and yields the results in chunk order.

    ``shared`` is the chunk function's constant data, handed over once per run. Use as a context manager
    (``with executor(...) as ex:``) so that a cluster started for the run is closed after it.
    """

    name = "executor"
    #: Chunks one worker slot may have in flight (bounds memory: results wait in order for assembly).
    window_per_slot = 2

    def slots(self) -> int:
        return 1

    def map(self, fn: Callable, shared: Any, bounds: Sequence[tuple[int, int]], *,
            progress: ChunkProgress | None = None) -> Iterator:
        raise NotImplementedError

    def close(self) -> None:
        pass

    def __enter__(self) -> Executor:
        return self

    def __exit__(self, *exc) -> None:
        self.close()


class LocalExecutor(Executor):
    """This process: the chunks on ``threads`` threads (default :func:`cvdfilter.score_plan.workers`)."""

    name = "local"

    def __init__(self, threads: int | None = None) -> None:
        self.threads = threads if threads else _threads()

    def slots(self) -> int:
        return self.threads

    def map(self, fn, shared, bounds, *, progress=None):
        with single_threaded_blas():
            yield from self._map(fn, shared, bounds, progress)

    def _map(self, fn, shared, bounds, progress):
        n = len(bounds)
        if self.threads <= 1 or n <= 1:
            for i, (lo, hi) in enumerate(bounds):
                out = _call(fn, shared, lo, hi)
                if progress is not None:
                    progress(i + 1, n, i)
                yield out
            return
        from concurrent.futures import FIRST_COMPLETED, ThreadPoolExecutor, wait

        window = self.threads * self.window_per_slot
        with ThreadPoolExecutor(max_workers=self.threads) as pool:
            pending: dict = {}
            ready: dict = {}
            nxt = submitted = done = 0
            try:
                while nxt < n:
                    while submitted < n and submitted - nxt < window:
                        lo, hi = bounds[submitted]
                        pending[pool.submit(_call, fn, shared, lo, hi)] = submitted
                        submitted += 1
                    if nxt not in ready:
                        finished, _ = wait(list(pending), return_when=FIRST_COMPLETED)
                        for fut in finished:
                            i = pending.pop(fut)
                            ready[i] = fut.result()  # a chunk's exception ends the run here
                            done += 1
                            if progress is not None:
                                progress(done, n, i)
                        continue
                    yield ready.pop(nxt)
                    nxt += 1
            finally:
                for fut in pending:
                    fut.cancel()


def _call(fn, shared, lo, hi):
    """One chunk (on a thread here or on a Dask worker): BLAS on one thread."""
    with single_threaded_blas():
        return fn(shared, lo, hi)


class DaskExecutor(Executor):
    """A ``dask.distributed`` client: an existing scheduler (``address``) or a LocalCluster of ``n_workers``
    started for this run (loopback only; closed with the executor). ``client`` may be given directly."""

    name = "dask"

    def __init__(self, address: str | None = None, *, n_workers: int | None = None, client: Any = None,
                 processes: bool = True) -> None:
        try:
            from distributed import Client, LocalCluster
        except ImportError:
            raise InputError("a Dask scheduler needs dask and distributed",
                             hint="pip install 'cvdfilter[cluster]', or use --scheduler local") from None
        self._cluster = None
        self._own_client = client is None
        if client is not None:
            self.client = client
        elif address is not None:
            try:
                self.client = Client(address, timeout="20s")
            except (OSError, TimeoutError) as exc:
                raise InputError(f"cannot reach the Dask scheduler at {address}: {exc}",
                                 hint="start it with 'dask scheduler' or use --scheduler local") from None
        else:
            where = {"host": "127.0.0.1"} if processes else {}  # loopback only; in-process needs no address
            # no dashboard; the scheduler's HTTP routes (health) on a free loopback port, not on 8787 of
            # every interface (another cluster may hold it)
            self._cluster = LocalCluster(n_workers=n_workers or 1, threads_per_worker=1, processes=processes,
                                         dashboard_address=None, scheduler_kwargs={"dashboard_address": "127.0.0.1:0"},
                                         **where)
            self.client = Client(self._cluster)

    def slots(self) -> int:
        try:
            return max(1, sum(self.client.nthreads().values()))
        except Exception:  # noqa: BLE001 - a scheduler that cannot say: one slot
            return 1

    def map(self, fn, shared, bounds, *, progress=None):
        # BLAS on one thread set from this thread too: a limit set inside a worker thread does not reach
        # OpenBLAS (0.3.30 keeps it per calling thread), and the workers of an in-process cluster are threads
        # of this process; worker processes start with one BLAS thread already (distributed's default).
        with single_threaded_blas():
            yield from self._map(fn, shared, bounds, progress)

    def _map(self, fn, shared, bounds, progress):
        from distributed import as_completed

        n = len(bounds)
        if n == 0:
            return
        client = self.client
        [shared_f] = client.scatter([shared], broadcast=True, hash=False)
        window = self.slots() * self.window_per_slot
        futures: dict = {}
        ready: dict = {}
        ac = as_completed()
        nxt = submitted = done = 0

        def submit() -> None:
            nonlocal submitted
            while submitted < n and submitted - nxt < window:
                lo, hi = bounds[submitted]
                fut = client.submit(_call, fn, shared_f, lo, hi, pure=False, retries=1)
                futures[fut.key] = (submitted, fut)
                ac.add(fut)
                submitted += 1

        try:
            submit()
            while nxt < n:
                while nxt not in ready:
                    fut = next(ac)
                    i = futures.pop(fut.key)[0]
                    ready[i] = fut.result()  # a chunk's exception (InputError...) is raised here
                    fut.release()
                    done += 1
                    if progress is not None:
                        progress(done, n, i)
                yield ready.pop(nxt)
                nxt += 1
                submit()
        finally:
            if futures:
                client.cancel([f for _, f in futures.values()])

    def close(self) -> None:
        if self._own_client:
            self.client.close()
        if self._cluster is not None:
            self._cluster.close()


def executor(scheduler: str | None = None) -> Executor:
    """The executor a ``--scheduler`` value names (None: ``$CVDFILTER_SCHEDULER``, else local threads).

    >>> with executor("local") as ex:
    ...     list(ex.map(lambda s, lo, hi: s * (hi - lo), 10, chunk_bounds(5, 2)))
    [20, 20, 10]
    """
    kind, arg = parse_scheduler(scheduler)
    if kind == "local":
        return LocalExecutor()
    if kind == "cluster":
        return DaskExecutor(n_workers=arg)
    return DaskExecutor(arg)


def opens_cluster(scheduler: str | Executor | None) -> bool:
    """True when ``scheduler`` names a Dask scheduler (not an open executor, not local threads): a caller
    that runs several maps then opens one executor for them all (one LocalCluster per run, not per map).

    >>> opens_cluster("local"), opens_cluster("local:2"), opens_cluster(LocalExecutor(1))
    (False, True, False)
    """
    return not hasattr(scheduler, "map") and parse_scheduler(scheduler)[0] != "local"


def map_chunks(fn: Callable, shared: Any, bounds: Iterable[tuple[int, int]], *,
               scheduler: str | Executor | None = None, progress: ChunkProgress | None = None) -> Iterator:
    """``fn(shared, lo, hi)`` for every chunk, results in chunk order, on the executor ``scheduler``
    names (or is). An executor made here is closed when the iterator is exhausted or closed.

    >>> list(map_chunks(lambda s, lo, hi: list(range(lo, hi)), None, chunk_bounds(3, 2)))
    [[0, 1], [2]]
    """
    bounds = list(bounds)
    if isinstance(scheduler, Executor):
        yield from scheduler.map(fn, shared, bounds, progress=progress)
        return
    with executor(scheduler) as ex:
        yield from ex.map(fn, shared, bounds, progress=progress)


def process_map(fn, items: list, *, processes: int, initializer=None, initargs=(), on_result=None) -> str | None:
    """``fn(item)`` for every item in worker processes of this machine (spawned; for work that must survive
    a worker's death, such as render batches), calling ``on_result(item, result)`` as each finishes.

    Returns None when every item finished, else why the rest did not: a worker that stopped (killed, out
    of memory) breaks the pool, and Ctrl-C stops it; the workers still busy are killed so that nothing they
    write afterwards goes unrecorded. The caller records the items without a result.
    """
    import multiprocessing
    from concurrent.futures import ProcessPoolExecutor, as_completed
    from concurrent.futures.process import BrokenProcessPool

    ctx = multiprocessing.get_context("spawn")
    pool = ProcessPoolExecutor(max_workers=max(1, min(processes, len(items))), mp_context=ctx,
                               initializer=initializer, initargs=initargs)
    why = None
    try:
        futures = {pool.submit(fn, item): item for item in items}
        for fut in as_completed(futures):
            try:
                result = fut.result()
            except BrokenProcessPool:
                why = "a worker process stopped unexpectedly (killed, or out of memory)"
                continue
            if on_result is not None:
                on_result(futures[fut], result)
    except KeyboardInterrupt:
        why = "interrupted"
    finally:
        workers = list((getattr(pool, "_processes", None) or {}).values())
        pool.shutdown(wait=why is None, cancel_futures=True)
        if why is not None:
            for proc in workers:  # stop workers still busy: their results would not be recorded
                if proc.is_alive():
                    proc.kill()
    return why
