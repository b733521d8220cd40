"""Flight-safety tables and the side-view sketch of a hobby motor stack (reads results only).

From ``result.flight["hobby"]`` (written by `sizing.optimize.hobby_safety`):

* `stability_rows`, `ascent_rows` (with a wind: calm air, the stated wind and
  its zero-lift limit), `ejection_rows`, `recovery_rows`: (title, header,
  rows) tables with the unit of every column in brackets, for the terminal,
  Markdown, CSV and XLSX outputs (`SAFETY_SHEETS` names their XLSX sheets);
* `sketch_svg`: a plain side view of the stack to scale, stages outlined
  and named, fins drawn on both sides, each configuration's centre of
  gravity (filled circle) and centre of pressure (open circle with a cross)
  marked with its static margin; plain SVG, no script;
* `ground_plan_svg`: a plan view of the pad, the apogee points of the
  ascents and the landing points, with the wind arrow (with a wind);
* `hobby_html`: a self-contained page with the sketch, the plan, the
  tables, the review notes and the caution.

User text (stage and motor names) is escaped before it enters SVG or HTML.
"""

from __future__ import annotations

import html
import math
from pathlib import Path
from typing import Any

__all__ = ["has_safety", "transposed", "stability_rows", "ascent_rows", "ejection_rows", "recovery_rows",
           "SAFETY_SHEETS", "safety_tables", "safety_sheet_names", "sketch_svg", "ground_plan_svg", "hobby_html",
           "write_sketch"]

#: XLSX sheet name of each safety table, by the table function.
SAFETY_SHEETS = {"stability": "stability", "ascent": "ascent in wind", "ejection": "ejection timing",
                 "recovery": "recovery"}


def _h(result) -> dict[str, Any]:
    return ((result.flight or {}).get("hobby") or {})


def has_safety(result) -> bool:
    """True when the result carries the stability analysis (a problem with stage geometry)."""
    return "stability" in _h(result)


def _f(v: Any, spec: str, numeric: bool = False):
    """Text for the terminal and Markdown; with `numeric`, the number itself (None when missing) for CSV/XLSX."""
    if v is None or (isinstance(v, float) and not math.isfinite(v)):
        return None if numeric else "n/a"
    return float(v) if numeric else format(v, spec)


def stability_rows(result, numeric: bool = False) -> tuple[str, list[str], list[list[Any]]]:
    """Static margin through the flight: one row per configuration and event (`numeric`: numbers, not text)."""
    st = _h(result).get("stability")
    if not st:
        return "", [], []
    header = ["configuration", "event", "time [s]", "Mach [-]", "mass [g]", "CG from tip [mm]",
              "CP from tip [mm]", "C_N_alpha [1/rad]", "static margin [cal]"]
    n = numeric
    rows = [[p["configuration"], p["event"], _f(p["time_s"], ".2f", n), _f(p["mach"], ".2f", n),
             _f(p["mass_kg"] * 1e3, ",.0f", n), _f(p["cg_m"] * 1e3, ",.0f", n), _f(p["cp_m"] * 1e3, ",.0f", n),
             _f(p["cn_alpha_per_rad"], ".2f", n),
             _f(p["static_margin_cal"], ".2f", n) if n else
             _f(p["static_margin_cal"], ".2f") + ("*" if p["mach_beyond_method"] else "")] for p in st["phases"]]
    if numeric:
        header = header + ["CP held at Mach 0.8 [-]"]
        rows = [r + ["yes" if p["mach_beyond_method"] else "no"] for r, p in zip(rows, st["phases"])]
    title = (f"Static stability (Barrowman 1967; minimum {st['min_static_margin_cal']:g} cal at rail exit and "
             "upper-stage ignition, common practice, no source; * Mach above 0.8, CP held at Mach 0.8)")
    return title, header, rows


