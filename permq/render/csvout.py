"""CSV: one row per result (or failure), the contract's fields flattened."""
from __future__ import annotations

import csv
import io

from ..contract.forms import form_of
from . import factorial, many
from .jsonout import records
from .robustness import csv_row

COLUMNS = ["statement", "family", "statistic_name", "statistic", "alternative", "p_value",
           "method", "algorithm", "arrangements", "draws", "p_low", "p_high", "seed",
           "normal_test", "normal_statistic", "normal_df", "normal_p_value", "estimate_name",
           "estimate", "level", "interval_low", "interval_high", "normal_interval_low",
           "normal_interval_high", "warnings", "error"]
COLUMNS += many.CSV_EXTRA       # several tests at once: one line per row


def flatten(d: dict) -> dict:
    row = {k: "" for k in COLUMNS}
    row["statement"] = d["statement"]
    form = form_of(d)
    if form == "failure":
        row["error"] = d["error"]["message"]
        return row
    if form == "robustness":
        return csv_row(d, COLUMNS)
    if form == "plan":
        row["algorithm"] = d["plan"].get("algorithm", "")
        row["method"] = d["plan"].get("method", "")
        return row
    row.update(family=d["family"], statistic_name=d["statistic"]["name"],
               statistic=d["statistic"]["value"], alternative=d["alternative"],
               p_value=d["p_value"], method=d["method"], algorithm=d["algorithm"],
               arrangements=d.get("arrangements", ""), draws=d.get("draws", ""),
               seed=d.get("seed", ""))
    if d.get("p_interval"):
        row["p_low"], row["p_high"] = d["p_interval"]
    nt = d.get("normal_theory") or {}
    row.update(normal_test=nt.get("test", ""), normal_statistic=nt.get("statistic", ""),
               normal_df=nt.get("df") if nt.get("df") is not None else "",
               normal_p_value=nt.get("p_value", ""))
    est = d.get("estimate")
    if est:
        row.update(estimate_name=est["name"], estimate=est["value"], level=est["level"])
        if est.get("interval"):
            row["interval_low"], row["interval_high"] = est["interval"]
        ni = d.get("normal_interval")
        if ni:
            row["normal_interval_low"], row["normal_interval_high"] = ni["interval"]
    row["warnings"] = "; ".join(d.get("warnings", []))
    return row


def render(outputs) -> str:
    buf = io.StringIO()
    w = csv.DictWriter(buf, fieldnames=COLUMNS, lineterminator="\n")
    w.writeheader()
    for d in records(outputs):
        form = form_of(d)
        if form == "factorial":
            rows = factorial.csv_rows(d, COLUMNS)
        elif form == "power":
            from .power import csv_rows

            rows = csv_rows(d, COLUMNS)
        else:
            rows = many.csv_rows(d, COLUMNS) if form == "several" else [flatten(d)]
        for row in rows:
            w.writerow(row)
    return buf.getvalue()
