"""Seeded generator of invented catalogues in the layout of formats.md, for benchmarks.

Every maker, supplier and part number is fictional and built from a scheme
(transistors ``SX<class><serial>N/P``, op-amps ``KV...``, regulators ``RVF``/``RVA``,
heatsinks ``HKX-...``, diodes ``DQ...``; passive families ``ZR-``/``ZC-``). The
numbers are drawn with ``numpy.random.default_rng(seed)`` from ranges that
follow the shipped demo catalogue (which is itself common practice for
through-hole audio parts), so that the example specs have feasible designs:

- transistor classes TO-92 (small signal), TO-126, TO-220, TO-247, TO-3P,
  TO-264, some Darlington pairs; every pair as two rows naming each other;
  ``rth_jc = (tj_max - 25) / pd_max`` (the definition of the Pd rating at
  Tc = 25 degC); a DC SOA curve for a share of them with the power-limited
  segment ``I = Pd / V`` followed by a steeper second-breakdown segment
  (common practice for the shape of a bipolar SOA);
- op-amps of five kinds (general, precision, rail-to-rail, high voltage,
  high current), fixed and adjustable regulators, heatsinks 0.5..25 K/W;
- resistor and capacitor families like the demo's, 2-4 diodes and an LED;
- offers: 1 to 3 suppliers per part, ``breaks`` price breaks each on the
  ladder 1/10/100/1000 with discounts 1, 0.86, 0.68, 0.55 (the demo's
  ratios), MOQs, stock with some zeros.

Command line::

    python tests/bench/make_catalog.py OUT --size small|medium|large [--seed N]
        [--pairs N] [--opamps N] [--regulators N] [--heatsinks N]
        [--passive-families N] [--suppliers N]
"""

from __future__ import annotations

import argparse
import math
from pathlib import Path

import numpy as np
import pandas as pd

#: Counts per size: ``small`` has the shape of the demo catalogue; ``large`` is 10 x ``medium``.
SIZES: dict[str, dict[str, int]] = {
    "small": dict(pairs=25, opamps=16, regulators=6, heatsinks=12, passive_families=18, suppliers=3),
    "medium": dict(pairs=1000, opamps=1000, regulators=300, heatsinks=1000, passive_families=40, suppliers=10),
    "large": dict(pairs=10000, opamps=10000, regulators=3000, heatsinks=10000, passive_families=400, suppliers=100),
}

HEADER = "# partpick benchmark catalogue: invented data from tests/bench/make_catalog.py (seed {seed}). All makers, suppliers and part numbers are fictional."

TRANSISTOR_MAKERS = ("Corvane Semiconductor", "Hallowmere Devices", "Ostrick Power Devices")
OPAMP_MAKERS = ("Ulvane Microcircuits", "Pellinor Analog")
HEATSINK_MAKERS = ("Brackwater Thermal", "Fennick Cooling")
PASSIVE_MAKERS = ("Tresk Passive Works", "Ombry Components")
SUPPLIER_STEMS = (
    "Aldwick", "Brenmoor", "Caskell", "Dunrow", "Elsby", "Farrowgate", "Gilmarsh", "Hestley",
    "Iverholt", "Jaskel", "Kelbury", "Lorrimer", "Mossford", "Nettlecombe", "Orbury", "Pinmere",
    "Quenby", "Rossingale", "Sallowby", "Tamsworth",
)
SUPPLIER_SUFFIXES = ("Electronics", "Components", "Distribution", "Parts", "Supply")

#: Price-break ladder [units] and the unit-price factor at each break (demo catalogue ratios).
BREAK_QTY = np.array([1, 10, 100, 1000])
BREAK_FACTOR = np.array([1.0, 0.86, 0.68, 0.55])

