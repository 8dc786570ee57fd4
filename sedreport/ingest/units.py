"""CO2 units to mmHg, once, at ingest.

kPa uses the conventional millimetre of mercury, exactly 133.322387415 Pa: a 1 mm column of
mercury of conventional density 13 595.1 kg/m3 under standard gravity 9.80665 m/s2
(13 595.1 x 9.80665 x 0.001 = 133.322387415; the definition is from memory, and NIST Special
Publication 811, 2008, Appendix B lists 1 mmHg (conventional) = 1.333224 E+02 Pa).
This is *not* ``scipy.constants.mmHg``, which is the torr (101325/760 Pa = 133.3223684 Pa);
the two differ by about 1.4e-7 relative, far below any capnograph's resolution.

Percent is taken as percent of the ambient (barometric) pressure: P_CO2 = F_CO2 x P_B
(common practice; dry-gas correction for water vapour is not applied).
"""

from __future__ import annotations

import numpy as np

#: Pascal per conventional millimetre of mercury (exact by definition).
PA_PER_MMHG: float = 133.322387415

#: Canonical CO2 unit names and the spellings accepted for them (case-insensitive).
CO2_UNITS: dict[str, tuple[str, ...]] = {
    "mmHg": ("mmhg", "torr"),
    "kPa": ("kpa",),
    "percent": ("percent", "%", "vol%", "%vol"),
}


def canonical_co2_unit(name: str) -> str | None:
    """Canonical unit name (``mmHg``, ``kPa``, ``percent``) or None when not recognised."""
    key = name.strip().lower().replace(" ", "")
    for canon, spellings in CO2_UNITS.items():
        if key in spellings:
            return canon
    return None


def kpa_to_mmhg(kpa: np.ndarray | float) -> np.ndarray | float:
    """Kilopascal to conventional mmHg: ``kPa * 1000 / 133.322387415``."""
    return np.asarray(kpa, dtype=float) * (1000.0 / PA_PER_MMHG)


def percent_to_mmhg(percent: np.ndarray | float, barometric_mmHg: float) -> np.ndarray | float:
    """Percent of ambient pressure to mmHg: ``percent / 100 * barometric_mmHg``."""
    return np.asarray(percent, dtype=float) * (barometric_mmHg / 100.0)


def co2_to_mmhg(values: np.ndarray, unit: str, barometric_mmHg: float) -> tuple[np.ndarray, str]:
    """Convert CO2 values in a canonical unit to mmHg.

    Returns
    -------
    (ndarray, str)
        Values in mmHg and a plain description of the conversion (``"none"`` for mmHg).
    """
    if unit == "mmHg":
        return np.asarray(values, dtype=float), "none"
    if unit == "kPa":
        return kpa_to_mmhg(values), "kPa x 1000 / 133.322387415 Pa per mmHg (conventional mmHg)"
    if unit == "percent":
        return (
            percent_to_mmhg(values, barometric_mmHg),
            f"percent of ambient pressure x {barometric_mmHg:g} mmHg / 100 (barometric_mmHg)",
        )
    raise ValueError(f"unknown CO2 unit {unit!r}")
