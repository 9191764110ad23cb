"""Benchmark over six cases: uniform meshes at three sizes and one adaptive run each.

Cases (references for the error columns, where there is one):
  prandtl  weightless Tresca, rough (exact 2 + pi; Prandtl 1920)
  ngamma   c = 0, phi = 30, gamma = 18 kN/m^3, rough, B = 1 m (N_gamma = 14.75,
           Martin 2005, method of characteristics; value from memory)
  circle   as prandtl under a rough circular footing, B = diameter (6.05, Eason & Shield
           1960; value from memory)
  circle_ngamma  as ngamma under a rough circular footing (no reference at hand)
  clays    Tresca su = 40 kPa over su = 20 kPa at 0.5 B (no closed form)
  slope    Tresca su = 40 kPa, gamma = 18, 26.6 deg slope 4 m high, setback 1 m (no closed form)

Columns: triangles (lower/upper), lower, upper, gap %, wall s, solve share of
wall (the wall time during which a solve ran), peak MB of the process (each row
in a fresh process), and per case the exponent k of wall ~ elements^k fitted
over the uniform rows. The two bounds solve at once on two cores when the
machine has them (analysis.run_bounds); --serial solves them one after the
other, as before.

    python benchmarks/cases.py                     # sizes 2500 5000 10000
    python benchmarks/cases.py --sizes 5000 20000 80000
    python benchmarks/cases.py --cases prandtl --serial
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


def make_case(name: str, elements: int, target_gap: float | None):
    from solver.model import Analysis, Case, Footing, Ground, Layer
    analysis = Analysis(elements=elements, target_gap=target_gap, max_steps=5, time_limit_s=60.0)
    if name == "prandtl":
        return Case("Prandtl", Footing(width=1.0), Ground(), (Layer("clay", "tresca", None, 0.0, undrained_strength=1.0),), analysis), 2 + math.pi
    if name == "ngamma":
        sand = Layer("sand", "mohr-coulomb", None, 18.0, cohesion=0.0, friction_angle=30.0)
        return Case("N_gamma", Footing(width=1.0), Ground(), (sand,), analysis), 0.5 * 18.0 * 1.0 * 14.75
    if name in ("circle", "circle_ngamma"):
        case, reference = make_case("prandtl" if name == "circle" else "ngamma", elements, target_gap)
        circle = replace(case, title=f"{case.title}, circle", footing=replace(case.footing, shape="circular"))
        return circle, (6.05 if name == "circle" else None)
    if name == "clays":
        layers = (Layer("stiff", "tresca", 1.0, 18.0, undrained_strength=40.0),
                  Layer("soft", "tresca", None, 17.0, undrained_strength=20.0))
        return Case("two clays", Footing(width=2.0), Ground(), layers, analysis), None
    if name == "slope":
        ground = Ground(slope_angle=26.6, crest_setback=1.0, slope_height=4.0)
        return Case("slope", Footing(width=2.0), ground, (Layer("clay", "tresca", None, 18.0, undrained_strength=40.0),), analysis), None
    raise ValueError(name)


def one(name: str, elements: int, adaptive: bool, serial: bool = False) -> dict:
    from solver.analysis import analyse
    case, reference = make_case(name, elements, 0.0025 if adaptive else None)
    r = analyse(case, parallel=False if serial else None)
    t = r.timing
    return {"elements": [r.lower.elements, r.upper.elements], "lower": r.lower.pressure_kPa,
            "upper": r.upper.pressure_kPa, "gap": r.gap_percent, "wall": t["total_s"],
            "solve_share": t["solve_wall_s"] / t["total_s"], "reference": reference,
            "peak_mb": resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0,
            "steps": len(r.adapt_history or [])}


def child(name: str, elements: int, adaptive: bool, serial: bool) -> dict:
    args = [sys.executable, __file__, "--one", name, str(elements)] + (["--adaptive"] if adaptive else []) \
        + (["--serial"] if serial else [])
    out = subprocess.run(args, capture_output=True, text=True, check=True)
    return json.loads(out.stdout.strip().splitlines()[-1])


def main() -> None:
    parser = argparse.ArgumentParser()
    parser.add_argument("--sizes", type=int, nargs="*", default=[2500, 5000, 10000])
    parser.add_argument("--cases", nargs="*", default=["prandtl", "circle", "ngamma", "circle_ngamma", "clays", "slope"])
    parser.add_argument("--one", nargs=2)
    parser.add_argument("--adaptive", action="store_true")
    parser.add_argument("--serial", action="store_true", help="one bound after the other, one core")
    args = parser.parse_args()
    if args.one:
        print(json.dumps(one(args.one[0], int(args.one[1]), args.adaptive, args.serial)))
        return
    fmt = lambda v, s: "-" if v is None else format(v, s)
    print(f"{'case':8s} {'run':>9s} {'triangles':>13s} {'lower':>9s} {'upper':>9s} {'gap %':>6s} "
          f"{'wall s':>7s} {'solve':>6s} {'peak MB':>7s}  reference")
    for name in args.cases:
        walls, counts = [], []
        rows = [(f"{n}", child(name, n, False, args.serial)) for n in args.sizes]
        rows.append((f"adapt{args.sizes[0]}", child(name, args.sizes[0], True, args.serial)))
        for label, r in rows:
            if not label.startswith("adapt"):
                walls.append(r["wall"]), counts.append(sum(r["elements"]) / 2)
            ref = r["reference"]
            err = "" if ref is None or r["lower"] is None or r["upper"] is None else \
                f"{ref:.4g} (lower {100 * (r['lower'] / ref - 1):+.2f} %, upper {100 * (r['upper'] / ref - 1):+.2f} %)"
            steps = f" ({r['steps']} steps)" if label.startswith("adapt") else ""
            print(f"{name:8s} {label:>9s} {r['elements'][0]:6d}/{r['elements'][1]:<6d} {fmt(r['lower'], '9.3f')} "
                  f"{fmt(r['upper'], '9.3f')} {fmt(r['gap'], '6.2f')} {r['wall']:7.1f} "
                  f"{100 * r['solve_share']:5.1f}% {r['peak_mb']:7.0f}  {err}{steps}")
        k = np.polyfit(np.log(counts), np.log(walls), 1)[0]
        print(f"{name:8s} wall time ~ elements^{k:.2f} over the uniform rows")


if __name__ == "__main__":
    main()
