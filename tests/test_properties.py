"""Property tests (hypothesis) over random valid cases.

* Case files round-trip: a valid case written as TOML and read back is the same Case.
* The lower bound never exceeds the upper bound.
* More strength never lowers either bound.
* A heavier surcharge on level ground never lowers the bracket (it raises both
  bounds by at least the added surcharge).

The analyses run on tiny meshes (400 triangles per bound): every property here
holds on any mesh (the two monotone ones on one mesh shared by the pair of cases
compared), so coarse meshes test it as well as fine ones. The examples are
derandomised, so the suite runs the same cases every time; the soil data are
invented for the tests.
"""
from __future__ import annotations

import itertools
import json
import math
import pathlib
import tempfile
import unicodedata

import numpy as np
from hypothesis import HealthCheck, assume, given, settings
from hypothesis import strategies as st

from solver.analysis import analyse
from solver.case import case_to_dict, load_case, parse_case
from solver.certify import certify_lower, certify_upper
from solver.conic import solve
from solver.lower import lower_bound_program
from solver.mesh import Domain, build_mesh, plan_domain
from solver.model import WATER_UNIT_WEIGHT, Case
from solver.upper import upper_bound_program

ELEMENTS = 400  # triangles per bound: cheap, and every property below holds on any mesh
# Relative slack for comparing two certified bounds: the solver's tolerances and the
# certificates' (1e-6 of the stress scale) allow round-off of about this size, nothing more.
ROUND_OFF = 1e-6
# Comparing the optima of two programs solved apart: each solve stops within the solver's
# relative duality gap of its own optimum (solver.conic.default_settings), so both may be
# short of it by that much (the bounds stay rigorous; only their order can blur by this).
OPTIMUM_SLACK = 1e-4 + ROUND_OFF
SOLVING = settings(max_examples=8, deadline=None, derandomize=True,
                   suppress_health_check=[HealthCheck.too_slow])


def finite(low: float, high: float) -> st.SearchStrategy[float]:
    return st.floats(low, high, allow_nan=False, allow_infinity=False)


# -- any valid case, every key (for the round trip) -----------------------------

ONE_LINE = st.text(st.characters(blacklist_categories=("Cs",)), min_size=1, max_size=60).filter(
    lambda text: text.strip() != "" and text.isprintable())


def zero_or(low: float, high: float) -> st.SearchStrategy[float]:
    """0, or a number from low to high (keys whose positive values start at a floor)."""
    return st.one_of(st.just(0.0), finite(low, high))