#: Transistor classes: share of the pairs, package, code in the mpn, kind, parameter ranges, price
#: range [currency]. ``vceo`` is a choice set [V]; ``ic``, ``pd`` are uniform ranges [A], [W].
#: ``small`` (TO-92) and ``driver`` (TO-220, Ic <= 1.5 A) pairs are what the bias current
#: sources use; their counts come from :func:`small_pair_counts` (share 0 here); ``power``
#: pairs are output devices split by ``share``, a share of them Darlingtons.
CLASSES: dict[str, dict] = {
    "TO-92": dict(share=0.0, package="TO-92", code="S", kind="small", vceo=(45, 60, 80, 120, 160, 180),
                  ic=(0.1, 0.8), pd=(0.5, 0.625), pinout="EBC", rth_ja=(200, 250), ft=(100, 300), price=(0.04, 0.15),
                  darlington=0.0),
    "TO-220 driver": dict(share=0.0, package="TO-220", code="3", kind="driver", vceo=(120, 160, 180), ic=(1.0, 1.5),
                          pd=(15, 25), pinout="BCE", rth_ja=(62, 62), ft=(60, 150), price=(0.2, 0.45), darlington=0.0),
    "TO-126": dict(share=0.12, package="TO-126", code="1", kind="power", vceo=(60, 80, 100, 120, 160), ic=(2.0, 4.0),
                   pd=(20, 40), pinout="ECB", rth_ja=(100, 100), ft=(3, 60), price=(0.25, 0.5), darlington=0.0),
    "TO-220": dict(share=0.23, package="TO-220", code="2", kind="power", vceo=(60, 80, 100, 120, 140), ic=(4.0, 10.0),
                   pd=(40, 90), pinout="BCE", rth_ja=(62, 62), ft=(3, 30), price=(0.35, 1.1), darlington=0.3),
    "TO-247": dict(share=0.22, package="TO-247", code="4", kind="power", vceo=(100, 120, 150, 160, 200, 230, 250),
                   ic=(8.0, 16.0), pd=(100, 180), pinout="BCE", rth_ja=None, ft=(3, 30), price=(1.0, 3.0), darlington=0.3),
    "TO-3P": dict(share=0.17, package="TO-3P", code="5", kind="power", vceo=(140, 160, 200, 230, 250), ic=(10.0, 15.0),
                  pd=(120, 200), pinout="BCE", rth_ja=None, ft=(4, 30), price=(2.0, 4.2), darlington=0.3),
    "TO-264": dict(share=0.14, package="TO-264", code="6", kind="power", vceo=(200, 230, 250, 260), ic=(15.0, 17.0),
                   pd=(180, 230), pinout="BCE", rth_ja=None, ft=(4, 30), price=(2.8, 5.5), darlington=0.3),
}
#: The first pair of a class takes these numbers (the strong end of the class, like the demo
#: catalogue's workhorses), so that even a small catalogue has feasible designs for the
#: example specs: Vceo [V], Ic [A], Pd [W], hfe at [A], Vce_sat at [A], Vbe at [A], Darlington.
ANCHORS: dict[str, dict] = {
    "TO-92": dict(vceo=160, ic=0.6, pd=0.625, hfe=100, hfe_at=0.01, sat=0.2, sat_at=0.05, vbe=0.7, vbe_at=0.01, darl=False),
    "TO-220 driver": dict(vceo=160, ic=1.5, pd=20, hfe=60, hfe_at=0.15, sat=0.5, sat_at=0.5, vbe=0.8, vbe_at=0.15, darl=False),
    "TO-126": dict(vceo=60, ic=3.0, pd=32, hfe=60, hfe_at=1.0, sat=0.6, sat_at=1.5, vbe=1.0, vbe_at=1.0, darl=False),
    "TO-220": dict(vceo=60, ic=6.0, pd=50, hfe=70, hfe_at=1.0, sat=0.8, sat_at=3.0, vbe=1.1, vbe_at=3.0, darl=False),
    "TO-247": dict(vceo=120, ic=12.0, pd=126, hfe=1000, hfe_at=5.0, sat=2.0, sat_at=6.0, vbe=2.2, vbe_at=5.0, darl=True),
    "TO-3P": dict(vceo=200, ic=15.0, pd=200, hfe=1000, hfe_at=8.0, sat=2.5, sat_at=8.0, vbe=2.5, vbe_at=8.0, darl=True),
    "TO-264": dict(vceo=250, ic=16.0, pd=230, hfe=1000, hfe_at=10.0, sat=2.5, sat_at=10.0, vbe=2.6, vbe_at=10.0, darl=True),
}
#: Gain, saturation and Vbe data of the small-signal kinds: hfe choices at hfe_at_a,
#: Vce_sat range at vce_sat_at_a, Vbe range at vbe_on_at_a (common practice for such parts).
SMALL_KINDS: dict[str, dict] = {
    "small": dict(hfe=(100, 150, 200, 300), hfe_at=0.01, sat=(0.2, 0.3), sat_at=0.05, vbe=(0.65, 0.75), vbe_at=0.01),
    "driver": dict(hfe=(60, 80, 100), hfe_at=0.15, sat=(0.4, 0.6), sat_at=0.5, vbe=(0.75, 0.85), vbe_at=0.15),
}
#: Share of the transistors with a DC SOA curve.
SOA_SHARE = 0.6

#: Op-amp kinds: share, supply span [V], headrooms [V], slew [V/us], GBW [MHz], Iout [A], Vos [mV], price.
OPAMP_KINDS: dict[str, dict] = {
    "general": dict(share=0.25, smin=(5, 10), smax=(30, 36), swing=(1.2, 1.5), vcm=(2.0, 3.0), slew=(0.5, 13),
                    gbw=(1, 10), iout=(0.02, 0.035), vos=(1, 6), price=(0.15, 0.6), comp=0.0),
    "precision": dict(share=0.2, smin=(4, 10), smax=(36, 44), swing=(1.0, 1.5), vcm=(1.5, 2.5), slew=(7, 20),
                      gbw=(8, 20), iout=(0.035, 0.04), vos=(0.5, 2), price=(0.8, 3.0), comp=0.2),
    "rail_to_rail": dict(share=0.15, smin=(2.7, 2.7), smax=(13, 16), swing=(0.05, 0.1), vcm=(0.0, 0.1), slew=(1.5, 10),
                         gbw=(3, 12), iout=(0.05, 0.1), vos=(1, 4), price=(0.3, 1.2), comp=0.0),
    "high_voltage": dict(share=0.25, smin=(8, 10), smax=(60, 80), swing=(1.5, 2.5), vcm=(2.5, 3.0), slew=(9, 20),
                         gbw=(4, 10), iout=(0.03, 0.05), vos=(1, 3), price=(2.0, 5.0), comp=0.0),
    "high_current": dict(share=0.15, smin=(10, 10), smax=(60, 80), swing=(2.0, 2.5), vcm=(3.0, 3.0), slew=(9, 20),
                         gbw=(4, 10), iout=(0.2, 0.5), vos=(2, 3), price=(4.0, 9.0), comp=0.0),
}
OPAMP_PACKAGES = {1: ("DIP-8", "SOIC-8", "SOT-23-5"), 2: ("SOIC-8", "MSOP-8", "DIP-8"), 4: ("SOIC-14", "TSSOP-14")}

