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

__all__ = ["StudyReportData", "render_study_report", "write_study_report"]


@dataclass
class StudyReportData:
    """Everything the study report shows, as plain JSON-able data.

    Attributes
    ----------
    title, vehicle, description, source : str
    objectives : list of (metric, sense, label)
    constraints : list of str
    cost_unit : str
    input_names : list of str
    input_units : dict
        Input name -> unit.
    total : int
        Cases in the study.
    cases : list of dict
        ``case_id``, ``status``, ``message``, ``rank`` (0 = Pareto front, -1 =
        not feasible), ``inputs``, ``metrics``.
    designs : dict
        case_id -> ``stages`` (list of dicts with SI-suffixed keys),
        ``gross_mass_kg``, ``payload_mass_kg``, ``delta_v_m_s``, ``losses_m_s``;
        for the Pareto designs.
    """

    title: str
    vehicle: str
    description: str
    source: str
    objectives: list[tuple[str, str, str]]
    constraints: list[str]
    cost_unit: str
    input_names: list[str]
    input_units: dict[str, str]
    total: int
    cases: list[dict[str, Any]]
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
section h2 { font-size:16px; margin:2px 0 8px; color:var(--accent); text-transform: lowercase;
             font-variant: small-caps; letter-spacing: .5px; }
.facts { display:flex; flex-wrap:wrap; gap:8px 22px; margin-top:8px; font-size:14px; }
.facts b { font-variant-numeric: tabular-nums; }
table { border-collapse: collapse; width:100%; font-size:13px; font-variant-numeric: tabular-nums; }
th, td { padding:4px 8px; border-bottom:1px solid var(--line); text-align:right; white-space:nowrap; }
th:first-child, td:first-child { text-align:left; }
th { background:#f0ede4; position: sticky; top: 0; }
#pareto-table tbody tr { cursor:pointer; }
#pareto-table tbody tr:hover { background:#eef6f6; }
#pareto-table tbody tr.picked { background:var(--pick); outline: 2px solid var(--accent2); }
.scroll { max-height: 340px; overflow:auto; }
.plot { width:100%; height:420px; }
.note { color:var(--muted); font-size:13px; }
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
  function fmt(v, d) {
    if (v === null || v === undefined) return "n/a";
    if (typeof v !== "number") return String(v);
    var a = Math.abs(v);
    if (a !== 0 && (a >= 1e6 || a < 1e-3)) return v.toExponential(3);
    return v.toLocaleString("en-US", {maximumFractionDigits: d === undefined ? (a >= 100 ? 1 : 4) : d});
  }
  function el(tag, text, cls) {
    var e = document.createElement(tag);
    if (text !== undefined && text !== null) e.textContent = String(text);
    if (cls) e.className = cls;
    return e;
  }
  function unitOf(name) { var u = D.input_units[name]; return u ? " [" + u + "]" : ""; }
  var obs = D.objectives;
  function mlabel(m) {
    var unit = m === "cost" ? " [" + D.cost_unit + "]" : "";
    for (var i = 0; i < obs.length; i++) if (obs[i][0] === m) return obs[i][2] + unit + " (" + obs[i][1] + ")";
    return m + unit;
  }
  // header text
  document.getElementById("title").textContent = D.title;
  document.getElementById("vehicle").textContent = D.vehicle ? "vehicle: " + D.vehicle : "";
  document.getElementById("description").textContent = D.description ? (D.vehicle ? " | " : "") + D.description : "";
  var counts = {};
  D.cases.forEach(function (c) { counts[c.status] = (counts[c.status] || 0) + 1; });
  var facts = document.getElementById("facts");
  [["cases in study", D.total], ["stored", D.cases.length], ["feasible", counts.ok || 0],
   ["infeasible", counts.infeasible || 0], ["rejected by constraints", counts.rejected || 0],
   ["errors", counts.error || 0], ["crashed", counts.crashed || 0],
   ["on Pareto front", D.cases.filter(function (c) { return c.rank === 0; }).length]
  ].forEach(function (kv) {
    var s = el("span", kv[0] + ": "); s.appendChild(el("b", kv[1])); facts.appendChild(s);
  });
  document.getElementById("objectives").textContent =
    "objectives: " + obs.map(function (o) { return o[2] + " (" + o[1] + ")"; }).join(", ") +
    (D.constraints.length ? "; constraints: " + D.constraints.join(", ") : "");

  var feas = D.cases.filter(function (c) { return c.status === "ok"; });
  var front = feas.filter(function (c) { return c.rank === 0; });
  var m0 = obs[0][0];
  front.sort(function (a, b) { return (a.metrics[m0] - b.metrics[m0]) * (obs[0][1] === "min" ? 1 : -1); });
  var xm = obs[0][0];
  var ym = obs.length > 1 ? obs[1][0] : (xm === "gross_mass_kg" ? "dry_mass_kg" : "gross_mass_kg");
  var cm = obs.length > 2 ? obs[2][0] : null;
  function hover(c) {
    var lines = ["<b>case " + c.case_id + "</b>"];
    D.input_names.forEach(function (k) {
      if (c.inputs[k] !== null && c.inputs[k] !== undefined)
        lines.push(esc(k + unitOf(k)) + ": " + esc(fmt(c.inputs[k])));
    });
    obs.forEach(function (o) { lines.push(esc(mlabel(o[0])) + ": " + esc(fmt(c.metrics[o[0]]))); });
    return lines.join("<br>");
  }
  var cfg = {displaylogo: false, responsive: true};
  var axisFont = {family: "DejaVu Sans, sans-serif", size: 12, color: "#1d2327"};
  // t: 44 keeps the plot toolbar (mode bar, top right) in the margin, clear of the data
  var base = {margin: {l: 70, r: 20, t: 44, b: 60}, paper_bgcolor: "#ffffff", plot_bgcolor: "#fbfaf6",
              font: axisFont, hoverlabel: {bgcolor: "#ffffff", bordercolor: "#186a73"}};

  // Pareto front
  var others = feas.filter(function (c) { return c.rank !== 0; });
  if (others.length > 5000) {  // keep the SVG plot light: every k-th non-front design
    var k = Math.ceil(others.length / 5000);
    others = others.filter(function (_, i) { return i % k === 0; });
  }
  var tr = [];
  tr.push({type: "scatter", mode: "markers", name: "other feasible designs",
           x: others.map(function (c) { return c.metrics[xm]; }),
           y: others.map(function (c) { return c.metrics[ym]; }),
           customdata: others.map(function (c) { return c.case_id; }),
           hovertext: others.map(hover), hoverinfo: "text",
           marker: {size: 5, color: "#b9b3a5", opacity: 0.7}});
  var fm = {size: 10, color: "#c8792a", line: {color: "#186a73", width: 1.5}, symbol: "diamond"};
  if (cm) { fm.color = front.map(function (c) { return c.metrics[cm]; }); fm.colorscale = "Cividis";
            fm.showscale = true; fm.colorbar = {title: {text: esc(mlabel(cm))}}; }
  tr.push({type: "scatter", mode: cm ? "markers" : "lines+markers", name: "Pareto front",
           x: front.map(function (c) { return c.metrics[xm]; }),
           y: front.map(function (c) { return c.metrics[ym]; }),
           customdata: front.map(function (c) { return c.case_id; }),
           hovertext: front.map(hover), hoverinfo: "text", marker: fm,
           line: {color: "#186a73", width: 1, shape: "hv"}});
  tr.push({type: "scatter", mode: "markers", name: "selected", x: [], y: [], hoverinfo: "skip",
           marker: {size: 20, color: "rgba(0,0,0,0)", line: {color: "#8a3b12", width: 3}}});
  var frontDiv = document.getElementById("plot-front");
  Plotly.newPlot(frontDiv, tr, Object.assign({}, base, {
    xaxis: {title: {text: esc(mlabel(xm))}, gridcolor: "#e6e1d6"},
    yaxis: {title: {text: esc(mlabel(ym))}, gridcolor: "#e6e1d6"},
    legend: {orientation: "h", y: -0.3}}), cfg);
  frontDiv.on("plotly_click", function (ev) {
    if (ev && ev.points && ev.points.length) select(ev.points[0].customdata);
  });

  // Pareto table
  var table = document.getElementById("pareto-table");
  var thead = table.createTHead().insertRow();
  var cols = ["case"].concat(D.input_names.map(function (k) { return k + unitOf(k); }),
                             obs.map(function (o) { return mlabel(o[0]); }));
  cols.forEach(function (h) { thead.appendChild(el("th", h)); });
  var tbody = table.createTBody();
  front.forEach(function (c) {
    var r = tbody.insertRow();
    r.dataset.caseId = String(c.case_id);
    r.appendChild(el("td", c.case_id));
    D.input_names.forEach(function (k) { r.appendChild(el("td", fmt(c.inputs[k]))); });
    obs.forEach(function (o) { r.appendChild(el("td", fmt(c.metrics[o[0]]))); });
    r.addEventListener("click", function () { select(c.case_id); });
  });

  // stacked stage masses of the Pareto designs
  var stageNames = [];
  front.forEach(function (c) {
    var d = D.designs[String(c.case_id)];
    (d ? d.stages : []).forEach(function (s) { if (stageNames.indexOf(s.name) < 0) stageNames.push(s.name); });
  });
  var palette = ["#186a73", "#c8792a", "#6b8f3a", "#7a4e8c", "#b23b3b", "#3b6fb2"];
  var labels = front.map(function (c) { return "case " + c.case_id; });
  var bars = [];
  stageNames.forEach(function (n, i) {
    bars.push({type: "bar", name: esc(n) + " propellant",
      x: labels, y: front.map(function (c) { var d = D.designs[String(c.case_id)]; var s = d && d.stages.filter(function (q) { return q.name === n; })[0]; return s ? s.propellant_mass_kg : 0; }),
      marker: {color: palette[i % palette.length]}, hovertemplate: "%{y:,.1f} kg<extra>" + esc(n) + " propellant</extra>"});
    bars.push({type: "bar", name: esc(n) + " structure",
      x: labels, y: front.map(function (c) { var d = D.designs[String(c.case_id)]; var s = d && d.stages.filter(function (q) { return q.name === n; })[0]; return s ? s.structural_mass_kg : 0; }),
      // hatched on white, so its legend swatch differs from the solid propellant swatch
      marker: {color: "#ffffff", line: {color: palette[i % palette.length], width: 1.2},
               pattern: {shape: "/", fgcolor: palette[i % palette.length], bgcolor: "#ffffff",
                         size: 7, solidity: 0.35}},
      hovertemplate: "%{y:,.1f} kg<extra>" + esc(n) + " structure</extra>"});
  });
  bars.push({type: "bar", name: "payload", x: labels,
    y: front.map(function (c) { var d = D.designs[String(c.case_id)]; return d ? d.payload_mass_kg : 0; }),
    marker: {color: "#2b2b2b"}, hovertemplate: "%{y:,.1f} kg<extra>payload</extra>"});
  var stackDiv = document.getElementById("plot-stack");
  var tallest = 0;
  front.forEach(function (c) { var d = D.designs[String(c.case_id)]; if (d && d.gross_mass_kg > tallest) tallest = d.gross_mass_kg; });
  Plotly.newPlot(stackDiv, bars, Object.assign({}, base, {barmode: "stack",
    // 12 % headroom above the tallest bar: the toolbar never covers it
    yaxis: {title: {text: "mass [kg]"}, gridcolor: "#e6e1d6", range: tallest > 0 ? [0, 1.12 * tallest] : undefined},
    legend: {orientation: "h", y: -0.25, traceorder: "normal"}}), cfg);
  stackDiv.on("plotly_click", function (ev) {
    if (ev && ev.points && ev.points.length) select(front[ev.points[0].pointIndex].case_id);
  });

  // parallel coordinates over every feasible case
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
      var lo = seen[0], hi = seen[seen.length - 1];
      dim.tickvals = []; for (var t = lo; t <= hi; t++) dim.tickvals.push(t);
      dim.ticktext = dim.tickvals.map(String);
      if (lo === hi) dim.range = [lo - 1, hi + 1];
    }
    return dim;
  }
  function hasWebGL() {
    try {
      var cv = document.createElement("canvas");
      return !!(window.WebGLRenderingContext && (cv.getContext("webgl") || cv.getContext("experimental-webgl")));
    } catch (e) { return false; }
  }
  function drawStaticParcoords(div, dims, cases) {  // SVG lines, for browsers without WebGL
    var n = dims.length, spans = dims.map(function (d) {
      var v = d.values.filter(function (x) { return x !== null && !isNaN(x); });
      var lo = d.range ? d.range[0] : Math.min.apply(null, v.concat(d.tickvals || []));
      var hi = d.range ? d.range[1] : Math.max.apply(null, v.concat(d.tickvals || []));
      if (!(hi > lo)) { lo -= 1; hi += 1; }
      return [lo, hi];
    });
    function lines(pick) {
      var x = [], y = [];
      cases.forEach(function (c, i) {
        if (pick(c)) {
          dims.forEach(function (d, j) {
            var v = d.values[i];
            x.push(j); y.push(v === null || isNaN(v) ? null : (v - spans[j][0]) / (spans[j][1] - spans[j][0]));
          });
          x.push(null); y.push(null);
        }
      });
      return {x: x, y: y};
    }
    var rest = lines(function (c) { return c.rank !== 0; }), best = lines(function (c) { return c.rank === 0; });
    var ann = [], shapes = [];
    dims.forEach(function (d, j) {
      shapes.push({type: "line", x0: j, x1: j, y0: 0, y1: 1, line: {color: "#5b6770", width: 1}});
      ann.push({x: j, y: j % 2 ? 1.15 : 1.07, text: d.label, showarrow: false, font: {size: 11}});
      var v = d.values.filter(function (x) { return x !== null && !isNaN(x); });
      var vlo = Math.min.apply(null, v), vhi = Math.max.apply(null, v);
      var ticks = d.tickvals ? d.tickvals.map(function (t, q) { return [t, d.ticktext ? d.ticktext[q] : fmt(t)]; })
                : vlo === vhi ? [[vlo, fmt(vlo)]]
                : [[spans[j][0], fmt(spans[j][0])], [spans[j][1], fmt(spans[j][1])]];
      ticks.forEach(function (t) {
        ann.push({x: j, y: (t[0] - spans[j][0]) / (spans[j][1] - spans[j][0]), text: t[1], showarrow: false,
                  xanchor: "right", xshift: -4, font: {size: 10, color: "#5b6770"}});
      });
    });
    Plotly.newPlot(div, [
      {type: "scatter", mode: "lines", name: "other feasible designs", x: rest.x, y: rest.y,
       line: {color: "#cfc8b8", width: 1}, hoverinfo: "skip", connectgaps: false},
      {type: "scatter", mode: "lines", name: "Pareto designs", x: best.x, y: best.y,
       line: {color: "#c8792a", width: 2}, hoverinfo: "skip", connectgaps: false}],
      Object.assign({}, base, {margin: {l: 80, r: 40, t: 60, b: 30}, showlegend: false,
        xaxis: {visible: false, range: [-0.5, n - 0.5]}, yaxis: {visible: false, range: [-0.05, 1.2]},
        annotations: ann, shapes: shapes}), cfg);
  }
  var dims = [];
  var sample = feas.length > 4000 ? feas.filter(function (_, i) { return i % Math.ceil(feas.length / 4000) === 0; }) : feas;
  D.input_names.forEach(function (k) {
    var vals = sample.map(function (c) { return c.inputs[k]; });
    var numeric = vals.every(function (v) { return v === null || typeof v === "number"; });
    if (numeric) {
      var nums = vals.map(function (v) { return v === null ? NaN : v; });
      if (nums.some(function (v) { return !isNaN(v); }))
        dims.push(intTicks({label: esc(k + unitOf(k)), values: nums}));
    } else {
      var cats = [];
      vals.forEach(function (v) { var s = v === null ? "n/a" : String(v); if (cats.indexOf(s) < 0) cats.push(s); });
      dims.push({label: esc(k), values: vals.map(function (v) { return cats.indexOf(v === null ? "n/a" : String(v)); }),
                 tickvals: cats.map(function (_, i) { return i; }), ticktext: cats.map(esc)});
    }
  });
  obs.forEach(function (o) { dims.push(intTicks({label: esc(mlabel(o[0])), values: sample.map(function (c) { return c.metrics[o[0]]; })})); });
  var pcDiv = document.getElementById("plot-parcoords");
  var thinned = sample.length < feas.length ? "Every " + Math.ceil(feas.length / 4000) + "th feasible case shown. " : "";
  if (hasWebGL()) {
    Plotly.newPlot(pcDiv, [{type: "parcoords", dimensions: dims,
      line: {color: sample.map(function (c) { return c.rank === 0 ? 1 : 0; }),
             colorscale: [[0, "#cfc8b8"], [1, "#c8792a"]], cmin: 0, cmax: 1}}],
      Object.assign({}, base, {margin: {l: 80, r: 80, t: 60, b: 30}}), cfg);
    document.getElementById("parcoords-note").textContent =
      "Orange lines: Pareto designs. " + thinned + "Drag along an axis to filter.";
    document.body.dataset.parcoords = "webgl";
  } else {
    drawStaticParcoords(pcDiv, dims, sample);
    document.getElementById("parcoords-note").textContent =
      "Orange lines: Pareto designs. " + thinned + "This browser has no WebGL, so the view is " +
      "drawn as a static chart without axis filtering; cases.csv holds every value.";
    document.body.dataset.parcoords = "svg";
  }

  // selected design
  var budgetDiv = document.getElementById("plot-budget");
  var picked = null;
  function select(id) {
    var c = null;
    for (var i = 0; i < front.length; i++) if (front[i].case_id === id) c = front[i];
    if (!c) return;
    picked = id;
    Array.prototype.forEach.call(tbody.rows, function (r) {
      r.classList.toggle("picked", r.dataset.caseId === String(id));
    });
    Plotly.restyle(frontDiv, {x: [[c.metrics[xm]]], y: [[c.metrics[ym]]]}, [2]);
    var d = D.designs[String(id)] || {stages: [], losses_m_s: {}};
    document.getElementById("selected-title").textContent = "case " + id + ": " +
      obs.map(function (o) { return mlabel(o[0]) + " " + fmt(c.metrics[o[0]]); }).join(", ");
    var st = document.getElementById("stage-table");
    st.textContent = "";
    var h = st.createTHead().insertRow();
    ["stage", "ignition mass [kg]", "propellant mass [kg]", "structural mass [kg]", "mass ratio [-]",
     "delta-v [m/s]", "delta-v share [%]", "Isp [s]", "structural coeff. [-]"].forEach(function (t) { h.appendChild(el("th", t)); });
    var b = st.createTBody();
    d.stages.forEach(function (s) {
      var r = b.insertRow();
      [s.name, fmt(s.ignition_mass_kg, 1), fmt(s.propellant_mass_kg, 1), fmt(s.structural_mass_kg, 1),
       fmt(s.mass_ratio, 4), fmt(s.delta_v_m_s, 1), fmt(s.delta_v_share === null || s.delta_v_share === undefined ? null : 100 * s.delta_v_share, 1),
       fmt(s.isp_s, 1), fmt(s.structural_coefficient, 4)].forEach(function (v) { r.appendChild(el("td", v)); });
    });
    var tot = b.insertRow();
    ["total (payload " + fmt(d.payload_mass_kg, 1) + " kg)", fmt(d.gross_mass_kg, 1), "", "", "",
     fmt(d.delta_v_m_s, 1), "100.0", "", ""].forEach(function (v) { tot.appendChild(el("td", v)); });
    var names = d.stages.map(function (s) { return esc(s.name) + " (ideal)"; });
    var vals = d.stages.map(function (s) { return s.delta_v_m_s; });
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
      hovertemplate: "%{x}: %{y:,.1f} m/s<extra></extra>"}],
      Object.assign({}, base, {yaxis: {title: {text: "delta-v [m/s]"}, gridcolor: "#e6e1d6"}, showlegend: false}), cfg);
    document.body.dataset.selected = String(id);
  }
  if (front.length) select(front[0].case_id);
  else document.getElementById("selected-title").textContent = "No feasible design: nothing to select.";
  document.body.dataset.ready = "1";
})();
"""


def render_study_report(data: StudyReportData) -> str:
    """The report as one HTML string (plotly.js inlined, no network needed)."""
    from plotly.offline import get_plotlyjs

    payload = {
        "title": data.title, "vehicle": data.vehicle, "description": data.description,
        "objectives": [list(o) for o in data.objectives], "constraints": list(data.constraints),
        "cost_unit": data.cost_unit, "input_names": list(data.input_names),
        "input_units": dict(data.input_units), "total": data.total, "cases": data.cases,
        "designs": {str(k): v for k, v in data.designs.items()},
    }
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
  <div class="facts" id="facts"></div>
</header>
<div class="caution" id="caution">{html.escape(CAUTION)} Study results are model estimates for
comparing designs; every design needs its own review before anything is built or flown.</div>
<main>
  <section><h2>Pareto front</h2><div id="plot-front" class="plot"></div>
    <div class="note">Hover a point for its inputs; click a point or a table row to select a design.</div></section>
  <section><h2>Pareto designs</h2><div class="scroll"><table id="pareto-table"></table></div></section>
  <section class="wide"><h2>Inputs and objectives of every feasible case</h2>
    <div id="plot-parcoords" class="plot"></div><div class="note" id="parcoords-note"></div></section>
  <section class="wide"><h2>Stage masses of the Pareto designs</h2><div id="plot-stack" class="plot"></div></section>
  <section><h2>Selected design: delta-v budget</h2><div class="note" id="selected-title"></div>
    <div id="plot-budget" class="plot"></div></section>
  <section><h2>Selected design: stage masses</h2><div class="scroll"><table id="stage-table"></table></div></section>
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
