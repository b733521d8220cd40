"""Read a study's stored cases: Pareto set, exports, HTML report, design-review pack."""

from __future__ import annotations

import copy
import json
from pathlib import Path
from typing import Any

import numpy as np

from ..errors import StudyDefinitionError
from ..result import CAUTION
from .labels import si_kind, split_unit
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
    "study_input_names",
    "input_converters",
    "RANK_CAP",
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
    base, unit = split_unit(name)
    return f"{base} [{unit}]"


def input_label(name: str, unit: str) -> str:
    """Exported column header of a study input (axis or choice): ``name [unit]``.

    Text inputs (a propellant choice) have no unit; pass ``unit=''``.
    """
    return f"{name} [{unit}]" if unit else name


#: Fronts numbered this or beyond are all given this number (``pareto_rank``): the
#: report and the exports need the front and its near neighbours, and capping the
#: peeling bounds its cost with three objectives at a million cases.
RANK_CAP = 10

#: Rows decoded at a time when cases.csv is written.
_CHUNK = 5000

_STAGE_COLUMNS = ("ignition_mass_kg", "propellant_mass_kg", "structural_mass_kg", "delta_v_m_s")


def study_input_names(study: Study) -> list[str]:
    """Input names of a study's cases in the order `expand_cases` gives them:
    stage count, propellant per stage, then the grid axes, then the sampled axes."""
    spec = study.spec
    names: list[str] = []
    if spec.choices.stage_count is not None:
        names.append("stage_count")
    names += [f"propellant.{n}" for n in spec.choices.propellant]
    grid = [ax for ax in spec.axis if not ax.is_sampled or spec.study.design == "grid"]
    samp = [ax for ax in spec.axis if ax.is_sampled and spec.study.design != "grid"]
    names += [ax.label or ax.field for ax in grid + samp]
    return names


def input_converters(study: Study) -> dict[str, Any]:
    """Input name -> function turning a stored input value into its SI number.

    Axis levels may be written with units (``"300 km"``); the stored inputs
    keep what the study file says (they are the case's identity), and the
    exports and the report show the SI number. Text inputs pass through.
    """
    from ..units import to_si

    out: dict[str, Any] = {}
    for ax in study.spec.axis:
        kind = si_kind(ax.field)
        cache: dict[Any, Any] = {}

        def conv(v: Any, kind: str | None = kind, cache: dict = cache) -> Any:
            if not isinstance(v, str) or kind is None:
                return v
            if v not in cache:
                try:
                    cache[v] = to_si(v, kind)
                except ValueError:
                    cache[v] = v
            return cache[v]

        out[ax.label or ax.field] = conv
    return out