def ascent_rows(result, numeric: bool = False) -> tuple[str, list[str], list[list[Any]]]:
    """The ascent in calm air, in the stated wind and in its zero-lift limit (empty without a wind)."""
    w = _h(result).get("wind") or {}
    flights = w.get("flights")
    if not flights:
        return "", [], []
    header = ["flight", "apogee above site [m]", "change vs calm air [m]", "time to apogee [s]",
              "apogee east of pad [m]", "apogee north of pad [m]", "apogee from pad [m]", "bearing [deg]",
              "apogee moved towards the wind's source [m]", "tilt at first burnout [deg]",
              "heading at first burnout [deg]", "max angle of attack, powered [deg]"]
    n = numeric
    rows = [[f["flight"], _f(f["apogee_m"], ",.0f", n), _f(f["apogee_change_m"], "+,.0f", n),
             _f(f["time_to_apogee_s"], ".1f", n), _f(f["apogee_east_m"], ",.0f", n),
             _f(f["apogee_north_m"], ",.0f", n), _f(f["apogee_distance_m"], ",.0f", n),
             _f(f["apogee_bearing_deg"], ".0f", n), _f(f["apogee_shift_upwind_m"], "+,.0f", n),
             _f(f["burnout_tilt_deg"], ".1f", n), _f(f["burnout_heading_deg"], ".0f", n),
             _f(f["max_angle_of_attack_deg"], ".1f", n)] for f in flights]
    title = (f"Ascent in wind ({w['description']}; rail-exit angle of attack "
             f"{w['rail_exit_angle_of_attack_deg']:.1f} deg; body axis turned by the airframe's restoring and "
             "damping moments; zero-lift limit: aligns with the relative wind at once)")
    return title, header, rows


def ejection_rows(result, numeric: bool = False) -> tuple[str, list[str], list[list[Any]]]:
    """Each motor's ejection delay against the coast to apogee (`numeric`: numbers, not text)."""
    ej = _h(result).get("ejection")
    if not ej:
        return "", [], []
    header = ["stage", "motor", "delay [s]", "coast to apogee [s]", "fires vs apogee [s]",
              "speed at deployment [m/s]", "verdict", "recommended delay [s]"]
    n = numeric
    rows = [[e["stage"] + (" (separated)" if e["separated"] else ""), e["motor"], _f(e["delay_s"], "g", n),
             _f(e["coast_to_apogee_s"], ".1f", n), _f(e["deploy_offset_s"], "+.1f", n),
             _f(e["speed_at_deploy_m_s"], ".0f", n), e["verdict"], _f(e["recommended_delay_s"], "g", n)] for e in ej]
    where = "flight in the stated wind; " if (_h(result).get("wind") or {}).get("flights") else ""
    return f"Ejection timing ({where}within 2 s of apogee counts as ok; common practice, no source)", header, rows


def recovery_rows(result, numeric: bool = False) -> tuple[str, list[str], list[list[Any]]]:
    """Canopy sizes, descent time, drift and landing point of each stage (`numeric`: numbers, not text)."""
    rec = _h(result).get("recovery")
    if not rec:
        return "", [], []
    header = ["stage", "device", "descending mass [g]", "size [mm]", "C_D [-]", "target rate [m/s]",
              "from height [m]", "descent time [s]", "landing rate [m/s]", "drift [m]", "lands from pad [m]",
              "bearing [deg]"]
    rows = []
    for r in rec:
        sizes = []
        for c in r["canopies"]:
            if c["kind"] == "streamer":
                sizes.append(f"{c['length_m'] * 1e3:,.0f} x {c['width_m'] * 1e3:,.0f}")
            else:
                sizes.append(f"{c['role'] + ' ' if r['device'] == 'dual' else ''}dia. {c['diameter_m'] * 1e3:,.0f}")
        n = numeric
        rows.append([r["stage"], r["device"] + ("" if r["described"] else " (assumed)"),
                     _f(r["mass_kg"] * 1e3, ",.0f", n), "; ".join(sizes),
                     " / ".join(f"{c['cd']:g}" for c in r["canopies"]),
                     " / ".join(f"{c['target_rate_m_s']:g}" for c in r["canopies"]),
                     _f(r["deploy_height_m"], ",.0f", n),
                     _f(r["descent_time_s"], ".0f", n), _f(r["landing_rate_m_s"], ".1f", n),
                     _f(r["drift_m"], ",.0f", n), _f(r["landing_distance_m"], ",.0f", n),
                     _f(r["landing_bearing_deg"], ".0f", n)])
    w = _h(result).get("wind") or {}
    ascent = "from the apogee flown in the stated wind" if w.get("flights") else "ascent in calm air"
    return (f"Recovery (drag equation, quasi-steady descent; wind {w.get('description', 'calm')}; {ascent})",
            header, rows)


