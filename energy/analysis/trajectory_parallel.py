"""Frames in parallel: worker processes on this machine, or an existing Dask cluster.

The unit of work is one chunk of ``request.chunk_frames`` consecutive frames
(:func:`energy.analysis.trajectory.split_chunks`).  A worker opens the topology and the trajectory itself,
from the same paths (cached per worker process, so a worker parameterises the system once), and
sends back only the chunk's :class:`~energy.analysis.trajectory.ChunkResult`: its per-frame records and its
chunk statistics.  The client merges chunks strictly in chunk order, which is the serial run's
order, so results are identical to a serial run bit for bit.

* ``workers=N``: :class:`concurrent.futures.ProcessPoolExecutor` with ``spawn`` processes (no
  fork of a process that already runs numba/OpenMM threads); each worker gets
  ``cpu_count // N`` numba threads and ignores SIGINT (Ctrl-C is the client's business).
* ``scheduler=ADDRESS``: ``dask.distributed.Client(ADDRESS)``; the workers must see the files at
  the same absolute paths and have Tessera installed.

At most ``2 x workers`` chunks are in flight, so memory stays bounded on long trajectories.
"""
from __future__ import annotations

import concurrent.futures as cf
import multiprocessing
import os
import signal
import threading
import time

from energy.analysis.trajectory import (
    ChunkResult,
    TrajectoryError,
    TrajectoryRequest,
    TrajectoryScan,
    TrajectorySource,
    TrajectoryState,
    parse_frames,
    run_chunk,
)
from energy.errors import EnergyError

#: Seconds between checks while waiting for chunks (keeps Ctrl-C responsive).
POLL_SECONDS = 0.25
#: Seconds to wait for a Dask scheduler to answer.
CONNECT_TIMEOUT = 20

# --------------------------------------------------------------------------------------------
# worker side
# --------------------------------------------------------------------------------------------

_CACHE: dict = {}
_LOCK = threading.Lock()


def _worker_init(numba_threads: int | None) -> None:
    signal.signal(signal.SIGINT, signal.SIG_IGN)
    from energy._kernels.runtime import tune_memory
    tune_memory()
    if numba_threads:
        try:
            import numba
            numba.set_num_threads(max(1, min(int(numba_threads), numba.config.NUMBA_NUM_THREADS)))
        except Exception:  # numba thread settings are an optimisation only
            pass


def worker_chunk(request: TrajectoryRequest, chunk: int, indices) -> ChunkResult:
    """Evaluate one chunk on a worker: open (or reuse) the source, run, return the small result.

    One chunk at a time per process (the numba kernel already uses the process's threads).
    Expected errors come back as :class:`TrajectoryError` with a plain message (picklable).

    Parameters
    ----------
    request : TrajectoryRequest
        The run's inputs (the source is cached per process for the last request seen).
    chunk : int
        Chunk number (its position in the merge order).
    indices : list of int
        Frame indices of the chunk, in order.

    Returns
    -------
    ChunkResult
        The chunk's :class:`FrameRecord` list (energies in kcal/mol, distances in A) and its
        :class:`~energy.analysis.pair_statistics.PairStatistics`.

    Raises
    ------
    TrajectoryError
        On any :class:`~energy.errors.EnergyError`, naming the worker host, pid and frames.
    """
    with _LOCK:
        try:
            source = _CACHE.get(request)
            if source is None:
                _CACHE.clear()
                source = TrajectorySource(request)
                _CACHE[request] = source
            return run_chunk(source, chunk, indices)
        except EnergyError as exc:
            host = os.uname().nodename if hasattr(os, "uname") else "worker"
            raise TrajectoryError(f"on worker {host} (pid {os.getpid()}), frames "
                                  f"{indices[0]}..{indices[-1]}: {exc}") from None


# --------------------------------------------------------------------------------------------
# client side
# --------------------------------------------------------------------------------------------

#: Set when a run stopped its worker processes mid-chunk (see ``_ProcessBackend.close``).
abandoned_workers = False


