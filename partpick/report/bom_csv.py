"""The order as CSV for purchasing: one row per supplier and part, and a totals row.

Text cells that a spreadsheet would run as a formula (starting with ``=``,
``+``, ``-``, ``@``, a tab or a carriage return) are prefixed with a single
quote, as OWASP's CSV injection guidance recommends.
"""

from __future__ import annotations

import csv
import io

from partpick.report.files import atomic_write_text

COLUMNS = ("supplier", "mpn", "value", "qty", "needed", "price_break", "unit_price", "extended_price", "currency", "roles", "refs")
_FORMULA_START = ("=", "+", "-", "@", "\t", "\r")


def neutralise(cell: str) -> str:
    """A text cell made inert for spreadsheets.

    >>> neutralise("=HYPERLINK(1)"), neutralise("AR-MF24")
    ("'=HYPERLINK(1)", 'AR-MF24')
    """
    return "'" + cell if cell.startswith(_FORMULA_START) else cell


def bom_csv_text(rep: dict) -> str:
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(COLUMNS)
    cur = rep["totals"]["currency"]
    for o in rep["order"]:
        w.writerow([
            neutralise(o["supplier"]), neutralise(o["mpn"]), neutralise(o["value"] or ""),
            o["qty"], o["needed"], o["price_break"], f"{o['unit_price']:.6g}", f"{o['extended_price']:.4f}",
            neutralise(cur), neutralise(" ".join(o["roles"])), neutralise(" ".join(o["refs"])),
        ])
    for s, fee in rep["totals"]["fees_by_supplier"].items():
        if fee:
            w.writerow([neutralise(s), "order fee", "", "", "", "", "", f"{fee:.4f}", neutralise(cur), "", ""])
    w.writerow(["TOTAL", "", "", "", "", "", "", f"{rep['totals']['total']:.2f}", neutralise(cur), "", ""])
    return buf.getvalue()


def write_bom_csv(path: str, rep: dict) -> None:
    atomic_write_text(path, bom_csv_text(rep))