class StudyResults:
    """Every stored case of a study, ranked, read lazily from the store.

    Loading reads only the case ids, statuses and objective values (pulled
    out of the stored JSON by SQLite); the front's full results, any case's
    inputs and the export rows are read when asked for, a chunk at a time.

    Attributes
    ----------
    folder : Path
    study : Study
        Rebuilt from the copy kept in the store (the study file is not needed).
    total : int
        Cases in the study (stored or not).
    case_ids : ndarray of int
        Stored case ids, ascending.
    status : ndarray of str
        Status of each stored case.
    objective_values : ndarray, shape (n, k)
        Objective metrics of each stored case, in their own senses (NaN where absent).
    ranks : ndarray of int
        Non-dominated front of each feasible ('ok') case, 0 = Pareto front
        (fronts from `RANK_CAP` on are given `RANK_CAP`); -1 for the others.
    """

    def __init__(self, folder: Path, study: Study, total: int, case_ids: np.ndarray,
                 status: np.ndarray, objective_values: np.ndarray, ranks: np.ndarray) -> None:
        self.folder = Path(folder)
        self.study = study
        self.total = total
        self.case_ids = case_ids
        self.status = status
        self.objective_values = objective_values
        self.ranks = ranks
        self.input_names = study_input_names(study)
        self._rows: list[dict[str, Any]] | None = None
        self._pareto: list[dict[str, Any]] | None = None

    @property
    def input_units(self) -> dict[str, str]:
        """Input name -> unit, from the axis field each name varies ('' for text choices)."""
        return study_input_units(self.study)

    def rank_of(self, case_id: int) -> int:
        i = int(np.searchsorted(self.case_ids, case_id))
        return int(self.ranks[i]) if i < len(self.case_ids) and self.case_ids[i] == case_id else -1

    def read(self, case_ids, *, with_result: bool = True) -> list[dict[str, Any]]:
        """Stored rows of the given cases (ordered by case id), each with its ``rank``."""
        out: list[dict[str, Any]] = []
        with StudyStore(self.folder) as store:
            for chunk in store.iter_rows(with_result=with_result, case_ids=[int(c) for c in case_ids]):
                out.extend(chunk)
        for r in out:
            r["rank"] = self.rank_of(r["case_id"])
        return out

    @property
    def rows(self) -> list[dict[str, Any]]:
        """Every stored case with its full result (decoded on first use; a large study
        is better read with `iter_rows` or exported with `write_outputs`)."""
        if self._rows is None:
            self._rows = [r for chunk in self.iter_rows() for r in chunk]
        return self._rows

    def iter_rows(self, *, with_result: bool = True, chunk: int = _CHUNK):
        """Stored cases in chunks (lists of row dicts with ``rank``), case-id order."""
        with StudyStore(self.folder) as store:
            for part in store.iter_rows(with_result=with_result, chunk=chunk):
                for r in part:
                    r["rank"] = self.rank_of(r["case_id"])
                yield part

    @property
    def front_ids(self) -> np.ndarray:
        """Case ids on the Pareto front, ascending."""
        return self.case_ids[self.ranks == 0]

    @property
    def pareto(self) -> list[dict[str, Any]]:
        """Feasible cases on the Pareto front with their results, sorted by the first objective."""
        if self._pareto is None:
            front = self.read(self.front_ids)
            ob = self.study.objectives[0]
            sign = 1 if ob.sense == "min" else -1
            self._pareto = sorted(front, key=lambda r: sign * r["metrics"][ob.metric])
        return self._pareto

    def counts(self) -> dict[str, int]:
        names, n = np.unique(self.status.astype(str), return_counts=True) if len(self.status) else ([], [])
        return {str(k): int(v) for k, v in zip(names, n)}

    def _columns(self) -> tuple[list[str], list[str], list[str]]:
        """(metric names, stage names, column headers) shared by every chunk of an export."""
        if getattr(self, "_cols", None) is None:
            with StudyStore(self.folder) as store:
                names = store.metric_names()
            wanted = {o.metric for o in self.study.objectives} | {b.metric for b in self.study.bounds}
            metrics = [k for k in names if "." not in k or k in wanted]
            stages = [s.get("name") for s in self.study.base.get("stage", []) if isinstance(s, dict)]
            units = self.input_units
            cu = self.study.cost_unit
            cols = ["case_id", "status", "pareto_rank [-]"]
            cols += [input_label(k, units.get(k, "")) for k in self.input_names]
            cols += [column_label(k, cost_unit=cu) for k in metrics]
            model = self._uses_stage_model()
            per_stage = _STAGE_COLUMNS + (_STAGE_MODEL_COLUMNS if model else ())
            cols += [column_label(f"{n}.{q}") for n in stages for q in per_stage]
            cols += ["message", "elapsed [s]"]
            self._cols = (metrics, stages, cols, per_stage)
        return self._cols

    def _uses_stage_model(self) -> bool:
        """True when a stage of the base problem or a study choice names a propellant or a structure model."""
        stages = [s for s in self.study.base.get("stage", []) if isinstance(s, dict)]
        if any("propellant" in s or "structure" in s for s in stages):
            return True
        return any(".structure." in ax.field or ax.field.endswith(".propellant") for ax in self.study.spec.axis)

    def frame(self, rows: list[dict[str, Any]] | None = None):
        """Cases as a pandas DataFrame: inputs (SI numbers), metrics and per-stage masses,
        units in headers. All stored cases unless `rows` is given."""
        import pandas as pd

        if rows is None:
            parts = [self._frame_of(chunk) for chunk in self.iter_rows()]
            return pd.concat(parts, ignore_index=True) if parts else self._frame_of([])
        return self._frame_of(rows)

    def _frame_of(self, rows: list[dict[str, Any]]):
        import pandas as pd

        metrics, stages, cols, per_stage = self._columns()
        conv = input_converters(self.study)
        ident = (lambda v: v)
        records = []
        for r in rows:
            rec: list[Any] = [r["case_id"], r["status"], r.get("rank", self.rank_of(r["case_id"]))]
            inp = r["inputs"]
            rec += [conv.get(k, ident)(inp.get(k)) for k in self.input_names]
            m = r["metrics"]
            rec += [m.get(k) for k in metrics]
            by_name = {s.get("name"): s for s in (r.get("result") or {}).get("stages", []) or []}
            for n in stages:
                s = by_name.get(n, {})
                rec += [s.get(q) for q in per_stage]
            rec += [r["message"], r["elapsed_s"]]
            records.append(rec)
        return pd.DataFrame.from_records(records, columns=cols)


