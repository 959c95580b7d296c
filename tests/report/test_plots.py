"""Pictures (``--plots``): files written, and what is drawn is the model's own data.

The SOA picture must show the full check's worst point, the load lines of
the model and the derated boundary; these are recomputed here from the
catalogue row with model.soa / model.thermal and hand formulas.
"""

from __future__ import annotations

import json
import math
import struct
import subprocess
import sys

import numpy as np
import pytest

from conftest import DEMO_CATALOG, EXAMPLES, ROOT
from partpick.cli import main
from partpick.model import soa, thermal
from partpick.optimize.design import run
from partpick.report.build import build_report
from partpick.report.plots import OUTPUT_ROLES, device_thermal, soa_plot_data, thermal_plot_data, write_plots
from partpick.spec import Spec, load_spec

PNG_MAGIC = b"\x89PNG\r\n\x1a\n"  # PNG signature (ISO/IEC 15948, section 5.2)

IMPOSSIBLE = {  # 2000 W into 8 ohm from +/-12 V: P = Vpk^2 / (2 R) allows 9 W at most
    "name": "impossible", "output": {"power_w": 2000.0, "load_ohm": 8.0},
    "supply": {"arrangement": "split", "v_min": 12.0, "v_max": 12.0},
}


@pytest.fixture(scope="module")
def designs(demo_catalog) -> dict:
    return {ex.name: run(load_spec(ex), demo_catalog) for ex in EXAMPLES}


@pytest.fixture(scope="module")
def written(designs, tmp_path_factory) -> dict:
    out = {}
    for name, result in designs.items():
        folder = tmp_path_factory.mktemp(name.replace(".", "_"))
        out[name] = (folder, write_plots(result, folder))
    return out


def png_size(data: bytes) -> tuple[int, int]:
    """Width and height from the IHDR chunk (ISO/IEC 15948, section 11.2.2)."""
    assert data[12:16] == b"IHDR"
    return struct.unpack(">II", data[16:24])


def device_row(catalog, mpn: str) -> dict:
    tr = catalog.transistors
    return tr[tr["mpn"] == mpn].iloc[0].to_dict()


def part(rep: dict, role: str) -> dict:
    return next(p for p in rep["parts"] if p["role"] == role)


# ----------------------------------------------------------------------------- files


@pytest.mark.parametrize("name", [e.name for e in EXAMPLES])
def test_feasible_design_writes_soa_and_thermal_pictures(designs, written, name):
    folder, paths = written[name]
    rep = build_report(designs[name])
    stems = [f"soa_{part(rep, role)['mpn']}" for role in OUTPUT_ROLES] + ["thermal"]
    assert [p.name for p in paths] == [f"{s}.{ext}" for s in stems for ext in ("png", "svg")]
    for p in paths:
        data = p.read_bytes()
        if p.suffix == ".png":
            assert data.startswith(PNG_MAGIC)
            assert png_size(data)[0] == 800  # readable at 800 px: drawn at that width
            assert len(data) > 10_000
        else:
            text = data.decode("utf-8")
            assert "<svg" in text and text.rstrip().endswith("</svg>")
    # Atomic writes leave no temporary file behind.
    assert sorted(p.name for p in folder.iterdir()) == sorted(p.name for p in paths)


def test_pictures_are_reproducible(designs, tmp_path):
    result = designs[EXAMPLES[0].name]
    first = {p.name: p.read_bytes() for p in write_plots(result, tmp_path / "a")}
    second = {p.name: p.read_bytes() for p in write_plots(result, tmp_path / "b")}
    assert first == second


def test_infeasible_design_writes_the_funnel(demo_catalog, tmp_path):
    result = run(Spec.model_validate(IMPOSSIBLE), demo_catalog)
    assert not result.feasible
    paths = write_plots(result, tmp_path)
    assert [p.name for p in paths] == ["funnel.png", "funnel.svg"]
    assert paths[0].read_bytes().startswith(PNG_MAGIC)
    assert "<svg" in paths[1].read_text(encoding="utf-8")


# ----------------------------------------------------------------------------- SOA data


