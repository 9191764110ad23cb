"""Benchmark: the Prandtl case (weightless Tresca, rough strip; exact q_u/su = 2 + pi,
Prandtl 1920) at four mesh sizes, and the two conic back ends on one problem.

Prints a table: elements, variables, cones, lower, upper, errors, gap, the wall
time split (mesh, assemble, solve, certify; "solve" is the wall time during
which a solve ran: the two bounds solve at once on two cores, "LB/UB s" gives
each one's own time), the solve's share of the wall time and the peak memory
of the process that ran the case. Each row runs in a fresh
process so that peak memory belongs to that row alone.

    python benchmarks/run.py            # the table
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
                analysis=Analysis(elements=elements, backend=backend))


def one(elements: int, backend: str) -> dict:
    from solver.analysis import analyse
    result = analyse(prandtl_case(elements, backend))
    lo, up = result.lower, result.upper
    peak_mb = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0
    return {"elements": [lo.elements, up.elements], "variables": [lo.variables, up.variables],
            "cones": [lo.cones, up.cones], "lower": lo.pressure_kPa, "upper": up.pressure_kPa,
            "gap": result.gap_percent, "timing": result.timing, "peak_mb": peak_mb,
            "iterations": [lo.iterations, up.iterations],
            "solve_split": [lo.timing["solve_s"], up.timing["solve_s"]]}


def child(elements: int, backend: str) -> dict:
    out = subprocess.run([sys.executable, __file__, "--one", str(elements), "--backend", backend],
                         capture_output=True, text=True, check=True)
    return json.loads(out.stdout.strip().splitlines()[-1])


def fmt(x, spec):
    return "—" if x is None else format(x, spec)


def main() -> None:
    parser = argparse.ArgumentParser()
    parser.add_argument("--sizes", type=int, nargs="*", default=[1000, 2000, 4000, 8000])
    parser.add_argument("--one", type=int)
    parser.add_argument("--backend", default="clarabel")
    args = parser.parse_args()
    if args.one:
        print(json.dumps(one(args.one, args.backend)))
        return
    print("Prandtl, rough, weightless Tresca (exact 2 + pi); both bounds, half domain by symmetry")
    head = (f"{'target':>7} {'el LB/UB':>11} {'vars LB/UB':>13} {'cones LB/UB':>13} {'lower':>8} "
            f"{'err %':>7} {'upper':>8} {'err %':>7} {'gap %':>6} {'mesh':>5} {'asm':>5} {'solve':>6} "
            f"{'LB/UB s':>11} {'cert':>5} {'total':>6} {'solve%':>6} {'peak MB':>7}")
    print(head)
    for n in args.sizes:
        r = child(n, "clarabel")
        t = r["timing"]
        err = lambda v: None if v is None else 100 * (v / EXACT - 1)
        print(f"{n:7d} {r['elements'][0]:5d}/{r['elements'][1]:<5d} {r['variables'][0]:6d}/{r['variables'][1]:<6d} "
              f"{r['cones'][0]:6d}/{r['cones'][1]:<6d} {fmt(r['lower'], '8.4f')} {fmt(err(r['lower']), '7.3f')} "
              f"{fmt(r['upper'], '8.4f')} {fmt(err(r['upper']), '7.3f')} {fmt(r['gap'], '6.2f')} "
              f"{t['mesh_s']:5.2f} {t['assemble_s']:5.2f} {t['solve_wall_s']:6.2f} "
              f"{r['solve_split'][0]:5.1f}/{r['solve_split'][1]:<5.1f} {t['certify_s']:5.2f} {t['total_s']:6.2f} "
              f"{100 * t['solve_wall_s'] / t['total_s']:6.1f} {r['peak_mb']:7.0f}")
    n = 2000
    print(f"\nBack ends on the same problem ({n} triangles), wall time of the whole run:")
    for backend in ("clarabel", "cvxpy"):
        r = child(n, backend)
        print(f"  {backend:9s} lower {fmt(r['lower'], '.6f')} upper {fmt(r['upper'], '.6f')} "
              f"solve {r['timing']['solve_s']:.2f} s, total {r['timing']['total_s']:.2f} s, peak {r['peak_mb']:.0f} MB")


if __name__ == "__main__":
    main()
