"""A sweep point whose run meets the size limit is left undesigned; the other points are designed as usual."""

from __future__ import annotations

import numpy as np
import pytest
from conftest import DEMO_CATALOG, ROOT

from partpick.catalog import load_catalog
from partpick.cli import main
from partpick.errors import SizeLimitError
from partpick.evaluate import stage
from partpick.optimize.design import run
from partpick.optimize.sweep import spec_at, sweep
from partpick.spec import load_spec

BENCH = ROOT / "examples" / "bench_2x25w_split.toml"
# On the demo catalogue the bench spec has 2,901 stage configurations at 20 W,
# 680 at 25 W and none at 30 W. Past the limit the cost objective builds only
# the feeds under a cost bound (design.run_bounded): with a limit of 2 the
# 20 W run still designs from its resistor feeds (not proven optimal), while
# at 24 and 25 W, where no resistor feed serves, every round that could hold a
# design is past the limit and the run stops (at 24 W a limit of 3 already
# holds a table with a design).
LIMIT = 2


@pytest.fixture(scope="module")
def catalog():
    return load_catalog(DEMO_CATALOG)


def test_points_past_the_limit_are_skipped_and_the_rest_designed(monkeypatch, catalog) -> None:
    spec = load_spec(BENCH)
    whole_20 = run(spec_at(spec, "power", 20.0), catalog)
    monkeypatch.setattr(stage, "STAGE_ROWS_MAX", LIMIT)
    with pytest.raises(SizeLimitError):
        run(spec_at(spec, "power", 25.0), catalog)
    points = sweep(spec, catalog, "power", np.array([20.0, 25.0, 30.0]))
    assert [(p.value, p.feasible, p.skipped is not None) for p in points] == [(20.0, True, False), (25.0, False, True), (30.0, False, False)]
    assert "stage configurations" in points[1].skipped
    assert points[0].total == pytest.approx(round(whole_20.solution.total, 2))
    assert points[0].unproven and "whose cost bound is at or below" in points[0].unproven
    assert points[2].unproven is None


def test_a_sweep_with_every_point_past_the_limit_stops_with_exit_2(monkeypatch, capsys) -> None:
    monkeypatch.setattr(stage, "STAGE_ROWS_MAX", LIMIT)
    assert main(["sweep", str(BENCH), "--catalog", str(DEMO_CATALOG), "--power", "24:25:1"]) == 2
    assert "stage configurations" in capsys.readouterr().err


def test_the_sweep_table_marks_the_skipped_point_and_says_why(monkeypatch, capsys, tmp_path) -> None:
    monkeypatch.setattr(stage, "STAGE_ROWS_MAX", LIMIT)
    code = main(["--no-color", "sweep", str(BENCH), "--catalog", str(DEMO_CATALOG), "--power", "20:30:5", "--plot", str(tmp_path / "s.png")])
    out = capsys.readouterr().out
    assert code == 0
    assert "not designed" in out and "infeasible" in out
    assert "warning: not designed at 25 W:" in out
    assert "118.78*" in out and "warning: * not proven optimal at 20 W:" in out
    assert (tmp_path / "s.png").stat().st_size > 0