@st.composite
def case_dicts(draw) -> dict:
    """A valid case as the nested dict a case file holds, any of its optional keys given
    (but [geometry], which names a drawing file of its own: tests/test_sitefile.py)."""
    width = draw(finite(0.1, 50))
    names = draw(st.lists(ONE_LINE, min_size=1, max_size=3, unique_by=lambda n: unicodedata.normalize("NFC", n.strip())))
    layers = []
    for i, name in enumerate(names):
        layer = {"name": name, "model": draw(st.sampled_from(["mohr-coulomb", "tresca"])),
                 "unit_weight": draw(finite(0, 30))}
        if i < len(names) - 1 or draw(st.booleans()):
            layer["thickness"] = draw(finite(0.1, 20))
        if draw(st.booleans()):
            layer["saturated_unit_weight"] = draw(finite(max(layer["unit_weight"], WATER_UNIT_WEIGHT), 30))
        if layer["model"] == "mohr-coulomb":
            layer["friction_angle"] = draw(zero_or(0.1, 50))
            layer["cohesion"] = draw(zero_or(0.01, 200))
            if layer["friction_angle"] == 0 and layer["cohesion"] == 0:
                layer["cohesion"] = 1.0  # a layer needs some strength
            if draw(st.booleans()):
                layer["dilation_angle"] = draw(finite(0, layer["friction_angle"]))
        else:
            layer["undrained_strength"] = draw(finite(0.5, 500))
            if draw(st.booleans()):
                layer["strength_gradient"] = draw(zero_or(0.001, 10))
        layers.append(layer)

    footing = {"width": width, "base": draw(st.sampled_from(["rough", "smooth"]))}
    ground = {"surcharge": draw(finite(0, 500))}
    if draw(st.booleans()):  # a slope beside the footing: no embedment then
        ground |= {"slope_angle": draw(finite(1, 89.9)), "slope_height": draw(finite(0.1, min(50, 100 * width))),
                   "crest_setback": draw(finite(0, min(20, 50 * width)))}
    elif draw(st.booleans()):
        total = sum(layer.get("thickness", math.inf) for layer in layers)
        footing["embedment"] = draw(finite(0, 0.99 * min(total, 10.0 * width)))
    # The base and the water table each at a level where the soil changes (an interface), or
    # clear of it by at least the thinnest band the case check allows (0.001 B).
    interfaces = list(itertools.accumulate(layer["thickness"] for layer in layers[:-1]))
    clear = lambda depth, levels: all(depth == level or abs(depth - level) >= 0.001 * width for level in levels)
    assume(clear(footing.get("embedment", 0.0), interfaces))
    if draw(st.booleans()):
        water = draw(finite(0, 50))
        assume(clear(water, interfaces + [footing.get("embedment", 0.0)]))
        ground["water_table"] = water
    if footing["base"] == "rough" and draw(st.booleans()):
        footing["load_inclination"] = draw(finite(-89.9, 89.9))
    if draw(st.booleans()):
        footing["eccentricity"] = draw(finite(-0.49 * width, 0.49 * width))
    if draw(st.booleans()):
        footing["design_load"] = draw(finite(1, 1e4))
    data = {"footing": footing, "ground": ground, "layers": layers}
    if draw(st.booleans()):
        data["title"] = draw(ONE_LINE)
    if draw(st.booleans()):
        keys = ["friction", "cohesion", "undrained_strength", "load", "resistance"]
        data["factors"] = {key: draw(finite(1, 3)) for key in draw(st.lists(st.sampled_from(keys), unique=True))}
    if draw(st.booleans()):
        data["analysis"] = {"bounds": draw(st.sampled_from(["lower", "upper", "both"])),
                            "elements": draw(st.integers(200, 400_000)),
                            "backend": draw(st.sampled_from(["clarabel", "cvxpy"]))}
        if draw(st.booleans()):  # adaptive refinement
            data["analysis"] |= {"target_gap": draw(finite(0.001, 0.99)), "max_steps": draw(st.integers(1, 20)),
                                 "time_limit_s": draw(finite(1, 86400))}
    return data


def to_toml(data: dict) -> str:
    """A case dict as TOML text (tomllib reads TOML but cannot write it).

    Strings are written as JSON strings, which are valid TOML basic strings;
    floats with repr, which TOML reads back to the same double.
    """
    def value(v) -> str:
        if isinstance(v, str):
            return json.dumps(v, ensure_ascii=False)
        return repr(float(v)) if isinstance(v, float) else str(v)

    def table(d: dict) -> list[str]:
        return [f"{key} = {value(v)}" for key, v in d.items()]

    lines = [f"title = {value(data['title'])}"] if "title" in data else []
    for name in ("footing", "ground", "factors", "analysis"):
        if name in data:
            lines += [f"[{name}]", *table(data[name])]
    for layer in data["layers"]:
        lines += ["[[layers]]", *table(layer)]
    return "\n".join(lines) + "\n"


@settings(max_examples=150, deadline=None, derandomize=True)
@given(case_dicts())
def test_case_parsing_round_trips(data: dict) -> None:
    case = parse_case(data)  # a valid case must be accepted
    assert parse_case(case_to_dict(case)) == case
    # ... and through the file: TOML text -> load_case -> the same Case
    with tempfile.TemporaryDirectory() as folder:
        path = pathlib.Path(folder) / "site.toml"
        path.write_text(to_toml(data), encoding="utf-8")
        loaded = load_case(path)
    assert loaded == parse_case(data, name="site", source_sha256=loaded.source_sha256)
    assert parse_case(case_to_dict(loaded), name="site", source_sha256=loaded.source_sha256) == loaded


# -- cases cheap to analyse: level ground, one or two layers --------------------

