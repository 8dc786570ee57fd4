"""Drawing primitives of the record: min/max envelope, gap splitting, clock ticks, rows."""

from __future__ import annotations

from datetime import datetime, timedelta, timezone

import numpy as np
import pytest
import record_fixtures as rf
from hypothesis import given, settings
from hypothesis import strategies as st

from sedreport.render.marks import cluster_labels
from sedreport.render.plot import clock_ticks, envelope, split_runs
from sedreport.render.strips import plan_rows


def test_envelope_keeps_every_column_min_and_max():
    """Checked against a brute-force per-column min/max with numpy (reference computation)."""
    rng = np.random.default_rng(3)
    t = np.sort(rng.uniform(0, 600, 200_000))
    y = np.sin(t) * 20 + rng.normal(0, 2, t.size)
    n_cols = 400
    tt, yy = envelope(t, y, 0.0, 600.0, n_cols)
    assert tt.size <= 2 * n_cols
    col = np.floor(t / 600.0 * n_cols).astype(int)
    for c in rng.choice(n_cols, 25, replace=False):
        sel = col == c
        mine = (tt >= t[sel][0]) & (tt <= t[sel][-1])
        assert set(np.round(yy[mine], 9)) == {round(y[sel].min(), 9), round(y[sel].max(), 9)}


def test_envelope_passes_short_series_unchanged():
    t = np.arange(10.0)
    tt, yy = envelope(t, t * 2, 0, 10, 100)
    assert np.array_equal(tt, t) and np.array_equal(yy, t * 2)


def test_split_runs_breaks_at_nan_and_gaps():
    t = np.array([0, 1, 2, 3, 10, 11, 12, 13.0])
    y = np.array([1, 1, np.nan, 1, 1, 1, 1, 1.0])
    assert split_runs(t, y, max_gap_s=1.5) == [(0, 2), (3, 4), (4, 8)]
    assert split_runs(t, np.full(8, np.nan), 1.5) == []


def test_clock_ticks_fall_on_whole_minutes():
    started = datetime(2026, 3, 14, 9, 12, 37, tzinfo=timezone(timedelta(hours=1)))
    ticks = clock_ticks(started, 0.0, 300.0, 60.0)
    assert [c.strftime("%H:%M:%S") for _, c in ticks] == [
        "09:13:00",
        "09:14:00",
        "09:15:00",
        "09:16:00",
        "09:17:00",
    ]
    assert ticks[0][0] == pytest.approx(23.0)


def test_row_plan_is_bounded_for_long_sessions():
    """4 h at 15 min per row = 16 rows; the row scale is stated and rows start on a minute."""
    short = plan_rows(rf.make_analysis(duration_s=2400.0, fs_hz=10.0))
    assert (short.minutes_per_row, short.n_rows) == (10, 4)
    long = plan_rows(rf.make_analysis(duration_s=4 * 3600.0, fs_hz=10.0))
    assert (long.minutes_per_row, long.n_rows) == (15, 16)
    assert long.n_rows <= 18


def test_cluster_labels_join_crowded_marks():
    marks = [(10.0, "VS"), (12.0, "AW"), (200.0, "O2+")]
    assert cluster_labels(marks, 3.0, 500.0) == [(15.0, "VS, AW"), (203.0, "O2+")]
    # a label that would run past the right edge ends before its mark: 495 - 3 - 3 x 3 = 483
    assert cluster_labels([(495.0, "BMV")], 3.0, 500.0, char_pt=3.0) == [(483.0, "BMV")]
    # the next mark's glyph must not touch a label: "SUC" from 14 to 23.2 pt, next mark at 26
    # is within one offset (4 pt) of its end, so the two share a label
    assert cluster_labels([(10.0, "SUC"), (26.0, "PAU")], 4.0, 500.0, char_pt=3.4) == [
        (30.0, "SUC, PAU")
    ]


@settings(max_examples=60, deadline=None)
@given(
    n=st.integers(min_value=1, max_value=3000),
    n_cols=st.integers(min_value=1, max_value=200),
    seed=st.integers(min_value=0, max_value=2**31),
)
def test_envelope_keeps_extremes_and_bounds_points(n, n_cols, seed):
    """Whatever the series, the envelope keeps its overall min and max, has at most two points
    a column (or the series itself), and stays in time order."""
    rng = np.random.default_rng(seed)
    t = np.sort(rng.uniform(0, 100, n))
    y = rng.normal(0, 10, n)
    tt, yy = envelope(t, y, 0.0, 100.0, n_cols)
    assert yy.max() == y.max() and yy.min() == y.min()
    assert tt.size <= max(2 * n_cols, n) and tt.size <= n
    assert np.all(np.diff(tt) >= 0)
