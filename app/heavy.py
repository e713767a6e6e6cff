"""Heavy work (reading uploads, batch chunks, bootstrap chunks, F tests) in worker processes.

A heavy job runs in a fresh process forked from a small server of workers, so that

- light requests (a K change, a panel redraw) are answered by the server's own threads while a
  heavy job runs: at most ``slots`` heavy jobs at once, at most ``queue`` more waiting for a slot
  (each waiting job holds a server thread, so more would leave none for light requests: a job
  beyond them is refused at once), and a job that cannot get a slot within ``wait_s`` is refused
  with a message rather than queued without end;
- a job that runs past its time budget is stopped (the process is killed) and the tab is told so;
- a job that asks for more memory than ``memory_bytes`` fails in its own process with an
  out-of-memory message, and whatever a job allocated goes back to the system when it ends, so
  the server's memory returns to its baseline after any file, refused or read.

The time a request waits for a heavy job (or for a slot) does not count against the request's own
budget for light work (app/request_budget.py); work run by ``bounded`` in the request's thread does.

Nothing here knows what the jobs do: each is a plain top-level function and its arguments.
"""

from __future__ import annotations

import multiprocessing as mp
import pickle
import threading
import time
from collections.abc import Callable, Iterator
from contextlib import contextmanager
from dataclasses import dataclass
from typing import Any

from growthcore.budget import budget_paused
from growthcore.errors import GrowthcoreInputError

#: Modules the worker server imports once, so that each job starts without importing them again.
#: ``__main__`` is the script that started the server: without it every job would run that script
#: again (as ``__mp_main__``) before starting its work.
PRELOAD = ["__main__", "numpy", "scipy.optimize", "growthcore.io", "growthcore.batch", "growthcore.uncertainty",
           "growthcore.app.callbacks.data", "growthcore.app.callbacks.series.read",
           "growthcore.app.callbacks.series.run",
           "growthcore.app.callbacks.dynamics.bootstrap", "growthcore.app.callbacks.batch_tables"]


class HeavyRefused(GrowthcoreInputError):
    """A heavy job not run or stopped: the server is busy, the job ran out of time or of memory."""


@dataclass(frozen=True)
class HeavyConfig:
    """How heavy jobs run: in worker processes (the server) or in the calling thread (unit tests)."""

    slots: int = 2
    #: heavy jobs that may wait for a slot; the server needs more threads than ``slots + queue``
    queue: int = 2
    wait_s: float = 10.0
    budget_s: float = 60.0
    memory_bytes: int = 3 * 1024**3
    processes: bool = True


def _child(conn: Any, memory_bytes: int) -> None:
    try:
        import resource

        resource.setrlimit(resource.RLIMIT_AS, (memory_bytes, memory_bytes))
    except (ImportError, ValueError, OSError):  # not every platform can bound a process's memory
        pass
    try:
        func, args, kwargs = conn.recv()
        try:
            outcome: tuple[Any, ...] = ("ok", func(*args, **kwargs))
        except MemoryError:
            outcome = ("memory",)
        except BaseException as exc:  # handed to the caller, which raises it in the server thread
            outcome = ("raise", exc)
        try:
            conn.send(outcome)
        except MemoryError:
            conn.send(("memory",))
        except Exception as problem:  # a result or exception that cannot be pickled: say which
            exc = outcome[1] if outcome[0] == "raise" else problem
            conn.send(("error", type(exc).__name__, (str(exc).splitlines() or [""])[0][:300]))
    finally:
        conn.close()


