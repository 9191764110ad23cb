"""One sparse conic program and its solution, apart from any solver back end.

Standard form (the one Clarabel takes):

    minimise    c @ x
    subject to  A @ x + s = b,   s in K = {0}^n_zero  x  R+^n_nonneg  x  (SOC_3)^n_soc

The first ``n_zero`` rows are equalities, the next ``n_nonneg`` rows are
inequalities s >= 0 (the upper bound's velocity jumps), and each following
group of three rows (s0, s1, s2) is a second-order cone s0 >= ||(s1, s2)||.
All cones are 3-dimensional, so the program needs no per-cone list.

Back ends: Clarabel through its own Python API (default: no modelling layer,
measured fastest), or cvxpy (any conic solver cvxpy knows, for users with
another solver), with the cones passed as one vectorised constraint.
"""
from __future__ import annotations

import threading
import time
from dataclasses import dataclass, field

import numpy as np
import scipy.sparse as sp


@dataclass
class ConicProgram:
    c: np.ndarray
    A: sp.csc_matrix
    b: np.ndarray
    n_zero: int
    n_soc: int
    objective_constant: float = 0.0
    n_nonneg: int = 0
    kind: str = ""  # "lower" | "upper": which bound this program computes
    layout: dict = field(default_factory=dict)  # how to read x back (index arrays)

    @property
    def n_variables(self) -> int:
        return self.A.shape[1]

    @property
    def n_rows(self) -> int:
        return self.A.shape[0]


@dataclass
class Solution:
    x: np.ndarray | None
    status: str  # "optimal", "almost optimal", "infeasible", "iteration limit", "numerical trouble", ...
    objective: float | None  # c @ x + objective_constant
    iterations: int
    solve_s: float
    backend: str
    linear_solver: str = ""  # Clarabel's KKT solver: "qdldl", "mkl", or "mkl, then qdldl (...)" after trouble
    notes: dict = field(default_factory=dict)  # what was done to the point after the solve (certify)
    ray: np.ndarray | None = None  # "unbounded": the direction the solver found it unbounded along


def assemble(rows: list[np.ndarray], cols: list[np.ndarray], vals: list[np.ndarray],
             n_rows: int, n_cols: int) -> sp.csc_matrix:
    """One COO -> CSC conversion of all triplets (duplicates summed, exact zeros dropped)."""
    flat = lambda parts: np.concatenate([np.ravel(p) for p in parts])
    A = sp.coo_matrix((flat(vals), (flat(rows), flat(cols))), shape=(n_rows, n_cols)).tocsc()
    A.sum_duplicates()
    A.eliminate_zeros()  # edges along the axes give exact zeros
    return A


def drop_empty_equalities(A: sp.csc_matrix, b: np.ndarray, n_zero: int, scale: float
                          ) -> tuple[sp.csc_matrix, np.ndarray, int]:
    """Remove equality rows with no coefficient left (0 = 0); they make the KKT
    system singular. A row 0 = b with b != 0 means the program is infeasible as
    built, which is a bug upstream: raise rather than hide it."""
    A = A.tocsr()
    empty = np.diff(A.indptr)[:n_zero] == 0
    if np.any(np.abs(b[:n_zero][empty]) > 1e-12 * max(scale, 1.0)):
        raise RuntimeError("conic program: an equality with no variable has a nonzero right side")
    keep = np.concatenate([~empty, np.ones(A.shape[0] - n_zero, dtype=bool)])
    return A[keep].tocsc(), b[keep], int(n_zero - empty.sum())


def drop_repeated_equalities(A: sp.csc_matrix, b: np.ndarray, n_zero: int
                             ) -> tuple[sp.csc_matrix, np.ndarray, int]:
    """Remove equality rows that are a multiple of an earlier one (right side included):
    dependent rows slow and stall the interior-point method. Each row is compared after
    scaling by its largest coefficient (first nonzero made positive), to 1e-9.

    >>> A = sp.csc_matrix(np.array([[1.0, 2.0], [-2.0, -4.0], [1.0, 0.0]]))
    >>> _, b, n = drop_repeated_equalities(A, np.array([1.0, -2.0, 0.0]), 3)
    >>> b.tolist(), n
    ([1.0, 0.0], 2)
    """
    A = A.tocsr()
    A.sort_indices()
    eq = A[:n_zero]
    count = np.diff(eq.indptr)
    filled = count > 0
    width = int(count.max(initial=0))
    if width == 0:
        return A.tocsc(), b, n_zero
    row = np.repeat(np.arange(n_zero), count)
    place = np.arange(eq.nnz) - eq.indptr[row]
    big = np.zeros(n_zero)
    np.maximum.at(big, row, np.abs(eq.data))
    sign = np.sign(eq.data[eq.indptr[:-1][filled]])
    scale = np.ones(n_zero)
    scale[filled] = sign * big[filled]
    columns = np.full((n_zero, width), -1.0)
    values = np.zeros((n_zero, width))
    columns[row, place] = eq.indices
    values[row, place] = np.round(eq.data / scale[row], 9)
    key = np.column_stack([count, columns, values, np.round(b[:n_zero] / scale, 9)])
    _, first = np.unique(key[filled], axis=0, return_index=True)
    keep = np.concatenate([~filled, np.ones(A.shape[0] - n_zero, dtype=bool)])
    keep[np.flatnonzero(filled)[first]] = True
    return A[keep].tocsc(), b[keep], int(keep[:n_zero].sum())


