"""Dose and event logs: units, infusions, cumulative amounts (hand arithmetic), vocabulary."""

from __future__ import annotations

import pytest
from test_ingest_support import make_session

from sedreport.errors import SessionError
from sedreport.ingest import load_session
from sedreport.ingest.doses import parse_dose_unit
from sedreport.session import KNOWN_EVENTS

HEAD = "time,drug,dose,unit,route\n"


@pytest.mark.parametrize(
    ("unit", "kind", "factor", "per_kg"),
    [
        ("mg", "bolus", 1.0, False),
        ("mcg", "bolus", 1e-3, False),
        ("ug", "bolus", 1e-3, False),
        ("\u00b5g", "bolus", 1e-3, False),
        ("g", "bolus", 1000.0, False),
        ("mg/h", "infusion", 1.0, False),
        ("mg/min", "infusion", 60.0, False),
        ("mcg/kg/min", "infusion", 0.06, True),
        ("mg/kg/h", "infusion", 1.0, True),
    ],
)
def test_dose_units(unit, kind, factor, per_kg):
    k, f, p = parse_dose_unit(unit)
    assert (k, p) == (kind, per_kg) and f == pytest.approx(factor, rel=1e-12)


def test_cumulative_with_boluses_and_infusions(tmp_path):
    # Hand arithmetic (weight 72 kg):
    #   fentanyl 50 mcg at 0 s = 0.05 mg; 25 mcg at 600 s = 0.025 mg.
    #   propofol 0.1 mg/kg/min = 7.2 mg/min = 432 mg/h from 60 s, 50 mg/h from 660 s, stop at 1260 s.
    #   propofol at 1800 s = 432 * 600/3600 + 50 * 600/3600 = 72 + 8.3333 = 80.3333 mg
    #   propofol at 360 s  = 432 * 300/3600 = 36 mg; plus a 20 mg bolus at 300 s = 56 mg.
    text = HEAD + (
        "0,fentanyl,50,mcg,iv\n60,propofol,0.1,mg/kg/min,iv\n300,Propofol,20,mg,IV\n"
        "600,fentanyl,25,ug,iv\n660,propofol,50,mg/h,iv\n1260,propofol,0,mg/h,iv\n"
    )
    s = load_session(make_session(tmp_path, files={"doses.csv": text}))
    assert s.drugs == ("fentanyl", "propofol")
    assert s.cumulative_mg("fentanyl", 599.0) == pytest.approx(0.05)
    assert s.cumulative_mg("fentanyl", 600.0) == pytest.approx(0.075)
    assert s.cumulative_mg("propofol", 360.0) == pytest.approx(56.0)
    assert s.cumulative_mg("propofol", 1800.0) == pytest.approx(20 + 72 + 50 * 600 / 3600)
    infusion = s.doses[1]
    assert infusion.kind == "infusion" and infusion.rate_mg_per_h == pytest.approx(432.0)
    assert infusion.line == 3 and s.doses[2].route == "iv" and s.doses[2].amount_mg == 20.0
    assert "using weight 72 kg" in s.source("doses").conversion


@pytest.mark.parametrize(
    ("body", "match"),
    [
        ("0,propofol,-20,mg,iv\n", r"^T-0001/doses.csv:2: negative dose -20 mg$"),
        (
            "0,propofol,20,mg/fortnight,iv\n",
            r"^T-0001/doses.csv:2: unknown dose unit 'mg/fortnight'; accepted: mg, mcg",
        ),
        ("0,propofol,2,tablets,oral\n", r"^T-0001/doses.csv:2: unknown dose unit 'tablets'"),
        ("0,propofol,2,mL/h,iv\n", r"doses.csv:2: unknown dose unit 'mL/h'"),
        ("0,propofol,lots,mg,iv\n", r"^T-0001/doses.csv:2: dose 'lots' is not a finite number$"),
        ("0,propofol,,mg,iv\n", r"^T-0001/doses.csv:2: dose is empty$"),
        ("0,,20,mg,iv\n", r"^T-0001/doses.csv:2: drug is empty$"),
        (
            "10,propofol,20,mg,iv\n5,propofol,20,mg,iv\n",
            r"^T-0001/doses.csv:3: time goes backwards",
        ),
    ],
)
def test_dose_rule(tmp_path, body, match):
    folder = make_session(tmp_path, files={"doses.csv": HEAD + body})
    with pytest.raises(SessionError, match=match):
        load_session(folder)