def transposed(table: tuple[str, list[str], list[list[str]]], *, key_columns: int = 1):
    """The same table with one row per quantity and one column per item (for 80-column terminals)."""
    title, header, rows = table
    head = ["quantity [unit]"] + [" ".join(r[:key_columns]) for r in rows]
    return title, head, [[header[j]] + [r[j] for r in rows] for j in range(key_columns, len(header))]


_TABLES = (("stability", stability_rows), ("ascent", ascent_rows), ("ejection", ejection_rows),
           ("recovery", recovery_rows))


def safety_tables(result, numeric: bool = False) -> list[tuple[str, list[str], list[list[Any]]]]:
    """The non-empty safety tables, in print order (`numeric`: numbers for CSV and XLSX)."""
    tables = (fn(result, numeric) for _k, fn in _TABLES)
    return [t for t in tables if t[2]]


def safety_sheet_names(result) -> list[str]:
    """XLSX sheet names of `safety_tables(result)`, in the same order."""
    return [SAFETY_SHEETS[k] for k, fn in _TABLES if fn(result)[2]]


# ---------------------------------------------------------------- sketch
def sketch_svg(result, *, width_px: int = 900, caution: str | None = None) -> str:
    """Side view of the stack to scale with CG and CP marks (plain SVG); empty without geometry."""
    st = _h(result).get("stability")
    if not st:
        return ""
    sk = st["sketch"]
    length = sk["length_m"]
    r_max = max(abs(p[1]) for s in sk["stages"] for p in s["outline"])
    r_fin = max([max(q[1] for q in s["fins"]) for s in sk["stages"] if s["fins"]] or [r_max])
    margin = 40.0
    scale = (width_px - 2 * margin) / length
    half = max(r_fin, r_max) * scale
    axis_y = margin + half + 10
    n_marks = len(sk["marks"])
    height = int(axis_y + half + 40 + 44 * n_marks + (18 if caution else 0))

    def X(x):
        return margin + x * scale

    def Y(r):
        return axis_y - r * scale

    out = [f'<svg xmlns="http://www.w3.org/2000/svg" width="{width_px}" height="{height}" '
           f'viewBox="0 0 {width_px} {height}" font-family="sans-serif" font-size="12">',
           f'<rect width="{width_px}" height="{height}" fill="white"/>',
           f'<line x1="{X(0) - 10:.1f}" y1="{axis_y:.1f}" x2="{X(length) + 10:.1f}" y2="{axis_y:.1f}" '
           'stroke="#999" stroke-dasharray="4 3"/>']
    shades = ("#f2f2f2", "#dcdcdc")
    for k, s in enumerate(reversed(sk["stages"])):  # nose first
        top = " ".join(f"{X(x):.1f},{Y(r):.1f}" for x, r in s["outline"])
        bottom = " ".join(f"{X(x):.1f},{Y(-r):.1f}" for x, r in reversed(s["outline"]))
        out.append(f'<polygon points="{top} {bottom}" fill="{shades[k % 2]}" stroke="black" stroke-width="1"/>')
        if s["fins"]:
            for sign in (1, -1):
                pts = " ".join(f"{X(x):.1f},{Y(sign * r):.1f}" for x, r in s["fins"])
                out.append(f'<polygon points="{pts}" fill="{shades[k % 2]}" stroke="black" stroke-width="1"/>')
        xm = X(s["x_fore_m"] + 0.5 * s["length_m"])
        out.append(f'<text x="{xm:.1f}" y="{axis_y + half + 18:.1f}" text-anchor="middle">'
                   f'{html.escape(s["stage"])}</text>')
        if k:
            xs = X(s["x_fore_m"])
            out.append(f'<line x1="{xs:.1f}" y1="{Y(half / scale):.1f}" x2="{xs:.1f}" y2="{Y(-half / scale):.1f}" '
                       'stroke="black" stroke-dasharray="2 2"/>')
    y0 = axis_y + half + 40
    for j, m in enumerate(sk["marks"]):
        yy = y0 + 44 * j
        xg, xp = X(m["cg_m"]), X(m["cp_m"])
        out += [f'<line x1="{xg:.1f}" y1="{axis_y:.1f}" x2="{xg:.1f}" y2="{yy:.1f}" stroke="#555" stroke-width="0.6"/>',
                f'<line x1="{xp:.1f}" y1="{axis_y:.1f}" x2="{xp:.1f}" y2="{yy:.1f}" stroke="#555" stroke-width="0.6"/>',
                f'<circle cx="{xg:.1f}" cy="{yy:.1f}" r="5" fill="black"/>',
                f'<circle cx="{xp:.1f}" cy="{yy:.1f}" r="5" fill="white" stroke="black"/>',
                f'<line x1="{xp - 5:.1f}" y1="{yy:.1f}" x2="{xp + 5:.1f}" y2="{yy:.1f}" stroke="black"/>',
                f'<line x1="{xp:.1f}" y1="{yy - 5:.1f}" x2="{xp:.1f}" y2="{yy + 5:.1f}" stroke="black"/>',
                f'<text x="{margin:.1f}" y="{yy + 20:.1f}">'
                f'{html.escape(m["configuration"])} at {html.escape(m["event"])}: CG {m["cg_m"] * 1e3:,.0f} mm, '
                f'CP {m["cp_m"] * 1e3:,.0f} mm, margin {m["static_margin_cal"]:.2f} cal</text>']
    if caution:
        out.append(f'<text x="{margin:.1f}" y="{height - 8}" font-size="10">{html.escape(caution)}</text>')
    out.append(f'<text x="{margin:.1f}" y="{height - 8 - (18 if caution else 0)}">filled circle: centre of gravity; open circle with cross: '
               f'centre of pressure; distances from the nose tip; to scale ({length * 1e3:,.0f} mm overall)</text>')
    out.append("</svg>")
    return "\n".join(out)


