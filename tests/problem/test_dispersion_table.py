"""The [dispersions] table: every error branch is one line naming the file, the field, the value and
what is allowed; good tables load into SI."""

from __future__ import annotations

import re
import textwrap
from pathlib import Path

import pytest

from sizing.errors import ProblemDefinitionError
from sizing.problem import dispersions as D
from sizing.problem.load import load_problem

ROOT = Path(__file__).resolve().parents[2]

BASE = """
[mission]
payload_mass = 4.5
apogee = "30 km"

[[stage]]
name = "boost"
isp = 195.0
structural_coefficient = 0.38
thrust_to_weight = 9.0
diameter = 0.16

[[stage]]
name = "sustain"
isp = 205.0
structural_coefficient = 0.42
thrust_to_weight = 6.0
"""

GOOD = """
[dispersions]
seed = 3
samples = 500
probability = 0.99
confidence = 0.95

[[dispersions.input]]
quantity = "*.isp"
distribution = "normal"
sigma = "1 %"
truncate = 3

[[dispersions.input]]
quantity = "boost.thrust"
distribution = "uniform"
half_width = "50 N"

[[dispersions.input]]
quantity = "payload_mass"
distribution = "uniform"
low = "4400 g"
high = "4.7 kg"

[[dispersions.input]]
quantity = "wind.direction"
distribution = "list"
values = ["200 deg", 250, 270]
weights = [1, 2, 1]

[[dispersions.correlation]]
quantities = ["boost.isp", "sustain.isp"]
coefficient = 0.5
"""


def _write(tmp_path: Path, text: str) -> Path:
    p = tmp_path / "p.toml"
    p.write_text(textwrap.dedent(BASE) + textwrap.dedent(text))
    return p


def _faults(tmp_path: Path, text: str) -> list[str]:
    p = _write(tmp_path, text)
    with pytest.raises(ProblemDefinitionError) as info:
        load_problem(p)
    assert info.value.source == str(p)
    return list(info.value.faults)


def test_dispersion_table_loads_to_si_with_wildcards_expanded(tmp_path):
    spec = load_problem(_write(tmp_path, GOOD)).dispersions
    assert spec.names == ("boost.isp", "sustain.isp", "boost.thrust", "payload_mass", "wind.direction")
    assert (spec.seed, spec.samples, spec.probability, spec.confidence) == (3, 500, 0.99, 0.95)
    isp = spec.inputs[0]
    assert isp.relative and isp.sigma == pytest.approx(0.01) and isp.truncate == 3.0
    assert spec.inputs[2].half_width == 50.0 and not spec.inputs[2].relative
    assert (spec.inputs[3].low, spec.inputs[3].high) == (pytest.approx(4.4), pytest.approx(4.7))
    assert spec.inputs[4].values == (200.0, 250.0, 270.0)
    assert spec.inputs[4].weights == (0.25, 0.5, 0.25)
    assert spec.correlation[0][1] == spec.correlation[1][0] == 0.5
    assert spec.correlation[2][2] == 1.0 and spec.is_correlated


def test_dispersion_table_absent_is_none(tmp_path):
    assert load_problem(_write(tmp_path, "")).dispersions is None


def test_dispersion_table_in_a_hobby_file_is_read():
    from sizing.problem.hobby import hobby_problem_from_dict
    from sizing.problem.load import read_toml

    data = dict(read_toml(ROOT / "problems" / "hobby_motor_two_stage.toml"))
    data["dispersions"] = read_toml(ROOT / "problems" / "dispersions" / "tern_dart.toml")["dispersions"]
    p = hobby_problem_from_dict(data, source="hobby.toml", base_dir=ROOT / "problems")
    assert "sustainer.coast_before_ignition" in p.dispersions.names
    # relative wind spreads are allowed: the hobby file has a nominal wind
    assert p.dispersions.inputs[-1].quantity == "wind.direction"


_INPUT = '[[dispersions.input]]\nquantity = "boost.isp"\ndistribution = "normal"\nsigma = "1 %"\n'