@pytest.mark.parametrize("name", [e.name for e in EXAMPLES])
def test_plotted_worst_point_is_the_models_worst_point(designs, demo_catalog, name):
    result = designs[name]
    rep = build_report(result)
    data = soa_plot_data(result, "output_npn")
    pd_ = result.check.plot_data
    # Exactly the full check's worst sample.
    assert (data.worst_vce_v, data.worst_ic_a) == tuple(pd_["worst"])
    # Independent recomputation from the catalogue row with model.soa.
    dev = device_row(demo_catalog, part(rep, "output_npn")["mpn"])
    tg = result.targets
    vce, ic = soa.load_line(pd_["rail_v"], tg.v_peak_v, tg.i_peak_a, tg.phase_rad)
    bp_v, bp_a = soa.pad_curves([(dev["soa_v"], dev["soa_a"]) if len(dev["soa_v"]) else None])
    derate = soa.derating_factor(dev["tj_max_c"], pd_["t_case"])
    limit = soa.soa_current_limit_a(vce[np.newaxis], bp_v, bp_a, [dev["ic_max_a"]], [dev["pd_max_w"]], [dev["vceo_v"]])[0] * derate
    per = np.where(ic > 0, 1 - ic / limit, np.inf)
    k = int(np.argmin(per))
    assert (vce[k], ic[k]) == (data.worst_vce_v, data.worst_ic_a)
    assert data.worst_margin == pytest.approx(float(soa.soa_margin(vce, ic, limit)), abs=1e-12)
    assert data.worst_margin == pytest.approx(part(rep, "output_npn")["margins"]["SOA at Tc"], abs=5e-5)
    # The worst point is one of the plotted samples of the +phi load line.
    reactive = data.loci[1] if len(data.loci) > 1 else data.loci[0]
    assert np.any((reactive.vce_v == data.worst_vce_v) & (reactive.ic_a == data.worst_ic_a))


@pytest.mark.parametrize("name", [e.name for e in EXAMPLES])
def test_pnp_picture_mirrors_the_npn_and_carries_its_own_margin(designs, name):
    result = designs[name]
    rep = build_report(result)
    n, p = soa_plot_data(result, "output_npn"), soa_plot_data(result, "output_pnp")
    # The PNP's |Vce|, |Ic| locus is the NPN's (model s.5: mirror for the PNP).
    for a, b in zip(n.loci, p.loci):
        assert np.array_equal(a.vce_v, b.vce_v) and np.array_equal(a.ic_a, b.ic_a)
    assert p.worst_margin == pytest.approx(part(rep, "output_pnp")["margins"]["SOA at Tc"], abs=5e-5)
    assert min(n.worst_margin, p.worst_margin) == pytest.approx(rep["design"]["soa_margin"], abs=5e-5)


@pytest.mark.parametrize("name", [e.name for e in EXAMPLES])
def test_load_lines_are_the_models(designs, name):
    result = designs[name]
    data = soa_plot_data(result, "output_npn")
    tg = result.targets
    vs = result.check.plot_data["rail_v"]
    resistive = data.loci[0]
    # Resistive load: i = v / R, so Ic = Ip (Vs - Vce) / Vp on the conducting half (Ohm's law).
    assert resistive.ic_a == pytest.approx(tg.i_peak_a * (vs - resistive.vce_v) / tg.v_peak_v, abs=1e-12)
    assert np.all(resistive.ic_a > 0)
    # Half a cycle conducts: 720 samples per cycle (defaults.LOAD_LINE_SAMPLES); the samples at
    # t = 0 and pi carry no current (sin(pi) rounds to +1e-16, so that one may count).
    assert len(resistive.vce_v) in (359, 360)
    if tg.phase_rad > 0:
        plus, minus = data.loci[1], data.loci[2]
        assert plus.phase_rad == pytest.approx(tg.phase_rad) and minus.phase_rad == pytest.approx(-tg.phase_rad)
        # -phi is +phi mirrored in time: the same set of (Vce, Ic) points (model s.13).
        # (Samples whose current is float noise around zero are left out.)
        def points(lo):
            keep = lo.ic_a > 1e-9
            pts = np.c_[lo.vce_v[keep], lo.ic_a[keep]]
            key = np.round(pts, 9)  # equal points differ in the last bits
            return pts[np.lexsort((key[:, 1], key[:, 0]))]

        assert points(plus) == pytest.approx(points(minus), abs=1e-9)
        # With a reactive phase the device conducts above the rail (model s.5).
        assert plus.vce_v.max() == pytest.approx(vs + tg.v_peak_v * math.sin(tg.phase_rad), abs=tg.v_peak_v * 2 * math.pi / 720)
        # Each locus is one continuous half-cycle: neighbouring samples are close.
        for lo in (plus, minus):
            step = np.hypot(np.diff(lo.vce_v) / tg.v_peak_v, np.diff(lo.ic_a) / tg.i_peak_a)
            assert step.max() < 2 * 2 * math.pi / 720


