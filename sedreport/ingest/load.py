"""``load_session(folder)``: one session folder to one :class:`sedreport.session.Session`."""

from __future__ import annotations

from collections.abc import Iterable
from pathlib import Path

from sedreport.errors import SedreportError, SessionError
from sedreport.ingest._yaml import (
    OPTIONAL_ROLES,
    ROLES,
    SessionSpec,
    SourceSpec,
    load_yaml_text,
    parse_session_yaml,
)
from sedreport.ingest.bp import read_bp
from sedreport.ingest.csv_streams import read_co2_csv, read_spo2_csv
from sedreport.ingest.doses import read_doses
from sedreport.ingest.events import read_events
from sedreport.ingest.files import decode_text, read_file, resolve_inside
from sedreport.ingest.quality import find_no_overlap, missing_stream, rate_warnings
from sedreport.ingest.signal_files import read_edf_signals, read_wfdb_signals
from sedreport.ingest.signal_streams import read_co2_signal, read_spo2_signal
from sedreport.ingest.streams import Loaded, ReadContext
from sedreport.session import Session, SourceInfo

#: The first 8 bytes of every EDF/EDF+ header: version "0" padded with spaces (Kemp et al.,
#: Electroencephalogr Clin Neurophysiol 1992).
EDF_VERSION = b"0       "
_CSV_READERS = {
    "co2": read_co2_csv,
    "spo2": read_spo2_csv,
    "doses": read_doses,
    "events": read_events,
    "bp": read_bp,
}
_SIGNAL_READERS = {"co2": read_co2_signal, "spo2": read_spo2_signal}


def load_session(folder: str | Path) -> Session:
    """Read and check a ``sedreport-session/1`` folder (DESIGN.md "The session folder").

    Parameters
    ----------
    folder : str or Path
        The session folder holding ``session.yaml`` and the data files it names.

    Returns
    -------
    Session
        Every stream on the session clock (seconds since ``started``, after each source's
        ``clock_offset_s``), CO2 in mmHg, doses in mg and mg/h, with provenance (SHA-256 of
        every file), data-quality findings and warnings.

    Raises
    ------
    SessionError
        The first problem found, located as ``<session>/<file>:<line>`` or
        ``<session>/session.yaml:<field>``.

    Examples
    --------
    >>> import tempfile
    >>> from sedreport.demo import write_scenario
    >>> folder = write_scenario(tempfile.mkdtemp(), "quiet_colonoscopy", seed=0)  # invented
    >>> session = load_session(folder)
    >>> session.session_id, round(session.co2.sample_rate_hz), session.source("co2").units_in
    ('DEMO-COLON-01', 50, 'mmHg')
    """
    folder = Path(folder)
    name = folder.resolve().name or str(folder)
    if not folder.is_dir():
        raise SessionError(name, f"not a session folder ({folder} is not a directory)")
    yaml_path = folder / "session.yaml"
    if not yaml_path.is_file():
        raise SessionError(
            f"{name}/session.yaml", "file not found; a session folder needs session.yaml"
        )
    raw = read_file(yaml_path, "session.yaml", name)
    yaml_text = decode_text(raw, name)
    doc = load_yaml_text(yaml_text, f"{name}/session.yaml")
    spec = parse_session_yaml(doc, f"{name}/session.yaml")
    ctx = ReadContext(
        spec.session_id,
        folder.resolve(),
        spec.started,
        spec.barometric_mmHg,
        spec.patient.weight_kg,
    )
    loaded: dict[str, Loaded] = {}
    findings, warnings = [], list(spec.warnings)
    for role in ROLES + OPTIONAL_ROLES:
        if role in spec.sources:
            loaded[role] = _read_source(spec.sources[role], ctx)
            findings.extend(loaded[role].findings)
            warnings.extend(loaded[role].warnings)
        elif role not in OPTIONAL_ROLES:
            finding = missing_stream(role)
            findings.append(finding)
            warnings.append(f"{finding.message} (sources.{role} not given)")
    findings.extend(_stream_findings(loaded))
    warnings.extend(rate_warnings(loaded["co2"].data.sample_rate_hz) if "co2" in loaded else [])
    yaml_info = SourceInfo(
        role="session",
        file="session.yaml",
        sha256=raw.sha256,
        reader="yaml",
        rows=len(yaml_text.splitlines()),
    )
    return _session(spec, ctx, loaded, findings, warnings, yaml_info)


