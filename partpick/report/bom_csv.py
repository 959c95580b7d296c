"""The order as CSV for purchasing: one row per supplier and part, and a totals row.

Text cells that a spreadsheet would run as a formula (starting with ``=``,
``+``, ``-``, ``@``, a tab or a carriage return) are prefixed with a single
quote, as OWASP's CSV injection guidance recommends.
"""

from __future__ import annotations

import csv
import io

COLUMNS = ("supplier", "mpn", "value", "qty", "needed", "price_break", "unit_price", "extended_price", "currency", "roles", "refs")
_FORMULA_START = ("=", "+", "-", "@", "\t", "\r")


def neutralise(cell: object) -> str:
    """A cell as text made inert for spreadsheets; numbers stay numbers.

    >>> neutralise("=HYPERLINK(1)"), neutralise("AR-MF24"), neutralise("-1.5"), neutralise("-1+2")
    ("'=HYPERLINK(1)", 'AR-MF24', '-1.5', "'-1+2")
    """
    text = str(cell)
    return "'" + text if text.startswith(_FORMULA_START) and not _is_number(text) else text


def _is_number(text: str) -> bool:
    try:
        float(text)
    except ValueError:
        return False
    return True


def bom_csv_text(rep: dict) -> str:
    """The order CSV of a feasible report; every cell passes :func:`neutralise`."""
    buf = io.StringIO()
    # CR LF ends a row (RFC 4180), so a CR or LF inside a cell is quoted as well.
    w = csv.writer(buf, lineterminator="\r\n")
    cur = rep["totals"]["currency"]
    rows: list[list[object]] = [list(COLUMNS)]
    for o in rep["order"]:
        rows.append([
            o["supplier"], o["mpn"], o["value"] or "", o["qty"], o["needed"], o["price_break"],
            f"{o['unit_price']:.6g}", f"{o['extended_price']:.4f}", cur, " ".join(o["roles"]), " ".join(o["refs"]),
        ])
    for s, fee in rep["totals"]["fees_by_supplier"].items():
        if fee:
            rows.append([s, "order fee", "", "", "", "", "", f"{fee:.4f}", cur, "", ""])
    rows.append(["TOTAL", "", "", "", "", "", "", f"{rep['totals']['total']:.2f}", cur, "", ""])
    w.writerows([neutralise(c) for c in row] for row in rows)
    return buf.getvalue()