#: Passive family templates (the demo's families): kind, series, tolerance [%], range, power [W],
#: voltage [V], ripple [A] at the largest value, code for the id, price range.
PASSIVE_TEMPLATES: tuple[dict, ...] = (
    dict(kind="resistor", series="E24", tol=1, lo="1R", hi="1M", power=0.25, code="MF", price=(0.01, 0.03)),
    dict(kind="resistor", series="E96", tol=0.1, lo="10R", hi="1M", power=0.125, code="TF", price=(0.05, 0.15)),
    dict(kind="resistor", series="E12", tol=5, lo="0R1", hi="10R", power=3, code="PW", price=(0.1, 0.3)),
    dict(kind="resistor", series="E12", tol=5, lo="0R1", hi="10R", power=5, code="PW", price=(0.15, 0.4)),
    dict(kind="resistor", series="E12", tol=5, lo="0R1", hi="4R7", power=1, code="LO", price=(0.05, 0.15)),
    dict(kind="resistor", series="E24", tol=5, lo="1R", hi="100k", power=1, code="MO", price=(0.03, 0.08)),
    dict(kind="resistor", series="E24", tol=5, lo="1R", hi="100k", power=2, code="MO", price=(0.05, 0.12)),
    dict(kind="resistor", series="E24", tol=5, lo="1R", hi="22k", power=3, code="MO", price=(0.08, 0.2)),
    dict(kind="resistor", series="E12", tol=5, lo="1R", hi="10k", power=5, code="WW", price=(0.15, 0.4)),
    dict(kind="cap_ceramic", series="E12", tol=5, lo="10p", hi="10n", voltage=50, code="C0G", price=(0.015, 0.05)),
    dict(kind="cap_ceramic", series="E6", tol=10, lo="1n", hi="1u", voltage=50, code="X7R", price=(0.01, 0.03)),
    dict(kind="cap_film", series="E6", tol=10, lo="1n", hi="2u2", voltage=63, code="FP", price=(0.06, 0.16)),
    dict(kind="cap_film", series="E6", tol=5, lo="1n", hi="1u", voltage=100, code="FP", price=(0.1, 0.3)),
    dict(kind="cap_electrolytic", series="E6", tol=20, lo="1u", hi="4700u", voltage=25, ripple=1.8, code="EL", price=(0.1, 0.2)),
    dict(kind="cap_electrolytic", series="E6", tol=20, lo="1u", hi="4700u", voltage=35, ripple=2.1, code="EL", price=(0.15, 0.3)),
    dict(kind="cap_electrolytic", series="E6", tol=20, lo="1u", hi="4700u", voltage=50, ripple=2.4, code="EL", price=(0.2, 0.4)),
    dict(kind="cap_electrolytic", series="E6", tol=20, lo="1u", hi="4700u", voltage=63, ripple=2.5, code="EL", price=(0.3, 0.6)),
    dict(kind="cap_electrolytic", series="E6", tol=20, lo="1u", hi="470u", voltage=50, ripple=0.35, code="EM", price=(0.04, 0.09)),
)
#: Neighbouring ratings a second-source family may carry instead of the template's.
RESISTOR_POWERS_W = (0.125, 0.25, 0.5, 0.6, 1, 2, 3, 5, 7, 10)
CAP_VOLTAGES_V = (16, 25, 35, 50, 63, 100, 160)

#: Bias diodes (vf at a typical bias current [V], If max [A], package) and the reference LED.
DIODES = (
    ("DQ1020", "DO-35", 0.65, 0.2, "diode"),
    ("DQ1100", "DO-41", 0.70, 1.0, "diode"),
    ("DQ1300", "DO-201AD", 0.72, 3.0, "diode"),
    ("DQ1015", "SOD-80", 0.62, 0.15, "diode"),
    ("DQL18R", "LED-3mm", 1.8, 0.02, "led"),
)

#: Standard Rth_cs values of insulating mounting kits [K/W] (common practice: mica or
#: silicone pads 0.25..0.6 K/W for TO-247-class packages, about 1 K/W for TO-126).
MOUNTING_KITS_K_W = (0.25, 0.3, 0.35, 0.5, 0.6, 1.0, 1.2)


# --------------------------------------------------------------------------- formatting


def fmt(x: float | None) -> str:
    """A number with three significant digits in plain positional notation, '' for None/NaN."""
    if x is None or (isinstance(x, float) and math.isnan(x)):
        return ""
    return np.format_float_positional(float(f"{float(x):.3g}"), trim="-")


def fmt_all(values) -> list[str]:
    """:func:`fmt` over a sequence."""
    return [fmt(v) for v in values]


def allocate(n: int, shares: np.ndarray, minimum: int = 1) -> np.ndarray:
    """Split ``n`` items over classes by ``shares`` (largest remainders), at least ``minimum`` each when n allows."""
    shares = np.asarray(shares, float) / np.sum(shares)
    base = np.full(len(shares), minimum if n >= minimum * len(shares) else 0)
    rest = n - base.sum()
    raw = shares * rest
    out = base + np.floor(raw).astype(int)
    left = n - out.sum()
    out[np.argsort(-(raw - np.floor(raw)), kind="stable")[:left]] += 1
    return out


def _uniform(rng: np.random.Generator, lo_hi: tuple[float, float], n: int) -> np.ndarray:
    lo, hi = lo_hi
    return rng.uniform(lo, hi, n) if hi > lo else np.full(n, float(lo))


