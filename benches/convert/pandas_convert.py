#!/usr/bin/env python3
"""The same conversion as `lc-host convert`, written the way a strong pandas
user would: pandas' multithreaded Arrow CSV engine to read, numpy for
vectorised formulas, Arrow's CSV writer to write (docs/performance.md).

It does the work `convert` does for a proximity image, from the image's own
constants (`lc-host inspect --json IMAGE`):

    fault window   cycles = 0, ticks = 0, too few cycles, frequency outside
                   the band: the same fault names, in the same order
    shift          s  = (ticks / (cycles * p_rest))^2 - 1
    drift          sc = (1 + s) * (1 + b1*dT + b2*dT^2) - 1, T rounded to
                   0.01 °C and held in -100..300 °C as the firmware does
    curve          the image's own: linear, or the monotone cubic Hermite
                   (Fritsch–Butland tangents stored in the image) evaluated
                   from its nodes and tangents; clamped to the end nodes
    status         ok / below_range / no_target as the reader says

Usage:
    pandas_convert.py IMAGE.json FIELD.csv OUT.csv
    pandas_convert.py --check OURS.csv THEIRS.csv IMAGE.json
The second form compares two outputs row for row (statuses, gaps within
one output unit of the image's scale, shifts within 0.01 ppm) and prints
the disagreements. Both write convert's columns: line, time_s, channel,
status, gap_m (the gap in metres, docs/formats.md), shift_ppm.
"""
import json
import sys

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.csv as pacsv

Q40 = 2.0**40
FAULTS = [
    "fault_no_oscillation",
    "fault_no_reference",
    "fault_too_few_cycles",
    "fault_frequency_too_low",
    "fault_frequency_too_high",
]


def leading_comments(path: str) -> int:
    n = 0
    with open(path, "rb") as f:
        for line in f:
            if not line.startswith(b"#"):
                return n
            n += 1
    return n


def curve_eval(sc: np.ndarray, curve: dict) -> np.ndarray:
    """The image's curve at shifts `sc`, clamped to its end nodes."""
    xs = np.array([n["shift_q40"] for n in curve["nodes"]], dtype=float) / Q40
    ys = np.array([n["value"] for n in curve["nodes"]], dtype=float)
    cubic = curve["interpolation"] != "linear"
    # Each segment's tangent terms (D0, D1) = w·dy/ds at its ends, Q8
    # output units, as the image stores them.
    terms = np.array(curve["tangent_terms_q8"], dtype=float).reshape(-1, 2) / 256.0
    if xs[0] > xs[-1]:  # a Hermite segment is the same cubic read either way
        xs, ys = xs[::-1], ys[::-1]
        terms = -terms[::-1, ::-1]
    if not cubic:
        return np.interp(sc, xs, ys)
    # Cubic Hermite per segment, t = (s - x0)/h, D = h·dy/ds:
    # y = y0 + t·D0 + t²(3Δy - 2D0 - D1) + t³(D0 + D1 - 2Δy).
    i = np.clip(np.searchsorted(xs, sc, side="right") - 1, 0, len(xs) - 2)
    x0, h = xs[i], xs[i + 1] - xs[i]
    t = np.clip((sc - x0) / h, 0.0, 1.0)
    y0, dy = ys[i], ys[i + 1] - ys[i]
    d0, d1 = terms[i, 0], terms[i, 1]
    return y0 + t * (d0 + t * ((3 * dy - 2 * d0 - d1) + t * (d0 + d1 - 2 * dy)))


