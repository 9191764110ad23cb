"""Benchmark over the goal cases: the default run (adaptive, to a 1 % gap or 60 s) and
fixed meshes at three sizes.

Cases (invented soils; references for the error columns, where there is one):
  prandtl    weightless Tresca, rough (exact 2 + pi; Prandtl 1920)
  ngamma30   c = 0, phi = 30, gamma = 18 kN/m^3, rough, B = 1 m (N_gamma = 14.75,
             Martin 2005, method of characteristics; value from memory)
  ngamma35   the same at phi = 35 (N_gamma = 34.48, Martin 2005; value from memory)
  sandclay   dense sand, phi = 38, 1 m over soft clay su = 25 kPa, B = 2 m (no closed form)
  crust      strong over weak clay: su = 100 kPa, 2 m (H = B) over su = 20 kPa, B = 2 m
  eccentric  Tresca su = 40 kPa, gamma = 18, load at e = B/8 from the centre, B = 2 m
  slope      Tresca su = 40 kPa, gamma = 18, 26.6 deg slope 4 m high, setback 1 m, B = 2 m
  clays      Tresca su = 40 kPa over su = 20 kPa at 0.5 B (earlier benchmark, kept)
  circle     as prandtl under a rough circular footing, B = diameter (6.05, Eason & Shield
             1960; value from memory)
  circle_ngamma  as ngamma30 under a rough circular footing (no reference at hand)

The goal table (the default): each case as `bearbound run` solves it by default,
starting at 4000 triangles per bound, target gap 1 %, time limit 60 s, each in a
fresh process; columns: steps, triangles of the last lower/upper mesh, lower, upper,
gap, wall time, whether the target was met and, when not, why (the run's own words).
The goal on the 2-core machine: gap <= 1 % within 60 s on every case but clays.

--uniform: fixed meshes at --sizes, with the solve share of wall time, peak memory
and per case the exponent k of wall ~ elements^k. The two bounds solve at once on two
cores when the machine has them (analysis.run_bounds); --serial one after the other.

    python benchmarks/cases.py                              # the goal table
    python benchmarks/cases.py --cases prandtl crust --time-limit 20
    python benchmarks/cases.py --uniform --sizes 2500 5000 10000
"""
from __future__ import annotations

import argparse
import json
import math
import resource
import subprocess
import sys
from dataclasses import replace
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))
GOAL_CASES = ["prandtl", "ngamma30", "ngamma35", "sandclay", "crust", "eccentric", "slope"]
UNIFORM_CASES = ["prandtl", "circle", "ngamma30", "circle_ngamma", "clays", "slope"]  # circles beside strips


def make_case(name: str, analysis: dict):
    """(Case, reference pressure in kPa or None) of a benchmark case."""
    from solver.case import parse_case
    clay = lambda su, gamma: {"name": "clay", "model": "tresca", "undrained_strength": su, "unit_weight": gamma}
    sand = lambda phi: {"name": "sand", "model": "mohr-coulomb", "friction_angle": phi, "unit_weight": 18.0}
    cases = {
        "prandtl": ({"width": 1.0}, {}, [clay(1.0, 0.0)], 2 + math.pi),
        "ngamma30": ({"width": 1.0}, {}, [sand(30.0)], 0.5 * 18.0 * 1.0 * 14.75),
        "ngamma35": ({"width": 1.0}, {}, [sand(35.0)], 0.5 * 18.0 * 1.0 * 34.48),
        "sandclay": ({"width": 2.0}, {}, [{**sand(38.0), "unit_weight": 19.0, "thickness": 1.0},
                                          {**clay(25.0, 17.0), "name": "soft clay"}], None),
        "crust": ({"width": 2.0}, {}, [{**clay(100.0, 18.0), "name": "crust", "thickness": 2.0},
                                       {**clay(20.0, 16.0), "name": "soft clay"}], None),
        "eccentric": ({"width": 2.0, "eccentricity": 0.25}, {}, [clay(40.0, 18.0)], None),
        "slope": ({"width": 2.0}, {"slope_angle": 26.6, "crest_setback": 1.0, "slope_height": 4.0},
                  [clay(40.0, 18.0)], None),
        "clays": ({"width": 2.0}, {}, [{**clay(40.0, 18.0), "name": "stiff", "thickness": 1.0},
                                       {**clay(20.0, 17.0), "name": "soft"}], None),
    }
    if name in ("circle", "circle_ngamma"):
        strip, _ = make_case("prandtl" if name == "circle" else "ngamma30", analysis)
        circle = replace(strip, title=f"{name}", footing=replace(strip.footing, shape="circular"))
        return circle, (6.05 if name == "circle" else None)
    footing, ground, layers, reference = cases[name]
    return parse_case({"title": name, "footing": footing, "ground": ground, "layers": layers,
                       "analysis": analysis}), reference


