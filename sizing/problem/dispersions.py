"""The ``[dispersions]`` table of problem, design and hobby files: what is uncertain, and how.

Each ``[[dispersions.input]]`` names one quantity and its distribution:

* ``distribution = "normal"`` with ``sigma`` (one standard deviation), optionally
  ``truncate`` (cut the tails at that many sigmas) and ``mean`` (default: the nominal);
* ``distribution = "uniform"`` with ``half_width`` around the nominal (or ``mean``),
  or ``low`` and ``high``;
* ``distribution = "list"`` with ``values`` (equally likely, or with ``weights``).

A spread (``sigma``, ``half_width``) is a quantity with its unit ("1.5 s") or a
percentage of the nominal ("2 %"); ``mean``, ``low``, ``high`` and ``values`` are
values of the quantity itself. ``[[dispersions.correlation]]`` gives the
correlation coefficient of two inputs (of their normal scores: a Gaussian
copula). ``seed``, ``samples``, ``probability`` (the required probability of
meeting the target) and ``confidence`` sit in ``[dispersions]`` itself.

This module only reads and validates (SI inside); nominal values are resolved
against the flown design in `sizing.dispersion`. Every fault is one line:
where, what is allowed, what was given.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any, Mapping, Sequence

from .load import _Collector

__all__ = [
    "STAGE_QUANTITIES", "VEHICLE_QUANTITIES", "DISTRIBUTIONS", "DEFAULT_CONFIDENCE", "DEFAULT_SAMPLES",
    "DEFAULT_SEED", "InputDispersion", "DispersionSpec", "parse_dispersions", "quantity_names",
    "MSG_UNKNOWN_QUANTITY", "MSG_DUPLICATE_INPUT", "MSG_NOT_POSITIVE_DEFINITE", "MSG_CORRELATION_INPUT",
    "MSG_DISTRIBUTION_KEYS", "MSG_PERCENT_OF_ZERO", "MSG_NOT_A_TABLE",
]

#: Stage quantities that can be dispersed: key -> (unit kind of `sizing.units`, unit shown, what it is).
STAGE_QUANTITIES: dict[str, tuple[str, str, str]] = {
    "isp": ("time", "s", "vacuum specific impulse (at fixed thrust; a thrust curve is scaled in thrust)"),
    "total_impulse": ("impulse", "N s", "total impulse (thrust scaled at fixed burn time)"),
    "thrust": ("force", "N", "thrust level at fixed total impulse (the burn time changes inversely)"),
    "propellant_mass": ("mass", "kg", "loaded propellant"),
    "structural_mass": ("mass", "kg", "structural (dry) mass"),
    "drag": ("dimensionless", "-", "multiplier of the stage's C_D(Mach) table, nominal 1"),
    "coast_before_ignition": ("time", "s", "coast before ignition (ignition timing)"),
    "mixture_ratio": ("dimensionless", "-", "oxidiser-to-fuel mass ratio of the loaded propellant (outage)"),
}
#: Quantities of the whole vehicle, the launcher and the wind.
VEHICLE_QUANTITIES: dict[str, tuple[str, str, str]] = {
    "payload_mass": ("mass", "kg", "payload mass"),
    "launch.rail_angle": ("angle", "deg", "rail tilt from the vertical"),
    "launch.azimuth": ("angle", "deg", "launch azimuth, clockwise from north"),
    "wind.speed": ("velocity", "m/s", "wind speed at the reference height"),
    "wind.direction": ("angle", "deg", "direction the wind blows from, clockwise from north"),
}
DISTRIBUTIONS = ("normal", "uniform", "list")
#: Confidence level of the reserve and of the probability bound when the file gives none [-]
#: (90 %, a level Hanson & Beard 2012 use; common practice).
DEFAULT_CONFIDENCE = 0.9
DEFAULT_SAMPLES = 2000
DEFAULT_SEED = 0

MSG_NOT_A_TABLE = "must be a table"
MSG_UNKNOWN_QUANTITY = "is not a quantity that can be dispersed"
MSG_DUPLICATE_INPUT = "is dispersed twice; give each quantity once"
MSG_NOT_POSITIVE_DEFINITE = "the correlation matrix is not positive definite"
MSG_CORRELATION_INPUT = "must name two different dispersed inputs"
MSG_DISTRIBUTION_KEYS = "these keys do not go with the distribution"
MSG_PERCENT_OF_ZERO = "a percentage needs a non-zero nominal; give the spread in the quantity's unit"

_TOP_KEYS = ("seed", "samples", "probability", "confidence", "wind_exponent", "wind_reference_height", "input",
             "correlation", "reserve_propellant")
_INPUT_KEYS = ("quantity", "distribution", "sigma", "truncate", "mean", "half_width", "low", "high", "values",
               "weights", "nominal")
_KEYS_OF = {"normal": {"sigma", "truncate", "mean", "nominal"},
            "uniform": {"half_width", "low", "high", "mean", "nominal"},
            "list": {"values", "weights", "nominal"}}
_CORR_KEYS = ("quantities", "coefficient")


@dataclass(frozen=True, slots=True)
class InputDispersion:
    """One dispersed input, SI (angles in degrees). Spreads with ``relative`` are fractions of the nominal.

    Attributes
    ----------
    quantity : str
        ``"STAGE.KEY"`` (a stage name of the file), or a key of `VEHICLE_QUANTITIES`.
    stage, key : str or None, str
        The stage name (None for vehicle quantities) and the quantity key.
    distribution : str
        ``"normal"``, ``"uniform"`` or ``"list"``.
    sigma, half_width : float or None
        Spread [unit of the quantity], or a fraction of the nominal when `relative`.
    relative : bool
        The spread was given in % of the nominal.
    truncate : float or None
        Normal tails cut at this many sigmas [-].
    mean, low, high : float or None
        Values of the quantity [its unit]; `mean` None is the nominal.
    values, weights : tuple of float or None
        The list distribution: values [unit], probabilities (normalised, sum 1).
    nominal : float or None
        A nominal the design does not carry (e.g. a mixture ratio) [unit].
    unit : str
        The SI unit of the quantity, for tables.
    """

    quantity: str
    stage: str | None
    key: str
    distribution: str
    unit: str
    sigma: float | None = None
    half_width: float | None = None
    relative: bool = False
    truncate: float | None = None
    mean: float | None = None
    low: float | None = None
    high: float | None = None
    values: tuple[float, ...] | None = None
    weights: tuple[float, ...] | None = None
    nominal: float | None = None


@dataclass(frozen=True, slots=True)
class DispersionSpec:
    """The validated ``[dispersions]`` table.

    Attributes
    ----------
    inputs : tuple of InputDispersion
        In file order, wildcards expanded (``"*.isp"`` -> one input per stage).
    correlation : tuple of tuple of float
        Correlation matrix of the inputs' normal scores [-] (identity when none is given).
    seed : int
        Seed of the sample streams: the same seed gives the same samples, bit for bit.
    samples : int
        Default number of Monte Carlo samples.
    probability : float or None
        Required probability of meeting the target [-], in (0, 1).
    confidence : float
        Confidence level of the reserve and of the lower probability bound [-], in (0, 1).
    wind_exponent : float
        Power-law exponent of a dispersed wind over a file without one [-] (default 1/7).
    wind_reference_height_m : float
        Height of the dispersed wind speed above the site [m] (default 10 m).
    reserve_propellant_kg : float
        Propellant reserve carried (unburnt) above the last stage in the nominal flight [kg]
        (written by sizing to a confidence for orbit targets; 0 otherwise).
    raw : Mapping
        The table as read (written back into design files).
    """

    inputs: tuple[InputDispersion, ...]
    correlation: tuple[tuple[float, ...], ...]
    seed: int = DEFAULT_SEED
    samples: int = DEFAULT_SAMPLES
    probability: float | None = None
    confidence: float = DEFAULT_CONFIDENCE
    wind_exponent: float = 1.0 / 7.0
    wind_reference_height_m: float = 10.0
    reserve_propellant_kg: float = 0.0
    raw: Mapping[str, Any] | None = None

    @property
    def names(self) -> tuple[str, ...]:
        """Input names, in order."""
        return tuple(i.quantity for i in self.inputs)

    @property
    def is_correlated(self) -> bool:
        """True when some correlation coefficient is non-zero."""
        n = len(self.inputs)
        return any(self.correlation[i][j] != 0.0 for i in range(n) for j in range(n) if i != j)


def quantity_names(stage_names: Sequence[str]) -> list[str]:
    """Every quantity name a file with these stages can disperse (for error messages)."""
    return ([f"{s}.{k}" for s in stage_names for k in STAGE_QUANTITIES] + list(VEHICLE_QUANTITIES)
            + [f"*.{k}" for k in STAGE_QUANTITIES])


class _Faults(_Collector):
    """The loader's collector (SI conversion, bounds, one line per fault) with the table's own checks."""

    @property
    def lines(self) -> list[str]:
        return self.faults

    def add(self, text: str) -> None:
        self.fault(text)

    def number(self, where: str, value: Any, kind: str, *, lo: float | None = None, lo_open: bool = True,
               hi: float | None = None, hi_open: bool = True) -> float | None:
        return self.quantity(where, value, kind, lo=lo, hi=hi, lo_open=lo_open, hi_open=hi_open)

    def integer(self, where: str, value: Any, lo: int, hi: int) -> int | None:
        if value is None:
            return None
        if isinstance(value, bool) or not isinstance(value, int) or not lo <= value <= hi:
            self.add(f"{where}: must be a whole number in [{lo}, {hi:,}]. Got {value!r}.")
            return None
        return value

    def keys(self, where: str, table: Mapping[str, Any], allowed: Sequence[str]) -> None:
        for k in table:
            if k not in allowed:
                self.add(f"{where}.{k}: unknown key. Allowed keys: {', '.join(allowed)}.")


def _spread(f: _Faults, where: str, value: Any, kind: str) -> tuple[float | None, bool]:
    """A spread: "2 %" (relative, as a fraction) or a quantity of the unit kind; > 0."""
    if value is None:
        return None, False
    if isinstance(value, str) and value.strip().endswith("%"):
        try:
            frac = float(value.strip()[:-1]) / 100.0
        except ValueError:
            f.add(f"{where}: cannot read {value!r} as a percentage; write e.g. \"2 %\".")
            return None, True
        if not (math.isfinite(frac) and frac > 0):
            f.add(f"{where}: must be > 0. Got {value!r}.")
            return None, True
        return frac, True
    return f.number(where, value, kind, lo=0.0), False


def _quantity(f: _Faults, where: str, name: Any, stage_names: Sequence[str]) -> list[tuple[str | None, str]]:
    """(stage, key) pairs a quantity name stands for (a wildcard stands for every stage)."""
    if not isinstance(name, str):
        f.add(f"{where}.quantity: must be a string such as \"{stage_names[0] if stage_names else 'stage'}.isp\". "
              f"Got {name!r}.")
        return []
    if name in VEHICLE_QUANTITIES:
        return [(None, name)]
    stage, _, key = name.rpartition(".")
    if key in STAGE_QUANTITIES and (stage in stage_names or stage == "*"):
        return [(s, key) for s in (stage_names if stage == "*" else [stage])]
    f.add(f"{where}.quantity: {MSG_UNKNOWN_QUANTITY}. Got {name!r}. Allowed: "
          f"{', '.join(quantity_names(stage_names))}.")
    return []


def _input(f: _Faults, k: int, raw: Any, stage_names: Sequence[str]) -> list[InputDispersion]:
    where = f"dispersions.input[{k + 1}]"
    if not isinstance(raw, Mapping):
        f.add(f"{where}: {MSG_NOT_A_TABLE} ([[dispersions.input]] with quantity and distribution). Got {raw!r}.")
        return []
    if isinstance(raw.get("quantity"), str):
        where += f" ({raw['quantity']})"
    f.keys(where, raw, _INPUT_KEYS)
    if "quantity" not in raw:
        f.add(f"{where}.quantity: required key is missing.")
        return []
    pairs = _quantity(f, where, raw["quantity"], stage_names)
    dist = raw.get("distribution")
    if dist not in DISTRIBUTIONS:
        f.add(f"{where}.distribution: must be one of {', '.join(map(repr, DISTRIBUTIONS))}. Got {dist!r}.")
        return []
    wrong = sorted(set(raw) - _KEYS_OF[dist] - {"quantity", "distribution"})
    if wrong:
        f.add(f"{where}: {MSG_DISTRIBUTION_KEYS} {dist!r}: {', '.join(wrong)}. Allowed with {dist!r}: "
              f"{', '.join(sorted(_KEYS_OF[dist]))}.")
        return []
    if not pairs:
        return []
    kind = (STAGE_QUANTITIES if pairs[0][0] is not None else VEHICLE_QUANTITIES)[pairs[0][1]][0]
    unit = (STAGE_QUANTITIES if pairs[0][0] is not None else VEHICLE_QUANTITIES)[pairs[0][1]][1]
    n0 = len(f.lines)
    kw: dict[str, Any] = {"mean": f.number(f"{where}.mean", raw.get("mean"), kind),
                          "nominal": f.number(f"{where}.nominal", raw.get("nominal"), kind, lo=0.0)}
    if dist == "normal":
        if "sigma" not in raw:
            f.add(f"{where}.sigma: required for a normal distribution (one standard deviation, e.g. \"1 %\" "
                  f"or a value in {unit}).")
        kw["sigma"], kw["relative"] = _spread(f, f"{where}.sigma", raw.get("sigma"), kind)
        kw["truncate"] = f.number(f"{where}.truncate", raw.get("truncate"), "dimensionless", lo=0.5,
                                  lo_open=False)
    elif dist == "uniform":
        has_hw, has_bounds = "half_width" in raw, ("low" in raw or "high" in raw)
        if has_hw == has_bounds or (has_bounds and not ("low" in raw and "high" in raw)):
            f.add(f"{where}: a uniform distribution needs half_width, or low and high (not both forms).")
        elif has_hw:
            kw["half_width"], kw["relative"] = _spread(f, f"{where}.half_width", raw["half_width"], kind)
        else:
            if "mean" in raw:
                f.add(f"{where}.mean: goes with half_width, not with low and high.")
            lo = f.number(f"{where}.low", raw["low"], kind)
            hi = f.number(f"{where}.high", raw["high"], kind)
            if lo is not None and hi is not None and not hi > lo:
                f.add(f"{where}.high: must be > low ({raw['low']!r}). Got {raw['high']!r}.")
            kw["low"], kw["high"] = lo, hi
    else:
        vals = raw.get("values")
        if not isinstance(vals, list) or not vals:
            f.add(f"{where}.values: required for a list distribution: one or more values of the quantity "
                  f"({unit}). Got {vals!r}.")
        else:
            got = [f.number(f"{where}.values[{j + 1}]", v, kind) for j, v in enumerate(vals)]
            kw["values"] = tuple(got) if None not in got else None
            w = raw.get("weights")
            if w is not None:
                if not isinstance(w, list) or len(w) != len(vals):
                    f.add(f"{where}.weights: must be a list as long as values ({len(vals)}). Got {w!r}.")
                else:
                    ws = [f.number(f"{where}.weights[{j + 1}]", v, "dimensionless", lo=0.0, lo_open=False)
                          for j, v in enumerate(w)]
                    if None not in ws:
                        total = sum(ws)
                        if not total > 0:
                            f.add(f"{where}.weights: must not all be zero. Got {w!r}.")
                        else:
                            kw["weights"] = tuple(x / total for x in ws)
    if len(f.lines) > n0:
        return []
    out = []
    for stage, key in pairs:
        q = key if stage is None else f"{stage}.{key}"
        out.append(InputDispersion(quantity=q, stage=stage, key=key, distribution=dist, unit=unit, **kw))
    return out


def _correlation(f: _Faults, raw: Any, names: list[str]) -> tuple[tuple[float, ...], ...]:
    n = len(names)
    mat = [[1.0 if i == j else 0.0 for j in range(n)] for i in range(n)]
    if raw is None:
        return tuple(tuple(r) for r in mat)
    if not isinstance(raw, list):
        f.add(f"dispersions.correlation: must be [[dispersions.correlation]] tables. Got {raw!r}.")
        return tuple(tuple(r) for r in mat)
    for k, c in enumerate(raw):
        where = f"dispersions.correlation[{k + 1}]"
        if not isinstance(c, Mapping):
            f.add(f"{where}: {MSG_NOT_A_TABLE} (quantities = [A, B], coefficient). Got {c!r}.")
            continue
        f.keys(where, c, _CORR_KEYS)
        q = c.get("quantities")
        rho = f.number(f"{where}.coefficient", c.get("coefficient"), "dimensionless", lo=-1.0, hi=1.0)
        if "coefficient" not in c:
            f.add(f"{where}.coefficient: required key is missing (in (-1, 1)).")
        if (not isinstance(q, list) or len(q) != 2 or q[0] == q[1] or not all(isinstance(x, str) for x in q)
                or any(x not in names for x in q)):
            f.add(f"{where}.quantities: {MSG_CORRELATION_INPUT} ({', '.join(names) or 'none dispersed'}). "
                  f"Got {q!r}.")
            continue
        if rho is not None:
            i, j = names.index(q[0]), names.index(q[1])
            mat[i][j] = mat[j][i] = rho
    if n and not f.lines:
        import numpy as np

        lam = float(np.linalg.eigvalsh(np.array(mat)).min())
        if lam <= 1e-10:
            f.add(f"dispersions.correlation: {MSG_NOT_POSITIVE_DEFINITE} (smallest eigenvalue {lam:.3g}); "
                  "the coefficients contradict each other: lower them.")
    return tuple(tuple(r) for r in mat)


def parse_dispersions(raw: Any, stage_names: Sequence[str], *, has_wind: bool = False) -> tuple[
        DispersionSpec | None, list[str]]:
    """Validate a ``[dispersions]`` table.

    Parameters
    ----------
    raw : mapping or None
        The table as read from TOML.
    stage_names : sequence of str
        Stage names of the file, bottom first.
    has_wind : bool
        True when the file describes a nominal wind (hobby files); otherwise the
        nominal is calm and wind spreads must be given in m/s and degrees.

    Returns
    -------
    (DispersionSpec or None, list of str)
        The spec (None when `raw` is None or faulty) and one line per fault.
    """
    if raw is None:
        return None, []
    f = _Faults()
    if not isinstance(raw, Mapping):
        return None, [f"dispersions: {MSG_NOT_A_TABLE} ([dispersions] with [[dispersions.input]] tables). Got {raw!r}."]
    f.keys("dispersions", raw, _TOP_KEYS)
    seed = f.integer("dispersions.seed", raw.get("seed"), 0, 2**63 - 1)
    samples = f.integer("dispersions.samples", raw.get("samples"), 1, 10_000_000)
    prob = f.number("dispersions.probability", raw.get("probability"), "dimensionless", lo=0.0, hi=1.0)
    conf = f.number("dispersions.confidence", raw.get("confidence"), "dimensionless", lo=0.0, hi=1.0)
    wexp = f.number("dispersions.wind_exponent", raw.get("wind_exponent"), "dimensionless", lo=0.0, lo_open=False,
                    hi=1.0)
    wref = f.number("dispersions.wind_reference_height", raw.get("wind_reference_height"), "length", lo=0.0)
    reserve = f.number("dispersions.reserve_propellant", raw.get("reserve_propellant"), "mass", lo=0.0,
                       lo_open=False)
    items = raw.get("input")
    inputs: list[InputDispersion] = []
    if items is None:
        f.add("dispersions.input: give one or more [[dispersions.input]] tables (quantity, distribution, spread).")
    elif not isinstance(items, list):
        f.add(f"dispersions.input: must be [[dispersions.input]] tables. Got {items!r}.")
    else:
        seen: set[str] = set()
        for k, item in enumerate(items):
            for inp in _input(f, k, item, stage_names):
                if inp.quantity in seen:
                    f.add(f"dispersions.input[{k + 1}] ({inp.quantity}): {MSG_DUPLICATE_INPUT}.")
                    continue
                seen.add(inp.quantity)
                if (inp.quantity.startswith("wind.") and not has_wind and inp.mean is None
                        and inp.distribution != "list" and inp.low is None):
                    f.add(f"dispersions.input[{k + 1}] ({inp.quantity}): the file has no nominal wind (calm); "
                          "give low and high, values, or a mean with the spread in m/s or degrees.")
                    continue
                inputs.append(inp)
    corr = _correlation(f, raw.get("correlation"), [i.quantity for i in inputs])
    if f.lines:
        return None, f.lines
    return DispersionSpec(
        inputs=tuple(inputs), correlation=corr, seed=DEFAULT_SEED if seed is None else seed,
        samples=DEFAULT_SAMPLES if samples is None else samples, probability=prob,
        confidence=DEFAULT_CONFIDENCE if conf is None else conf, wind_exponent=1.0 / 7.0 if wexp is None else wexp,
        wind_reference_height_m=10.0 if wref is None else wref, reserve_propellant_kg=reserve or 0.0,
        raw=dict(raw)), []
