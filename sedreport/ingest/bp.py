"""Non-invasive blood pressure ``bp.csv``: ``time,systolic,diastolic[,mean]`` in mmHg.

Rules (DESIGN.md "The session folder"):

- times as in every other file (seconds or ISO 8601, ``clock_offset_s``), strictly increasing;
- a row with a blank systolic or diastolic cell is a cuff cycle without a reading: it is
  dropped and counted in a ``dropped`` finding (never silently);
- a value outside :data:`BP_LIMITS_MMHG`, a systolic not above its diastolic, or a mean outside
  diastolic..systolic is an error naming the file and line (a wrong file is refused, not
  partly read);
- a blank or absent mean is computed as diastolic + (systolic - diastolic) / 3, the usual
  one-third pulse-pressure approximation (common practice).
"""

from __future__ import annotations

import numpy as np

from sedreport.errors import SessionError
from sedreport.ingest._yaml import SourceSpec
from sedreport.ingest.csv_reader import column_numbers, read_csv_table
from sedreport.ingest.files import RawFile, decode_text
from sedreport.ingest.streams import Loaded, ReadContext, check_increasing, check_range
from sedreport.ingest.times import csv_source_info, parse_times, table_notes
from sedreport.session import BloodPressure, QualityFinding

#: Possible non-invasive pressures, mmHg, inclusive (plausibility limits, common practice).
BP_LIMITS_MMHG = (20.0, 300.0)


def estimated_mean_mmHg(systolic_mmHg: np.ndarray, diastolic_mmHg: np.ndarray) -> np.ndarray:
    """Mean arterial pressure as diastolic + pulse pressure / 3, mmHg (common practice).

    Examples
    --------
    >>> float(estimated_mean_mmHg(np.array([120.0]), np.array([80.0]))[0])
    93.33333333333333
    """
    return diastolic_mmHg + (systolic_mmHg - diastolic_mmHg) / 3.0


def read_bp(raw: RawFile, spec: SourceSpec, ctx: ReadContext) -> Loaded:
    """Read ``bp.csv`` into a :class:`sedreport.session.BloodPressure` (rules above)."""
    where = f"{ctx.session}/{raw.rel}"
    table = read_csv_table(
        decode_text(raw, ctx.session), where, ("time", "systolic", "diastolic"), ("mean",)
    )
    times = parse_times(table, ctx.started, spec.clock_offset_s)
    check_increasing(times.time_s, table.at)
    sys_ = column_numbers(table, "systolic", "systolic value", allow_blank=True)
    dia = column_numbers(table, "diastolic", "diastolic value", allow_blank=True)
    if "mean" in table.frame.columns:
        mean = column_numbers(table, "mean", "mean value", allow_blank=True)
    else:
        mean = np.full(sys_.shape, np.nan)
    for label, arr in (("systolic", sys_), ("diastolic", dia), ("mean", mean)):
        check_range(arr, BP_LIMITS_MMHG, f"{label} pressure", "mmHg", table.at)
    _check_order(sys_, dia, mean, table.at)
    findings, warnings = table_notes("bp", table, times, ctx.started)
    keep = ~(np.isnan(sys_) | np.isnan(dia))
    if not keep.all():
        n = int((~keep).sum())
        first = int(table.lines[~keep][0])
        msg = (
            f"bp: {n} rows without a systolic or diastolic reading dropped (first at line {first})"
        )
        findings.append(QualityFinding("dropped", "bp", msg))
        warnings.append(msg)
    mean = np.where(np.isnan(mean), estimated_mean_mmHg(sys_, dia), mean)
    t = times.time_s[keep]
    if not t.size:
        raise SessionError(where, "no row holds both a systolic and a diastolic reading")
    info = csv_source_info(
        "bp",
        raw,
        times,
        spec.clock_offset_s,
        len(table),
        t,
        units_in="mmHg",
        conversion="none" if "mean" in table.frame.columns else "mean = dia + (sys - dia)/3",
    )
    data = BloodPressure(t, sys_[keep], dia[keep], mean[keep])
    return Loaded(data, info, tuple(findings), tuple(warnings))


def _check_order(sys_: np.ndarray, dia: np.ndarray, mean: np.ndarray, locate) -> None:
    """Raise on the first row whose systolic is not above its diastolic, or whose mean is not
    between them (rows with a blank cell are not compared)."""
    with np.errstate(invalid="ignore"):
        bad = sys_ <= dia
        bad_mean = (mean < dia) | (mean > sys_)
    if bad.any():
        row = int(np.argmax(bad))
        raise SessionError(
            locate(row),
            f"systolic {sys_[row]:g} mmHg is not above diastolic {dia[row]:g} mmHg",
        )
    if bad_mean.any():
        row = int(np.argmax(bad_mean))
        raise SessionError(
            locate(row),
            f"mean {mean[row]:g} mmHg is outside diastolic-systolic "
            f"({dia[row]:g}-{sys_[row]:g} mmHg)",
        )
