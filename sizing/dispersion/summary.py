"""From stored samples to the run's statistics and its files (JSON, CSV, HTML, caution).

The performance measure of the reserves is the deficit against the target,
D = -(margin over the target): apogee below the target [m] for an apogee, the
speed short of the target orbit's energy less the carried reserve's delta-v
[m/s] for an orbit. Flights that failed or samples that make no vehicle count
as D = +inf (never meeting the target). The flight performance reserve at
probability p is the (p, confidence) order-statistics bound of D minus the
nominal flight's D: the performance the nominal design must have above the
target so that a fraction p of dispersed flights meets it (`statistics`).
"""

from __future__ import annotations

import csv
import json
import math
from pathlib import Path
from typing import Any

import numpy as np

from ..result import CAUTION, finite_json
from . import statistics as S
from .flights import METRIC_LABELS, METRIC_UNITS

__all__ = ["summarise", "write_outputs", "report_data", "STATISTICS_JSON", "STATISTICS_CSV", "SAMPLES_CSV",
           "REPORT_HTML", "CAUTION_TXT", "target_unit"]

#: Perigee shortfall counted as a shape miss of a fixed-programme ascent [m] (common practice, no source).
ORBIT_SHAPE_TOLERANCE_M = 10e3

STATISTICS_JSON = "statistics.json"
STATISTICS_CSV = "statistics.csv"
SAMPLES_CSV = "samples.csv"
REPORT_HTML = "report.html"
CAUTION_TXT = "CAUTION.txt"


def target_unit(meta: dict[str, Any]) -> str:
    """Unit of the margin, deficit and reserve: m (apogee) or m/s (orbit)."""
    return "m/s" if meta["target_kind"] == "orbit" else "m"


def _requirement_text(meta: dict[str, Any]) -> str:
    t = meta["target"]
    if meta["target_kind"] == "apogee":
        return f"apogee >= {t['apogee_above_site_m']:,.0f} m above the site"
    if meta["target_kind"] == "orbit":
        res = meta.get("extra_top_mass_kg") or 0.0
        with_res = f", using at most the {res:,.4g} kg propellant reserve" if res > 0 else ""
        return (f"orbital energy of a {t['perigee_altitude_m'] / 1e3:,.0f} x {t['apogee_altitude_m'] / 1e3:,.0f} km "
                f"orbit at final burnout{with_res}")
    return "none (the file gives no target)"


def _deficits(samples: dict[str, Any]) -> tuple[np.ndarray, float]:
    """Deficit of every sample (inf where the flight failed) and of the nominal flight."""
    margin = samples["metrics"].get("target_margin")
    st = samples["status"]
    if margin is None:
        return np.full(st.size, math.nan), math.nan
    d = np.where(st == "ok", -margin, math.inf)
    d = np.where(np.isnan(d), math.inf, d)
    nom = samples["nominal"]["metrics"].get("target_margin", math.nan)
    return d, -nom


