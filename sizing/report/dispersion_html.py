"""Self-contained HTML report of a dispersion run (plotly.js inlined: works offline).

Reads the plain data of `sizing.dispersion.summary.report_data` only: the
statistics, histograms and CDFs of the main figures with the requirement
marked, the rank sensitivities with scatters of the strongest inputs, and the
landing points with their ellipses (hobby flights). The caution heads the page.
"""

from __future__ import annotations

import html
import math
from pathlib import Path
from typing import Any

from ..result import CAUTION

__all__ = ["render_dispersion_report", "write_dispersion_report"]

_CSS = """
body { font-family: system-ui, sans-serif; margin: 1.5em auto; max-width: 1150px; color: #222; }
h1 { font-size: 1.5em; } h2 { font-size: 1.2em; margin-top: 1.6em; border-bottom: 1px solid #ccc; }
table { border-collapse: collapse; margin: 0.6em 0; font-size: 0.92em; }
th, td { border: 1px solid #ccc; padding: 0.25em 0.6em; text-align: right; }
th:first-child, td:first-child { text-align: left; }
.caution { background: #fff4d6; border: 1px solid #d9a400; padding: 0.7em 1em; margin: 1em 0; }
.verdict-ok { color: #176b2c; font-weight: bold; } .verdict-no { color: #a11; font-weight: bold; }
.note { color: #555; font-size: 0.9em; }
td.text { text-align: left; }
"""


def _num(v: Any, spec: str | None = None) -> str:
    if isinstance(v, float) and math.isinf(v):
        return "inf (failed flights)" if v > 0 else "-inf"
    if v is None or (isinstance(v, float) and not math.isfinite(v)):
        return "-"
    if isinstance(v, bool):
        return "yes" if v else "no"
    if isinstance(v, (int, float)):
        return format(v, spec or (",.0f" if abs(v) >= 1e4 else ",.4g"))
    return html.escape(str(v))


def _table(header: list[str], rows: list[list[Any]]) -> str:
    head = "".join(f"<th>{html.escape(h)}</th>" for h in header)
    body = "".join("<tr>" + "".join(f"<td>{c}</td>" for c in r) + "</tr>" for r in rows)
    return f"<table><thead><tr>{head}</tr></thead><tbody>{body}</tbody></table>"


def _summary(st: dict[str, Any]) -> str:
    s = st["samples"]
    rows = [["requirement", html.escape(st["requirement"])],
            ["samples", f"{s['n']:,} (flown {s['ok']:,}, failed {s['failed']:,}, no vehicle {s['invalid']:,})"],
            ["seed", _num(st["seed"], "d")]]
    pm = st.get("probability_of_meeting")
    if pm:
        c = st["confidence"]
        rows.append(["probability of meeting it", f"{pm['estimate']:.4%} ({pm['met']:,} of {pm['n']:,})"])
        rows.append([f"lower bound at {c:.0%} confidence", f"{pm['lower']:.4%}"])
        rows.append([f"interval at {c:.0%} confidence", f"{pm['interval_low']:.4%} to {pm['interval_high']:.4%}"])
        if st.get("probability_required") is not None:
            ok = st.get("requirement_demonstrated")
            cls = "verdict-ok" if ok else "verdict-no"
            word = "demonstrated" if ok else "not demonstrated"
            rows.append(["required probability", f"{st['probability_required']:.4%}: <span class='{cls}'>{word}</span>"
                                                 f" at {c:.0%} confidence"])
    shape = st.get("orbit_shape")
    if shape:
        rows.append(["orbit shape (fixed steering, no guidance)",
                     f"{shape['perigee_short_by_10_km_share']:.1%} of flights end with the perigee more than 10 km "
                     f"below the target's ({shape['perigee_below_surface_share']:.1%} below the surface); a guided "
                     "vehicle trades shape errors with the reserve, this model does not"])
    return "<table>" + "".join(f"<tr><th>{html.escape(a)}</th><td style='text-align:left'>{b}</td></tr>"
                               for a, b in rows) + "</table>"


