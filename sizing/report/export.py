"""Write a result to .csv, .md, .json or .xlsx, chosen by the file extension."""

from __future__ import annotations

import json
from pathlib import Path

from ..result import CAUTION, SizingResult
from .tables import (
    HARDWARE_QUANTITIES,
    STAGE_COLUMNS,
    TRADE_FACTOR_HEADER,
    limit_text,
    result_markdown,
    trade_factor_rows,
)

__all__ = ["EXPORT_FORMATS", "write_stage_table", "result_json"]

EXPORT_FORMATS = (".csv", ".md", ".json", ".xlsx")


def result_json(result: SizingResult) -> str:
    """The result as indented JSON (SI-suffixed keys)."""
    return json.dumps(result.to_dict(), indent=2)


def write_stage_table(result: SizingResult, path: str | Path) -> Path:
    """Write the stage mass table (with totals, trade factors and the caution).

    Parameters
    ----------
    result : SizingResult
    path : str or Path
        Extension picks the format: .csv, .md, .json or .xlsx.

    Raises
    ------
    ValueError
        For any other extension.
    """
    p = Path(path)
    ext = p.suffix.lower()
    if ext not in EXPORT_FORMATS:
        raise ValueError(f"--out {p}: the extension must be one of {', '.join(EXPORT_FORMATS)}. Got {ext or 'none'!r}.")
    if ext == ".json":
        p.write_text(result_json(result) + "\n", encoding="utf-8")
    elif ext == ".md":
        p.write_text(result_markdown(result), encoding="utf-8")
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
    })
    frame = pd.concat([frame, pd.DataFrame([total])], ignore_index=True)
    return frame


def _write_csv(result: SizingResult, p: Path) -> None:
    import csv

    with p.open("w", newline="", encoding="utf-8") as fh:
        w = csv.writer(fh)
        w.writerow([h for _f, h, _s in STAGE_COLUMNS])
        for s in result.stages:
            w.writerow([getattr(s, f) if f != "delta_v_share" else 100.0 * s.delta_v_share
                        for f, _h, _s in STAGE_COLUMNS])
        totals = {"name": "total", "ignition_mass_kg": result.gross_mass_kg,
                  "propellant_mass_kg": sum(s.propellant_mass_kg for s in result.stages),
                  "structural_mass_kg": sum(s.structural_mass_kg for s in result.stages),
                  "payload_ratio": result.payload_fraction, "delta_v_m_s": result.delta_v_m_s}
        w.writerow([totals.get(f, "") for f, _h, _s in STAGE_COLUMNS])
        hw = _hardware_records(result)
        if hw:
            w.writerow([])
            w.writerow(["stage hardware (stage model)"] + [s.name for s in result.stages])
            for label, values in hw:
                w.writerow([label] + ["" if v is None else v for v in values])
        w.writerow([])
        w.writerow(["payload mass [kg]", result.payload_mass_kg])
        w.writerow(["gross mass [kg]", result.gross_mass_kg])
        w.writerow(["status", str(result.status), result.message])
        w.writerow(["caution", CAUTION])


def _write_xlsx(result: SizingResult, p: Path) -> None:
    import pandas as pd

    frame = _numeric_frame(result)
    with pd.ExcelWriter(p, engine="openpyxl") as xw:
        frame.to_excel(xw, sheet_name="stage masses", index=False)
        tf = pd.DataFrame(trade_factor_rows(result), columns=list(TRADE_FACTOR_HEADER))
        for col in TRADE_FACTOR_HEADER[2:]:
            tf[col] = [float(v.replace(",", "")) if v not in ("", "n/a") else None for v in tf[col]]
        tf.columns = ["item", "step", "gross mass change at fixed payload [kg]",
                      "payload change at fixed gross mass [kg]"]
        tf.to_excel(xw, sheet_name="trade factors", index=False)
        if result.constraints:
            pd.DataFrame([{"limit": c.name, "allowed": limit_text(c), "at optimum": c.value,
                           "binding": c.binding, "sensitivity": c.sensitivity,
                           "sensitivity unit": c.sensitivity_unit} for c in result.constraints]
                         ).to_excel(xw, sheet_name="design limits", index=False)
        hw = _hardware_records(result)
        if hw:
            pd.DataFrame([[label] + list(values) for label, values in hw],
                         columns=["quantity [unit]"] + [s.name for s in result.stages]
                         ).to_excel(xw, sheet_name="stage hardware", index=False)
        info = [("problem", result.problem_name), ("status", str(result.status)),
                ("message", result.message), ("method", result.method),
                ("payload mass [kg]", result.payload_mass_kg), ("gross mass [kg]", result.gross_mass_kg),
                ("ideal delta-v [m/s]", result.delta_v_m_s), ("caution", CAUTION)]
        info += [("review note", w) for w in result.warnings]
        pd.DataFrame(info, columns=["item", "value"]).to_excel(xw, sheet_name="summary", index=False)



def _hardware_records(result: SizingResult) -> list[tuple[str, list]]:
    """(label with unit, value per stage) of the stage-model quantities and mass breakdown (numbers unformatted)."""
    if not any(s.propellant for s in result.stages):
        return []
    out = []
    for f, label, _spec in HARDWARE_QUANTITIES:
        values = [getattr(s, f) for s in result.stages]
        if any(v is not None for v in values):
            out.append((label, values))
    items: list[str] = []
    for s in result.stages:
        items += [k for k in (s.mass_breakdown_kg or {}) if k not in items]
    for k in items:
        out.append((f"mass: {k.replace('_', ' ')} [kg]", [(s.mass_breakdown_kg or {}).get(k) for s in result.stages]))
    return out
