"""Benchmark: the Prandtl case (weightless Tresca, rough strip; exact q_u/su = 2 + pi,
Prandtl 1920) on fixed meshes at three sizes, with each of Clarabel's linear solvers
(qdldl; "auto": MKL Pardiso for large programs when the mkl extra is installed, as a
run chooses it), the growth exponent k of wall ~ elements^k and of the lower bound's
iterations for each, and the two conic back ends on one problem.

Prints a table: elements, variables, cones, lower, upper, errors, gap, the wall
time split (mesh, assemble, solve, certify; "solve" is the wall time during
which a solve ran: the two bounds solve at once on two cores, "LB/UB s" gives
each one's own time), the solve's share of the wall time and the peak memory
of the process that ran the case. Each row runs in a fresh
process so that peak memory belongs to that row alone.

    python benchmarks/run.py            # the table, 5k / 20k / 80k (the 80k rows take tens of minutes)
    python benchmarks/run.py --sizes 2000 4000
"""
from __future__ import annotations

import argparse
import json
import math
import resource
import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))
EXACT = 2.0 + math.pi  # Prandtl (1920)


def prandtl_case(elements: int, backend: str = "clarabel"):
    from solver.model import Analysis, Case, Footing, Ground, Layer
    return Case(title="Prandtl", footing=Footing(width=1.0, base="rough"), ground=Ground(),
                layers=(Layer("clay", "tresca", None, 0.0, undrained_strength=1.0),),
                analysis=Analysis(elements=elements, backend=backend, mesh="fixed"))


def one(elements: int, backend: str, linear_solver: str = "auto") -> dict:
    from solver.analysis import analyse
    settings = None if linear_solver == "auto" else {"direct_solve_method": linear_solver}
    result = analyse(prandtl_case(elements, backend), solver_settings=settings)
    lo, up = result.lower, result.upper
    peak_mb = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0
    return {"elements": [lo.elements, up.elements], "variables": [lo.variables, up.variables],
            "cones": [lo.cones, up.cones], "lower": lo.pressure_kPa, "upper": up.pressure_kPa,
            "gap": result.gap_percent, "timing": result.timing, "peak_mb": peak_mb,
            "iterations": [lo.iterations, up.iterations],
            "solve_split": [lo.timing["solve_s"], up.timing["solve_s"]],
            "linear_solver": [lo.extra.get("linear_solver"), up.extra.get("linear_solver")]}


def child(elements: int, backend: str, linear_solver: str = "auto") -> dict:
    out = subprocess.run([sys.executable, __file__, "--one", str(elements), "--backend", backend,
                          "--linear-solver", linear_solver], capture_output=True, text=True, check=True)
    return json.loads(out.stdout.strip().splitlines()[-1])


def fmt(x, spec):
    return "—" if x is None else format(x, spec)


def main() -> None:
    parser = argparse.ArgumentParser()
    parser.add_argument("--sizes", type=int, nargs="*", default=[5000, 20000, 80000])
    parser.add_argument("--one", type=int)
    parser.add_argument("--backend", default="clarabel")
    parser.add_argument("--linear-solver", default="auto", choices=("auto", "qdldl", "mkl"))
    parser.add_argument("--solvers", nargs="*", default=["qdldl", "auto"], help="linear solvers to compare")
    args = parser.parse_args()
    if args.one:
        print(json.dumps(one(args.one, args.backend, args.linear_solver)))
        return
    from solver.conic import mkl_status
    print("Prandtl, rough, weightless Tresca (exact 2 + pi); both bounds, half domain by symmetry, fixed meshes")
    print(f"linear solver auto: {mkl_status()}")
    head = (f"{'solver':>6} {'target':>7} {'el LB/UB':>11} {'vars LB/UB':>13} {'lower':>8} "
            f"{'err %':>7} {'upper':>8} {'err %':>7} {'gap %':>6} {'its LB/UB':>9} {'mesh':>5} {'asm':>5} "
            f"{'solve':>6} {'LB/UB s':>11} {'cert':>5} {'total':>6} {'solve%':>6} {'peak MB':>7}  KKT solver LB/UB")
    print(head)
    import numpy as np
    for linear_solver in args.solvers:
        counts, walls, iterations = [], [], []
        for n in args.sizes:
            r = child(n, "clarabel", linear_solver)
            t = r["timing"]
            err = lambda v: None if v is None else 100 * (v / EXACT - 1)
            counts.append(sum(r["elements"]) / 2), walls.append(t["total_s"]), iterations.append(r["iterations"][0])
            print(f"{linear_solver:>6} {n:7d} {r['elements'][0]:5d}/{r['elements'][1]:<5d} "
                  f"{r['variables'][0]:6d}/{r['variables'][1]:<6d} {fmt(r['lower'], '8.4f')} "
                  f"{fmt(err(r['lower']), '7.3f')} {fmt(r['upper'], '8.4f')} {fmt(err(r['upper']), '7.3f')} "
                  f"{fmt(r['gap'], '6.2f')} {r['iterations'][0]:4d}/{r['iterations'][1]:<4d} {t['mesh_s']:5.2f} "
                  f"{t['assemble_s']:5.2f} {t['solve_wall_s']:6.2f} {r['solve_split'][0]:5.1f}/{r['solve_split'][1]:<5.1f} "
                  f"{t['certify_s']:5.2f} {t['total_s']:6.2f} {100 * t['solve_wall_s'] / t['total_s']:6.1f} "
                  f"{r['peak_mb']:7.0f}  {r['linear_solver'][0]}/{r['linear_solver'][1]}", flush=True)
        if len(args.sizes) > 1:
            k = np.polyfit(np.log(counts), np.log(walls), 1)[0]
            k_its = np.polyfit(np.log(counts), np.log(iterations), 1)[0]
            print(f"{linear_solver:>6} wall ~ elements^{k:.2f}, lower-bound iterations ~ elements^{k_its:.2f} "
                  f"({args.sizes[0]} to {args.sizes[-1]})")
    n = 2000
    print(f"\nBack ends on the same problem ({n} triangles), wall time of the whole run:")
    for backend in ("clarabel", "cvxpy"):
        r = child(n, backend)
        print(f"  {backend:9s} lower {fmt(r['lower'], '.6f')} upper {fmt(r['upper'], '.6f')} "
              f"solve {r['timing']['solve_s']:.2f} s, total {r['timing']['total_s']:.2f} s, peak {r['peak_mb']:.0f} MB")


if __name__ == "__main__":
    main()