def summarise(samples: dict[str, Any], *, probability: float | None = None, confidence: float | None = None,
              default_probability: float | None = None, default_confidence: float = 0.9) -> dict[str, Any]:
    """Statistics of a dispersion run (JSON-ready; see the module notes and `statistics`)."""
    meta = samples["meta"]
    p_req = probability if probability is not None else default_probability
    c = confidence if confidence is not None else default_confidence
    st = samples["status"]
    n = int(st.size)
    counts = {k: int(np.sum(st == k)) for k in ("ok", "failed", "invalid", "crashed")}
    unit = target_unit(meta)
    out: dict[str, Any] = {
        "caution": CAUTION, "name": meta["name"], "source": meta["source"], "target_kind": meta["target_kind"],
        "target": meta["target"], "requirement": _requirement_text(meta), "samples": {"n": n, **counts},
        "probability_required": p_req, "confidence": c, "nominal": samples["nominal"], "inputs": meta["inputs"],
        "seed": meta["seed"], "hobby": meta.get("hobby") or {}, "target_unit": unit,
    }
    deficit, d_nom = _deficits(samples)
    if meta["target_kind"] != "none" and n:
        met = int(np.sum(deficit <= 0.0))
        prob = S.probability_bounds(met, n, c)
        out["probability_of_meeting"] = {**prob, "met": met, "n": n}
        out["requirement_demonstrated"] = None if p_req is None else bool(prob["lower"] >= p_req)
        loss = deficit - d_nom
        rss = samples.get("rss") or {}
        # an effect stored as None or inf: that one-sigma flight failed, and the RSS reserve is unbounded
        effects = [math.inf if g is None else float(g) for g in rss.get("one_sigma_effects", [])]
        sig = (S.rss_sigma(effects, meta["correlation"]) if all(map(math.isfinite, effects)) else math.inf) \
            if rss else None
        probs = sorted(set(S.REPORT_PROBABILITIES) | ({p_req} if p_req else set()))
        rows = S.reserve_table(loss, c, probs, sig)
        bias = rss.get("bias", 0.0) if rss else 0.0
        for r in rows:
            r["reserve_rss"] = r["reserve_rss"] + (bias if math.isfinite(bias) else 0.0)
            r["covered_by_nominal_margin"] = bool(-d_nom >= r["reserve_order_statistic"])
            if meta["target_kind"] == "orbit":
                r["reserve_propellant_kg"] = _propellant_for(r["reserve_order_statistic"], samples)
        out["reserves"] = rows
        out["reserve_required"] = next((r for r in rows if p_req is not None and r["probability"] == p_req), None)
        out["performance"] = {"deficit_unit": unit, "nominal_margin": -d_nom,
                              "rss_sigma": sig, "rss_bias": bias, "rss": rss,
                              "what": "apogee lost against the nominal flight" if meta["target_kind"] == "apogee"
                              else "speed lost against the nominal flight (orbital energy at final burnout)"}
    figs = {k: v for k, v in samples["metrics"].items()}
    if meta["target_kind"] == "orbit" and "perigee_altitude_m" in figs and n:
        per = figs["perigee_altitude_m"][st == "ok"]
        goal = meta["target"]["perigee_altitude_m"]
        out["orbit_shape"] = {"perigee_short_by_10_km_share": float(np.mean(per < goal - ORBIT_SHAPE_TOLERANCE_M)),
                              "perigee_below_surface_share": float(np.mean(per < 0.0)),
                              "tolerance_m": ORBIT_SHAPE_TOLERANCE_M}
    out["percentiles"] = [dict(r, unit=unit if r["figure"] == "target_margin" else METRIC_UNITS.get(r["figure"], ""),
                               label=METRIC_LABELS.get(r["figure"], r["figure"]))
                          for r in S.percentile_table({k: v[st == "ok"] for k, v in figs.items()})]
    out["sensitivities"] = _sensitivities(samples, figs)
    if meta.get("has_landing") and "landing_east_m" in figs:
        ok = st == "ok"
        out["landing_ellipses"] = [S.landing_ellipse(figs["landing_east_m"][ok], figs["landing_north_m"][ok], q)
                                   for q in (0.9, 0.99)]
    return out


def _propellant_for(dv_m_s: float, samples: dict[str, Any]) -> float:
    """Propellant above the last stage's nominal burnout mass (less any reserve carried) that gives
    `dv_m_s`: m (exp(dv / c) - 1) (rocket equation, Sutton & Biblarz, 9th ed., eq. 4-6) [kg]."""
    m_f = samples["nominal"]["metrics"].get("final_mass_kg", math.nan) - (samples["meta"]["extra_top_mass_kg"] or 0.0)
    c = samples["meta"]["last_stage_exhaust_velocity_m_s"]
    if not (math.isfinite(dv_m_s) and math.isfinite(m_f)):
        return math.nan
    return m_f * math.expm1(dv_m_s / c) if dv_m_s > 0 else 0.0


def _sensitivities(samples: dict[str, Any], figs: dict[str, np.ndarray]) -> dict[str, list]:
    """Rank correlations of the inputs with the margin (or apogee / insertion speed) and the landing distance."""
    ok = samples["status"] == "ok"
    ins = {k: v[ok] for k, v in samples["inputs"].items()}
    out = {}
    for key in ("target_margin", "apogee_above_site_m", "insertion_speed_m_s", "landing_distance_m"):
        if key in figs and (key != "apogee_above_site_m" or "target_margin" not in figs) and ok.sum() > 3:
            out[key] = S.rank_sensitivities(ins, figs[key][ok])
    return out


# ---------------------------------------------------------------- files
def _fmt(v: Any) -> Any:
    if isinstance(v, float):
        return ("inf" if v > 0 else "-inf") if math.isinf(v) else "" if math.isnan(v) else f"{v:.10g}"
    return "" if v is None else v