def _nice_step(span: float) -> float:
    """A round scale-bar length (1, 2 or 5 times a power of ten) near a fifth of `span`."""
    raw = max(span, 1e-9) / 5.0
    p = 10.0 ** math.floor(math.log10(raw))
    return next(k * p for k in (1.0, 2.0, 5.0, 10.0) if k * p >= raw)


def ground_plan_svg(result, *, size_px: int = 600) -> str:
    """Plan view (north up, east right, to scale) of the pad, the apogee points and the landing points.

    Apogee of each ascent of the wind comparison (open circle: calm air;
    filled: the stated wind; cross: its zero-lift limit), each stage's landing
    point (square), a thin line from the apex of each descent to its landing
    point, the surface wind as an arrow and a scale bar. Empty without a wind
    or a recovery table.
    """
    h = _h(result)
    w = h.get("wind") or {}
    flights = w.get("flights") or []
    rec = h.get("recovery") or []
    if not flights or not rec:
        return ""
    pts = [(0.0, 0.0)] + [(f["apogee_east_m"], f["apogee_north_m"]) for f in flights]
    pts += [(r["landing_east_m"], r["landing_north_m"]) for r in rec] + [(r["apex_east_m"], r["apex_north_m"])
                                                                        for r in rec if "apex_east_m" in r]
    pts = [(e, n) for e, n in pts if math.isfinite(e) and math.isfinite(n)]
    e0, e1 = min(p[0] for p in pts), max(p[0] for p in pts)
    n0, n1 = min(p[1] for p in pts), max(p[1] for p in pts)
    span = max(e1 - e0, n1 - n0, 50.0)
    pad = 70.0
    scale = (size_px - 2 * pad) / span
    ec, nc = 0.5 * (e0 + e1), 0.5 * (n0 + n1)

    def X(e):
        return size_px / 2 + (e - ec) * scale

    def Y(n):
        return size_px / 2 - (n - nc) * scale

    def label(x, y, text):  # beside a marker, on the side facing the middle
        right = x <= size_px / 2
        return (f'<text x="{x + (8 if right else -8):.1f}" y="{y + 4:.1f}" '
                f'text-anchor="{"start" if right else "end"}">{html.escape(text)}</text>')

    out = [f'<svg xmlns="http://www.w3.org/2000/svg" width="{size_px}" height="{size_px + 44}" '
           f'viewBox="0 0 {size_px} {size_px + 44}" font-family="sans-serif" font-size="11">',
           f'<rect width="{size_px}" height="{size_px + 44}" fill="white" stroke="#bbb"/>',
           f'<text x="{size_px - 22}" y="20">N</text>',
           f'<line x1="{size_px - 18}" y1="48" x2="{size_px - 18}" y2="26" stroke="black" marker-end="url(#tip)"/>',
           '<defs><marker id="tip" markerWidth="8" markerHeight="8" refX="4" refY="4" orient="auto">'
           '<path d="M0,0 L8,4 L0,8 z" fill="black"/></marker></defs>']
    x, y = X(0.0), Y(0.0)
    out.append(f'<polygon points="{x:.1f},{y - 7:.1f} {x - 6:.1f},{y + 5:.1f} {x + 6:.1f},{y + 5:.1f}" '
               'fill="black"/>')
    out.append(label(x, y, "pad"))
    for r in rec:
        if "apex_east_m" in r:
            out.append(f'<line x1="{X(r["apex_east_m"]):.1f}" y1="{Y(r["apex_north_m"]):.1f}" '
                       f'x2="{X(r["landing_east_m"]):.1f}" y2="{Y(r["landing_north_m"]):.1f}" stroke="#777" '
                       'stroke-dasharray="3 2"/>')
        xl, yl = X(r["landing_east_m"]), Y(r["landing_north_m"])
        out.append(f'<rect x="{xl - 4:.1f}" y="{yl - 4:.1f}" width="8" height="8" fill="#999" stroke="black"/>')
        out.append(label(xl, yl, f'{r["stage"]} lands {r["landing_distance_m"]:,.0f} m from the pad'))
    for k, f in enumerate(flights):
        xa, ya = X(f["apogee_east_m"]), Y(f["apogee_north_m"])
        if k == 0:
            out.append(f'<circle cx="{xa:.1f}" cy="{ya:.1f}" r="5" fill="white" stroke="black"/>')
        elif k == 1:
            out.append(f'<circle cx="{xa:.1f}" cy="{ya:.1f}" r="5" fill="black"/>')
        else:
            out += [f'<line x1="{xa - 5:.1f}" y1="{ya - 5:.1f}" x2="{xa + 5:.1f}" y2="{ya + 5:.1f}" stroke="black"/>',
                    f'<line x1="{xa - 5:.1f}" y1="{ya + 5:.1f}" x2="{xa + 5:.1f}" y2="{ya - 5:.1f}" stroke="black"/>']
        out.append(label(xa, ya, ("calm", "wind", "zero-lift")[min(k, 2)]))
    # wind arrow: where the air goes, from the first flight's upwind direction
    up_e, up_n = _upwind_unit(result)
    if up_e or up_n:
        x0, y0 = 30.0, size_px - 30.0
        out.append(f'<line x1="{x0 + 22 * up_e:.1f}" y1="{y0 - 22 * up_n:.1f}" x2="{x0 - 22 * up_e:.1f}" '
                   f'y2="{y0 + 22 * up_n:.1f}" stroke="black" stroke-width="2" marker-end="url(#tip)"/>')
        out.append(f'<text x="{x0 + 30:.1f}" y="{y0 + 4:.1f}">wind near the ground</text>')
    step = _nice_step(span)
    out += [f'<line x1="{pad:.1f}" y1="{size_px - 8:.1f}" x2="{pad + step * scale:.1f}" y2="{size_px - 8:.1f}" '
            'stroke="black" stroke-width="2"/>',
            f'<text x="{pad + step * scale + 6:.1f}" y="{size_px - 4:.1f}">{step:,.0f} m</text>',
            f'<text x="8" y="{size_px + 18}">plan view, north up, to scale. Triangle: pad. Apogee: open circle in '
            'calm air, filled circle in the stated wind,</text>',
            f'<text x="8" y="{size_px + 34}">cross in its zero-lift limit. Squares: landing points, dashed from '
            'the apex of each descent.</text>', "</svg>"]
    return "\n".join(out)


