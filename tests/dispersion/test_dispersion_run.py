"""Dispersion runs in the study store: bit-for-bit reproducible, resumable after kill -9, on Dask too."""

from __future__ import annotations

import json
import os
import random
import re
import signal
import subprocess
import sys
import time

import pytest

from dispersion_helpers import HERE, HERON, ROOT, write_table
from sizing.dispersion.case import case_from_file
from sizing.dispersion.run import MSG_OTHER_RUN, load_samples, run_dispersion
from sizing.errors import StudyOutputConflictError
from sizing.study.store import StudyStore


def _rows(folder):
    with StudyStore(folder) as db:
        return {r["case_id"]: r for r in db.rows(with_result=False)}


def _same(a, b):
    assert sorted(a) == sorted(b)
    for k in a:
        assert (a[k]["status"], a[k]["inputs"], a[k]["metrics"]) == (b[k]["status"], b[k]["inputs"], b[k]["metrics"])


def _stats_text(stats):
    from sizing.result import finite_json

    return json.dumps(finite_json(stats), sort_keys=True)


@pytest.fixture(scope="module")
def case(tmp_path_factory):
    return case_from_file(HERON, dispersions=write_table(tmp_path_factory.mktemp("t")))


@pytest.fixture(scope="module")
def serial_run(case, tmp_path_factory):
    out = tmp_path_factory.mktemp("serial")
    return out, run_dispersion(case, out, samples=240, engine="serial", write_outputs=False)


def test_dispersion_seed_reproduces_bit_for_bit_on_any_engine(case, serial_run, tmp_path):
    """Serial and two worker processes (other chunks, other order) store identical inputs and figures."""
    ref, s1 = serial_run
    s2 = run_dispersion(case, tmp_path / "pool", samples=240, workers=2, write_outputs=False)
    assert s1.counts == s2.counts == {"ok": 240}
    _same(_rows(ref), _rows(tmp_path / "pool"))
    assert _stats_text(s1.statistics) == _stats_text(s2.statistics)


def test_dispersion_more_samples_extend_the_run_and_fewer_reread_it(case, serial_run, tmp_path):
    ref, s1 = serial_run
    out = tmp_path / "grow"
    run_dispersion(case, out, samples=100, engine="serial", write_outputs=False)
    s = run_dispersion(case, out, samples=240, engine="serial", write_outputs=False)
    assert (s.done_before, s.ran) == (100, 140)
    _same(_rows(ref), _rows(out))
    s = run_dispersion(case, out, samples=100, engine="serial", write_outputs=False)
    assert s.ran == 0 and s.statistics["samples"]["n"] == 100


def test_dispersion_other_seed_is_refused_unless_restart(case, serial_run):
    from dataclasses import replace

    ref, _ = serial_run
    other = replace(case, spec=replace(case.spec, seed=99))
    with pytest.raises(StudyOutputConflictError, match=re.escape(MSG_OTHER_RUN)):
        run_dispersion(other, ref, samples=10, engine="serial", write_outputs=False)
    with pytest.raises(StudyOutputConflictError, match="holds a trade study"):
        load_samples(_make_study_folder(ref.parent / "study"))


def _make_study_folder(folder):
    with StudyStore(folder, fingerprint="x", meta={"kind": "study"}):
        pass
    return folder


_CHILD = """
import sys
sys.path[:0] = [sys.argv[3]]
import dispersion_helpers
from sizing.dispersion.case import case_from_file
from sizing.dispersion.run import run_dispersion
case = case_from_file(dispersion_helpers.HERON, dispersions=sys.argv[1])
run_dispersion(case, sys.argv[2], samples=300, workers=2, case_function=dispersion_helpers.slow_samples,
               write_outputs=False)
"""