# --------------------------------------------------------------------------- transistors


def soa_text(vceo_v: float, ic_max_a: float, pd_max_w: float, sb_1: float, sb_2: float) -> str:
    """A DC SOA curve at Tc = 25 degC as 'V:A;...': Ic limit, Pd hyperbola, second breakdown.

    Breakpoints: (3..5 V, Ic), (Pd/Ic, Ic), (V2, Pd/V2) with V2 = max(0.25 Vceo,
    1.5 Pd/Ic), then (V3, sb_1 Pd/V3) at V3 = max(0.5 Vceo, 1.3 V2) and (Vceo,
    sb_2 Pd/Vceo): the second-breakdown factors sb_1 > sb_2 in (0, 1) bend the
    curve below the power hyperbola at high voltage (common practice).
    Points that would not increase in V below Vceo are dropped.
    """
    v1 = pd_max_w / ic_max_a
    v2 = max(0.25 * vceo_v, 1.5 * v1)
    v3 = max(0.5 * vceo_v, 1.3 * v2)
    pts = [(min(4.0, 0.5 * v1), ic_max_a), (v1, ic_max_a), (v2, pd_max_w / v2), (v3, sb_1 * pd_max_w / v3),
           (vceo_v, sb_2 * pd_max_w / vceo_v)]
    kept: list[tuple[float, float]] = []
    for v, a in pts:
        v, a = float(fmt(v)), float(fmt(a))
        if v > vceo_v or (kept and (v <= kept[-1][0] or a > kept[-1][1])):
            continue
        kept.append((v, a))
    if kept[-1][0] < vceo_v:
        kept.append((vceo_v, min(kept[-1][1], float(fmt(sb_2 * pd_max_w / vceo_v)))))
    return ";".join(f"{fmt(v)}:{fmt(a)}" for v, a in kept)


def _power_numbers(rng: np.random.Generator, ic: np.ndarray, vceo: np.ndarray, darl: np.ndarray) -> dict[str, np.ndarray]:
    """Gain, saturation and Vbe of power devices: normal (hfe 20..70) or Darlington (750..1500).

    Low-voltage devices (Vceo <= 80 V) get more gain (+30), less saturation
    (x 0.6) and a lower Vbe (-0.15 V): thinner collector regions, common practice.
    """
    n = len(ic)
    low = vceo <= 80.0
    at = np.maximum(0.5, np.round(ic * 0.5 * 2) / 2)
    normal_hfe = rng.integers(4, 15, n) * 5.0 + np.where(low, 30.0, 0.0)
    return dict(
        hfe_min=np.where(darl, rng.choice([750.0, 1000.0, 1500.0], n), normal_hfe),
        hfe_at_a=np.maximum(0.5, np.round(ic * rng.uniform(0.25, 0.5, n) * 2) / 2),
        vce_sat_v=np.round(np.where(darl, rng.uniform(2.0, 2.5, n), rng.uniform(0.6, 1.8, n) * np.where(low, 0.6, 1.0)), 2),
        vce_sat_at_a=at,
        vbe_on_v=np.round(np.where(darl, rng.uniform(2.2, 2.8, n), rng.uniform(1.0, 1.6, n) - np.where(low, 0.15, 0.0)), 2),
        vbe_on_at_a=at,
    )


def _small_numbers(rng: np.random.Generator, kind: str, n: int) -> dict[str, np.ndarray]:
    """Gain, saturation and Vbe of small-signal and driver devices (:data:`SMALL_KINDS`)."""
    k = SMALL_KINDS[kind]
    return dict(
        hfe_min=rng.choice(np.array(k["hfe"], float), n), hfe_at_a=np.full(n, k["hfe_at"]),
        vce_sat_v=np.round(_uniform(rng, k["sat"], n), 2), vce_sat_at_a=np.full(n, k["sat_at"]),
        vbe_on_v=np.round(_uniform(rng, k["vbe"], n), 2), vbe_on_at_a=np.full(n, k["vbe_at"]),
    )


def small_pair_counts(pairs: int, small_pairs: int | None = None) -> tuple[int, int]:
    """TO-92 and TO-220 driver pairs among ``pairs``: a few, growing slowly with the catalogue.

    Default ``3 + 1 %`` TO-92 and ``1 + 0.5 %`` driver pairs (25 pairs: 3 and 1,
    as in the demo; 1,000 pairs: 13 and 6); ``small_pairs`` sets the total
    instead (two thirds TO-92). At most a third of the pairs are small.
    """
    if small_pairs is None:
        to92, drivers = 3 + round(0.01 * pairs), 1 + round(0.005 * pairs)
    else:
        to92 = round(2 * small_pairs / 3)
        drivers = small_pairs - to92
    cap = pairs // 3
    to92 = min(to92, cap)
    return to92, min(drivers, cap - to92)


