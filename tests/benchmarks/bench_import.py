"""Import speed and memory, printed beside plain pandas readers on the same files.

Targets (issue: foundation): a csv of 1,000,000 readings in ≤ 5 s; an xlsx with 5 years of
15-minute readings for 10 meters (≈1.75 million cells) in ≤ 20 s with peak memory ≤ 1.5 GB,
on a 2-core machine. Each measurement runs in a fresh process so peak memory is its own.

    .venv/bin/python tests/benchmarks/bench_import.py [--keep DIR]
"""

from __future__ import annotations

import argparse
import json
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np
import pandas as pd

MEASURE = r"""
import json, resource, sys, time
kind, path = sys.argv[1], sys.argv[2]
start = time.perf_counter()
if kind == "loadledger":
    from engine.reading import ReadOptions, read_meter_file
    result = read_meter_file(path, ReadOptions(timezone="America/Chicago"))
    total = sum(float(m.meter.values.sum()) for m in result.meters)
elif kind == "pandas-csv":
    import pandas as pd
    frame = pd.read_csv(path, parse_dates=[0])
    total = float(frame.iloc[:, 1:].sum().sum())
elif kind == "pandas-calamine":
    import pandas as pd
    frame = pd.read_excel(path, engine="calamine", skiprows=3)
    total = float(frame.iloc[:, 1:].sum().sum())
seconds = time.perf_counter() - start
peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
print(json.dumps({"seconds": seconds, "peak_mb": peak, "total": total}))
"""


def make_csv(path: Path, rows: int = 1_000_000) -> None:
    stamps = pd.date_range("2015-01-01", periods=rows, freq="15min")
    values = np.round(np.random.default_rng(1).gamma(4.0, 5.0, rows), 3)
    frame = pd.DataFrame({"Timestamp": stamps.strftime("%Y-%m-%d %H:%M"), "Main (kWh)": values})
    frame.to_csv(path, index=False)


def make_xlsx(path: Path, years: int = 5, meters: int = 10) -> None:
    from openpyxl import Workbook

    stamps = pd.date_range("2020-01-01", periods=years * 365 * 96, freq="15min")
    values = np.round(np.random.default_rng(2).gamma(4.0, 5.0, (len(stamps), meters)), 3)
    book = Workbook(write_only=True)
    sheet = book.create_sheet("Readings")
    sheet.append(["Bench export"])
    sheet.append(["synthetic"])
    sheet.append([])
    sheet.append(["Timestamp"] + [f"Meter {k + 1} (kWh)" for k in range(meters)])
    for stamp, row in zip(stamps.to_pydatetime(), values.tolist(), strict=True):
        sheet.append([stamp, *row])
    book.save(path)


def measure(kind: str, path: Path) -> dict:
    done = subprocess.run(
        [sys.executable, "-c", MEASURE, kind, str(path)],
        capture_output=True,
        text=True,
        check=True,
        cwd=Path(__file__).resolve().parents[2],
    )
    return json.loads(done.stdout)


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__)
    parser.add_argument("--keep", type=Path, help="folder to keep (and reuse) the bench files")
    args = parser.parse_args()
    folder = args.keep or Path(tempfile.mkdtemp())
    folder.mkdir(parents=True, exist_ok=True)
    csv_path, xlsx_path = folder / "million.csv", folder / "five-years-ten-meters.xlsx"
    if not csv_path.exists():
        make_csv(csv_path)
    if not xlsx_path.exists():
        started = time.perf_counter()
        make_xlsx(xlsx_path)
        print(f"(wrote the xlsx in {time.perf_counter() - started:.0f} s)")
    rows = [
        ("csv, 1,000,000 readings", "loadledger", csv_path, 5.0, None),
        ("csv, 1,000,000 readings", "pandas-csv", csv_path, None, None),
        ("xlsx, 10 meters × 5 years × 15 min", "loadledger", xlsx_path, 20.0, 1536.0),
        ("xlsx, 10 meters × 5 years × 15 min", "pandas-calamine", xlsx_path, None, None),
    ]
    print(f"{'file':<36} {'reader':<16} {'seconds':>8} {'peak MB':>8}  target")
    for label, kind, path, max_s, max_mb in rows:
        got = measure(kind, path)
        target = []
        if max_s:
            target.append(f"≤ {max_s:g} s {'ok' if got['seconds'] <= max_s else 'MISSED'}")
        if max_mb:
            target.append(f"≤ {max_mb:g} MB {'ok' if got['peak_mb'] <= max_mb else 'MISSED'}")
        print(f"{label:<36} {kind:<16} {got['seconds']:>8.2f} {got['peak_mb']:>8.0f}  "
              f"{', '.join(target)}")  # fmt: skip


if __name__ == "__main__":
    main()