ERRORS = [
    ("[dispersions]\nsead = 1\n" + _INPUT.replace("[[", "[[", 1),
     "dispersions.sead: unknown key. Allowed keys: seed, samples"),
    ("[dispersions]\nseed = 1.5\n" + _INPUT, "dispersions.seed: must be a whole number in [0, "),
    ("[dispersions]\nsamples = 0\n" + _INPUT, "dispersions.samples: must be a whole number in [1, 10,000,000]. Got 0."),
    ("[dispersions]\nprobability = 1.0\n" + _INPUT, "dispersions.probability: must be in (0, 1). Got 1.0."),
    ("[dispersions]\nconfidence = 0\n" + _INPUT, "dispersions.confidence: must be in (0, 1). Got 0."),
    ("[dispersions]\nwind_exponent = 2\n" + _INPUT, "dispersions.wind_exponent: must be in [0, 1). Got 2."),
    ("[dispersions]\nseed = 1\n", "dispersions.input: give one or more [[dispersions.input]] tables"),
    ("[dispersions]\ninput = [1]\n", "dispersions.input[1]: must be a table"),
    (_INPUT + "color = 1\n", "dispersions.input[1] (boost.isp).color: unknown key. Allowed keys: quantity"),
    ('[[dispersions.input]]\ndistribution = "normal"\nsigma = 1\n', "dispersions.input[1].quantity: required key"),
    (_INPUT.replace("boost.isp", "boost.ips"), "dispersions.input[1] (boost.ips).quantity: "
     f"{D.MSG_UNKNOWN_QUANTITY}. Got 'boost.ips'. Allowed: boost.isp"),
    (_INPUT.replace("boost.isp", "booster.isp"), f"(booster.isp).quantity: {D.MSG_UNKNOWN_QUANTITY}"),
    (_INPUT.replace('"normal"', '"gauss"'), "dispersions.input[1] (boost.isp).distribution: must be one of "
     "'normal', 'uniform', 'list'. Got 'gauss'."),
    (_INPUT + "half_width = 2\n", f"dispersions.input[1] (boost.isp): {D.MSG_DISTRIBUTION_KEYS} 'normal': "
     "half_width. Allowed with 'normal': mean, nominal, sigma, truncate."),
    (_INPUT.replace('sigma = "1 %"\n', ""), "dispersions.input[1] (boost.isp).sigma: required for a normal"),
    (_INPUT.replace('"1 %"', '"-1 %"'), "dispersions.input[1] (boost.isp).sigma: must be > 0. Got '-1 %'."),
    (_INPUT.replace('"1 %"', '"one %"'), "dispersions.input[1] (boost.isp).sigma: cannot read 'one %' as a percentage"),
    (_INPUT.replace('"1 %"', '"2 kg"'), "dispersions.input[1] (boost.isp).sigma: '2 kg' has the wrong dimension"),
    (_INPUT + "truncate = 0.1\n", "dispersions.input[1] (boost.isp).truncate: must be >= 0.5. Got 0.1."),
    ('[[dispersions.input]]\nquantity = "payload_mass"\ndistribution = "uniform"\n',
     "dispersions.input[1] (payload_mass): a uniform distribution needs half_width, or low and high"),
    ('[[dispersions.input]]\nquantity = "payload_mass"\ndistribution = "uniform"\nhalf_width = 1\nlow = 1\nhigh = 2\n',
     "a uniform distribution needs half_width, or low and high (not both forms)"),
    ('[[dispersions.input]]\nquantity = "payload_mass"\ndistribution = "uniform"\nlow = 5\nhigh = 4\n',
     "dispersions.input[1] (payload_mass).high: must be > low (5). Got 4."),
    ('[[dispersions.input]]\nquantity = "payload_mass"\ndistribution = "uniform"\nlow = 4\nhigh = 5\nmean = 4.5\n',
     "dispersions.input[1] (payload_mass).mean: goes with half_width, not with low and high."),
    ('[[dispersions.input]]\nquantity = "payload_mass"\ndistribution = "list"\nvalues = []\n',
     "dispersions.input[1] (payload_mass).values: required for a list distribution"),
    ('[[dispersions.input]]\nquantity = "payload_mass"\ndistribution = "list"\nvalues = [4, 5]\nweights = [1]\n',
     "dispersions.input[1] (payload_mass).weights: must be a list as long as values (2). Got [1]."),
    ('[[dispersions.input]]\nquantity = "payload_mass"\ndistribution = "list"\nvalues = [4, 5]\nweights = [0, 0]\n',
     "dispersions.input[1] (payload_mass).weights: must not all be zero. Got [0, 0]."),
    (_INPUT + _INPUT, f"dispersions.input[2] (boost.isp): {D.MSG_DUPLICATE_INPUT}."),
    ('[[dispersions.input]]\nquantity = "wind.speed"\ndistribution = "normal"\nsigma = "2 m/s"\n',
     "dispersions.input[1] (wind.speed): the file has no nominal wind (calm); give low and high"),
    (_INPUT + "[dispersions]\ncorrelation = 3\n", "dispersions.correlation: must be [[dispersions.correlation]]"),
    (_INPUT + '[[dispersions.correlation]]\nquantities = ["boost.isp", "sustain.isp"]\ncoefficient = 0.5\n',
     f"dispersions.correlation[1].quantities: {D.MSG_CORRELATION_INPUT} (boost.isp). "
     "Got ['boost.isp', 'sustain.isp']."),
    (_INPUT.replace("boost", "*") + '[[dispersions.correlation]]\nquantities = ["boost.isp", "sustain.isp"]\n'
     "coefficient = 1.5\n", "dispersions.correlation[1].coefficient: must be in (-1, 1). Got 1.5."),
    (_INPUT.replace("boost", "*") + '[[dispersions.correlation]]\nquantities = ["boost.isp", "sustain.isp"]\n',
     "dispersions.correlation[1].coefficient: required key is missing"),
    (_INPUT.replace("boost", "*") + _INPUT.replace("boost.isp", "payload_mass").replace('"1 %"', '"1 kg"')
     + "".join(f'[[dispersions.correlation]]\nquantities = ["{a}", "{b}"]\ncoefficient = {c}\n'
               for a, b, c in (("boost.isp", "sustain.isp", 0.9), ("boost.isp", "payload_mass", 0.9),
                               ("sustain.isp", "payload_mass", -0.9))),
     f"dispersions.correlation: {D.MSG_NOT_POSITIVE_DEFINITE} (smallest eigenvalue"),
    ("[dispersions]\nreserve_propellant = -1\n" + _INPUT, "dispersions.reserve_propellant: must be >= 0. Got -1."),
]


