"""Flight-safety tables and the side-view sketch of a hobby motor stack (reads results only).

From ``result.flight["hobby"]`` (written by `sizing.optimize.hobby_safety`):

* `stability_rows`, `ejection_rows`, `recovery_rows`: (title, header, rows)
  tables with the unit of every column in brackets, for the terminal,
  Markdown, CSV and XLSX outputs;
* `sketch_svg`: a plain side view of the stack to scale, stages outlined
  and named, fins drawn on both sides, each configuration's centre of
  gravity (filled circle) and centre of pressure (open circle with a cross)
  marked with its static margin; plain SVG, no script;
* `hobby_html`: a self-contained page with the sketch, the tables, the
  review notes and the caution.

User text (stage and motor names) is escaped before it enters SVG or HTML.
"""

from __future__ import annotations

import html
import math
from pathlib import Path
from typing import Any

__all__ = ["has_safety", "transposed", "stability_rows", "ejection_rows", "recovery_rows", "safety_tables", "sketch_svg",
           "hobby_html", "write_sketch"]


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
    return "Ejection timing (within 2 s of apogee counts as ok; common practice, no source)", header, rows


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
    wind = (_h(result).get("wind") or {}).get("description", "calm")
    return (f"Recovery (drag equation, quasi-steady descent; wind {wind}; ascent in calm air)", header, rows)


def transposed(table: tuple[str, list[str], list[list[str]]], *, key_columns: int = 1):
    """The same table with one row per quantity and one column per item (for 80-column terminals)."""
    title, header, rows = table
    head = ["quantity [unit]"] + [" ".join(r[:key_columns]) for r in rows]
    return title, head, [[header[j]] + [r[j] for r in rows] for j in range(key_columns, len(header))]


def safety_tables(result, numeric: bool = False) -> list[tuple[str, list[str], list[list[Any]]]]:
    """The non-empty safety tables, in print order (`numeric`: numbers for CSV and XLSX)."""
    tables = (stability_rows(result, numeric), ejection_rows(result, numeric), recovery_rows(result, numeric))
    return [t for t in tables if t[2]]


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
