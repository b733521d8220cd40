"""Run a study: expand its cases, skip those already stored, size the rest in parallel.

Resume semantics: the output folder's SQLite store holds one row per finished
case. Running the same study into the same folder again runs only the case
ids without a row, so a crash, ``kill -9`` or Ctrl-C loses no stored case and
stores none twice. A different study file (a different fingerprint) against
the folder is refused unless ``restart=True``.
"""

from __future__ import annotations

import time
from collections import deque
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Callable

from ..errors import ProblemDefinitionError, StudyDefinitionError
from .engines import CaseFunction, DaskEngine, LocalEngine, SerialEngine
from .evaluate import EvalContext, evaluate_case, is_batch_eligible
from .spec import Case, Study, expand_cases, load_study
from .store import NullStore, StudyStore

__all__ = ["run_study", "StudySummary", "StudyProgress", "MSG_WORKER_DIED", "FAILED_STATUSES", "drive_engine"]

MSG_WORKER_DIED = "worker process died twice while sizing this case"
#: Statuses counted as failed in the progress bar and summary.
FAILED_STATUSES = frozenset({"infeasible", "rejected", "error", "crashed"})


@dataclass
class StudyProgress:
    """Progress counters passed to the `on_progress` callback."""

    total: int
    done: int
    failed: int
    done_before: int
    elapsed_s: float
    counts: dict[str, int] = field(default_factory=dict)
    """Finished cases per status ('ok', 'infeasible', 'rejected', 'error', 'crashed').
    `failed` is the sum over the non-'ok' statuses."""

    @property
    def rate_per_s(self) -> float:
        """Cases finished per second in this run."""
        n = self.done - self.done_before
        return n / self.elapsed_s if self.elapsed_s > 0 else 0.0

    @property
    def eta_s(self) -> float | None:
        r = self.rate_per_s
        return (self.total - self.done) / r if r > 0 else None


@dataclass
class StudySummary:
    """What a `run_study` call did.

    Attributes
    ----------
    folder : Path
    total : int
        Cases in the study.
    done_before : int
        Cases already stored when this run started (resumed).
    ran : int
        Cases finished in this run.
    counts : dict
        Stored cases per status ('ok', 'infeasible', 'rejected', 'error', 'crashed').
    elapsed_s : float
    interrupted : bool
        True when Ctrl-C stopped the run (rerun to resume).
    engine : str
    workers : int
    """

    folder: Path
    total: int
    done_before: int
    ran: int
    counts: dict[str, int] = field(default_factory=dict)
    elapsed_s: float = 0.0
    interrupted: bool = False
    engine: str = "local"
    workers: int = 1

    @property
    def n_ok(self) -> int:
        return self.counts.get("ok", 0)

    @property
    def n_failed(self) -> int:
        return sum(v for k, v in self.counts.items() if k in FAILED_STATUSES)

    @property
    def complete(self) -> bool:
        return sum(self.counts.values()) >= self.total


