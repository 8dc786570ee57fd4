"""Method notes of the audit document, each with its source."""

from __future__ import annotations

from sedreport.audit.report import (
    CUSUM_ODDS_RATIO,
    CUSUM_THRESHOLD,
    FUNNEL_LEVELS,
    P_CHART_SIGMAS,
    RISK_CELL_MIN_SESSIONS,
)


def method_notes() -> list[tuple[str, str]]:
    """(title, text) pairs: how every figure of the audit is made and where the method is from."""
    lo, hi = (100 * x for x in FUNNEL_LEVELS)
    return [
        (
            "What is counted",
            "Every session is analysed breath by breath with the criteria named on the first page. "
            "An episode counts under its kind; an adverse event (linked episodes graded once after "
            "the World SIVA adverse sedation event tool, Mason et al., Br J Anaesth 2012) counts "
            "under its tier and under 'any tier'. A rate is the share of sessions with at least "
            "one such outcome, per 1,000 sedations; 'events' counts every one. A session with "
            "events of two tiers counts under both.",
        ),
        (
            "Intervals",
            "95 % Wilson score interval (Wilson, J Am Stat Assoc 1927), recommended for binomial "
            "proportions by Brown, Cai & DasGupta (Stat Sci 2001), and the exact Clopper-Pearson "
            "interval (Clopper & Pearson, Biometrika 1934), which never undercovers but is wider. "
            "With no event in n sessions the upper 95 % bound is about 3/n, the rule of three "
            "(Hanley & Lippman-Hand, JAMA 1983).",
        ),
        (
            "Funnel plots",
            f"Each unit's rate is plotted against its number of sessions, with the overall rate "
            f"and exact binomial limits at {lo:g} % and {hi:g} % drawn around it (Spiegelhalter, "
            "Stat Med 2005, with his interpolation of the binomial quantile). With no real "
            "difference, about 1 unit in 20 falls outside the inner limits and 1 in 500 outside "
            "the outer ones by chance alone.",
        ),
        (
            "p-chart",
            f"The monthly proportion against a centre line at the pooled proportion of the whole "
            f"period and limits at +-{P_CHART_SIGMAS:g} standard errors for that month's number "
            "of sessions (Shewhart p-chart; Montgomery, Introduction to Statistical Quality "
            "Control). The limits come from the same data, so the chart is a retrospective review.",
        ),
        (
            "CUSUM",
            f"Bernoulli cumulative sum of log-likelihood-ratio scores over sessions in time order, "
            f"tuned to detect a doubling of the odds (odds ratio {CUSUM_ODDS_RATIO:g}) with limit "
            f"h = {CUSUM_THRESHOLD:g} (Steiner, Cook, Farewell & Treasure, Biostatistics 2000). "
            "Risk-adjusted (--risk-adjust), each session's expected risk is the rate of its "
            f"ASA-class and target-depth cell over the period (cells under "
            f"{RISK_CELL_MIN_SESSIONS} sessions take the overall rate); otherwise every session "
            "has the overall rate. The chart restarts at 0 after each signal.",
        ),
        (
            "Monitoring and response",
            "Capnography coverage is the share of the sedation window with gap-free CO2 by the "
            "criteria's gap rule. The capnographic lead is the time by which an apnoea or "
            "hypoventilation preceded the desaturation it led to; time to intervention is from "
            "an episode's onset to the first linked intervention in the log.",
        ),
        (
            "Register",
            "Each session's analysis is stored in an SQLite register keyed by the SHA-256 of its "
            "input files, the criteria and the sedreport version; a re-run analyses only new or "
            "changed sessions. Sessions that could not be analysed are listed as excluded and "
            "are in no rate.",
        ),
    ]
