"""Where images are rendered: in this process, in local worker processes, or on a Dask cluster.

Each executor turns (spec, indices) into ImageResults, in whatever order they finish, with a
bounded number in flight (so memory does not grow with the count). Only the writer, in this
process, touches the dataset folder. Workers render single-threaded (see genfield.dataset.job).
"""

from __future__ import annotations

import logging
import multiprocessing
import signal
from collections.abc import Iterable, Iterator
from concurrent.futures import FIRST_COMPLETED, Future, ProcessPoolExecutor, wait

from genfield.dataset.job import JobSpec, pipeline_for, render_task
from genfield.dataset.labels import ImageResult
from genfield.errors import UsageError

log = logging.getLogger(__name__)

IN_FLIGHT_PER_WORKER = 2  # enough to keep a worker busy while the writer stores a result
CONNECT_TIMEOUT = "20s"  # how long to wait for a Dask scheduler to answer


def _single_thread() -> int:
    """Set torch to one thread (if torch is used at all); returns the previous count."""
    import torch

    previous = torch.get_num_threads()
    torch.set_num_threads(1)
    return previous


def serial_results(spec: JobSpec, indices: Iterable[int]) -> Iterator[ImageResult]:
    """Render in this process, in index order."""
    import torch

    previous = _single_thread()
    try:
        for index in indices:
            yield render_task(spec, index)
    finally:
        torch.set_num_threads(previous)


_WORKER_SPEC: JobSpec | None = None


def _init_worker(spec: JobSpec) -> None:
    """Process-pool initializer: one thread, Ctrl-C left to the parent, pipeline built once."""
    global _WORKER_SPEC
    signal.signal(signal.SIGINT, signal.SIG_IGN)  # the parent stops the pool cleanly
    _single_thread()
    _WORKER_SPEC = spec
    pipeline_for(spec)


def _worker_task(index: int) -> ImageResult:
    if _WORKER_SPEC is None:
        raise RuntimeError("worker was not initialised")
    return render_task(_WORKER_SPEC, index)


# What a worker needs, imported once by the fork server rather than by every worker.
PRELOAD = ("torch", "genfield.field.model", "genfield.recipe.loader", "genfield.recipe.draw",
           "genfield.render.renderer", __name__)


def _context(spec: JobSpec) -> multiprocessing.context.BaseContext:
    """forkserver where the platform has it, else spawn: never fork a process holding torch's
    threads. The fork server imports the workers' modules once (the preload takes effect when
    it starts, at the first pool of a process), so each worker starts in a fraction of a second."""
    if "forkserver" not in multiprocessing.get_all_start_methods():
        return multiprocessing.get_context("spawn")
    context = multiprocessing.get_context("forkserver")
    context.set_forkserver_preload([*PRELOAD, spec.factory.partition(":")[0]])
    return context


def process_results(spec: JobSpec, indices: Iterable[int], workers: int) -> Iterator[ImageResult]:
    """Render in ``workers`` local processes; results come back as they finish."""
    pending: set[Future] = set()
    todo = iter(indices)
    pool = ProcessPoolExecutor(max_workers=workers, mp_context=_context(spec),
                               initializer=_init_worker, initargs=(spec,))
    try:
        while True:
            while len(pending) < workers * IN_FLIGHT_PER_WORKER:
                index = next(todo, None)
                if index is None:
                    break
                pending.add(pool.submit(_worker_task, index))
            if not pending:
                return
            done, pending = wait(pending, return_when=FIRST_COMPLETED)
            for future in done:
                yield future.result()
    finally:
        pool.shutdown(wait=True, cancel_futures=True)


def _dask_task(spec: JobSpec, index: int) -> ImageResult:
    """One image on a Dask worker: single-threaded torch, the pipeline cached per worker process."""
    _single_thread()
    return render_task(spec, index)


def dask_results(spec: JobSpec, indices: Iterable[int], address: str) -> Iterator[ImageResult]:
    """Render on the Dask cluster at ``address``: the spec (recipe text and model bytes) is sent
    to every worker once; the image bytes come back here to be written."""
    try:
        from distributed import Client, as_completed
    except ImportError:
        raise UsageError("--cluster needs Dask distributed, which is not installed",
                         hint="pip install 'genfield[cluster]'") from None
    try:
        client = Client(address, timeout=CONNECT_TIMEOUT)
    except (OSError, TimeoutError) as err:
        raise UsageError(f"cannot reach the Dask scheduler at {address!r}: {err}",
                         hint="check the address (e.g. tcp://host:8786) and that the scheduler runs") from None
    futures = as_completed()
    try:
        workers = max(1, len(client.scheduler_info().get("workers", {})))
        [spec_future] = client.scatter([spec], broadcast=True, hash=False)
        log.info("rendering on %s with %d workers", address, workers)
        todo = iter(indices)

        def submit_one() -> bool:
            index = next(todo, None)
            if index is None:
                return False
            futures.add(client.submit(_dask_task, spec_future, index, pure=False,
                                      key=f"genfield-render-{spec.key[:16]}-{index}"))
            return True

        for _ in range(workers * IN_FLIGHT_PER_WORKER):
            if not submit_one():
                break
        for future in futures:
            result = future.result()
            future.release()
            submit_one()
            yield result
    finally:
        client.close()


def results(spec: JobSpec, indices: Iterable[int], *, workers: int = 1,
            cluster: str | None = None) -> Iterator[ImageResult]:
    """The executor the options ask for: a cluster address, else ``workers`` processes, else here."""
    if cluster is not None:
        return dask_results(spec, indices, cluster)
    if workers > 1:
        return process_results(spec, indices, workers)
    return serial_results(spec, indices)
