"""How the search spends solver time: thresholds without a design, and a solver run past its limit.

Hand-worked cases; the exactness of the search against brute force is
checked in ``test_milp_exhaustive.py`` and ``test_prune.py``.
"""

from __future__ import annotations

import sys
import time

import numpy as np
import pulp
import pytest
from solver_fakes import fake_cbc

from partpick.errors import SolverTimeout
from partpick.optimize import milp
from partpick.optimize.milp import Coupling, Group, Offer, Problem


def test_a_threshold_without_a_design_is_answered_without_prices(monkeypatch) -> None:
    """Hand-worked: g1 chooses a (line L) or b (line B, 10.00), g2 c (line L) or d (line D, 10.00); L costs 1.00 and
    one unit is in stock. a and c each bound at 1.00, so the first threshold (the floor 2.00 plus 1.00) holds a and c
    alone, which would need two units of L: no design. The search learns that from the model without prices, fees or
    purchases and solves the full model only where a design exists: a + d or b + c, 11.00 (a first, by key order)."""
    g1 = Group("g1", ["a", "b"], [[("L", 1.0, "r")], [("B", 1.0, "r")]])
    g2 = Group("g2", ["c", "d"], [[("L", 1.0, "s")], [("D", 1.0, "s")]])
    offers = {"L": [Offer("S1", 1, 1.0, 1, 1)], "B": [Offer("S1", 1, 10.0, 10, 1)], "D": [Offer("S1", 1, 10.0, 10, 1)]}
    p = Problem({"g1": g1, "g2": g2}, [], offers, {"S1": 0.0}, 1.0)
    log = []
    full, bare = milp.solve_model, milp._any_design_model

    def counted_full(q, *args, **kwargs):
        out = full(q, *args, **kwargs)
        log.append(("full", out.status))
        return out

    def counted_bare(q, *args, **kwargs):
        out = bare(q, *args, **kwargs)
        log.append(("without prices", out))
        return out

    monkeypatch.setattr(milp, "solve_model", counted_full)
    monkeypatch.setattr(milp, "_any_design_model", counted_bare)
    sol = milp.solve(p, "cbc")
    assert sol.status == "optimal" and sol.total == pytest.approx(11.0)
    assert sol.choice == {"g1": 0, "g2": 1}
    assert ("without prices", False) in log
    assert ("full", "infeasible") not in log
    assert log[-1] == ("full", "optimal")


def _one_binary() -> pulp.LpProblem:
    """min x, x binary, x >= 0: optimal at x = 0."""
    m = pulp.LpProblem("t", pulp.LpMinimize)
    x = pulp.LpVariable("x", 0, 1, cat="Binary")
    m += x
    m += x >= 0
    return m


def _waits() -> str:
    """A fake CBC program that keeps its arguments (the solve's folder among them) and waits a minute."""
    return f"exec '{sys.executable}' -c 'import time; time.sleep(60)' \"$@\"\n"


def test_a_cbc_run_past_its_time_limit_is_stopped(tmp_path, monkeypatch) -> None:
    """CBC heeds its limit only between nodes; a program still running past it (plus the grace) is stopped, and the
    solve says it ran out of time, not that the solver crashed."""
    monkeypatch.setattr(pulp.PULP_CBC_CMD, "pulp_cbc_path", str(fake_cbc(tmp_path, _waits())))
    monkeypatch.setattr(milp, "OVERRUN_GRACE_S", 0.2)
    m = _one_binary()
    began = time.monotonic()
    with pytest.raises(SolverTimeout) as info:
        milp._run(m, milp._solver("cbc", 0.5), "cbc")
    assert time.monotonic() - began < 20.0  # the fake would wait 60 s
    assert info.value.time_limit == 0.5
    assert milp._children_naming("partpick-solve-") == []


def test_without_a_time_limit_no_watchdog_runs(monkeypatch) -> None:
    started = []
    real = milp._Watchdog.start

    def spy(self):
        started.append(self)
        return real(self)

    monkeypatch.setattr(milp._Watchdog, "start", spy)
    m = _one_binary()
    assert milp._run(m, milp._solver("cbc", None), "cbc") == pulp.LpStatusOptimal
    assert started == []
    assert milp._run(m, milp._solver("cbc", 30.0), "cbc") == pulp.LpStatusOptimal
    assert len(started) == 1 and not started[0].fired