def _chunk_size(remaining: int, parallelism: int, batch: bool) -> int:
    if batch:
        return max(1, min(2000, -(-remaining // (parallelism * 4))))
    return max(1, min(32, -(-remaining // (parallelism * 16))))


def _make_engine(engine: str, ctx: EvalContext, workers: int | None, scheduler,
                 case_function: CaseFunction | None):
    if engine == "local":
        return LocalEngine(ctx, workers=workers, case_function=case_function)
    if engine == "serial":
        return SerialEngine(ctx, case_function=case_function)
    if engine == "dask":  # scheduler None: a local cluster of `workers` processes
        return DaskEngine(ctx, scheduler=scheduler, case_function=case_function, workers=workers)
    raise ValueError(f"unknown engine {engine!r}. Choose one of: 'local', 'dask', 'serial'.")


def _preflight(study: Study, case: Case, ctx: EvalContext) -> tuple[dict, bool]:
    """Size the first case in this process: bad input fails here, before the pool starts."""
    from ..problem.load import problem_from_dict

    try:
        problem = problem_from_dict(ctx.problem_data(_as_dict(case)), source=f"{study.source} [base]")
    except ProblemDefinitionError as exc:
        inputs = ", ".join(f"{k} = {v!r}" for k, v in case.inputs.items()) or "no axes"
        raise StudyDefinitionError(
            study.source, [f"base problem with the first case's values ({inputs}): {f}"
                           for f in exc.faults]) from None
    outcome = evaluate_case(_as_dict(case), ctx)
    msg = outcome["message"]
    if outcome["status"] == "error" and ("objective metric" in msg or "constraint " in msg):
        raise StudyDefinitionError(study.source, [f"objective/constraints: {msg}."])
    return outcome, is_batch_eligible(problem)


def _as_dict(case: Case) -> dict[str, Any]:
    d = {"case_id": case.case_id, "key": case.key, "inputs": case.inputs}
    if case.problem is not None:
        d["problem"] = case.problem
    return d


def run_study(study: Study | str | Path, out: str | Path, *, engine: str = "local",
              workers: int | None = None, scheduler: Any = None, restart: bool = False,
              on_progress: Callable[[StudyProgress], None] | None = None,
              case_function: CaseFunction | None = None, store: str = "sqlite",
              write_outputs: bool = True, on_message: Callable[[str], None] | None = None) -> StudySummary:
    """Run (or resume) a study into an output folder.

    Parameters
    ----------
    study : Study or path
        A loaded study or a study file.
    out : str or Path
        Output folder: ``study.sqlite``, and at the end ``pareto.csv``,
        ``pareto.xlsx`` and ``report.html``.
    engine : {'local', 'dask', 'serial'}
        Local worker processes (default), a Dask distributed cluster, or
        this process alone.
    workers : int, optional
        Local worker processes (default: all cores).
    scheduler : str or distributed.Client, optional
        For ``engine='dask'``: ``tcp://host:port`` or a client; None starts a
        local Dask cluster of `workers` processes.
    restart : bool
        Discard results stored by a different (or the same) study file.
    on_progress : callable, optional
        Called with a `StudyProgress` after each stored batch of cases.
    case_function : callable, optional
        Replaces `evaluate_cases` (fault-injection tests).
    store : {'sqlite', 'none'}
        'none' keeps nothing (benchmarks measure the store's overhead with it).
    write_outputs : bool
        Write the Pareto exports and the HTML report when the study completes.
    on_message : callable, optional
        Called with one line of text about the run, e.g. where a Dask cluster's
        dashboard is.

    Returns
    -------
    StudySummary

    Raises
    ------
    StudyDefinitionError
        Bad study file or base problem (before any case runs).
    StudyOutputConflictError
        The folder holds another study's results and ``restart`` is False.
    """
    if not isinstance(study, Study):
        study = load_study(study)
    t_start = time.perf_counter()
    folder = Path(out)
    cases = expand_cases(study, with_problems=False)
    ctx = EvalContext.from_study(study)
    # Size the first case before the output folder is touched: a study that fails its
    # first-case check leaves no store behind, so the fixed file can reuse the folder.
    first, batch_ok = _preflight(study, cases[0], ctx) if cases else (None, False)
    if store == "none":
        db: Any = NullStore()
    else:
        db = StudyStore(folder, fingerprint=study.fingerprint, restart=restart,
                        meta={"study_source": study.source, "study": study.raw,
                              "base": study.base, "n_cases": len(cases)})
    inputs = {c.case_id: c.inputs for c in cases}
    try:
        done = db.done_ids()
        todo = [c for c in cases if c.case_id not in done]
        done_before = len(done)
        counts = db.counts()
        failed = sum(v for k, v in counts.items() if k in FAILED_STATUSES)
        summary = StudySummary(folder, len(cases), done_before, 0, engine=engine,
                               workers=1 if engine == "serial" else (workers or 0))
        state = {"done": done_before, "failed": failed}
        by_status = dict(counts)

        def report(outcomes: list[dict]) -> None:
            n = db.record(outcomes, inputs)
            state["done"] += n
            for o in outcomes:
                by_status[o["status"]] = by_status.get(o["status"], 0) + 1
            state["failed"] += sum(1 for o in outcomes if o["status"] in FAILED_STATUSES)
            summary.ran += n
            if on_progress is not None:
                on_progress(StudyProgress(len(cases), state["done"], state["failed"], done_before,
                                          time.perf_counter() - t_start, dict(by_status)))

        if on_progress is not None:
            on_progress(StudyProgress(len(cases), state["done"], state["failed"], done_before, 0.0,
                                      dict(by_status)))
        batch = batch_ok and ctx.solver in ("auto", "batch")
        if todo and first is not None and todo[0].case_id == first["case_id"] and case_function is None:
            report([first])
            todo = todo[1:]
        if todo:
            summary.workers, summary.interrupted = drive_engine(
                engine, ctx, todo, report, workers=workers, scheduler=scheduler, case_function=case_function,
                batch=batch, on_message=on_message)
        summary.counts = db.counts() if store != "none" else {}
        summary.elapsed_s = time.perf_counter() - t_start
        if isinstance(db, StudyStore):
            db.set_meta("last_run", {"elapsed_s": summary.elapsed_s, "ran": summary.ran,
                                     "engine": engine, "workers": summary.workers,
                                     "interrupted": summary.interrupted})
    finally:
        db.close()
    if write_outputs and store != "none" and summary.complete and not summary.interrupted:
        from .results import write_outputs as _write

        _write(folder)
    return summary


def drive_engine(engine: str, ctx: Any, todo: list[Case], report: Callable[[list[dict]], None], *,
                 workers: int | None = None, scheduler: Any = None, case_function: CaseFunction | None = None,
                 batch: bool = False, on_message: Callable[[str], None] | None = None) -> tuple[int, bool]:
    """Start an engine, run the cases through it (`report` gets the outcomes as they arrive), close it.

    Returns (parallelism, interrupted): Ctrl-C stops the workers and returns interrupted True, so the
    caller keeps what is stored. Dispersion runs use it with their own context and case function.
    """
    eng = _make_engine(engine, ctx, workers, scheduler, case_function)
    eng.start()
    parallelism = eng.parallelism
    if on_message is not None and hasattr(eng, "description"):
        on_message(eng.description)
    interrupted = False
    try:
        _drive(eng, todo, batch, report)
    except KeyboardInterrupt:
        interrupted = True
        eng.close(terminate=True)
        eng = None
    finally:
        if eng is not None:
            eng.close()
    return parallelism, interrupted


def _drive(eng, todo: list[Case], batch: bool, report: Callable[[list[dict]], None]) -> None:
    """Feed tasks to the engine, record outcomes, retry a dead worker's case once."""
    by_id = {c.case_id: c for c in todo}
    queue: deque[list[int]] = deque()
    size = _chunk_size(len(todo), max(1, eng.parallelism), batch)
    ids = [c.case_id for c in todo]
    for i in range(0, len(ids), size):
        queue.append(ids[i:i + size])
    pending: dict[int, list[int]] = {}
    deaths: dict[int, int] = {}
    next_id = 0
    while queue or pending:
        while queue and eng.capacity > 0:
            chunk = queue.popleft()
            pending[next_id] = list(chunk)
            eng.submit(next_id, [_as_dict(by_id[i]) for i in chunk])
            next_id += 1
        for ev in eng.poll(0.2):
            kind, tid = ev[0], ev[1]
            if kind == "results":
                left = pending.get(tid, [])
                fresh = []
                for o in ev[2]:
                    if o["case_id"] in left:
                        left.remove(o["case_id"])
                        o["attempts"] = deaths.get(o["case_id"], 0) + 1
                        fresh.append(o)
                report(fresh)
            elif kind == "done":
                left = pending.pop(tid, [])
                for cid in left:  # a case function that skipped cases: run them again alone
                    queue.append([cid])
            elif kind == "died":
                left = pending.pop(tid, [])
                culprit = ev[2]
                if culprit is None and len(left) == 1:
                    culprit = left[0]
                if culprit is None or culprit not in left:
                    queue.extendleft([cid] for cid in reversed(left))  # isolate to find it
                    continue
                others = [cid for cid in left if cid != culprit]
                if others:
                    queue.appendleft(others)
                deaths[culprit] = deaths.get(culprit, 0) + 1
                if deaths[culprit] >= 2:
                    c = by_id[culprit]
                    report([{"case_id": c.case_id, "key": c.key, "status": "crashed",
                             "message": MSG_WORKER_DIED, "metrics": {}, "result": None,
                             "elapsed_s": 0.0, "attempts": deaths[culprit]}])
                else:
                    queue.appendleft([culprit])
            elif kind == "failed":
                left = pending.pop(tid, [])
                report([{"case_id": cid, "key": by_id[cid].key, "status": "error",
                         "message": ev[2], "metrics": {}, "result": None, "elapsed_s": 0.0}
                        for cid in left])