@st.composite
def level_ground_soils(draw) -> dict:
    """Level-ground case dicts with a vertical central load (keys of the file)."""
    two = draw(st.booleans())
    layers = []
    for i in range(2 if two else 1):
        if draw(st.booleans()):
            layer = {"model": "tresca", "undrained_strength": draw(finite(10, 60)),
                     "strength_gradient": draw(st.sampled_from([0.0, draw(finite(0.001, 2))]))}
        else:
            phi = draw(st.sampled_from([0.0, draw(finite(0.5, 35))]))
            layer = {"model": "mohr-coulomb", "friction_angle": phi, "cohesion": draw(finite(2, 20))}
        layer |= {"name": f"soil {i + 1}", "unit_weight": draw(st.sampled_from([0.0, draw(finite(14, 20))]))}
        if layer["model"] == "mohr-coulomb" and layer["friction_angle"] >= 5 and layer["unit_weight"] > 0:
            # cohesionless but heavy (weightless, cohesionless soil with no surcharge carries nothing)
            layer["cohesion"] = draw(st.sampled_from([0.0, layer["cohesion"]]))
        layers.append(layer)
    if two:
        layers[0]["thickness"] = draw(finite(0.5, 3))
    top = layers[0].get("thickness", 2.0)
    footing = {"width": draw(finite(1, 3)), "base": draw(st.sampled_from(["rough", "smooth"])),
               "embedment": draw(st.sampled_from([0.0, draw(finite(0, 0.5 * top))]))}
    ground = {"surcharge": draw(st.sampled_from([0.0, draw(finite(0, 20))]))}
    if draw(st.booleans()):
        # At the base or at least 0.1 m from it and from the interface: the case check refuses
        # a band thinner than 0.001 B, and one of 0.001 B to 0.01 B gives certified but loose bounds.
        water = footing["embedment"] + draw(st.sampled_from([0.0, draw(finite(0.1, 3))]))
        assume(not two or abs(water - top) >= 0.1)
        ground["water_table"] = water
    return {"footing": footing, "ground": ground, "layers": layers}


@st.composite
def bracket_cases(draw) -> Case:
    """Level ground; on a rough base the load may be inclined and eccentric."""
    data = draw(level_ground_soils())
    footing = data["footing"]
    if footing["base"] == "rough" and draw(st.booleans()):
        footing["load_inclination"] = draw(finite(-15, 15))
        footing["eccentricity"] = draw(finite(-footing["width"] / 6, footing["width"] / 6))
    return parse_case(data)


def certified_pressures(result) -> tuple[float, float]:
    """Both bounds (kPa); a bound withheld on such a plain case is itself a defect."""
    for bound in (result.lower, result.upper):
        assert bound.pressure_kPa is not None, f"{bound.kind} bound withheld: {bound.status}"
    return result.lower.pressure_kPa, result.upper.pressure_kPa


@SOLVING
@given(bracket_cases())
def test_lower_bound_never_exceeds_upper_bound(case: Case) -> None:
    lower, upper = certified_pressures(analyse(case, elements=ELEMENTS, adaptive=False))
    assert lower <= upper * (1 + ROUND_OFF), (lower, upper)


def bounds_on(case: Case, domain: Domain) -> tuple[float, float, list[np.ndarray]]:
    """Certified lower and upper bound (kPa) on meshes of the given domain, and those meshes."""
    pressures, meshes = [], []
    for order, program_of, certify in ((1, lower_bound_program, certify_lower),
                                       (2, upper_bound_program, certify_upper)):
        mesh = build_mesh(case, order=order, elements=ELEMENTS, domain=domain)
        program = program_of(case, mesh)
        solution = solve(program, "clarabel")
        certificate = certify(case, mesh, program, solution)
        assert certificate["passed"], f"order {order}: {certificate.get('reason')}"
        pressures.append(certificate["load_kN_per_m"] / case.footing.width)  # vertical central load
        meshes += [mesh.points, mesh.triangles]
    return pressures[0], pressures[1], meshes


def assert_same_meshes(a: list[np.ndarray], b: list[np.ndarray]) -> None:
    # The comparison below is between two discrete problems on one mesh; check that premise.
    assert all(x.shape == y.shape and np.array_equal(x, y) for x, y in zip(a, b))


