#!/usr/bin/env python3
"""A straightforward pandas/numpy conversion of a field log, for comparison
with `lc-host convert` (docs/performance.md).

It does the same formulas the firmware does, the way an engineer would write
them in a notebook: read_csv, vectorised float math, to_csv.

    shift  s  = ((ticks / cycles) / p_rest)^2 - 1
    drift  sc = (1 + s) * (1 + b1*dT + b2*dT^2) - 1,  dT = T - T_ref
    curve  value = interp(sc, node shifts, node values), clamped
    status ok / below_range / no_target / fault (zero counts, out of band)

Usage: pandas_convert.py IMAGE.json FIELD.csv OUT.csv
IMAGE.json is `lc-host inspect --json IMAGE` (the same constants).
"""
import json
import sys

import numpy as np
import pandas as pd


def main() -> None:
    image_json, field_csv, out_csv = sys.argv[1:4]
    with open(image_json, encoding="utf-8") as f:
        image = json.load(f)
    p_rest = image["rest_ratio"]
    f_ref = image["reference_hz"]
    lo_hz, hi_hz = image["window"]["min_hz"], image["window"]["max_hz"]
    b1 = image["drift"]["b1_ppm_per_k"] * 1e-6
    b2 = image["drift"]["b2_ppm_per_k2"] * 1e-6
    t_ref = image["drift"]["reference_c"]
    nodes = image["curve"]["nodes"]
    xs = np.array([n["shift"] for n in nodes])
    ys = np.array([n["value"] for n in nodes], dtype=float)

    df = pd.read_csv(field_csv, comment="#")
    cycles = df["cycles"].to_numpy(dtype=float)
    ticks = df["ticks"].to_numpy(dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        freq = f_ref * cycles / ticks
        s = ((ticks / cycles) / p_rest) ** 2 - 1.0
    dt = df["temp_c"].to_numpy(dtype=float) - t_ref
    sc = (1.0 + s) * (1.0 + b1 * dt + b2 * dt * dt) - 1.0
    value = np.interp(sc, xs, ys)
    fault = (cycles == 0) | (ticks == 0) | (freq < lo_hz) | (freq > hi_hz)
    status = np.where(fault, "fault", np.where(sc < xs[0], "below_range", np.where(sc > xs[-1], "no_target", "ok")))
    out = pd.DataFrame(
        {
            "time_s": df["time_s"],
            "channel": df["channel"],
            "status": status,
            "value": np.where(fault, np.nan, np.round(value)),
            "shift_ppm": np.where(fault, np.nan, sc * 1e6),
        }
    )
    out.to_csv(out_csv, index=False, float_format="%.6f")


if __name__ == "__main__":
    main()
