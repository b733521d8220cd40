"""Words with units for a study's inputs, metrics and constraints (tables, plots, exports).

Raw keys (``gross_mass_kg``, ``stage.second.ignition_mass_kg``,
``bound[1] liftoff_thrust_to_weight``) are for files and code; a reader gets
``gross mass [kg]``, ``second stage: ignition mass [kg]`` and
``lift-off thrust-to-weight <= 15``. Every label ends with its unit in
brackets (``[-]`` when dimensionless), except text inputs such as a
propellant choice.
"""

from __future__ import annotations

from typing import Any, Mapping

from .spec import FIELD_UNITS, Bound, Study

__all__ = ["metric_unit", "metric_words", "metric_label", "input_words", "input_label_words",
           "bound_text", "si_kind", "split_unit", "SUFFIX_UNITS"]

#: Unit suffix of a field name -> unit shown in brackets, longest suffix first.
SUFFIX_UNITS = (
    ("_kg_per_m_s", "kg/(m/s)"), ("_m_s2", "m/s^2"), ("_m_s", "m/s"), ("_kg", "kg"),
    ("_pa", "Pa"), ("_deg", "deg"), ("_m3", "m^3"), ("_m2", "m^2"), ("_n", "N"), ("_m", "m"), ("_s", "s"),
)

#: Words of the metrics a study produces (without the unit suffix).
_METRIC_WORDS = {
    "gross_mass": "gross mass", "payload_mass": "payload mass", "delta_v": "ideal delta-v",
    "dry_mass": "dry mass", "propellant_mass": "propellant mass", "n_stages": "number of stages",
    "cost": "cost", "payload_fraction": "payload fraction", "max_acceleration": "max acceleration",
    "max_dynamic_pressure": "max dynamic pressure", "liftoff_thrust_to_weight": "lift-off thrust-to-weight",
    "apogee": "apogee above the site", "losses_total": "total losses", "rail_exit_speed": "rail-exit speed",
    "target_error": "target error", "target_tolerance": "target tolerance",
    "ignition_mass": "ignition mass", "structural_mass": "structural mass",
    "ideal_delta_v": "ideal delta-v", "max_q_altitude": "altitude of max-q",
}

#: Words of the problem-file keys an axis may vary.
_FIELD_WORDS = {
    "payload_mass": "payload mass", "delta_v": "ideal delta-v", "gross_mass": "gross mass",
    "apogee": "apogee", "orbit_altitude": "orbit altitude", "isp": "Isp",
    "isp_sea_level": "sea-level Isp", "exhaust_velocity": "exhaust velocity",
    "structural_coefficient": "structural coefficient", "thrust_to_weight": "thrust-to-weight",
    "max_ignition_mass": "ignition-mass cap", "max_delta_v_share": "max delta-v share",
    "min_delta_v_share": "min delta-v share", "max_acceleration": "acceleration limit",
    "max_gross_mass": "gross-mass cap", "coast_before_ignition": "coast before ignition",
}

#: Unit text -> the `sizing.units.to_si` kind that converts it.
_UNIT_KINDS = {"kg": "mass", "m/s": "velocity", "m": "length", "s": "time", "N": "force",
               "Pa": "pressure", "m^2": "area", "m/s^2": "acceleration", "deg": "angle",
               "-": "dimensionless"}


def split_unit(name: str) -> tuple[str, str]:
    """(name without its unit suffix, unit): ``gross_mass_kg`` -> ``('gross_mass', 'kg')``;
    no suffix -> ``'-'`` (dimensionless by the project's naming rule)."""
    for suffix, unit in SUFFIX_UNITS:
        if name.endswith(suffix) and len(name) > len(suffix):
            return name[: -len(suffix)], unit
    return name, "-"


def metric_unit(metric: str, *, cost_unit: str = "cost units") -> str:
    """Unit of a metric from its name (``cost`` takes the study's cost unit)."""
    if metric == "cost":
        return cost_unit
    return split_unit(metric.rsplit(".", 1)[-1])[1]


