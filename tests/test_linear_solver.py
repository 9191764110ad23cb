"""Clarabel's linear solver: qdldl for small programs and whenever MKL is absent, MKL
Pardiso for large ones when the optional `mkl` package loads; a solve with MKL that
ends in trouble is solved again with qdldl and says so, never reported as a number."""
from __future__ import annotations

import pytest

import solver.conic as conic
from solver.case import parse_case
from solver.conic import MKL_FROM_KKT, Solution, linear_solver_for, mkl_ready, solve
from solver.lower import lower_bound_program
from solver.mesh import build_mesh
from solver.upper import upper_bound_program

CLAY = {"footing": {"width": 1.0}, "layers": [{"name": "clay", "model": "tresca", "undrained_strength": 1.0,
                                                 "unit_weight": 0.0}], "analysis": {"mesh": "fixed"}}


def small_program():
    case = parse_case(CLAY)
    return lower_bound_program(case, build_mesh(case, order=1, elements=400))


def test_small_programs_and_a_missing_mkl_use_qdldl(monkeypatch):
    program = small_program()
    assert program.n_variables + program.n_rows < MKL_FROM_KKT
    assert linear_solver_for(program, {}) == "qdldl"
    monkeypatch.setattr(conic, "MKL_FROM_KKT", 0)
    monkeypatch.setattr(conic, "mkl_ready", lambda: False)
    assert linear_solver_for(program, {}) == "qdldl"
    with pytest.raises(ValueError, match="MKL Pardiso is not available"):  # asked for by name: no silent swap
        linear_solver_for(program, {"direct_solve_method": "mkl"})
    assert solve(program).linear_solver == "qdldl"
    monkeypatch.setattr(conic, "mkl_ready", lambda: True)
    assert linear_solver_for(program, {}) == "mkl"  # a large lower bound
    assert linear_solver_for(program, {"direct_solve_method": "qdldl"}) == "qdldl"  # the caller's choice stands
    case = parse_case(CLAY)
    upper = upper_bound_program(case, build_mesh(case, order=2, elements=400))
    assert linear_solver_for(upper, {}) == "qdldl"  # the upper bound stays with qdldl (measured)


def test_trouble_with_mkl_is_solved_again_with_qdldl(monkeypatch):
    program = small_program()
    real = conic._solve_clarabel_with

    def mkl_fails(program, verbose, overrides):
        if overrides["direct_solve_method"] == "mkl":  # as a wrong factorisation ends: at once, in trouble
            return Solution(x=None, status="numerical trouble", objective=None, iterations=1, solve_s=0.5,
                            backend="clarabel", linear_solver="mkl")
        return real(program, verbose, overrides)

    monkeypatch.setattr(conic, "_solve_clarabel_with", mkl_fails)
    monkeypatch.setattr(conic, "mkl_ready", lambda: True)
    solution = solve(program, settings={"direct_solve_method": "mkl"})
    assert solution.status == "optimal" and solution.x is not None
    assert solution.linear_solver == "mkl, then qdldl (mkl: numerical trouble after 1 iterations)"
    assert solution.solve_s >= 0.5


@pytest.mark.skipif(not mkl_ready(), reason="the optional mkl package is not installed (make mkl)")
def test_mkl_and_qdldl_give_the_same_bound():
    program = small_program()
    with_mkl = solve(program, settings={"direct_solve_method": "mkl"})
    with_qdldl = solve(program, settings={"direct_solve_method": "qdldl"})
    assert with_mkl.linear_solver == "mkl" and with_mkl.status == "optimal"
    assert with_mkl.objective == pytest.approx(with_qdldl.objective, rel=1e-6)


@pytest.mark.skipif(not mkl_ready(), reason="the optional mkl package is not installed (make mkl)")
def test_a_fresh_process_such_as_a_sweep_worker_sets_mkl_up_itself():
    import subprocess
    import sys
    script = ("import os, solver.conic as c; ready = c.mkl_ready(); "
              "print(ready, os.environ['MKL_THREADING_LAYER'], os.path.exists(os.path.join("
              "os.environ['MKL_PARDISO_PATH'], 'libmkl_rt.so')))")
    env = {k: v for k, v in __import__("os").environ.items() if not k.startswith("MKL_")}
    done = subprocess.run([sys.executable, "-c", script], capture_output=True, text=True, timeout=120, env=env)
    assert done.returncode == 0, done.stderr
    assert done.stdout.split() == ["True", "sequential", "True"]


def test_a_bound_from_mkl_that_fails_its_certificate_is_solved_again_with_qdldl(monkeypatch):
    import dataclasses

    import solver.analysis
    from solver.analysis import analyse

    real = solver.analysis.solve

    def mkl_slightly_off(program, backend, settings=None):
        solution = real(program, backend, settings=settings)
        if "direct_solve_method" in (settings or {}):
            return solution  # the retry, as asked
        # an automatic MKL solve whose answer misses the certificate (a stress or velocity off)
        return dataclasses.replace(solution, x=solution.x * (1 + 1e-2), linear_solver="mkl")

    monkeypatch.setattr(solver.analysis, "solve", mkl_slightly_off)
    result = analyse(parse_case({**CLAY, "analysis": {"elements": 400, "mesh": "fixed"}}))
    for bound in (result.lower, result.upper):
        assert bound.certificate["passed"] and bound.pressure_kPa is not None
        assert bound.extra["linear_solver"].startswith("mkl, then qdldl (mkl: withheld: certificate failed")