def solve(program: ConicProgram, backend: str = "clarabel", *, verbose: bool = False,
          settings: dict | None = None) -> Solution:
    """Solve with the chosen back end; never raises on solver trouble (it is a status)."""
    if not all(np.all(np.isfinite(v)) for v in (program.c, program.b, program.A.data)):
        # an overflow upstream (a value no case file reaches): the solver is never handed it
        return Solution(x=None, status="numerical trouble: the program holds numbers that are not finite",
                        objective=None, iterations=0, solve_s=0.0, backend=backend)
    if backend == "clarabel":
        return _solve_clarabel(program, verbose, settings or {})
    if backend == "cvxpy":
        return _solve_cvxpy(program, verbose, settings or {})
    raise ValueError(f"unknown back end {backend!r}")


_CLARABEL_STATUS = {
    "Solved": "optimal",
    "AlmostSolved": "almost optimal",
    "PrimalInfeasible": "infeasible",
    "AlmostPrimalInfeasible": "infeasible",
    "DualInfeasible": "unbounded",
    "AlmostDualInfeasible": "unbounded",
    "MaxIterations": "iteration limit",
    "MaxTime": "time limit",
    "NumericalError": "numerical trouble",
    "InsufficientProgress": "insufficient progress",
}


# Clarabel's feasibility tolerance, kept at its default: a point it calls solved has
# ||A x + s - b||_2 <= FEASIBILITY * max(1, ||b||_2 + ||x||_2 + ||s||_2) (its termination test,
# src/solver/implementations/default/info.rs); the certificates judge residuals by it.
FEASIBILITY = 1e-8
AXISYM_UPPER_FEASIBILITY = 1e-7  # the circle's upper bound (default_settings and DEVELOPERS.md say why)
# Static regularisation measured to turn the troubled solves into solved ones (below).
STRONG_REGULARISATION = 1e-7


