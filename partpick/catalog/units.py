"""Numbers in catalogue cells: plain SI numbers, SI prefixes and IEC 60062 letter codes.

Unit-named columns (``_v``, ``_a``, ``_w``, ...) take plain numbers only, so
that ``22p`` in ``comp_pf`` is refused rather than read as 22e-12 pF. Value
columns (``value_min``, ``value_max``) also accept an SI prefix (``4.7k``,
``100n``, ``1000u``) and the IEC 60062 letter code, where the multiplier letter
stands in place of the decimal point (``4k7`` = 4.7e3, ``0R22`` = 0.22,
``2u2`` = 2.2e-6). ``m`` is milli and ``M`` is mega.
"""

from __future__ import annotations

import math
import re

#: SI prefixes accepted in value cells; ``R`` marks the decimal point of a
#: resistance in the IEC 60062 code. ``E`` is not taken: ``4E7`` would clash
#: with the exponent notation of a plain number.
PREFIXES: dict[str, float] = {
    "p": 1e-12,
    "n": 1e-9,
    "u": 1e-6,
    "\u00b5": 1e-6,
    "m": 1e-3,
    "R": 1.0,
    "r": 1.0,
    "k": 1e3,
    "K": 1e3,
    "M": 1e6,
    "G": 1e9,
}

_PLAIN = re.compile(r"^[+-]?(\d+(\.\d*)?|\.\d+)([eE][+-]?\d+)?$")
_PREFIXED = re.compile(r"^(\d+(?:\.\d*)?|\.\d+)([pnu\u00b5mRrkKMG])$")
_LETTER_CODE = re.compile(r"^(\d*)([pnu\u00b5mRrkKMG])(\d+)$")


def parse_number(text: str) -> float:
    """Parse a plain decimal number (no prefix, no unit).

    >>> parse_number("2.5")
    2.5
    >>> parse_number("1e-3")
    0.001

    Raises
    ------
    ValueError
        With a reason fit for the user when the text is not a finite number.
    """
    s = text.strip()
    if not _PLAIN.match(s):
        if _PREFIXED.match(s) or _LETTER_CODE.match(s):
            raise ValueError(
                f"'{s}' has an SI prefix or letter code; this column takes a plain number "
                "in the unit its name gives"
            )
        raise ValueError(f"'{s}' is not a number")
    value = float(s)
    if not math.isfinite(value):
        raise ValueError(f"'{s}' is not a finite number")
    return value


def parse_value(text: str) -> float:
    """Parse a component value: plain, SI-prefixed or IEC 60062 letter code.

    >>> parse_value("4k7"), parse_value("0R22"), parse_value("100n"), parse_value("2u2")
    (4700.0, 0.22, 1e-07, 2.2e-06)
    >>> parse_value("4.7k"), parse_value("1M"), parse_value("10m")
    (4700.0, 1000000.0, 0.01)

    Trailing unit symbols (``ohm``, ``F``, the ohm sign) are tolerated:
    ``22kohm`` and ``100nF`` read as 22e3 and 100e-9.
    """
    s = text.strip()
    for unit in ("ohms", "ohm", "\u03a9", "\u2126", "F"):
        if s.endswith(unit) and len(s) > len(unit):
            s = s[: -len(unit)].strip()
            break
    if _PLAIN.match(s):
        return parse_number(s)
    m = _PREFIXED.match(s)
    if m:
        return _scaled(float(m.group(1)), m.group(2))
    m = _LETTER_CODE.match(s)
    if m:
        whole, letter, frac = m.groups()
        return _scaled(float(f"{whole or '0'}.{frac}"), letter)
    raise ValueError(
        f"'{text.strip()}' is not a value (use a number, an SI prefix such as 4.7k or 100n, "
        "or an IEC 60062 code such as 4k7 or 0R22)"
    )


def _scaled(mantissa: float, letter: str) -> float:
    # Round away binary noise so that 4k7 == 4700.0 exactly.
    return float(f"{mantissa * PREFIXES[letter]:.12g}")