class HeavyRunner:
    """Runs heavy jobs under a bound on how many run at once, a time budget and a memory cap."""

    def __init__(self, config: HeavyConfig | None = None) -> None:
        self.config = config or HeavyConfig()
        self._slots = threading.BoundedSemaphore(self.config.slots)
        self._admitted = threading.BoundedSemaphore(self.config.slots + self.config.queue)
        self._context: Any = None
        self._lock = threading.Lock()
        self.running = 0
        self.waiting = 0

    def _ctx(self) -> Any:
        with self._lock:
            if self._context is None:
                method = "forkserver" if "forkserver" in mp.get_all_start_methods() else "spawn"
                self._context = mp.get_context(method)
                if method == "forkserver":
                    self._context.set_forkserver_preload(PRELOAD)
            return self._context

    def warm(self) -> None:
        """Start the worker server now (it imports the engine once), so the first upload is not slowed."""
        if self.config.processes:
            threading.Thread(target=lambda: self.run("starting the workers", int, 0), daemon=True).start()

    def run(self, what: str, func: Callable[..., Any], *args: Any, **kwargs: Any) -> Any:
        """``func(*args, **kwargs)`` as a heavy job; HeavyRefused when busy, over time or out of memory.

        ``what`` names the job in messages ("reading the file", "the bootstrap chunk"). The job has
        its own budget, so the request's light-work budget is paused while it waits.
        """
        with budget_paused():
            return self._run(what, func, args, kwargs)

    def _run(self, what: str, func: Callable[..., Any], args: Any, kwargs: Any) -> Any:
        with self._slot(what):
            if not self.config.processes:
                return func(*args, **kwargs)
            return self._in_process(what, func, args, kwargs)

    def bounded(self, what: str, func: Callable[..., Any], *args: Any, **kwargs: Any) -> Any:
        """``func`` under the same bound on heavy jobs, in the calling thread (for results that do
        not travel between processes, such as fitted forms), and under the request's light-work
        budget (the wait for a slot is not counted)."""
        with self._slot(what):
            return func(*args, **kwargs)

    def _count(self, name: str, step: int) -> None:
        with self._lock:
            setattr(self, name, getattr(self, name) + step)

    @contextmanager
    def _slot(self, what: str) -> Iterator[None]:
        """One of the ``slots``, waited for (the request's budget paused) while at most ``queue``
        other jobs wait; HeavyRefused at once when the queue is full, or after ``wait_s``."""
        cfg = self.config
        busy = f"the server is busy with {cfg.slots} heavy job(s) from other tabs; {what} was not started"
        if not self._admitted.acquire(blocking=False):
            raise HeavyRefused(f"{busy} ({cfg.queue} more are waiting): try again in a moment")
        try:
            self._count("waiting", 1)
            try:
                with budget_paused():
                    free = self._slots.acquire(timeout=cfg.wait_s)
            finally:
                self._count("waiting", -1)
            if not free:
                raise HeavyRefused(f"{busy} within {cfg.wait_s:g} s: try again in a moment")
            self._count("running", 1)
            try:
                yield
            finally:
                self._count("running", -1)
                self._slots.release()
        finally:
            self._admitted.release()

    def _in_process(self, what: str, func: Callable[..., Any], args: Any, kwargs: Any) -> Any:
        cfg = self.config
        ctx = self._ctx()
        parent, child = ctx.Pipe()
        proc = ctx.Process(target=_child, args=(child, cfg.memory_bytes), daemon=True)
        proc.start()
        child.close()
        started = time.monotonic()
        try:
            parent.send((func, args, kwargs))
            if not parent.poll(cfg.budget_s):
                raise HeavyRefused(f"{what} took longer than the time budget of {cfg.budget_s:g} s and was stopped; "
                                   "use a smaller file or fewer forms, resamples or series")
            try:
                outcome = parent.recv()
            except (EOFError, OSError, pickle.UnpicklingError):
                proc.join(1.0)
                raise HeavyRefused(f"{what} stopped unexpectedly (the worker ended with code {proc.exitcode}); "
                                   "the server log may say more") from None
        finally:
            parent.close()
            if proc.is_alive():
                proc.kill()
            proc.join(5.0)
        kind = outcome[0]
        if kind == "ok":
            return outcome[1]
        if kind == "raise":
            raise outcome[1]
        if kind == "memory":
            raise HeavyRefused(f"{what} needed more than the {cfg.memory_bytes / 1024**3:g} GB a job may use "
                               f"(after {time.monotonic() - started:.1f} s); use a smaller file or fewer series")
        raise RuntimeError(f"{what} failed in its worker ({outcome[1]}: {outcome[2]})")


def direct(what: str, func: Callable[..., Any], *args: Any, **kwargs: Any) -> Any:
    """The same call shape as ``HeavyRunner.run``, in the calling thread (plain functions and tests)."""
    return func(*args, **kwargs)


def bounded_of(app: Any) -> Callable[..., Any]:
    """The app's bound on heavy jobs for work that runs in the request's own thread."""
    runner = app.server.config.get("GROWTHCORE_HEAVY")
    return runner.bounded if runner is not None else direct


def runner_of(app: Any) -> Callable[..., Any]:
    """The app's heavy-job runner (``direct`` for an app built without one)."""
    runner = app.server.config.get("GROWTHCORE_HEAVY")
    return runner.run if runner is not None else direct


__all__ = ["HeavyConfig", "HeavyRefused", "HeavyRunner", "bounded_of", "direct", "runner_of"]