def default_settings(program: ConicProgram) -> dict:
    """Clarabel settings chosen by measurement (DEVELOPERS.md, "Solver settings").

    The linear solver is qdldl: Clarabel's "auto" picks faer here, which took
    twice as long on the lower bound (Prandtl, 2k and 4k triangles: 4.9 s and
    12.9 s against 2.4 s and 6.5 s; the same on the upper bound).
    The relative duality gap tolerance of the lower bound is 1e-4 (Clarabel's
    default 1e-8): either bound is the primal objective at a primal feasible
    point (the certificate checks feasibility on its own), and stopping the
    lower bound at 1e-4 saves a quarter to a half of its iterations, whose
    last decades creep at short steps (Prandtl, 8k triangles: 28 iterations
    against 37 at 1e-5 and 53 at 1e-8; lower bound -0.0235 % against -0.0221 %
    and -0.0219 %). The strip's upper bound keeps 1e-8 (UPPER_GAP): at 1e-4 to
    1e-7 Clarabel stopped one iteration early, 0.03-0.06 % above the optimum of
    the same program (N_gamma phi 30, graded 16k: 135.196 against 135.158
    kN/m, 26 against 27 iterations; adaptive 16k: 134.475 against 134.398, 23
    against 24; phi 35, 8k: +0.017 %), with no change on Prandtl, sand over
    clay or the slope at 8k. Iterative refinement stops at
    1e-9 relative, 1e-10 absolute (default 1e-13, 1e-12): about 10 % less
    time (Prandtl 8k, both bounds; N_gamma 4k lower bound), same iterations,
    same bounds to 1e-7. Feasibility tolerances stay at
    the default 1e-8. The lower bound's programs take a larger static regularisation:
    with the default, Clarabel often ends with numerical trouble on them (the
    mean stress is free in Tresca cones, and stress scales of 10-1000 kPa
    meet O(1) geometry); 1e-7 turned every such case tried into 'optimal'
    (Prandtl, Nc at phi 10-30, Nq, N_gamma, the demo) at up to twice the
    iterations. The same holds for upper bounds with velocity jumps (their
    nonnegative rows): with the default they ended "almost solved" with
    flow-rule residuals just over the certificate's limit (N_gamma, slope,
    2k triangles); with 1e-7 both were "optimal".
    """
    settings = {"max_iter": 200, "max_threads": 1, "direct_solve_method": "qdldl", "tol_gap_rel": 1e-4,
                "tol_feas": FEASIBILITY, "iterative_refinement_reltol": 1e-9, "iterative_refinement_abstol": 1e-10}
    if program.kind == "upper" and program.layout.get("axisymmetric"):
        # the circular footing's upper bound (nonnegative rows at every control point): Clarabel's
        # default static regularisation, and a primal feasibility tolerance of 1e-7, which its
        # residual sometimes could not pass (200 iterations "almost solved" on a tank case with a
        # water table, 26 with 1e-7; 21-51 iterations on five other cases at 1.5k triangles; 1e-7
        # regularisation took up to 200, 1e-9 ended in numerical trouble on Mohr-Coulomb soil).
        # That stall was nearly criss-cross stars (mesh.snap_crossings); with them snapped 1e-8
        # converges but took more iterations on every case tried (DEVELOPERS.md). Tresca
        # incompressibility is restored to round-off; the certificate judges the frictional
        # cones against this tolerance (certify_axisym).
        settings["tol_feas"] = AXISYM_UPPER_FEASIBILITY
        return settings
    if program.kind == "upper":
        settings["tol_gap_rel"] = UPPER_GAP
    if program.kind == "lower" or program.n_nonneg:
        settings["static_regularization_constant"] = STRONG_REGULARISATION
    return settings


UPPER_GAP = 1e-8  # relative duality gap at which a strip's upper bound stops (settings(): measured)
MKL_FROM_KKT = 200_000  # KKT dimension (variables + rows) from which MKL Pardiso is used when present.
# Measured on Prandtl's case, solve time qdldl / MKL side by side (two runs each, shared machine):
# lower bound 5k triangles (KKT 126k) 0.9-1.2, 10k (262k) 1.5-2.0, 20k (517k) 2.7-3.0; upper bound
# 5k (91k) 0.85, 10k (181k) 1.0, 20k (382k) 1.4-2.2. Same iterations, bounds within 1e-8.
MKL_IPARM = {7: 1, 24: 2}  # Pardiso: at most one step of its own iterative refinement (Clarabel refines
#                           the solution itself), and its two-level parallel forward/backward solve
MKL_THREADING = "sequential"  # MKL_THREADING_LAYER: the default ("intel") factorised wrongly here
_MKL = {"checked": False, "ready": False, "folder": None, "why": ""}
_MKL_LOCK = threading.Lock()


def mkl_ready() -> bool:
    """Whether Clarabel can use MKL Pardiso in this process (checked once).

    The `mkl` wheel (pip install 'bearbound[mkl]') ships libmkl_rt.so.3, but Clarabel
    opens "libmkl_rt.so" in the folder MKL_PARDISO_PATH names. MKL loads its other
    libraries from the folder it was opened from, so when the wheel's folder has no
    libmkl_rt.so a private folder of links to its libraries is made (removed at exit).
    MKL runs sequentially, one core per solve like qdldl (the two bounds already solve on
    the two cores); with its default threading layer, in one environment every solve
    ended at the first iteration in numerical trouble (a wrong factorisation). Both
    variables must be set before Clarabel first loads MKL, which is here. A small
    program is then solved with MKL and with qdldl and must agree, else MKL is not
    used (``mkl_status()`` says why)."""
    with _MKL_LOCK:
        if not _MKL["checked"]:
            _MKL["checked"] = True
            _MKL["ready"] = _load_mkl()
        return _MKL["ready"]


def mkl_status() -> str:
    """One line: whether MKL Pardiso is used for large programs, and if not, why."""
    return "MKL Pardiso for large programs" if mkl_ready() else f"qdldl only ({_MKL['why']})"


