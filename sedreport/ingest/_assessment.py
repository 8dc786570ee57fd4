"""The optional ``assessment:`` block of ``session.yaml``, checked field by field.

``assessment: {mallampati: 2, fasting_solids_h: 8, fasting_clear_h: 2, allergies: [latex],
consent: true, notes: "...", baseline: {systolic_mmHg: 132, diastolic_mmHg: 78,
heart_rate_bpm: 72, spo2_pct: 97, resp_rate_per_min: 14}}``. Every key is optional. Ranges are
plausibility limits chosen here (common practice), not clinical thresholds; the Mallampati
class is 1-4 (Mallampati et al., Can Anaesth Soc J 1985, with the fourth class of Samsoon and
Young, Anaesthesia 1987).
"""

from __future__ import annotations

from sedreport.session import Assessment, Baseline

ASSESSMENT_KEYS = (
    "mallampati",
    "fasting_solids_h",
    "fasting_clear_h",
    "allergies",
    "consent",
    "notes",
    "baseline",
)
#: Baseline key -> (low, high, unit shown in messages); plausibility limits, common practice.
BASELINE_LIMITS: dict[str, tuple[float, float, str]] = {
    "systolic_mmHg": (40.0, 300.0, " mmHg"),
    "diastolic_mmHg": (20.0, 200.0, " mmHg"),
    "heart_rate_bpm": (20.0, 250.0, "/min"),
    "spo2_pct": (50.0, 100.0, " %"),
    "resp_rate_per_min": (2.0, 60.0, "/min"),
}
#: Longest fasting time accepted, hours (a week; a longer one is a typing error).
MAX_FASTING_H = 168.0


def parse_assessment(f, doc: dict) -> Assessment | None:
    """Check ``doc["assessment"]`` with the field checker ``f`` of :mod:`._yaml`.

    Parameters
    ----------
    f : sedreport.ingest._yaml._Fields
        Field checker (``err``, ``unknown``, ``mapping``, ``number``, ``text``).
    doc : dict
        The whole ``session.yaml`` mapping.

    Returns
    -------
    Assessment or None
        None when the block is absent.
    """
    if doc.get("assessment") is None:
        return None
    a = f.mapping(doc, "assessment")
    pre = "assessment."
    f.unknown(a, ASSESSMENT_KEYS, pre)
    mallampati = f.number(a, "mallampati", 1, 4, "", pre, integer=True)
    return Assessment(
        mallampati=None if mallampati is None else int(mallampati),
        fasting_solids_h=f.number(a, "fasting_solids_h", 0, MAX_FASTING_H, " h", pre),
        fasting_clear_h=f.number(a, "fasting_clear_h", 0, MAX_FASTING_H, " h", pre),
        allergies=_allergies(f, a),
        consent=_consent(f, a),
        notes=f.text(a, "notes", pre) or "",
        baseline=_baseline(f, a),
    )


def _allergies(f, a: dict) -> tuple[str, ...] | None:
    if "allergies" not in a:
        return None
    value = a["allergies"]
    if not isinstance(value, list) or not all(isinstance(w, str) and w.strip() for w in value):
        raise f.err(
            "assessment.allergies", f"must be a list of words ([] for none known), got {value!r}"
        )
    return tuple(w.strip().lower() for w in value)


def _consent(f, a: dict) -> bool | None:
    value = a.get("consent")
    if value is None:
        return None
    if not isinstance(value, bool):
        raise f.err("assessment.consent", f"must be true or false, got {value!r}")
    return value


def _baseline(f, a: dict) -> Baseline | None:
    b = f.mapping(a, "baseline", "assessment.")
    if not b:
        return None
    pre = "assessment.baseline."
    f.unknown(b, tuple(BASELINE_LIMITS), pre)
    values = {k: f.number(b, k, lo, hi, unit, pre) for k, (lo, hi, unit) in BASELINE_LIMITS.items()}
    sys_, dia = values["systolic_mmHg"], values["diastolic_mmHg"]
    if sys_ is not None and dia is not None and sys_ <= dia:
        raise f.err(
            pre + "systolic_mmHg",
            f"systolic {sys_:g} mmHg is not above diastolic {dia:g} mmHg",
        )
    return Baseline(**values)
