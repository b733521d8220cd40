"""Execution engines: where study cases run.

An engine accepts tasks (a task is a list of cases) and reports events:

``("results", task_id, [outcome, ...])``  cases finished (streamed as they finish)
``("done", task_id)``                    the task finished
``("died", task_id, case_id | None)``    the worker died; ``case_id`` is the case
                                         it was sizing when known, else None

`LocalEngine` runs its own worker processes (default: one per core). Each
worker streams finished cases back at least every `FLUSH_S` seconds and marks
in shared memory the case it is on, so when a worker dies the runner knows
the culprit, retries that case once on its own and records it as crashed if
it dies again. A new worker takes the dead one's place.

`DaskEngine` submits tasks to a Dask distributed scheduler. A task whose
worker dies raises `KilledWorker`; the runner then reruns its cases one per
task, so a second death names the case. The scheduler's
``distributed.scheduler.allowed-failures`` adds Dask's own retries on top.
"""

from __future__ import annotations

import multiprocessing as mp
import os
import signal
import sys
import time
from collections.abc import Callable, Mapping, Sequence
from multiprocessing.connection import wait
from typing import Any

from .evaluate import EvalContext, evaluate_cases
from .store import encode_outcome

__all__ = ["LocalEngine", "DaskEngine", "SerialEngine", "FLUSH_S", "CaseFunction"]

#: A worker sends finished cases back at least this often [s].
FLUSH_S = 0.05
_IDLE = -2
_BATCH = -1

#: evaluate_cases-compatible function: (cases, ctx, on_result=, on_start=) -> list
CaseFunction = Callable[..., list]


def _worker_main(conn, current, ctx: EvalContext, fn: CaseFunction) -> None:
    """Loop of one local worker process: receive a task, stream its outcomes."""
    signal.signal(signal.SIGINT, signal.SIG_IGN)  # the runner handles Ctrl-C
    parent = os.getppid()
    _die_with_parent()
    while True:
        try:
            # siblings forked later hold copies of this pipe's other end, so EOF alone
            # does not reveal a dead runner: also watch the parent id
            while not conn.poll(1.0):
                if os.getppid() != parent:
                    return
            msg = conn.recv()
        except (EOFError, OSError):
            return
        if msg is None:
            return
        task_id, cases = msg
        inputs = {c["case_id"]: c["inputs"] for c in cases}
        buf: list[dict] = []
        last = [time.monotonic()]

        def flush() -> None:
            if buf:
                conn.send(("results", task_id, list(buf)))
                buf.clear()
            last[0] = time.monotonic()

        def on_result(outcome: dict) -> None:
            current.value = _IDLE
            buf.append(encode_outcome(outcome, inputs.get(outcome["case_id"])))
            if time.monotonic() - last[0] >= FLUSH_S:
                flush()

        def on_start(case_id: int) -> None:
            current.value = case_id

        try:
            fn(cases, ctx, on_result=on_result, on_start=on_start)
            current.value = _IDLE
            flush()
            conn.send(("done", task_id))
        except (BrokenPipeError, EOFError, OSError):
            return
        if os.getppid() != parent:  # the runner is gone
            return


def _die_with_parent() -> None:
    """Ask Linux to kill this worker when the runner dies (prctl PR_SET_PDEATHSIG)."""
    if not sys.platform.startswith("linux"):
        return
    try:
        import ctypes

        libc = ctypes.CDLL(None, use_errno=True)
        libc.prctl(1, signal.SIGKILL, 0, 0, 0)  # PR_SET_PDEATHSIG = 1
    except (OSError, AttributeError):
        pass


class _Slot:
    __slots__ = ("proc", "conn", "current", "task")

    def __init__(self, proc, conn, current) -> None:
        self.proc = proc
        self.conn = conn
        self.current = current
        self.task: int | None = None


