"""Reads a weekly panel CSV with Python's csv, datetime and float, as an
independent reference for sluice's model.ReadPanel.

Usage: panel_reference.py DATE KPI CHANNELS CONTROLS < file.csv
(CHANNELS and CONTROLS comma-separated). Prints JSON: ISO dates, the day
gaps and weekdays Python's calendar gives, and every value as float.hex()
(exact binary64 bits) in the order the columns were named.
"""
import csv
import datetime
import io
import json
import sys

date_col, kpi_col, channels, controls = sys.argv[1:5]
channels = channels.split(",")
controls = [c for c in controls.split(",") if c]

text = sys.stdin.buffer.read().decode("utf-8-sig")  # drops a UTF-8 BOM
rows = list(csv.reader(io.StringIO(text, newline="")))
header = [h.strip() for h in rows[0]]
col = {name: i for i, name in enumerate(header)}
data = rows[1:]

dates = [datetime.date.fromisoformat(r[col[date_col]]) for r in data]
out = {
    "weeks": [d.isoformat() for d in dates],
    "gaps": [(b - a).days for a, b in zip(dates, dates[1:])],
    "weekdays": [d.isoweekday() for d in dates],
    "kpi": [float(r[col[kpi_col]]).hex() for r in data],
    "spend": [[float(r[col[c]]).hex() for r in data] for c in channels],
    "control": [[float(r[col[c]]).hex() for r in data] for c in controls],
}
json.dump(out, sys.stdout)
