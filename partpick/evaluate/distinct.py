"""The distinct rows of a table given as columns, with no Python per row."""

from __future__ import annotations

import math
from collections.abc import Sequence

import numpy as np
import pandas as pd


def distinct_rows(columns: Sequence[np.ndarray], sort: bool = False) -> tuple[np.ndarray, np.ndarray]:
    """``(first, of_row)``: the first row of each distinct row of ``columns`` and each row's distinct row.

    Each column is coded (non-negative integers are their own codes; other
    values by :func:`pandas.factorize`, NaN and None being values of their
    own) and the codes are read as one mixed-radix integer per row, or
    compared as a stacked row when the radices overflow 62 bits. With
    ``sort`` the codes follow the values, so the distinct rows come in the
    lexicographic order of their values; without, in a fixed order.
    """
    n = len(columns[0]) if len(columns) else 0
    codes = [_codes(np.asarray(c), sort) for c in columns]
    sizes = [int(c.max()) + 1 if len(c) else 1 for c in codes]
    if math.prod(sizes) >= 2**62:
        _, first, of_row = np.unique(np.stack(codes, axis=1), axis=0, return_index=True, return_inverse=True)
        return first, of_row.reshape(-1)
    key = np.zeros(n, dtype=np.int64)
    for c, size in zip(codes, sizes):
        key = key * size + c
    # One unstable sort (several times faster than np.unique's stable one);
    # the first row of a run of equal keys is then the least row number in it.
    order = np.argsort(key)
    ordered = key[order]
    starts_run = np.r_[True, ordered[1:] != ordered[:-1]] if n else np.zeros(0, dtype=bool)
    first = np.minimum.reduceat(order, np.flatnonzero(starts_run)) if n else np.zeros(0, dtype=np.int64)
    of_row = np.empty(n, dtype=np.int64)
    of_row[order] = np.cumsum(starts_run) - 1
    return first, of_row


def _codes(column: np.ndarray, sort: bool) -> np.ndarray:
    """Integer codes of a column's values, in the values' order when ``sort``."""
    if column.dtype.kind in "iu" and (not len(column) or column.min() >= 0):
        return column.astype(np.int64)
    codes, values = pd.factorize(column, sort=sort)
    # Blanks (NaN, None) are coded -1: give them a code of their own, after every value
    # (pandas' use_na_sentinel=False does the same, more slowly on text).
    return np.where(codes < 0, len(values), codes).astype(np.int64)
