"""Preferred-number series for resistors and capacitors (IEC 60063).

Every resistor and capacitor value partpick chooses comes from one of the
E-series E3, E6, E12, E24, E48, E96 or E192 (model s.9). This module holds the
tables, finds series values near a target, chooses the best two-resistor pair
for a ratio, and writes and reads values in SI-prefix notation.

Values are produced as correctly rounded floats of their decimal value
(``0.22`` in the series is the float ``0.22``), and every comparison with a
caller's number uses a relative tolerance of ``REL_TOL`` (1e-9), so a value
already in the series is recognised as such despite float noise.

References
----------
.. [1] IEC 60063:2015, Preferred number series for resistors and capacitors.
.. [2] IEC 60062:2016, Marking codes for resistors and capacitors (letter code).
"""

from __future__ import annotations

import functools
import re
from collections.abc import Callable
from decimal import Decimal

import numpy as np
from numpy.typing import ArrayLike, NDArray

SERIES: tuple[str, ...] = ("E3", "E6", "E12", "E24", "E48", "E96", "E192")

#: Relative tolerance for "this value is in the series" comparisons.
REL_TOL = 1e-9

# IEC 60063 [1], two significant figures, written as integers 10..91.
# E24 keeps its historical values (2.7, 3.0, 3.3, 3.6, 3.9, 4.3, 4.7, 5.1, 5.6,
# 6.2, 6.8, 8.2, 9.1), which are not the rounded geometric series.
_E24_2SIG = (
    10, 11, 12, 13, 15, 16, 18, 20, 22, 24, 27, 30,
    33, 36, 39, 43, 47, 51, 56, 62, 68, 75, 82, 91,
)
_E12_2SIG = (10, 12, 15, 18, 22, 27, 33, 39, 47, 56, 68, 82)
_E6_2SIG = (10, 15, 22, 33, 47, 68)
_E3_2SIG = (10, 22, 47)

# IEC 60063 [1], E192, three significant figures, written as integers 100..988.
# Note 920 (the geometric series rounds to 919; the standard lists 920).
_E192_3SIG = (
    100, 101, 102, 104, 105, 106, 107, 109, 110, 111, 113, 114,
    115, 117, 118, 120, 121, 123, 124, 126, 127, 129, 130, 132,
    133, 135, 137, 138, 140, 142, 143, 145, 147, 149, 150, 152,
    154, 156, 158, 160, 162, 164, 165, 167, 169, 172, 174, 176,
    178, 180, 182, 184, 187, 189, 191, 193, 196, 198, 200, 203,
    205, 208, 210, 213, 215, 218, 221, 223, 226, 229, 232, 234,
    237, 240, 243, 246, 249, 252, 255, 258, 261, 264, 267, 271,
    274, 277, 280, 284, 287, 291, 294, 298, 301, 305, 309, 312,
    316, 320, 324, 328, 332, 336, 340, 344, 348, 352, 357, 361,
    365, 370, 374, 379, 383, 388, 392, 397, 402, 407, 412, 417,
    422, 427, 432, 437, 442, 448, 453, 459, 464, 470, 475, 481,
    487, 493, 499, 505, 511, 517, 523, 530, 536, 542, 549, 556,
    562, 569, 576, 583, 590, 597, 604, 612, 619, 626, 634, 642,
    649, 657, 665, 673, 681, 690, 698, 706, 715, 723, 732, 741,
    750, 759, 768, 777, 787, 796, 806, 816, 825, 835, 845, 856,
    866, 876, 887, 898, 909, 920, 931, 942, 953, 965, 976, 988,
)

# (digits as integers, significant figures). E96 and E48 are every second and
# every fourth term of E192 by the definition of the series in [1]
# (10**(2i/192) = 10**(i/96)); the 920 correction falls on an odd E192 index,
# so it is in E192 only.
_TABLES: dict[str, tuple[tuple[int, ...], int]] = {
    "E3": (_E3_2SIG, 2),
    "E6": (_E6_2SIG, 2),
    "E12": (_E12_2SIG, 2),
    "E24": (_E24_2SIG, 2),
    "E48": (_E192_3SIG[::4], 3),
    "E96": (_E192_3SIG[::2], 3),
    "E192": (_E192_3SIG, 3),
}