def _write_samples_csv(path: Path, samples: dict[str, Any], unit: str) -> None:
    meta = samples["meta"]
    ins = meta["inputs"]
    figs = list(samples["metrics"])
    with path.open("w", newline="", encoding="utf-8") as fh:
        fh.write(f"# caution: {CAUTION} (read with pandas.read_csv(path, comment='#'))\n")
        w = csv.writer(fh)
        head = ["sample_id", "status"] + [f"{i['name']} [{i['unit']}]" for i in ins]
        head += [("target_margin_" + ("m_s" if unit == "m/s" else "m")) if f == "target_margin"
                 else f for f in figs]
        w.writerow(head)
        for k in range(samples["ids"].size):
            row = [int(samples["ids"][k]), samples["status"][k]]
            row += [_fmt(float(samples["inputs"][i["name"]][k])) for i in ins]
            row += [_fmt(float(samples["metrics"][f][k])) for f in figs]
            w.writerow(row)


def _write_statistics_csv(path: Path, stats: dict[str, Any]) -> None:
    from ..report.export import write_csv_section

    unit = stats["target_unit"]
    with path.open("w", newline="", encoding="utf-8") as fh:
        w = csv.writer(fh)
        w.writerow(["dispersion run", stats["name"]])
        w.writerow(["requirement", stats["requirement"]])
        w.writerow(["samples", stats["samples"]["n"], "ok", stats["samples"]["ok"], "failed",
                    stats["samples"]["failed"], "invalid", stats["samples"]["invalid"]])
        pm = stats.get("probability_of_meeting")
        if pm:
            write_csv_section(w, "probability of meeting the requirement", [
                "estimate [-]", f"lower bound at {stats['confidence']:g} confidence [-]", "interval low [-]",
                "interval high [-]", "required [-]", "demonstrated"],
                [[_fmt(pm["estimate"]), _fmt(pm["lower"]), _fmt(pm["interval_low"]), _fmt(pm["interval_high"]),
                  _fmt(stats["probability_required"]), stats.get("requirement_demonstrated")]])
        if stats.get("reserves"):
            write_csv_section(w, f"flight performance reserve [{unit}] (confidence {stats['confidence']:g})", [
                "probability [-]", f"order statistic [{unit}]", "rank used", "samples needed (no failure)",
                f"normal fit [{unit}]", f"root-sum-square [{unit}]", "covered by the nominal margin"]
                + (["reserve propellant [kg]"] if stats["target_kind"] == "orbit" else []),
                [[_fmt(r["probability"]), _fmt(r["reserve_order_statistic"]), r["rank"],
                  r["samples_needed_no_failure"], _fmt(r["reserve_normal_fit"]), _fmt(r["reserve_rss"]),
                  r["covered_by_nominal_margin"]] + ([_fmt(r.get("reserve_propellant_kg"))]
                                                      if stats["target_kind"] == "orbit" else [])
                 for r in stats["reserves"]])
        write_csv_section(w, "percentiles of the flown samples", ["figure", "unit", "n", "mean", "std", "min"]
                          + [f"p{q:g} [%]" for q in S.PERCENTILES] + ["max"],
                          [[r["figure"], r["unit"], r["n"], _fmt(r["mean"]), _fmt(r["std"]), _fmt(r["min"])]
                           + [_fmt(r[f"p{q:g}"]) for q in S.PERCENTILES] + [_fmt(r["max"])]
                           for r in stats["percentiles"]])
        for key, rows in stats["sensitivities"].items():
            write_csv_section(w, f"rank correlation (Spearman) with {key}", ["input", "rank correlation [-]",
                                                                             "share of the squares [-]"],
                              [[r["input"], _fmt(r["rank_correlation"]), _fmt(r["share"])] for r in rows])
        for e in stats.get("landing_ellipses", []):
            write_csv_section(w, f"landing ellipse ({e['probability']:g}, normal theory)", list(e),
                              [[_fmt(v) for v in e.values()]])
        w.writerow([])
        w.writerow(["caution", CAUTION])


