#!/usr/bin/env python3
"""Checks an archive index written by `voicekeep batch`: index.csv read with Python's csv
module (RFC 4180) against index.json, row by row, and no cell a spreadsheet would run.

  python3 index-csv.py REPORTS_FOLDER

Exits 0 when it holds, 1 with one line per problem otherwise.
"""
import csv
import io
import json
import os
import sys


def main():
    folder = sys.argv[1]
    problems = []
    raw = open(os.path.join(folder, "index.csv"), "rb").read()
    if raw.startswith(b"\xef\xbb\xbf"):
        raw = raw[3:]
    text = raw.decode("utf-8")
    rows = list(csv.reader(io.StringIO(text, newline="")))
    jobs = json.load(open(os.path.join(folder, "index.json"), encoding="utf-8"))["jobs"]
    header, body = rows[0], rows[1:]
    if len(body) != len(jobs):
        problems.append("index.csv has %d rows, index.json %d jobs" % (len(body), len(jobs)))
    for n, (row, job) in enumerate(zip(body, jobs), start=2):
        if len(row) != len(header):
            problems.append("row %d: %d cells under %d headings" % (n, len(row), len(header)))
            continue
        cells = dict(zip(header, row))
        for key in ("number", "date", "customer", "customer_reference", "speaker", "work", "report", "job_file", "input_sha256"):
            want = job.get(key) or ""
            if want[:1] in ("=", "+", "-", "@", "\t", "\r"):
                want = "'" + want
            if cells.get(key) != want:
                problems.append("row %d, %s: %r in the CSV, %r in the JSON" % (n, key, cells.get(key), want))
        for key, cell in cells.items():
            if cell[:1] in ("=", "+", "-", "@") and not _number(cell):
                problems.append("row %d, %s: %r would run as a formula" % (n, key, cell))
    for p in problems:
        print(p)
    sys.exit(1 if problems else 0)


def _number(cell):
    try:
        float(cell)
        return True
    except ValueError:
        return False


if __name__ == "__main__":
    main()
