"""Run (or resume) a dispersion: sampled flights streamed into the study store, on the process pool or Dask.

The output folder holds ``study.sqlite`` (`sizing.study.store.StudyStore`): one
row per finished sample, committed as it arrives, so ``kill -9`` or Ctrl-C
loses no stored sample, and running the same command again flies only the
sample ids without a row. Samples are drawn by id from the seed
(`sampling`), so a resumed run, a run on more workers or on Dask, and an
uninterrupted run store the same values bit for bit. A larger ``--samples``
adds samples; a smaller one takes the statistics of the first N.

The store's fingerprint covers the flown design, the inputs' distributions and
the seed, not the sample count, the probability or the confidence: changing
those re-reads the stored flights.
"""

from __future__ import annotations

import hashlib
import json
import math
import time
from dataclasses import asdict, dataclass, field
from pathlib import Path
from typing import Any, Callable

import numpy as np

from ..errors import FieldError, ProblemDefinitionError, StudyOutputConflictError
from ..study.runner import StudySummary
from .case import DispersionCase, Variant
from .flights import METRIC_UNITS, fly_nominal, fly_samples, fly_variants, flight_figures

__all__ = ["run_dispersion", "DispersionSummary", "DispersionProgress", "load_samples", "one_sigma_effects",
           "is_dispersion_folder", "rebuild_outputs",
           "fingerprint", "MSG_OTHER_RUN", "FORMAT"]

#: Version of what a stored sample holds; part of the fingerprint.
FORMAT = "dispersion-1"
MSG_OTHER_RUN = "holds samples of a different design, [dispersions] table or seed"


@dataclass
class DispersionProgress:
    """Progress counters passed to `on_progress`."""

    total: int
    done: int
    done_before: int
    elapsed_s: float
    counts: dict[str, int] = field(default_factory=dict)

    @property
    def rate_per_s(self) -> float:
        n = self.done - self.done_before
        return n / self.elapsed_s if self.elapsed_s > 0 else 0.0


@dataclass
class DispersionSummary(StudySummary):
    """What a `run_dispersion` call did (the study summary's counters, samples for cases);
    `statistics` is None unless every sample is stored."""

    statistics: dict[str, Any] | None = None
    outputs: dict[str, Path] = field(default_factory=dict)


class _NoInputs(dict):
    """Inputs of outcomes that carry none (a sample whose worker died twice)."""

    def __missing__(self, key):
        return {}


def fingerprint(case: DispersionCase) -> str:
    """Hash of what the stored flights depend on: design, options, target, distributions, seed."""
    spec = case.spec
    blob = {
        "format": FORMAT, "vehicle": asdict(case.vehicle), "site": asdict(case.site), "profile": case.profile,
        "ascent": None if case.ascent is None else asdict(case.ascent), "options": dict(case.fly_options),
        "target": dict(case.target), "payload": case.payload_mass_kg, "extra": case.extra_top_mass_kg,
        "wind": None if case.wind is None else asdict(case.wind), "descent": repr(case.descent),
        "inputs": [asdict(i) for i in spec.inputs], "correlation": spec.correlation, "seed": spec.seed,
        "wind_law": [spec.wind_exponent, spec.wind_reference_height_m],
        "marginals": [asdict(m) for m in case.marginals],
    }
    try:
        from importlib.metadata import version

        blob["code"] = version("stagesizer")
    except Exception:  # pragma: no cover - source tree without install
        blob["code"] = "unknown"
    text = json.dumps(blob, sort_keys=True, default=str, separators=(",", ":"))
    return hashlib.sha256(text.encode()).hexdigest()


def _deficit(case: DispersionCase, metrics: dict[str, float]) -> float:
    """-(margin over the target) of one flight [target unit]; nan without a target."""
    m = metrics.get("target_margin")
    return -m if m is not None and math.isfinite(m) else math.nan


def one_sigma_effects(case: DispersionCase, nominal_deficit: float,
                      figure: Callable[[DispersionCase, dict[str, float]], float] | None = None) -> dict[str, Any]:
    """Root-sum-square inputs: the deficit at every input's mean, and each input's one-sigma effect.

    Central differences about the inputs' means (flights with one input at mean
    +- one standard deviation); the bias is the deficit at the means minus the
    nominal deficit (a mean off the nominal, e.g. a mean wind). `figure`
    replaces the deficit by another figure of the flight (e.g. the ideal delta-v).
    """
    figure = figure or _deficit
    means = np.array([m.mean for m in case.marginals])
    rows = [means]
    for j, m in enumerate(case.marginals):
        for s in (1.0, -1.0):
            r = means.copy()
            r[j] += s * m.std
            rows.append(r)
    variants: list[Variant | None] = []
    for r in rows:
        try:
            variants.append(case.vary(r))
        except FieldError:
            variants.append(None)
    flown = iter(fly_variants(case, [v for v in variants if v is not None]))
    d = []
    for v in variants:
        fr = next(flown) if v is not None else None
        if v is None or isinstance(fr, FieldError):
            d.append(math.nan)
            continue
        status, _, figs = flight_figures(case, v, fr)
        d.append(figure(case, figs) if status == "ok" else math.inf)
    effects = [0.5 * (d[1 + 2 * j] - d[2 + 2 * j]) for j in range(len(case.marginals))]
    return {"deficit_at_means": d[0], "bias": d[0] - nominal_deficit, "one_sigma_effects": effects,
            "inputs": list(case.spec.names)}