def _load_mkl() -> bool:
    import glob
    import os
    import sys

    folders = [os.environ.get("MKL_PARDISO_PATH", ""), os.path.join(sys.prefix, "lib")]
    found = [f for f in folders if f and glob.glob(os.path.join(f, "libmkl_rt.so*"))]
    if not found:
        _MKL["why"] = "the mkl package is not installed: pip install 'bearbound[mkl]'"
        return False
    folder = found[0]
    if not os.path.exists(os.path.join(folder, "libmkl_rt.so")):
        folder = _linked_mkl_folder(folder)
    os.environ["MKL_PARDISO_PATH"] = folder
    os.environ["MKL_THREADING_LAYER"] = MKL_THREADING
    try:  # a 2 x 2 program that both linear solvers must solve alike
        import clarabel
        A = sp.csc_matrix(np.array([[1.0, 1.0], [-1.0, 0.0], [0.0, -1.0]]))
        answers = []
        for method in ("mkl", "qdldl"):
            settings = clarabel.DefaultSettings()
            settings.verbose, settings.direct_solve_method = False, method
            cones = [clarabel.ZeroConeT(1), clarabel.NonnegativeConeT(2)]
            result = clarabel.DefaultSolver(sp.csc_matrix((2, 2)), np.array([1.0, 2.0]), A,
                                            np.array([1.0, 0.0, 0.0]), cones, settings).solve()
            answers.append((str(result.status), np.asarray(result.x)))
    except Exception as error:  # Clarabel refuses the setting: MKL not found or not built in
        _MKL["why"] = f"Clarabel could not load MKL: {' '.join(str(error).split())}"
        return False
    (status_mkl, x_mkl), (status_qdldl, x_qdldl) = answers
    if status_mkl != "Solved" or not np.allclose(x_mkl, x_qdldl, atol=1e-6):
        _MKL["why"] = f"MKL Pardiso gave a wrong answer on a test program ({status_mkl})"
        return False
    _MKL["folder"] = folder
    return True


def _linked_mkl_folder(folder: str) -> str:
    """A private folder of links to the shared libraries of ``folder`` (MKL's and the
    threading runtimes it may load), with libmkl_rt.so among them; removed when the process
    ends (the libraries stay loaded)."""
    import atexit
    import glob
    import os
    import shutil
    import tempfile

    links = tempfile.mkdtemp(prefix="bearbound-mkl-")
    atexit.register(shutil.rmtree, links, ignore_errors=True)
    for path in glob.glob(os.path.join(folder, "lib*.so*")):  # MKL's own and the threading runtimes
        os.symlink(path, os.path.join(links, os.path.basename(path)))
    real = sorted(glob.glob(os.path.join(folder, "libmkl_rt.so.*")))[0]
    os.symlink(real, os.path.join(links, "libmkl_rt.so"))
    return links


def linear_solver_for(program: ConicProgram, overrides: dict) -> str:
    """Clarabel's KKT solver for a program: the caller's choice if it made one, else MKL
    Pardiso for a lower bound from MKL_FROM_KKT on when it loads (mkl_ready), else qdldl.

    The upper bound stays with qdldl: on N_gamma (phi 30, 16k triangles) MKL took 30
    iterations and 21 s against qdldl's 26 and 15 s, and its flow-rule residual was
    7.9e-7 against 0 (the certificate allows 1e-6; with Pardiso's default refinement
    3.3e-6, withheld), although on Prandtl's case at 20k it was 1.4-2.2 times as fast."""
    if "direct_solve_method" in overrides:
        if overrides["direct_solve_method"] == "mkl" and not mkl_ready():
            raise ValueError(f"direct_solve_method 'mkl': MKL Pardiso is not available ({_MKL['why']})")
        return overrides["direct_solve_method"]
    if program.kind == "lower" and program.n_variables + program.n_rows >= MKL_FROM_KKT and mkl_ready():
        return "mkl"
    return "qdldl"


def stronger_settings(program: ConicProgram) -> dict | None:
    """Settings for a second solve when the first one's certificate failed on residuals the
    solver left (None: nothing stronger to try). Measured on 100 random layered cases at 400
    triangles (benchmarks/random_layered.py): 6 upper bounds ended "almost solved" with
    flow-rule residuals of 1.6e-6 to 7.6e-6; solved again with the lower bound's static
    regularisation all 6 ended "solved", residuals 2e-9 to 2.4e-7. Not the default for the
    upper bound: it is only needed by a few, and each extra solve costs what the first did."""
    if default_settings(program).get("static_regularization_constant") == STRONG_REGULARISATION:
        return None
    return {"static_regularization_constant": STRONG_REGULARISATION}