@pytest.mark.parametrize("name", [e.name for e in EXAMPLES])
def test_soa_boundary_is_derated_at_the_case_temperature(designs, demo_catalog, name):
    result = designs[name]
    rep = build_report(result)
    for role in OUTPUT_ROLES:
        data = soa_plot_data(result, role)
        dev = device_row(demo_catalog, part(rep, role)["mpn"])
        # Model s.5: k = (Tj_max - Tc) / (Tj_max - 25), on the whole curve.
        k = (dev["tj_max_c"] - data.t_case_c) / (dev["tj_max_c"] - 25.0)
        assert data.derating == pytest.approx(min(max(k, 0.0), 1.0), rel=1e-12)
        assert data.limit_case_a == pytest.approx(data.limit_25c_a * data.derating, rel=1e-12)
        assert data.vce_grid_v[-1] == pytest.approx(dev["vceo_v"])
        assert data.vce_grid_v[0] <= 1.0
        if not len(dev["soa_v"]):
            # No second-breakdown data: min(Ic_max, Pd / Vce) (model s.5).
            expected = np.minimum(dev["ic_max_a"], dev["pd_max_w"] / data.vce_grid_v)
            assert data.limit_25c_a == pytest.approx(expected, rel=1e-12)
        else:
            # The log-log interpolation passes through every breakpoint (capped at Ic_max).
            inside = (np.asarray(dev["soa_v"]) >= data.vce_grid_v[0]) & (np.asarray(dev["soa_v"]) <= dev["vceo_v"])
            at_bp = np.interp(np.log(np.asarray(dev["soa_v"])[inside]), np.log(data.vce_grid_v), np.log(data.limit_25c_a))
            assert np.exp(at_bp) == pytest.approx(np.minimum(np.asarray(dev["soa_a"])[inside], dev["ic_max_a"]), rel=0.02)


def test_short_circuit_point_is_drawn_when_checked(demo_catalog, tmp_path):
    spec = load_spec(EXAMPLES[0])
    spec = spec.model_copy(update={"output": spec.output.model_copy(update={"short_circuit": True})})
    result = run(spec, demo_catalog)
    if not result.feasible:
        pytest.skip("the example has no design with the short-circuit check")
    rep = build_report(result)
    data = soa_plot_data(result, "output_npn")
    dev = device_row(demo_catalog, part(rep, "output_npn")["mpn"])
    bp_v, bp_a = soa.pad_curves([(dev["soa_v"], dev["soa_a"]) if len(dev["soa_v"]) else None])
    vs, ip = result.check.plot_data["rail_v"], result.targets.i_peak_a
    expected = soa.short_circuit_margin(vs, ip, bp_v[0], bp_a[0], dev["ic_max_a"], dev["pd_max_w"], dev["vceo_v"], data.derating)
    assert data.short_circuit == pytest.approx((vs, ip, float(expected)), abs=1e-12)
    # The report's SOA margin is the lesser of the load line and the short.
    assert min(data.worst_margin, data.short_circuit[2]) == pytest.approx(part(rep, "output_npn")["margins"]["SOA at Tc"], abs=5e-5)
    assert [p.name for p in write_plots(result, tmp_path)][0].startswith("soa_")


# ----------------------------------------------------------------------------- thermal data


