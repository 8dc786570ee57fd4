"""Render one minute of each demo scenario's CO2 waveform to a PNG, to look at by eye.

No plotting dependency: the image is drawn with numpy and written with zlib.

Usage::

    python benchmarks/look_demo.py OUTDIR [--seed S]

For every scenario it writes ``OUTDIR/<scenario>.png``: the CO2 samples (black) of the minute
around the first planted episode (or minutes 5-6 of a quiet case), with the truth breath starts
(green ticks) and ends (red ticks), and 10 mmHg grid lines.
"""

from __future__ import annotations

import argparse
import struct
import zlib
from pathlib import Path

import numpy as np

from sedreport.demo import SCENARIOS, case_rng
from sedreport.demo.simulate import simulate_case
from sedreport.demo.truth import build_truth

WIDTH, HEIGHT, TOP_MMHG = 1200, 260, 70.0


def png_bytes(rgb: np.ndarray) -> bytes:
    """Encode an (h, w, 3) uint8 array as PNG."""
    h, w, _ = rgb.shape
    raw = b"".join(b"\x00" + rgb[y].tobytes() for y in range(h))

    def chunk(tag: bytes, data: bytes) -> bytes:
        body = tag + data
        return struct.pack(">I", len(data)) + body + struct.pack(">I", zlib.crc32(body))

    header = struct.pack(">IIBBBBB", w, h, 8, 2, 0, 0, 0)
    return (
        b"\x89PNG\r\n\x1a\n"
        + chunk(b"IHDR", header)
        + chunk(b"IDAT", zlib.compress(raw))
        + chunk(b"IEND", b"")
    )


def draw_minute(time_s, co2_mmHg, starts_s, ends_s, t0_s) -> np.ndarray:
    """Raster of 60 s of CO2 from ``t0_s``."""
    img = np.full((HEIGHT, WIDTH, 3), 255, dtype=np.uint8)
    for mmHg in range(0, int(TOP_MMHG) + 1, 10):
        img[HEIGHT - 1 - int(mmHg / TOP_MMHG * (HEIGHT - 1)), :] = (215, 215, 215)
    sel = (time_s >= t0_s) & (time_s <= t0_s + 60.0)
    t, v = time_s[sel], co2_mmHg[sel]
    if t.size > 1:
        dense_t = np.linspace(t[0], t[-1], WIDTH * 8)
        # Do not bridge gaps: mask dense points farther than 1 s from a sample.
        near = np.abs(t[np.clip(np.searchsorted(t, dense_t), 0, t.size - 1)] - dense_t) < 1.0
        dense_v = np.interp(dense_t, t, v)
        x = ((dense_t - t0_s) / 60.0 * (WIDTH - 1)).astype(int)
        y = HEIGHT - 1 - np.clip(dense_v / TOP_MMHG * (HEIGHT - 1), 0, HEIGHT - 1).astype(int)
        img[y[near], x[near]] = (0, 0, 0)
    for ticks, colour in ((starts_s, (0, 160, 0)), (ends_s, (200, 0, 0))):
        for tt in ticks[(ticks >= t0_s) & (ticks <= t0_s + 60.0)]:
            img[HEIGHT - 12 :, int((tt - t0_s) / 60.0 * (WIDTH - 1))] = colour
    return img


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("outdir", type=Path)
    parser.add_argument("--seed", type=int, default=0)
    args = parser.parse_args()
    args.outdir.mkdir(parents=True, exist_ok=True)
    for name, spec in SCENARIOS.items():
        sig = simulate_case(spec, case_rng(args.seed, spec.session_id))
        truth = build_truth(spec, sig, args.seed)
        episodes = [e for e in truth["episodes"] if e["kind"] != "desaturation"]
        t0 = episodes[0]["start_s"] - 20.0 if episodes else 300.0
        b = truth["breaths"]
        img = draw_minute(
            sig.co2_time_s, sig.co2_mmHg, np.array(b["start_s"]), np.array(b["end_s"]), t0
        )
        path = args.outdir / f"{name}.png"
        path.write_bytes(png_bytes(img))
        print(f"{path}: minute from {t0:.0f} s, {len(episodes)} planted non-SpO2 episode(s)")


if __name__ == "__main__":
    main()
