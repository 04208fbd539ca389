"""The plain loop's job done with pandas: prorated sums per person, quantity, location and period.

The same fixed periods and policies as `timing.plain_loop` (prorate by days, below-MRD as zero,
measured results only), one vectorised pass per period: what a careful analyst would write.
"""
from __future__ import annotations

from datetime import date

import pandas as pd

from bench.timing import median_seconds
from models.core.codes import Result
from models.exposure.periods import fixed_windows


def frame(rows: list[tuple]) -> pd.DataFrame:
    """The records in force (the read floor's columns) as a data frame."""
    columns = ["person", "quantity", "location", "wear_start", "wear_end", "value", "result", "mrd"]
    table = pd.DataFrame.from_records(rows, columns=columns)
    for column in ("wear_start", "wear_end"):
        table[column] = pd.to_datetime(table[column])
    table["result"] = table["result"].astype(str)
    table["quantity"] = table["quantity"].astype(str)
    table["location"] = table["location"].astype(str)
    return table


def windows_sums(table: pd.DataFrame, on: date, first_block_year: int) -> dict:
    """(person, quantity, location, period) -> prorated dose, as plain_loop gives it."""
    day = pd.Timestamp(on)
    kept = table[(table["wear_start"] <= day) & table["value"].notna()
                 & (table["result"] == str(Result.MEASURED))]
    wear_days = (kept["wear_end"] - kept["wear_start"]).dt.days + 1
    sums = {}
    for kind, (start, end) in fixed_windows(on, first_block_year).items():
        start, end = pd.Timestamp(start), pd.Timestamp(min(end, on))
        days = ((kept["wear_end"].clip(upper=end) - kept["wear_start"].clip(lower=start)).dt.days + 1)
        part = kept.assign(dose=kept["value"] * days / wear_days)[days > 0]
        grouped = part.groupby(["person", "quantity", "location"], sort=False)["dose"].sum()
        sums.update({(*key, kind): value for key, value in grouped.items()})
    return sums


def time_pandas(rows: list[tuple], on: date, first_block_year: int, runs: int) -> float:
    """Median seconds of the pandas job (the frame built from rows already read, as the loop gets them)."""
    seconds, _ = median_seconds(lambda: windows_sums(frame(rows), on, first_block_year), runs)
    return seconds
