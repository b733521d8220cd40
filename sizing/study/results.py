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
from ..result import CAUTION
from .pareto import non_dominated_ranks, to_minimisation
from .spec import FIELD_UNITS, Study, apply_case, study_from_dict
from .store import StudyStore

__all__ = [
    "StudyResults",
    "load_results",
    "write_outputs",
    "write_review_pack",
    "field_unit",
    "column_label",
    "input_label",
    "PARETO_CSV",
    "PARETO_XLSX",
    "REPORT_HTML",
    "CAUTION_TXT",
]

PARETO_CSV = "pareto.csv"
PARETO_XLSX = "pareto.xlsx"
CASES_CSV = "cases.csv"
REPORT_HTML = "report.html"
CAUTION_TXT = "CAUTION.txt"

def field_unit(field: str) -> str:
    """Unit of a problem field path such as ``stage.first.isp`` ('' when unknown)."""
    return FIELD_UNITS.get(field.rsplit(".", 1)[-1], "")


#: Unit-suffix -> unit shown in brackets, longest suffix first.
_SUFFIX_UNITS = (
    ("_kg_per_m_s", "kg/(m/s)"), ("_m_s2", "m/s^2"), ("_m_s", "m/s"), ("_kg", "kg"),
    ("_pa", "Pa"), ("_deg", "deg"), ("_m3", "m^3"), ("_m2", "m^2"), ("_n", "N"), ("_m", "m"), ("_s", "s"),
)


def column_label(name: str, *, cost_unit: str = "cost units") -> str:
    """Exported column header of a metric or result field: ``name [unit]``.

    One style for every numeric column of cases.csv, pareto.csv/.xlsx and the
    review pack: the unit suffix of the field name moves into brackets
    (``gross_mass_kg`` -> ``gross_mass [kg]``, ``first.delta_v_m_s`` ->
    ``first.delta_v [m/s]``); ``cost`` carries the study's cost unit; names
    without a unit suffix are dimensionless by the project's naming rule and
    get ``[-]`` (``n_stages [-]``, ``payload_fraction [-]``).

    Examples
    --------
    >>> column_label("max_acceleration_m_s2")
    'max_acceleration [m/s^2]'
    >>> column_label("cost", cost_unit="kilo-credits")
    'cost [kilo-credits]'
    >>> column_label("n_stages")
    'n_stages [-]'
    """
    if name == "cost":
        return f"cost [{cost_unit}]"
    for suffix, unit in _SUFFIX_UNITS:
        if name.endswith(suffix) and len(name) > len(suffix):
            return f"{name[: -len(suffix)]} [{unit}]"
    return f"{name} [-]"


def input_label(name: str, unit: str) -> str:
    """Exported column header of a study input (axis or choice): ``name [unit]``.

    Text inputs (a propellant choice) have no unit; pass ``unit=''``.
    """
    return f"{name} [{unit}]" if unit else name


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
        """Input name -> unit, from the axis field each name varies ('' for text choices)."""
        return study_input_units(self.study)

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
        cu = self.study.cost_unit
        src = self.rows if rows is None else rows
        # every stage name any case has, bottom first, so columns keep one order
        stage_names: list[str] = []
        for r in src:
            for s in (r.get("result") or {}).get("stages", []) or []:
                if s.get("name") not in stage_names:
                    stage_names.append(s.get("name"))
        metric_names: list[str] = []
        for r in src:
            for k in r["metrics"]:
                if "." not in k and k not in metric_names:
                    metric_names.append(k)
        # stage-model quantities (tank lengths, engines...) only where some case has them
        model_cols = tuple(q for q in _STAGE_MODEL_COLUMNS if any(
            s.get(q) is not None for r in src for s in (r.get("result") or {}).get("stages", []) or []))
        records = []
        for r in src:
            rec: dict[str, Any] = {"case_id": r["case_id"], "status": r["status"],
                                   "pareto_rank [-]": r["rank"]}
            for k in self.input_names:
                rec[input_label(k, units.get(k, ""))] = r["inputs"].get(k)
            for k in metric_names:
                rec[column_label(k, cost_unit=cu)] = r["metrics"].get(k)
            by_name = {s.get("name"): s for s in (r.get("result") or {}).get("stages", []) or []}
            for n in stage_names:
                s = by_name.get(n, {})
                for q in _STAGE_COLUMNS + model_cols:
                    rec[column_label(f"{n}.{q}")] = s.get(q)
            rec["message"] = r["message"]
            rec["elapsed [s]"] = r["elapsed_s"]
            records.append(rec)
        return pd.DataFrame.from_records(records)


