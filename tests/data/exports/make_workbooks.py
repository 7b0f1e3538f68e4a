"""Write the small hand-made workbooks used by tests/io/test_real_exports.py (run once by hand; needs xlwt).

Invented station names only. The .xls is written with xlwt (BIFF8), the .xlsx with openpyxl.
"""

from __future__ import annotations

import datetime as dt
from pathlib import Path

HERE = Path(__file__).parent


def main() -> None:
    import openpyxl
    import xlwt

    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = "2021"
    ws.append(["station: KORVA-1"])
    ws.append(["Date", "SO2 flux (t/d)", "SO2err (t/d)"])
    ws.append([dt.datetime(2021, 12, 30), 410.0, 40.0])
    ws.append([dt.datetime(2021, 12, 31), 390.0, 38.0])
    ws2 = wb.create_sheet("2022")
    ws2.append(["Date", "SO2 flux (t/d)", "SO2err (t/d)"])
    ws2.append([dt.datetime(2022, 1, 1), 420.0, 41.0])
    ws2.append([dt.datetime(2022, 1, 2), "n/a", 41.0])
    ws3 = wb.create_sheet("notes")
    ws3.append(["free text", "not data"])
    wb.save(HERE / "flux_per_year.xlsx")

    book = xlwt.Workbook()
    sh = book.add_sheet("counts")
    datefmt = xlwt.easyxf(num_format_str="yyyy-mm-dd")
    for j, h in enumerate(["Date", "VT", "LP", "Hybrid", "Rockfall"]):
        sh.write(0, j, h)
    rows = [(dt.date(2022, 3, 1), 4, 10, 1, 0), (dt.date(2022, 3, 2), 3, None, 2, 1),
            (dt.date(2022, 3, 3), 0, 12, 0, 2)]
    for i, (d, *vals) in enumerate(rows, start=1):
        sh.write(i, 0, d, datefmt)
        for j, v in enumerate(vals, start=1):
            if v is not None:
                sh.write(i, j, v)
    book.add_sheet("readme").write(0, 0, "invented counts for tests")
    book.save(str(HERE / "counts_legacy.xls"))


if __name__ == "__main__":
    main()
