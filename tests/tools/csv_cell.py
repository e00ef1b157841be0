#!/usr/bin/env python3
"""Sets one cell of a CSV table and prints where it is, for the import tests.

Usage: csv_cell.py IN OUT ROW COLUMN VALUE
ROW is the value of the row's first field (the first row with it; "-" for the
header row, whose field COLUMN is then renamed VALUE).  Prints "LINE COL": the
1-based line of the row and the column of the cell's first character in OUT."""
import csv
import sys

src, dst, row, column, value = sys.argv[1:6]
rows = list(csv.reader(open(src, newline="")))
k = rows[0].index(column)
r = 0 if row == "-" else next(i for i, x in enumerate(rows) if i and x[0] == row)
rows[r][k] = value
with open(dst, "w", newline="") as f:
    csv.writer(f, lineterminator="\n").writerows(rows)
line = open(dst).read().split("\n")[r]
col, field, i, quoted = 1, 0, 0, False
while field < k:  # walk the raw line to the start of field k
    ch = line[i]
    if ch == '"':
        quoted = not quoted
    elif ch == "," and not quoted:
        field += 1
        col = i + 2
    i += 1
print(r + 1, col)
