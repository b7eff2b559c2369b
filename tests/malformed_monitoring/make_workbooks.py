"""Writes the XLSX files of the malformed monitoring corpus (data/*.xlsx) with openpyxl.

Run from anywhere: ``python tests/malformed_monitoring/make_workbooks.py``. The text files of
the corpus are written by hand; workbooks are binary, so this script is how they are made and
changed. (``data/not_a_workbook.xlsx`` is a text file on purpose and is not written here.)
"""

from datetime import datetime
from pathlib import Path

from openpyxl import Workbook

DATA = Path(__file__).resolve().parent / "data"
HEADER = ["time", "FI-1001", "TI-1001", "TI-1011", "FI-1101", "TI-1200", "JI-1201"]


def good_rows(n=12):
    return [[datetime(2026, 1, 1, h), 342, 30, 140, 171, 270, 25] for h in range(n)]


def save(name, sheets):
    """``sheets``: (title, rows) in order; the first is the sheet hxtrain reads."""
    book = Workbook()
    book.remove(book.active)
    for title, rows in sheets:
        sheet = book.create_sheet(title)
        for row in rows:
            sheet.append(row)
    book.save(DATA / name)


def main():
    save("second_sheet.xlsx", [("Notes", []), ("Data", [HEADER, *good_rows()])])
    save("no_time_column.xlsx", [("Data", [["timestamp", *HEADER[1:]], *good_rows()])])
    bad = good_rows(12)
    bad[1][2] = "Bad Input"        # row 3: not a number
    bad[2] = [None] * len(HEADER)  # row 4: an empty row (no time)
    bad[3][0] = "2026-01-01 02:00"  # row 5: a time as text, fine; its flow missing
    bad[3][1] = None
    bad[4][0] = bad[3][0]          # row 6: the time of row 5 again
    save("bad_rows.xlsx", [("History", [HEADER, *bad]), ("Notes", [["exported by hand"]])])


if __name__ == "__main__":
    main()
