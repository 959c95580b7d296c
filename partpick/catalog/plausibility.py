"""Physical plausibility: values that are legal but unlikely, reported as warnings.

A warning does not stop the run (the user may know better), but it is listed
with the file and line in the summary and the design report. The thresholds
are wide limits of what catalogued parts of each kind show (common practice,
from memory); they catch unit slips such as K/W typed for W/K or mV for V.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

#: Lowest credible junction-to-case resistance per package [K/W] (from memory:
#: the best devices of each package are near these values).
RTH_JC_FLOOR_K_W = {"TO-92": 20.0, "SOT-23": 50.0, "TO-126": 1.5, "TO-220": 0.5, "TO-247": 0.25, "TO-3P": 0.25, "TO-264": 0.2}

#: (file, column, test, sentence): ``test`` takes the frame, returns a mask of suspicious rows.
RULES = (
    ("transistors.csv", "rth_jc_k_w", lambda f: f["rth_jc_k_w"] < f["package"].map(RTH_JC_FLOOR_K_W).fillna(0.0),
     "junction-to-case resistance below what any {package} part achieves"),
    ("transistors.csv", "pd_max_w", lambda f: (f["pd_max_w"] > 1.5 * (f["tj_max_c"] - 25) / f["rth_jc_k_w"]),
     "power rating above (tj_max - 25) / rth_jc: the two disagree"),
    ("transistors.csv", "hfe_min", lambda f: f["hfe_min"] > 50_000, "current gain above 50000"),
    ("transistors.csv", "vce_sat_v", lambda f: f["vce_sat_v"] > 10, "saturation voltage above 10 V"),
    ("transistors.csv", "vbe_on_v", lambda f: f["vbe_on_v"] > 4, "base-emitter voltage above 4 V"),
    ("heatsinks.csv", "rth_sa_k_w", lambda f: f["rth_sa_k_w"] < 0.1, "a natural-convection sink below 0.1 K/W"),
    ("heatsinks.csv", "rth_sa_k_w", lambda f: f["rth_sa_k_w"] > 100, "a sink above 100 K/W is no sink"),
    ("opamps.csv", "slew_v_us", lambda f: f["slew_v_us"] > 10_000, "slew rate above 10000 V/us"),
    ("opamps.csv", "gbw_mhz", lambda f: f["gbw_mhz"] > 10_000, "gain-bandwidth above 10 GHz"),
    ("opamps.csv", "iout_max_a", lambda f: f["iout_max_a"] > 10, "output current above 10 A"),
    ("opamps.csv", "swing_headroom_v", lambda f: f["swing_headroom_v"] > 0.5 * f["supply_max_v"], "swing headroom above half the supply span"),
    ("regulators.csv", "rth_ja_k_w", lambda f: f["rth_ja_k_w"] < f["rth_jc_k_w"], "junction-to-ambient below junction-to-case"),
    ("regulators.csv", "dropout_v", lambda f: f["dropout_v"] > 5, "dropout above 5 V"),
    ("diodes.csv", "vf_v", lambda f: f["vf_v"] > 5, "forward voltage above 5 V"),
    ("passives.csv", "power_w", lambda f: f["power_w"] > 1000, "a resistor family rated above 1 kW"),
)


def plausibility_warnings(folder: str, frames: dict[str, pd.DataFrame]) -> list[str]:
    """Sentences ``file:line: column: value: reason`` for each suspicious value.

    Each rule names its first :data:`~partpick.catalog.loader.LISTED_MAX`
    rows; past them, one more sentence counts the rest and gives their
    lines' range (a unit slip in an export can flag thousands of rows).
    """
    from partpick.catalog.loader import LISTED_MAX

    out = []
    for name, column, test, sentence in RULES:
        f = frames[name]
        if f.empty:
            continue
        with np.errstate(all="ignore"):
            mask = np.asarray(test(f).fillna(False), dtype=bool)
        flagged = f[mask]
        for row in flagged.iloc[:LISTED_MAX].to_dict("records"):
            text = sentence.format(**{k: v for k, v in row.items() if isinstance(k, str)})
            out.append(f"{folder}/{name}:{row['line']}: {column}: {row[column]:g} looks implausible ({text})")
        if len(flagged) > LISTED_MAX:
            rest = flagged["line"].iloc[LISTED_MAX:]
            out.append(f"{folder}/{name}: {column}: {len(rest):,} more rows look implausible the same way "
                       f"(lines {int(rest.min())} to {int(rest.max())})")
    return out
