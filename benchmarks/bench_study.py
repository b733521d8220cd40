"""Trade-study benchmark: batch throughput, per-case throughput, 2-worker speed-up, SQLite overhead.

Everything is measured side by side in one run and printed as ratios:

1. an ideal delta-v study of >= 10,000 cases through the batch solver (local engine, all cores,
   SQLite store): wall time and cases per second;
2. per-case studies (each case a full `solve`): the unconstrained Lagrange path and the
   constrained convex program (cvxpy), as a stand-in for loss-aware cases, which are just as
   independent and heavier; cases per second;
3. speed-up of 2 local workers over 1 on the constrained per-case study and on a loss-aware
   study (each case sized to an apogee with simulated flights) (target >= 1.7x);
4. overhead of the SQLite store: the same study with the store and with a store that keeps
   nothing (target < 10 % of run time).

Run:  python benchmarks/bench_study.py [--quick]
"""

from __future__ import annotations

import argparse
import copy
import os
import resource
import shutil
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

from sizing.problem.load import read_toml  # noqa: E402
from sizing.study.runner import run_study  # noqa: E402
from sizing.study.spec import expand_cases, study_from_dict  # noqa: E402
from sizing.study.store import StudyStore  # noqa: E402


def _ideal_study(n_payload: int, n_dv: int, n_eps: int) -> dict:
    return {
        "study": {"name": "bench ideal", "solver": "auto"},
        "base": read_toml(ROOT / "problems" / "jackdaw_three_stage.toml"),
        "axis": [
            {"field": "mission.payload_mass", "start": 100.0, "stop": 300.0, "num": n_payload},
            {"field": "mission.delta_v", "start": 8500.0, "stop": 10000.0, "num": n_dv},
            {"field": "stage.first.structural_coefficient", "start": 0.06, "stop": 0.12, "num": n_eps},
        ],
        "objective": [{"metric": "gross_mass_kg"}, {"metric": "payload_mass_kg"}],
    }


def _constrained_study(n: int) -> dict:
    return {
        "study": {"name": "bench constrained", "solver": "each"},
        "base": read_toml(ROOT / "problems" / "jackdaw_constrained.toml"),
        "axis": [{"field": "mission.payload_mass", "start": 120.0, "stop": 240.0, "num": n}],
        "objective": [{"metric": "gross_mass_kg"}, {"metric": "payload_mass_kg"}],
    }


def _cpu() -> tuple[float, float]:
    a = resource.getrusage(resource.RUSAGE_SELF)
    b = resource.getrusage(resource.RUSAGE_CHILDREN)
    return a.ru_utime + a.ru_stime, b.ru_utime + b.ru_stime


def _timed(data: dict, tmp: Path, **kw) -> tuple[float, float, float]:
    """Wall time, runner CPU time and worker CPU time of one study run [s]."""
    out = tmp / f"run-{time.monotonic_ns()}"
    study = study_from_dict(copy.deepcopy(data), source="<bench>")
    p0, c0 = _cpu()
    t = time.perf_counter()
    run_study(study, out, write_outputs=False, **kw)
    dt = time.perf_counter() - t
    p1, c1 = _cpu()
    shutil.rmtree(out, ignore_errors=True)
    return dt, p1 - p0, c1 - c0