def metric_words(metric: str) -> str:
    """A metric in words, without its unit: ``stage.second.ignition_mass_kg`` ->
    ``second stage: ignition mass``; ``losses_m_s.drag`` -> ``losses: drag``."""
    parts = metric.split(".")
    if parts[0] == "stage" and len(parts) == 3:
        base, _ = split_unit(parts[2])
        return f"{parts[1]} stage: {_METRIC_WORDS.get(base, base.replace('_', ' '))}"
    if len(parts) == 2:
        head, _ = split_unit(parts[0])
        return f"{_METRIC_WORDS.get(head, head.replace('_', ' '))}: {parts[1].replace('_', ' ')}"
    base, _ = split_unit(metric)
    return _METRIC_WORDS.get(base, base.replace("_", " "))


def metric_label(metric: str, *, cost_unit: str = "cost units", label: str | None = None) -> str:
    """``words [unit]`` of a metric; `label` (an objective's own label) replaces the words.

    Examples
    --------
    >>> metric_label("gross_mass_kg")
    'gross mass [kg]'
    >>> metric_label("cost", cost_unit="kilo-credits")
    'cost [kilo-credits]'
    >>> metric_label("liftoff_thrust_to_weight")
    'lift-off thrust-to-weight [-]'
    """
    words = label if label and label != metric else metric_words(metric)
    return f"{words} [{metric_unit(metric, cost_unit=cost_unit)}]"


def input_words(name: str, study: Study) -> str:
    """An input (axis or choice) in words, without its unit.

    An axis the user labelled keeps the label; otherwise the field path is put in
    words (``stage.first.isp`` -> ``first stage: Isp``).
    """
    if name == "stage_count":
        return "stage count"
    if name.startswith("propellant."):
        return f"{name.split('.', 1)[1]} stage propellant"
    for ax in study.spec.axis:
        if (ax.label or ax.field) == name:
            if ax.label:
                return ax.label
            parts = ax.field.split(".")
            key = parts[-1]
            words = _FIELD_WORDS.get(key, key.replace("_", " "))
            if parts[0] == "stage":
                return f"{'every' if parts[1] == '*' else parts[1]} stage: {words}"
            return words
    return name.replace("_", " ")


def input_label_words(name: str, unit: str, study: Study) -> str:
    """``words [unit]`` of an input; text inputs (``unit=''``) have no brackets."""
    words = input_words(name, study)
    return f"{words} [{unit}]" if unit else words


def _num(v: float) -> str:
    return f"{v:,.6g}"


def bound_text(b: Bound, *, cost_unit: str = "cost units") -> str:
    """A constraint as a reader states it: ``gross mass <= 80 kg``,
    ``lift-off thrust-to-weight >= 5``, ``5 <= lift-off thrust-to-weight <= 15``."""
    words = metric_words(b.metric)
    unit = metric_unit(b.metric, cost_unit=cost_unit)
    u = "" if unit == "-" else f" {unit}"
    if b.min_value is not None and b.max_value is not None:
        return f"{_num(b.min_value)}{u} <= {words} <= {_num(b.max_value)}{u}"
    if b.max_value is not None:
        return f"{words} <= {_num(b.max_value)}{u}"
    return f"{words} >= {_num(b.min_value)}{u}"  # type: ignore[arg-type]


def si_kind(field: str) -> str | None:
    """The `to_si` kind of an axis field's value (None when it is not a plain SI quantity)."""
    return _UNIT_KINDS.get(FIELD_UNITS.get(field.rsplit(".", 1)[-1], ""))


def describe(value: Any, unit: str) -> str:
    """One value with its unit for notes: ``4.5 kg``, ``1,700 m/s``, ``2`` (dimensionless)."""
    if isinstance(value, (int, float)) and not isinstance(value, bool):
        return f"{value:,.6g}" + ("" if unit in ("", "-") else f" {unit}")
    return str(value)


def labels_of(study: Study, input_units: Mapping[str, str]) -> dict[str, str]:
    """Input name -> ``words [unit]`` for every input of a study."""
    return {k: input_label_words(k, u if u != "" else "", study) for k, u in input_units.items()}