@pytest.mark.parametrize("name", [e.name for e in EXAMPLES])
def test_thermal_bars_add_up_to_the_reported_temperatures(designs, demo_catalog, name):
    result = designs[name]
    rep = build_report(result)
    d, spec = rep["design"], rep["spec"]
    bars = thermal_plot_data(result)
    per_sink = spec["output"]["channels"] if spec["thermal"]["shared_heatsink"] else 1
    # Current sources mounted on the sink add 2 x Vs_max x I_ccs per channel (model s.3 (a')).
    sources_w = per_sink * 2 * d["rail_max_v"] * d["bias_current_a"] if d["bias_source_mount"] == "heatsink" else 0.0
    for b in bars:
        dev = device_row(demo_catalog, b.mpn)
        # Model s.6 by hand: T_sink = T_amb + Rth_sa P_sink, then + P Rth_cs, then + P Rth_jc.
        t_sink = spec["thermal"]["ambient_c"] + d["rth_sa_chosen_k_w"] * (2 * per_sink * b.p_w + sources_w)
        assert b.t_sink_c == pytest.approx(t_sink, abs=0.01)  # the report rounds the bias current
        assert b.t_case_c == pytest.approx(b.t_sink_c + b.p_w * b.rth_cs_k_w, rel=1e-12)
        assert b.t_j_c == pytest.approx(b.t_case_c + b.p_w * dev["rth_jc_k_w"], rel=1e-12)
        assert b.tj_limit_c == dev["tj_max_c"] - spec["thermal"]["tj_derate_c"]
        assert b.p_w == pytest.approx(d["p_device_max_w"], abs=1e-4)
    assert max(b.t_j_c for b in bars) == pytest.approx(d["tj_max_reached_c"], abs=1e-3)
    # The margin the report gives is the distance to the limit drawn.
    for b in bars:
        assert b.tj_limit_c - b.t_j_c == pytest.approx(part(rep, b.role)["margins"]["junction temperature"], abs=1e-3)
    # The NPN's case temperature is the one the SOA check derated at.
    assert device_thermal(result, "output_npn").t_case_c == pytest.approx(result.check.plot_data["t_case"], rel=1e-12)
    # Rth_cs: the sink's mounting kit, else the package default (model s.6, s.13).
    hs = demo_catalog.heatsinks
    kit = hs.loc[hs["mpn"] == part(rep, "heatsink")["mpn"], "rth_cs_k_w"].iloc[0]
    for b in bars:
        package = device_row(demo_catalog, b.mpn)["package"]
        expected = float(kit) if not math.isnan(kit) else float(thermal.rth_cs_default_k_w(package))
        assert b.rth_cs_k_w == expected


# ----------------------------------------------------------------------------- command line


def test_design_with_plots_writes_the_pictures(tmp_path, capsys):
    folder = tmp_path / "pics"
    code = main(["--no-color", "design", str(EXAMPLES[0]), "--catalog", str(DEMO_CATALOG),
                 "--plots", str(folder), "--json", str(tmp_path / "r.json")])
    out = capsys.readouterr().out
    assert code == 0
    rep = json.loads((tmp_path / "r.json").read_text(encoding="utf-8"))
    names = sorted(p.name for p in folder.iterdir())
    mpns = [part(rep, r)["mpn"] for r in OUTPUT_ROLES]
    assert names == sorted([f"soa_{m}.{e}" for m in mpns for e in ("png", "svg")] + ["thermal.png", "thermal.svg"])
    assert "wrote 6 pictures" in out


def test_infeasible_design_with_plots_writes_the_funnel(tmp_path, capsys):
    spec = tmp_path / "impossible.toml"
    spec.write_text(
        'name = "impossible"\n[output]\npower_w = 2000.0\nload_ohm = 8.0\n'
        '[supply]\narrangement = "split"\nv_min = 12.0\nv_max = 12.0\n', encoding="utf-8")
    folder = tmp_path / "pics"
    code = main(["--no-color", "design", str(spec), "--catalog", str(DEMO_CATALOG), "--plots", str(folder)])
    capsys.readouterr()
    assert code == 4
    assert sorted(p.name for p in folder.iterdir()) == ["funnel.png", "funnel.svg"]


@pytest.mark.parametrize("where", ["catalogue", "inside the catalogue", "a file"])
def test_plots_into_an_input_or_a_file_is_refused(catalog_copy, tmp_path, capsys, where):
    target = {"catalogue": catalog_copy.path, "inside the catalogue": catalog_copy.path / "pics",
              "a file": tmp_path / "notes.txt"}[where]
    if where == "a file":
        target.write_text("keep me", encoding="utf-8")
    before = {p.name: p.read_bytes() for p in catalog_copy.path.iterdir()}
    code = main(["--no-color", "design", str(EXAMPLES[0]), "--catalog", str(catalog_copy.path), "--plots", str(target)])
    err = capsys.readouterr().err
    assert code == 2
    assert "refusing to write" in err
    assert {p.name: p.read_bytes() for p in catalog_copy.path.iterdir()} == before
    assert not (catalog_copy.path / "pics").exists()
    if where == "a file":
        assert target.read_text(encoding="utf-8") == "keep me"


def test_help_does_not_import_matplotlib():
    code = ("import sys\nfrom partpick.cli import main\n"
            "try:\n    main(['--help'])\nexcept SystemExit:\n    pass\n"
            "try:\n    main(['design', '--help'])\nexcept SystemExit:\n    pass\n"
            "print('matplotlib' in sys.modules)")
    proc = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, cwd=ROOT, timeout=120)
    assert proc.returncode == 0, proc.stderr
    assert proc.stdout.strip().splitlines()[-1] == "False"
