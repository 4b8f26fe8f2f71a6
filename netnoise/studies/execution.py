"""Where the work of a study runs: in this process, on local processes, or on a cluster.

A study cuts its work into chunks (a chunk of Monte Carlo trials, later a
chunk of sweep points) and gives :func:`run_chunks` one function
``work(shared, chunk) -> part``.  ``shared`` is what every chunk needs (the
prepared circuit): it is sent to each worker once, not once per chunk.  The
parts come back in the order of the chunks, whatever finished first, so a
study's result does not depend on where it ran.

* ``jobs=1``, no client: a plain loop in this process.
* ``jobs=N``: N local worker processes (forked from a fork server, else
  spawned; both safe beside threads); ``shared`` travels once per worker, through the pool's
  initializer, and each worker's BLAS is held to one thread (threadpoolctl)
  so N workers do not oversubscribe the cores.
* ``client``: a ``dask.distributed.Client``; ``shared`` is scattered to every
  worker once (``broadcast=True``) and each chunk is one task.  Dask is an
  optional extra (``pip install 'netnoise[cluster]'``): a well-kept scheduler
  beats hand-written distribution code.
"""

from __future__ import annotations

import multiprocessing
from collections.abc import Callable, Sequence
from concurrent.futures import FIRST_COMPLETED, ProcessPoolExecutor, wait
from concurrent.futures.process import BrokenProcessPool
from typing import Any

from netnoise.engine.resources import usable_cores
from netnoise.errors import UsageError

__all__ = ["run_chunks", "usable_cores", "connect"]

Work = Callable[[Any, Any], Any]

_worker_shared: Any = None  # in a worker process: the shared object, set once by the initializer


def _one_blas_thread():
    """A context holding BLAS/OpenMP pools to one thread (threadpoolctl)."""
    from threadpoolctl import threadpool_limits

    return threadpool_limits(limits=1)


def _init_worker(shared: Any) -> None:
    global _worker_shared
    _worker_shared = shared
    _one_blas_thread()  # for the life of this worker process


def _run_in_worker(work: Work, chunk: Any) -> Any:
    return work(_worker_shared, chunk)


def _run_on_dask_worker(work: Work, shared: Any, chunk: Any) -> Any:
    with _one_blas_thread():
        return work(shared, chunk)


def run_chunks(
    work: Work,
    shared: Any,
    chunks: Sequence[Any],
    *,
    jobs: int = 1,
    client: Any = None,
    on_done: Callable[[int, Any], None] | None = None,
) -> list[Any]:
    """``[work(shared, chunk) for chunk in chunks]``, run where asked.

    ``on_done(i, part)`` is called in this process as each chunk ``i``
    finishes (in any order), for a progress display.  An exception raised by
    ``work`` in a worker is raised here.
    """
    if jobs < 1:
        raise UsageError(f"--jobs must be 1 or more, got {jobs}")
    parts: list[Any] = [None] * len(chunks)

    def done(i: int, part: Any) -> None:
        parts[i] = part
        if on_done is not None:
            on_done(i, part)

    if client is not None:
        _on_dask(client, work, shared, chunks, done)
    elif jobs == 1 or len(chunks) <= 1:
        for i, chunk in enumerate(chunks):
            done(i, work(shared, chunk))
    else:
        _on_processes(min(jobs, len(chunks)), work, shared, chunks, done)
    return parts


def _process_context():
    """Workers are forked from a fork server that has imported the study modules once (quick to
    start, and safe beside threads, unlike a plain fork); where there is none (Windows), spawned."""
    if "forkserver" in multiprocessing.get_all_start_methods():
        context = multiprocessing.get_context("forkserver")
        context.set_forkserver_preload(["netnoise.studies.montecarlo"])
        return context
    return multiprocessing.get_context("spawn")


def _on_processes(jobs: int, work: Work, shared: Any, chunks: Sequence[Any], done) -> None:
    context = _process_context()
    try:
        with ProcessPoolExecutor(
            max_workers=jobs, mp_context=context, initializer=_init_worker, initargs=(shared,)
        ) as pool:
            pending = {pool.submit(_run_in_worker, work, chunk): i for i, chunk in enumerate(chunks)}
            try:
                while pending:
                    finished, _ = wait(pending, return_when=FIRST_COMPLETED)
                    for future in finished:
                        done(pending.pop(future), future.result())
            except BaseException:
                for future in pending:
                    future.cancel()
                raise
    except BrokenProcessPool:
        raise UsageError(
            "a worker process stopped before finishing its work (out of memory, killed, or started from "
            "a script without a main guard: worker processes start from a fresh interpreter, so a script "
            'that calls this with jobs > 1 must do so under `if __name__ == "__main__":`)'
        ) from None


def _on_dask(client: Any, work: Work, shared: Any, chunks: Sequence[Any], done) -> None:
    from dask.distributed import as_completed

    shared_future = client.scatter(shared, broadcast=True, hash=False)  # once per worker
    futures = [client.submit(_run_on_dask_worker, work, shared_future, chunk, pure=False) for chunk in chunks]
    index = {future.key: i for i, future in enumerate(futures)}
    try:
        for future in as_completed(futures):
            done(index[future.key], future.result())
    finally:
        client.cancel(futures + [shared_future])


def connect(address: str):
    """A ``dask.distributed.Client`` on the scheduler at ``address``
    (UsageError with the fix when dask is missing or the scheduler is unreachable)."""
    try:
        from dask.distributed import Client
    except ImportError:
        raise UsageError("--cluster needs dask's distributed scheduler: pip install 'netnoise[cluster]'") from None
    try:
        return Client(address, timeout="10s")
    except (OSError, TimeoutError) as error:
        raise UsageError(f"--cluster {address}: cannot reach a dask scheduler there ({error})") from None
