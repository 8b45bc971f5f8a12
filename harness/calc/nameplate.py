"""The rating-plate fields a certificate states beyond the electrical ratings, and their checks.

Cooling codes (IEC 60076-2, clause 3: four letters for liquid-immersed units — internal medium
O mineral oil or ester/liquid K, L; its circulation N, F, D; external medium A air, W water;
its circulation N, F — recalled from memory) and, for dry-type units (IEC 60076-11: AN, AF),
two letters. Thermal classes of IEC 60085 (recalled from memory: 90, 105, 120, 130, 155, 180,
200, 220, 250). A standard's edition is written as the standard's number and its year
("IEC 60076-1:2011", "IEEE C57.12.00-2021").
"""

from __future__ import annotations

import datetime as dt
import re
from typing import Any, Literal

Problem = tuple[tuple[Any, ...], str, Any]

LIQUID_COOLING = re.compile(r"[OKL][NFD][AW][NF]")
DRY_COOLING = re.compile(r"A[NF]")
THERMAL_CLASSES = (90, 105, 120, 130, 155, 180, 200, 220, 250)
ThermalClass = Literal[90, 105, 120, 130, 155, 180, 200, 220, 250]
EDITION = re.compile(r"(?P<code>IEC 60076-\d{1,2}|IEEE (Std )?C57\.12\.\d{2})\s*[:-]\s*(?P<year>(19|20)\d{2})")
FAMILY = {"iec": "IEC", "ieee": "IEEE"}


def cooling_problems(cooling: str | None, insulation: str | None) -> list[Problem]:
    if cooling is None:
        return []
    code = cooling.strip().upper()
    liquid, dry = LIQUID_COOLING.fullmatch(code), DRY_COOLING.fullmatch(code)
    if not (liquid or dry):
        return [(("cooling",), f"'{cooling}' is not a cooling code: four letters for a liquid-immersed unit "
                               "(e.g. ONAN, ONAF, OFAF, KNAN; IEC 60076-2) or AN/AF for a dry-type unit "
                               "(IEC 60076-11)", cooling)]
    if insulation == "dry-type" and liquid:
        return [(("cooling",), f"{code} is a liquid-immersed cooling code, but insulation is dry-type (AN or AF)", cooling)]
    if insulation == "liquid-immersed" and dry:
        return [(("cooling",), f"{code} is a dry-type cooling code, but insulation is liquid-immersed", cooling)]
    return []


def year_problems(year: int | None, today: dt.date | None = None) -> list[Problem]:
    this_year = (today or dt.date.today()).year
    if year is not None and not 1900 <= year <= this_year:
        return [(("year_of_manufacture",), f"{year} is not a year of manufacture (1900 to {this_year})", year)]
    return []


def edition_problems(edition: str | None, standard: str) -> list[Problem]:
    """The edition must name a transformer standard with its year, of the family the record is
    evaluated to (an IEEE edition on an IEC evaluation is a contradiction on the certificate)."""
    if edition is None:
        return []
    found = EDITION.fullmatch(edition.strip())
    where = ("transformer", "standard_edition")
    if found is None:
        return [(where, f"'{edition}' is not a standard and its year, e.g. IEC 60076-1:2011 or "
                        "IEEE C57.12.00-2021", edition)]
    if not found["code"].startswith(FAMILY.get(standard, "?")):
        return [(where, f"{found['code']} is not the standard the results are judged by "
                        f"(standard: {standard})", edition)]
    return []
