"""Read a study's stored cases: Pareto set, exports, HTML report, design-review pack."""

from __future__ import annotations

import copy
import json
import math
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np

from ..errors import StudyDefinitionError
from .pareto import non_dominated_ranks, to_minimisation
from .spec import Study, apply_case, study_from_dict
from .store import StudyStore

__all__ = [
    "StudyResults",
    "load_results",
    "write_outputs",
    "write_review_pack",
    "field_unit",
    "PARETO_CSV",
    "PARETO_XLSX",
    "REPORT_HTML",
]

PARETO_CSV = "pareto.csv"
PARETO_XLSX = "pareto.xlsx"
CASES_CSV = "cases.csv"
REPORT_HTML = "report.html"

#: Unit of each problem field an axis may vary (values are stored in SI).
_FIELD_UNITS = {
    "payload_mass": "kg", "delta_v": "m/s", "gross_mass": "kg", "apogee": "m",
    "orbit_altitude": "m", "inclination": "deg", "max_gross_mass": "kg",
    "max_acceleration": "m/s^2", "isp": "s", "isp_sea_level": "s", "exhaust_velocity": "m/s",
    "structural_coefficient": "-", "thrust_to_weight": "-", "thrust": "N", "diameter": "m",
    "nozzle_exit_area": "m^2", "coast_before_ignition": "s", "max_ignition_mass": "kg",
    "min_mass_ratio": "-", "max_mass_ratio": "-", "min_delta_v_share": "-",
    "max_delta_v_share": "-", "propellant_mass": "kg", "structural_mass": "kg",
    "altitude": "m", "latitude": "deg", "azimuth": "deg", "rail_length": "m",
    "rail_angle": "deg", "pitch_kick": "deg", "vertical_rise_time": "s", "staging_delay": "s",
    "payload_diameter": "m", "stage_count": "-",
}


def field_unit(field: str) -> str:
    """Unit of a problem field path such as ``stage.first.isp`` ('' when unknown)."""
    return _FIELD_UNITS.get(field.rsplit(".", 1)[-1], "")


@dataclass
class StudyResults:
    """Every stored case of a study, with its Pareto ranking.

    Attributes
    ----------
    folder : Path
    study : Study
        Rebuilt from the copy kept in the store (the study file is not needed).
    rows : list of dict
        One per stored case (see `StudyStore.rows`), plus ``rank``: the
        non-dominated front of the feasible ('ok') cases, 0 = Pareto front,
        -1 for cases that are not feasible.
    total : int
        Cases in the study (stored or not).
    """

    folder: Path
    study: Study
    rows: list[dict[str, Any]]
    total: int

    @property
    def input_names(self) -> list[str]:
        names: list[str] = []
        for r in self.rows:
            for k in r["inputs"]:
                if k not in names:
                    names.append(k)
        return names

    @property
    def input_units(self) -> dict[str, str]:
        """Input name -> unit, from the axis field each name varies."""
        units = {}
        for ax in self.study.spec.axis:
            units[ax.label or ax.field] = field_unit(ax.field)
        units["stage_count"] = "-"
        return units

    @property
    def pareto(self) -> list[dict[str, Any]]:
        """Feasible cases on the Pareto front, sorted by the first objective."""
        front = [r for r in self.rows if r["rank"] == 0]
        ob = self.study.objectives[0]
        return sorted(front, key=lambda r: r["metrics"][ob.metric] * (1 if ob.sense == "min" else -1))

    def counts(self) -> dict[str, int]:
        out: dict[str, int] = {}
        for r in self.rows:
            out[r["status"]] = out.get(r["status"], 0) + 1
        return out

    def frame(self, rows: list[dict[str, Any]] | None = None):
        """Cases as a pandas DataFrame: inputs, metrics and per-stage masses, units in headers."""
        import pandas as pd

        units = self.input_units
        records = []
        for r in (self.rows if rows is None else rows):
            rec: dict[str, Any] = {"case_id": r["case_id"], "status": r["status"],
                                   "pareto_rank": r["rank"]}
            for k in self.input_names:
                u = units.get(k, "")
                rec[f"{k} [{u}]" if u else k] = r["inputs"].get(k)
            for k, v in r["metrics"].items():
                if "." in k:
                    continue
                rec[k if k != "cost" else f"cost [{self.study.cost_unit}]"] = v
            for s in (r.get("result") or {}).get("stages", []) or []:
                for q in ("ignition_mass_kg", "propellant_mass_kg", "structural_mass_kg", "delta_v_m_s"):
                    if q in s:
                        rec[f"{s['name']}.{q}"] = s[q]
            rec["message"] = r["message"]
            rec["elapsed_s"] = r["elapsed_s"]
            records.append(rec)
        return pd.DataFrame.from_records(records)