def _infeasible_at_the_bounds() -> Problem:
    """Hand-worked: g0-1 alone meets the coupling 2 x >= 1, and needs 3 units of L0 per board; g1-0 needs 0.5.

    With a factor of 5 (five boards), g0-1 and g1-0 need 15 + 2.5 = 17.5
    units of L0, and S0, its only seller, holds 15: no design.
    """
    g0 = Group("g0", ["g0-0", "g0-1"], [[], [("L0", 3.0, "role0")]])
    g1 = Group("g1", ["g1-0"], [[("L0", 0.5, "role1")]], parent="g0", compat=[np.array([0, 1])])
    couplings = [Coupling("c0", {"g0": np.array([0.0, 2.0])}, ">=", 1.0), Coupling("c1", {"g1": np.array([0.0])}, "<=", 0.0)]
    offers = {"L0": [Offer("S0", 1, 0.2, 15, 1)], "L1": [Offer("S0", 1, 0.2, 6, 1)]}
    return Problem({"g0": g0, "g1": g1}, couplings, offers, {"S0": 5.0, "S1": 5.0, "S2": 5.0}, 5.0)


@pytest.mark.parametrize("prune", [False, True])
def test_a_problem_without_a_design_is_infeasible_where_cbc_dies_writing_its_answer(prune: bool) -> None:
    """The bundled CBC 2.10.3 proves this model infeasible while tightening its bounds, then dies writing its answer
    file (with preprocessing off, as partpick runs it). The solve says infeasible, as the hand count above does."""
    assert milp.solve(_infeasible_at_the_bounds(), "cbc", prune=prune).status == "infeasible"


def _dies_writing_its_answer(folder) -> str:
    """A fake CBC program: given an answer file, it runs the real one without it, then dies (SIGSEGV); else it is the real one."""
    script = folder / "dies.py"
    script.write_text(
        "import os, signal, subprocess, sys\n"
        f"real = {str(pulp.PULP_CBC_CMD.pulp_cbc_path)!r}\n"
        "args = sys.argv[1:]\n"
        "if '-solution' in args:\n"
        "    i = args.index('-solution')\n"
        "    subprocess.run([real] + args[:i] + args[i + 2:], stdout=subprocess.DEVNULL)\n"
        "    os.kill(os.getpid(), signal.SIGSEGV)\n"
        "os.execv(real, [real] + args)\n",
        encoding="utf-8",
    )
    return f"exec '{sys.executable}' '{script}' \"$@\"\n"


def test_a_cbc_run_that_dies_is_read_again_only_for_cbc_s_own_infeasible(tmp_path, monkeypatch) -> None:
    """A CBC program that dies after solving: on an infeasible model (x binary, x >= 2) the run again says infeasible,
    and the solve is infeasible; on a feasible one (x >= 0) it says optimal, and the solve is a solver error."""
    from partpick.errors import SolverError

    monkeypatch.setattr(pulp.PULP_CBC_CMD, "pulp_cbc_path", str(fake_cbc(tmp_path, _dies_writing_its_answer(tmp_path))))
    for rhs, limit in [(2, None), (2, 30.0), (0, None)]:
        m = pulp.LpProblem("t", pulp.LpMinimize)
        x = pulp.LpVariable("x", 0, 1, cat="Integer")
        y = pulp.LpVariable("y", 0, 3, cat="Integer")
        m += x + y
        m += x + 0.5 * y >= rhs + 0.6  # rhs 2: at most 1 + 1.5 = 2.5 < 2.6, no integer point; rhs 0: x = 1
        m += x - y <= 5
        if rhs:
            assert milp._run(m, milp._solver("cbc", limit), "cbc") == pulp.LpStatusInfeasible
            assert not milp._found(m, limit)
        else:
            with pytest.raises(SolverError, match="stopped abnormally"):
                milp._run(m, milp._solver("cbc", limit), "cbc")
    assert milp._children_naming("partpick-solve-") == []


