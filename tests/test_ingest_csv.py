"""CO2 and SpO2 CSV readers: validation rules with their error text, gzip, blanks, gaps.

Data line k is file line k + 1 (the header is line 1); the expected line numbers below follow
from the rows written by each test.
"""

from __future__ import annotations

import gzip

import numpy as np
import pytest
from test_ingest_support import co2_csv, make_session, spo2_csv

from sedreport.criteria import default_criteria
from sedreport.errors import SessionError
from sedreport.gaps import stream_gap_findings
from sedreport.ingest import load_session


def _gaps(session):
    """Gaps of a loaded session by the default criteria's gap rule (CO2 1 s, SpO2 10 s)."""
    return stream_gap_findings(session, default_criteria())


CO2_HEAD = "time,co2\n0,1\n0.04,2\n0.08,3\n"


@pytest.mark.parametrize(
    ("co2", "match"),
    [
        (CO2_HEAD + "0.12,abc\n", r"^T-0001/co2.csv:5: CO2 value 'abc' is not a finite number$"),
        (CO2_HEAD + "0.12,inf\n", r"^T-0001/co2.csv:5: CO2 value 'inf' is not a finite number$"),
        (CO2_HEAD + "0.06,4\n", r"^T-0001/co2.csv:5: time goes backwards: 0.06 s after 0.08 s$"),
        (CO2_HEAD + "0.08,4\n", r"^T-0001/co2.csv:5: duplicate time 0.08 s"),
        (
            CO2_HEAD + "0.12,200\n",
            r"^T-0001/co2.csv:5: CO2 200 mmHg is impossible \(allowed -5 to 150 mmHg\)$",
        ),
        (CO2_HEAD + "0.12,-10\n", r"^T-0001/co2.csv:5: CO2 -10 mmHg is impossible"),
        (CO2_HEAD + "2026-03-14T09:12:00.12+01:00,4\n", r"^T-0001/co2.csv:5: mixed time styles"),
        (CO2_HEAD + "soon,4\n", r"^T-0001/co2.csv:5: time 'soon' is neither seconds nor ISO 8601$"),
        (CO2_HEAD + ",4\n", r"^T-0001/co2.csv:5: time is empty$"),
        (CO2_HEAD + "0.12,4,5\n", r"^T-0001/co2.csv:5: 3 fields but the header has 2$"),
        ("time,co2\n", r"^T-0001/co2.csv: no data rows \(header only\)$"),
        ("", r"^T-0001/co2.csv: file is empty \(0 bytes\)$"),
        ("\n\n", r"^T-0001/co2.csv: file is empty \(no header line\)$"),
        ("t,co2\n0,1\n", r"^T-0001/co2.csv:1: missing column\(s\) time; header has t, co2$"),
        ("time,co2,co2\n0,1,1\n", r"^T-0001/co2.csv:1: repeated column name"),
        ("time,co2\n0,1\n", r"^T-0001/co2.csv:2: only 1 sample; a stream needs at least 2$"),
        ("time,co2\n0,1\n0.04,2\n0.08\x00,3\n", r"^T-0001/co2.csv:4: NUL character"),
        (
            "time,co2\n2026-03-14T09:12:00+01:00,1\n2026-03-14T09:12:01+01:00,2\n3,3\n",
            r"^T-0001/co2.csv:4: mixed time styles: '3' but line 2 uses ISO 8601$",
        ),
        (
            "time,co2\n2026-03-14T09:12:00+01:00,1\n2026-03-14T25:12:01+01:00,2\n",
            r"^T-0001/co2.csv:3: time '2026-03-14T25:12:01\+01:00' is not a valid ISO 8601",
        ),
    ],
)
def test_co2_rule(tmp_path, co2, match):
    folder = make_session(tmp_path, files={"co2.csv": co2})
    with pytest.raises(SessionError, match=match):
        load_session(folder)


def test_co2_kpa_impossible_names_both_units(tmp_path):
    # 30 kPa = 225 mmHg: above the 150 mmHg limit after conversion.
    folder = make_session(
        tmp_path, {"sources.co2.units": "kPa"}, files={"co2.csv": "time,co2\n0,5\n0.04,30\n"}
    )
    with pytest.raises(SessionError, match=r"co2.csv:3: CO2 30 kPa \(225.0 mmHg\) is impossible"):
        load_session(folder)


def test_co2_not_utf8_names_line(tmp_path):
    folder = make_session(tmp_path, files={"co2.csv": b"time,co2\n0,1\n0.04,2\xff\n"})
    with pytest.raises(SessionError, match=r"^T-0001/co2.csv:3: bytes that are not UTF-8 \(0xff"):
        load_session(folder)


