#!/usr/bin/env python3
"""The leanest script a hydrographer would write instead of `flumerate convert`: polars reads the
export, parses the time column with an explicit format, rates the head by np.interp in a rating
table and writes the result. No flags, band, corrections, screening or provenance.

usage: polars_lean.py LOGGER.csv RATING.csv OUT.(csv|parquet)
RATING.csv as for pandas_convert.py (`flumerate rate ... --format csv`).
"""
import sys

import numpy as np
import polars as pl

logger, rating, out = sys.argv[1:4]
ZERO = 0.100
table = pl.read_csv(rating)
h_tab = np.concatenate([[0.0], table["head_m"].to_numpy()])
q_tab = np.concatenate([[0.0], table["discharge_m3s"].to_numpy()])
df = pl.read_csv(logger, null_values=["-9999"], schema_overrides={"stage": pl.Float64})
df = df.with_columns(
    pl.col("time").str.to_datetime("%Y-%m-%d %H:%M", strict=False).dt.replace_time_zone("Etc/GMT-1")
)
head = df["stage"].to_numpy() - ZERO
df = df.with_columns(pl.Series("head_m", head), pl.Series("discharge_m3s", np.interp(head, h_tab, q_tab)))
if out.endswith(".parquet"):
    df.write_parquet(out)
else:
    df.write_csv(out)