def test_the_run_again_for_a_verdict_is_stopped_after_twice_the_first_run(tmp_path, monkeypatch) -> None:
    """A CBC program that dies at once given an answer file, and otherwise waits a minute: the run again for its verdict
    is stopped after twice the first run plus ``VERDICT_EXTRA_S`` (0.5 s here), and the solve is a solver error."""
    from partpick.errors import SolverError

    body = ('for a in "$@"; do [ "$a" = "-solution" ] && kill -SEGV $$; done\n'
            f"exec '{sys.executable}' -c 'import time; time.sleep(60)' \"$@\"\n")  # its arguments name the solve's folder
    monkeypatch.setattr(pulp.PULP_CBC_CMD, "pulp_cbc_path", str(fake_cbc(tmp_path, body)))
    monkeypatch.setattr(milp, "VERDICT_EXTRA_S", 0.5)
    m = _one_binary()
    began = time.monotonic()
    with pytest.raises(SolverError, match="stopped abnormally"):
        milp._run(m, milp._solver("cbc", None), "cbc")
    assert time.monotonic() - began < 20.0  # the fake would wait 60 s
    assert milp._children_naming("partpick-solve-") == []


def _slow_build(monkeypatch, seconds: float) -> None:
    """Make solve_model's model build take ``seconds`` longer (its line needs are read first)."""
    real = milp._line_units

    def slow(*args, **kwargs):
        time.sleep(seconds)
        return real(*args, **kwargs)

    monkeypatch.setattr(milp, "_line_units", slow)


def _two_lines() -> Problem:
    """g chooses a (line A, 1.00) or b (line B, 2.00) from S1 without a fee: a, 1.00."""
    g = Group("g", ["a", "b"], [[("A", 1.0, "r")], [("B", 1.0, "r")]])
    return Problem({"g": g}, [], {"A": [Offer("S1", 1, 1.0, 10, 1)], "B": [Offer("S1", 1, 2.0, 10, 1)]}, {"S1": 0.0}, 1.0)


def test_a_solve_s_time_limit_counts_its_model_build(monkeypatch) -> None:
    """The solver gets what the build left of the limit; with none left the solve stops before the solver, naming the limit."""
    p = _two_lines()
    tie = milp.tie_weights(p)
    given = []
    real = milp._solver

    def spy(name, time_limit, warm=False):
        given.append(time_limit)
        return real(name, time_limit, warm)

    monkeypatch.setattr(milp, "_solver", spy)
    _slow_build(monkeypatch, 0.3)
    sol = milp.solve_model(p, tie, "cbc", 30.0)
    assert sol.status == "optimal" and sol.total == pytest.approx(1.0)
    assert 20.0 < given[0] <= 29.7
    with pytest.raises(SolverTimeout) as info:
        milp.solve_model(p, tie, "cbc", 0.2)
    assert info.value.time_limit == 0.2
    assert len(given) == 1  # no solver was started


def test_cbc_s_heuristics_run_only_where_any_design_is_asked_for(monkeypatch) -> None:
    """CBC's primal heuristics are off for the cost solves, with a start design and without one (the
    measurements are in _solver's comment), and on for the question whether any design exists."""
    p = _two_lines()
    tie = milp.tie_weights(p)
    runs = []
    real = milp._run

    def spy(m, sol, name, first=None):
        runs.append((m.name, "heur off" in sol.options))
        return real(m, sol, name, first)

    monkeypatch.setattr(milp, "_run", spy)
    cold = milp.solve_model(p, tie, "cbc")
    warm = milp.solve_model(p, tie, "cbc", start=cold)
    assert cold.total == pytest.approx(1.0) and warm.total == pytest.approx(1.0)
    assert milp._any_design_model(p, "cbc", None)
    assert runs == [("partpick", True), ("partpick", True), ("partpick_any", False)]


def test_a_solver_stopped_at_what_the_build_left_names_the_whole_limit(tmp_path, monkeypatch) -> None:
    """A CBC program that overruns the share the build left is stopped; the timeout names the solve's own limit."""
    monkeypatch.setattr(pulp.PULP_CBC_CMD, "pulp_cbc_path", str(fake_cbc(tmp_path, _waits())))
    monkeypatch.setattr(milp, "OVERRUN_GRACE_S", 0.2)
    _slow_build(monkeypatch, 0.2)
    p = _two_lines()
    began = time.monotonic()
    with pytest.raises(SolverTimeout) as info:
        milp.solve_model(p, milp.tie_weights(p), "cbc", 0.7)
    assert time.monotonic() - began < 20.0  # the fake would wait 60 s
    assert info.value.time_limit == 0.7
    assert milp._children_naming("partpick-solve-") == []
