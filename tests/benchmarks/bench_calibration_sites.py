"""Issued P10–P90 coverage replayed on many sites made of the sample's meters.

Run with ``.venv/bin/python tests/benchmarks/bench_calibration_sites.py`` (not collected by
pytest; about a minute on two cores). It needs ``out/sample-campus.loadledger``
(``bash installer/run-sample.sh``); a copy is budgeted.

What it does: the sample campus is budgeted once as the tool budgets it, with 28 past
month-ahead budgets per meter (:func:`bench_month_ahead.past_budgets`, default weather). Those
past budgets are then issued again as the calibration would have issued them
(:func:`engine.budget.rolling_calibration`, each month's range corrected by the months before
it and pooled over the site's meters as far as they agree), on the whole campus and on 59
smaller sites of its meters drawn at random (40 of three meters, as a small campus has, and
19 of five; a fixed seed). A site's meters pool with each other only, so a meter is issued
differently on each site. Per site: the share of its meter-months held over the last 24
months, and the meters whose share falls outside 65–95 % (the month-ahead target of
``bench_month_ahead.py``). For information: with 24 months a meter moves 4 points a month and
an honest 80 % range falls outside 65–95 % with a chance of about 7 % (binomial: 23 or more of
24 held, 3.3 %; 15 or fewer, 3.6 %), so some sites miss by luck; the same meter missing on
most sites it is in is the calibration's doing.
"""

from __future__ import annotations

import shutil
import sys
import tempfile
from multiprocessing import Pool
from pathlib import Path

import numpy as np
import pandas as pd

ROOT = Path(__file__).resolve().parents[2]
sys.path[:0] = [str(ROOT), str(Path(__file__).resolve().parent)]

from bench_month_ahead import ORIGINS, SAMPLE_PROJECT, SCORED, past_budgets  # noqa: E402

SITES = {3: 40, 5: 19}
BAND = (0.65, 0.95)


def issued_on(site: tuple[pd.DataFrame, tuple[str, ...]]) -> pd.Series:
    """Per meter of the site, the share of its last :data:`SCORED` months held as issued."""
    from engine.budget import rolling_calibration

    pairs, names = site
    mine = pairs[pairs["name"].isin(names)].reset_index(drop=True)
    issued = rolling_calibration(mine, first=0)
    last = sorted(issued["month"].unique())[-SCORED:]
    issued = issued[issued["month"].isin(last)]
    return issued.groupby("name")["held corrected"].mean()


def sites(names: list[str]) -> list[tuple[str, ...]]:
    """The whole campus, then the random smaller sites (seeded)."""
    rng = np.random.default_rng(0)
    drawn = [tuple(names)]
    for size, count in SITES.items():
        drawn += [tuple(rng.choice(names, size, replace=False)) for _ in range(count)]
    return drawn


def main() -> int:
    if not SAMPLE_PROJECT.exists():
        raise SystemExit(f"no {SAMPLE_PROJECT}; run installer/run-sample.sh")
    with tempfile.TemporaryDirectory() as folder:
        copy = Path(folder) / SAMPLE_PROJECT.name
        shutil.copy(SAMPLE_PROJECT, copy)
        pairs, _, _ = past_budgets(copy, ORIGINS["sample campus"])
    pairs = pairs.dropna(subset=["actual kWh"])
    drawn = sites(sorted(pairs["name"].unique()))
    with Pool(2) as pool:
        shares = pool.map(issued_on, [(pairs, names) for names in drawn])
    outside = [share[(share < BAND[0]) | (share > BAND[1])] for share in shares]
    print(f"sample campus, {len(drawn)} sites of its meters: issued P10–P90 over the last "
          f"{SCORED} months")  # fmt: skip
    print(f"  whole campus: {shares[0].mean():.0%} held; per meter "
          f"{', '.join(f'{n} {v:.0%}' for n, v in shares[0].items())}")  # fmt: skip
    for size in SITES:
        sized = [share for share, names in zip(shares, drawn, strict=True) if len(names) == size]
        print(f"  {len(sized)} sites of {size} meters: {np.mean([s.mean() for s in sized]):.1%}"
              " held on average")  # fmt: skip
    by_meter = pd.concat(outside).groupby(level=0).size() if any(len(o) for o in outside) else {}
    count = sum(1 for o in outside if len(o))
    print(
        f"  sites with a meter outside {BAND[0]:.0%}–{BAND[1]:.0%}: {count} of {len(drawn)}"
        + (f" ({', '.join(f'{n} {k}' for n, k in dict(by_meter).items())})" if count else "")
    )
    return 0


if __name__ == "__main__":
    sys.exit(main())