def transistor_pairs(rng: np.random.Generator, pairs: int, small_pairs: int | None = None) -> pd.DataFrame:
    """One row per complementary pair (npn and pnp share the numbers), with its base price."""
    names = list(CLASSES)
    power = [c for c in names if CLASSES[c]["kind"] == "power"]
    to92, drivers = small_pair_counts(pairs, small_pairs)
    share = allocate(pairs - to92 - drivers, np.array([CLASSES[c]["share"] for c in power]))
    counts = [to92, drivers] + list(share)
    assert names[:2] == ["TO-92", "TO-220 driver"]
    width = max(3, len(str(pairs)))
    frames = []
    serial = 0
    for name, n in zip(names, counts):
        if n == 0:
            continue
        c = CLASSES[name]
        small = c["kind"] == "small"
        a = ANCHORS[name]
        darl = rng.random(n) < c["darlington"]
        darl[0] = a["darl"]
        vceo = rng.choice(np.array(c["vceo"], float), n)
        step = 10 if c["kind"] != "power" else 2
        ic = np.round(_uniform(rng, c["ic"], n) * step) / step
        pd_w = rng.choice(np.array(c["pd"], float), n) if small else np.round(_uniform(rng, c["pd"], n) / 2) * 2
        vceo[0], ic[0], pd_w[0] = a["vceo"], a["ic"], a["pd"]
        tj = np.where(rng.random(n) < 0.1, 175.0, 150.0) if c["kind"] == "power" else np.full(n, 150.0)
        # TO-92 data sheets give Pd at Ta = 25 degC; their Rth_jc is about 83 K/W (common practice).
        rth_jc = np.full(n, 83.3) if small else np.array([float(fmt(x)) for x in (tj - 25.0) / pd_w])
        numbers = _power_numbers(rng, ic, vceo, darl) if c["kind"] == "power" else _small_numbers(rng, c["kind"], n)
        for col, key in (("hfe_min", "hfe"), ("hfe_at_a", "hfe_at"), ("vce_sat_v", "sat"), ("vce_sat_at_a", "sat_at"),
                         ("vbe_on_v", "vbe"), ("vbe_on_at_a", "vbe_at")):
            numbers[col][0] = a[key]
        ft = np.where(darl, 4.0, np.round(_uniform(rng, c["ft"], n)))
        has_soa = (rng.random(n) < SOA_SHARE) & (c["kind"] == "power")
        sb1, sb2 = rng.uniform(0.6, 0.85, n), rng.uniform(0.3, 0.6, n)
        soa = [soa_text(v, i, p, a, b) if h else "" for v, i, p, a, b, h in zip(vceo, ic, pd_w, sb1, sb2, has_soa)]
        rth_ja = rng.choice(np.arange(c["rth_ja"][0], c["rth_ja"][1] + 1, 50 if small else 1), n) if c["rth_ja"] else np.full(n, np.nan)
        price = _uniform(rng, c["price"], n) * np.where(darl, 1.3, 1.0)
        stem = [f"SX{'D' if d else ''}{c['code']}{serial + i:0{width}d}" for i, d in enumerate(darl)]
        serial += n
        frames.append(pd.DataFrame(dict(
            stem=stem, maker=rng.choice(TRANSISTOR_MAKERS, n), package=c["package"], vceo_v=vceo, ic_max_a=ic,
            pd_max_w=pd_w, tj_max_c=tj, rth_jc_k_w=rth_jc, **numbers, ft_mhz=ft, soa_dc=soa,
            pinout=c["pinout"], rth_ja_k_w=rth_ja, price=price,
        )))
    return pd.concat(frames, ignore_index=True)


def transistor_rows(pairs: pd.DataFrame) -> pd.DataFrame:
    """transistors.csv rows: each pair as an npn and a pnp row naming each other."""
    n = pairs.assign(mpn=pairs["stem"] + "N", polarity="npn", complement=pairs["stem"] + "P")
    p = pairs.assign(mpn=pairs["stem"] + "P", polarity="pnp", complement=pairs["stem"] + "N")
    both = pd.concat([n, p]).sort_index(kind="stable").reset_index(drop=True)
    return both


# --------------------------------------------------------------------------- other parts


def opamp_rows(rng: np.random.Generator, count: int) -> pd.DataFrame:
    """opamps.csv rows of five kinds, with a base price."""
    kinds = list(OPAMP_KINDS)
    counts = allocate(count, np.array([OPAMP_KINDS[k]["share"] for k in kinds]))
    width = max(3, len(str(count)))
    frames, serial = [], 0
    for kind, n in zip(kinds, counts):
        if n == 0:
            continue
        k = OPAMP_KINDS[kind]
        per = np.ones(n, int) if kind == "high_current" else rng.choice([1, 2, 4], n, p=[0.4, 0.45, 0.15])
        package = ["SOIC-8-EP" if kind == "high_current" and rng.random() < 0.5 else
                   "TO-220-7" if kind == "high_current" else rng.choice(OPAMP_PACKAGES[int(p)]) for p in per]
        comp = np.where(rng.random(n) < k["comp"], rng.choice([22.0, 33.0], n), 0.0)
        frames.append(pd.DataFrame(dict(
            mpn=[f"KV{p}{serial + i:0{width}d}" for i, p in enumerate(per)],
            maker=rng.choice(OPAMP_MAKERS, n), package=package, per_package=per,
            supply_min_v=np.round(_uniform(rng, k["smin"], n), 1), supply_max_v=np.round(_uniform(rng, k["smax"], n)),
            swing_headroom_v=np.round(_uniform(rng, k["swing"], n), 2), vcm_headroom_v=np.round(_uniform(rng, k["vcm"], n), 2),
            slew_v_us=np.round(_uniform(rng, k["slew"], n), 1), gbw_mhz=np.round(_uniform(rng, k["gbw"], n), 1),
            iout_max_a=np.round(_uniform(rng, k["iout"], n), 3), vos_max_mv=np.round(_uniform(rng, k["vos"], n), 1),
            comp_pf=comp, price=_uniform(rng, k["price"], n) * np.sqrt(per),
        )))
        serial += n
    return pd.concat(frames, ignore_index=True)