def convert(image_json: str, field_csv: str, out_csv: str) -> None:
    with open(image_json, encoding="utf-8") as f:
        image = json.load(f)
    if image["kind"] != "proximity":
        sys.exit("this script converts proximity images only")
    p_rest = image["rest_ratio"]
    f_ref = image["reference_hz"]
    window = image["window"]
    drift = image["drift"] or {"b1_ppm_per_k": 0.0, "b2_ppm_per_k2": 0.0, "reference_c": 25.0}
    b1 = drift["b1_ppm_per_k"] * 1e-6
    b2 = drift["b2_ppm_per_k2"] * 1e-6
    t_ref = drift["reference_c"]
    curve = image["curve"]
    exp = image["output"]["decimal_exponent"]
    gap = "gap" + {"m": "_m", "L": "_l", "%": "_percent", "": ""}[image["output"]["unit"]]
    xs = np.array([n["shift_q40"] for n in curve["nodes"]], dtype=float) / Q40
    rising = curve["nodes"][-1]["value"] > curve["nodes"][0]["value"]

    skip = leading_comments(field_csv)
    df = pd.read_csv(field_csv, engine="pyarrow", skiprows=skip)
    cycles = df["cycles"].to_numpy(dtype=np.float64)
    ticks = df["ticks"].to_numpy(dtype=np.float64)
    temp = df["temp_c"].to_numpy(dtype=np.float64) if "temp_c" in df else np.full(len(df), np.nan)

    freq_ok = ~((cycles == 0) | (ticks == 0))
    with np.errstate(divide="ignore", invalid="ignore"):
        scaled = f_ref * cycles
        fault = np.select(
            [
                cycles == 0,
                ticks == 0,
                cycles < window["min_cycles"],
                scaled < window["min_hz"] * ticks,
                scaled > window["max_hz"] * ticks,
            ],
            [1, 2, 3, 4, 5],
            0,
        )
        s = (ticks / (cycles * p_rest)) ** 2 - 1.0
    t = np.clip(np.round(temp * 100.0) / 100.0, -100.0, 300.0)
    dt = t - t_ref
    g = np.where(np.isnan(dt), 0.0, b1 * dt + b2 * dt * dt)
    sc = np.where(freq_ok, (1.0 + s) * (1.0 + g) - 1.0, 0.0)
    value = np.rint(curve_eval(sc, curve))
    lo_x, hi_x = min(xs[0], xs[-1]), max(xs[0], xs[-1])
    above, below = sc > hi_x, sc < lo_x
    far = above if rising else below
    near = below if rising else above
    status = np.select(
        [fault == k for k in range(1, 6)] + [far, near],
        FAULTS + ["no_target", "below_range"],
        "ok",
    )
    is_fault = fault > 0
    line = np.arange(len(df), dtype=np.int64) + skip + 2
    out = pa.table(
        {
            "line": line,
            "time_s": df["time_s"].to_numpy(),
            "channel": df["channel"].to_numpy(),
            "status": status,
            # The gap in its unit, on the image's scale (value · 10^exp).
            gap: pa.array(np.round(value * 10.0**exp, max(0, -exp)), mask=is_fault),
            "shift_ppm": pa.array(np.round(sc * 1e6, 6), mask=is_fault),
        }
    )
    pacsv.write_csv(out, out_csv)


def check(ours: str, theirs: str, image_json: str) -> None:
    with open(image_json, encoding="utf-8") as f:
        step = 10.0 ** json.load(f)["output"]["decimal_exponent"]
    a = pd.read_csv(ours, engine="pyarrow", skiprows=leading_comments(ours))
    b = pd.read_csv(theirs, engine="pyarrow")
    if len(a) != len(b):
        sys.exit(f"row counts differ: {len(a)} against {len(b)}")
    same_line = (a["line"].to_numpy() == b["line"].to_numpy()).all()
    status = a["status"].to_numpy() != b["status"].to_numpy()
    col = next(c for c in a.columns if c.startswith("gap"))
    va, vb = a[col].to_numpy(dtype=float), b[col].to_numpy(dtype=float)
    both = ~np.isnan(va) & ~np.isnan(vb)
    # In output units (one step of the image's scale).
    dv = np.round(np.abs(va - vb)[both] / step, 6)
    ds = np.abs(a["shift_ppm"].to_numpy(dtype=float) - b["shift_ppm"].to_numpy(dtype=float))[both]
    print(
        f"agreement: {len(a)} rows, lines {'equal' if same_line else 'DIFFER'}, "
        f"statuses differ on {int(status.sum())}, values differ on {int((dv > 0).sum())} "
        f"(most {dv.max() if dv.size else 0:.0f} unit), "
        f"shifts differ by at most {ds.max() if ds.size else 0:.2e} ppm"
    )
    if not same_line or status.any() or (dv > 1).any() or (ds > 0.01).any():
        sys.exit("the two conversions disagree")


if __name__ == "__main__":
    if sys.argv[1] == "--check":
        check(sys.argv[2], sys.argv[3], sys.argv[4])
    else:
        convert(*sys.argv[1:4])
