"""EDF/EDF+ (edfio) and WFDB (wfdb) recordings as co2/spo2 sources, chosen by channel label."""

from __future__ import annotations

import datetime as dt
import shutil
import sys
from pathlib import Path

import edfio
import numpy as np
import pytest
import wfdb
from test_ingest_support import make_session

from sedreport.errors import SessionError
from sedreport.ingest import load_session


def _pyedflib_test_generator() -> Path:
    """pyedflib's shipped EDF+ test file (600 s, 200 Hz channels, EDF+ annotations)."""
    import pyedflib

    root = Path(pyedflib.__file__).parent
    hits = sorted(root.glob("**/test_generator.edf"))
    assert hits, f"pyedflib ({root}) ships no test_generator.edf: a broken [test] install"
    return hits[0]


def _capnogram(fs_hz: float, duration_s: float) -> tuple[np.ndarray, np.ndarray]:
    t = np.arange(0.0, duration_s, 1.0 / fs_hz)
    return t, np.where((t * 12.0 / 60.0) % 1.0 < 0.45, 38.0, 0.4)


def test_pyedflib_test_generator_as_co2(tmp_path):
    # Third-party file shipped in the pyedflib package (pyEDFlib by Nahrstaedt and Lee-Messer,
    # authors from memory): an EDF+C recording started 2011-04-04 12:57:02, 600 s long, every
    # channel 200 Hz, with EDF+ annotations. Its "pulse" test channel (0-100 uV) stands in for a CO2 channel.
    folder = make_session(
        tmp_path,
        {
            "started": "2011-04-04T12:57:02+02:00",
            "sources.co2": {"file": "gen.edf", "channel": "PULSE"},
        },
        drop=("spo2", "doses", "events"),
    )
    (folder / "co2.csv").unlink()
    shutil.copy(_pyedflib_test_generator(), folder / "gen.edf")
    s = load_session(folder)
    info = s.source("co2")
    assert info.reader == "edf" and info.channel == "pulse"
    assert s.co2.sample_rate_hz == 200.0 and info.rows == 600 * 200
    assert s.co2.time_s[0] == 0.0
    assert s.co2.time_s[-1] == pytest.approx(600.0 - 1 / 200.0)
    assert "co2: channel unit 'uV' not a CO2 unit; mmHg assumed" in s.warnings


def test_unknown_channel_lists_labels(tmp_path):
    folder = make_session(
        tmp_path, {"sources.co2": {"file": "gen.edf", "channel": "CO2"}}, drop=("spo2",)
    )
    shutil.copy(_pyedflib_test_generator(), folder / "gen.edf")
    with pytest.raises(
        SessionError,
        match=r"^T-0001/gen.edf: no channel labelled 'CO2'; channels present: 'squarewave', 'ramp'",
    ):
        load_session(folder)


def test_edf_written_by_edfio_reads_back(tmp_path):
    # Round trip within the files' digital resolution: (physical range) / (digital range).
    t, co2 = _capnogram(100.0, 60.0)
    co2_kpa = co2 * 133.322387415 / 1000
    signals = [
        edfio.EdfSignal(
            co2_kpa, 100, label="CO2", physical_dimension="kPa", physical_range=(-1.0, 15.0)
        ),
        edfio.EdfSignal(
            np.full(60, 97.0), 1, label="SpO2", physical_dimension="%", physical_range=(0, 100)
        ),
        edfio.EdfSignal(
            np.linspace(60, 80, 60),
            1,
            label="Pulse",
            physical_dimension="bpm",
            physical_range=(0, 300),
        ),
    ]
    edf = edfio.Edf(
        signals,
        starttime=dt.time(9, 12, 5),
        recording=edfio.Recording(startdate=dt.date(2026, 3, 14)),
    )
    folder = make_session(
        tmp_path,
        {
            "sources.co2": {
                "file": "rec.edf",
                "channel": "co2",
                "clock_offset_s": -2,
                "units": "mmHg",
            },
            "sources.spo2": {"file": "rec.edf", "channel": "SpO2", "pulse_channel": "pulse"},
        },
    )
    edf.write(folder / "rec.edf")
    s = load_session(folder)
    step_kpa = 16.0 / 65535
    assert np.abs(s.co2.co2_mmHg - co2).max() <= step_kpa * 1000 / 133.322387415
    assert s.source("co2").units_in == "kPa"  # from the channel header, yaml said mmHg
    assert any("header used" in w for w in s.warnings)
    # EDF start 09:12:05 in started's offset = 5 s after started; clock_offset_s -2 -> 3 s.
    assert s.co2.time_s[0] == pytest.approx(3.0) and s.spo2.time_s[0] == pytest.approx(5.0)
    assert np.abs(s.spo2.pulse_bpm - np.linspace(60, 80, 60)).max() <= 300 / 65535
    assert s.spo2.sample_rate_hz == 1.0 and s.co2.sample_rate_hz == 100.0


