"""What a study's HTML report shows, chosen from the store with bounded size at any study size.

The report embeds the whole Pareto front, the front of every pair of
objectives (three objectives), the knee design and a thinned cloud of the
other feasible cases, not every case: a million-case study gives a page of a
few megabytes that a browser opens in seconds. The thinning is spatial (one
case per cell of a grid over the objectives, the one nearest the front in
rank), so the cloud keeps its outline and density contrast without sending
every point; the page says how many cases it shows. cases.csv holds them all.
"""

from __future__ import annotations

import itertools
import math
from typing import Any

import numpy as np

from .labels import bound_text, describe, input_label_words, metric_label
from .pareto import pareto_mask, to_minimisation
from .results import StudyResults, input_converters

__all__ = ["report_data", "knee_index", "thin_cloud", "CLOUD_MAX", "fixed_inputs"]

#: Dominated feasible cases drawn at most (the rest are summarised by the grid thinning).
CLOUD_MAX = 4000


def knee_index(G: np.ndarray) -> int | None:
    """Index of the knee (compromise) design of a front, objectives minimised.

    Each objective is scaled to [0, 1] over the front (0 = best on the front);
    the knee is the design nearest, in Euclidean distance, to the ideal point
    where every scaled objective is 0 (the compromise solution of [1]; an
    objective constant over the front does not count).

    Parameters
    ----------
    G : ndarray, shape (n, k)
        Front members, every objective to be minimised.

    Returns
    -------
    int or None
        Row of the knee; None for an empty front.

    References
    ----------
    .. [1] M. Zeleny, "Compromise programming", in J. L. Cochrane and M. Zeleny (eds.),
       Multiple Criteria Decision Making, University of South Carolina Press, 1973,
       pp. 262-301 (distance to the ideal point; reference from memory).

    Examples
    --------
    >>> knee_index(np.array([[0.0, 10.0], [1.0, 1.0], [10.0, 0.0]]))
    1
    """
    if G.shape[0] == 0:
        return None
    lo, hi = G.min(axis=0), G.max(axis=0)
    span = np.where(hi > lo, hi - lo, 1.0)
    Z = (G - lo) / span
    return int(np.argmin(np.sqrt((Z ** 2).sum(axis=1))))


def thin_cloud(G: np.ndarray, ranks: np.ndarray, limit: int = CLOUD_MAX) -> np.ndarray:
    """Rows of a point cloud to draw: all when they are few, else one per occupied grid cell.

    The objectives are scaled to [0, 1] and cut into m cells each (m^k <= limit);
    in each occupied cell the case of lowest rank (nearest the front) is kept.

    Returns
    -------
    ndarray of int
        Row indices into G, ascending.
    """
    n, k = G.shape
    if n <= limit:
        return np.arange(n)
    m = max(2, int(math.floor(limit ** (1.0 / k))))
    lo, hi = G.min(axis=0), G.max(axis=0)
    span = np.where(hi > lo, hi - lo, 1.0)
    cell = np.clip(((G - lo) / span * m).astype(np.int64), 0, m - 1)
    key = np.zeros(n, dtype=np.int64)
    for j in range(k):
        key = key * m + cell[:, j]
    order = np.lexsort((np.arange(n), ranks, key))
    _, first = np.unique(key[order], return_index=True)
    return np.sort(order[first])


def fixed_inputs(res: StudyResults) -> list[str]:
    """Inputs that take one value in every case (a requirement fixed as a one-level axis, a
    single choice), as ``words: value unit``: the report states them instead of plotting
    a line along an axis with an invented range."""
    spec = res.study.spec
    units = res.input_units
    conv = input_converters(res.study)
    out = []
    for ax in spec.axis:
        name = ax.label or ax.field
        levels = ax.values if ax.values is not None else None
        if levels is None and ax.num == 1:
            levels = [ax.start]
        if levels is not None and len(levels) == 1:
            v = conv[name](levels[0])
            out.append(f"{input_label_words(name, '', res.study)}: {describe(v, units.get(name, ''))}")
    if spec.choices.stage_count is not None and len(spec.choices.stage_count) == 1:
        out.append(f"stage count: {spec.choices.stage_count[0]}")
    for st, opts in spec.choices.propellant.items():
        if len(opts) == 1:
            out.append(f"{st} stage propellant: {opts[0]}")
    return out


