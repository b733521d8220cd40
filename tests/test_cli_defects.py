"""Defects a new user hit: check vs solve, "20 g", piped output, --version, export layout."""

from __future__ import annotations

import re
from pathlib import Path

import pytest

from sizing.cli import EXIT_BAD_INPUT, EXIT_OK, main
from sizing.result import CAUTION

ROOT = Path(__file__).resolve().parents[1]
PROBLEMS = ROOT / "problems"
G0 = 9.80665  # standard acceleration of gravity [m/s^2], exact by definition (3rd CGPM, 1901)


def _variant(tmp_path, name: str, src: str, edit) -> Path:
    text = (PROBLEMS / src).read_text(encoding="utf-8")
    p = tmp_path / f"{name}.toml"
    p.write_text(edit(text), encoding="utf-8")
    return p


def _variants(tmp_path) -> list[Path]:
    """Shipped problems (the orbit demo takes seconds to solve: left out) and broken variants
    that load but that sizing refuses."""
    files = [PROBLEMS / f for f in ("heron_apogee.toml", "heron_two_stage.toml", "jackdaw_three_stage.toml",
                                     "jackdaw_constrained.toml", "jackdaw_max_payload.toml",
                                     )]
    files.append(_variant(tmp_path, "no_thrust", "heron_apogee.toml",
                          lambda t: re.sub(r"(?m)^thrust_to_weight.*$", "", t)))
    files.append(_variant(tmp_path, "no_diameter", "heron_apogee.toml",
                          lambda t: re.sub(r"(?m)^diameter.*$", "", t)))
    files.append(_variant(tmp_path, "stage_limits_with_apogee", "heron_apogee.toml",
                          lambda t: t.replace("structural_coefficient = 0.38",
                                              "structural_coefficient = 0.38\nmax_mass_ratio = 1.5")))
    files.append(_variant(tmp_path, "lagrange_with_limits", "jackdaw_constrained.toml",
                          lambda t: t + '\n[solver]\nmethod = "lagrange"\n'))
    files.append(_variant(tmp_path, "orbit_unreachable_inclination", "jackdaw_orbit.toml",
                          lambda t: re.sub(r"(?m)^inclination = .*$", "inclination = 1.0", t)
                          .replace("[launch]", "[launch]\nlatitude = 45.0", 1)))
    return files


def test_check_and_solve_agree_on_bad_input(tmp_path, capsys):
    """`sizing check` rejects (exit 2) exactly the files `sizing solve` rejects as bad input;
    both name the same faults."""
    refused = 0
    for f in _variants(tmp_path):
        rc_check = main(["check", str(f)])
        err_check = capsys.readouterr().err
        rc_solve = main(["solve", str(f)])
        err_solve = capsys.readouterr().err
        assert (rc_check == EXIT_BAD_INPUT) == (rc_solve == EXIT_BAD_INPUT), (f.name, rc_check, rc_solve)
        if rc_check == EXIT_BAD_INPUT:
            refused += 1
            assert err_check == err_solve, f.name
        else:
            assert rc_check == EXIT_OK
    assert refused == 5


def test_acceleration_in_g_is_not_read_as_grams(tmp_path, capsys):
    """"20 g" in an acceleration field names the fix; "20 g0" and "20 gee" are 20 x g0."""
    from sizing.units import to_si

    with pytest.raises(ValueError, match=re.escape("reads as a mass (g is the gram)")):
        to_si("20 g", "acceleration")
    assert to_si("20 g0", "acceleration") == pytest.approx(20 * G0, rel=1e-15)
    assert to_si("20 gee", "acceleration") == pytest.approx(20 * G0, rel=1e-15)
    assert to_si("2 gees", "acceleration") == pytest.approx(2 * G0, rel=1e-15)
    p = _variant(tmp_path, "g", "heron_apogee.toml",
                 lambda t: t.replace('apogee = "30 km"', 'apogee = "30 km"\nmax_acceleration = "20 g"'))
    assert main(["check", str(p)]) == EXIT_BAD_INPUT
    err = capsys.readouterr().err.strip()
    assert "mission.max_acceleration" in err and "'20 g0'" in err and len(err.splitlines()) == 1


def test_piped_output_is_not_cut_at_80_columns(capsys):
    """Output that is not a terminal (captured here, like a pipe) keeps full-width tables."""
    assert main(["solve", str(PROBLEMS / "jackdaw_three_stage.toml")]) == EXIT_OK
    lines = capsys.readouterr().out.splitlines()
    assert max(len(x) for x in lines) > 80
    caption = [x for x in lines if x.startswith("Gross mass column:")]
    assert len(caption) == 1 and caption[0].endswith("from the same factors.")


def test_version(capsys):
    from importlib.metadata import version

    assert main(["--version"]) == EXIT_OK
    assert capsys.readouterr().out.strip() == f"sizing (stagesizer) {version('stagesizer')}"


def _sheets(path):
    from openpyxl import load_workbook

    return load_workbook(path)


@pytest.mark.parametrize("src", ["jackdaw_constrained.toml", "heron_apogee.toml", "hobby_motor_two_stage.toml"])
def test_xlsx_frozen_header_number_formats_no_empty_sheet(tmp_path, src, capsys):
    out = tmp_path / "t.xlsx"
    assert main(["solve", str(PROBLEMS / src), "--out", str(out)]) == EXIT_OK
    wb = _sheets(out)
    names = wb.sheetnames
    for ws in wb.worksheets:
        assert ws.max_row >= 2, f"empty sheet {ws.title}"
        assert ws.freeze_panes == "A2", ws.title
        nums = [c for row in ws.iter_rows(min_row=2) for c in row
                if isinstance(c.value, float)]
        assert nums and all(c.number_format != "General" for c in nums), ws.title
    if src != "jackdaw_constrained.toml":
        assert "flight" in names
    if src.startswith("hobby"):
        assert "trade factors" not in names  # a motor stack has no trade factors


def test_csv_keeps_totals_and_trade_factors(tmp_path, capsys):
    import csv

    out = tmp_path / "t.csv"
    assert main(["solve", str(PROBLEMS / "jackdaw_constrained.toml"), "--out", str(out)]) == EXIT_OK
    rows = list(csv.reader(out.open(encoding="utf-8")))
    assert any(r and r[0] == "total" for r in rows)
    i = rows.index(["trade factors"])
    assert rows[i + 1][2] == "gross mass change at fixed payload [kg]"
    assert float(rows[i + 2][2]) > 1.0  # growth factor d m0 / d m_PL of a launcher
    assert ["design limits"] in rows and rows[-1][0] == "caution"


@pytest.mark.parametrize("cmd, src", [("solve", "jackdaw_constrained.toml"), ("solve", "heron_apogee.toml"),
                                      ("hobby", "hobby_motor_two_stage.toml")])
def test_markdown_prints_the_caution_once(tmp_path, cmd, src, capsys):
    out = tmp_path / "t.md"
    assert main([cmd, str(PROBLEMS / src), "--out", str(out)]) == EXIT_OK
    text = out.read_text(encoding="utf-8")
    assert text.count("Preliminary estimates only") == 1
    assert text.rstrip().splitlines()[-1].startswith("> Preliminary estimates only")
    if cmd == "solve" and not src.startswith("hobby"):
        assert CAUTION in text