def _study_from_store(store: StudyStore) -> Study:
    raw = json.loads(store.get_meta("study") or "{}")
    base = json.loads(store.get_meta("base") or "{}")
    data = copy.deepcopy(raw)
    data["base"] = base
    try:
        return study_from_dict(data, source=store.get_meta("study_source") or str(store.folder))
    except StudyDefinitionError as exc:
        raise StudyDefinitionError(str(store.path), [f"stored study cannot be read: {f}"
                                                     for f in exc.faults]) from None


def load_results(folder: str | Path) -> StudyResults:
    """Read a study's output folder and rank its feasible cases.

    Raises
    ------
    StudyOutputConflictError
        The folder has no study store.
    """
    with StudyStore(folder) as store:
        study = _study_from_store(store)
        rows = store.rows()
        total = int(store.get_meta("n_cases") or len(rows))
    obs = study.objectives
    ok = [r for r in rows if r["status"] == "ok"]
    for r in rows:
        r["rank"] = -1
    if ok:
        F = np.array([[r["metrics"].get(o.metric, math.nan) for o in obs] for r in ok], dtype=float)
        ranks = non_dominated_ranks(to_minimisation(F, [o.sense for o in obs]), max_rank=50)
        for r, k in zip(ok, ranks):
            r["rank"] = int(k)
    return StudyResults(Path(folder), study, rows, total)


def write_outputs(folder: str | Path, *, report: bool = True) -> dict[str, Path]:
    """Write pareto.csv, pareto.xlsx, cases.csv and (optionally) report.html.

    Returns
    -------
    dict
        Name -> path of each file written.
    """
    res = load_results(folder)
    folder = Path(folder)
    with StudyStore(folder) as store:
        store.set_meta("pareto_case_ids", [r["case_id"] for r in res.pareto])
    out: dict[str, Path] = {}
    pf = res.frame(res.pareto)
    pf.to_csv(folder / PARETO_CSV, index=False)
    out["pareto_csv"] = folder / PARETO_CSV
    try:
        pf.to_excel(folder / PARETO_XLSX, index=False, sheet_name="pareto")
        out["pareto_xlsx"] = folder / PARETO_XLSX
    except ImportError:  # pragma: no cover - openpyxl is a dependency
        pass
    res.frame().to_csv(folder / CASES_CSV, index=False)
    out["cases_csv"] = folder / CASES_CSV
    if report:
        out["report"] = write_report(res)
    return out


def write_report(res: StudyResults, path: str | Path | None = None) -> Path:
    """Render the study's self-contained HTML report (see `sizing.report.html`)."""
    from ..report.html import StudyReportData, write_study_report

    units = res.input_units
    data = StudyReportData(
        title=res.study.name,
        vehicle=res.study.spec.study.vehicle or "",
        description=res.study.spec.study.description or "",
        source=res.study.source,
        objectives=[(o.metric, o.sense, o.label) for o in res.study.objectives],
        constraints=[b.label for b in res.study.bounds],
        cost_unit=res.study.cost_unit,
        input_names=res.input_names,
        input_units=units,
        total=res.total,
        cases=[{"case_id": r["case_id"], "status": r["status"], "message": r["message"],
                "rank": r["rank"], "inputs": r["inputs"], "metrics": {
                    k: v for k, v in r["metrics"].items() if "." not in k}}
               for r in res.rows],
        designs={r["case_id"]: _design(r) for r in res.pareto},
    )
    p = Path(path) if path is not None else res.folder / REPORT_HTML
    return write_study_report(data, p)


