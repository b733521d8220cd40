"""Running studies: physics of a case, failures recorded, store refusal, resume, engines."""

from __future__ import annotations

import copy
import os
import random
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest

from sizing.errors import StudyDefinitionError, StudyOutputConflictError
from sizing.study.results import load_results, write_review_pack
from sizing.study.runner import MSG_WORKER_DIED, run_study
from sizing.study.spec import study_from_dict
from sizing.study.store import MSG_OTHER_STUDY, StudyStore
from study_helpers import CURTIS_11_6, small_study

HERE = Path(__file__).parent


def _rows(folder):
    with StudyStore(folder) as s:
        return {r["case_id"]: r for r in s.rows()}


def test_study_case_matches_curtis_example_11_6(tmp_path):
    """Curtis, Orbital Mechanics for Engineering Students, 3rd ed., Sec. 11.6, Example 11.6 (example
    number and printed values from memory; reproduced by computation, tabulated in the project's
    shared check values, sec. 1.1): m_PL = 5000 kg, v = 10 km/s, Isp 400/350/300 s, eps
    0.10/0.15/0.20, g0 = 9.81 m/s^2; the book gives m0 ~ 191 200 kg (n = 4.541, 2.507, 1.361). Both
    the batch and the one-by-one paths of the study must reproduce it."""
    for solver in ("batch", "each"):
        data = small_study()
        data["study"]["solver"] = solver
        run_study(study_from_dict(data), tmp_path / solver, engine="serial", write_outputs=False)
        rows = _rows(tmp_path / solver)
        case = next(r for r in rows.values() if r["inputs"] == {"mission.payload_mass": 5000.0,
                                                                 "mission.delta_v": 10000.0})
        assert case["status"] == "ok"
        assert case["metrics"]["gross_mass_kg"] == pytest.approx(191_200.0, rel=2e-4)
        ratios = [s["mass_ratio"] for s in case["result"]["stages"]]
        assert ratios == pytest.approx([4.541, 2.507, 1.361], abs=6e-4)
        # payload fraction 5000 / 191 200 = 0.02615 (same example), from either solver
        assert case["metrics"]["payload_fraction"] == pytest.approx(5000.0 / 191_200.0, rel=2e-4)
    a, b = _rows(tmp_path / "batch"), _rows(tmp_path / "each")
    for k in a:
        assert a[k]["metrics"]["gross_mass_kg"] == pytest.approx(b[k]["metrics"]["gross_mass_kg"], rel=1e-9)
        # both solvers give the same metrics, so cases.csv has no column filled for only some
        # (dotted sub-table metrics such as trade factors are not cases.csv columns)
        flat_b = {m: v for m, v in b[k]["metrics"].items() if "." not in m}
        assert sorted(m for m in a[k]["metrics"] if "." not in m) == sorted(flat_b)
        for m, v in flat_b.items():
            assert a[k]["metrics"][m] == pytest.approx(v, rel=1e-9), m
        sa, sb = a[k]["result"]["stages"], b[k]["result"]["stages"]
        for qa, qb in zip(sa, sb):
            for q in ("payload_ratio", "burnout_mass_kg", "stage_mass_kg", "exhaust_velocity_m_s"):
                assert qa[q] == pytest.approx(qb[q], rel=1e-9), q


def test_study_failures_are_recorded_and_study_continues(tmp_path):
    """An unreachable delta-v (beyond sum c ln(1/eps), Curtis 3rd ed. Sec. 11.6, from memory), an
    invalid axis value and a violated cap each get their status and reason; the rest still run."""
    data = small_study(axis=[
        {"field": "mission.delta_v", "values": [9000.0, 30000.0]},
        {"field": "stage.third.structural_coefficient", "values": [0.2, 1.2]},
    ], constraints={"max_gross_mass": "150 t"})
    summary = run_study(study_from_dict(data), tmp_path, workers=2, write_outputs=False)
    rows = _rows(tmp_path)
    by = {(r["inputs"]["mission.delta_v"], r["inputs"]["stage.third.structural_coefficient"]): r
          for r in rows.values()}
    assert by[(9000.0, 0.2)]["status"] == "ok"
    assert by[(30000.0, 0.2)]["status"] == "infeasible"
    assert "30000" in by[(30000.0, 0.2)]["message"] or "beyond" in by[(30000.0, 0.2)]["message"]
    assert by[(9000.0, 1.2)]["status"] == "error"
    assert "structural_coefficient: must be in (0, 1). Got 1.2." in by[(9000.0, 1.2)]["message"]
    assert summary.counts == {"ok": 1, "infeasible": 1, "error": 2}
    data["axis"][0]["values"] = [9000.0, 10000.0]
    data["axis"][1]["values"] = [0.2]
    run_study(study_from_dict(data), tmp_path / "cap", engine="serial", write_outputs=False)
    rej = [r for r in _rows(tmp_path / "cap").values() if r["status"] == "rejected"]
    assert len(rej) == 1 and rej[0]["message"].startswith("max_gross_mass: gross_mass_kg = 1912")


