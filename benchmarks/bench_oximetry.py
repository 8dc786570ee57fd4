"""Desaturation and SpO2 signal loss against planted truth on an invented cohort whose
oximeter exports look like real ones (held ~4 s display updates, probe-off zeros, start-up
readings, paced pulses, motion artefacts).

Usage::

    python benchmarks/bench_oximetry.py [--n 200] [--seed 0] [--criteria FILE]

The bundled cohort recipe is used with boosted event rates (stated in the output) so that the
cohort holds enough desaturations and artefacts to score. A detected episode matches a planted
one of the same kind whose onset is within 3 s; planted desaturations shorter than the
criterion's minimum are not expected. The cohort's planted desaturations last 20-30 s (below
the default 30-s minimum), so scoring also runs with ``desaturation.min_duration_s`` lowered to
``--min-desat-s`` (10 s by default): that counts them, and makes every short low stretch of a
start-up or motion artefact a chance for a false desaturation. The same cohort is then scored with the artefact rules
switched off (windows of 0 s), to show what they do. Figures are printed, never asserted.
The data is invented.
"""

from __future__ import annotations

import argparse
import dataclasses
import tempfile
import time
from pathlib import Path

from sedreport.analysis import analyse_session
from sedreport.criteria import load_criteria
from sedreport.demo import load_truth
from sedreport.demo.cohort import draw_case, load_recipe
from sedreport.demo.examples import simulate_and_write
from sedreport.episodes.scoring import match_episodes
from sedreport.ingest import load_session

ONSET_TOL_S = 3.0
BOOST = {"apnoea": 0.5, "spo2_artefact": 0.5}
DESAT_GIVEN_APNOEA = 0.5


def boosted_recipe() -> dict:
    recipe = load_recipe()
    for kind, p in BOOST.items():
        recipe["events"][kind] = dict.fromkeys(recipe["events"][kind], p)
    recipe["desaturation_given_apnoea"] = DESAT_GIVEN_APNOEA
    return recipe


def rules_off(crit):
    """The criteria with every artefact rule switched off (no-reading handling stays)."""
    ox = dataclasses.replace(
        crit.oximetry, acquisition_s=0.0, startup_s=0.0, drop_max_s=1.0, spike_max_s=1.0,
        flat_s=3600.0,
    )  # fmt: skip
    return dataclasses.replace(crit, oximetry=ox, name=f"{crit.name} (artefact rules off)")


def score(folders: list[Path], crit) -> dict:
    tally = {k: [0, 0, 0] for k in ("desaturation", "signal_loss")}  # planted, hits, fps
    fp_sessions: list[str] = []
    for folder in folders:
        truth = load_truth(folder.parent / f"{folder.name}.truth.json")
        a = analyse_session(load_session(folder), crit)
        for kind in tally:
            want = [
                e
                for e in truth["episodes"]
                if e["kind"] == kind
                and (kind != "signal_loss" or e["subtype"] == "spo2")
                and not (
                    kind == "desaturation"
                    and e["end_s"] - e["start_s"] < crit.desaturation.min_duration_s
                )
            ]
            got = [
                e
                for e in a.episodes
                if e.kind == kind and (kind != "signal_loss" or e.subtype == "spo2")
            ]
            s = match_episodes(got, want, ONSET_TOL_S)
            tally[kind][0] += len(want)
            tally[kind][1] += len(s.hits)
            tally[kind][2] += len(s.false_positives)
            if kind == "desaturation" and (s.false_positives or s.misses):
                fp_sessions.append(
                    f"{folder.name}: missed {[(m['start_s'], m['end_s']) for m in s.misses]} "
                    f"false {[(e.start_s, e.end_s) for e in s.false_positives]}"
                )
    return {"tally": tally, "notes": fp_sessions}


def _print(label: str, result: dict) -> None:
    print(label)
    for kind, (planted, hits, fps) in result["tally"].items():
        sens = hits / planted if planted else float("nan")
        ppv = hits / (hits + fps) if hits + fps else float("nan")
        print(f"  {kind:<13} planted {planted:4d}  hits {hits:4d}  false {fps:4d}  "
              f"sensitivity {sens:.3f}  PPV {ppv:.3f}")  # fmt: skip
    for line in result["notes"][:15]:
        print(f"    {line}")


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--n", type=int, default=200)
    ap.add_argument("--seed", type=int, default=0)
    ap.add_argument("--criteria", default=None)
    ap.add_argument("--min-desat-s", type=float, default=10.0)
    args = ap.parse_args()
    base = load_criteria(args.criteria)
    crit = dataclasses.replace(
        base,
        desaturation=dataclasses.replace(base.desaturation, min_duration_s=args.min_desat_s),
        name=f"{base.name} with desaturation.min_duration_s {args.min_desat_s:g} s",
    )
    recipe = boosted_recipe()
    print(f"cohort: {args.n} invented cases, seed {args.seed}; recipe boosted: {BOOST}, "
          f"desaturation_given_apnoea {DESAT_GIVEN_APNOEA}; oximeter: {recipe['oximeter']}")  # fmt: skip
    with tempfile.TemporaryDirectory() as tmp:
        t0 = time.perf_counter()
        folders = [
            simulate_and_write(tmp, draw_case(recipe, i, args.seed), args.seed, compresslevel=1)
            for i in range(args.n)
        ]
        print(f"written in {time.perf_counter() - t0:.1f} s")
        t0 = time.perf_counter()
        _print(f"criteria {base.name}", score(folders, base))
        _print(f"criteria {crit.name}", score(folders, crit))
        _print(rules_off(crit).name, score(folders, rules_off(crit)))
        print(f"scored in {time.perf_counter() - t0:.1f} s")


if __name__ == "__main__":
    main()
