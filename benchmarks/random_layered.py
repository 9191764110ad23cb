"""Random valid layered cases (seeded), and how often a bound is withheld on them.

``random_case(seed)`` draws one valid case file (as a dict) on level layered ground:
two to four layers of drained Mohr-Coulomb or undrained Tresca soil, any mix, with
thicknesses from 0.02 to three footing widths, sometimes a water
table, a surcharge, an embedment, a smooth base, an inclined or eccentric load. The
soils are invented; every case is a valid input, so every bound should be certified.

    .venv/bin/python benchmarks/random_layered.py [--cases 100] [--first 0] [--elements 400]

solves the cases one after the other (one core) and prints how many bounds were
withheld, and why. tests/test_robustness.py runs a small sample of the same seeds.
"""
from __future__ import annotations

import argparse
import collections
import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parent.parent))

from solver.analysis import analyse  # noqa: E402
from solver.case import parse_case  # noqa: E402


def random_case(seed: int, elements: int = 400) -> dict:
    """One valid layered case (a case file's dict), the same for the same seed."""
    rng = np.random.default_rng(seed)
    width = float(rng.choice([0.5, 1.0, 1.5, 2.0, 3.0]))
    n_layers = int(rng.integers(2, 5))
    layers = []
    for i in range(n_layers):
        layer = {"name": f"layer {i + 1}", "unit_weight": float(rng.choice([0.0, rng.uniform(14.0, 21.0)], p=[0.1, 0.9]))}
        if rng.random() < 0.5:
            layer |= {"model": "mohr-coulomb", "friction_angle": float(rng.choice([0.0, rng.uniform(1.0, 45.0)], p=[0.1, 0.9])),
                      "cohesion": float(rng.choice([0.0, rng.uniform(0.5, 30.0)]))}
            if layer["friction_angle"] < 5.0 and layer["cohesion"] == 0.0:
                layer["cohesion"] = 5.0  # a layer needs strength
        else:
            su = float(rng.choice([0.0, rng.uniform(5.0, 120.0)], p=[0.1, 0.9]))  # 0: rising from zero
            layer |= {"model": "tresca", "undrained_strength": su,
                      "strength_gradient": float(rng.uniform(0.5, 3.0) if su == 0.0
                                                 else rng.choice([0.0, rng.uniform(0.0, 3.0)]))}
        if i < n_layers - 1:
            layer["thickness"] = float(rng.choice([rng.uniform(0.02, 0.2), rng.uniform(0.1, 3.0)]) * width)
        layers.append(layer)
    footing = {"width": width, "base": "rough" if rng.random() < 0.75 else "smooth"}
    if rng.random() < 0.3:
        footing["embedment"] = float(rng.uniform(0.0, 0.8) * min(layers[0]["thickness"], width))
    if footing["base"] == "rough" and rng.random() < 0.2:
        footing["load_inclination"] = float(rng.uniform(-15.0, 15.0))
    if rng.random() < 0.2:
        footing["eccentricity"] = float(rng.uniform(-0.2, 0.2) * width)
    ground = {}
    if rng.random() < 0.4:
        ground["surcharge"] = float(rng.uniform(0.0, 40.0))
    if rng.random() < 0.3:
        tops = np.cumsum([0.0] + [layer["thickness"] for layer in layers[:-1]])
        ground["water_table"] = float(rng.choice([rng.uniform(0.0, 4.0) * width, rng.choice(tops),
                                                  footing.get("embedment", 0.0)]))
    return {"title": f"random layered case {seed}", "footing": footing, "ground": ground, "layers": layers,
            "analysis": {"elements": elements, "mesh": "fixed"}}


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--cases", type=int, default=100)
    parser.add_argument("--first", type=int, default=0, help="first seed")
    parser.add_argument("--elements", type=int, default=400)
    args = parser.parse_args(argv)
    withheld = collections.Counter()
    reasons = collections.Counter()
    start = time.perf_counter()
    for seed in range(args.first, args.first + args.cases):
        case = parse_case(random_case(seed, args.elements), name=f"random-{seed}")
        result = analyse(case, parallel=False)
        for bound in (result.lower, result.upper):
            if bound.pressure_kPa is None:
                withheld[bound.kind] += 1
                reasons[f"{bound.kind}: {bound.status.split(' = ')[0]}"] += 1
                print(f"seed {seed}: {bound.kind} bound {bound.status}", flush=True)
    print(f"{args.cases} random layered cases, {args.elements} triangles per bound, "
          f"{time.perf_counter() - start:.0f} s: lower bound withheld {withheld['lower']}, "
          f"upper bound withheld {withheld['upper']}")
    for reason, count in reasons.most_common():
        print(f"  {count:3d}  {reason}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