def test_study_changed_file_refused_unless_restart(tmp_path):
    study = study_from_dict(small_study())
    run_study(study, tmp_path, engine="serial", write_outputs=False)
    changed = small_study()
    changed["axis"][0]["values"] = [4500.0]
    with pytest.raises(StudyOutputConflictError, match=MSG_OTHER_STUDY):
        run_study(study_from_dict(changed), tmp_path, engine="serial")
    assert len(_rows(tmp_path)) == 9
    summary = run_study(study_from_dict(changed), tmp_path, engine="serial", restart=True,
                        write_outputs=False)
    assert summary.done_before == 0 and len(_rows(tmp_path)) == 3


def test_study_bad_base_problem_fails_before_running(tmp_path):
    data = small_study()
    data["base"]["stage"][0]["isp"] = -5.0
    with pytest.raises(StudyDefinitionError, match=r"stage\[1\] \(first\)\.isp: must be > 0 s"):
        run_study(study_from_dict(data), tmp_path, engine="serial")
    data = small_study(objective=[{"metric": "apogee_m"}])
    with pytest.raises(StudyDefinitionError, match="objective metric 'apogee_m' is not produced"):
        run_study(study_from_dict(data), tmp_path / "b", engine="serial")
    data = small_study(objective=[{"metric": "gross_mas_kg", "sense": "min"}])
    with pytest.raises(StudyDefinitionError, match="did you mean 'gross_mass_kg'"):
        run_study(study_from_dict(data), tmp_path / "c", engine="serial")
    assert not (tmp_path / "c").exists()


def test_study_bad_first_case_leaves_no_store_and_fixed_file_reuses_folder(tmp_path):
    """A study whose first case is invalid (payload start = -120) is refused before the
    output folder gets a store; after the fix the same folder runs without --restart."""
    data = small_study(axis=[{"field": "mission.payload_mass", "start": -120.0, "stop": 240.0,
                              "num": 4}])
    out = tmp_path / "run"
    with pytest.raises(StudyDefinitionError, match=r"mission\.payload_mass"):
        run_study(study_from_dict(data), out, engine="serial")
    assert not (out / "study.sqlite").exists()
    data["axis"][0]["start"] = 120.0
    summary = run_study(study_from_dict(data), out, engine="serial", write_outputs=False)
    assert summary.counts == {"ok": 4}


def test_study_store_with_no_finished_case_is_taken_over(tmp_path):
    """A store holding 0 finished cases (e.g. a run stopped before its first case) is
    reused by another study file without --restart; one with cases is still refused."""
    StudyStore(tmp_path, fingerprint="a" * 64).close()
    with StudyStore(tmp_path, fingerprint="b" * 64) as s:
        assert s.get_meta("fingerprint") == "b" * 64
        s.record([{"case_id": 0, "key": "k", "status": "ok", "message": "", "metrics": {},
                   "result": None, "elapsed_s": 0.0}], {0: {}})
    with pytest.raises(StudyOutputConflictError, match=MSG_OTHER_STUDY):
        StudyStore(tmp_path, fingerprint="c" * 64)


def test_study_progress_counts_each_outcome_kind(tmp_path):
    """Infeasible (beyond sum c ln(1/eps), Curtis 3rd ed. Sec. 11.6, from memory), rejected and
    error cases are counted apart in the progress callback and the progress bar text."""
    from sizing.cli_study import progress_text

    data = small_study(axis=[
        {"field": "mission.delta_v", "values": [9000.0, 10000.0, 30000.0]},
        {"field": "stage.third.structural_coefficient", "values": [0.2, 1.2]},
    ], constraints={"max_gross_mass": "150 t"})
    seen = []
    summary = run_study(study_from_dict(data), tmp_path, engine="serial", write_outputs=False,
                        on_progress=seen.append)
    assert summary.counts == {"ok": 1, "rejected": 1, "infeasible": 1, "error": 3}
    last = seen[-1]
    assert last.counts == summary.counts and last.failed == 5
    text = progress_text(last.counts)
    assert text == "feasible 1  infeasible 1  rejected 1  errors 3"
    assert "failed" not in text