def _r(v: Any) -> Any:
    """A float rounded to 7 significant figures for the page (display only)."""
    if isinstance(v, float):
        return float(f"{v:.7g}") if math.isfinite(v) else None
    return v


def _design(row: dict[str, Any]) -> dict[str, Any]:
    """Stages and delta-v budget of one Pareto design, compact (one list per stage)."""
    res = row.get("result") or {}
    stages = [[s.get("name")] + [_r(s.get(k)) for k in (
        "ignition_mass_kg", "propellant_mass_kg", "structural_mass_kg", "mass_ratio", "delta_v_m_s",
        "delta_v_share", "isp_s", "structural_coefficient")] for s in res.get("stages", []) or []]
    losses = res.get("losses_m_s") if isinstance(res.get("losses_m_s"), dict) else {}
    return {"stages": stages, "gross_mass_kg": _r(res.get("gross_mass_kg")),
            "payload_mass_kg": _r(res.get("payload_mass_kg")), "delta_v_m_s": _r(res.get("delta_v_m_s")),
            "losses_m_s": {k: _r(float(v)) for k, v in losses.items() if isinstance(v, (int, float))}}


def report_data(res: StudyResults):
    """Build the `StudyReportData` of a study: front whole, cloud thinned, labels in words."""
    from ..report.html import StudyReportData

    study = res.study
    obs = study.objectives
    cu = study.cost_unit
    ok = np.flatnonzero(res.status == "ok")
    G = to_minimisation(res.objective_values[ok], [o.sense for o in obs]) if ok.size else np.empty((0, len(obs)))
    rk = res.ranks[ok]
    on_front = rk == 0
    keep = set(res.case_ids[ok][on_front].tolist())
    pairs = []
    if len(obs) > 2 and ok.size:
        for i, j in itertools.combinations(range(len(obs)), 2):
            m = pareto_mask(G[:, [i, j]])
            ids = res.case_ids[ok][m]
            pairs.append({"i": i, "j": j, "ids": [int(c) for c in ids]})
            keep.update(ids.tolist())
    dom = np.flatnonzero(~on_front)
    picked = dom[thin_cloud(G[dom], rk[dom])] if dom.size else dom
    keep.update(res.case_ids[ok][picked].tolist())
    rows = res.read(sorted(keep), with_result=False)
    conv = input_converters(study)
    ident = (lambda v: v)
    front_rows = res.pareto
    fG = to_minimisation(np.array([[r["metrics"][o.metric] for o in obs] for r in front_rows], dtype=float),
                         [o.sense for o in obs]) if front_rows else np.empty((0, len(obs)))
    k = knee_index(fG)
    units = res.input_units
    inputs = []
    for name in res.input_names:
        unit = units.get(name, "")
        inputs.append({"name": name, "label": input_label_words(name, unit, study), "unit": unit})
    cases = {
        "case_id": [r["case_id"] for r in rows],
        "rank": [r["rank"] for r in rows],
        "inputs": {name: [_r(conv.get(name, ident)(r["inputs"].get(name))) for r in rows]
                   for name in res.input_names},
        "objectives": [[_r(r["metrics"].get(o.metric)) for r in rows] for o in obs],
    }
    n_dom = int(dom.size)
    cloud_note = ("every feasible case is shown" if picked.size == n_dom else
                  f"{picked.size:,} of the {n_dom:,} feasible cases off the front are drawn, one per "
                  f"cell of a grid over the objectives (the one nearest the front); cases.csv has them all")
    return StudyReportData(
        title=study.name,
        vehicle=study.spec.study.vehicle or "",
        description=study.spec.study.description or "",
        source=study.source,
        objectives=[{"metric": o.metric, "sense": o.sense,
                     "label": metric_label(o.metric, cost_unit=cu, label=o.label)} for o in obs],
        constraints=[bound_text(b, cost_unit=cu) for b in study.bounds],
        inputs=inputs,
        fixed=fixed_inputs(res),
        counts=res.counts(),
        total=res.total,
        n_front=int(on_front.sum()),
        cases=cases,
        front=[r["case_id"] for r in front_rows],
        knee=None if k is None else front_rows[k]["case_id"],
        pairs=pairs,
        cloud_note=cloud_note,
        designs={r["case_id"]: _design(r) for r in front_rows},
    )