@pytest.mark.parametrize("text,message", ERRORS, ids=[f"e{k}" for k in range(len(ERRORS))])
def test_dispersion_table_error_is_one_line_with_field_and_value(tmp_path, text, message):
    faults = _faults(tmp_path, text)
    assert any(message in f for f in faults), faults
    assert all("\n" not in f for f in faults)


def test_dispersion_table_that_is_not_a_table_is_refused():
    import tomllib

    from sizing.problem.load import problem_from_dict

    data = tomllib.loads(textwrap.dedent(BASE))
    data["dispersions"] = 3
    with pytest.raises(ProblemDefinitionError, match=re.escape("dispersions: Input should be a valid dictionary")):
        problem_from_dict(data, source="p.toml")
    faults = D.parse_dispersions([1], ["boost"])[1]
    assert faults == [f"dispersions: {D.MSG_NOT_A_TABLE} ([dispersions] with [[dispersions.input]] tables). Got [1]."]


def test_dispersion_table_error_through_the_cli_exits_2_naming_the_file(tmp_path, capsys):
    from sizing.cli import main

    p = _write(tmp_path, _INPUT.replace('"1 %"', '"-1 %"'))
    assert main(["check", str(p)]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert err == [f"error: {p}: dispersions.input[1] (boost.isp).sigma: must be > 0. Got '-1 %'."]


def test_dispersion_quantity_names_cover_every_stage():
    names = D.quantity_names(["a", "b"])
    assert "a.mixture_ratio" in names and "*.drag" in names and "wind.speed" in names
    assert len(names) == 3 * len(D.STAGE_QUANTITIES) + len(D.VEHICLE_QUANTITIES)


def test_dispersion_demo_tables_load(tmp_path):
    from sizing.problem.load import problem_from_dict, read_toml

    for name in ("jackdaw.toml", "tern_dart.toml"):
        table = read_toml(ROOT / "problems" / "dispersions" / name)["dispersions"]
        assert table["samples"] >= 1
    p = load_problem(ROOT / "problems" / "heron_confidence.toml")
    assert p.dispersions.probability == 0.99 and len(p.dispersions.inputs) == 11
    data = dict(read_toml(ROOT / "tests" / "dispersion" / "data" / "jackdaw_design.toml"))
    data["dispersions"] = read_toml(ROOT / "problems" / "dispersions" / "jackdaw.toml")["dispersions"]
    spec = problem_from_dict(data).dispersions
    assert re.fullmatch(r"second\.mixture_ratio", spec.inputs[-4].quantity) and spec.inputs[-4].nominal == 2.6