def regulator_rows(rng: np.random.Generator, count: int) -> pd.DataFrame:
    """regulators.csv rows: 60 % fixed (5..24 V), the rest adjustable (1.25 V reference)."""
    width = max(3, len(str(count)))
    fixed = rng.random(count) < 0.6
    if count >= 2:
        fixed[:2] = (True, False)  # at least one of each kind
    ldo = rng.random(count) < 0.3
    return pd.DataFrame(dict(
        mpn=[f"RV{'F' if f else 'A'}{i:0{width}d}{'L' if l else ''}" for i, (f, l) in enumerate(zip(fixed, ldo))],
        maker="Pellinor Analog", package="TO-220", kind=np.where(fixed, "fixed", "adjustable"),
        vout_v=np.where(fixed, rng.choice([5.0, 9.0, 10.0, 12.0, 15.0, 18.0, 24.0], count), np.nan),
        vref_v=np.where(fixed, np.nan, 1.25), iadj_a=np.where(fixed, np.nan, rng.choice([50e-6, 100e-6], count)),
        vin_max_v=np.where(ldo, rng.choice([26.0, 30.0], count), rng.choice([35.0, 40.0], count)),
        dropout_v=np.where(ldo, rng.choice([0.4, 0.5], count), rng.choice([1.0, 1.5, 2.0], count)),
        iout_max_a=rng.choice([1.0, 1.5, 3.0, 5.0], count), tj_max_c=np.where(ldo, 150.0, 125.0),
        rth_jc_k_w=rng.choice([3.0, 4.0, 5.0], count), rth_ja_k_w=rng.choice([50.0, 65.0], count),
        pinout=np.where(fixed, "IGO", "AOI"), price=rng.uniform(0.3, 2.5, count),
    ))


def heatsink_rows(rng: np.random.Generator, count: int) -> pd.DataFrame:
    """heatsinks.csv rows: Rth_sa log-uniform in 0.5..25 K/W, mounts and device count by size."""
    width = max(3, len(str(count)))
    # Stratified log-uniform draw: even a dozen sinks span the whole range, as in the demo.
    u = rng.permutation((np.arange(count) + rng.random(count)) / count)
    rth = np.array([float(f"{x:.2g}") for x in np.exp(math.log(0.5) + u * math.log(25.0 / 0.5))])
    # The best sink is a 0.5 K/W extrusion for the large packages (as in the demo).
    best = int(np.argmin(rth))
    rth[best] = 0.5
    big = rng.random(count) < 0.5
    big[best] = False
    packages = np.select(
        [rth >= 15, rth >= 5, rth >= 1.2],
        [np.where(big, "TO-126;TO-220", "TO-126"),
         np.where(big, "TO-126;TO-220;TO-247;TO-3P", "TO-126;TO-220"),
         np.where(big, "TO-126;TO-220;TO-247;TO-3P", "TO-220;TO-247;TO-3P;TO-264")],
        np.where(big, "TO-220;TO-247;TO-3P", "TO-247;TO-3P;TO-264"),
    )
    devices = np.select([rth >= 15, rth >= 5, rth >= 2, rth >= 1], [1, rng.integers(1, 3, count), rng.integers(2, 4, count), rng.integers(2, 5, count)], rng.integers(4, 9, count))
    # Large sinks mostly come with a good insulating kit (common practice).
    kit = rng.random(count) < np.where(rth < 1.5, 0.7, 0.4)
    small_kit = rth >= 5
    kit[best] = True
    rth_cs = np.where(kit, np.where(small_kit, rng.choice(MOUNTING_KITS_K_W[-2:], count), np.where(rth < 1.5, rng.choice(MOUNTING_KITS_K_W[:3], count), rng.choice(MOUNTING_KITS_K_W[:5], count))), np.nan)
    return pd.DataFrame(dict(
        mpn=[f"HKX-{i:0{width}d}-{fmt(r)}" for i, r in enumerate(rth)], maker=rng.choice(HEATSINK_MAKERS, count),
        rth_sa_k_w=rth, packages=packages, max_devices=devices, rth_cs_k_w=rth_cs,
        price=(0.6 + 9.0 / rth**0.85) * rng.uniform(0.8, 1.2, count),
    ))


def passive_rows(rng: np.random.Generator, count: int) -> pd.DataFrame:
    """passives.csv rows: the demo's family templates, then second sources with neighbouring ratings."""
    rows = []
    for i in range(count):
        t = dict(PASSIVE_TEMPLATES[i % len(PASSIVE_TEMPLATES)])
        if i >= len(PASSIVE_TEMPLATES):
            if t["kind"] == "resistor":
                j = RESISTOR_POWERS_W.index(t["power"]) + int(rng.integers(-1, 2))
                t["power"] = RESISTOR_POWERS_W[min(max(j, 0), len(RESISTOR_POWERS_W) - 1)]
            else:
                j = CAP_VOLTAGES_V.index(t["voltage"]) + int(rng.integers(0, 2))
                t["voltage"] = CAP_VOLTAGES_V[min(j, len(CAP_VOLTAGES_V) - 1)]
        watts = fmt(t["power"]) if t["kind"] == "resistor" else ""
        rating = ("W".join(watts.split(".")) if "." in watts else f"{watts}W") if watts else f"{t['voltage']}V"
        prefix = "ZR" if t["kind"] == "resistor" else "ZC"
        rows.append(dict(
            family=f"{prefix}-{t['code']}{t['series'][1:]}-{rating}-{i:03d}", kind=t["kind"], series=t["series"],
            tolerance_pct=t["tol"], value_min=t["lo"], value_max=t["hi"], power_w=t.get("power"),
            voltage_v=t.get("voltage"), ripple_a=t.get("ripple"), maker=PASSIVE_MAKERS[i % 2],
            price=float(_uniform(rng, t["price"], 1)[0]),
        ))
    return pd.DataFrame(rows)