def _case_meta(case: DispersionCase) -> dict[str, Any]:
    return {
        "kind": "dispersion", "name": case.name, "source": case.source, "target_kind": case.target_kind,
        "target": dict(case.target), "profile": case.profile, "payload_mass_kg": case.payload_mass_kg,
        "extra_top_mass_kg": case.extra_top_mass_kg, "gross_mass_kg": case.vehicle.gross_mass_kg,
        "stages": [s.name for s in case.vehicle.stages], "hobby": dict(case.hobby or {}),
        "has_landing": case.descent is not None, "seed": case.spec.seed,
        "probability": case.spec.probability, "confidence": case.spec.confidence,
        "inputs": [{"name": m.name, "unit": m.unit, "nominal": m.nominal, "mean": m.mean, "std": m.std,
                    "distribution": m.describe()} for m in case.marginals],
        "correlation": [list(r) for r in case.spec.correlation],
        "last_stage_exhaust_velocity_m_s": case.vehicle.stages[-1].exhaust_velocity_vac_m_s,
        "wind": None if case.wind is None else case.wind.describe(),
    }


def _open_store(folder: Path, fp: str, restart: bool, meta: dict[str, Any]):
    from ..study.store import StudyStore

    try:
        return StudyStore(folder, fingerprint=fp, restart=restart, meta=meta)
    except StudyOutputConflictError:
        raise StudyOutputConflictError(str(folder), f"{MSG_OTHER_RUN}. Pass --restart to discard the stored "
                                       "samples and start over, or choose another --out folder.") from None


def run_dispersion(case: DispersionCase, out: str | Path, *, samples: int | None = None, engine: str = "local",
                   workers: int | None = None, scheduler: Any = None, restart: bool = False,
                   on_progress: Callable[[DispersionProgress], None] | None = None,
                   on_message: Callable[[str], None] | None = None, case_function=None,
                   write_outputs: bool = True, probability: float | None = None,
                   confidence: float | None = None) -> DispersionSummary:
    """Fly (or resume) the Monte Carlo samples of a case into an output folder.

    Parameters
    ----------
    case : DispersionCase
        From `sizing.dispersion.case.case_from_file`.
    out : str or Path
        Output folder: ``study.sqlite``; when complete ``statistics.json``,
        ``statistics.csv``, ``samples.csv``, ``report.html`` and ``CAUTION.txt``.
    samples : int, optional
        Number of samples (default ``[dispersions].samples``).
    engine : {'local', 'dask', 'serial'}
        Worker processes (default), a Dask cluster (`scheduler` or a local
        cluster of `workers` processes) or this process alone.
    restart : bool
        Discard samples stored by another design, table or seed.
    probability, confidence : float, optional
        Override ``[dispersions].probability`` / ``.confidence`` in the statistics.
    case_function : callable, optional
        Replaces `fly_samples` (fault-injection tests).

    Raises
    ------
    ProblemDefinitionError
        The nominal design cannot fly.
    StudyOutputConflictError
        The folder holds another run's samples and `restart` is False.
    """
    from ..study.runner import drive_engine
    from ..study.spec import Case

    t0 = time.perf_counter()
    n = int(samples or case.spec.samples)
    if n < 1:
        raise ValueError(f"--samples: must be >= 1. Got {n}.")
    try:
        nominal = fly_nominal(case)
    except FieldError as exc:
        raise ProblemDefinitionError(case.source, [f"the nominal design cannot fly: {exc}"]) from None
    folder = Path(out)
    db = _open_store(folder, fingerprint(case), restart, {"kind": "dispersion", "case": _case_meta(case)})
    try:
        if db.get_meta("nominal") is None:
            db.set_meta("nominal", nominal)
            db.set_meta("rss", one_sigma_effects(case, _deficit(case, nominal["metrics"])))
        done = {i for i in db.done_ids() if i < n}
        todo = [Case(i, f"sample {i}", {}) for i in range(n) if i not in done]
        summary = DispersionSummary(folder, n, len(done), 0, engine=engine)
        counts: dict[str, int] = {}
        state = {"done": len(done)}

        def report(outcomes: list[dict]) -> None:
            k = db.record(outcomes, _NoInputs())
            state["done"] += k
            summary.ran += k
            for o in outcomes:
                counts[o["status"]] = counts.get(o["status"], 0) + 1
            if on_progress is not None:
                on_progress(DispersionProgress(n, state["done"], len(done), time.perf_counter() - t0, dict(counts)))

        if on_progress is not None:
            on_progress(DispersionProgress(n, state["done"], len(done), 0.0, {}))
        if todo:
            summary.workers, summary.interrupted = drive_engine(
                engine, case, todo, report, workers=workers, scheduler=scheduler,
                case_function=case_function or fly_samples, batch=True, on_message=on_message)
        summary.counts = _counts(db, n)
        db.set_meta("last_run", {"elapsed_s": time.perf_counter() - t0, "ran": summary.ran, "engine": engine,
                                 "workers": summary.workers, "interrupted": summary.interrupted})
    finally:
        db.close()
    summary.elapsed_s = time.perf_counter() - t0
    if summary.complete and not summary.interrupted:
        from .summary import summarise, write_outputs as _write

        samples_ = load_samples(folder, n)
        summary.statistics = summarise(samples_, probability=probability, confidence=confidence,
                                       default_probability=case.spec.probability,
                                       default_confidence=case.spec.confidence)
        if write_outputs:
            summary.outputs = _write(folder, samples_, summary.statistics)
    return summary