def _table(name: str) -> tuple[NDArray[np.int64], int]:
    try:
        digits, sig = _TABLES[name]
    except KeyError:
        known = ", ".join(SERIES)
        raise ValueError(f"unknown E-series {name!r}; expected one of {known}") from None
    return np.asarray(digits, dtype=np.int64), sig


def _scaled(digits: NDArray[np.int64], exponent: NDArray[np.int64]) -> NDArray[np.float64]:
    """digits * 10**exponent as correctly rounded floats (no float noise).

    Integer digits times an exact power of ten, or divided by one: IEEE
    multiplication and division round correctly, so 22 / 100 is the float 0.22.
    """
    digits_f = digits.astype(np.float64)
    up = np.where(exponent >= 0, exponent, 0)
    down = np.where(exponent < 0, -exponent, 0)
    return digits_f * 10.0**up / 10.0**down


def series_mantissas(name: str) -> NDArray[np.float64]:
    """Decade values of an E-series in [1, 10), as listed in IEC 60063.

    Parameters
    ----------
    name : str
        ``"E3"``, ``"E6"``, ``"E12"``, ``"E24"``, ``"E48"``, ``"E96"`` or ``"E192"``.

    Returns
    -------
    numpy.ndarray
        Ascending mantissas, 3 to 192 of them.

    Raises
    ------
    ValueError
        For an unknown series name.

    References
    ----------
    .. [1] IEC 60063:2015, tables 1 and 2.

    Examples
    --------
    >>> series_mantissas("E6").tolist()
    [1.0, 1.5, 2.2, 3.3, 4.7, 6.8]
    """
    digits, sig = _table(name)
    return _scaled(digits, np.full(digits.shape, 1 - sig))


def series_values(name: str, lo: float, hi: float) -> NDArray[np.float64]:
    """Every value of an E-series in [lo, hi], across decades, ascending.

    The bounds are inclusive with relative tolerance ``REL_TOL`` (so lo may
    exceed hi by float noise, and a value at either bound is kept).

    Parameters
    ----------
    name : str
        Series name, see ``SERIES``.
    lo, hi : float
        Range [unit of the value, e.g. ohm or F]; ``0 < lo <= hi``, both finite.

    Returns
    -------
    numpy.ndarray
        Ascending series values (may be empty).

    Examples
    --------
    >>> series_values("E12", 0.1, 0.5).tolist()
    [0.1, 0.12, 0.15, 0.18, 0.22, 0.27, 0.33, 0.39, 0.47]
    """
    digits, sig = _table(name)
    if not (np.isfinite(lo) and np.isfinite(hi) and 0.0 < lo <= hi * (1.0 + 2.0 * REL_TOL)):
        raise ValueError(f"need finite 0 < lo <= hi, got lo={lo!r}, hi={hi!r}")
    first = int(np.floor(np.log10(lo))) - 1
    last = int(np.floor(np.log10(hi))) + 1
    decades = np.arange(first, last + 1, dtype=np.int64)
    exponent = (decades[:, None] + (1 - sig)) * np.ones_like(digits)[None, :]
    values = _scaled(np.broadcast_to(digits, exponent.shape), exponent).ravel()
    keep = (values >= lo * (1.0 - REL_TOL)) & (values <= hi * (1.0 + REL_TOL))
    return values[keep]


@functools.lru_cache(maxsize=256)
def _bounded_values(name: str, lo: float, hi: float) -> NDArray[np.float64]:
    """:func:`series_values` of a family's fixed range, computed once (read-only)."""
    values = series_values(name, lo, hi)
    values.flags.writeable = False
    return values


def _grid_for(
    x: NDArray[np.float64], name: str, lo: float | None, hi: float | None
) -> NDArray[np.float64]:
    """Series values in [lo, hi], or a decade beyond the positive finite x when unbounded."""
    if lo is not None and hi is not None:
        return _bounded_values(name, float(lo), float(hi))
    finite = x[np.isfinite(x) & (x > 0.0)]
    span_lo = float(finite.min()) / 10.0 if finite.size else 1.0
    span_hi = float(finite.max()) * 10.0 if finite.size else 10.0
    lo_v = span_lo if lo is None else lo
    hi_v = span_hi if hi is None else hi
    if lo is None:  # one-sided bound: keep the open side wide enough to reach it
        lo_v = min(lo_v, hi_v)
    if hi is None:
        hi_v = max(hi_v, lo_v)
    return series_values(name, lo_v, hi_v)