def _best(n: int, f):
    return min((f() for _ in range(n)), key=lambda r: r[0])


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--quick", action="store_true", help="smaller per-case studies")
    ap.add_argument("--repeats", type=int, default=2)
    args = ap.parse_args(argv)
    tmp = Path(tempfile.mkdtemp(prefix="bench_study_"))
    r = args.repeats
    load0 = os.getloadavg()[0]
    print(f"cores: {os.cpu_count()}, load average at start: {load0:.2f}"
          + ("  (other processes are busy: wall-time ratios below are pessimistic)"
             if load0 > 0.5 else ""))
    try:
        ideal = _ideal_study(25, 20, 21)
        n_ideal = len(expand_cases(study_from_dict(ideal)))
        t_b, cpu_p, cpu_w = _best(r, lambda: _timed(ideal, tmp))
        print("[1] ideal delta-v study, batch solver, local engine (all cores), SQLite store:")
        print(f"    {n_ideal:,} cases in {t_b:.2f} s = {n_ideal / t_b:,.0f} cases/s; CPU: runner "
              f"{cpu_p:.2f} s, workers {cpu_w:.2f} s")

        each = copy.deepcopy(ideal)
        each["study"]["solver"] = "each"
        each["axis"][2]["num"] = 2 if args.quick else 4
        n_each = len(expand_cases(study_from_dict(each)))
        t_e, *_ = _best(r, lambda: _timed(each, tmp))
        print("[2a] per-case solve (Lagrange, one solve() per case), local engine, SQLite:")
        print(f"    {n_each:,} cases in {t_e:.2f} s = {n_each / t_e:,.0f} cases/s "
              f"(batch is {n_ideal / t_b / (n_each / t_e):,.1f}x faster per case)")

        cons = _constrained_study(12 if args.quick else 40)
        n_c = len(expand_cases(study_from_dict(cons)))
        t1, *_ = _best(r, lambda: _timed(cons, tmp, workers=1))
        t2, *_ = _best(r, lambda: _timed(cons, tmp, workers=2))
        print("[2b] per-case solve (constrained convex program, cvxpy), local engine, SQLite:")
        print(f"    {n_c} cases: 1 worker {t1:.2f} s ({n_c / t1:.1f} cases/s), "
              f"2 workers {t2:.2f} s ({n_c / t2:.1f} cases/s)")
        print(f"[3] speed-up of 2 workers over 1 (constrained per-case study): {t1 / t2:.2f}x "
              f"(target >= 1.7x)")
        flight = read_toml(ROOT / "studies" / "heron_apogee_trade.toml")
        flight["base"] = read_toml(ROOT / "problems" / "heron_apogee.toml")
        if args.quick:
            flight["axis"][0]["values"] = flight["axis"][0]["values"][:3]
        n_f = len(expand_cases(study_from_dict(flight)))
        t1f, *_ = _best(r, lambda: _timed(flight, tmp, workers=1))
        t2f, *_ = _best(r, lambda: _timed(flight, tmp, workers=2))
        print("[2c] loss-aware study (each case sized to a 30 km apogee with simulated flights):")
        print(f"    {n_f} cases: 1 worker {t1f:.2f} s ({n_f / t1f:.1f} cases/s), "
              f"2 workers {t2f:.2f} s ({n_f / t2f:.1f} cases/s)")
        print(f"    speed-up of 2 workers over 1 (loss-aware study): {t1f / t2f:.2f}x (target >= 1.7x)")
        t1e, *_ = _best(r, lambda: _timed(each, tmp, workers=1))
        t2e, *_ = _best(r, lambda: _timed(each, tmp, workers=2))
        print(f"    same ratio on the fast per-case study [2a]: {t1e / t2e:.2f}x "
              f"(sub-millisecond cases: the runner's own work bounds it)")

        # SQLite overhead, two ways: (a) time spent inside StudyStore.record (the runner does
        # every write) as a share of the same run's wall time; (b) runs with and without the
        # store, interleaved, best of 3 each (noisier on a busy machine).
        for label, data in (("fast per-case study [2a]", each), ("batch study [1]", ideal)):
            spent = [0.0]
            orig = StudyStore.record

            def timed_record(self, *a, **k):
                t = time.perf_counter()
                try:
                    return orig(self, *a, **k)
                finally:
                    spent[0] += time.perf_counter() - t

            StudyStore.record = timed_record
            try:
                t_run, *_ = _timed(data, tmp, workers=2)
            finally:
                StudyStore.record = orig
            print(f"[4] SQLite writes on the {label}, 2 workers: {spent[0]:.3f} s of {t_run:.3f} s "
                  f"= {100 * spent[0] / t_run:.1f} % of run time (target < 10 %)")
            with_s, without_s = [], []
            for _ in range(3):
                with_s.append(_timed(data, tmp, workers=2)[0])
                without_s.append(_timed(data, tmp, workers=2, store="none")[0])
            a, b = min(with_s), min(without_s)
            print(f"    with store {a:.3f} s vs no store {b:.3f} s: difference "
                  f"{100 * (a - b) / a:+.1f} % of run time")
        print(f"load average at end: {os.getloadavg()[0]:.2f}")
    finally:
        shutil.rmtree(tmp, ignore_errors=True)
    return 0


if __name__ == "__main__":
    sys.exit(main())
