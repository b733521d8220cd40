"""Flight tables of `sizing solve`, `sizing fly` and the exports: the signed delta-v budget, the steering
programme with its staging events, datums in headers, one number format per column, wording.

Most checks here are consistency checks of the report against the result it renders (no external
source): the budget identity sum(ideal, -losses, rotation) = final speed is the definition of the loss
terms (docs/physics-flight.md sec. 5), and the staging times are the ones the flight flew.
"""

from __future__ import annotations

import csv
import io
import re
from pathlib import Path

import pandas as pd
import pytest
from rich.console import Console

from sizing import load_problem, solve
from sizing.cli import EXIT_OK, main, print_result
from sizing.optimize.flight_problem import COAST_BUDGET_KEY, POWERED_GRAVITY_KEY
from sizing.report import result_markdown, write_stage_table
from sizing.report.flight_tables import (
    BUDGET_RESIDUAL_LABEL,
    BURNOUT_HEADER,
    STEERING_HEADER,
    delta_v_budget_values,
    steering_rows,
    steering_values,
)
from sizing.report.formats import fmt, unit_format
from sizing.result import CAUTION

ROOT = Path(__file__).resolve().parents[2]
ORBIT = ROOT / "problems" / "jackdaw_orbit.toml"
ESTIMATE = ROOT / "problems" / "corvid_upper_stage.toml"


@pytest.fixture(scope="module")
def orbit():
    result = solve(load_problem(ORBIT))
    assert result.success, result.message
    return result


@pytest.fixture(scope="module")
def estimate():
    result = solve(load_problem(ESTIMATE))
    assert result.success, result.message
    return result


def _printed(result) -> str:
    buf = io.StringIO()
    print_result(result, console=Console(file=buf, width=10_000, soft_wrap=True, highlight=False))
    return buf.getvalue()


def _table(text: str, title_start: str) -> list[list[str]]:
    """Cells of the rich table whose title line starts with `title_start` (header row first)."""
    lines = text.splitlines()
    start = next(i for i, line in enumerate(lines) if line.startswith(title_start))
    rows = []
    for line in lines[start + 1:]:
        if line.startswith("└"):
            break
        if line[:1] in ("┃", "│"):
            rows.append([c.strip() for c in re.split("[┃│]", line)[1:-1]])
    return rows


def _number(text: str) -> float:
    return float(text.replace(",", ""))


def test_solve_budget_rows_are_signed_and_add_up_to_the_insertion_speed(orbit):
    """The printed budget has Earth rotation and closes: its terms add up to the speed at insertion
    within 0.1 m/s (issue requirement; consistency check, no external source)."""
    rows = _table(_printed(orbit), "Delta-v budget")
    assert rows[0] == ["term", "delta-v [m/s]"]
    terms = {label: _number(v) for label, v in rows[1:-1]}
    assert {"ideal", "drag loss", "steering loss", "pressure loss", "Earth rotation"} <= set(terms)
    # gravity: one term, or with an insertion coast the powered part and the coast part
    assert "gravity loss" in terms or {POWERED_GRAVITY_KEY, COAST_BUDGET_KEY} <= set(terms)
    assert all(v < 0 for k, v in terms.items() if "loss" in k or k == COAST_BUDGET_KEY)  # losses are subtracted
    label, total = rows[-1]
    assert label == "= final inertial speed"
    assert sum(terms.values()) == pytest.approx(_number(total), abs=0.1 + 0.05 * len(terms))
    assert _number(total) == pytest.approx(orbit.flight["orbit_speed_m_s"], abs=0.05)
    # unrounded: the rows close to the speed within 0.1 m/s
    values = delta_v_budget_values(orbit.flight)
    assert sum(v for _l, v, is_total in values if not is_total) == pytest.approx(values[-1][1], abs=0.1)
    # the Flight table no longer lists the losses unsigned beside the budget
    assert not any(r[0].endswith(" loss") for r in _table(_printed(orbit), "Flight"))


def test_fly_prints_the_same_budget_as_solve(orbit, tmp_path, capsys):
    """One definition for both commands: `sizing fly design.toml` prints the rows `solve` printed."""
    design = tmp_path / "design.toml"
    write_stage_table(orbit, design)
    assert main(["fly", str(design)]) == EXIT_OK
    flown = _table(capsys.readouterr().out, "Delta-v budget")
    assert flown == _table(_printed(orbit), "Delta-v budget")


def test_budget_adds_a_residual_row_when_the_terms_do_not_close():
    flight = {"profile": "vertical", "delta_v_budget_m_s": {"ideal": 1000.0, "gravity loss": -200.0,
                                                             "speed at final burnout": 799.0}}
    rows = delta_v_budget_values(flight)
    assert rows[-2] == (BUDGET_RESIDUAL_LABEL, pytest.approx(-1.0), False)
    assert sum(v for _l, v, t in rows if not t) == pytest.approx(rows[-1][1], abs=1e-12)