def _solve_clarabel(program: ConicProgram, verbose: bool, overrides: dict) -> Solution:
    """Solve with Clarabel; a solve with MKL Pardiso that ends in trouble is solved again
    with qdldl, and the Solution says so (a wrong factorisation is trouble, never a number:
    every bound is certified afterwards either way)."""
    method = linear_solver_for(program, overrides)
    solution = _solve_clarabel_with(program, verbose, {**overrides, "direct_solve_method": method})
    if method == "mkl" and solution.status not in ("optimal", "almost optimal", "infeasible", "unbounded"):
        again = _solve_clarabel_with(program, verbose, {**overrides, "direct_solve_method": "qdldl"})
        again.solve_s += solution.solve_s
        again.linear_solver = f"mkl, then qdldl (mkl: {solution.status} after {solution.iterations} iterations)"
        return again
    return solution


def _solve_clarabel_with(program: ConicProgram, verbose: bool, overrides: dict) -> Solution:
    import clarabel

    settings = clarabel.DefaultSettings()
    settings.verbose = verbose
    for key, value in {**default_settings(program), **overrides}.items():
        setattr(settings, key, value)
    if settings.direct_solve_method == "mkl":
        iparm = list(settings.pardiso_iparm)
        for index, value in MKL_IPARM.items():
            iparm[index] = value
        settings.pardiso_iparm = iparm
    n = program.n_variables
    P = sp.csc_matrix((n, n))
    cones = [clarabel.ZeroConeT(program.n_zero)] if program.n_zero else []
    cones += [clarabel.NonnegativeConeT(program.n_nonneg)] if program.n_nonneg else []
    cones += [clarabel.SecondOrderConeT(3)] * program.n_soc
    start = time.perf_counter()
    solver = clarabel.DefaultSolver(P, program.c, program.A, program.b, cones, settings)
    result = solver.solve()
    elapsed = time.perf_counter() - start
    status = _CLARABEL_STATUS.get(str(result.status), str(result.status))
    x = np.asarray(result.x) if status in ("optimal", "almost optimal", "iteration limit",
                                           "insufficient progress", "numerical trouble") else None
    objective = float(program.c @ x + program.objective_constant) if x is not None else None
    ray = np.asarray(result.x) if status == "unbounded" else None  # Clarabel's certificate of it
    return Solution(x=x, status=status, objective=objective, iterations=int(result.iterations),
                    solve_s=elapsed, backend="clarabel", linear_solver=settings.direct_solve_method, ray=ray)


def _solve_cvxpy(program: ConicProgram, verbose: bool, overrides: dict) -> Solution:
    import cvxpy as cp

    x = cp.Variable(program.n_variables)
    A, b, nz = program.A.tocsr(), program.b, program.n_zero
    constraints = []
    if nz:
        constraints.append(A[:nz] @ x == b[:nz])
    if program.n_nonneg:
        constraints.append(A[nz:nz + program.n_nonneg] @ x <= b[nz:nz + program.n_nonneg])
    if program.n_soc:
        first = nz + program.n_nonneg
        cone_rows, cb = A[first:], b[first:]
        t = cb[0::3] - cone_rows[0::3] @ x
        rest = cp.vstack([cb[1::3] - cone_rows[1::3] @ x, cb[2::3] - cone_rows[2::3] @ x])
        constraints.append(cp.SOC(t, rest, axis=0))  # one vectorised constraint for all cones
    problem = cp.Problem(cp.Minimize(program.c @ x), constraints)
    start = time.perf_counter()
    try:
        # the same Clarabel settings as the direct path, passed through cvxpy
        problem.solve(solver=cp.CLARABEL, verbose=verbose, **{**default_settings(program), **overrides})
        raw = problem.status
    except cp.error.SolverError as error:  # cvxpy raises on a numerical failure
        raw = f"solver error: {error}"
    elapsed = time.perf_counter() - start
    status = {"optimal": "optimal", "optimal_inaccurate": "almost optimal",
              "infeasible": "infeasible", "infeasible_inaccurate": "infeasible",
              "unbounded": "unbounded", "unbounded_inaccurate": "unbounded"}.get(raw, "numerical trouble")
    values = x.value if status in ("optimal", "almost optimal") else None
    stats = problem.solver_stats
    iterations = int(stats.num_iters) if stats is not None and stats.num_iters is not None else 0
    objective = float(program.c @ values + program.objective_constant) if values is not None else None
    return Solution(x=values, status=status, objective=objective, iterations=iterations,
                    solve_s=elapsed, backend="cvxpy")