class LocalEngine:
    """Worker processes on this machine.

    Parameters
    ----------
    ctx : EvalContext
    workers : int, optional
        Number of processes (default: ``os.cpu_count()``).
    case_function : callable, optional
        Replaces `evaluate_cases` (tests inject faults with it).
    """

    name = "local"

    def __init__(self, ctx: EvalContext, *, workers: int | None = None,
                 case_function: CaseFunction | None = None) -> None:
        self.ctx = ctx
        self.workers = max(1, int(workers or os.cpu_count() or 1))
        self.fn = case_function or evaluate_cases
        methods = mp.get_all_start_methods()
        self._mp = mp.get_context("fork" if "fork" in methods else "spawn")
        self._slots: list[_Slot] = []

    def start(self) -> None:
        self._slots = [self._spawn() for _ in range(self.workers)]

    def _spawn(self) -> _Slot:
        parent, child = self._mp.Pipe(duplex=True)
        current = self._mp.RawValue("q", _IDLE)
        proc = self._mp.Process(target=_worker_main, args=(child, current, self.ctx, self.fn),
                                daemon=True)
        proc.start()
        child.close()
        return _Slot(proc, parent, current)

    @property
    def capacity(self) -> int:
        return sum(1 for s in self._slots if s.task is None)

    @property
    def parallelism(self) -> int:
        return self.workers

    def submit(self, task_id: int, cases: Sequence[Mapping[str, Any]]) -> None:
        for s in self._slots:
            if s.task is None:
                s.task = task_id
                s.current.value = _IDLE
                s.conn.send((task_id, list(cases)))
                return
        raise RuntimeError("no idle worker")

    def poll(self, timeout: float) -> list[tuple]:
        busy = [s for s in self._slots if s.task is not None]
        if not busy:
            return []
        handles: dict[Any, _Slot] = {}
        for s in busy:
            handles[s.conn] = s
            handles[s.proc.sentinel] = s
        ready = wait(list(handles), timeout)
        events: list[tuple] = []
        dead: list[_Slot] = []
        for h in ready:
            s = handles[h]
            if h is s.conn:
                while s.task is not None and s.conn.poll():
                    try:
                        msg = s.conn.recv()
                    except (EOFError, OSError):
                        break
                    events.append(msg)
                    if msg[0] == "done":
                        s.task = None
            elif s.task is not None and s not in dead:
                dead.append(s)
        for s in dead:
            # drain what it sent before dying
            try:
                while s.conn.poll():
                    msg = s.conn.recv()
                    events.append(msg)
                    if msg[0] == "done":
                        s.task = None
            except (EOFError, OSError):
                pass
            if s.task is not None:
                cur = int(s.current.value)
                events.append(("died", s.task, cur if cur >= 0 else None))
            s.conn.close()
            s.proc.join(timeout=1.0)
            i = self._slots.index(s)
            self._slots[i] = self._spawn()
        return events

    def close(self, *, terminate: bool = False) -> None:
        for s in self._slots:
            try:
                if terminate:
                    s.proc.terminate()
                else:
                    s.conn.send(None)
            except (BrokenPipeError, OSError):
                pass
        for s in self._slots:
            s.proc.join(timeout=2.0)
            if s.proc.is_alive():
                s.proc.kill()
                s.proc.join(timeout=1.0)
            s.conn.close()
        self._slots = []


class SerialEngine:
    """Runs cases in this process, one task at a time (debugging and baselines)."""

    name = "serial"
    parallelism = 1

    def __init__(self, ctx: EvalContext, *, case_function: CaseFunction | None = None) -> None:
        self.ctx = ctx
        self.fn = case_function or evaluate_cases
        self._queue: list[tuple[int, list]] = []

    def start(self) -> None:
        pass

    @property
    def capacity(self) -> int:
        return 0 if self._queue else 1

    def submit(self, task_id: int, cases: Sequence[Mapping[str, Any]]) -> None:
        self._queue.append((task_id, list(cases)))

    def poll(self, timeout: float) -> list[tuple]:
        if not self._queue:
            return []
        task_id, cases = self._queue.pop(0)
        out = self.fn(cases, self.ctx)
        return [("results", task_id, out), ("done", task_id)]

    def close(self, *, terminate: bool = False) -> None:
        self._queue.clear()


def _dask_task(cases: list, ctx: EvalContext, fn: CaseFunction) -> list:
    inputs = {c["case_id"]: c["inputs"] for c in cases}
    return [encode_outcome(o, inputs.get(o["case_id"])) for o in fn(cases, ctx)]


