"""Write a result to .csv, .md, .json or .xlsx, chosen by the file extension."""

from __future__ import annotations

import json
from pathlib import Path

from ..result import CAUTION, SizingResult
from .flight_tables import STEERING_HEADER, delta_v_budget_values, steering_values
from .tables import (
    STAGE_COLUMNS,
    flight_summary_values,
    hardware_records,
    limit_text,
    result_markdown,
    trade_factor_values,
)

__all__ = ["EXPORT_FORMATS", "write_stage_table", "result_json", "write_csv_section"]

EXPORT_FORMATS = (".csv", ".md", ".json", ".xlsx", ".toml")


def result_json(result: SizingResult) -> str:
    """The result as indented JSON (SI-suffixed keys)."""
    return json.dumps(result.to_dict(), indent=2)


def write_stage_table(result: SizingResult, path: str | Path, *, title: str | None = None) -> Path:
    """Write the stage mass table (with totals, trade factors, the flight tables and the caution).

    Parameters
    ----------
    result : SizingResult
    path : str or Path
        Extension picks the format: .csv, .md, .json, .xlsx, or .toml (the design
        file of an apogee or orbit result, which `sizing fly` flies).
    title : str, optional
        Heading of the .md export (default: the problem name), e.g. a study case.

    Raises
    ------
    ValueError
        For any other extension.
    """
    p = Path(path)
    ext = p.suffix.lower()
    if ext not in EXPORT_FORMATS:
        raise ValueError(f"--out {p}: the extension must be one of {', '.join(EXPORT_FORMATS)}. Got {ext or 'none'!r}.")
    if ext == ".toml":
        from .design import write_design

        return write_design(result, p)
    if ext == ".json":
        p.write_text(result_json(result) + "\n", encoding="utf-8")
    elif ext == ".md":
        p.write_text(result_markdown(result, title=title), encoding="utf-8")
    elif ext == ".csv":
        _write_csv(result, p)
    else:
        _write_xlsx(result, p)
    return p


def _numeric_frame(result: SizingResult):
    import pandas as pd

    rows = []
    for s in result.stages:
        rows.append({h: getattr(s, f) for f, h, _ in STAGE_COLUMNS})
    frame = pd.DataFrame(rows, columns=[h for _f, h, _ in STAGE_COLUMNS])
    frame["delta-v share [%]"] = frame["delta-v share [%]"] * 100.0
    total = {h: None for _f, h, _ in STAGE_COLUMNS}
    total.update({
        "stage": "total",
        "ignition mass [kg]": result.gross_mass_kg,
        "propellant mass [kg]": sum(s.propellant_mass_kg for s in result.stages),
        "structural mass [kg]": sum(s.structural_mass_kg for s in result.stages),
        "payload ratio [-]": result.payload_fraction,
        "delta-v [m/s]": result.delta_v_m_s,
        "delta-v share [%]": 100.0 if result.stages else None,
    })
    frame = pd.concat([frame, pd.DataFrame([total])], ignore_index=True)
    return frame


def _section_rows(result: SizingResult) -> list[tuple[str, list[str], list[list]]]:
    """The sections below the stage table, as numbers: (title, header, rows).

    Trade factors, design limits, the flight figures (with the signed delta-v
    budget), the steering programme with its staging events (the rows the
    terminal prints) and the stage hardware; the same sections go to CSV and XLSX.
    """
    out = []
    tf = trade_factor_values(result)
    if tf:
        out.append(("trade factors", list(TRADE_FACTOR_NUMERIC_HEADER),
                    [[item, step, dm0, dpl] for item, step, dm0, dpl, _spec in tf]))
    if result.constraints:
        out.append(("design limits", ["limit", "allowed", "at optimum [limit unit]", "binding",
                                      "sensitivity", "sensitivity unit"],
                    [[c.name, limit_text(c), c.value, "yes" if c.binding else "no", c.sensitivity,
                      c.sensitivity_unit] for c in result.constraints]))
    fl = flight_summary_values(result)
    budget = delta_v_budget_values(result.flight)
    if fl or budget:
        rows = [[label, v, unit] for label, v, unit, _spec in fl]
        rows += [[f"delta-v budget: {label}", v, "m/s"] for label, v, _total in budget]
        out.append(("flight", ["quantity", "value [unit column]", "unit"], rows))
    steering = steering_values(result)
    if steering:
        out.append(("steering programme", list(STEERING_HEADER), [list(r) for r in steering]))
    hw = hardware_records(result)
    if hw:
        out.append(("stage hardware", ["quantity [unit]"] + [s.name for s in result.stages],
                    [[label] + list(values) for label, values in hw]))
    return out


#: Header of the numeric trade-factor table (CSV and XLSX).
TRADE_FACTOR_NUMERIC_HEADER = ("item", "step", "gross mass change at fixed payload [kg]",
                               "payload change at fixed gross mass [kg]")


def _write_csv(result: SizingResult, p: Path) -> None:
    import csv

    frame = _numeric_frame(result)
    with p.open("w", newline="", encoding="utf-8") as fh:
        w = csv.writer(fh)
        w.writerow(list(frame.columns))
        for row in frame.itertuples(index=False):
            w.writerow(["" if v is None or (isinstance(v, float) and v != v) else v for v in row])
        w.writerow([])
        w.writerow(["payload mass [kg]", result.payload_mass_kg])
        w.writerow(["gross mass [kg]", result.gross_mass_kg])
        w.writerow(["status", str(result.status), result.message])
        for title, header, rows in _section_rows(result):
            write_csv_section(w, title, header, rows)
        w.writerow([])
        w.writerow(["caution", CAUTION])


def write_csv_section(w, title: str | None, header, rows) -> None:
    """A blank line, a title line (if any), a header line and the rows (None as empty cells)."""
    w.writerow([])
    if title:
        w.writerow([title])
    w.writerow(list(header))
    for r in rows:
        w.writerow(["" if v is None else v for v in r])


def _write_xlsx(result: SizingResult, p: Path) -> None:
    import pandas as pd

    from .xlsx import format_sheet

    frame = _numeric_frame(result)
    with pd.ExcelWriter(p, engine="openpyxl") as xw:
        frame.to_excel(xw, sheet_name="stage masses", index=False)
        format_sheet(xw.sheets["stage masses"])
        for title, header, rows in _section_rows(result):
            pd.DataFrame(rows, columns=header).to_excel(xw, sheet_name=title, index=False)
            format_sheet(xw.sheets[title], per_cell=(2,) if title == "flight" else ())
        info = [("problem", result.problem_name), ("status", str(result.status)),
                ("message", result.message), ("method", result.method),
                ("payload mass [kg]", result.payload_mass_kg), ("gross mass [kg]", result.gross_mass_kg),
                ("ideal delta-v [m/s]", result.delta_v_m_s), ("caution", CAUTION)]
        info += [("review note", w) for w in result.warnings]
        pd.DataFrame(info, columns=["item", "value"]).to_excel(xw, sheet_name="summary", index=False)
        format_sheet(xw.sheets["summary"], per_cell=(2,))