@SOLVING
@given(level_ground_soils(), finite(1, 1.5), finite(1, 1.5))
def test_more_strength_never_lowers_either_bound(data: dict, tan_phi_factor: float,
                                                 extra_cohesion_factor: float) -> None:
    # "More strength": tan(phi) times k_phi >= 1 and c (su and its gradient) times
    # k_c = k_phi * extra >= k_phi. Then every layer's yield region contains the weaker one's
    # (the Mohr-Coulomb envelope c + sigma tan(phi) rises everywhere on the weak envelope's
    # range, since its apex c/tan(phi) moves no nearer). So on one mesh every stress field
    # admissible for the weak soil is admissible for the strong (the lower bound cannot fall)
    # and every mechanism dissipates at least as much (the upper bound cannot fall). A
    # larger phi alone with the same c is not such a pair: the cones differ on the tension
    # side, so it is not a property of the discrete bounds and is not tested here.
    k_c = tan_phi_factor * extra_cohesion_factor
    strong_layers = []
    for layer in data["layers"]:
        layer = dict(layer)
        if layer["model"] == "tresca":
            layer["undrained_strength"] *= k_c
            layer["strength_gradient"] *= k_c
        else:
            layer["cohesion"] *= k_c
            layer["friction_angle"] = math.degrees(math.atan(tan_phi_factor * math.tan(math.radians(layer["friction_angle"]))))
        strong_layers.append(layer)
    weak, strong = parse_case(data), parse_case({**data, "layers": strong_layers})
    # The domain grows with phi (plan_domain), and a different domain is a different mesh, on
    # which the two bounds need not be ordered. Both cases use the strong case's domain (the
    # larger), so both are solved on the same meshes.
    domain = plan_domain(strong)
    weak_lower, weak_upper, weak_meshes = bounds_on(weak, domain)
    strong_lower, strong_upper, strong_meshes = bounds_on(strong, domain)
    assert_same_meshes(weak_meshes, strong_meshes)
    assert strong_lower >= weak_lower * (1 - 2 * OPTIMUM_SLACK), (weak_lower, strong_lower)
    assert strong_upper >= weak_upper * (1 - 2 * OPTIMUM_SLACK), (weak_upper, strong_upper)


@SOLVING
@given(level_ground_soils(), finite(0.5, 40))
def test_heavier_surcharge_never_lowers_the_bracket(data: dict, added_kPa: float) -> None:
    # Level ground, vertical central load, one mesh: the planned domain may depend on the
    # surcharge (plan_domain ranks the strata by rough bearing capacities, which it raises),
    # so both cases are solved on the light case's domain, hence on the same meshes.
    # Lower bound: adding an isotropic compression of added_kPa everywhere to an admissible
    # field keeps equilibrium, meets the heavier surcharge on the ground and keeps the
    # deviator while raising the yield radius by 2 added sin(phi) >= 0, so the bound rises
    # by at least added_kPa. Upper bound: for every mechanism the surcharge does work
    # added_kPa times the ground's heave, and the heave is at least B (div v >= 0 under the
    # flow rule; the far boundary is fixed and the footing moves down at unit speed), so
    # the bound rises by at least added_kPa too.
    light = parse_case(data)
    heavy = parse_case({**data, "ground": {**data["ground"],
                                           "surcharge": data["ground"]["surcharge"] + added_kPa}})
    domain = plan_domain(light)
    light_lower, light_upper, light_meshes = bounds_on(light, domain)
    heavy_lower, heavy_upper, heavy_meshes = bounds_on(heavy, domain)
    assert_same_meshes(light_meshes, heavy_meshes)
    for light_p, heavy_p in ((light_lower, heavy_lower), (light_upper, heavy_upper)):
        # never lower: in fact higher by at least the added surcharge
        assert heavy_p - light_p >= added_kPa - OPTIMUM_SLACK * (heavy_p + light_p), (light_p, heavy_p, added_kPa)


def test_the_optimum_slack_matches_the_solver_gap_tolerance() -> None:
    from solver.conic import ConicProgram, default_settings
    import scipy.sparse as sp
    for kind in ("lower", "upper"):
        program = ConicProgram(c=np.zeros(1), A=sp.csc_matrix((0, 1)), b=np.zeros(0), n_zero=0, n_soc=0, kind=kind)
        assert OPTIMUM_SLACK >= default_settings(program)["tol_gap_rel"]