class DaskEngine:
    """Tasks on a Dask distributed cluster.

    Parameters
    ----------
    ctx : EvalContext
    scheduler : str, distributed.Client or None
        Scheduler address (``tcp://host:8786``) or a connected client; None
        starts a `distributed.LocalCluster` on this machine (one single-threaded
        worker process per core, or `workers`) and stops it at the end.
    workers : int, optional
        Worker processes of the local cluster (scheduler None only).
    case_function : callable, optional
        Replaces `evaluate_cases`; must be importable on the workers.
    tasks_per_thread : int
        Tasks kept in flight per worker thread.
    """

    name = "dask"

    def __init__(self, ctx: EvalContext, *, scheduler=None, case_function: CaseFunction | None = None,
                 tasks_per_thread: int = 2, workers: int | None = None) -> None:
        self.ctx = ctx
        self.scheduler = scheduler
        self.workers = workers
        self._cluster = None
        self.fn = case_function or evaluate_cases
        self.tasks_per_thread = tasks_per_thread
        self._client = None
        self._own_client = False
        self._futures: dict[Any, int] = {}

    def start(self) -> None:
        try:
            from distributed import Client
        except ImportError:  # pragma: no cover - depends on the install
            raise RuntimeError("the dask engine needs dask[distributed]: "
                               "pip install 'stagesizer[dask]'") from None
        if self.scheduler is None:
            from distributed import LocalCluster

            self._cluster = LocalCluster(n_workers=max(1, int(self.workers or os.cpu_count() or 1)),
                                         threads_per_worker=1, processes=True, host="127.0.0.1",
                                         dashboard_address="127.0.0.1:0")
            self._client = Client(self._cluster)
            self._own_client = True
        elif isinstance(self.scheduler, str):
            self._client = Client(self.scheduler, timeout="10s")
            self._own_client = True
        else:
            self._client = self.scheduler

    @property
    def description(self) -> str:
        """Where the tasks run and where to watch them: the scheduler and its dashboard."""
        if self._client is None:
            return "dask: not started"
        info = self._client.scheduler_info()
        where = "local cluster" if self._cluster is not None else "cluster"
        text = (f"Dask {where} at {info.get('address', self._client.scheduler.address)}, "
                f"{len(info.get('workers', {}))} workers")
        if "dashboard" in (info.get("services") or {}):
            return f"{text}; dashboard: {self._client.dashboard_link}"
        return (f"{text}; the scheduler serves no dashboard (it needs bokeh >= 3.1: "
                f"pip install 'stagesizer[dask]')")

    @property
    def parallelism(self) -> int:
        return max(1, sum(self._client.nthreads().values())) if self._client else 1

    @property
    def capacity(self) -> int:
        return max(0, self.parallelism * self.tasks_per_thread - len(self._futures))

    def submit(self, task_id: int, cases: Sequence[Mapping[str, Any]]) -> None:
        fut = self._client.submit(_dask_task, list(cases), self.ctx, self.fn, pure=False)
        self._futures[fut] = task_id

    def poll(self, timeout: float) -> list[tuple]:
        if not self._futures:
            return []
        from distributed import wait as dwait
        from distributed.scheduler import KilledWorker

        try:
            dwait(list(self._futures), timeout=timeout, return_when="FIRST_COMPLETED")
        except TimeoutError:
            return []
        except Exception:  # dask raises its own timeout class on some versions
            pass
        events: list[tuple] = []
        for fut in [f for f in self._futures if f.done()]:
            task_id = self._futures.pop(fut)
            try:
                out = fut.result()
            except KilledWorker:
                events.append(("died", task_id, None))
                continue
            except Exception as exc:
                events.append(("failed", task_id, f"{type(exc).__name__}: {exc}"))
                continue
            events.append(("results", task_id, out))
            events.append(("done", task_id))
        return events

    def close(self, *, terminate: bool = False) -> None:
        if self._client is not None:
            for fut in self._futures:
                fut.cancel()
            self._futures.clear()
            if self._own_client:
                self._client.close()
            self._client = None
        if self._cluster is not None:
            self._cluster.close()
            self._cluster = None