def test_estimate_is_labelled_as_an_estimate_in_words(estimate, tmp_path):
    """A stage-model delta-v problem flies no flight: its gravity loss is the estimate, in words,
    in a table saying so; the budget closes to the file's delta_v = 8600 m/s."""
    text = _printed(estimate)
    assert "gravity_estimate" not in text
    assert not any(line.startswith("Flight") for line in text.splitlines())
    rows = _table(text, "Delta-v budget (estimate")
    assert ["estimated gravity loss", fmt(-estimate.flight["losses_m_s"]["gravity_estimate"], ",.1f")] in rows
    assert rows[-1] == ["= net delta-v (the target)", "8,600.0"]
    for ext in (".md", ".csv"):
        assert "gravity_estimate" not in write_stage_table(estimate, tmp_path / f"e{ext}").read_text()


def test_steering_table_shows_staging_with_the_flown_times(orbit):
    """Burnout rows at the flown burnout times, a coast row for the kick stage's 20 s
    coast_before_ignition (problems/jackdaw_orbit.toml), its ignition 20 s after the second stage's
    burnout -- where the sizer placed the kick stage's first programme node -- and every node in the
    stage whose burn holds it."""
    rows = steering_values(orbit)
    burnouts = orbit.flight["burnouts"]
    got = [(stage, t) for t, stage, event, _p, _n in rows if event == "burnout"]
    assert got == [(b["stage"], pytest.approx(b["time_s"], abs=1e-9)) for b in burnouts]
    coast = [r for r in rows if r[2] == "coast before ignition"]
    assert [(r[1], r[0]) for r in coast] == [("kick", pytest.approx(burnouts[1]["time_s"]))]
    assert coast[0][4].startswith("20.0 s without thrust")
    ignitions = {stage: t for t, stage, event, _p, _n in rows if event in ("ignition", "liftoff (ignition)")}
    assert ignitions == {"first": 0.0, "second": pytest.approx(burnouts[0]["time_s"]),
                         "kick": pytest.approx(burnouts[1]["time_s"] + 20.0)}
    nodes = [(t, stage) for t, stage, event, _p, _n in rows if event.startswith("programme node")]
    table = orbit.flight["steering"]["pitch_table"]
    assert [t for t, _s in nodes] == [n["time_s"] for n in table]
    assert any(abs(t - ignitions["kick"]) < 1e-9 and s == "kick" for t, s in nodes)
    ends = {b["stage"]: b["time_s"] for b in burnouts}
    ends["kick"] = orbit.flight["steering"]["insertion"]["cutoff_time_s"]
    for t, stage in nodes:
        assert ignitions[stage] - 1e-9 <= t <= ends[stage] + 1e-9, (t, stage)
    # in flight order, and the two equal-pitch nodes 20 s apart are split by burnout, coast and ignition
    assert [r[0] for r in rows] == sorted(r[0] for r in rows)
    events = [r[2] for r in rows]
    i4, i5 = events.index("programme node 4"), events.index("programme node 5")
    assert events[i4 + 1:i5] == ["burnout", "coast before ignition", "ignition"]


def test_shared_node_at_a_staging_without_coast_goes_to_the_igniting_stage():
    """A stage's last node is the next stage's first when there is no coast (sizing/optimize/orbit_sizing.py,
    node_rows): it is listed once, after the burnout and the ignition, under the igniting stage."""
    flight = {
        "profile": "ascent",
        "burnouts": [{"stage": "a", "time_s": 100.0}, {"stage": "b", "time_s": 200.0}, {"stage": "c", "time_s": 300.0}],
        "design": {"stages": [{"name": n, "coast_before_ignition_s": 0.0} for n in "abc"],
                   "launch": {"staging_delay_s": 0.0}},
        "steering": {"launch_azimuth_deg": 90.0, "vertical_rise_time_s": 10.0, "pitch_kick_deg": 2.0,
                     "kick_duration_s": 5.0, "hold_inclination_deg": None,
                     "pitch_table": [{"time_s": t, "pitch_deg": p} for t, p in ((100.0, 30.0), (150.0, 20.0),
                                                                               (200.0, 10.0), (300.0, 0.0))]},
    }
    rows = steering_values(flight)
    shared = [r for r in rows if r[2] == "programme node 3"]
    assert shared[0][1] == "c"
    events = [(r[1], r[2]) for r in rows if r[0] == 200.0]
    assert events == [("b", "burnout"), ("c", "ignition"), ("c", "programme node 3")]
    assert not any(r[2] == "coast before ignition" for r in rows)