def diode_rows(count: int = 3) -> pd.DataFrame:
    """diodes.csv rows: ``count`` (2..4) bias diodes and the reference LED."""
    chosen = list(DIODES[: min(max(count, 2), 4)]) + [DIODES[-1]]
    return pd.DataFrame(
        [dict(mpn=m, maker="Corvane Semiconductor", package=p, vf_v=v, if_max_a=i, kind=k, price=0.02 if k == "diode" else 0.05)
         for m, p, v, i, k in chosen]
    )


def supplier_rows(rng: np.random.Generator, count: int) -> pd.DataFrame:
    """suppliers.csv rows: invented names, one currency, order fees 0..20."""
    names = [f"{SUPPLIER_STEMS[i % len(SUPPLIER_STEMS)]} {SUPPLIER_SUFFIXES[(i + i // len(SUPPLIER_STEMS)) % len(SUPPLIER_SUFFIXES)]}"
             for i in range(count)]
    fee = rng.choice([0.0, 4.5, 6.5, 9.0, 12.0, 15.0, 20.0], count)
    return pd.DataFrame(dict(supplier=names, currency="EUR", order_fee=fee))


# --------------------------------------------------------------------------- offers


def offer_rows(rng: np.random.Generator, mpn: np.ndarray, price: np.ndarray, bulk: np.ndarray,
               suppliers: pd.DataFrame, breaks: tuple[int, int]) -> pd.DataFrame:
    """offers.csv rows: per part 1..3 distinct suppliers, each with ``breaks`` price breaks.

    ``bulk`` marks passives (large stock, breaks often from 10 or 100 with an
    MOQ). Unit price = base x supplier factor x jitter x break factor; stock
    per (part, supplier), zero for about 6 % of them.
    """
    n_parts, n_sup = len(mpn), len(suppliers)
    k = rng.integers(1, min(3, n_sup) + 1, n_parts)
    order = np.argsort(rng.random((n_parts, n_sup)), axis=1)[:, : min(3, n_sup)]
    take = np.arange(order.shape[1])[None, :] < k[:, None]
    part = np.repeat(np.arange(n_parts), take.sum(axis=1))
    sup = order[take]
    m = len(part)
    sup_factor = rng.uniform(0.9, 1.3, n_sup)
    uses_moq = rng.random(n_sup) < 0.6
    start = np.where(bulk[part], rng.choice([0, 1, 2], m, p=[0.6, 0.3, 0.1]), rng.choice([0, 1], m, p=[0.9, 0.1]))
    n_br = rng.integers(breaks[0], breaks[1] + 1, m)
    stop = np.minimum(start + n_br, len(BREAK_QTY))
    stock_parts = rng.choice([3, 12, 15, 18, 20, 150, 300, 600, 1200, 2500, 4000], m)
    stock_bulk = rng.integers(5, 23, m) * 1000
    stock = np.where(bulk[part], stock_bulk, stock_parts) * (rng.random(m) >= 0.06)
    jitter = rng.uniform(0.95, 1.1, m)
    per = stop - start
    row = np.repeat(np.arange(m), per)
    step = np.arange(len(row)) - np.repeat(np.cumsum(per) - per, per)
    ladder = start[row] + step
    unit = price[part[row]] * sup_factor[sup[row]] * jitter[row] * BREAK_FACTOR[ladder]
    moq = np.where(start[row] > 0, BREAK_QTY[start[row]], np.where(uses_moq[sup[row]], 1, -1))
    return pd.DataFrame(dict(
        mpn=mpn[part[row]], supplier=suppliers["supplier"].to_numpy()[sup[row]], min_qty=BREAK_QTY[ladder],
        unit_price=fmt_all(unit), stock=stock[row], moq=np.where(moq > 0, moq.astype(str), ""),
    ))


# --------------------------------------------------------------------------- writing


def _write(path: Path, frame: pd.DataFrame, columns: list[str], note: str, seed: int) -> None:
    text = frame[columns].copy()
    for c in columns:
        if text[c].dtype.kind == "f":
            text[c] = fmt_all(text[c])
    with open(path, "w", encoding="utf-8", newline="") as f:
        f.write(HEADER.format(seed=seed) + "\n# " + note + "\n")
        text.to_csv(f, index=False, na_rep="", lineterminator="\n")