def test_dispersion_kill_9_and_resume_give_the_same_statistics(case, tmp_path):
    """kill -9 of the runner at random points, twice, then resume: no stored sample is lost or stored
    twice, and the statistics equal an uninterrupted run's bit for bit."""
    table = write_table(tmp_path)
    ref = run_dispersion(case, tmp_path / "ref", samples=300, engine="serial", write_outputs=False)
    out = tmp_path / "killed"
    env = dict(os.environ, PYTHONPATH=os.pathsep.join([str(HERE), str(ROOT)]), SIZING_TEST_DELAY_S="0.004")
    rng = random.Random(20261202)
    stored = []
    for target in sorted(rng.sample(range(20, 200), 2)):
        proc = subprocess.Popen([sys.executable, "-c", _CHILD, str(table), str(out), str(HERE)], env=env,
                                stdout=subprocess.DEVNULL, stderr=subprocess.PIPE)
        t_end = time.monotonic() + 60.0
        while time.monotonic() < t_end and proc.poll() is None:
            if (out / "study.sqlite").exists() and len(_rows(out)) >= target:
                break
            time.sleep(rng.uniform(0.005, 0.02))
        proc.send_signal(signal.SIGKILL)
        proc.wait(timeout=10)
        stored.append(len(_rows(out)))
    assert stored == sorted(stored) and 0 < stored[-1] < 300, stored
    resumed = run_dispersion(case, out, samples=300, workers=2, write_outputs=False)
    assert resumed.done_before == stored[-1] and resumed.ran == 300 - stored[-1]
    _same(_rows(tmp_path / "ref"), _rows(out))
    assert _stats_text(resumed.statistics) == _stats_text(ref.statistics)


def test_dispersion_on_a_dask_local_cluster_equals_serial(case, serial_run, tmp_path):
    distributed = pytest.importorskip("distributed")
    ref, _ = serial_run
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True, host="127.0.0.1",
                                  dashboard_address="127.0.0.1:0") as cluster:
        with distributed.Client(cluster) as client:
            s = run_dispersion(case, tmp_path / "dask", samples=240, engine="dask", scheduler=client,
                               write_outputs=False)
    assert s.counts == {"ok": 240}
    _same(_rows(ref), _rows(tmp_path / "dask"))


def test_dispersion_statistics_are_consistent_with_the_samples(serial_run):
    ref, s = serial_run
    st = s.statistics
    samples = load_samples(ref, 240)
    met = int(sum(m >= 0 for m in samples["metrics"]["target_margin"]))
    assert st["probability_of_meeting"]["met"] == met and st["samples"]["n"] == 240
    assert st["performance"]["nominal_margin"] == pytest.approx(samples["nominal"]["metrics"]["target_margin"])
    r = next(r for r in st["reserves"] if r["probability"] == 0.9)
    loss = sorted(-m + st["performance"]["nominal_margin"] for m in samples["metrics"]["target_margin"])
    assert r["reserve_order_statistic"] == loss[r["rank"] - 1]
    assert st["caution"].startswith("Preliminary estimates only")


def test_a_failed_one_sigma_flight_makes_the_rss_reserve_unbounded_not_a_crash(serial_run):
    """A one-sigma flight that fails stores its effect as null: the root-sum-square reserve is
    then unbounded (a failure is no zero effect), and the statistics still come out (consistency
    check, no external source)."""
    from sizing.dispersion.summary import summarise

    folder, _ = serial_run
    samples = load_samples(folder)
    finite = summarise(samples, probability=0.9, confidence=0.9)
    assert all(r["reserve_rss"] is not None and r["reserve_rss"] < float("inf") for r in finite["reserves"])
    samples["rss"] = dict(samples["rss"], one_sigma_effects=[None, *samples["rss"]["one_sigma_effects"][1:]])
    broken = summarise(samples, probability=0.9, confidence=0.9)
    assert broken["probability_of_meeting"] == finite["probability_of_meeting"]
    assert all(r["reserve_rss"] == float("inf") for r in broken["reserves"])