def write_outputs(folder: str | Path, samples: dict[str, Any], stats: dict[str, Any]) -> dict[str, Path]:
    """Write statistics.json, statistics.csv, samples.csv, report.html and CAUTION.txt into the folder."""
    from ..report.dispersion_html import write_dispersion_report

    folder = Path(folder)
    out = {"statistics_json": folder / STATISTICS_JSON, "statistics_csv": folder / STATISTICS_CSV,
           "samples_csv": folder / SAMPLES_CSV, "report": folder / REPORT_HTML, "caution": folder / CAUTION_TXT}
    out["statistics_json"].write_text(json.dumps(finite_json(stats), indent=2), encoding="utf-8")
    _write_statistics_csv(out["statistics_csv"], stats)
    _write_samples_csv(out["samples_csv"], samples, stats["target_unit"])
    write_dispersion_report(report_data(samples, stats), out["report"])
    out["caution"].write_text(
        f"{stats['name']}: Monte Carlo dispersion results in this folder (samples.csv, statistics.csv, "
        f"statistics.json, report.html).\n\n{CAUTION}\nDispersion statistics describe the model's response to "
        "the stated input distributions only; they are no reliability figure of a real vehicle.\n",
        encoding="utf-8")
    return out


# ---------------------------------------------------------------- what the page embeds
#: Most points of a scatter or CDF embedded in the report (thinned evenly beyond it).
MAX_POINTS = 3000


def _thin(n: int) -> np.ndarray:
    return np.arange(n) if n <= MAX_POINTS else np.linspace(0, n - 1, MAX_POINTS).astype(int)


def _histogram(x: np.ndarray) -> dict[str, list]:
    x = x[np.isfinite(x)]
    if x.size == 0:
        return {"edges": [], "counts": []}
    bins = int(min(60, max(10, math.sqrt(x.size))))
    counts, edges = np.histogram(x, bins=bins)
    return {"edges": edges.tolist(), "counts": counts.tolist()}


def report_data(samples: dict[str, Any], stats: dict[str, Any]) -> dict[str, Any]:
    """Plain data the HTML report draws: histograms, CDFs, sensitivity scatters, landing points."""
    ok = samples["status"] == "ok"
    figs = samples["metrics"]
    unit = stats["target_unit"]
    shown = [k for k in ("target_margin", "apogee_above_site_m", "perigee_altitude_m", "insertion_speed_m_s",
                         "max_dynamic_pressure_pa", "max_acceleration_m_s2", "landing_distance_m") if k in figs]
    plots = []
    for k in shown:
        x = np.sort(figs[k][ok][np.isfinite(figs[k][ok])])
        idx = _thin(x.size)
        mark = None
        if k == "target_margin":
            mark = 0.0
        elif k == "apogee_above_site_m" and stats["target_kind"] == "apogee":
            mark = stats["target"]["apogee_above_site_m"]
        plots.append({"key": k, "label": METRIC_LABELS.get(k, k),
                      "unit": unit if k == "target_margin" else METRIC_UNITS.get(k, ""),
                      "histogram": _histogram(x), "cdf_x": x[idx].tolist(),
                      "cdf_p": ((idx + 0.5) / max(1, x.size)).tolist(), "requirement": mark})
    scatter = []
    sens = stats["sensitivities"]
    key = next(iter(sens), None)
    if key is not None:
        idx = _thin(int(ok.sum()))
        y = figs[key][ok][idx]
        units = {i["name"]: i["unit"] for i in samples["meta"]["inputs"]}
        for r in sens[key][:4]:
            scatter.append({"input": r["input"], "unit": units.get(r["input"], ""),
                            "rank_correlation": r["rank_correlation"],
                            "x": samples["inputs"][r["input"]][ok][idx].tolist(), "y": y.tolist(),
                            "y_label": METRIC_LABELS.get(key, key),
                            "y_unit": unit if key == "target_margin" else METRIC_UNITS.get(key, "")})
    landing = None
    if "landing_east_m" in figs:
        idx = _thin(int(ok.sum()))
        landing = {"east": figs["landing_east_m"][ok][idx].tolist(), "north": figs["landing_north_m"][ok][idx].tolist(),
                   "ellipses": stats.get("landing_ellipses", [])}
    labels = {k: f"{METRIC_LABELS.get(k, k)} [{unit if k == 'target_margin' else METRIC_UNITS.get(k, '')}]"
              for k in sens}
    return {"statistics": stats, "plots": finite_json(plots), "scatter": finite_json(scatter),
            "landing": finite_json(landing), "labels": labels, "caution": CAUTION}
