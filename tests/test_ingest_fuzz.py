"""Property tests: whatever bytes a data file holds, load_session either returns a Session or
raises a one-line SessionError, never another exception (issue 2, "Done when").

Each test builds one small session holding only the fuzzed source and rewrites that file for
every example (examples run one after another).
"""

from __future__ import annotations

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from test_ingest_support import make_session

from sedreport.errors import SessionError
from sedreport.ingest import load_session
from sedreport.session import Session

ROLES = ("co2", "spo2", "doses", "events")


def _settings(n: int):
    return settings(
        max_examples=n, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture]
    )


#: Text made of the characters CSV and ISO timestamps are made of, to get past decoding.
CSV_TEXT = st.text(alphabet='0123456789.,-+:TZ \n\r"eE:abcnaifNA\u00e9\t', max_size=300)
CSV_LINES = st.lists(
    st.one_of(
        st.tuples(st.floats(allow_nan=True, allow_infinity=True), st.floats(-20, 300)).map(
            lambda p: f"{p[0]},{p[1]}"
        ),
        st.sampled_from(
            [
                "",
                ",",
                "2026-03-14T09:12:00+01:00,5",
                "2026-03-14T09:12:00,5",
                "x,y",
                "1,2,3",
                '"1","2"',
                "nan,1",
                "1e999,1",
                "0,NA",
                " 3 , 4 ",
            ]
        ),
    ),
    max_size=12,
).map(lambda rows: "time,co2\n" + "\n".join(rows))


def _only(tmp_path, role: str | None):
    """A session whose only source is ``role`` (None: no sources)."""
    return make_session(tmp_path, drop=tuple(r for r in ROLES if r != role))


def _outcome(folder, name: str, body: bytes | str) -> None:
    path = folder / name
    if isinstance(body, str):
        path.write_text(body, encoding="utf-8")
    else:
        path.write_bytes(body)
    try:
        assert isinstance(load_session(folder), Session)
    except SessionError as exc:
        assert str(exc).strip() and "\n" not in str(exc) and "\r" not in str(exc)


@pytest.mark.parametrize(
    ("role", "n"), [("co2", 200), ("spo2", 60), ("doses", 60), ("events", 60), (None, 200)]
)
def test_arbitrary_bytes(tmp_path, role, n):
    folder = _only(tmp_path, role)
    name = f"{role}.csv" if role else "session.yaml"

    @_settings(n)
    @given(data=st.binary(max_size=400))
    def run(data):
        _outcome(folder, name, data)

    run()


@pytest.mark.parametrize("role", ["co2", "events", "doses"])
def test_arbitrary_csvish_text(tmp_path, role):
    folder = _only(tmp_path, role)

    @_settings(100)
    @given(text=CSV_TEXT)
    def run(text):
        _outcome(folder, f"{role}.csv", text)

    run()


def test_structured_co2_rows(tmp_path):
    folder = _only(tmp_path, "co2")

    @_settings(150)
    @given(text=CSV_LINES)
    def run(text):
        _outcome(folder, "co2.csv", text)

    run()


def test_yamlish_text(tmp_path):
    folder = _only(tmp_path, None)

    @_settings(150)
    @given(text=st.text(alphabet="abcdefgstuvw:-[]{}!&*|>'\"#,. 0123456789\n", max_size=200))
    def run(text):
        _outcome(folder, "session.yaml", text)

    run()


def test_arbitrary_bytes_as_edf(tmp_path):
    folder = make_session(
        tmp_path,
        {"sources.co2": {"file": "rec.edf", "channel": "CO2"}},
        drop=("spo2", "doses", "events"),
    )

    @_settings(100)
    @given(data=st.binary(max_size=600))
    def run(data):
        _outcome(folder, "rec.edf", b"0       " + data)

    run()