_STAGE_COLUMNS = ("ignition_mass_kg", "propellant_mass_kg", "structural_mass_kg", "delta_v_m_s")
#: Stage-model outputs added per stage when a case has them (see sizing.result.StageResult).
_STAGE_MODEL_COLUMNS = ("structural_coefficient", "fuel_mass_kg", "oxidiser_mass_kg", "fuel_volume_m3",
                        "oxidiser_volume_m3", "stage_length_m", "length_to_diameter", "engine_count",
                        "engine_mass_kg", "thrust_to_weight", "burn_time_s", "gravity_loss_m_s")


def study_input_units(study: Study) -> dict[str, str]:
    """Input name -> unit for a study's axes and choices ('' for text choices)."""
    special = {"cost_per_dry_kg": f"{study.cost_unit}/kg", "cost_fixed": study.cost_unit,
               "target_tolerance": "m or m/s"}
    units = {}
    for ax in study.spec.axis:
        key = ax.field.rsplit(".", 1)[-1]
        units[ax.label or ax.field] = special.get(key) or field_unit(ax.field) or "-"
    units["stage_count"] = "-"
    return units


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
        import pandas as pd

        with pd.ExcelWriter(folder / PARETO_XLSX, engine="openpyxl") as xw:
            pf.to_excel(xw, index=False, sheet_name="pareto")
            pd.DataFrame({"caution": [CAUTION]}).to_excel(xw, index=False, sheet_name="caution")
        out["pareto_xlsx"] = folder / PARETO_XLSX
    except ImportError:  # pragma: no cover - openpyxl is a dependency
        pass
    res.frame().to_csv(folder / CASES_CSV, index=False)
    out["cases_csv"] = folder / CASES_CSV
    caution = folder / CAUTION_TXT
    caution.write_text(
        f"{res.study.name}: study results in this folder (cases.csv, pareto.csv, pareto.xlsx, "
        f"report.html, review packs).\n\n{CAUTION}\n"
        "Study results are model estimates for comparing designs; every design needs its own "
        "review before anything is built or flown.\n", encoding="utf-8")
    out["caution"] = caution
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
    units = study_input_units(study)
    lines = [f"# Design review pack: {study.name}, case {case_id}", "",
             f"> {CAUTION}", "", "## Inputs", "", "| input | value | unit |", "|:---|---:|:---|"]
    for k, v in row["inputs"].items():
        lines.append(f"| {k} | {'n/a' if v is None else v} | {units.get(k, '') or '(text)'} |")
    lines += ["", "## Delta-v budget", "", "| item | delta-v [m/s] |", "|:---|---:|"]
    for s in result.stages:
        lines.append(f"| {s.name} (ideal) | {s.delta_v_m_s:,.1f} |")
    d = result.to_dict()
    losses = d.get("losses_m_s") if isinstance(d.get("losses_m_s"), dict) else {}
    lines.append(f"| total ideal | {result.delta_v_m_s:,.1f} |")
    for k, v in losses.items():
        if isinstance(v, (int, float)):
            lines.append(f"| loss: {k} | {0.0 - float(v):,.1f} |")
    if losses:
        delivered = result.delta_v_m_s - sum(float(v) for v in losses.values() if isinstance(v, (int, float)))
        lines.append(f"| delivered (ideal minus losses) | {delivered:,.1f} |")
    lines += ["", "## Study metrics", "", "| metric [unit] | value |", "|:---|---:|"]
    for k, v in row["metrics"].items():
        if "." not in k:
            lines.append(f"| {column_label(k, cost_unit=study.cost_unit)} | {v:,.6g} |")
    lines += ["", result_markdown(result, title=f"{study.name}, case {case_id}")]
    (out / "review.md").write_text("\n".join(lines) + "\n", encoding="utf-8")
    return out
