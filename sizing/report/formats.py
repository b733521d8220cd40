"""Cell formats shared by every printed and exported table (results in, text out).

One rule per kind of column: a column holds one quantity, so it gets one fixed
number of decimals chosen by the quantity's unit (`UNIT_FORMATS`): times to
0.1 s, altitudes to 1 m, speeds to 0.1 m/s, masses to 0.1 kg, angles to
0.01 deg. Stage-mass cells keep four significant figures instead (`"mass"`),
because one row there runs from tonnes down to grams.
"""

from __future__ import annotations

import math
import re
from typing import Any, Sequence

__all__ = ["UNIT_FORMATS", "fmt", "fmt_mass", "significant_decimals", "unit_of", "unit_format", "md_table"]

#: Display format of a column by the unit in its header (SI units as printed).
UNIT_FORMATS: dict[str, str] = {
    "s": ",.1f", "m": ",.0f", "km": ",.1f", "m/s": ",.1f", "kg": ",.1f", "deg": ".2f",
    "m/s^2": ",.2f", "Pa": ",.0f", "N": ",.0f", "%": ".1f", "-": ",.4f",
}


def fmt(value: Any, spec: str) -> str:
    """Format one cell: None as empty, non-finite as 'n/a', ``"mass"`` by `fmt_mass`."""
    if value is None:
        return ""
    if isinstance(value, float) and not math.isfinite(value):
        return "n/a"
    if spec.endswith("%"):
        return format(value, spec).replace("%", "")
    if spec == "mass":
        return fmt_mass(float(value))
    if spec.endswith("d"):
        return format(int(round(float(value))), spec)
    text = format(value, spec)
    if text.startswith("-") and not any(ch in "123456789" for ch in text):
        text = text[1:]  # -0.00 (a round-off residue) prints as 0.00
    return text


def fmt_mass(kg: float) -> str:
    """Masses keep four significant figures down to grams: 8,108.2 / 40.12 / 0.1234 kg."""
    a = abs(kg)
    if a >= 1000 or a == 0:
        return format(kg, ",.1f")
    if a >= 100:
        return format(kg, ".1f")
    if a >= 10:
        return format(kg, ".2f")
    if a >= 1:
        return format(kg, ".3f")
    return format(kg, ".4f")


def significant_decimals(largest: float, figures: int = 4) -> int:
    """Decimals that show `figures` significant figures of `largest` (>= 0): 8108.2 -> 0, 0.0755 -> 5."""
    return max(0, figures - 1 - math.floor(math.log10(abs(largest)))) if largest else 0


def unit_of(header: str) -> str | None:
    """The unit in a column header's last brackets: 'gross mass [kg]' -> 'kg'; None without one."""
    m = re.search(r"\[([^\[\]]*)\]\s*$", header)
    return m.group(1) if m else None


def unit_format(header: str, values: Sequence[Any] = ()) -> str:
    """The one display format of a column, chosen by its unit.

    A dimensionless column of whole numbers (counts, such as flights flown) shows
    no decimals; a mass column shows four significant figures of its largest
    value, with at least one and at most four decimals (2,088.0 / 475.6 / 209.0
    kg; 20.00 / 7.47 kg); a unit not in `UNIT_FORMATS` keeps six significant figures.

    Examples
    --------
    >>> unit_format("payload mass [kg]")
    ',.1f'
    >>> unit_format("flights [-]", [1641, 1702])
    ',d'
    >>> unit_format("mass [kg]", [2088.02, 475.59, 208.98])
    ',.1f'
    """
    unit = unit_of(header)
    nums = [v for v in values if isinstance(v, (int, float)) and not isinstance(v, bool)]
    if unit in ("-", None) and nums and all(float(v).is_integer() for v in nums):
        return ",d"
    finite = [abs(float(v)) for v in nums if math.isfinite(float(v))]
    if unit == "kg" and finite:
        return f",.{min(4, max(1, significant_decimals(max(finite))))}f"
    return UNIT_FORMATS.get(unit or "", ",.6g")


def md_table(header: Sequence[str], rows: Sequence[Sequence[str]], align_right_from: int = 1,
             *, right: Sequence[int] | None = None) -> str:
    """A Markdown table: text columns left, numbers right (the columns from `align_right_from` on,
    or exactly the columns in `right` when given)."""
    esc = lambda t: str(t).replace("|", "\\|")  # noqa: E731
    is_right = (lambda i: i in right) if right is not None else (lambda i: i >= align_right_from)  # noqa: E731
    out = ["| " + " | ".join(esc(h) for h in header) + " |"]
    out.append("|" + "|".join("---:" if is_right(i) else ":---" for i in range(len(header))) + "|")
    for r in rows:
        out.append("| " + " | ".join(esc(c) for c in r) + " |")
    return "\n".join(out)
