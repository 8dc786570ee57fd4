"""CO2 and SpO2 streams from an EDF/EDF+ or WFDB recording, chosen by channel label.

Time: sample ``i`` of a channel sampled at ``fs`` Hz is at ``file_start + i / fs``; the file's
clock carries no UTC offset, so it is read in ``started``'s offset (with a warning), then
``clock_offset_s`` is added. A file without a start date/time is taken to start at ``started``.
CO2 units come from the channel's physical dimension (mmHg, kPa, %), falling back to
``session.yaml``'s ``units``.
"""

from __future__ import annotations

import numpy as np

from sedreport.ingest._yaml import SourceSpec
from sedreport.ingest.signal_files import Signal, SignalFile
from sedreport.ingest.streams import (
    CO2_LIMITS_MMHG,
    PULSE_LIMITS_BPM,
    SPO2_LIMITS_PCT,
    Loaded,
    ReadContext,
    check_range,
    check_waveform_rate,
    median_rate_hz,
)
from sedreport.ingest.times import edf_start_seconds
from sedreport.ingest.units import canonical_co2_unit, co2_to_mmhg
from sedreport.session import Capnogram, OximetryTrend, QualityFinding, SourceInfo


def _start_s(sig_file: SignalFile, spec: SourceSpec, ctx: ReadContext) -> tuple[float, list[str]]:
    notes = [f"{spec.role}: {n}" for n in sig_file.notes]
    if sig_file.start is None:
        return spec.clock_offset_s, notes
    notes.append(
        f"{spec.role}: {sig_file.reader.upper()} start time has no UTC offset; read in started's offset"
    )
    return edf_start_seconds(sig_file.start, ctx.started) + spec.clock_offset_s, notes


def _locator(where: str, sig: Signal, t0_s: float):
    return lambda i: f"{where}:channel {sig.label} sample {i + 1} (t={t0_s + i / sig.fs_hz:.2f} s)"


def _co2_unit(sig: Signal, spec: SourceSpec, warnings: list[str]) -> str:
    from_file = canonical_co2_unit(sig.unit) if sig.unit else None
    if from_file is None:
        unit = spec.units or "mmHg"
        warnings.append(
            f"co2: channel unit {sig.unit!r} not a CO2 unit; {unit} from session.yaml used"
            if spec.units
            else f"co2: channel unit {sig.unit!r} not a CO2 unit; mmHg assumed"
        )
        return unit
    if spec.units is not None and spec.units != from_file:
        warnings.append(
            f"co2: session.yaml says {spec.units}, the file header {from_file}; header used"
        )
    return from_file


def read_co2_signal(sig_file: SignalFile, spec: SourceSpec, ctx: ReadContext, rel: str) -> Loaded:
    """Capnogram from one channel of a recording; invalid (NaN) samples dropped and counted."""
    where = f"{ctx.session}/{rel}"
    sig = sig_file.pick(spec.channel, where, "sources.co2.channel")
    check_waveform_rate(sig.fs_hz, f"{where}:channel {sig.label}")
    t0_s, warnings = _start_s(sig_file, spec, ctx)
    unit = _co2_unit(sig, spec, warnings)
    mmhg, conversion = co2_to_mmhg(sig.data, unit, ctx.barometric_mmHg)
    check_range(mmhg, CO2_LIMITS_MMHG, "CO2", "mmHg", _locator(where, sig, t0_s))
    t = t0_s + np.arange(sig.data.size) / sig.fs_hz
    keep = np.isfinite(mmhg)
    findings = []
    if not keep.all():
        msg = f"co2: {int((~keep).sum())} invalid samples dropped"
        findings.append(QualityFinding("dropped", "co2", msg))
        warnings.append(msg)
    t = t[keep]
    median_rate_hz(t, _locator(where, sig, t0_s))  # at least two samples
    rate = sig.fs_hz  # the header's rate is exact; 1 / median step only restates it
    info = _info(sig_file, spec, rel, sig, unit, conversion, rate, t)
    return Loaded(Capnogram(t, mmhg[keep], rate), info, tuple(findings), tuple(warnings))


def read_spo2_signal(sig_file: SignalFile, spec: SourceSpec, ctx: ReadContext, rel: str) -> Loaded:
    """Oximeter trend from an SpO2 channel (and an optional pulse channel) of a recording.

    A pulse channel at another rate is taken at the nearest earlier-or-equal pulse sample of
    each SpO2 sample (sample-and-hold, no interpolation).
    """
    where = f"{ctx.session}/{rel}"
    sig = sig_file.pick(spec.channel, where, "sources.spo2.channel")
    t0_s, warnings = _start_s(sig_file, spec, ctx)
    locate = _locator(where, sig, t0_s)
    spo2 = sig.data
    check_range(spo2, SPO2_LIMITS_PCT, "SpO2", "%", locate)
    t = t0_s + np.arange(spo2.size) / sig.fs_hz
    conversion = "none"
    pulse = np.full(spo2.shape, np.nan)
    if spec.pulse_channel is not None:
        psig = sig_file.pick(spec.pulse_channel, where, "sources.spo2.pulse_channel")
        check_range(psig.data, PULSE_LIMITS_BPM, "pulse", "/min", _locator(where, psig, t0_s))
        idx = np.floor(np.arange(spo2.size) * (psig.fs_hz / sig.fs_hz) + 1e-9).astype(np.int64)
        inside = idx < psig.data.size
        pulse[inside] = psig.data[idx[inside]]
        if psig.fs_hz != sig.fs_hz:
            conversion = f"pulse {psig.fs_hz:g} Hz taken sample-and-hold at SpO2 {sig.fs_hz:g} Hz"
    findings = []
    counted = {"SpO2": spo2, "pulse": pulse} if spec.pulse_channel is not None else {"SpO2": spo2}
    for label, arr in counted.items():
        n_nan = int(np.isnan(arr).sum())
        if n_nan:
            msg = f"spo2: {n_nan} {label} samples without a reading kept as missing"
            findings.append(QualityFinding("dropped", "spo2", msg))
            warnings.append(msg)
    median_rate_hz(t, locate)  # at least two samples
    info = _info(sig_file, spec, rel, sig, "%", conversion, sig.fs_hz, t)
    return Loaded(OximetryTrend(t, spo2, pulse, sig.fs_hz), info, tuple(findings), tuple(warnings))


def _info(
    sig_file: SignalFile,
    spec: SourceSpec,
    rel: str,
    sig: Signal,
    unit: str,
    conversion: str,
    rate: float,
    t: np.ndarray,
) -> SourceInfo:
    """SourceInfo of a recording; the first file's hash (EDF file, WFDB header) is ``sha256``,
    every further file of the record (WFDB signal files) is in ``other_files``."""
    return SourceInfo(
        role=spec.role,
        file=rel,
        sha256=sig_file.files[0][1],
        reader=sig_file.reader,
        rows=int(sig.data.size),
        clock_offset_s=spec.clock_offset_s,
        units_in=unit,
        conversion=conversion,
        time_style=sig_file.reader,
        sample_rate_hz=rate,
        span_s=(float(t[0]), float(t[-1])),
        channel=sig.label,
        other_files=tuple(sig_file.files[1:]),
    )