_CHILD = """
import json, sys
import study_helpers
from sizing.study.runner import run_study
from sizing.study.spec import study_from_dict
run_study(study_from_dict(json.load(open(sys.argv[1]))), sys.argv[2], workers=2,
          case_function=study_helpers.slow_cases, write_outputs=False)
"""


def test_study_resume_after_repeated_sigkill(tmp_path):
    """kill -9 of the runner at random points, several times, then resume: the stored
    cases equal an uninterrupted run's, with none lost and none stored twice."""
    import json

    data = small_study(axis=[
        {"field": "mission.payload_mass", "start": 1000.0, "stop": 9000.0, "num": 20},
        {"field": "mission.delta_v", "start": 8000.0, "stop": 10000.0, "num": 12},
    ])
    data["study"]["solver"] = "each"
    spec_path = tmp_path / "study.json"
    spec_path.write_text(json.dumps(data))
    ref = tmp_path / "ref"
    run_study(study_from_dict(data), ref, engine="serial", write_outputs=False)
    expected = _rows(ref)
    assert len(expected) == 240

    out = tmp_path / "killed"
    env = dict(os.environ, PYTHONPATH=os.pathsep.join([str(HERE), str(HERE.parents[1])]),
               SIZING_TEST_DELAY_S="0.02")
    rng = random.Random(20261201)
    targets = sorted(rng.sample(range(5, 220), 4))  # kill once this many cases are stored
    stored = []
    for target in targets:
        proc = subprocess.Popen([sys.executable, "-c", _CHILD, str(spec_path), str(out)], env=env,
                                stdout=subprocess.DEVNULL, stderr=subprocess.PIPE)
        t_end = time.monotonic() + 30.0
        while time.monotonic() < t_end and proc.poll() is None:
            if (out / "study.sqlite").exists() and len(_rows(out)) >= target:
                break
            time.sleep(rng.uniform(0.005, 0.03))
        proc.send_signal(signal.SIGKILL)
        proc.wait(timeout=10)
        stored.append(len(_rows(out)))
    assert stored == sorted(stored)  # nothing committed is ever lost
    assert stored[-1] < 240, "the kills came too late to interrupt the study"
    summary = run_study(study_from_dict(data), out, workers=2, write_outputs=False)
    assert summary.done_before == stored[-1]
    got = _rows(out)
    assert sorted(got) == sorted(expected)
    for k, r in expected.items():
        g = got[k]
        assert (g["key"], g["status"], g["inputs"]) == (r["key"], r["status"], r["inputs"])
        for m, v in r["metrics"].items():
            assert g["metrics"][m] == pytest.approx(v, rel=1e-12), (k, m)


def test_study_worker_death_retried_once_then_crashed(tmp_path, monkeypatch):
    """A worker that dies on a case: the case is retried once; dying again records it as
    crashed. Other cases are unaffected and none is stored twice."""
    from study_helpers import dying_cases

    monkeypatch.setenv("SIZING_TEST_FAULT_DIR", str(tmp_path))
    monkeypatch.setenv("SIZING_TEST_DIE_ONCE", "3")
    monkeypatch.setenv("SIZING_TEST_DIE_ALWAYS", "6")
    data = small_study()
    data["study"]["solver"] = "each"
    summary = run_study(study_from_dict(data), tmp_path / "out", workers=2,
                        case_function=dying_cases, write_outputs=False)
    rows = _rows(tmp_path / "out")
    assert sorted(rows) == list(range(9))
    assert rows[3]["status"] == "ok" and rows[3]["attempts"] == 2
    assert rows[6]["status"] == "crashed" and rows[6]["attempts"] == 2
    assert rows[6]["message"] == MSG_WORKER_DIED
    assert all(rows[k]["status"] == "ok" and rows[k]["attempts"] == 1 for k in rows if k not in (3, 6))
    assert summary.counts == {"ok": 8, "crashed": 1}


def _toml_of_small_study() -> str:
    """small_study() written as TOML (inline base problem)."""
    lines = ['[study]', 'name = "dask cli"', '[base.mission]']
    lines += [f"{k} = {v!r}" if isinstance(v, float) else f'{k} = "{v}"'
              for k, v in CURTIS_11_6["mission"].items()]
    for st in CURTIS_11_6["stage"]:
        lines += ["[[base.stage]]"] + [f"{k} = {v!r}" if isinstance(v, float) else f'{k} = "{v}"'
                                       for k, v in st.items()]
    lines += ['[[axis]]', 'field = "mission.payload_mass"', 'values = [4000.0, 5000.0, 6000.0]',
              '[[axis]]', 'field = "mission.delta_v"', 'start = 9000.0', 'stop = 10000.0', 'num = 3',
              '[[objective]]', 'metric = "gross_mass_kg"', '[[objective]]', 'metric = "payload_mass_kg"']
    return "\n".join(lines) + "\n"