def test_weight_based_rate_needs_weight(tmp_path):
    folder = make_session(
        tmp_path,
        {"patient.weight_kg": ...},
        files={"doses.csv": HEAD + "0,propofol,50,mg,iv\n5,propofol,100,mcg/kg/min,iv\n"},
    )
    with pytest.raises(
        SessionError,
        match=r"^T-0001/doses.csv:3: weight-based rate 'mcg/kg/min' needs patient.weight_kg",
    ):
        load_session(folder)


def test_doses_missing_column(tmp_path):
    folder = make_session(tmp_path, files={"doses.csv": "time,drug,dose,route\n0,propofol,20,iv\n"})
    with pytest.raises(SessionError, match=r"^T-0001/doses.csv:1: missing column\(s\) unit"):
        load_session(folder)


def test_equal_dose_times_are_allowed(tmp_path):
    s = load_session(
        make_session(
            tmp_path, files={"doses.csv": HEAD + "5,midazolam,1,mg,iv\n5,fentanyl,50,mcg,iv\n"}
        )
    )
    assert [d.drug for d in s.doses] == ["midazolam", "fentanyl"]


@pytest.mark.parametrize(
    ("body", "match"),
    [
        (
            "3,dance,,\n",
            r"^T-0001/events.csv:2: unknown event 'dance'; known events: .*airway_repositioning",
        ),
        (
            "3,oxygen_increase,,\n",
            r"^T-0001/events.csv:2: oxygen_increase needs a value \(the new flow in L/min\)$",
        ),
        (
            "3,oxygen_increase,20,\n",
            r"^T-0001/events.csv:2: oxygen_increase flow 20 L/min is outside 0-15$",
        ),
        (
            "3,depth_score,high,\n",
            r"^T-0001/events.csv:2: event value 'high' is not a finite number$",
        ),
        ("5,note,,a\n3,note,,b\n", r"^T-0001/events.csv:3: time goes backwards"),
    ],
)
def test_event_rule(tmp_path, body, match):
    folder = make_session(tmp_path, files={"events.csv": "time,event,value,note\n" + body})
    with pytest.raises(SessionError, match=match):
        load_session(folder)


def test_unknown_event_lists_every_known_one(tmp_path):
    folder = make_session(tmp_path, files={"events.csv": "time,event\n3,dance\n"})
    with pytest.raises(SessionError) as info:
        load_session(folder)
    assert all(name in str(info.value) for name in KNOWN_EVENTS)


def test_events_read(tmp_path):
    text = (
        'time,event,value,note\n0,procedure_start,,\n12,depth_score,3,"MOASS 3, responds to voice"\n'
        "20,Airway_Repositioning,,jaw thrust\n25,oxygen_increase,6,\n"
    )
    s = load_session(make_session(tmp_path, files={"events.csv": text}))
    assert [e.event for e in s.events] == [
        "procedure_start",
        "depth_score",
        "airway_repositioning",
        "oxygen_increase",
    ]
    assert s.events[1].value == 3.0 and s.events[1].note == "MOASS 3, responds to voice"
    assert s.events[0].value is None and s.events[3].value == 6.0
    assert [e.event for e in s.interventions] == ["airway_repositioning", "oxygen_increase"]


def test_events_latin1_note_is_undecodable(tmp_path):
    body = b"time,event,value,note\n0,note,," + "café".encode("latin-1") + b"\n"
    folder = make_session(tmp_path, files={"events.csv": body})
    with pytest.raises(
        SessionError, match=r"^T-0001/events.csv:2: bytes that are not UTF-8 \(0xe9"
    ):
        load_session(folder)


def test_events_with_iso_times(tmp_path):
    text = "time,event\n2026-03-14T09:13:00+01:00,procedure_start\n2026-03-14T09:20:30+01:00,procedure_end\n"
    s = load_session(make_session(tmp_path, files={"events.csv": text}))
    assert [e.time_s for e in s.events] == [60.0, 510.0]