def scalar_or_array(values: NDArray[np.float64]) -> NDArray[np.float64] | np.float64:
    """A 0-d array as its numpy scalar, any other array unchanged."""
    return values[()] if values.ndim == 0 else values


def _lookup(grid: NDArray[np.float64], x: NDArray[np.float64], up: bool) -> NDArray[np.float64]:
    """Smallest grid value >= x (up) or largest <= x, within REL_TOL; nan when none."""
    if grid.size == 0:
        return np.full(x.shape, np.nan)
    if up:
        idx = np.searchsorted(grid, x * (1.0 - REL_TOL), side="left")
        ok = idx < grid.size
    else:
        idx = np.searchsorted(grid, x * (1.0 + REL_TOL), side="right") - 1
        ok = idx >= 0
    found = grid[np.clip(idx, 0, grid.size - 1)]
    return np.where(ok & np.isfinite(x) & (x > 0.0), found, np.nan)


def next_up(
    x: ArrayLike, name: str, lo: float | None = None, hi: float | None = None
) -> NDArray[np.float64] | np.float64:
    """Smallest series value >= x (x itself when already in the series).

    Parameters
    ----------
    x : float or array_like
        Target value(s) [any unit], positive.
    name : str
        Series name, see ``SERIES``.
    lo, hi : float, optional
        Restrict the answer to [lo, hi] (a family's value range).

    Returns
    -------
    float or numpy.ndarray
        The value, or nan where x is not positive and finite or no series value
        in range is >= x.

    Examples
    --------
    >>> float(next_up(4800.0, "E12")), float(next_up(0.22, "E12"))
    (5600.0, 0.22)
    """
    xa = np.asarray(x, dtype=np.float64)
    return scalar_or_array(_lookup(_grid_for(np.atleast_1d(xa), name, lo, hi), xa, up=True))


def next_down(
    x: ArrayLike, name: str, lo: float | None = None, hi: float | None = None
) -> NDArray[np.float64] | np.float64:
    """Largest series value <= x (x itself when already in the series).

    Parameters and Returns as for ``next_up``, mirrored.

    Examples
    --------
    >>> float(next_down(4800.0, "E12"))
    4700.0
    """
    xa = np.asarray(x, dtype=np.float64)
    return scalar_or_array(_lookup(_grid_for(np.atleast_1d(xa), name, lo, hi), xa, up=False))


def nearest_value(
    x: ArrayLike, name: str, lo: float | None = None, hi: float | None = None
) -> NDArray[np.float64] | np.float64:
    """Series value nearest to x in ratio, optionally within [lo, hi].

    Nearness is |ln(v / x)|, the natural measure for a geometric series; an
    exact tie goes to the lower value. With bounds, a target outside them
    gets the nearest bound's series value.

    Parameters
    ----------
    x : float or array_like
        Target value(s) [any unit], positive.
    name : str
        Series name, see ``SERIES``.
    lo, hi : float, optional
        Range of allowed values.

    Returns
    -------
    float or numpy.ndarray
        The value; nan where x is not positive and finite, or the range holds
        no series value.

    Examples
    --------
    >>> float(nearest_value(5000.0, "E12")), float(nearest_value(25e3, "E24", 10e3, 22e3))
    (4700.0, 22000.0)
    """
    xa = np.asarray(x, dtype=np.float64)
    grid = _grid_for(np.atleast_1d(xa), name, lo, hi)
    if grid.size == 0:
        return scalar_or_array(np.full(xa.shape, np.nan))
    down = _lookup(grid, xa, up=False)
    up = _lookup(grid, xa, up=True)
    valid = np.isfinite(xa) & (xa > 0.0)
    down = np.where(valid & np.isnan(down), grid[0], down)
    up = np.where(valid & np.isnan(up), grid[-1], up)
    with np.errstate(invalid="ignore", divide="ignore"):
        take_up = np.log(up / xa) < np.log(xa / down)
    return scalar_or_array(np.where(valid, np.where(take_up, up, down), np.nan))


