"""Method paragraphs of the trend document: what each index is, where it comes from, how the
noise between visits is estimated. Sources are named beside each index."""

from __future__ import annotations

from pathlib import Path

import yaml

from sedreport.errors import SedreportError
from sedreport.trend import Trend

CAUTIONS_FILE = Path(__file__).resolve().parent.parent / "templates" / "cautions.yaml"


def load_trend_cautions(path: Path = CAUTIONS_FILE) -> list[tuple[str, str]]:
    """(title, text) pairs of ``trend_cautions`` in the caution file.

    Raises
    ------
    SedreportError
        When the file is missing or has no ``trend_cautions`` list of title/text.
    """
    try:
        data = yaml.safe_load(path.read_text(encoding="utf-8"))
    except (OSError, yaml.YAMLError) as exc:
        raise SedreportError(f"{path}: cannot read the caution texts ({exc})") from exc
    entries = data.get("trend_cautions") if isinstance(data, dict) else None
    if not isinstance(entries, list) or not entries:
        raise SedreportError(f"{path}:trend_cautions: expected a non-empty list of title/text")
    out = []
    for i, e in enumerate(entries):
        if not isinstance(e, dict) or not e.get("title") or not e.get("text"):
            raise SedreportError(f"{path}:trend_cautions[{i}]: needs a title and a text")
        out.append((str(e["title"]), " ".join(str(e["text"]).split())))
    return out


def definitions(trend: Trend) -> list[tuple[str, str]]:
    """(index, definition with source) for the methods section."""
    v = trend.settings.value
    k = v("shape.alpha_scale_mmHg_per_s")
    lo, hi = v("shape.phase2_low_frac") * 100, v("shape.phase2_high_frac") * 100
    return [
        (
            "Reference period",
            "The whole resting recording of each visit; doses, if any, are ignored (counted in "
            "the visit table). Only valid breaths are used: breaths cut by a gap, too short, "
            "with a low plateau or clipped are excluded and counted by reason (a breath may have more "
            "than one reason); gaps in the CO2 recording are counted with their length (choice of this tool).",
        ),
        (
            "EtCO2 and FiCO2",
            "Per breath, the CO2 at the end of the alveolar plateau and the inspired baseline "
            "of the following inspiration (sedreport breath detection); median and "
            "interquartile range (IQR) over the valid breaths (common practice).",
        ),
        (
            "Respiratory rate",
            "60 / time from the previous breath start, per breath; median over valid breaths "
            "(common practice).",
        ),
        (
            "Phase III slope",
            "Least-squares slope of the alveolar plateau (50-90 % of the time from breath start "
            "to plateau end), mmHg/s, and the same divided by the breath's EtCO2 (1/s), which "
            "does not change with cannula dilution of the level. A shape index of airway "
            "obstruction on time capnograms: You et al., Eur Respir J 1994; Hisamuddin et al., "
            "Int J Emerg Med 2009 (both from memory).",
        ),
        (
            "Phase II slope and upstroke time",
            f"Phase II slope: rise between the {lo:g} % and {hi:g} % crossings of the breath's "
            "height (preceding inspired baseline to EtCO2) divided by the time between them. "
            "Upstroke (phase II) time: 0.8 x height / phase II slope, the 10-90 % rise time of "
            "that line (common practice rise-time convention). On a breath with a very steep "
            "plateau the upper crossing lies on phase III, so both also follow the plateau.",
        ),
        (
            "Alpha angle",
            f"Angle between the phase II and phase III lines on a capnogram drawn with 1 s as "
            f"long as {k:g} mmHg: alpha = 180 - atan(sII / {k:g}) + atan(sIII / {k:g}) degrees "
            "(slopes in mmHg/s). Worked example: sII = 100 and sIII = 2 mmHg/s give 180 - 84.29 "
            "+ 11.31 = 107.0 degrees. A wider angle goes with a slower upstroke and a steeper "
            "plateau, as in obstruction (You et al., Eur Respir J 1994; Hisamuddin et al., Int J "
            "Emerg Med 2009; from memory). The angle depends on the drawing scale, so only "
            "angles measured by this tool with the same scale are comparable.",
        ),
        (
            "Breath-to-breath variability",
            "Robust standard deviation of EtCO2 over the valid breaths and the robust "
            "coefficient of variation of the breath intervals (60 / rate): 1.4826 (common practice) x the median "
            "absolute deviation, divided by the median for the CV, so one long pause does not "
            "dominate (Rousseeuw and Croux, J Am Stat Assoc 1993; from memory).",
        ),
        (
            "SpO2",
            "Median and the share of valid samples inside, below and above the target range; "
            "oximeter artefacts (impossible values, implausible jumps, a frozen probe) are marked "
            "by sedreport's oximetry cleaning and left out. Target: the patient's own "
            "(session.yaml patient.spo2_target_pct), else 88-92 % for patients at risk of "
            "hypercapnic respiratory failure and 94-98 % otherwise (British Thoracic Society "
            "guideline, O'Driscoll et al., Thorax 2017).",
        ),
        (
            "Blood gas",
            "An arterial or arterialised capillary PCO2 entered for the visit (session.yaml "
            "blood_gas) minus the visit's median EtCO2: the arterial to end-tidal gradient. "
            "Capillary samples approximate arterial PCO2 (common practice).",
        ),
    ]


def noise_text(trend: Trend) -> str:
    """How the visit-to-visit noise is estimated, with the settings' numbers."""
    v = trend.settings.value
    return (
        f"Each visit's median comes with a {v('noise.confidence_pct'):g} % interval from a "
        f"moving-block bootstrap of its own recording: {v('noise.bootstrap_resamples'):g} "
        f"resamples of blocks of {v('noise.block_breaths'):g} consecutive breaths (SpO2: blocks "
        f"of {v('noise.block_spo2_s'):g} s), so the correlation between neighbouring breaths is "
        "kept (Kunsch, Ann Stat 1989; Efron and Tibshirani 1993; from memory); the generator is "
        "seeded, so the same data give the same intervals. A change between two visits is "
        "marked (noise) when its interval, difference +/- z x the root sum of squares of the two "
        "bootstrap standard errors, contains zero; for SpO2 also when it is no larger than "
        f"{v('noise.spo2_resolution_pct'):g} % (whole-percent readings). This is the sampling noise within resting "
        "recordings only; day-to-day variation is not included, so real visit-to-visit noise "
        "is larger. A visit with fewer than "
        f"{v('noise.min_breaths'):g} valid breaths is shown with an open marker."
    )
