"""Trade-study benchmark at overnight scale, measured side by side in one run.

1. a 1e5-case ideal delta-v study, run and report (cases.csv, Pareto exports, report.html),
   on 2 workers: wall time of each step (target: run + report under 2 minutes on 2 cores),
   the runner's peak memory, the report's size (target under ~10 MB);
2. report.html of that study in headless Chromium (fresh profile): time until the first
   screen is drawn (front, knee, table) and until every plot is drawn (target under 3 s);
3. non-dominated sorting at 1e5 and 1e6 points, 2 and 3 objectives, against the previous
   implementation (front by a lexicographic scan, fronts peeled one at a time), same points;
4. loading the study's results: ranking from objective columns read in SQL against decoding
   every stored row (the previous `load_results`);
5. speed-up of 2 local workers over 1 on a loss-aware study of 104 cases (each case sized to
   a 30 km apogee with simulated flights) (target >= 1.7x);
6. SQLite store overhead on a fast per-case study (time inside `StudyStore.record`);
7. (``--million``) a 1e6-case ideal study, run and report: wall times, peak memory of the
   runner process (target: far below 24 GiB), report size.

Run:  python benchmarks/bench_study.py [--million] [--quick]
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

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

from sizing.problem.load import read_toml  # noqa: E402
from sizing.study.pareto import non_dominated_ranks  # noqa: E402
from sizing.study.results import load_results, write_outputs  # noqa: E402
from sizing.study.runner import run_study  # noqa: E402
from sizing.study.spec import expand_cases, study_from_dict  # noqa: E402
from sizing.study.store import StudyStore  # noqa: E402

CHROMIUM = "/usr/bin/chromium"
ARGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-background-networking",
        "--disable-component-update", "--no-first-run", "--disable-sync"]


def _ideal_study(n_payload: int, n_dv: int, n_eps: int, solver: str = "auto") -> dict:
    return {
        "study": {"name": "bench ideal", "solver": solver},
        "base": read_toml(ROOT / "problems" / "jackdaw_three_stage.toml"),
        "axis": [
            {"field": "mission.payload_mass", "start": 100.0, "stop": 300.0, "num": n_payload},
            {"field": "mission.delta_v", "start": 8500.0, "stop": 10000.0, "num": n_dv},
            {"field": "stage.first.structural_coefficient", "start": 0.06, "stop": 0.12, "num": n_eps},
        ],
        "objective": [{"metric": "gross_mass_kg"}, {"metric": "payload_mass_kg"}],
    }


def _loss_aware_study(quick: bool) -> dict:
    data = read_toml(ROOT / "studies" / "heron_apogee_trade.toml")
    data["base"] = read_toml(ROOT / "problems" / "heron_apogee.toml")
    n = 6 if quick else 26
    data["axis"][0] = {"field": "stage.boost.thrust_to_weight", "label": "booster thrust-to-weight",
                       "start": 5.0, "stop": 15.0, "num": n}
    data["axis"].append({"field": "mission.payload_mass", "values": [4.0, 4.5]})
    return data


def _peak_mb() -> float:
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0


def _run_and_report(data: dict, out: Path, workers: int) -> tuple[float, float, int]:
    """Wall time of the run, of the outputs (report included) [s], and report size [bytes]."""
    shutil.rmtree(out, ignore_errors=True)
    t = time.perf_counter()
    run_study(study_from_dict(copy.deepcopy(data), source="<bench>"), out, workers=workers,
              write_outputs=False)
    t_run = time.perf_counter() - t
    t = time.perf_counter()
    write_outputs(out)
    return t_run, time.perf_counter() - t, (out / "report.html").stat().st_size


def _browser_times(report: Path, repeats: int = 3) -> tuple[float, float] | None:
    """Median seconds until the first screen and until every plot is drawn, or None."""
    if not os.path.exists(CHROMIUM):
        return None
    try:
        from playwright.sync_api import sync_playwright
    except ImportError:
        return None
    first, full = [], []
    with sync_playwright() as p:
        ctx = p.chromium.launch_persistent_context(tempfile.mkdtemp(prefix="bench_chromium_"),
                                                   executable_path=CHROMIUM, args=ARGS,
                                                   viewport={"width": 1400, "height": 900})
        try:
            for _ in range(repeats):
                page = ctx.new_page()
                page.goto(report.as_uri())
                page.wait_for_selector('body[data-drawn="1"]', state="attached", timeout=120000)
                # the page stamps both moments itself (performance.now(), from navigation start)
                first.append(float(page.get_attribute("body", "data-ready-ms")) / 1000.0)
                full.append(float(page.get_attribute("body", "data-drawn-ms")) / 1000.0)
                page.close()
        finally:
            ctx.close()
    return float(np.median(first)), float(np.median(full))


def _old_pareto_mask(F: np.ndarray) -> np.ndarray:
    """The previous front finder: lexicographic sort, then each row against the front so far."""
    n = F.shape[0]
    mask = np.zeros(n, dtype=bool)
    order = np.lexsort(F.T[::-1])
    front = np.empty_like(F)
    nf = 0
    members = []
    for j in order:
        p = F[j]
        if nf:
            fr = front[:nf]
            if np.any(np.all(fr <= p, axis=1) & np.any(fr < p, axis=1)):
                continue
        front[nf] = p
        nf += 1
        members.append(j)
    mask[members] = True
    return mask


def _old_ranks(F: np.ndarray, max_rank: int, budget_s: float) -> tuple[float, int]:
    """Seconds the previous ranking took (peeling with `_old_pareto_mask`) and fronts done;
    stops after `budget_s` and reports the time per front extrapolated."""
    left = np.arange(F.shape[0])
    t = time.perf_counter()
    r = 0
    while left.size and r < max_rank:
        m = _old_pareto_mask(F[left])
        left = left[~m]
        r += 1
        if time.perf_counter() - t > budget_s:
            break
    return time.perf_counter() - t, r


def _pareto_bench(sizes, rank_cap: int = 10) -> None:
    rng = np.random.default_rng(2026)
    print("[3] non-dominated ranks (capped at 10 fronts), new vs previous implementation, same points:")
    for n in sizes:
        for k in (2, 3):
            F = rng.random((n, k))
            F[:, k - 1] = F[:, : k - 1].sum(axis=1) * -1.0 + 0.2 * rng.random(n)  # a real trade-off
            t = time.perf_counter()
            non_dominated_ranks(F, max_rank=rank_cap)
            t_new = time.perf_counter() - t
            if n * k > 2_000_000:  # the previous code needs many minutes for one such front
                print(f"    n = {n:>9,}, {k} objectives: new {t_new:7.3f} s (previous not run: one front "
                      f"takes many minutes)")
                continue
            t_old, fronts = _old_ranks(F, rank_cap, budget_s=60.0)
            est = t_old * rank_cap / max(fronts, 1)
            tag = "" if fronts == rank_cap else f" (stopped after {fronts} fronts; {rank_cap} extrapolated)"
            print(f"    n = {n:>9,}, {k} objectives: new {t_new:7.3f} s, previous {est:8.2f} s{tag}: "
                  f"{est / t_new:,.0f}x")


def _load_bench(folder: Path) -> None:
    t = time.perf_counter()
    res = load_results(folder)
    t_new = time.perf_counter() - t
    n_front = len(res.front_ids)
    t = time.perf_counter()
    with StudyStore(folder) as store:
        rows = store.rows()  # the previous load_results decoded every row, results included
    t_old = time.perf_counter() - t
    print(f"[4] loading and ranking {len(res.case_ids):,} stored cases: objective columns in SQL "
          f"{t_new:.2f} s vs decoding every row {t_old:.2f} s (before ranking) = {t_old / t_new:.1f}x; "
          f"{n_front} on the front")
    del rows


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--quick", action="store_true", help="1e4 cases and a smaller loss-aware study")
    ap.add_argument("--million", action="store_true", help="also run and report a 1e6-case study (minutes)")
    args = ap.parse_args(argv)
    tmp = Path(tempfile.mkdtemp(prefix="bench_study_"))
    load0 = os.getloadavg()[0]
    print(f"cores: {os.cpu_count()}, load average at start: {load0:.2f}"
          + ("  (other processes are busy: wall-time ratios below are pessimistic)" if load0 > 0.5 else ""))
    try:
        shape = (25, 20, 20) if args.quick else (50, 40, 50)
        ideal = _ideal_study(*shape)
        n = int(np.prod(shape))
        out = tmp / "ideal"
        t_run, t_out, size = _run_and_report(ideal, out, workers=2)
        print(f"[1] ideal delta-v study of {n:,} cases, 2 workers: run {t_run:.1f} s "
              f"({n / t_run:,.0f} cases/s), exports and report {t_out:.1f} s, total {t_run + t_out:.1f} s "
              f"(target < 120 s); runner peak memory {_peak_mb():,.0f} MB; report.html "
              f"{size / 1e6:.1f} MB (target < 10 MB), cases.csv "
              f"{(out / 'cases.csv').stat().st_size / 1e6:,.0f} MB")
        bt = _browser_times(out / "report.html")
        if bt is None:
            print("[2] report in Chromium: skipped (no /usr/bin/chromium or playwright)")
        else:
            print(f"[2] report.html of [1] in headless Chromium (1400 px, median of 3): first screen "
                  f"{bt[0]:.2f} s (target < 3 s), every plot drawn {bt[1]:.2f} s")
        _pareto_bench([10_000, 100_000] if args.quick else [100_000, 1_000_000])
        _load_bench(out)

        flight = _loss_aware_study(args.quick)
        n_f = len(expand_cases(study_from_dict(copy.deepcopy(flight))))
        times = {}
        for w in (1, 2):
            o = tmp / f"flight{w}"
            t = time.perf_counter()
            run_study(study_from_dict(copy.deepcopy(flight), source="<bench>"), o, workers=w,
                      write_outputs=False)
            times[w] = time.perf_counter() - t
            shutil.rmtree(o, ignore_errors=True)
        print(f"[5] loss-aware study, {n_f} cases (each sized to a 30 km apogee with simulated flights): "
              f"1 worker {times[1]:.1f} s ({n_f / times[1]:.1f} cases/s), 2 workers {times[2]:.1f} s "
              f"({n_f / times[2]:.1f} cases/s): speed-up {times[1] / times[2]:.2f}x (target >= 1.7x)")

        each = _ideal_study(25, 20, 2, solver="each")
        spent = [0.0]
        orig = StudyStore.record

        def timed_record(self, *a, **k):
            t0 = time.perf_counter()
            try:
                return orig(self, *a, **k)
            finally:
                spent[0] += time.perf_counter() - t0

        StudyStore.record = timed_record
        try:
            t0 = time.perf_counter()
            run_study(study_from_dict(copy.deepcopy(each), source="<bench>"), tmp / "each", workers=2,
                      write_outputs=False)
            t_each = time.perf_counter() - t0
        finally:
            StudyStore.record = orig
        print(f"[6] SQLite writes on a per-case study of {25 * 20 * 2:,} cases, 2 workers: {spent[0]:.3f} s "
              f"of {t_each:.2f} s = {100 * spent[0] / t_each:.1f} % of run time (target < 10 %)")

        if args.million:
            out = tmp / "million"
            before = _peak_mb()
            t_run, t_out, size = _run_and_report(_ideal_study(100, 100, 100), out, workers=2)
            print(f"[7] ideal delta-v study of 1,000,000 cases, 2 workers: run {t_run:.0f} s, exports and "
                  f"report {t_out:.0f} s; runner peak memory {_peak_mb():,.0f} MB (before: {before:,.0f} MB; "
                  f"24 GiB = 24,576 MB); report.html {size / 1e6:.1f} MB; study.sqlite "
                  f"{(out / 'study.sqlite').stat().st_size / 1e9:.1f} GB")
        print(f"load average at end: {os.getloadavg()[0]:.2f}")
    finally:
        shutil.rmtree(tmp, ignore_errors=True)
    return 0


if __name__ == "__main__":
    sys.exit(main())