_STAGE_COLUMNS = ("ignition_mass_kg", "propellant_mass_kg", "structural_mass_kg", "delta_v_m_s")
#: Stage-model outputs added per stage when the study's stages use the stage model (sizing.result.StageResult).
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

    Only case ids, statuses and objective values are read (SQL), so loading a
    million-case study takes seconds and little memory.

    Raises
    ------
    StudyOutputConflictError
        The folder has no study store.
    """
    with StudyStore(folder) as store:
        study = _study_from_store(store)
        obs = study.objectives
        ids, status, vals = store.metric_columns([o.metric for o in obs])
        total = int(store.get_meta("n_cases") or len(ids))
    case_ids = np.asarray(ids, dtype=np.int64)
    st = np.asarray(status, dtype=object)
    F = np.array(vals, dtype=float).reshape(len(ids), len(obs)) if ids else np.empty((0, len(obs)))
    ranks = np.full(len(ids), -1, dtype=int)
    ok = np.flatnonzero(st == "ok")
    if ok.size:
        G = to_minimisation(F[ok], [o.sense for o in obs])
        ranks[ok] = non_dominated_ranks(G, max_rank=RANK_CAP)
    return StudyResults(Path(folder), study, total, case_ids, st, F, ranks)


def write_outputs(folder: str | Path, *, report: bool = True) -> dict[str, Path]:
    """Write pareto.csv, pareto.xlsx, cases.csv and (optionally) report.html.

    cases.csv is written a chunk of cases at a time, so memory stays bounded
    at any study size.

    Returns
    -------
    dict
        Name -> path of each file written.
    """
    from ..report.xlsx import write_frames_xlsx

    res = load_results(folder)
    folder = Path(folder)
    with StudyStore(folder) as store:
        store.set_meta("pareto_case_ids", [r["case_id"] for r in res.pareto])
    out: dict[str, Path] = {}
    pf = res.frame(res.pareto)
    pf.to_csv(folder / PARETO_CSV, index=False)
    out["pareto_csv"] = folder / PARETO_CSV
    import pandas as pd

    write_frames_xlsx(folder / PARETO_XLSX, [
        ("pareto", pf), ("caution", pd.DataFrame({"caution": [CAUTION]}))])
    out["pareto_xlsx"] = folder / PARETO_XLSX
    path = folder / CASES_CSV
    first = True
    for chunk in res.iter_rows():
        res._frame_of(chunk).to_csv(path, index=False, header=first, mode="w" if first else "a")
        first = False
    if first:
        res._frame_of([]).to_csv(path, index=False)
    out["cases_csv"] = path
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
    from ..report.html import write_study_report
    from .report_data import report_data

    p = Path(path) if path is not None else res.folder / REPORT_HTML
    return write_study_report(report_data(res), p)


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
    from ..report.flight_tables import delta_v_budget_rows
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
    write_stage_table(result, out / "stage_masses.md", title=f"{study.name}, case {case_id}")
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
    budget = delta_v_budget_rows(result.flight)  # the signed budget `sizing solve` prints
    losses = {} if budget else d.get("losses_m_s") if isinstance(d.get("losses_m_s"), dict) else {}
    lines += [f"| {label} | {v} |" for label, v in budget] or [f"| total ideal | {result.delta_v_m_s:,.1f} |"]
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
    lines += ["", result_markdown(result, title=f"{study.name}, case {case_id}", caution=None)]
    (out / "review.md").write_text("\n".join(lines) + "\n", encoding="utf-8")
    return out