@pytest.mark.parametrize(
    ("spo2", "match"),
    [
        (
            "time,spo2,pulse\n0,97,70\n1,101,70\n",
            r"^T-0001/spo2.csv:3: SpO2 101 % is impossible \(allowed 0 to 100\)$",
        ),
        ("time,spo2,pulse\n0,97,70\n1,-1,70\n", r"^T-0001/spo2.csv:3: SpO2 -1 % is impossible"),
        (
            "time,spo2,pulse\n0,97,70\n1,97,400\n",
            r"^T-0001/spo2.csv:3: pulse 400 /min is impossible \(allowed 0 to 300\)$",
        ),
        ("time,spo2,pulse\n0,97,70\n1,97,70\n1,96,70\n", r"^T-0001/spo2.csv:4: duplicate time 1 s"),
        (
            "time,spo2,pulse\n0,97,70\n1,ninety,70\n",
            r"^T-0001/spo2.csv:3: SpO2 value 'ninety' is not a finite number$",
        ),
        ("time,pulse\n0,70\n", r"^T-0001/spo2.csv:1: missing column\(s\) spo2"),
    ],
)
def test_spo2_rule(tmp_path, spo2, match):
    folder = make_session(tmp_path, files={"spo2.csv": spo2})
    with pytest.raises(SessionError, match=match):
        load_session(folder)


def test_blank_spo2_cells_are_kept_as_nan_and_counted(tmp_path):
    text = "time,spo2,pulse\n0,97,70\n1,,70\n2,,\n3,96,71\n"
    s = load_session(make_session(tmp_path, files={"spo2.csv": text}))
    assert np.isnan(s.spo2.spo2_pct).sum() == 2 and np.isnan(s.spo2.pulse_bpm).sum() == 1
    dropped = [f.message for f in s.findings if f.kind == "dropped"]
    assert "spo2: 2 blank SpO2 cells (no reading) kept as missing" in dropped
    assert "spo2: 1 blank pulse cells (no reading) kept as missing" in dropped


def test_spo2_without_pulse_column(tmp_path):
    s = load_session(make_session(tmp_path, files={"spo2.csv": "time,spo2\n0,97\n1,98\n"}))
    assert np.isnan(s.spo2.pulse_bpm).all() and s.spo2.spo2_pct.tolist() == [97.0, 98.0]


def test_blank_co2_cell_drops_row_counted(tmp_path):
    text = "time,co2\n0,1\n0.04,2\n0.08,\n0.12,3\n1.62,4\n1.66,4\n"
    s = load_session(make_session(tmp_path, files={"co2.csv": text}))
    assert s.co2.time_s.tolist() == [0.0, 0.04, 0.12, 1.62, 1.66]
    msgs = [f.message for f in s.findings if f.kind == "dropped"]
    assert msgs == ["co2: 1 rows with a blank CO2 cell dropped (first at line 4)"]
    gaps = [(f.start_s, f.end_s) for f in _gaps(s) if f.source == "co2"]
    assert gaps == [(0.12, 1.62)]  # step 1.5 s > 1 s; the 0.08 s hole is not a gap


def test_blank_lines_are_skipped_and_line_numbers_stay_true(tmp_path):
    text = "time,co2\n0,1\n\n0.04,2\n0.08,x\n"
    folder = make_session(tmp_path, files={"co2.csv": text})
    with pytest.raises(SessionError, match=r"co2.csv:5: CO2 value 'x'"):
        load_session(folder)
    s = load_session(
        make_session(tmp_path, files={"co2.csv": "time,co2\n0,1\n\n0.04,2\n"}, name="b")
    )
    assert s.co2.time_s.size == 2 and "co2: 1 blank lines skipped" in s.warnings


def test_gzip_by_suffix_and_by_magic(tmp_path):
    body = co2_csv().encode()
    a = make_session(
        tmp_path,
        {"sources.co2.file": "co2.csv.gz"},
        files={"co2.csv.gz": gzip.compress(body)},
        name="a",
    )
    b = make_session(tmp_path, files={"co2.csv": gzip.compress(body)}, name="b")
    sa, sb = load_session(a), load_session(b)
    assert sa.co2.time_s.size == sb.co2.time_s.size == 750
    assert sa.source("co2").reader == "csv.gz" and sb.source("co2").reader == "csv.gz"


def test_gz_that_is_not_gzip(tmp_path):
    folder = make_session(
        tmp_path, {"sources.co2.file": "co2.csv.gz"}, files={"co2.csv.gz": co2_csv()}
    )
    with pytest.raises(SessionError, match=r"^T-0001/co2.csv.gz: named .gz but is not a gzip file"):
        load_session(folder)


def test_truncated_gzip(tmp_path):
    data = gzip.compress(co2_csv().encode())[:-20]
    folder = make_session(tmp_path, {"sources.co2.file": "co2.csv.gz"}, files={"co2.csv.gz": data})
    with pytest.raises(SessionError, match=r"^T-0001/co2.csv.gz: broken gzip data"):
        load_session(folder)