def _reserves(st: dict[str, Any]) -> str:
    rows = st.get("reserves")
    if not rows:
        return ""
    u = st["target_unit"]
    perf = st["performance"]
    head = ["probability", f"order statistic [{u}]", "rank used / samples", "samples needed (no failure)",
            f"normal fit [{u}]", f"root-sum-square [{u}]", "nominal margin covers it"]
    orbit = st["target_kind"] == "orbit"
    if orbit:
        head.append("as propellant [kg]")
    body = []
    for r in rows:
        line = [f"{r['probability']:.5g}", _num(r["reserve_order_statistic"]),
                f"{r['rank']:,} / {r['n']:,}" if r["rank"] else f"too few ({r['n']:,})",
                f"{r['samples_needed_no_failure']:,}", _num(r["reserve_normal_fit"]), _num(r["reserve_rss"]),
                _num(r["covered_by_nominal_margin"])]
        if orbit:
            line.append(_num(r.get("reserve_propellant_kg")))
        body.append(line)
    note = (f"<p class='note'>Reserve: {html.escape(perf['what'])}, that a fraction p of the dispersed flights "
            f"stays within, at {st['confidence']:.0%} confidence (order statistics, Hanson &amp; Beard 2012; "
            f"Wilks 1941 for the sample count). The nominal design's margin over the target is "
            f"{_num(perf['nominal_margin'])} {html.escape(u)}. Root-sum-square: one-at-a-time one-sigma effects "
            f"combined with the input correlations (linear theory), plus the bias of the inputs' means "
            f"({_num(perf['rss_bias'])} {html.escape(u)}).</p>")
    return "<h2>Flight performance reserve</h2>" + _table(head, body) + note


def _percentiles(st: dict[str, Any]) -> str:
    qs = [k for k in st["percentiles"][0] if k.startswith("p")] if st["percentiles"] else []
    head = ["figure", "unit", "mean", "std"] + [f"{q[1:]} %" for q in qs]
    rows = [[html.escape(r["label"]), html.escape(r["unit"]), _num(r["mean"]), _num(r["std"])]
            + [_num(r[q]) for q in qs] for r in st["percentiles"]]
    return "<h2>Percentiles of the flown samples</h2>" + _table(head, rows)


def _plots(data: dict[str, Any]) -> list[str]:
    import plotly.graph_objects as go
    from plotly.subplots import make_subplots

    out = []
    for p in data["plots"]:
        h = p["histogram"]
        if not h["edges"]:
            continue
        unit = f" [{p['unit']}]" if p["unit"] else ""
        fig = make_subplots(rows=1, cols=2, horizontal_spacing=0.1)
        mids = [0.5 * (a + b) for a, b in zip(h["edges"], h["edges"][1:])]
        fig.add_trace(go.Bar(x=mids, y=h["counts"], name="samples", marker_color="#4a78b5",
                             width=[b - a for a, b in zip(h["edges"], h["edges"][1:])]), 1, 1)
        fig.add_trace(go.Scatter(x=p["cdf_x"], y=p["cdf_p"], mode="lines", name="CDF", line_color="#4a78b5"), 1, 2)
        if p["requirement"] is not None:
            for col in (1, 2):
                fig.add_vline(x=p["requirement"], line_color="#c0392b", line_dash="dash", row=1, col=col)
            fig.add_annotation(x=p["requirement"], y=1.0, yref="paper", text="requirement", showarrow=False,
                               font_color="#c0392b", xanchor="left")
        fig.update_xaxes(title_text=p["label"] + unit)
        fig.update_yaxes(title_text="samples", row=1, col=1)
        fig.update_yaxes(title_text="fraction at or below", row=1, col=2, range=[0, 1])
        fig.update_layout(height=330, showlegend=False, margin=dict(t=50, b=40, l=60, r=20),
                          title_text=f"{p['label']}{unit}: histogram and cumulative distribution")
        out.append(fig.to_html(full_html=False, include_plotlyjs=False))
    return out


def _sensitivity(data: dict[str, Any]) -> str:
    import plotly.graph_objects as go
    from plotly.subplots import make_subplots

    st = data["statistics"]
    parts = []
    for key, rows in st["sensitivities"].items():
        body = [[html.escape(r["input"]), _num(r["rank_correlation"], "+.3f"), _num(r["share"], ".1%")]
                for r in rows]
        label = data["labels"].get(key, key)
        parts.append(f"<h3>{html.escape(label)}</h3>" + _table(["input", "rank correlation", "share of the squares"],
                                                                body))
    sc = data["scatter"]
    if sc:
        # user-given names (stages) are entity-escaped: plotly shows them as text, never as markup
        fig = make_subplots(rows=1, cols=len(sc), subplot_titles=[
            f"{html.escape(s['input'])} (rho {s['rank_correlation']:+.2f})" for s in sc])
        for k, s in enumerate(sc, start=1):
            fig.add_trace(go.Scattergl(x=s["x"], y=s["y"], mode="markers", marker=dict(size=3, opacity=0.5),
                                       name=html.escape(s["input"])), 1, k)
            fig.update_xaxes(title_text=f"{html.escape(s['input'])} [{s['unit']}]", row=1, col=k)
        fig.update_yaxes(title_text=f"{sc[0]['y_label']} [{sc[0]['y_unit']}]", row=1, col=1)
        fig.update_layout(height=340, showlegend=False, margin=dict(t=40, b=40, l=60, r=20))
        parts.append(fig.to_html(full_html=False, include_plotlyjs=False))
    return ("<h2>Which inputs drive the result</h2><p class='note'>Spearman rank correlation of each input with "
            "the figure (scipy.stats.spearmanr): +1 or -1 a monotone driver, 0 none. The share of the squares "
            "is a rough split of the spread among independent inputs.</p>" + "".join(parts))


