"""CO2 waveform (``time,co2``) and oximeter trend (``time,spo2[,pulse]``) from CSV / CSV.gz."""

from __future__ import annotations

import numpy as np

from sedreport.errors import SessionError
from sedreport.ingest._yaml import SourceSpec
from sedreport.ingest.csv_reader import CsvTable, column_numbers, read_csv_table
from sedreport.ingest.files import RawFile, decode_text
from sedreport.ingest.streams import (
    CO2_LIMITS_MMHG,
    PULSE_LIMITS_BPM,
    SPO2_LIMITS_PCT,
    Loaded,
    ReadContext,
    check_increasing,
    check_range,
    check_waveform_rate,
    median_rate_hz,
)
from sedreport.ingest.times import csv_source_info, parse_times, table_notes
from sedreport.ingest.units import co2_to_mmhg
from sedreport.session import Capnogram, OximetryTrend, QualityFinding


def _table(raw: RawFile, ctx: ReadContext, required: tuple[str, ...], optional=()) -> CsvTable:
    text = decode_text(raw, ctx.session)
    return read_csv_table(text, f"{ctx.session}/{raw.rel}", required, optional)


def read_co2_csv(raw: RawFile, spec: SourceSpec, ctx: ReadContext) -> Loaded:
    """Read the capnogram; CO2 converted to mmHg once (see :mod:`sedreport.ingest.units`).

    Blank CO2 cells drop their row (counted in a ``dropped`` finding); the resulting hole shows
    as a ``gap`` when longer than 1 s.
    """
    table = _table(raw, ctx, ("time", "co2"))
    times = parse_times(table, ctx.started, spec.clock_offset_s)
    check_increasing(times.time_s, table.at)
    values = column_numbers(table, "co2", "CO2 value", allow_blank=True)
    findings, warnings = table_notes("co2", table, times, ctx.started)
    unit = spec.units or "mmHg"
    if spec.units is None:
        warnings.append("co2: units not given in session.yaml; mmHg assumed")
    mmhg, conversion = co2_to_mmhg(values, unit, ctx.barometric_mmHg)
    _check_co2(mmhg, values, unit, table.at)
    keep = ~np.isnan(mmhg)
    if not keep.all():
        n = int((~keep).sum())
        msg = f"co2: {n} rows with a blank CO2 cell dropped (first at line {table.lines[~keep][0]})"
        findings.append(QualityFinding("dropped", "co2", msg))
        warnings.append(msg)
    t = times.time_s[keep]
    rate = median_rate_hz(t, table.at)
    check_waveform_rate(rate, table.where)
    info = csv_source_info(
        "co2",
        raw,
        times,
        spec.clock_offset_s,
        len(table),
        t,
        units_in=unit,
        conversion=conversion,
        sample_rate_hz=rate,
    )
    return Loaded(Capnogram(t, mmhg[keep], rate), info, tuple(findings), tuple(warnings))


def _check_co2(mmhg: np.ndarray, given: np.ndarray, unit: str, locate) -> None:
    lo, hi = CO2_LIMITS_MMHG
    with np.errstate(invalid="ignore"):
        bad = (mmhg < lo) | (mmhg > hi)
    if bad.any():
        row = int(np.argmax(bad))
        shown = (
            f"{given[row]:g} {unit} ({mmhg[row]:.1f} mmHg)"
            if unit != "mmHg"
            else f"{mmhg[row]:g} mmHg"
        )
        raise SessionError(
            locate(row), f"CO2 {shown} is impossible (allowed {lo:g} to {hi:g} mmHg)"
        )


def read_spo2_csv(raw: RawFile, spec: SourceSpec, ctx: ReadContext) -> Loaded:
    """Read the oximeter trend; blank SpO2/pulse cells stay NaN and are counted."""
    table = _table(raw, ctx, ("time", "spo2"), ("pulse",))
    times = parse_times(table, ctx.started, spec.clock_offset_s)
    check_increasing(times.time_s, table.at)
    spo2 = column_numbers(table, "spo2", "SpO2 value", allow_blank=True)
    check_range(spo2, SPO2_LIMITS_PCT, "SpO2", "%", table.at)
    has_pulse = "pulse" in table.frame.columns
    if has_pulse:
        pulse = column_numbers(table, "pulse", "pulse value", allow_blank=True)
        check_range(pulse, PULSE_LIMITS_BPM, "pulse", "/min", table.at)
    else:
        pulse = np.full(spo2.shape, np.nan)
    findings, warnings = table_notes("spo2", table, times, ctx.started)
    blanks = {"SpO2": spo2, "pulse": pulse} if has_pulse else {"SpO2": spo2}
    for label, arr in blanks.items():
        n_blank = int(np.isnan(arr).sum())
        if n_blank:
            msg = f"spo2: {n_blank} blank {label} cells (no reading) kept as missing"
            findings.append(QualityFinding("dropped", "spo2", msg))
            warnings.append(msg)
    t = times.time_s
    rate = median_rate_hz(t, table.at)
    info = csv_source_info(
        "spo2",
        raw,
        times,
        spec.clock_offset_s,
        len(table),
        t,
        units_in="%",
        conversion="none",
        sample_rate_hz=rate,
    )
    return Loaded(OximetryTrend(t, spo2, pulse, rate), info, tuple(findings), tuple(warnings))