class _ProcessBackend:
    def __init__(self, workers: int):
        threads = max(1, (os.cpu_count() or 1) // workers)
        self.executor = cf.ProcessPoolExecutor(max_workers=workers,
                                               mp_context=multiprocessing.get_context("spawn"),
                                               initializer=_worker_init, initargs=(threads,))
        self.slots = 2 * workers
        self.description = f"{workers} worker processes"

    def submit(self, *args):
        return self.executor.submit(worker_chunk, *args)

    def wait(self, futures):
        done, _ = cf.wait(futures, timeout=POLL_SECONDS, return_when=cf.FIRST_COMPLETED)
        return done

    @staticmethod
    def result(future):
        try:
            return future.result()
        except cf.process.BrokenProcessPool:
            raise TrajectoryError("a worker process died (out of memory? killed?); the frames "
                                  "merged so far are kept") from None

    def close(self, abort: bool):
        global abandoned_workers
        if abort:
            # Running chunks are abandoned: stop the worker processes instead of waiting.
            processes = list(getattr(self.executor, "_processes", {}).values())
            self.executor.shutdown(wait=False, cancel_futures=True)
            for p in processes:
                if p.is_alive():
                    p.terminate()
            for p in processes:
                p.join(timeout=5)
            # A worker stopped while writing its result leaves a partial message in the result
            # pipe; concurrent.futures' manager thread then waits for the rest for ever, and so
            # does the interpreter's exit, which joins that thread.  The command line therefore
            # ends such a process with os._exit once its outputs are written (cli.console_main).
            abandoned_workers = True
        else:
            self.executor.shutdown(wait=True)


class _DaskBackend:
    def __init__(self, scheduler=None, client=None):
        try:
            import distributed
        except ImportError:
            raise TrajectoryError("--scheduler needs Dask: pip install 'dask[distributed]'") from None
        self.distributed = distributed
        self.own_client = client is None
        if client is None:
            try:
                client = distributed.Client(scheduler, timeout=CONNECT_TIMEOUT,
                                            set_as_default=False)
            except (OSError, TimeoutError) as exc:
                raise TrajectoryError(f"cannot connect to the Dask scheduler at {scheduler}: "
                                      f"{exc}") from None
        self.client = client
        n_threads = sum(client.nthreads().values())
        if n_threads == 0:
            raise TrajectoryError(f"the Dask scheduler at {client.scheduler.address} has no "
                                  "workers: start some with `dask worker ADDRESS`")
        self.slots = 2 * n_threads
        self.description = f"Dask scheduler {client.scheduler.address} ({n_threads} worker threads)"

    def submit(self, request, chunk, indices):
        return self.client.submit(worker_chunk, request, chunk, indices, pure=False)

    def wait(self, futures):
        deadline = time.monotonic() + POLL_SECONDS
        while True:
            done = {f for f in futures if f.done()}
            if done or time.monotonic() > deadline:
                return done
            time.sleep(0.02)

    @staticmethod
    def result(future):
        return future.result()

    def close(self, abort: bool):
        if self.own_client:
            self.client.close()


class ParallelTrajectoryScan(TrajectoryScan):
    """A trajectory run whose chunks go to workers; same interface as :class:`TrajectoryScan`.

    Exactly one of ``workers`` (>= 1 processes on this machine), ``scheduler`` (address of a
    Dask scheduler) or ``client`` (an existing ``distributed.Client``) is used.  The client loads
    the system too (labels, frame count, validation).  ``steps()`` yields ``(done, total)``
    after each merged chunk; on stop (exception, ``close()``) pending chunks are cancelled, and
    chunks already finished are kept (:meth:`result`).
    """

    def __init__(self, request: TrajectoryRequest, frames: str | None = None, on_frame=None,
                 workers: int | None = None, scheduler: str | None = None, client=None,
                 source: TrajectorySource | None = None):
        if workers is None and scheduler is None and client is None:
            raise TrajectoryError("give workers, a scheduler address or a Dask client")
        if workers is not None and scheduler is None and client is None and int(workers) < 1:
            raise TrajectoryError(f"--workers must be >= 1, got {workers}")
        super().__init__(request, frames, on_frame, source)
        self.workers, self.scheduler, self.client = workers, scheduler, client
        self.backend = None
        self.description = ""

    def _backend(self):
        if self.scheduler is not None or self.client is not None:
            return _DaskBackend(self.scheduler, self.client)
        return _ProcessBackend(int(self.workers))

    def steps(self):
        """Run the chunks on the workers, merging them in chunk order.

        At most ``backend.slots`` chunks are in flight.  On a stop (exception, ``close()``) pending
        chunks are cancelled and those already finished are merged (gaps skipped).

        Yields
        ------
        done, total : int
            Frames done so far (merged, or finished and waiting for an earlier chunk), out of the
            frames requested; first ``(0, total)``, then one step after each round of finished chunks.

        Returns
        -------
        TrajectoryResult
            (The generator's return value.)  The frames merged and their statistics.
        """
        state = self.state
        total = len(state.requested)
        yield 0, total
        backend = self.backend = self._backend()
        self.description = backend.description
        pending: dict = {}
        todo = list(enumerate(state.chunks))
        todo.reverse()
        aborted = True
        try:
            while todo or pending:
                while todo and len(pending) < backend.slots:
                    number, indices = todo.pop()
                    pending[backend.submit(self.request, number, indices)] = number
                done = backend.wait(pending)
                for future in done:
                    pending.pop(future)
                    merged = state.accept(backend.result(future))
                    if self.on_frame is not None:
                        for record in merged:
                            self.on_frame(record)
                if done:
                    yield state.n_done, total
            aborted = False
        finally:
            if aborted:
                for future, number in pending.items():
                    if future.done() and not future.cancelled() and future.exception() is None:
                        state.accept(backend.result(future))  # finished: keep it (merged below)
                    else:
                        future.cancel()
                # keep the chunks finished out of order
                for record in state.flush():
                    if self.on_frame is not None:
                        self.on_frame(record)
            backend.close(abort=aborted)
        return state.result()


def scan_parallel(request: TrajectoryRequest, frames: str | None = None, workers=None,
                  scheduler=None, client=None, progress=None):
    """Convenience: the whole :class:`~energy.analysis.trajectory.TrajectoryResult` on workers.

    Parameters
    ----------
    request : TrajectoryRequest
        Inputs and what to record.
    frames : str or None, optional
        Frame range ``START:STOP:STEP`` (:func:`~energy.analysis.trajectory.parse_frames`);
        None (default) for every frame.
    workers : int or None, optional
        Number of worker processes on this machine (>= 1).
    scheduler : str or None, optional
        Address of a Dask scheduler.
    client : distributed.Client or None, optional
        An existing Dask client (one of ``workers``, ``scheduler``, ``client`` is used).
    progress : callable or None, optional
        ``progress(done, total)`` after each merged round of chunks.

    Returns
    -------
    TrajectoryResult
        Every requested frame's record and the statistics over them.

    Raises
    ------
    TrajectoryError
        If no backend is given, ``workers`` < 1, or the run cannot be made.
    """
    return ParallelTrajectoryScan(request, frames, workers=workers, scheduler=scheduler,
                                  client=client).run(progress)


__all__ = ["ParallelTrajectoryScan", "scan_parallel", "worker_chunk", "parse_frames",
           "TrajectoryState"]
