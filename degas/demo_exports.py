"""Extra invented Velmarra exports in the shapes observatories often send (for the README's everyday examples).

Derived deterministically from the demo scenario, with no random stream of their own, so the main demo files
and ``truth.json`` are untouched:

* ``seismic_daily_counts.csv`` - daily counts by event class (VT, LP, Hybrid, Rockfall, Explosion) from the
  true event list; the days of the VLM1 outage (2024-03-03 to 2024-03-07) are empty cells: not counted.
* ``so2_flux_by_year.xlsx`` - weekly SO2 flux of an invented west-rim station, one sheet per year.
* ``so2_flux_day_numbers.csv`` - the same weekly SO2 flux with time as day numbers since 2023-01-01.
"""

from __future__ import annotations

import datetime as dt
from pathlib import Path

import numpy as np
import pandas as pd

COUNT_CLASSES = (("VT", "VT"), ("LP", "LP"), ("Hybrid", "hybrid"), ("Rockfall", "rockfall"),
                 ("Explosion", "explosion"))
NOT_COUNTED = ("2024-03-03", "2024-03-07")
DAY_ORIGIN = "2023-01-01"


def write_extra_exports(sc, out: Path) -> list[Path]:
    """Write the three extra files into ``out`` and return their paths."""
    return [_counts(sc, out), _by_year(sc, out), _day_numbers(sc, out)]


def _counts(sc, out: Path) -> Path:
    from degas.demo import _write_text

    days = sc.days
    ev = sc.events
    day_idx = ((ev["time"].dt.floor("D") - days[0]).dt.days).to_numpy()
    rows = ["# Velmarra Volcano Observatory: daily event counts by class (synthetic demo data)",
            "# empty cell = not counted (station outage); 0 = no event",
            "Date," + ",".join(h for h, _ in COUNT_CLASSES)]
    per = {c: np.bincount(day_idx[(ev["event_class"] == c).to_numpy()], minlength=len(days)) for _, c in COUNT_CLASSES}
    gap = (days >= pd.Timestamp(NOT_COUNTED[0], tz="UTC")) & (days <= pd.Timestamp(NOT_COUNTED[1], tz="UTC"))
    for i, d in enumerate(days):
        cells = ["" if gap[i] else str(int(per[c][i])) for _, c in COUNT_CLASSES]
        rows.append(f"{d:%Y-%m-%d}," + ",".join(cells))
    return _write_text(out / "seismic_daily_counts.csv", "\n".join(rows) + "\n")


def _weekly_so2(sc) -> tuple[pd.DatetimeIndex, np.ndarray]:
    idx = np.arange(0, len(sc.days), 7)
    t_d = np.array([sc.so2_kg_s[i:i + 7].mean() for i in idx]) * 86.4 * 0.8  # the west rim sees 80 % of it
    return sc.days[idx], np.round(t_d, 0)


def _by_year(sc, out: Path) -> Path:
    from openpyxl import Workbook

    from degas.demo import save_workbook

    weeks, vals = _weekly_so2(sc)
    wb = Workbook()
    first = True
    for year in sorted(set(weeks.year)):
        ws = wb.active if first else wb.create_sheet()
        first = False
        ws.title = str(year)
        ws.append(["station: VLM-W"])
        ws.append(["Date", "SO2 flux (t/d)"])
        for w, v in zip(weeks[weeks.year == year], vals[weeks.year == year], strict=True):
            ws.append([dt.datetime(w.year, w.month, w.day), float(v)])
            ws.cell(row=ws.max_row, column=1).number_format = "yyyy-mm-dd"
    return save_workbook(wb, out / "so2_flux_by_year.xlsx")


def _day_numbers(sc, out: Path) -> Path:
    from degas.demo import _write_text

    weeks, vals = _weekly_so2(sc)
    day = ((weeks - pd.Timestamp(DAY_ORIGIN, tz="UTC")).days).to_numpy()
    body = "\n".join(f"{d},{int(v)}" for d, v in zip(day, vals, strict=True))
    return _write_text(out / "so2_flux_day_numbers.csv",
                       f"# station: VLM-W\n# day = days since {DAY_ORIGIN} 00:00 UTC\nday,SO2 flux (t/d)\n{body}\n")