def best_linear_pair(
    b_values: NDArray[np.float64],
    a_values: NDArray[np.float64],
    ideal_a: NDArray[np.float64],
    achieved: Callable[[NDArray[np.float64], NDArray[np.float64]], NDArray[np.float64]],
    target: NDArray[np.float64],
) -> tuple[NDArray[np.float64], NDArray[np.float64], NDArray[np.float64]]:
    """Best (a, b) pair when the achieved quantity rises linearly with a for each b.

    For every target t (shape (n,)) and every allowed b (shape (m,)), the
    quantity ``achieved(a, b)`` is increasing and linear in a and equals t at
    ``ideal_a[n, m]``, so the best a for that b is one of the two series values
    around ``ideal_a``. All n x m x 2 candidates are scored by
    |achieved - t| and the best kept; ties (within REL_TOL) go to the lowest b,
    then the lowest a, so the choice is deterministic. This is an exhaustive
    search over b and exact over a.

    Parameters
    ----------
    b_values : numpy.ndarray
        Allowed b, ascending, shape (m,).
    a_values : numpy.ndarray
        Allowed a, ascending, shape (k,), k >= 1.
    ideal_a : numpy.ndarray
        Unrounded a that hits the target, shape (n, m).
    achieved : callable
        ``achieved(a, b)`` with broadcasting, a (n, m, 2), b (1, m, 1).
    target : numpy.ndarray
        Targets, shape (n,).

    Returns
    -------
    a, b, achieved : numpy.ndarray
        Each shape (n,).
    """
    idx = np.searchsorted(a_values, ideal_a)
    lower = a_values[np.clip(idx - 1, 0, a_values.size - 1)]
    upper = a_values[np.clip(idx, 0, a_values.size - 1)]
    cand_a = np.stack([lower, upper], axis=-1)  # (n, m, 2), lower a first
    cand_b = b_values[None, :, None]
    got = achieved(cand_a, cand_b)
    err = np.abs(got - target[:, None, None]).reshape(target.size, -1)
    best = np.min(err, axis=1, keepdims=True)
    tied = err <= best + REL_TOL * np.abs(target)[:, None]
    pick = np.argmax(tied, axis=1)  # first tie in (b ascending, a ascending) order
    rows = np.arange(target.size)
    flat_a = cand_a.reshape(target.size, -1)
    flat_b = np.broadcast_to(cand_b, cand_a.shape).reshape(target.size, -1)
    return flat_a[rows, pick], flat_b[rows, pick], got.reshape(target.size, -1)[rows, pick]


def best_ratio_pair(
    ratio: ArrayLike,
    name: str,
    lo_b: float,
    hi_b: float,
    lo_a: float | None = None,
    hi_a: float | None = None,
) -> tuple[NDArray[np.float64] | np.float64, ...]:
    """Series pair (a, b) whose ratio a/b is nearest to ``ratio``.

    Minimises |a/b - r| / r over a, b from the series with b in [lo_b, hi_b]
    and a in [lo_a, hi_a] (unbounded when not given); ties go to the lowest b,
    then the lowest a. Used for the gain pair, r = G - 1 = Rf/Rg (model s.9).

    Parameters
    ----------
    ratio : float or array_like
        Wanted ratio(s) r = a/b [1], positive.
    name : str
        Series name, see ``SERIES``.
    lo_b, hi_b : float
        Range of the denominator b [ohm].
    lo_a, hi_a : float, optional
        Range of the numerator a [ohm].

    Returns
    -------
    a_ohm, b_ohm, achieved_ratio, rel_error
        rel_error = achieved / r - 1 (signed). All nan where r is not positive
        and finite or a range holds no series value.

    Examples
    --------
    >>> a, b, r, e = best_ratio_pair(10.0, "E24", 1e3, 10e3)
    >>> float(a), float(b), float(r), float(e)
    (10000.0, 1000.0, 10.0, 0.0)
    """
    r = np.asarray(ratio, dtype=np.float64)
    flat = np.atleast_1d(r).ravel()
    valid = np.isfinite(flat) & (flat > 0.0)
    b_values = series_values(name, lo_b, hi_b)
    safe = np.where(valid, flat, 1.0)
    ideal = safe[:, None] * b_values[None, :]
    a_values = _grid_for(ideal.ravel(), name, lo_a, hi_a) if b_values.size else b_values
    if b_values.size == 0 or a_values.size == 0:
        nan = np.full(r.shape, np.nan)
        return tuple(scalar_or_array(nan.copy()) for _ in range(4))
    a, b, got = best_linear_pair(b_values, a_values, ideal, lambda aa, bb: aa / bb, safe)
    out = [np.where(valid, v, np.nan).reshape(r.shape) for v in (a, b, got, got / safe - 1.0)]
    return tuple(scalar_or_array(v) for v in out)


