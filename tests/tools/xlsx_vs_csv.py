#!/usr/bin/env python3
"""Reads a .xlsx workbook back with Python's own zipfile and XML parser (the
SpreadsheetML of ECMA-376 Part 1: workbook.xml, its relationships, the sheets,
shared or inline strings) and compares a sheet cell for cell with a CSV file.

Usage: xlsx_vs_csv.py WORKBOOK SHEET CSV
Checks, for that sheet:
  - the header row is the CSV's header and the two header rows are frozen;
  - every CSV field is the cell below: an empty field an absent cell, a number
    the same number stored as a number, text the same text;
  - a column with a unit in the second header row holds numbers only;
  - every column has a width between 6 and 50 characters;
  - the sheet has no row the CSV has not.
Prints one line of counts; exits 1 with the first difference."""
import csv
import re
import sys
import zipfile
import xml.etree.ElementTree as ET

NS = {"m": "http://schemas.openxmlformats.org/spreadsheetml/2006/main",
      "r": "http://schemas.openxmlformats.org/officeDocument/2006/relationships",
      "pr": "http://schemas.openxmlformats.org/package/2006/relationships"}


def fail(msg):
    print("xlsx_vs_csv: FAIL: " + msg)
    sys.exit(1)


def col_index(ref):
    letters = re.match(r"[A-Z]+", ref).group(0)
    n = 0
    for ch in letters:
        n = n * 26 + (ord(ch) - 64)
    return n - 1


def sheet_path(z, name):
    wb = ET.fromstring(z.read("xl/workbook.xml"))
    rels = ET.fromstring(z.read("xl/_rels/workbook.xml.rels"))
    target = {r.get("Id"): r.get("Target") for r in rels.findall("pr:Relationship", NS)}
    names = []
    for s in wb.find("m:sheets", NS):
        names.append(s.get("name"))
        if s.get("name") == name:
            t = target[s.get("{%s}id" % NS["r"])]
            return t[1:] if t.startswith("/") else "xl/" + t, names
    fail("no sheet '%s' (sheets: %s)" % (name, ", ".join(names)))


def read_cells(z, path):
    shared = []
    if "xl/sharedStrings.xml" in z.namelist():
        sst = ET.fromstring(z.read("xl/sharedStrings.xml"))
        shared = ["".join(t.text or "" for t in si.iter("{%s}t" % NS["m"])) for si in sst]
    root = ET.fromstring(z.read(path))
    cells = {}
    for row in root.find("m:sheetData", NS):
        r = int(row.get("r")) - 1
        for c in row.findall("m:c", NS):
            k = col_index(c.get("r"))
            t = c.get("t", "n")
            if t == "inlineStr":
                cells[(r, k)] = ("s", "".join(x.text or "" for x in c.iter("{%s}t" % NS["m"])))
            elif t == "s":
                cells[(r, k)] = ("s", shared[int(c.find("m:v", NS).text)])
            elif t == "b":
                cells[(r, k)] = ("n", float(c.find("m:v", NS).text))
            elif t == "n":
                v = c.find("m:v", NS)
                if v is not None:
                    cells[(r, k)] = ("n", float(v.text))
            else:
                fail("%s: cell %s of type '%s'" % (path, c.get("r"), t))
    return root, cells


def is_number(s):
    try:
        float(s)
        return True
    except ValueError:
        return False


def main():
    book, sheet, csv_path = sys.argv[1:4]
    with zipfile.ZipFile(book) as z:
        if z.testzip() is not None:
            fail("%s: a damaged member" % book)
        path, _ = sheet_path(z, sheet)
        root, cells = read_cells(z, path)
    with open(csv_path, newline="") as f:
        rows = list(csv.reader(f))
    head = rows[0]
    where = "%s:%s" % (book, sheet)
    got = [cells.get((0, k), ("", ""))[1] for k in range(len(head))]
    if got != head:
        fail("%s: header row %s, the CSV's %s" % (where, got, head))
    pane = root.find("m:sheetViews/m:sheetView/m:pane", NS)
    if pane is None or pane.get("state") != "frozen" or pane.get("ySplit") != "2":
        fail("%s: the two header rows are not frozen" % where)
    widths = {}
    for c in root.find("m:cols", NS):
        for k in range(int(c.get("min")) - 1, int(c.get("max"))):
            widths[k] = float(c.get("width"))
    for k in range(len(head)):
        if not 6 <= widths.get(k, 0) <= 50:
            fail("%s: column %s has width %s" % (where, head[k], widths.get(k)))
    units = [cells.get((1, k), ("", ""))[1] for k in range(len(head))]
    compared = numbers = 0
    for i, row in enumerate(rows[1:]):
        r = i + 2
        if len(row) != len(head):
            fail("%s: CSV line %d has %d fields" % (csv_path, i + 2, len(row)))
        for k, field in enumerate(row):
            cell = cells.get((r, k))
            at = "%s row %d column %s" % (where, r + 1, head[k])
            if field == "":
                if cell is not None:
                    fail("%s: %r where the CSV is empty" % (at, cell[1]))
                continue
            if cell is None:
                fail("%s: empty where the CSV has %r" % (at, field))
            compared += 1
            if cell[0] == "n":
                numbers += 1
                if not is_number(field) or float(field) != cell[1]:
                    fail("%s: number %r, the CSV's %r" % (at, cell[1], field))
            else:
                if units[k]:
                    fail("%s: text %r in a column of unit %s" % (at, cell[1], units[k]))
                if cell[1] != field:
                    fail("%s: text %r, the CSV's %r" % (at, cell[1], field))
    extra = [rc for rc in cells if rc[0] >= len(rows) + 1]
    if extra:
        fail("%s: %d cells below the CSV's last row" % (where, len(extra)))
    print("%s: %d rows x %d columns, %d cells equal to the CSV (%d numbers)"
          % (where, len(rows) - 1, len(head), compared, numbers))


if __name__ == "__main__":
    main()