def _counts(db, n: int) -> dict[str, int]:
    """Stored samples with id < n per status."""
    ids, status, _ = db.metric_columns([])
    out: dict[str, int] = {}
    for i, s in zip(ids, status):
        if i < n:
            out[s] = out.get(s, 0) + 1
    return out


def is_dispersion_folder(folder: str | Path) -> bool:
    """True when the folder's store holds a dispersion run (not a trade study)."""
    from ..study.store import StudyStore

    if not (Path(folder) / "study.sqlite").exists():
        return False
    with StudyStore(folder) as db:
        return db.get_meta("kind") == "dispersion"


def rebuild_outputs(folder: str | Path) -> dict[str, Path]:
    """Statistics, exports and report of every stored sample, at the run's probability and confidence
    (`sizing report FOLDER` on a dispersion folder)."""
    from .summary import summarise, write_outputs

    samples = load_samples(folder)
    meta = samples["meta"]
    stats = summarise(samples, default_probability=meta.get("probability"),
                      default_confidence=meta.get("confidence") or 0.9)
    return write_outputs(folder, samples, stats)


def load_samples(folder: str | Path, n: int | None = None) -> dict[str, Any]:
    """The stored samples of a dispersion folder (ids < n), as arrays, with the run's meta.

    Returns
    -------
    dict
        ``ids``, ``status`` (arrays), ``metrics`` and ``inputs`` (name -> array,
        nan where absent), ``meta`` (the case), ``nominal``, ``rss``.
    """
    from ..study.store import StudyStore

    folder = Path(folder)
    if not (folder / "study.sqlite").exists():
        raise StudyOutputConflictError(str(folder), "has no study.sqlite; run `sizing disperse FILE --out "
                                       f"{folder}` first.")
    with StudyStore(folder) as db:
        if db.get_meta("kind") != "dispersion":
            raise StudyOutputConflictError(str(folder), "holds a trade study, not a dispersion run "
                                           "(rebuild its report with `sizing report`).")
        meta = json.loads(db.get_meta("case"))
        nominal = json.loads(db.get_meta("nominal") or "null")
        rss = json.loads(db.get_meta("rss") or "null")
        ids, status, metrics, inputs = [], [], [], []
        for chunk in db.iter_rows(with_result=False):
            for r in chunk:
                if n is not None and r["case_id"] >= n:
                    continue
                ids.append(r["case_id"])
                status.append(r["status"])
                metrics.append(r["metrics"])
                inputs.append(r["inputs"])
    names = [i["name"] for i in meta["inputs"]]
    figs = sorted({k for m in metrics for k in m}, key=lambda k: list(METRIC_UNITS).index(k)
                  if k in METRIC_UNITS else 999)
    return {
        "ids": np.asarray(ids, dtype=np.int64), "status": np.asarray(status, dtype=object),
        "metrics": {k: np.array([_num(m.get(k)) for m in metrics]) for k in figs},
        "inputs": {k: np.array([_num(i.get(k)) for i in inputs]) for k in names},
        "meta": meta, "nominal": nominal, "rss": rss, "folder": str(folder),
    }


def _num(v) -> float:
    return math.nan if v is None else float(v)