def _landing(data: dict[str, Any]) -> str:
    land = data.get("landing")
    if not land:
        return ""
    import plotly.graph_objects as go

    fig = go.Figure()
    fig.add_trace(go.Scattergl(x=land["east"], y=land["north"], mode="markers", name="landing points",
                               marker=dict(size=3, opacity=0.5)))
    rows = []
    for e in land["ellipses"]:
        if not e:
            continue
        a, b, th = e["semi_major_m"], e["semi_minor_m"], math.radians(e["major_axis_bearing_deg"])
        ts = [2 * math.pi * k / 96 for k in range(97)]
        xs = [e["mean_east_m"] + a * math.cos(t) * math.sin(th) + b * math.sin(t) * math.cos(th) for t in ts]
        ys = [e["mean_north_m"] + a * math.cos(t) * math.cos(th) - b * math.sin(t) * math.sin(th) for t in ts]
        fig.add_trace(go.Scatter(x=xs, y=ys, mode="lines", name=f"{e['probability']:.0%} ellipse"))
        rows.append([f"{e['probability']:.0%}", _num(e["mean_east_m"]), _num(e["mean_north_m"]),
                     _num(e["semi_major_m"]), _num(e["semi_minor_m"]), _num(e["major_axis_bearing_deg"], ".0f"),
                     _num(e["sample_share_inside"], ".1%")])
    fig.add_trace(go.Scatter(x=[0], y=[0], mode="markers", name="launch site", marker=dict(symbol="x", size=10)))
    fig.update_layout(height=520, xaxis_title="east of the site [m]", yaxis_title="north of the site [m]",
                      yaxis_scaleanchor="x", margin=dict(t=30, b=40, l=60, r=20))
    return ("<h2>Landing points (top stage under its recovery)</h2>" + fig.to_html(full_html=False,
                                                                                   include_plotlyjs=False)
            + _table(["ellipse", "mean east [m]", "mean north [m]", "semi-major [m]", "semi-minor [m]",
                      "major axis bearing [deg]", "samples inside"], rows)
            + "<p class='note'>Normal-theory ellipses of the landing points (Johnson &amp; Wichern, Result 4.7); "
              "the last column checks them against the samples.</p>")


def _inputs(st: dict[str, Any]) -> str:
    rows = [[html.escape(i["name"]), html.escape(i["unit"]), _num(i["nominal"], ",.6g"), _num(i["mean"], ",.6g"),
             _num(i["std"], ",.4g"), html.escape(i["distribution"])] for i in st["inputs"]]
    rows = [r[:-1] + [f"<span style='float:left'>{r[-1]}</span>"] for r in rows]
    return "<h2>Dispersed inputs</h2>" + _table(["input", "unit", "nominal", "mean", "std", "distribution"], rows)


def render_dispersion_report(data: dict[str, Any]) -> str:
    """The report as one HTML string (plotly.js inlined, no network needed)."""
    from plotly.offline import get_plotlyjs

    st = data["statistics"]
    hobby = st.get("hobby") or {}
    stack = (f"<p>Motor stack chosen by the search: {html.escape(' + '.join(hobby['motors']))}.</p>"
             if hobby.get("motors") else "")
    body = "".join([
        f"<h1>Dispersion run: {html.escape(st['name'])}</h1>",
        f"<div class='caution' id='caution'>{html.escape(CAUTION)} These statistics describe the model's response "
        "to the stated input distributions only; they are no reliability figure of a real vehicle.</div>",
        f"<p class='note'>Source: {html.escape(st['source'])}</p>", stack, "<h2>Summary</h2>", _summary(st),
        _reserves(st), _percentiles(st) if st["percentiles"] else "", "<h2>Distributions</h2>", *_plots(data),
        _sensitivity(data) if st["sensitivities"] else "", _landing(data), _inputs(st),
        f"<div class='caution'>{html.escape(CAUTION)}</div>",
    ])
    return (f"<!DOCTYPE html><html lang='en'><head><meta charset='utf-8'><title>Dispersion: "
            f"{html.escape(st['name'])}</title><style>{_CSS}</style><script>{get_plotlyjs()}</script></head>"
            f"<body>{body}</body></html>")


def write_dispersion_report(data: dict[str, Any], path: str | Path) -> Path:
    """Write the report file; returns its path."""
    p = Path(path)
    p.write_text(render_dispersion_report(data), encoding="utf-8")
    return p