def test_edf_impossible_value_names_channel_and_sample(tmp_path):
    co2 = np.full(200, 30.0)
    co2[150] = 180.0
    edf = edfio.Edf(
        [
            edfio.EdfSignal(
                co2, 100, label="CO2", physical_dimension="mmHg", physical_range=(-10, 200)
            )
        ],
        starttime=dt.time(9, 12, 0),
        recording=edfio.Recording(startdate=dt.date(2026, 3, 14)),
    )
    folder = make_session(tmp_path, {"sources.co2": {"file": "rec.edf", "channel": "CO2"}})
    edf.write(folder / "rec.edf")
    with pytest.raises(
        SessionError,
        match=r"^T-0001/rec.edf:channel CO2 sample 151 \(t=1.50 s\): CO2 18\d.* mmHg is impossible",
    ):
        load_session(folder)


def test_broken_edf(tmp_path):
    folder = make_session(
        tmp_path,
        {"sources.co2": {"file": "rec.edf", "channel": "CO2"}},
        files={"rec.edf": b"0       " + b"garbage" * 10},
    )
    with pytest.raises(SessionError, match=r"^T-0001/rec.edf: not a readable EDF file"):
        load_session(folder)


def _write_wfdb(folder: Path, co2: np.ndarray) -> None:
    wfdb.wrsamp(
        "rw",
        fs=50,
        units=["mmHg", "%"],
        sig_name=["CO2", "SpO2"],
        p_signal=np.column_stack([co2, np.full(co2.size, 97.0)]),
        fmt=["16", "16"],
        adc_gain=[100.0, 100.0],
        baseline=[0, 0],
        write_dir=str(folder),
        base_datetime=dt.datetime(2026, 3, 14, 9, 12, 10),
    )


def test_wfdb_written_by_wrsamp_reads_back(tmp_path):
    t, co2 = _capnogram(50.0, 60.0)
    folder = make_session(
        tmp_path,
        {
            "sources.co2": {"file": "rw.hea", "channel": "CO2"},
            "sources.spo2": {"file": "rw", "channel": "SpO2"},
        },
    )
    _write_wfdb(folder, co2)
    s = load_session(folder)
    # Gain 100 per mmHg: a resolution of 0.01 mmHg; the plateau values are exact in it.
    assert np.abs(s.co2.co2_mmHg - co2).max() <= 0.005
    assert s.co2.time_s[0] == pytest.approx(10.0) and s.co2.sample_rate_hz == 50.0
    info = s.source("co2")
    assert (
        info.reader == "wfdb"
        and info.file == "rw.hea"
        and [f for f, _ in info.other_files] == ["rw.dat"]
    )
    assert s.spo2.spo2_pct[0] == pytest.approx(97.0) and np.isnan(s.spo2.pulse_bpm).all()


def test_wfdb_missing_gives_install_hint(tmp_path, monkeypatch):
    t, co2 = _capnogram(50.0, 10.0)
    folder = make_session(tmp_path, {"sources.co2": {"file": "rw.hea", "channel": "CO2"}})
    _write_wfdb(folder, co2)
    monkeypatch.setitem(sys.modules, "wfdb", None)
    with pytest.raises(
        SessionError,
        match=r"WFDB support needs the optional extra: pip install 'sedreport\[wfdb\]'",
    ):
        load_session(folder)