_PREFIXES = {-15: "f", -12: "p", -9: "n", -6: "u", -3: "m", 0: "", 3: "k", 6: "M", 9: "G", 12: "T"}
_EXPONENTS = {v: k for k, v in _PREFIXES.items() if v} | {"µ": -6, "μ": -6, "R": 0, "r": 0}


def _format_one(x: float, unit: str) -> str:
    if not np.isfinite(x):
        return f"{x}{unit}"
    if x == 0.0:
        return f"0{unit}"
    d = Decimal(f"{x:.3g}")  # 3 significant figures, exact decimal from here on
    adjusted = d.adjusted()  # floor(log10(|d|))
    if adjusted == -1:  # 0.1 <= |x| < 1: the trade writes 0.22, not 220m
        power = 0
    else:
        power = min(max(3 * (adjusted // 3), -15), 12)
    mantissa = d.scaleb(-power).normalize()
    return f"{mantissa:f}{_PREFIXES[power]}{unit}"


def format_value(x: ArrayLike, unit: str = "") -> str | NDArray[np.object_]:
    """Write a value with an SI prefix, at most 3 significant figures.

    The prefix puts the number in [1, 1000), except that values in [0.1, 1)
    are written plainly (``0.22``, common practice for sub-ohm resistors).
    Trailing zeros are dropped. ``parse_value`` reads the result back.

    Parameters
    ----------
    x : float or array_like
        Value(s) [any unit].
    unit : str, optional
        Unit text appended after the prefix.

    Returns
    -------
    str, or numpy.ndarray of str for array input.

    Examples
    --------
    >>> [format_value(v) for v in (0.22, 4700.0, 22100.0, 1e-7, 2.2e-6, 1e6)]
    ['0.22', '4.7k', '22.1k', '100n', '2.2u', '1M']
    >>> format_value(47e-6, "F")
    '47uF'
    """
    xa = np.asarray(x, dtype=np.float64)
    if xa.ndim == 0:
        return _format_one(float(xa), unit)
    return np.vectorize(lambda v: _format_one(v, unit), otypes=[object])(xa)


_VALUE_RE = re.compile(
    r"^\s*(?P<sign>[+-]?)(?P<int>\d*)(?:\.(?P<frac>\d*))?(?P<exp>[eE][+-]?\d+)?"
    r"\s*(?P<code>[fpnuµμmkMGTRr]?)(?P<tail>\d*)\s*$"
)


def parse_value(text: str, unit: str = "") -> float:
    """Read a value in SI-prefix (``4.7k``, ``100n``) or letter-code (``4k7``, ``0R22``) form.

    The letter code of IEC 60062 puts the prefix letter in place of the
    decimal point, with ``R`` for no prefix. A trailing ``unit`` (as written
    by ``format_value``) is removed first. The result is the correctly rounded
    float of the decimal value, so ``parse_value("0.22") == 0.22``.

    Parameters
    ----------
    text : str
        The written value.
    unit : str, optional
        Unit text to strip from the end.

    Returns
    -------
    float

    Raises
    ------
    ValueError
        When the text is not a value.

    References
    ----------
    .. [1] IEC 60062:2016, Marking codes for resistors and capacitors, letter code.

    Examples
    --------
    >>> parse_value("22.1k"), parse_value("4k7"), parse_value("0R22"), parse_value("2u2")
    (22100.0, 4700.0, 0.22, 2.2e-06)
    """
    body = text.strip()
    if unit and body.endswith(unit):
        body = body[: -len(unit)]
    m = _VALUE_RE.match(body)
    if m is None or not (m["int"] or m["frac"] or (m["code"] and m["tail"])):
        raise ValueError(f"not a value: {text!r}")
    code, tail = m["code"], m["tail"]
    if tail and (m["frac"] is not None or m["exp"] or not code):
        raise ValueError(f"not a value: {text!r}")
    power = _EXPONENTS.get(code, 0)
    frac = tail if tail else (m["frac"] or "")
    exp = int(m["exp"][1:]) if m["exp"] else 0
    return float(f"{m['sign']}{m['int'] or '0'}.{frac or '0'}e{exp + power}")
