"""Self-contained HTML report of a trade study (works offline: plotly.js is inlined).

The page shows the Pareto front (hover: a design's inputs; click a point or a
table row to select it), a parallel-coordinates view of inputs and objectives
over every feasible case (WebGL; where the browser has no WebGL, a static SVG
drawing of the same lines), stacked stage-mass bars of the Pareto designs, and
for the selected design its delta-v budget and stage mass table. It carries
the caution that the numbers are preliminary estimates.

All user text (study, vehicle, stage and propellant names) reaches the page
only as JSON data (with ``<``, ``>`` and ``&`` escaped) and is put into the DOM
with ``textContent`` or, for plot labels, entity-escaped; none of it is ever
parsed as HTML or script.

This module reads plain data only (`StudyReportData`); `sizing.study.results`
builds it from a study's store.
"""

from __future__ import annotations

import html
import json
import math
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from ..result import CAUTION

__all__ = ["StudyReportData", "render_study_report", "write_study_report", "TABLE_MAX", "BARS_MAX"]


@dataclass
class StudyReportData:
    """Everything the study report shows, as plain JSON-able data (labels already in words).

    Attributes
    ----------
    title, vehicle, description, source : str
    objectives : list of dict
        ``metric``, ``sense`` ('min'/'max'), ``label`` (words with unit, e.g.
        ``gross mass [kg]``).
    constraints : list of str
        Each constraint as a reader states it (``gross mass <= 60,000 kg``).
    inputs : list of dict
        ``name``, ``label`` (words with unit), ``unit`` ('' for text choices).
    fixed : list of str
        Inputs with one value in every case, stated rather than plotted.
    counts : dict
        Stored cases per status.
    total : int
        Cases in the study.
    n_front : int
        Cases on the Pareto front.
    cases : dict
        The cases the page draws, column-wise: ``case_id``, ``rank`` (0 = front),
        ``inputs`` (name -> SI values), ``objectives`` (one list per objective).
        The front is whole; the other feasible cases may be thinned.
    front : list of int
        Case ids of the front, sorted by the first objective.
    knee : int or None
        Case id of the knee (compromise) design.
    pairs : list of dict
        For three objectives: ``i``, ``j`` and the ``ids`` on the front of that pair.
    cloud_note : str
        How many of the cases off the front are drawn.
    designs : dict
        case_id -> ``stages`` (one list per stage: name, ignition, propellant and
        structural mass [kg], mass ratio [-], delta-v [m/s], delta-v share [-],
        Isp [s], structural coefficient [-]), ``gross_mass_kg``, ``payload_mass_kg``,
        ``delta_v_m_s``, ``losses_m_s``; for the front designs.
    """

    title: str
    vehicle: str
    description: str
    source: str
    objectives: list[dict[str, str]]
    constraints: list[str]
    inputs: list[dict[str, str]]
    total: int
    cases: dict[str, Any]
    front: list[int]
    fixed: list[str] = field(default_factory=list)
    counts: dict[str, int] = field(default_factory=dict)
    n_front: int = 0
    knee: int | None = None
    pairs: list[dict[str, Any]] = field(default_factory=list)
    cloud_note: str = ""
    designs: dict[int, dict[str, Any]] = field(default_factory=dict)


