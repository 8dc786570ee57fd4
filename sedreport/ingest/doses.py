"""The dose log ``doses.csv``: ``time,drug,dose,unit,route``.

A mass unit (mg, mcg = ug = µg, g) is a bolus, stored as ``amount_mg``. A rate unit
``<mass>/h``, ``<mass>/min``, ``<mass>/kg/h`` or ``<mass>/kg/min`` sets that drug's infusion
rate from that time (0 stops it), stored as ``rate_mg_per_h``; weight-based rates need
``patient.weight_kg``. Times must not go backwards: nothing is re-sorted.
"""

from __future__ import annotations

import re

from sedreport.errors import SessionError
from sedreport.ingest._yaml import SourceSpec
from sedreport.ingest.csv_reader import column_numbers, column_text, read_csv_table
from sedreport.ingest.files import RawFile, decode_text
from sedreport.ingest.streams import Loaded, ReadContext, check_in_time_order
from sedreport.ingest.times import csv_source_info, parse_times, table_notes
from sedreport.session import Dose

#: mg per unit of mass. "ug", "µg" (micro sign) and "μg" (Greek mu) are spellings of mcg.
MASS_MG = {"g": 1000.0, "mg": 1.0, "mcg": 1e-3, "ug": 1e-3, "\u00b5g": 1e-3, "\u03bcg": 1e-3}
#: Hours per unit of time of a rate.
TIME_H = {"h": 1.0, "min": 1.0 / 60.0}
ACCEPTED = "mg, mcg (also ug, µg), g; rates <mass>/h, <mass>/min, <mass>/kg/h, <mass>/kg/min"
_RATE_RE = re.compile(r"^(?P<mass>[^/]+)/(?:(?P<kg>kg)/)?(?P<time>[^/]+)$")


def parse_dose_unit(unit: str) -> tuple[str, float, bool]:
    """Classify a dose unit.

    Returns
    -------
    (kind, factor, per_kg)
        ``("bolus", mg per unit, False)`` or ``("infusion", mg/h per unit, per_kg)``; for a
        per-kg rate the factor is mg/h per (unit x kg).

    Raises
    ------
    ValueError
        For a unit not in :data:`ACCEPTED`.
    """
    key = unit.strip().lower().replace(" ", "")
    if key in MASS_MG:
        return "bolus", MASS_MG[key], False
    m = _RATE_RE.match(key)
    if m and m["mass"] in MASS_MG and m["time"] in TIME_H:
        return "infusion", MASS_MG[m["mass"]] / TIME_H[m["time"]], m["kg"] is not None
    raise ValueError(unit)


def read_doses(raw: RawFile, spec: SourceSpec, ctx: ReadContext) -> Loaded:
    """Read ``doses.csv`` into :class:`sedreport.session.Dose` lines."""
    where = f"{ctx.session}/{raw.rel}"
    table = read_csv_table(
        decode_text(raw, ctx.session), where, ("time", "drug", "dose", "unit", "route")
    )
    times = parse_times(table, ctx.started, spec.clock_offset_s)
    check_in_time_order(times.time_s, table.at, "doses")
    amount = column_numbers(table, "dose", "dose")
    drugs, units, routes = (column_text(table, c) for c in ("drug", "unit", "route"))
    doses = [
        _dose(
            table.at(i),
            float(times.time_s[i]),
            drugs[i],
            float(amount[i]),
            units[i],
            routes[i],
            int(table.lines[i]),
            ctx.weight_kg,
        )
        for i in range(len(table))
    ]
    findings, warnings = table_notes("doses", table, times, ctx.started)
    info = csv_source_info(
        "doses",
        raw,
        times,
        spec.clock_offset_s,
        len(table),
        times.time_s,
        conversion=_conversion(doses, ctx.weight_kg),
    )
    return Loaded(tuple(doses), info, tuple(findings), tuple(warnings))


def _dose(
    at: str,
    time_s: float,
    drug: str,
    amount: float,
    unit: str,
    route: str,
    line: int,
    weight_kg: float | None,
) -> Dose:
    if not drug:
        raise SessionError(at, "drug is empty")
    if amount < 0:
        raise SessionError(at, f"negative dose {amount:g} {' '.join(unit.split())}")
    try:
        kind, factor, per_kg = parse_dose_unit(unit)
    except ValueError:
        raise SessionError(at, f"unknown dose unit {unit!r}; accepted: {ACCEPTED}") from None
    if per_kg and weight_kg is None:
        raise SessionError(
            at, f"weight-based rate {unit!r} needs patient.weight_kg in session.yaml"
        )
    scale = factor * (weight_kg if per_kg else 1.0)
    return Dose(
        time_s=time_s,
        drug=drug.lower(),
        dose=amount,
        unit=unit,
        route=route.lower(),
        kind=kind,
        amount_mg=amount * scale if kind == "bolus" else 0.0,
        rate_mg_per_h=amount * scale if kind == "infusion" else 0.0,
        line=line,
    )


def _conversion(doses: list[Dose], weight_kg: float | None) -> str:
    units = sorted({d.unit for d in doses if d.unit.strip().lower() not in ("mg", "mg/h")})
    if not units:
        return "none"
    text = f"{', '.join(units)} converted to mg (boluses) and mg/h (infusions)"
    if any("/kg/" in u.lower().replace(" ", "") for u in units):
        text += f" using weight {weight_kg:g} kg"
    return text