def _read_source(spec: SourceSpec, ctx: ReadContext) -> Loaded:
    field = f"{ctx.session}/session.yaml:sources.{spec.role}.file"
    path, rel = resolve_inside(ctx.folder, spec.file, field)
    lower = rel.lower()
    if spec.role in _SIGNAL_READERS:
        if lower.endswith((".hea", ".dat")) or (
            not path.exists() and path.with_name(path.name + ".hea").is_file()
        ):
            sig_file = read_wfdb_signals(ctx.folder, rel, ctx.session, f"{ctx.session}/{rel}")
            return _SIGNAL_READERS[spec.role](sig_file, spec, ctx, rel)
        raw = read_file(path, rel, ctx.session)
        if lower.endswith(".edf") or (
            raw.data[:8] == EDF_VERSION and not lower.endswith((".csv", ".gz"))
        ):
            sig_file = read_edf_signals(raw, f"{ctx.session}/{rel}")
            return _SIGNAL_READERS[spec.role](sig_file, spec, ctx, rel)
        return _CSV_READERS[spec.role](raw, spec, ctx)
    if lower.endswith((".edf", ".hea", ".dat")):
        raise SessionError(field, f"{spec.role} must be a CSV file (.csv or .csv.gz), got {rel!r}")
    return _CSV_READERS[spec.role](read_file(path, rel, ctx.session), spec, ctx)


def _stream_findings(loaded: dict[str, Loaded]) -> list:
    spans = {
        role: ld.info.span_s
        for role, ld in loaded.items()
        if ld.info.span_s is not None and role not in OPTIONAL_ROLES
    }
    return find_no_overlap(spans)


def _criteria(spec: SessionSpec, ctx: ReadContext) -> str | None:
    if spec.criteria is None:
        return None
    field = f"{ctx.session}/session.yaml:criteria"
    path, rel = resolve_inside(ctx.folder, spec.criteria, field)
    if not path.is_file():
        raise SessionError(field, f"criteria file {rel!r} not found in the session folder")
    return rel


def _session(
    spec: SessionSpec,
    ctx: ReadContext,
    loaded: dict[str, Loaded],
    findings: list,
    warnings: list,
    yaml_info: SourceInfo,
) -> Session:
    """Assemble the Session; ``sources`` starts with session.yaml (role ``session``, rows =
    its lines) so that every input file's SHA-256 travels with the data."""
    return Session(
        session_id=spec.session_id,
        started=spec.started,
        folder=ctx.folder,
        area=spec.area,
        procedure=spec.procedure,
        target_depth=spec.target_depth,
        patient=spec.patient,
        team=spec.team,
        oxygen=spec.oxygen,
        barometric_mmHg=spec.barometric_mmHg,
        criteria_file=_criteria(spec, ctx),
        blood_gas=spec.blood_gas,
        outcome=spec.outcome,
        assessment=spec.assessment,
        bp=loaded["bp"].data if "bp" in loaded else None,
        co2=loaded["co2"].data if "co2" in loaded else None,
        spo2=loaded["spo2"].data if "spo2" in loaded else None,
        doses=loaded["doses"].data if "doses" in loaded else (),
        events=loaded["events"].data if "events" in loaded else (),
        sources=(yaml_info, *(ld.info for ld in loaded.values())),
        findings=tuple(findings),
        warnings=tuple(dict.fromkeys(warnings)),
    )


def load_sessions(folders: Iterable[str | Path]) -> tuple[list[Session], list[str]]:
    """Load each folder; a folder that fails does not stop the others.

    Returns
    -------
    sessions : list of Session
        Every folder that loaded, in the order given.
    errors : list of str
        One ``<session>/<file>:<line>: <what>`` line per folder that failed.
    """
    good, errors = [], []
    for folder in folders:
        try:
            good.append(load_session(folder))
        except SedreportError as exc:
            errors.append(" ".join(str(exc).split()))
    return good, errors