def _clean(obj: Any) -> Any:
    if isinstance(obj, float):
        return obj if math.isfinite(obj) else None
    if isinstance(obj, dict):
        return {str(k): _clean(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [_clean(v) for v in obj]
    return obj


def _json_for_script(obj: Any) -> str:
    """JSON safe inside a <script> element: no '<', '>' or '&' left to end it."""
    text = json.dumps(_clean(obj), separators=(",", ":"), allow_nan=False)
    return (text.replace("&", "\\u0026").replace("<", "\\u003c").replace(">", "\\u003e")
            .replace("\u2028", "\\u2028").replace("\u2029", "\\u2029"))


#: Pareto designs listed in the page's table at most (pareto.csv has them all).
TABLE_MAX = 400
#: Pareto designs drawn as stage-mass bars at most (evenly spaced along the front).
BARS_MAX = 40

_CSS = """
:root { --ink:#1d2327; --muted:#5b6770; --paper:#f7f5f0; --card:#ffffff; --line:#d9d4c7;
        --accent:#186a73; --accent2:#c8792a; --warn:#8a3b12; --pick:#fff1d6; }
* { box-sizing: border-box; }
body { margin:0; font: 15px/1.45 "DejaVu Sans", "Segoe UI", sans-serif; color:var(--ink);
       background:var(--paper); }
header { padding: 22px 32px 14px; border-bottom: 4px solid var(--accent); background:#eef3f2; }
header h1 { margin:0 0 4px; font-size: 24px; letter-spacing: .2px; }
header .sub { color: var(--muted); }
.caution { margin: 14px 32px; padding: 10px 14px; border-left: 6px solid var(--warn);
           background:#fbe9df; color:#4a1d06; font-weight:600; }
main { padding: 4px 32px 40px; display:grid; grid-template-columns: minmax(0, 1fr) minmax(0, 1fr); gap:18px; }
section { min-width:0; background:var(--card); border:1px solid var(--line); border-radius:6px; padding:12px 16px; }
section.wide { grid-column: 1 / -1; }
section h2 { font-size:16px; margin:2px 0 8px; color:var(--accent); }
.facts { display:flex; flex-wrap:wrap; gap:8px 22px; margin-top:8px; font-size:14px; }
.facts b { font-variant-numeric: tabular-nums; }
table { border-collapse: collapse; font-size:13px; font-variant-numeric: tabular-nums; }
th, td { padding:4px 7px; border-bottom:1px solid var(--line); text-align:right; }
td { white-space:nowrap; }
th { background:#f0ede4; position: sticky; top: 0; vertical-align: bottom; font-weight:600;
     white-space:normal; min-width: 4.5em; max-width: 11em; }
th:first-child, td:first-child { text-align:left; }
td.text { text-align:left; }
#pareto-table tbody tr { cursor:pointer; }
#pareto-table tbody tr:hover { background:#eef6f6; }
#pareto-table tbody tr.picked { background:var(--pick); outline: 2px solid var(--accent2); }
#pareto-table tbody tr.knee td:first-child::after { content: " (knee)"; color: var(--accent2); font-weight:600; }
.scroll { max-height: 420px; overflow:auto; }
.box { overflow-x:auto; }
.plot { width:100%; height:420px; }
.pairs { display:grid; grid-template-columns: repeat(3, minmax(0, 1fr)); gap: 10px; }
.pairs .plot { height: 340px; }
.split { display:grid; grid-template-columns: minmax(0, 5fr) minmax(0, 7fr); gap: 18px; align-items:start; }
.note { color:var(--muted); font-size:13px; }
dl.kv { display:grid; grid-template-columns: max-content minmax(0, 1fr); gap: 3px 14px; margin: 6px 0; font-size:14px; }
dl.kv dt { color: var(--muted); }
dl.kv dd { margin:0; font-variant-numeric: tabular-nums; }
footer { padding: 0 32px 30px; color:var(--muted); font-size:12px; }
"""

_JS = r"""
(function () {
  "use strict";
  var D = JSON.parse(document.getElementById("study-data").textContent);
  function esc(s) {  // entity-escape text for plotly labels (shown as text, never as markup)
    return String(s).replace(/&/g, "&amp;").replace(/</g, "&lt;").replace(/>/g, "&gt;")
      .replace(/"/g, "&quot;").replace(/'/g, "&#39;");
  }
  // One number format per quantity: about four significant figures on the largest value,
  // the same decimals for every value of that quantity (table column, axis, hover).
  function decimalsFor(values) {
    var big = 0;
    values.forEach(function (v) { if (typeof v === "number" && isFinite(v)) big = Math.max(big, Math.abs(v)); });
    if (big === 0) return {d: 0, exp: false};
    if (big >= 1e9 || big < 1e-4) return {d: 3, exp: true};
    var allWhole = values.every(function (v) { return typeof v !== "number" || Math.round(v) === v; });
    if (allWhole && big < 1e6) return {d: 0, exp: false};
    return {d: Math.min(6, Math.max(0, 3 - Math.floor(Math.log10(big)))), exp: false};
  }
  function formatter(values) {
    var f = decimalsFor(values);
    var fn = function (v) {
      if (v === null || v === undefined || (typeof v === "number" && !isFinite(v))) return "n/a";
      if (typeof v !== "number") return String(v);
      if (f.exp) return v.toExponential(f.d);
      return v.toLocaleString("en-US", {minimumFractionDigits: f.d, maximumFractionDigits: f.d});
    };
    fn.d3 = f.exp ? ".3e" : ",." + f.d + "f";
    return fn;
  }
  function el(tag, text, cls) {
    var e = document.createElement(tag);
    if (text !== undefined && text !== null) e.textContent = String(text);
    if (cls) e.className = cls;
    return e;
  }
  function distinct(values) {
    var seen = [];
    values.forEach(function (v) { var s = v === null || v === undefined ? null : v; if (seen.indexOf(s) < 0) seen.push(s); });
    return seen;
  }
  var obs = D.objectives;
  function senseWord(o) { return o.sense === "min" ? "minimised" : "maximised"; }
  function olabel(i) { return obs[i].label + " (" + senseWord(obs[i]) + ")"; }
  var C = D.cases, n = C.case_id.length;
  var idx = {};
  C.case_id.forEach(function (id, i) { idx[id] = i; });
  var fixedNames = {};
  // inputs with one value in every drawn case are stated, not tabulated or plotted
  var inputs = D.inputs.filter(function (inp) {
    var d = distinct(C.inputs[inp.name] || []);
    if (d.length <= 1) { fixedNames[inp.name] = true; return false; }
    return true;
  });
  var ofmt = obs.map(function (_, j) { return formatter(C.objectives[j]); });
  var ifmt = {};
  inputs.forEach(function (inp) { ifmt[inp.name] = formatter(C.inputs[inp.name]); });
  function ov(i, j) { return C.objectives[j][i]; }

  // header
  document.getElementById("title").textContent = D.title;
  document.getElementById("vehicle").textContent = D.vehicle ? "vehicle: " + D.vehicle : "";
  document.getElementById("description").textContent = D.description ? (D.vehicle ? " | " : "") + D.description : "";
  var counts = D.counts;
  var facts = document.getElementById("facts");
  var nFeas = counts.ok || 0;
  [["cases in study", D.total], ["stored", Object.keys(counts).reduce(function (s, k) { return s + counts[k]; }, 0)],
   ["feasible", nFeas], ["infeasible", counts.infeasible || 0], ["rejected by constraints", counts.rejected || 0],
   ["errors", counts.error || 0], ["crashed", counts.crashed || 0], ["on the Pareto front", D.n_front]
  ].forEach(function (kv) {
    var s = el("span", kv[0] + ": "); s.appendChild(el("b", Number(kv[1]).toLocaleString("en-US"))); facts.appendChild(s);
  });
  document.getElementById("objectives").textContent =
    "Objectives: " + obs.map(function (o, i) { return olabel(i); }).join("; ") + "." +
    (D.constraints.length ? " Constraints: " + D.constraints.join("; ") + "." : "");
  var fixedText = D.fixed.slice();
  D.inputs.forEach(function (inp) {
    if (fixedNames[inp.name] && !D.fixed.some(function (f) { return f.indexOf(inp.label.split(" [")[0] + ":") === 0; })) {
      var v = C.inputs[inp.name] ? C.inputs[inp.name][0] : null;
      if (v !== null && v !== undefined)
        fixedText.push(inp.label.split(" [")[0] + ": " + formatter([v])(v) + (inp.unit && inp.unit !== "-" ? " " + inp.unit : ""));
    }
  });
  document.getElementById("fixed").textContent = fixedText.length ? "Same in every case: " + fixedText.join("; ") + "." : "";

  var front = D.front.filter(function (id) { return idx[id] !== undefined; });
  var isFront = {};
  front.forEach(function (id) { isFront[id] = true; });
  var others = C.case_id.filter(function (id) { return !isFront[id]; });
  function hover(id) {
    var i = idx[id];
    var lines = ["<b>case " + id + (id === D.knee ? " (knee)" : "") + "</b>"];
    inputs.forEach(function (inp) {
      var v = C.inputs[inp.name][i];
      if (v !== null && v !== undefined) lines.push(esc(inp.label) + ": " + esc(ifmt[inp.name](v)));
    });
    obs.forEach(function (o, j) { lines.push(esc(o.label) + ": " + esc(ofmt[j](ov(i, j)))); });
    return lines.join("<br>");
  }
  var cfg = {displaylogo: false, responsive: true};
  var axisFont = {family: "DejaVu Sans, sans-serif", size: 12, color: "#1d2327"};
  // t: 44 keeps the plot toolbar (mode bar, top right) in the margin, clear of the data
  var base = {margin: {l: 76, r: 20, t: 44, b: 60}, paper_bgcolor: "#ffffff", plot_bgcolor: "#fbfaf6",
              font: axisFont, hoverlabel: {bgcolor: "#ffffff", bordercolor: "#186a73"}};
  function axis(j, ids) {  // an objective axis; one value only: one tick at it, no invented range
    var vals = ids.map(function (id) { return ov(idx[id], j); });
    var a = {title: {text: esc(olabel(j))}, gridcolor: "#e6e1d6", tickformat: ofmt[j].d3, hoverformat: ofmt[j].d3,
             automargin: true};
    var d = distinct(vals.filter(function (v) { return v !== null; }));
    if (d.length === 1) { a.tickvals = [d[0]]; a.ticktext = [ofmt[j](d[0])]; }
    return a;
  }
  function scatterTraces(xj, yj, frontIds, frontName, colourBy) {
    var tr = [];
    var rest = C.case_id.filter(function (id) { return frontIds.indexOf(id) < 0; });
    tr.push({type: "scatter", mode: "markers", name: "other feasible cases",
             x: rest.map(function (id) { return ov(idx[id], xj); }), y: rest.map(function (id) { return ov(idx[id], yj); }),
             customdata: rest, hovertext: rest.map(hover), hoverinfo: "text",
             marker: {size: 5, color: "#b9b3a5", opacity: 0.65}});
    var fm = {size: 10, color: "#c8792a", line: {color: "#186a73", width: 1.5}, symbol: "diamond"};
    if (colourBy !== null) {
      fm.color = frontIds.map(function (id) { return ov(idx[id], colourBy); }); fm.colorscale = "Cividis";
      fm.showscale = true; fm.colorbar = {title: {text: esc(olabel(colourBy)), side: "right"}, tickformat: ofmt[colourBy].d3};
    }
    var sorted = frontIds.slice().sort(function (a, b) { return ov(idx[a], xj) - ov(idx[b], xj); });
    tr.push({type: "scatter", mode: colourBy !== null ? "markers" : "lines+markers", name: frontName,
             x: sorted.map(function (id) { return ov(idx[id], xj); }), y: sorted.map(function (id) { return ov(idx[id], yj); }),
             customdata: sorted, hovertext: sorted.map(hover), hoverinfo: "text", marker: fm,
             line: {color: "#186a73", width: 1, shape: "hv"}});
    if (D.knee !== null && idx[D.knee] !== undefined) {
      tr.push({type: "scatter", mode: "markers", name: "knee design", x: [ov(idx[D.knee], xj)], y: [ov(idx[D.knee], yj)],
               customdata: [D.knee], hovertext: [hover(D.knee)], hoverinfo: "text",
               marker: {size: 16, symbol: "star", color: "#8a3b12", line: {color: "#ffffff", width: 1}}});
    }
    return tr;
  }

  // Pareto front over the first two objectives (a third as colour)
  var xj = 0, yj = obs.length > 1 ? 1 : 0;
  var frontDiv = document.getElementById("plot-front");
  var tr = scatterTraces(xj, yj, front, "Pareto front", obs.length > 2 ? 2 : null);
  var selIndex = tr.length;
  tr.push({type: "scatter", mode: "markers", name: "selected", x: [], y: [], hoverinfo: "skip",
           marker: {size: 22, color: "rgba(0,0,0,0)", line: {color: "#8a3b12", width: 3}}});
  Plotly.newPlot(frontDiv, tr, Object.assign({}, base, {xaxis: axis(xj, C.case_id), yaxis: axis(yj, C.case_id),
    legend: {orientation: "h", y: -0.28}}), cfg);
  frontDiv.on("plotly_click", function (ev) {
    if (ev && ev.points && ev.points.length) select(ev.points[0].customdata);
  });
  document.getElementById("front-note").textContent = "Grey: feasible cases off the front (" + D.cloud_note + "). " +
    "Star: the knee design, the front design nearest the best value of every objective at once, " +
    "each objective scaled 0 to 1 over the front. Hover a point for its inputs; click a point or a table row to select a design.";

  // fronts per pair of objectives (three objectives)
  function drawPairs() {
  if (D.pairs.length) {
    document.getElementById("pairs-section").hidden = false;
    D.pairs.forEach(function (p, q) {
      var div = document.getElementById("plot-pair-" + q);
      var ids = p.ids.filter(function (id) { return idx[id] !== undefined; });
      var t = scatterTraces(p.i, p.j, ids, "front of this pair", null);
      var on3 = front.filter(function (id) { return ids.indexOf(id) < 0; });
      t.splice(1, 0, {type: "scatter", mode: "markers", name: "on the three-objective front only",
        x: on3.map(function (id) { return ov(idx[id], p.i); }), y: on3.map(function (id) { return ov(idx[id], p.j); }),
        customdata: on3, hovertext: on3.map(hover), hoverinfo: "text",
        marker: {size: 7, symbol: "diamond-open", color: "#c8792a"}});
      Plotly.newPlot(div, t, Object.assign({}, base, {margin: {l: 70, r: 12, t: 30, b: 50}, showlegend: q === 0,
        xaxis: axis(p.i, C.case_id), yaxis: axis(p.j, C.case_id), legend: {orientation: "h", y: -0.35}}), cfg);
      div.on("plotly_click", function (ev) { if (ev && ev.points && ev.points.length) select(ev.points[0].customdata); });
    });
  }
  }

  // knee design summary
  var kneeBox = document.getElementById("knee");
  if (D.knee !== null && idx[D.knee] !== undefined) {
    var ki = idx[D.knee];
    kneeBox.appendChild(el("p", "Case " + D.knee + " is the knee of the front: of the " + front.length +
      " Pareto designs it is nearest to the best value of every objective at once (each objective scaled " +
      "0 to 1 over the front). It is a starting point for review, not a recommendation.", "note"));
    var dl = el("dl", null, "kv");
    obs.forEach(function (o, j) { dl.appendChild(el("dt", o.label)); dl.appendChild(el("dd", ofmt[j](ov(ki, j)))); });
    inputs.forEach(function (inp) {
      dl.appendChild(el("dt", inp.label)); dl.appendChild(el("dd", ifmt[inp.name](C.inputs[inp.name][ki])));
    });
    kneeBox.appendChild(dl);
  } else {
    kneeBox.appendChild(el("p", "No feasible design: there is no front.", "note"));
  }

  // Pareto table
  var table = document.getElementById("pareto-table");
  var thead = table.createTHead().insertRow();
  ["case"].concat(inputs.map(function (inp) { return inp.label; }), obs.map(function (o) { return o.label; }))
    .forEach(function (h) { thead.appendChild(el("th", h)); });
  var tbody = table.createTBody();
  var shownRows = front.slice(0, %(table_max)d);
  if (D.knee !== null && isFront[D.knee] && shownRows.indexOf(D.knee) < 0) shownRows.push(D.knee);
  shownRows.forEach(function (id) {
    var i = idx[id];
    var r = tbody.insertRow();
    r.dataset.caseId = String(id);
    if (id === D.knee) r.classList.add("knee");
    r.appendChild(el("td", id));
    inputs.forEach(function (inp) {
      var v = C.inputs[inp.name][i];
      r.appendChild(el("td", ifmt[inp.name](v), typeof v === "string" ? "text" : null));
    });
    obs.forEach(function (o, j) { r.appendChild(el("td", ofmt[j](ov(i, j)))); });
    r.addEventListener("click", function () { select(id); });
  });
  document.getElementById("table-note").textContent = front.length > shownRows.length
    ? "The first " + shownRows.length + " of " + front.length + " Pareto designs by " + obs[0].label + "; pareto.csv has them all."
    : "All " + front.length + " Pareto designs, by " + olabel(0) + ".";

  function drawStack() {
  // stacked stage masses of (up to %(bars_max)d, evenly spaced) Pareto designs
  var barIds = front;
  if (front.length > %(bars_max)d) {
    barIds = [];
    for (var b = 0; b < %(bars_max)d; b++) barIds.push(front[Math.round(b * (front.length - 1) / (%(bars_max)d - 1))]);
  }
  var stageNames = [];
  barIds.forEach(function (id) {
    var d = D.designs[String(id)];
    (d ? d.stages : []).forEach(function (s) { if (stageNames.indexOf(s[0]) < 0) stageNames.push(s[0]); });
  });
  var palette = ["#186a73", "#c8792a", "#6b8f3a", "#7a4e8c", "#b23b3b", "#3b6fb2"];
  var labels = barIds.map(function (id) { return "case " + id; });
  function stageOf(id, name) { var d = D.designs[String(id)]; return d ? d.stages.filter(function (q) { return q[0] === name; })[0] : null; }
  var bars = [];
  stageNames.forEach(function (nm, i) {
    bars.push({type: "bar", name: esc(nm) + " propellant", x: labels,
      y: barIds.map(function (id) { var s = stageOf(id, nm); return s ? s[2] : 0; }),
      marker: {color: palette[i %% palette.length]}, hovertemplate: "%%{y:,.1f} kg<extra>" + esc(nm) + " propellant</extra>"});
    bars.push({type: "bar", name: esc(nm) + " structure", x: labels,
      y: barIds.map(function (id) { var s = stageOf(id, nm); return s ? s[3] : 0; }),
      // hatched on white, so its legend swatch differs from the solid propellant swatch
      marker: {color: "#ffffff", line: {color: palette[i %% palette.length], width: 1.2},
               pattern: {shape: "/", fgcolor: palette[i %% palette.length], bgcolor: "#ffffff", size: 7, solidity: 0.35}},
      hovertemplate: "%%{y:,.1f} kg<extra>" + esc(nm) + " structure</extra>"});
  });
  bars.push({type: "bar", name: "payload", x: labels,
    y: barIds.map(function (id) { var d = D.designs[String(id)]; return d ? d.payload_mass_kg : 0; }),
    marker: {color: "#2b2b2b"}, hovertemplate: "%%{y:,.1f} kg<extra>payload</extra>"});
  var stackDiv = document.getElementById("plot-stack");
  var tallest = 0;
  barIds.forEach(function (id) { var d = D.designs[String(id)]; if (d && d.gross_mass_kg > tallest) tallest = d.gross_mass_kg; });
  Plotly.newPlot(stackDiv, bars, Object.assign({}, base, {barmode: "stack",
    // 12 %% headroom above the tallest bar: the toolbar never covers it
    yaxis: {title: {text: "mass [kg]"}, gridcolor: "#e6e1d6", tickformat: ",.4~r",
            range: tallest > 0 ? [0, 1.12 * tallest] : undefined},
    xaxis: {automargin: true}, legend: {orientation: "h", y: -0.28, traceorder: "normal"}}), cfg);
  stackDiv.on("plotly_click", function (ev) {
    if (ev && ev.points && ev.points.length) select(barIds[ev.points[0].pointIndex]);
  });
  document.getElementById("stack-note").textContent = barIds.length < front.length
    ? barIds.length + " of the " + front.length + " Pareto designs, evenly spaced along the front by " + obs[0].label + "." : "";
  }

  // parallel coordinates over the drawn cases (front whole, others as in the front plot)
  function intTicks(dim) {  // an axis whose values are all whole numbers is ticked at them only
    var seen = [];
    var whole = dim.values.every(function (v) {
      if (v === null || v === undefined || isNaN(v)) return true;
      if (Math.round(v) !== v) return false;
      if (seen.indexOf(v) < 0) seen.push(v);
      return true;
    });
    if (whole && seen.length && seen.length <= 25 && !dim.tickvals) {
      seen.sort(function (a, b) { return a - b; });
      dim.tickvals = []; for (var t = seen[0]; t <= seen[seen.length - 1]; t++) dim.tickvals.push(t);
      dim.ticktext = dim.tickvals.map(String);
    }
    return dim;
  }
  function hasWebGL() {
    try {
      var cv = document.createElement("canvas");
      return !!(window.WebGLRenderingContext && (cv.getContext("webgl") || cv.getContext("experimental-webgl")));
    } catch (e) { return false; }
  }
  function drawParcoords() {
  var pcDiv = document.getElementById("plot-parcoords");
  var dims = [];
  inputs.forEach(function (inp) {
    var vals = C.inputs[inp.name];
    var numeric = vals.every(function (v) { return v === null || typeof v === "number"; });
    if (numeric) {
      dims.push(intTicks({label: esc(inp.label), values: vals.map(function (v) { return v === null ? NaN : v; }),
                          tickformat: ifmt[inp.name].d3}));
    } else {
      var cats = distinct(vals.map(function (v) { return v === null ? "n/a" : String(v); }));
      dims.push({label: esc(inp.label), values: vals.map(function (v) { return cats.indexOf(v === null ? "n/a" : String(v)); }),
                 tickvals: cats.map(function (_, i) { return i; }), ticktext: cats.map(esc)});
    }
  });
  obs.forEach(function (o, j) {
    var vals = C.objectives[j];
    if (distinct(vals).length <= 1) return;  // one value: stated in the table, not drawn on an invented range
    dims.push(intTicks({label: esc(o.label), values: vals, tickformat: ofmt[j].d3}));
  });
  // titles wider than the spacing of the axes are slanted, so that none overlaps its neighbour
  var spacing = ((pcDiv.clientWidth || 1200) - 300) / Math.max(dims.length - 1, 1);
  var widest = Math.max.apply(null, dims.map(function (d) { return 6.6 * d.label.replace(/&[a-z#0-9]+;/g, "x").length; }).concat([0]));
  var angle = widest > 0.92 * spacing ? -Math.min(60, Math.max(20, Math.round(Math.acos(Math.min(1, 0.92 * spacing / widest)) * 180 / Math.PI))) : 0;
  var topMargin = 56 + Math.round(widest * Math.sin(-angle * Math.PI / 180));
  function halfWidth(d) { return d ? 3.3 * d.label.replace(/&[a-z#0-9]+;/g, "x").length : 0; }
  // horizontal titles are centred on their axis: keep the outer ones inside the plot
  var sideL = Math.max(90, angle ? 40 : Math.round(halfWidth(dims[0])) + 12);
  var sideR = Math.max(90, Math.round(angle ? 2 * halfWidth(dims[dims.length - 1]) * Math.cos(angle * Math.PI / 180) : halfWidth(dims[dims.length - 1])) + 12);
  function drawStaticParcoords(div) {  // SVG lines, for browsers without WebGL
    var m = dims.length, spans = dims.map(function (d) {
      var v = d.values.filter(function (x) { return x !== null && !isNaN(x); });
      var lo = Math.min.apply(null, v.concat(d.tickvals || [])), hi = Math.max.apply(null, v.concat(d.tickvals || []));
      if (!(hi > lo)) { lo -= 1; hi += 1; }
      return [lo, hi];
    });
    function lines(pick) {
      var x = [], y = [];
      C.case_id.forEach(function (id, i) {
        if (!pick(id)) return;
        dims.forEach(function (d, j) {
          var v = d.values[i];
          x.push(j); y.push(v === null || isNaN(v) ? null : (v - spans[j][0]) / (spans[j][1] - spans[j][0]));
        });
        x.push(null); y.push(null);
      });
      return {x: x, y: y};
    }
    var rest = lines(function (id) { return !isFront[id]; }), best = lines(function (id) { return isFront[id]; });
    var ann = [], shapes = [];
    dims.forEach(function (d, j) {
      shapes.push({type: "line", x0: j, x1: j, y0: 0, y1: 1, line: {color: "#5b6770", width: 1}});
      ann.push({x: j, y: 1.04, yanchor: "bottom", xanchor: angle ? "left" : "center", textangle: angle,
                text: d.label, showarrow: false, font: {size: 11}});
      var ticks = d.tickvals ? d.tickvals.map(function (t, q) { return [t, d.ticktext ? d.ticktext[q] : String(t)]; })
                : [[spans[j][0], formatter([spans[j][0], spans[j][1]])(spans[j][0])], [spans[j][1], formatter([spans[j][0], spans[j][1]])(spans[j][1])]];
      ticks.forEach(function (t) {
        ann.push({x: j, y: (t[0] - spans[j][0]) / (spans[j][1] - spans[j][0]), text: t[1], showarrow: false,
                  xanchor: "right", xshift: -4, font: {size: 10, color: "#5b6770"}});
      });
    });
    Plotly.newPlot(div, [
      {type: "scatter", mode: "lines", name: "other feasible cases", x: rest.x, y: rest.y,
       line: {color: "#cfc8b8", width: 1}, hoverinfo: "skip", connectgaps: false},
      {type: "scatter", mode: "lines", name: "Pareto designs", x: best.x, y: best.y,
       line: {color: "#c8792a", width: 2}, hoverinfo: "skip", connectgaps: false}],
      Object.assign({}, base, {margin: {l: sideL, r: sideR, t: topMargin, b: 30}, showlegend: false,
        xaxis: {visible: false, range: [-0.5, m - 0.5]}, yaxis: {visible: false, range: [-0.05, 1.05]},
        annotations: ann, shapes: shapes}), cfg);
  }
  var pcNote = "Orange lines: Pareto designs; grey: " + D.cloud_note + ". ";
  if (hasWebGL()) {
    Plotly.newPlot(pcDiv, [{type: "parcoords", dimensions: dims, labelfont: {size: 11}, rangefont: {size: 10},
      labelangle: angle, labelside: "top",
      line: {color: C.case_id.map(function (id) { return isFront[id] ? 1 : 0; }),
             colorscale: [[0, "#cfc8b8"], [1, "#c8792a"]], cmin: 0, cmax: 1}}],
      Object.assign({}, base, {margin: {l: sideL, r: sideR, t: topMargin, b: 30}}), cfg);
    document.getElementById("parcoords-note").textContent = pcNote + "Drag along an axis to filter.";
    document.body.dataset.parcoords = "webgl";
  } else {
    drawStaticParcoords(pcDiv);
    document.getElementById("parcoords-note").textContent = pcNote + "This browser has no WebGL, so the view is " +
      "drawn as a static chart without axis filtering; cases.csv holds every value.";
    document.body.dataset.parcoords = "svg";
  }
  }

  // selected design
  var budgetDiv = document.getElementById("plot-budget");
  function select(id) {
    if (!isFront[id]) return;
    var i = idx[id];
    Array.prototype.forEach.call(tbody.rows, function (r) { r.classList.toggle("picked", r.dataset.caseId === String(id)); });
    Plotly.restyle(frontDiv, {x: [[ov(i, xj)]], y: [[ov(i, yj)]]}, [selIndex]);
    var d = D.designs[String(id)] || {stages: [], losses_m_s: {}};
    document.getElementById("selected-title").textContent = "Case " + id + (id === D.knee ? " (knee design)" : "") + ": " +
      obs.map(function (o, j) { return o.label + " " + ofmt[j](ov(i, j)); }).join(", ") + ".";
    var st = document.getElementById("stage-table");
    st.textContent = "";
    var cols = [["stage", null], ["ignition mass [kg]", 1], ["propellant mass [kg]", 2], ["structural mass [kg]", 3],
                ["mass ratio [-]", 4], ["delta-v [m/s]", 5], ["delta-v share [%%]", 6], ["Isp [s]", 7], ["structural coefficient [-]", 8]];
    var rowsData = d.stages.map(function (s) { return s.map(function (v, q) { return q === 6 && typeof v === "number" ? 100 * v : v; }); });
    var tot = ["total", d.gross_mass_kg,
               d.stages.reduce(function (a, s) { return a + (s[2] || 0); }, 0),
               d.stages.reduce(function (a, s) { return a + (s[3] || 0); }, 0), null, d.delta_v_m_s, d.stages.length ? 100 : null, null, null];
    var pay = ["payload", d.payload_mass_kg, null, null, null, null, null, null, null];
    var fmts = cols.map(function (c, q) { return q === 0 ? null : formatter(rowsData.map(function (r) { return r[q]; }).concat([tot[q]])); });
    var h = st.createTHead().insertRow();
    cols.forEach(function (c) { h.appendChild(el("th", c[0])); });
    var body = st.createTBody();
    rowsData.concat([tot, pay]).forEach(function (row) {
      var r = body.insertRow();
      row.forEach(function (v, q) {
        r.appendChild(el("td", q === 0 ? v : (v === null || v === undefined ? "" : fmts[q](v)), q === 0 ? "text" : null));
      });
    });
    var names = d.stages.map(function (s) { return esc(s[0]) + " (ideal)"; });
    var vals = d.stages.map(function (s) { return s[5]; });
    var measure = d.stages.map(function () { return "relative"; });
    Object.keys(d.losses_m_s || {}).forEach(function (k) {
      if (k === "total") return;
      names.push("loss: " + esc(k)); vals.push(-d.losses_m_s[k]); measure.push("relative");
    });
    names.push(Object.keys(d.losses_m_s || {}).length ? "delivered" : "total ideal");
    vals.push(0); measure.push("total");
    Plotly.react(budgetDiv, [{type: "waterfall", orientation: "v", x: names, y: vals, measure: measure,
      connector: {line: {color: "#b9b3a5"}}, increasing: {marker: {color: "#186a73"}},
      decreasing: {marker: {color: "#b23b3b"}}, totals: {marker: {color: "#c8792a"}},
      hovertemplate: "%%{x}: %%{y:,.1f} m/s<extra></extra>"}],
      Object.assign({}, base, {yaxis: {title: {text: "delta-v [m/s]"}, gridcolor: "#e6e1d6", tickformat: ",.0f"},
                               xaxis: {automargin: true}, showlegend: false}), cfg);
    document.body.dataset.selected = String(id);
  }
  function selectFirst() {
    if (D.knee !== null && isFront[D.knee]) select(D.knee);
    else if (front.length) select(front[0]);
    else document.getElementById("selected-title").textContent = "No feasible design: nothing to select.";
  }
  // The first screen (header, front, knee, table) is drawn at once; the plots below it
  // follow one per task, so the page is readable before the slowest (WebGL) plot is done.
  document.body.dataset.readyMs = String(Math.round(performance.now()));  // since navigation start
  document.body.dataset.ready = "1";
  var later = [selectFirst, drawPairs, drawStack, drawParcoords];
  (function next() {
    var f = later.shift();
    if (!f) { document.body.dataset.drawnMs = String(Math.round(performance.now())); document.body.dataset.drawn = "1"; return; }
    f();
    setTimeout(next, 0);
  })();
})();
""" % {"table_max": TABLE_MAX, "bars_max": BARS_MAX}

def render_study_report(data: StudyReportData) -> str:
    """The report as one HTML string (plotly.js inlined, no network needed)."""
    from plotly.offline import get_plotlyjs

    payload = {
        "title": data.title, "vehicle": data.vehicle, "description": data.description,
        "objectives": list(data.objectives), "constraints": list(data.constraints),
        "inputs": list(data.inputs), "fixed": list(data.fixed), "counts": dict(data.counts),
        "total": data.total, "n_front": data.n_front, "cases": data.cases, "front": list(data.front),
        "knee": data.knee, "pairs": list(data.pairs), "cloud_note": data.cloud_note,
        "designs": {str(k): v for k, v in data.designs.items()},
    }
    pairs = "".join(f'<div id="plot-pair-{q}" class="plot"></div>' for q in range(len(data.pairs)))
    title = html.escape(f"{data.title} - trade study report")
    source = html.escape(data.source)
    return f"""<!DOCTYPE html>
<html lang="en">
<head>
<meta charset="utf-8">
<meta name="viewport" content="width=device-width, initial-scale=1">
<title>{title}</title>
<style>{_CSS}</style>
<script>{get_plotlyjs()}</script>
</head>
<body>
<header>
  <h1 id="title"></h1>
  <div class="sub"><span id="vehicle"></span> <span id="description"></span></div>
  <div class="sub" id="objectives"></div>
  <div class="sub" id="fixed"></div>
  <div class="facts" id="facts"></div>
</header>
<div class="caution" id="caution">{html.escape(CAUTION)} Study results are model estimates for
comparing designs; every design needs its own review before anything is built or flown.</div>
<main>
  <section><h2>Pareto front</h2><div id="plot-front" class="plot"></div>
    <div class="note" id="front-note"></div></section>
  <section><h2>Knee design</h2><div id="knee"></div></section>
  <section class="wide" id="pairs-section" hidden><h2>Front of each pair of objectives</h2>
    <div class="note">With three objectives most cases can be on the front; each pair shows which cases
    the other objectives keep there.</div><div class="pairs">{pairs}</div></section>
  <section class="wide"><h2>Pareto designs</h2><div class="note" id="table-note"></div>
    <div class="scroll box"><table id="pareto-table"></table></div></section>
  <section class="wide"><h2>Inputs and objectives</h2>
    <div id="plot-parcoords" class="plot"></div><div class="note" id="parcoords-note"></div></section>
  <section class="wide"><h2>Stage masses of the Pareto designs</h2><div id="plot-stack" class="plot"></div>
    <div class="note" id="stack-note"></div></section>
  <section class="wide"><h2>Selected design</h2><div class="note" id="selected-title"></div>
    <div class="split"><div id="plot-budget" class="plot"></div>
    <div class="box"><table id="stage-table"></table></div></div></section>
</main>
<footer>Study file: {source}. Generated by stagesizer. Masses in kg, velocities in m/s, SI throughout.</footer>
<script type="application/json" id="study-data">{_json_for_script(payload)}</script>
<script>{_JS}</script>
</body>
</html>
"""


def write_study_report(data: StudyReportData, path: str | Path) -> Path:
    """Write `render_study_report` to `path` (UTF-8) and return the path."""
    p = Path(path)
    p.parent.mkdir(parents=True, exist_ok=True)
    p.write_text(render_study_report(data), encoding="utf-8")
    return p
