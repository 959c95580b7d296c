"""Legal but implausible values: warnings with file, line and column that do not stop the run."""

from __future__ import annotations

import json

from conftest import EXAMPLES
from partpick.catalog import load_catalog
from partpick.cli import main

MODULE = next(e for e in EXAMPLES if e.name == "module_60w_4ohm_reactive.toml")


def test_implausible_values_warn_and_the_design_still_runs(catalog_copy, tmp_path, monkeypatch, capsys):
    # Thresholds from the plausibility rules: the best TO-220 devices reach about 0.5 K/W junction to case,
    # natural-convection sinks stay above 0.1 K/W, and no op-amp slews 10,000 V/us (from memory).
    edits = [
        ("transistors.csv", "VT2606N,Vellmark Semiconductor,npn,VT2606P,TO-220,60,6,50,150,2.5,",
         "VT2606N,Vellmark Semiconductor,npn,VT2606P,TO-220,60,6,50,150,0.01,", "rth_jc_k_w", "0.01"),
        ("heatsinks.csv", "FTX-B400-0.5,Fenmoor Thermal,0.5,", "FTX-B400-0.5,Fenmoor Thermal,0.01,", "rth_sa_k_w", "0.01"),
        ("opamps.csv", "QPH615,Quillon Power Integrated,SOIC-8,1,10,70,1.8,3,15,",
         "QPH615,Quillon Power Integrated,SOIC-8,1,10,70,1.8,3,20000,", "slew_v_us", "20000"),
    ]
    expected = []
    for name, old, new, column, value in edits:
        line = catalog_copy.replace(name, old, new)
        expected.append(f"{catalog_copy.path}/{name}:{line}: {column}: {value} looks implausible")
    warnings = load_catalog(catalog_copy.path).warnings
    for start in expected:
        assert sum(w.startswith(start) for w in warnings) == 1, (start, warnings)
    monkeypatch.setenv("COLUMNS", "250")
    report = tmp_path / "report.json"
    code = main(["--no-color", "design", str(MODULE), "--catalog", str(catalog_copy.path), "--json", str(report)])
    out = capsys.readouterr().out
    assert code == 0
    rep_warnings = json.loads(report.read_text(encoding="utf-8"))["warnings"]
    for start in expected:
        assert any(w.startswith(start) for w in rep_warnings)
        assert f"warning: {start}" in out