def test_study_dask_engine_local_cluster(tmp_path, monkeypatch):
    """Dask engine on a loopback LocalCluster: same results as the local engine; a worker
    killed mid-task has its cases rerun one by one and finished."""
    distributed = pytest.importorskip("distributed")
    import dask

    from study_helpers import dying_cases

    monkeypatch.setenv("SIZING_TEST_FAULT_DIR", str(tmp_path))
    monkeypatch.setenv("SIZING_TEST_DIE_ONCE", "4")
    data = small_study()
    data["study"]["solver"] = "each"
    study = study_from_dict(data)
    run_study(study, tmp_path / "local", engine="serial", write_outputs=False)
    with dask.config.set({"distributed.scheduler.allowed-failures": 0}):
        with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                                      host="127.0.0.1", dashboard_address="127.0.0.1:0") as cluster:
            with distributed.Client(cluster) as client:
                summary = run_study(study, tmp_path / "dask", engine="dask", scheduler=client,
                                    case_function=dying_cases, write_outputs=False)
            # the command line path: a scheduler address
            from sizing.cli import main

            spec = tmp_path / "s.toml"
            spec.write_text(_toml_of_small_study())
            assert main(["study", str(spec), "--out", str(tmp_path / "cli"), "--quiet", "--no-report",
                         "--engine", "dask", "--scheduler", cluster.scheduler_address]) == 0
    assert len(_rows(tmp_path / "cli")) == 9
    assert summary.counts == {"ok": 9}
    a, b = _rows(tmp_path / "local"), _rows(tmp_path / "dask")
    assert sorted(a) == sorted(b)
    for k in a:
        assert b[k]["metrics"]["gross_mass_kg"] == pytest.approx(a[k]["metrics"]["gross_mass_kg"], rel=1e-12)
    assert (tmp_path / "died-4").exists()


def test_study_outputs_and_review_pack(tmp_path):
    """Pareto export holds exactly the non-dominated feasible cases; the review pack
    re-sizes the case to the stored gross mass."""
    import pandas as pd

    data = small_study()
    run_study(study_from_dict(data), tmp_path, engine="serial")
    for name in ("pareto.csv", "pareto.xlsx", "cases.csv", "report.html"):
        assert (tmp_path / name).exists(), name
    res = load_results(tmp_path)
    front = {r["case_id"] for r in res.pareto}
    # min gross mass, max payload: at each payload, only the lowest delta-v is kept
    assert front == {r["case_id"] for r in res.rows if r["inputs"]["mission.delta_v"] == 9000.0}
    pf = pd.read_csv(tmp_path / "pareto.csv")
    assert sorted(pf["case_id"]) == sorted(front)
    assert "mission.payload_mass [kg]" in pf.columns and "gross_mass [kg]" in pf.columns
    # one unit style: every column but the text ones carries "[unit]", "[-]" if dimensionless
    cases = pd.read_csv(tmp_path / "cases.csv")
    for frame in (pf, cases):
        numeric = [c for c in frame.columns if c not in ("case_id", "status", "message")]
        assert all(c.endswith("]") for c in numeric), numeric
        assert not any(c.endswith(("_kg", "_s", "_m_s")) for c in frame.columns)
    assert {"n_stages [-]", "payload_fraction [-]", "first.delta_v [m/s]", "elapsed [s]"} <= set(cases.columns)
    assert cases["payload_fraction [-]"].notna().all()
    cid = min(front)
    pack = write_review_pack(tmp_path, cid)
    text = (pack / "review.md").read_text()
    assert "Preliminary estimates only" in text and "## Delta-v budget" in text
    stored = res.rows[cid]["metrics"]["gross_mass_kg"]
    stage_md = (pack / "stage_masses.md").read_text()
    assert f"{stored:,.1f}"[:-2] in stage_md
    assert stage_md.startswith(f"## unit study, case {cid}: stage mass table")  # the case, not the base problem
    assert "Method: lagrange" not in text + stage_md and "solving for gross_mass" not in text + stage_md
    assert (pack / "stage_masses.xlsx").exists()
    assert "| n_stages [-] |" in text and "| gross_mass [kg] |" in text
    with pytest.raises(ValueError, match="case 999: not in"):
        write_review_pack(tmp_path, 999)