def write_catalog(
    folder: str | Path,
    *,
    pairs: int,
    opamps: int,
    regulators: int,
    heatsinks: int,
    passive_families: int,
    suppliers: int,
    breaks: tuple[int, int] = (1, 4),
    seed: int = 0,
    diodes: int = 3,
    small_pairs: int | None = None,
) -> dict[str, int]:
    """Write an invented catalogue folder (formats.md layout) and return the rows per file.

    Parameters
    ----------
    folder : target folder (created; existing files are overwritten)
    pairs : complementary transistor pairs (two rows each)
    opamps, regulators, heatsinks, passive_families, suppliers : rows of those files
    breaks : smallest and largest number of price breaks per (part, supplier)
    seed : seed of ``numpy.random.default_rng``; the same arguments give the same files
    diodes : bias diodes (2..4), written with one reference LED
    small_pairs : TO-92 and TO-220 driver pairs among ``pairs`` (default :func:`small_pair_counts`)

    Returns
    -------
    dict
        File name -> data rows written.
    """
    if min(pairs, opamps, regulators, heatsinks, suppliers) < 1 or passive_families < len(PASSIVE_TEMPLATES):
        raise ValueError(f"every count must be at least 1, passive_families at least {len(PASSIVE_TEMPLATES)}")
    folder = Path(folder)
    folder.mkdir(parents=True, exist_ok=True)
    rng = np.random.default_rng(seed)
    tr = transistor_rows(transistor_pairs(rng, pairs, small_pairs))
    op = opamp_rows(rng, opamps)
    rg = regulator_rows(rng, regulators)
    hs = heatsink_rows(rng, heatsinks)
    pa = passive_rows(rng, passive_families)
    di = diode_rows(diodes)
    su = supplier_rows(rng, suppliers)
    names = np.concatenate([tr["mpn"], op["mpn"], rg["mpn"], hs["mpn"], di["mpn"], pa["family"]])
    price = np.concatenate([tr["price"], op["price"], rg["price"], hs["price"], di["price"], pa["price"]])
    bulk = np.concatenate([np.zeros(len(names) - len(pa), bool), np.ones(len(pa), bool)])
    of = offer_rows(rng, names, price, bulk, su, breaks)

    tr_cols = ["mpn", "maker", "polarity", "complement", "package", "vceo_v", "ic_max_a", "pd_max_w", "tj_max_c",
               "rth_jc_k_w", "hfe_min", "hfe_at_a", "vce_sat_v", "vce_sat_at_a", "vbe_on_v", "vbe_on_at_a", "ft_mhz",
               "soa_dc", "pinout", "rth_ja_k_w"]
    _write(folder / "transistors.csv", tr, tr_cols, "Units in the column names. soa_dc: DC SOA at Tc = 25 degC as Vce:Ic pairs separated by ';'.", seed)
    _write(folder / "opamps.csv", op, ["mpn", "maker", "package", "per_package", "supply_min_v", "supply_max_v", "swing_headroom_v",
                                       "vcm_headroom_v", "slew_v_us", "gbw_mhz", "iout_max_a", "vos_max_mv", "comp_pf"],
           "Units in the column names (_v total supply span or headroom to either rail; _v_us; _mhz; _a; _mv; _pf).", seed)
    _write(folder / "regulators.csv", rg, ["mpn", "maker", "package", "kind", "vout_v", "vref_v", "iadj_a", "vin_max_v", "dropout_v",
                                           "iout_max_a", "tj_max_c", "rth_jc_k_w", "rth_ja_k_w", "pinout"],
           "pinout lists the pins left to right seen from the front (I input; O output; G ground; A adjust).", seed)
    _write(folder / "heatsinks.csv", hs, ["mpn", "maker", "rth_sa_k_w", "packages", "max_devices", "rth_cs_k_w"],
           "rth_sa_k_w natural convection; rth_cs_k_w with the sink's own mounting kit (blank = the tool default).", seed)
    _write(folder / "passives.csv", pa, ["family", "kind", "series", "tolerance_pct", "value_min", "value_max", "power_w",
                                         "voltage_v", "ripple_a", "maker"],
           "value_min/value_max in ohm or farad with SI prefix or IEC 60062 letter code.", seed)
    _write(folder / "diodes.csv", di, ["mpn", "maker", "package", "vf_v", "if_max_a", "kind"], "vf_v at a typical bias current.", seed)
    _write(folder / "suppliers.csv", su, ["supplier", "currency", "order_fee"], "order_fee: fixed cost of one order.", seed)
    _write(folder / "offers.csv", of, ["mpn", "supplier", "min_qty", "unit_price", "stock", "moq"],
           "One row per price break; stock 0 = out of stock; moq blank = 1. A passive family's price holds for all its values.", seed)
    return {"transistors.csv": len(tr), "opamps.csv": len(op), "regulators.csv": len(rg), "heatsinks.csv": len(hs),
            "passives.csv": len(pa), "diodes.csv": len(di), "suppliers.csv": len(su), "offers.csv": len(of)}


def size_counts(size: str) -> dict[str, int]:
    """The counts of a named size (``small``, ``medium``, ``large``)."""
    if size not in SIZES:
        raise ValueError(f"unknown size '{size}' ({', '.join(SIZES)})")
    return dict(SIZES[size])


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description="Write an invented benchmark catalogue (formats.md layout).")
    ap.add_argument("out", help="target folder")
    ap.add_argument("--size", choices=list(SIZES), default="small")
    ap.add_argument("--seed", type=int, default=0)
    for name in ("pairs", "opamps", "regulators", "heatsinks", "passive_families", "suppliers", "diodes", "small_pairs"):
        ap.add_argument(f"--{name.replace('_', '-')}", type=int, default=None, dest=name)
    ap.add_argument("--breaks", type=int, nargs=2, default=(1, 4), metavar=("MIN", "MAX"))
    args = ap.parse_args(argv)
    counts = size_counts(args.size)
    for name in counts:
        if getattr(args, name) is not None:
            counts[name] = getattr(args, name)
    rows = write_catalog(args.out, **counts, breaks=tuple(args.breaks), seed=args.seed,
                         diodes=args.diodes if args.diodes is not None else 3, small_pairs=args.small_pairs)
    print(", ".join(f"{k}: {v}" for k, v in rows.items()))
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
