"""What every evaluation needs: the spec's signal targets and the usable catalogue.

``Targets`` holds the numbers that follow from the spec alone (model s.2).
``Pool`` is the catalogue cut down to what this run may use: allowed
suppliers, no excluded parts, only parts that some allowed supplier offers.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from partpick.catalog import Catalog
from partpick.errors import InputError, Problem
from partpick.model import signal
from partpick.model.defaults import VT_V
from partpick.spec import Spec


@dataclass(frozen=True)
class Targets:
    """Signal levels fixed by the spec (model s.2)."""

    v_peak_v: float
    i_peak_a: float
    z_min_ohm: float
    phase_rad: float
    gain: float
    input_peak_v: float
    channels: int
    arrangement: str

    @classmethod
    def from_spec(cls, spec: Spec) -> "Targets":
        out = spec.output
        vp = float(signal.peak_voltage_v(out.power_w, out.load_ohm))
        return cls(
            v_peak_v=vp,
            i_peak_a=float(signal.peak_current_a(vp, out.z_min_ohm)),
            z_min_ohm=out.z_min_ohm,
            phase_rad=math.radians(out.load_phase_deg),
            gain=float(signal.closed_loop_gain(vp, out.input_vrms)),
            input_peak_v=out.input_vrms * math.sqrt(2.0),
            channels=out.channels,
            arrangement=spec.supply.arrangement,
        )


def quiescent_a(spec: Spec, re_ohm: np.ndarray) -> np.ndarray:
    """Iq per device: the spec's ``iq_a`` or Oliver's 26 mV / Re (model s.7, s.13)."""
    re_ohm = np.asarray(re_ohm, dtype=float)
    if spec.output.iq_a is not None:
        return np.full_like(re_ohm, spec.output.iq_a)
    return VT_V / re_ohm


@dataclass
class Pool:
    """The part of the catalogue this run may use, with the reasons others were left out."""

    catalog: Catalog
    transistors: pd.DataFrame
    opamps: pd.DataFrame
    regulators: pd.DataFrame
    heatsinks: pd.DataFrame
    passives: pd.DataFrame
    diodes: pd.DataFrame
    offers: pd.DataFrame
    suppliers: pd.DataFrame
    left_out: dict[str, str] = field(default_factory=dict)
    # Offers read per part by partpick.optimize.problem (each run assembles
    # several problems from one pool); not part of the pool's value.
    offer_memo: dict = field(default_factory=dict, repr=False, compare=False)

    @property
    def currency(self) -> str:
        return self.catalog.currency


def make_pool(
    spec: Spec,
    catalog: Catalog,
    extra_exclude: tuple[str, ...] = (),
    spec_label: str = "spec",
) -> Pool:
    """Apply the spec's ``suppliers`` and ``exclude`` (and ``--exclude``) to the catalogue.

    Raises
    ------
    InputError
        When a supplier or an excluded name is not in the catalogue (a typo
        must not pass silently).
    """
    known_parts = set(catalog.passives["family"].tolist())
    for frame in (catalog.transistors, catalog.opamps, catalog.regulators, catalog.heatsinks, catalog.diodes):
        known_parts.update(frame["mpn"].tolist())
    known_suppliers = set(catalog.suppliers["supplier"].tolist())
    problems = [
        Problem(spec_label, 0, "[order] suppliers", f"unknown supplier '{s}'")
        for s in spec.order.suppliers
        if s not in known_suppliers
    ]
    problems += [
        Problem(spec_label, 0, "[order] exclude", f"unknown part or family '{m}'")
        for m in spec.order.exclude
        if m not in known_parts
    ]
    problems += [
        Problem("command line", 0, "--exclude", f"unknown part or family '{m}'")
        for m in extra_exclude
        if m not in known_parts
    ]
    if problems:
        raise InputError(problems)

    allowed = set(spec.order.suppliers) or known_suppliers
    excluded = set(spec.order.exclude) | set(extra_exclude)
    offers = catalog.offers[catalog.offers["supplier"].isin(allowed) & ~catalog.offers["mpn"].isin(excluded)]
    in_stock = set(offers.loc[offers["stock"] > 0, "mpn"].tolist())
    any_offer = set(offers["mpn"].tolist())
    left_out: dict[str, str] = {}
    for m in sorted(known_parts):
        if m in excluded:
            left_out[m] = "excluded"
        elif m not in any_offer:
            left_out[m] = "no offer from an allowed supplier"
        elif m not in in_stock:
            left_out[m] = "out of stock at every allowed supplier"

    def keep(frame: pd.DataFrame, key: str = "mpn") -> pd.DataFrame:
        return frame[~frame[key].isin(set(left_out))].reset_index(drop=True)

    return Pool(
        catalog=catalog,
        transistors=keep(catalog.transistors),
        opamps=keep(catalog.opamps),
        regulators=keep(catalog.regulators),
        heatsinks=keep(catalog.heatsinks),
        passives=keep(catalog.passives, "family"),
        diodes=keep(catalog.diodes),
        offers=offers[offers["stock"] > 0].reset_index(drop=True),
        suppliers=catalog.suppliers[catalog.suppliers["supplier"].isin(allowed)].reset_index(drop=True),
        left_out=left_out,
    )
