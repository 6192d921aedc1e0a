"""Speed of costing many simulated paths, and of drawing them with the block bootstrap.

Target: ``cost_paths`` for 1,000 paths of one year of hourly energy (8,760 intervals) in at
most 2 s on two cores, under the sample's time-of-use option with a second version taking
effect mid-year (three energy periods, two demand charges, holidays, a tax). Run with
``.venv/bin/python tests/benchmarks/bench_tariffs.py``; it prints the figures and exits with
status 1 when the target is missed. The bootstrap timings are printed for information.
"""

from __future__ import annotations

import sys
import time
from pathlib import Path

import numpy as np
import pandas as pd

from engine.bootstrap import stationary_indices
from engine.tariffs import cost_paths, read_tariff, tariff_from_dict

ZONE = "America/Chicago"
PATHS = 1000
TARGET_SECONDS = 2.0
CARD = (
    Path(__file__).resolve().parents[2]
    / "sample"
    / "tariffs"
    / "orrinvale-main-electric-tou-option.ratecard.toml"
)


def two_version_tariff():
    """The sample time-of-use option, plus a dearer version from 2027-04-01."""
    data = read_tariff(CARD).to_dict()
    later = dict(data["version"][0], effective_from="2027-04-01", fixed_per_month=560.0)
    later["time_of_use"] = [
        dict(period, per_kwh=round(period["per_kwh"] * 1.04, 4)) for period in later["time_of_use"]
    ]
    data["version"].append(later)
    return tariff_from_dict(data, source=str(CARD))


def timed(work) -> tuple[float, object]:
    started = time.perf_counter()
    result = work()
    return time.perf_counter() - started, result


def main() -> int:
    tariff = two_version_tariff()
    first, after = pd.Timestamp("2027-01-01", tz=ZONE), pd.Timestamp("2028-01-01", tz=ZONE)
    index = pd.date_range(first, after, freq="h", inclusive="left").tz_convert("UTC")
    generator = np.random.default_rng(8760)
    local_hour = index.tz_convert(ZONE).hour.to_numpy()
    shape = 900.0 + 300.0 * ((local_hour >= 8) & (local_hour < 20))
    paths = shape * (1.0 + 0.08 * generator.standard_normal((PATHS, len(index))))

    runs = [timed(lambda: cost_paths(paths, index, ZONE, tariff)) for _ in range(3)]
    seconds = [run[0] for run in runs]
    shape_out = runs[0][1].shape
    print(f"cost_paths {PATHS} x {len(index)} hourly -> {shape_out}")
    print(f"  first run {seconds[0]:.3f} s, best {min(seconds):.3f} s (target {TARGET_SECONDS} s)")

    history = pd.date_range(
        pd.Timestamp("2024-01-01", tz=ZONE), pd.Timestamp("2027-01-01", tz=ZONE), freq="h"
    ).tz_convert("UTC")[:-1]
    drew, _ = timed(lambda: stationary_indices(len(history), len(index), 168.0, PATHS, generator))
    print(f"stationary_indices {PATHS} x {len(index)} from {len(history)}: {drew:.3f} s")

    if max(seconds) > TARGET_SECONDS:
        print("cost_paths missed its target")
        return 1
    return 0


if __name__ == "__main__":
    sys.exit(main())