def test_every_export_has_the_steering_section_the_terminal_prints(orbit, tmp_path):
    """Terminal, .md, .csv and .xlsx carry the same steering rows (one function)."""
    text_rows = steering_rows(orbit)
    printed = _table(_printed(orbit), "Steering programme")
    assert printed[0] == list(STEERING_HEADER) and printed[1:] == text_rows

    md = write_stage_table(orbit, tmp_path / "x.md").read_text(encoding="utf-8")
    body = md.split("### Steering programme", 1)[1]
    md_rows = [[c.strip() for c in line.strip("|").split("|")] for line in body.splitlines() if line.startswith("| ")]
    assert md_rows[0] == list(STEERING_HEADER) and md_rows[1:] == text_rows

    values = steering_values(orbit)
    rows = list(csv.reader(write_stage_table(orbit, tmp_path / "x.csv").open(encoding="utf-8")))
    i = rows.index(["steering programme"])
    assert rows[i + 1] == list(STEERING_HEADER)
    for got, want in zip(rows[i + 2:i + 2 + len(values)], values):
        assert float(got[0]) == pytest.approx(want[0], rel=1e-12) and got[1:3] == list(want[1:3])

    sheet = pd.read_excel(write_stage_table(orbit, tmp_path / "x.xlsx"), sheet_name="steering programme")
    assert list(sheet.columns) == list(STEERING_HEADER) and len(sheet) == len(values)
    burn = sheet[sheet["event"] == "burnout"]
    assert burn["time from liftoff [s]"].tolist() == pytest.approx([b["time_s"] for b in orbit.flight["burnouts"]])


def test_markdown_export_has_flight_budget_and_words(orbit):
    md = result_markdown(orbit)
    assert "### Flight" in md and "| perigee altitude above sea level |" in md
    assert "| Earth rotation |" in md and "| = final inertial speed |" in md
    assert "Method: " not in md and "gross_mass" not in md and "flight-integrated" not in md
    assert "Solved for the minimum gross mass for the given payload, by optimising the masses" in md


def test_markdown_method_in_words_for_the_closed_form(tmp_path):
    md = result_markdown(solve(load_problem(ROOT / "problems" / "jackdaw_three_stage.toml")))
    assert "lagrange;" not in md and "Lagrange multipliers" in md


def test_trade_factor_title_is_clean_with_a_caption(orbit):
    """The title nests no parentheses; what each column holds fixed is the caption line under it."""
    lines = _printed(orbit).splitlines()
    i = next(k for k, line in enumerate(lines) if line.startswith("Trade factors"))
    assert "(" not in lines[i]
    end = next(k for k in range(i, len(lines)) if lines[k].startswith("└"))
    caption = lines[end + 1]
    assert caption.startswith("Gross mass column:") and "Payload column:" in caption
    depth = max(sum(1 if ch == "(" else -1 if ch == ")" else 0 for ch in caption[:n]) for n in range(len(caption)))
    assert depth <= 1


def test_fly_burnout_table_has_datums_and_one_format_per_column(capsys):
    """Every altitude header names its datum; each column has one number of decimals."""
    assert main(["fly", str(ROOT / "problems" / "heron_as_built.toml")]) == EXIT_OK
    out = capsys.readouterr().out
    rows = _table(out, "Burnout states")
    assert rows[0] == list(BURNOUT_HEADER) and "altitude above site [m]" in rows[0]
    labels = [h for h in rows[0] if "altitude" in h] + [r[0] for r in _table(out, "Flight") if "altitude" in r[0]]
    labels += [r[0] for r in _table(out, "Flight") if r[0].startswith("apogee")]
    assert labels and all(re.search("above (the )?(launch )?site|above sea level", h) for h in labels), labels
    for col in range(1, len(BURNOUT_HEADER)):
        decimals = {len(r[col].partition(".")[2]) for r in rows[1:]}
        assert len(decimals) == 1, (rows[0][col], [r[col] for r in rows[1:]])


def test_unit_format_fixed_decimals_by_quantity():
    """Masses of one column share decimals (issue example 2,088 / 475.6 / 209); -0.00 prints as 0.00."""
    spec = unit_format("mass [kg]", [2088.02, 475.59, 208.98])
    assert [fmt(v, spec) for v in (2088.02, 475.59, 208.98)] == ["2,088.0", "475.6", "209.0"]
    assert unit_format("altitude above site [m]") == ",.0f" and unit_format("speed [m/s]") == ",.1f"
    assert fmt(-6.7e-5, ".2f") == "0.00" and fmt(-0.5, ".2f") == "-0.50"


def test_sweep_columns_have_one_number_of_decimals(capsys):
    argv = ["solve", str(ROOT / "problems" / "heron_apogee.toml"), "--sweep", "apogee=20km:30km:10km"]
    assert main(argv) == EXIT_OK
    rows = _table(capsys.readouterr().out, "Sweep of")
    assert rows[0][0] == "apogee [m]" and len(rows) == 3
    for col, head in enumerate(rows[0]):
        if head != "status":
            assert len({len(r[col].partition(".")[2]) for r in rows[1:]}) == 1, (head, [r[col] for r in rows[1:]])


def test_design_file_states_the_caution_once(orbit, tmp_path):
    text = write_stage_table(orbit, tmp_path / "design.toml").read_text(encoding="utf-8")
    assert text.count("Preliminary estimates only") == 1 and CAUTION in text