def _upwind_unit(result) -> tuple[float, float]:
    """Unit (east, north) towards where the wind comes from near the ground (from the description's data)."""
    w = _h(result).get("wind") or {}
    d = w.get("surface_from_deg")
    if d is None:
        return 0.0, 0.0
    a = math.radians(d)
    return math.sin(a), math.cos(a)


def _table_html(title: str, header: list[str], rows: list[list[str]]) -> str:
    th = "".join(f"<th>{html.escape(h)}</th>" for h in header)
    body = "".join("<tr>" + "".join(f"<td>{html.escape(str(c))}</td>" for c in r) + "</tr>" for r in rows)
    return f"<h2>{html.escape(title)}</h2>\n<table><thead><tr>{th}</tr></thead><tbody>{body}</tbody></table>"


def hobby_html(result, *, tables: list[tuple[str, list[str], list[list[str]]]] | None = None,
               caution: str) -> str:
    """A self-contained HTML page: sketch, the given tables (default: the safety tables), notes, caution."""
    parts = [f"<h1>{html.escape(result.problem_name)}</h1>", f"<p>{html.escape(result.message)}</p>"]
    svg = sketch_svg(result)
    if svg:
        parts.append("<h2>Side view</h2>\n" + svg)
    plan = ground_plan_svg(result)
    if plan:
        parts.append("<h2>Plan view: apogee and landing points</h2>\n" + plan)
    for t in (tables if tables is not None else safety_tables(result)):
        parts.append(_table_html(*t))
    notes = [w for w in result.warnings if w != caution]
    if notes:
        parts.append("<h2>Review notes</h2><ul>" + "".join(f"<li>{html.escape(n)}</li>" for n in notes) + "</ul>")
    parts.append(f'<p class="caution"><strong>Caution:</strong> {html.escape(caution)}</p>')
    style = ("body{font-family:sans-serif;margin:2em;max-width:1000px}table{border-collapse:collapse;margin-bottom:1em}"
             "td,th{border:1px solid #bbb;padding:3px 8px;text-align:right}td:first-child,th:first-child"
             "{text-align:left}.caution{border:2px solid black;padding:0.6em}")
    return (f'<!DOCTYPE html>\n<html lang="en"><head><meta charset="utf-8"><title>{html.escape(result.problem_name)}'
            f"</title><style>{style}</style></head><body>\n" + "\n".join(parts) + "\n</body></html>\n")


def write_sketch(result, path: str | Path, *, caution: str,
                 tables: list[tuple[str, list[str], list[list[str]]]] | None = None) -> Path:
    """Write the sketch: ``.svg`` (the drawing alone) or ``.html`` (page with tables and the caution)."""
    p = Path(path)
    if p.suffix.lower() == ".svg":
        p.write_text(sketch_svg(result, caution=caution) + "\n", encoding="utf-8")
    else:
        p.write_text(hobby_html(result, tables=tables, caution=caution), encoding="utf-8")
    return p