def one(name: str, analysis: dict, serial: bool = False) -> dict:
    from solver.analysis import analyse
    from solver.conic import mkl_status
    case, reference = make_case(name, analysis)
    r = analyse(case, parallel=False if serial else None)
    t = r.timing
    return {"elements": [r.lower.elements, r.upper.elements], "lower": r.lower.pressure_kPa,
            "upper": r.upper.pressure_kPa, "gap": r.gap_percent, "wall": t["total_s"],
            "solve_share": t["solve_wall_s"] / t["total_s"], "reference": reference,
            "peak_mb": resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0,
            "refinement": r.refinement, "linear_solver": mkl_status(),
            "growths": [r.lower.extra.get("domain_growths"), r.upper.extra.get("domain_growths")]}


def child(name: str, analysis: dict, serial: bool) -> dict:
    args = [sys.executable, __file__, "--one", name, json.dumps(analysis)] + (["--serial"] if serial else [])
    out = subprocess.run(args, capture_output=True, text=True, check=True)
    return json.loads(out.stdout.strip().splitlines()[-1])


def errors(r: dict) -> str:
    ref = r["reference"]
    if ref is None or r["lower"] is None or r["upper"] is None:
        return ""
    return f"{ref:.4g} (lower {100 * (r['lower'] / ref - 1):+.2f} %, upper {100 * (r['upper'] / ref - 1):+.2f} %)"


def goal_table(names: list[str], time_limit: float, target: float, serial: bool) -> None:
    fmt = lambda v, s: "-" if v is None else format(v, s)
    print(f"Default run: adaptive from 4000 triangles, target gap {100 * target:g} %, time limit {time_limit:g} s")
    print(f"{'case':9s} {'steps':>5s} {'triangles':>13s} {'lower':>9s} {'upper':>9s} {'gap %':>6s} {'wall s':>7s} "
          f"{'met':>4s}  reference / why not")
    solver_line = None
    for name in names:
        r = child(name, {"target_gap": target, "time_limit_s": time_limit}, serial)
        solver_line = r["linear_solver"]
        ref = r["refinement"]
        met = "yes" if ref["reached"] else "NO"
        why = "" if ref["reached"] else f"  stopped by {ref['why']}"
        print(f"{name:9s} {ref['steps']:5d} {r['elements'][0]:6d}/{r['elements'][1]:<6d} {fmt(r['lower'], '9.3f')} "
              f"{fmt(r['upper'], '9.3f')} {fmt(r['gap'], '6.2f')} {r['wall']:7.1f} {met:>4s}  {errors(r)}{why}",
              flush=True)
    print(f"linear solver: {solver_line}")


def uniform_table(names: list[str], sizes: list[int], serial: bool) -> None:
    fmt = lambda v, s: "-" if v is None else format(v, s)
    print(f"{'case':9s} {'run':>7s} {'triangles':>13s} {'lower':>9s} {'upper':>9s} {'gap %':>6s} "
          f"{'wall s':>7s} {'solve':>6s} {'peak MB':>7s}  reference")
    for name in names:
        walls, counts = [], []
        for n in sizes:
            r = child(name, {"elements": n, "mesh": "fixed"}, serial)
            walls.append(r["wall"]), counts.append(sum(r["elements"]) / 2)
            print(f"{name:9s} {n:7d} {r['elements'][0]:6d}/{r['elements'][1]:<6d} {fmt(r['lower'], '9.3f')} "
                  f"{fmt(r['upper'], '9.3f')} {fmt(r['gap'], '6.2f')} {r['wall']:7.1f} "
                  f"{100 * r['solve_share']:5.1f}% {r['peak_mb']:7.0f}  {errors(r)}", flush=True)
        if len(sizes) > 1:
            k = np.polyfit(np.log(counts), np.log(walls), 1)[0]
            print(f"{name:9s} wall time ~ elements^{k:.2f} over these sizes")


def main() -> None:
    parser = argparse.ArgumentParser()
    parser.add_argument("--cases", nargs="*", default=None, help=f"default {' '.join(GOAL_CASES)}; --uniform: {' '.join(UNIFORM_CASES)}")
    parser.add_argument("--uniform", action="store_true", help="fixed meshes at --sizes instead of the goal table")
    parser.add_argument("--sizes", type=int, nargs="*", default=[2500, 5000, 10000])
    parser.add_argument("--time-limit", type=float, default=60.0, help="s, the default run's time limit")
    parser.add_argument("--target", type=float, default=0.01, help="the default run's target gap (fraction)")
    parser.add_argument("--one", nargs=2)
    parser.add_argument("--serial", action="store_true", help="one bound after the other, one core")
    args = parser.parse_args()
    if args.one:
        print(json.dumps(one(args.one[0], json.loads(args.one[1]), args.serial)))
        return
    names = args.cases or (UNIFORM_CASES if args.uniform else GOAL_CASES)
    if args.uniform:
        uniform_table(names, args.sizes, args.serial)
    else:
        goal_table(names, args.time_limit, args.target, args.serial)


if __name__ == "__main__":
    main()