def test_wfdb_signal_file_linked_outside_folder(tmp_path):
    t, co2 = _capnogram(50.0, 10.0)
    folder = make_session(tmp_path, {"sources.co2": {"file": "rw.hea", "channel": "CO2"}})
    _write_wfdb(folder, co2)
    (folder / "rw.dat").rename(tmp_path / "elsewhere.dat")
    (folder / "rw.dat").symlink_to(tmp_path / "elsewhere.dat")
    with pytest.raises(SessionError, match=r"'rw.dat' resolves outside the session folder"):
        load_session(folder)


def test_wfdb_header_naming_a_parent_path_is_refused(tmp_path):
    # wfdb's own header grammar already refuses '../rw.dat'; either way: a clean SessionError.
    t, co2 = _capnogram(50.0, 10.0)
    folder = make_session(tmp_path, {"sources.co2": {"file": "rw.hea", "channel": "CO2"}})
    _write_wfdb(folder, co2)
    hea = (folder / "rw.hea").read_text().replace("rw.dat", "../rw.dat")
    (folder / "rw.hea").write_text(hea)
    with pytest.raises(SessionError, match=r"^T-0001/rw.hea: "):
        load_session(folder)


def test_wfdb_without_base_time_starts_at_started(tmp_path):
    t, co2 = _capnogram(50.0, 10.0)
    folder = make_session(
        tmp_path, {"sources.co2": {"file": "r2.hea", "channel": "CO2", "clock_offset_s": 1.5}}
    )
    wfdb.wrsamp(
        "r2",
        fs=50,
        units=["mmHg"],
        sig_name=["CO2"],
        p_signal=co2[:, None],
        fmt=["16"],
        adc_gain=[100.0],
        baseline=[0],
        write_dir=str(folder),
    )
    s = load_session(folder)
    assert s.co2.time_s[0] == 1.5 and s.co2.time_s[1] == pytest.approx(1.52)
    assert "co2: record has no base date/time; taken to start at started" in s.warnings


def test_edf_pulse_at_another_rate_is_sample_and_hold(tmp_path):
    # SpO2 at 2 Hz, pulse at 1 Hz: SpO2 sample k takes pulse sample floor(k / 2).
    pulse = np.arange(60.0, 70.0)
    signals = [
        edfio.EdfSignal(
            np.full(20, 96.0), 2, label="SpO2", physical_dimension="%", physical_range=(0, 100)
        ),
        edfio.EdfSignal(pulse, 1, label="HR", physical_dimension="bpm", physical_range=(0, 300)),
    ]
    edf = edfio.Edf(
        signals,
        starttime=dt.time(9, 12, 0),
        recording=edfio.Recording(startdate=dt.date(2026, 3, 14)),
    )
    folder = make_session(
        tmp_path, {"sources.spo2": {"file": "ox.edf", "channel": "spo2", "pulse_channel": "hr"}}
    )
    edf.write(folder / "ox.edf")
    s = load_session(folder)
    assert s.spo2.sample_rate_hz == 2.0
    assert np.allclose(s.spo2.pulse_bpm, np.repeat(pulse, 2), atol=300 / 65535)
    assert s.source("spo2").conversion == "pulse 1 Hz taken sample-and-hold at SpO2 2 Hz"


def test_anonymised_edf_start_date_starts_at_started(tmp_path):
    # edfio writes "Startdate X X X X" when no recording date is given (EDF+ anonymisation).
    sig = edfio.EdfSignal(
        np.full(7500, 5.0), 250, label="CO2", physical_dimension="mmHg", physical_range=(-10, 100)
    )
    edf = edfio.Edf([sig], starttime=dt.time(9, 0, 0))
    folder = make_session(tmp_path, {"sources.co2": {"file": "a.edf", "channel": "CO2"}})
    edf.write(folder / "a.edf")
    s = load_session(folder)
    assert s.co2.time_s[0] == 0.0
    assert any(w.startswith("co2: start date not usable") for w in s.warnings)
    # above the 10-200 Hz of DESIGN.md is kept with a warning (below it is refused)
    assert "co2: sample rate 250 Hz is outside the expected 10-200 Hz" in s.warnings