def test_result_metrics_target_error_carries_the_target_unit():
    """target_error/target_tolerance are in the target's unit (sizing.optimize.flight):
    metres for an apogee target, m/s (burnout minus circular speed) for an orbit."""
    from sizing.problem.load import problem_from_dict
    from sizing.study.evaluate import EvalContext, result_metrics
    from sizing.study.results import column_label

    problem = problem_from_dict(copy.deepcopy(CURTIS_11_6))
    ctx = EvalContext(objectives=(), bounds=())
    apo = result_metrics({"target": {"apogee_m": 3.0e4}, "target_error": 2.0, "target_tolerance": 3.0,
                          "n_iterations": 4, "stages": []}, problem, {}, ctx)
    assert apo["target_error_m"] == 2.0 and apo["target_tolerance_m"] == 3.0
    assert "n_iterations" not in apo and "target_error" not in apo
    orb = result_metrics({"target": {"orbit_altitude_m": 5.0e5}, "target_error": -0.2,
                          "stages": []}, problem, {}, ctx)
    assert orb["target_error_m_s"] == -0.2
    assert column_label("target_error_m") == "target_error [m]"
    assert column_label("target_error_m_s") == "target_error [m/s]"
    assert column_label("max_dynamic_pressure_pa") == "max_dynamic_pressure [Pa]"


def test_study_dask_local_cluster_from_the_command_line(tmp_path, capsys):
    """`--engine dask` without a scheduler starts a local cluster for the run and prints
    where it is and its dashboard; the results equal the local engine's."""
    pytest.importorskip("distributed")
    from sizing.cli import main

    spec = tmp_path / "s.toml"
    spec.write_text(_toml_of_small_study())
    assert main(["study", str(spec), "--out", str(tmp_path / "dask"), "--quiet", "--no-report",
                 "--engine", "dask", "--workers", "2"]) == 0
    err = capsys.readouterr().err
    assert "Dask local cluster at tcp://127.0.0.1:" in err and ", 2 workers" in err
    assert "dashboard: http://127.0.0.1:" in err or "serves no dashboard" in err
    run_study(study_from_dict(small_study()), tmp_path / "local", engine="serial", write_outputs=False)
    a, b = _rows(tmp_path / "local"), _rows(tmp_path / "dask")
    assert sorted(a) == sorted(b)
    for k in a:
        assert b[k]["metrics"]["gross_mass_kg"] == pytest.approx(a[k]["metrics"]["gross_mass_kg"], rel=1e-12)


def test_study_dask_worker_killed_mid_run_loses_no_case(tmp_path, monkeypatch):
    """SIGKILL of a Dask worker process while it sizes cases: every case is still stored
    once, with the results of an uninterrupted run."""
    distributed = pytest.importorskip("distributed")
    import threading

    monkeypatch.setenv("SIZING_TEST_DELAY_S", "0.05")
    data = small_study(axis=[
        {"field": "mission.payload_mass", "start": 1000.0, "stop": 9000.0, "num": 8},
        {"field": "mission.delta_v", "start": 8000.0, "stop": 10000.0, "num": 5},
    ])
    data["study"]["solver"] = "each"
    study = study_from_dict(data)
    run_study(study, tmp_path / "ref", engine="serial", write_outputs=False)
    from study_helpers import slow_cases

    out = tmp_path / "dask"
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                                  host="127.0.0.1", dashboard_address="127.0.0.1:0") as cluster:
        with distributed.Client(cluster) as client:
            pids = client.run(os.getpid)
            done: dict = {}
            t = threading.Thread(target=lambda: done.update(s=run_study(
                study, out, engine="dask", scheduler=client, case_function=slow_cases,
                write_outputs=False)))
            t.start()
            t_end = time.monotonic() + 60.0
            while time.monotonic() < t_end and not ((out / "study.sqlite").exists() and len(_rows(out)) >= 6):
                time.sleep(0.02)
            n_at_kill = len(_rows(out))
            os.kill(next(iter(pids.values())), signal.SIGKILL)
            t.join(timeout=120)
    assert not t.is_alive()
    assert 6 <= n_at_kill < 40, "the kill came too late to interrupt the study"
    assert done["s"].counts == {"ok": 40}
    ref, got = _rows(tmp_path / "ref"), _rows(out)
    assert sorted(got) == sorted(ref)
    for k, r in ref.items():
        assert got[k]["metrics"]["gross_mass_kg"] == pytest.approx(r["metrics"]["gross_mass_kg"], rel=1e-12)
