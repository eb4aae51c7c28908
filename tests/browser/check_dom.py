#!/usr/bin/env python3
"""Check the DOM Chromium dumped after the report's script ran.

    check_dom.py DOM.html REPORT.csv

One channel row per CSV record, in the same order within each rig table, with the same
final rate (the cell's data-v, in Hz) and the same status (the row group's data-status,
and the status cell written as a word after a symbol); the script ran (sort buttons in
the headers, the filter count filled in). Reference values: 24.576 MHz ÷ 240 ÷ 2 ÷ 2 ÷ 8
= 3.2 kHz exactly (integer arithmetic) for the blade-fatigue strain channels.
"""

import csv
import sys
from html.parser import HTMLParser


class Dom(HTMLParser):
    def __init__(self):
        super().__init__()
        self.rows = []          # (channel, final data-v, status attr, status text)
        self.buttons = 0
        self.outputs = []
        self._tbody = None
        self._cell = None       # what text we are collecting
        self._text = ""
        self._row = None

    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        cls = (a.get("class") or "").split()
        if tag == "tbody" and "ch" in cls:
            self._tbody = a.get("data-status")
        elif tag == "tr" and "main" in cls and self._tbody is not None:
            self._row = {"status": self._tbody, "final": None, "name": "", "word": ""}
        elif self._row is not None and tag == "th" and a.get("scope") == "row":
            self._cell, self._text = "name", ""
        elif self._row is not None and tag == "td" and "final" in cls:
            self._row["final"] = a.get("data-v")
        elif self._row is not None and tag == "span" and "status" in cls:
            self._cell, self._text = "word", ""
        elif tag == "button" and "sort" in cls:
            self.buttons += 1
        elif tag == "output":
            self._cell, self._text = "output", ""

    def handle_data(self, data):
        if self._cell:
            self._text += data

    def handle_endtag(self, tag):
        if self._cell == "name" and tag == "th":
            self._row["name"], self._cell = self._text, None
        elif self._cell == "word" and tag == "span":
            self._row["word"], self._cell = self._text.strip(), None
        elif self._cell == "output" and tag == "output":
            self.outputs.append(self._text.strip())
            self._cell = None
        elif tag == "tr" and self._row is not None:
            self.rows.append(self._row)
            self._row = None
        elif tag == "tbody":
            self._tbody = None


def main():
    dom_path, csv_path = sys.argv[1], sys.argv[2]
    dom = Dom()
    with open(dom_path, encoding="utf-8") as f:
        dom.feed(f.read())
    with open(csv_path, newline="", encoding="utf-8") as f:
        records = list(csv.DictReader(f))
    fails = []
    if len(dom.rows) != len(records):
        fails.append(f"{len(dom.rows)} rows in the page, {len(records)} channels in the CSV")
    symbols = {"pass": "\u2714", "unchecked": "?", "note": "\u2139", "warning": "\u25b2", "error": "\u2716"}
    for row, rec in zip(dom.rows, records):
        name = rec["channel"]
        if row["name"] != name:
            fails.append(f"row {row['name']!r} where the CSV has {name!r}")
            continue
        want = rec["final_rate_hz"]
        if want and (row["final"] is None or float(row["final"]) != float(want)):
            fails.append(f"{name}: final rate {row['final']} in the page, {want} in the CSV")
        if row["status"] != rec["status"]:
            fails.append(f"{name}: status {row['status']} in the page, {rec['status']} in the CSV")
        if row["word"] != f"{symbols[rec['status']]} {rec['status']}":
            fails.append(f"{name}: status cell reads {row['word']!r}")
    strain = [r for r in dom.rows if r["name"].startswith("root-sg-")]
    if not strain or any(float(r["final"]) != 3200.0 for r in strain):
        fails.append("the blade-fatigue strain channels are not at 3.2 kHz")
    statuses = {r["status"] for r in dom.rows}
    if not {"pass", "error"} <= statuses:
        fails.append(f"examples/ should hold passing and failing channels, got {statuses}")
    if dom.buttons == 0:
        fails.append("no sort buttons: the page's script did not run")
    if not dom.outputs or not all(o.endswith("channels shown") for o in dom.outputs):
        fails.append(f"the filter counts were not filled in: {dom.outputs}")
    if fails:
        print("\n".join(fails))
        sys.exit(1)
    print(f"{len(dom.rows)} channel rows match the CSV; script ran ({dom.buttons} sort buttons)")


if __name__ == "__main__":
    main()
