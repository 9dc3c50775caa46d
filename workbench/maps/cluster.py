"""Where map and batch work runs: a Dask cluster, with progress reporting.

``scheduler=None`` starts a :class:`distributed.LocalCluster` sized to the
machine (one single-threaded worker process per core, memory split evenly);
an address (``tcp://host:8786``) connects to an existing cluster, which must
see the same file paths; ``"threads"`` runs in this process on Dask's thread
pool (for the app and small jobs, no cluster start-up). Results come back as
they finish, so a progress bar (terminal) or a callback (app) can follow.
"""

from __future__ import annotations

import os
import sys
import time
from collections.abc import Callable, Iterable, Sequence
from typing import Any

from workbench.errors import InputError

__all__ = ["Runner", "TextProgress"]

Progress = Callable[[int, int, str], None]


class TextProgress:
    """A one-line terminal progress bar on stderr: ``label [#####-----] 12/40 3.1 s``."""

    def __init__(self, stream: Any = None, width: int = 30) -> None:
        self.stream = stream or sys.stderr
        self.width = width
        self._t0: dict[str, float] = {}

    def __call__(self, done: int, total: int, label: str) -> None:
        """Redraw the bar (a newline when ``done == total``)."""
        t0 = self._t0.setdefault(label, time.perf_counter())
        fill = int(self.width * done / max(total, 1))
        bar = "#" * fill + "-" * (self.width - fill)
        elapsed = time.perf_counter() - t0
        end = "\n" if done >= total else ""
        self.stream.write(f"\r{label:<14} [{bar}] {done}/{total} {elapsed:6.1f} s{end}")
        self.stream.flush()


class Runner:
    """Context manager that owns (or borrows) a Dask client and runs tasks on it.

    Parameters
    ----------
    scheduler : str or None
        None: a LocalCluster sized to the machine; ``"threads"``: no cluster,
        Dask threads in this process; otherwise the address of a running
        scheduler.
    n_workers : int, optional
        Workers of the LocalCluster (default: the number of cores).
    processes : bool
        LocalCluster workers as processes (default) or threads.
    memory_limit : str or int, optional
        Per-worker memory limit of the LocalCluster (default: 80 % of the
        machine / workers; none for thread workers, which share this process).
    progress : callable, optional
        ``progress(done, total, label)``, called as results arrive.
    connect_timeout_s : float
        How long to try reaching a scheduler given by address.
    """

    def __init__(
        self,
        scheduler: str | None = None,
        *,
        n_workers: int | None = None,
        processes: bool = True,
        memory_limit: str | int | None = None,
        progress: Progress | None = None,
        connect_timeout_s: float = 10.0,
    ) -> None:
        self.scheduler = scheduler
        self.n_workers = n_workers
        self.processes = processes
        self.memory_limit = memory_limit
        self.progress = progress
        self.connect_timeout_s = connect_timeout_s
        self.client: Any = None
        self._cluster: Any = None

    @property
    def description(self) -> str:
        """Where the work runs (recorded with results)."""
        if self.client is None:
            return "dask threads (in process)"
        info = self.client.scheduler_info()
        n = len(info.get("workers", {}))
        if self._cluster is not None:
            return f"LocalCluster, {n} worker(s)"
        return f"scheduler {self.scheduler}, {n} worker(s)"

    def __enter__(self) -> Runner:
        if self.scheduler == "threads":
            return self
        from distributed import Client, LocalCluster

        if self.scheduler is None:
            n = self.n_workers or os.cpu_count() or 1
            mem = self.memory_limit
            if mem is None and not self.processes:
                # Thread workers share this process: a per-worker limit would be
                # checked against the whole process's memory and pause them.
                mem = 0
            elif mem is None:
                from distributed.system import MEMORY_LIMIT

                mem = int(MEMORY_LIMIT * 0.8 / n)
            self._cluster = LocalCluster(
                n_workers=n,
                threads_per_worker=1,
                processes=self.processes,
                memory_limit=mem,
                dashboard_address=":0",  # any free port: never collide with another cluster
            )
            self.client = Client(self._cluster)
        else:
            try:
                self.client = Client(self.scheduler, timeout=f"{self.connect_timeout_s}s")
            except OSError as exc:
                raise InputError(
                    f"cannot reach the Dask scheduler at {self.scheduler} ({exc})",
                    "check the address (tcp://host:8786) and that the scheduler is running",
                ) from exc
        return self

    def __exit__(self, *exc: object) -> None:
        if self.client is not None:
            self.client.close()
        if self._cluster is not None:
            self._cluster.close()
        self.client = self._cluster = None

    def _tick(self, done: int, total: int, label: str) -> None:
        if self.progress is not None:
            self.progress(done, total, label)

    def compute_each(
        self, tasks: Sequence[Any], on_result: Callable[[int, Any], None], label: str
    ) -> None:
        """Compute Dask collections/delayed objects; ``on_result(i, value)`` as each finishes.

        Results are handed over one at a time and can be dropped after use,
        so the client holds only what ``on_result`` keeps.
        """
        total = len(tasks)
        self._tick(0, total, label)
        if self.client is None:
            import dask

            for i, t in enumerate(tasks):
                (value,) = dask.compute(t, scheduler="threads")
                on_result(i, value)
                self._tick(i + 1, total, label)
            return
        from distributed import as_completed

        futures = self.client.compute(list(tasks))
        index = {f.key: i for i, f in enumerate(futures)}
        for done, fut in enumerate(as_completed(futures), start=1):
            on_result(index[fut.key], fut.result())
            fut.release()
            self._tick(done, total, label)

    def map(
        self,
        fn: Callable[..., Any],
        items: Iterable[Any],
        on_result: Callable[[int, Any], None],
        label: str,
    ) -> None:
        """Apply ``fn`` to each item on the workers; ``on_result(i, value)`` as each finishes."""
        items = list(items)
        if self.client is None:
            total = len(items)
            self._tick(0, total, label)
            for i, it in enumerate(items):
                on_result(i, fn(it))
                self._tick(i + 1, total, label)
            return
        import dask

        self.compute_each([dask.delayed(fn, pure=False)(it) for it in items], on_result, label)