def _design(row: dict[str, Any]) -> dict[str, Any]:
    """What the report shows for one Pareto design: stages and delta-v budget."""
    res = row.get("result") or {}
    stages = [{k: s.get(k) for k in ("name", "isp_s", "structural_coefficient", "ignition_mass_kg",
                                     "propellant_mass_kg", "structural_mass_kg", "mass_ratio",
                                     "payload_ratio", "delta_v_m_s", "delta_v_share")}
              for s in res.get("stages", []) or []]
    losses = res.get("losses_m_s") if isinstance(res.get("losses_m_s"), dict) else {}
    return {"stages": stages, "gross_mass_kg": res.get("gross_mass_kg"),
            "payload_mass_kg": res.get("payload_mass_kg"), "delta_v_m_s": res.get("delta_v_m_s"),
            "losses_m_s": {k: v for k, v in losses.items() if isinstance(v, (int, float))}}


def write_review_pack(folder: str | Path, case_id: int, out_dir: str | Path | None = None) -> Path:
    """Design-review pack of one case: stage mass table (Markdown, XLSX), delta-v budget,
    trade factors and inputs.

    The case is sized again with `solve` from its stored inputs (so the pack
    carries the full result, trade factors included) and checked against the
    stored gross mass.

    Parameters
    ----------
    folder : str or Path
        Study output folder.
    case_id : int
    out_dir : str or Path, optional
        Default: ``<folder>/review/case-<id>``.

    Returns
    -------
    Path
        The pack's folder (``review.md``, ``stage_masses.xlsx``, ``stage_masses.md``,
        ``result.json``).
    """
    from ..optimize.api import solve
    from ..problem.load import problem_from_dict
    from ..report.export import write_stage_table
    from ..report.tables import result_markdown
    from ..result import CAUTION

    with StudyStore(folder) as store:
        study = _study_from_store(store)
        row = store.result_of(int(case_id))
        n = int(store.get_meta("n_cases") or 0)
    if row is None:
        raise ValueError(f"case {case_id}: not in {folder} (cases are 0..{max(n - 1, 0)}; "
                         f"see cases.csv for the stored ones).")
    problem = problem_from_dict(apply_case(study, row["inputs"]),
                                source=f"{study.source} case {case_id}")
    result = solve(problem, method=study.spec.study.method)
    out = Path(out_dir) if out_dir is not None else Path(folder) / "review" / f"case-{case_id}"
    out.mkdir(parents=True, exist_ok=True)
    write_stage_table(result, out / "stage_masses.xlsx")
    write_stage_table(result, out / "stage_masses.md")
    write_stage_table(result, out / "stage_masses.json")
    units = {ax.label or ax.field: field_unit(ax.field) for ax in study.spec.axis}
    lines = [f"# Design review pack: {study.name}, case {case_id}", "",
             f"> {CAUTION}", "", "## Inputs", "", "| input | value | unit |", "|:---|---:|:---|"]
    for k, v in row["inputs"].items():
        lines.append(f"| {k} | {'n/a' if v is None else v} | {units.get(k, '-' if k == 'stage_count' else '')} |")
    lines += ["", "## Delta-v budget", "", "| item | delta-v [m/s] |", "|:---|---:|"]
    for s in result.stages:
        lines.append(f"| {s.name} (ideal) | {s.delta_v_m_s:,.1f} |")
    d = result.to_dict()
    losses = d.get("losses_m_s") if isinstance(d.get("losses_m_s"), dict) else {}
    for k, v in losses.items():
        if isinstance(v, (int, float)):
            lines.append(f"| loss: {k} | {-float(v):,.1f} |")
    lines.append(f"| total ideal | {result.delta_v_m_s:,.1f} |")
    lines += ["", "## Study metrics", "", "| metric | value |", "|:---|---:|"]
    for k, v in row["metrics"].items():
        if "." not in k:
            lines.append(f"| {k if k != 'cost' else f'cost [{study.cost_unit}]'} | {v:,.6g} |")
    lines += ["", result_markdown(result, title=f"{study.name}, case {case_id}")]
    (out / "review.md").write_text("\n".join(lines) + "\n", encoding="utf-8")
    return out