def test_gaps_and_rates(tmp_path):
    # CO2 at 25 Hz with 3 s missing after 10 s; SpO2 at 1 Hz with 15 s missing after 5 s.
    t = np.arange(0, 30, 0.04)
    t = t[(t < 10.0 - 1e-9) | (t > 13.0 - 1e-9)]
    co2 = "time,co2\n" + "".join(f"{x:.2f},30\n" for x in t)
    spo2 = "time,spo2\n" + "".join(f"{x},97\n" for x in [0, 1, 2, 3, 4, 5, 20, 21, 22])
    s = load_session(make_session(tmp_path, files={"co2.csv": co2, "spo2.csv": spo2}))
    gaps = [(f.source, f.start_s, f.end_s) for f in _gaps(s)]
    assert gaps == [("co2", pytest.approx(9.96), pytest.approx(13.0)), ("spo2", 5.0, 20.0)]
    assert s.co2.sample_rate_hz == pytest.approx(25.0)
    assert s.source("co2").span_s == (0.0, pytest.approx(29.96))
    # Never interpolated: the samples are exactly those of the file.
    assert s.co2.time_s.size == t.size


def test_iso_times_with_offset_and_clock_offset(tmp_path):
    # 09:12:10+01:00 is 10 s after started; the same instant written in UTC is 08:12:10Z.
    text = (
        "time,co2\n2026-03-14T09:12:10+01:00,1\n2026-03-14T08:12:10.05Z,2\n"
        "2026-03-14T09:12:10.100+0100,3\n"
    )
    folder = make_session(tmp_path, {"sources.co2.clock_offset_s": -4}, files={"co2.csv": text})
    s = load_session(folder)
    np.testing.assert_allclose(s.co2.time_s, [6.0, 6.05, 6.1], atol=1e-9)
    assert s.source("co2").time_style == "iso8601" and s.source("co2").clock_offset_s == -4
    assert not [f for f in s.findings if f.kind == "naive_time"]


def test_naive_iso_takes_started_offset_with_warning(tmp_path):
    text = "time,spo2\n2026-03-14T09:12:00,97\n2026-03-14T09:12:01,97\n2026-03-14T09:12:02,97\n"
    s = load_session(make_session(tmp_path, files={"spo2.csv": text}))
    assert s.spo2.time_s.tolist() == [0.0, 1.0, 2.0]
    naive = [f for f in s.findings if f.kind == "naive_time"]
    assert len(naive) == 1 and "3 timestamps without UTC offset" in naive[0].message
    assert any("read in started's offset (+01:00)" in w for w in s.warnings)


def test_seconds_clock_offset(tmp_path):
    folder = make_session(
        tmp_path, {"sources.spo2.clock_offset_s": 2.5}, files={"spo2.csv": spo2_csv(5)}
    )
    assert load_session(folder).spo2.time_s.tolist() == [2.5, 3.5, 4.5, 5.5, 6.5]


def test_no_overlap(tmp_path):
    # SpO2 clock 2 h ahead: its samples miss every other source.
    folder = make_session(tmp_path, {"sources.spo2.clock_offset_s": 7200})
    s = load_session(folder)
    found = [f for f in s.findings if f.kind == "no_overlap"]
    assert [f.source for f in found] == ["spo2"]
    assert found[0].start_s == 7200.0


def test_sha256_of_bytes_as_stored(tmp_path):
    import hashlib

    body = gzip.compress(co2_csv().encode())
    folder = make_session(tmp_path, {"sources.co2.file": "co2.csv.gz"}, files={"co2.csv.gz": body})
    s = load_session(folder)
    assert s.source("co2").sha256 == hashlib.sha256(body).hexdigest()
    yaml_bytes = (folder / "session.yaml").read_bytes()
    assert s.source("session").sha256 == hashlib.sha256(yaml_bytes).hexdigest()
    assert {src.role for src in s.sources} == {"session", "co2", "spo2", "doses", "events"}


def test_co2_only_session_loads_with_missing_stream_warnings(tmp_path):
    s = load_session(make_session(tmp_path, drop=("spo2", "doses", "events")))
    assert s.co2 is not None and s.spo2 is None and s.doses == () and s.events == ()
    missing = sorted(f.source for f in s.findings if f.kind == "missing_stream")
    assert missing == ["doses", "events", "spo2"]
    for role in ("spo2", "doses", "events"):
        assert any(
            w.startswith(f"{role}: ") and f"sources.{role} not given" in w for w in s.warnings
        )


def test_no_co2_at_all_is_allowed_but_warned(tmp_path):
    s = load_session(make_session(tmp_path, drop=("co2",)))
    assert s.co2 is None
    assert any("no CO2 waveform" in w for w in s.warnings)


def test_units_missing_assumes_mmhg_with_warning(tmp_path):
    s = load_session(make_session(tmp_path, {"sources.co2.units": ...}))
    assert "co2: units not given in session.yaml; mmHg assumed" in s.warnings


def test_crlf_and_bom_and_spaces(tmp_path):
    text = "\ufefftime , CO2\r\n0, 1.5\r\n0.04 ,2\r\n"
    s = load_session(make_session(tmp_path, files={"co2.csv": text}))
    assert s.co2.co2_mmHg.tolist() == [1.5, 2.0]
