"""CO2 unit conversion checked against a reference library and handbook values."""

from __future__ import annotations

import numpy as np
import pytest
import scipy.constants
from test_ingest_support import make_session

from sedreport.ingest import load_session
from sedreport.ingest.units import PA_PER_MMHG, canonical_co2_unit, kpa_to_mmhg, percent_to_mmhg


def test_conventional_mmhg_against_scipy_torr():
    # scipy.constants.mmHg is the torr, 101325/760 Pa (SciPy reference, scipy.constants; CODATA
    # via NIST). The conventional mmHg, 13595.1 kg/m3 x 9.80665 m/s2 x 1 mm = 133.322387415 Pa
    # (from memory; NIST SP 811, 2008, lists 1.333224 E+02 Pa), differs from it by ~1.4e-7.
    assert scipy.constants.mmHg == pytest.approx(101325 / 760, rel=1e-15)
    assert PA_PER_MMHG == pytest.approx(13595.1 * scipy.constants.g * 1e-3, rel=1e-12)
    rel = abs(PA_PER_MMHG - scipy.constants.mmHg) / scipy.constants.mmHg
    assert 1.0e-7 < rel < 2.0e-7
    assert kpa_to_mmhg(1.0) == pytest.approx(1000.0 / scipy.constants.mmHg, rel=1e-6)


def test_handbook_kpa_values():
    # Common practice: normal EtCO2 is quoted as 35-45 mmHg = 4.7-6.0 kPa; 5.3 kPa ~ 40 mmHg
    # (and 1 kPa ~ 7.5 mmHg).
    assert kpa_to_mmhg(5.3) == pytest.approx(39.75, abs=0.01)
    assert round(float(kpa_to_mmhg(5.3))) == 40
    assert kpa_to_mmhg(1.0) == pytest.approx(7.50, abs=0.01)
    assert kpa_to_mmhg(np.array([4.7, 6.0])) == pytest.approx([35.25, 45.0], abs=0.05)


def test_percent_at_sea_level():
    # Common practice: 5 % CO2 at 760 mmHg ambient = 38 mmHg (P = F x P_B, no water-vapour
    # correction).
    assert percent_to_mmhg(5.0, 760.0) == pytest.approx(38.0, rel=1e-12)
    assert percent_to_mmhg(5.0, 640.0) == pytest.approx(32.0, rel=1e-12)


@pytest.mark.parametrize(
    ("name", "canon"),
    [
        ("mmHg", "mmHg"),
        ("MMHG", "mmHg"),
        ("kPa", "kPa"),
        ("%", "percent"),
        ("percent", "percent"),
        ("bar", None),
    ],
)
def test_unit_names(name, canon):
    assert canonical_co2_unit(name) == canon


def test_session_in_kpa_and_percent(tmp_path):
    kpa = make_session(
        tmp_path,
        {"sources.co2.units": "kPa"},
        files={"co2.csv": "time,co2\n0,0\n0.04,5.3\n"},
        name="kpa",
    )
    pct = make_session(
        tmp_path,
        {"sources.co2.units": "percent", "barometric_mmHg": 700},
        files={"co2.csv": "time,co2\n0,0\n0.04,5\n"},
        name="pct",
    )
    sk, sp = load_session(kpa), load_session(pct)
    assert sk.co2.co2_mmHg[1] == pytest.approx(5300 / 133.322387415, rel=1e-12)
    assert sp.co2.co2_mmHg[1] == pytest.approx(35.0, rel=1e-12)
    assert "133.322387415" in sk.source("co2").conversion
    assert sp.source("co2").conversion.startswith("percent of ambient pressure x 700")
    assert sk.source("co2").units_in == "kPa"
