"""Factors of safety: strength reduction of the case, the search on F with each bound, the
partial-factor check, and that a withheld bound is never used."""
import doctest
import math
from dataclasses import replace
from types import SimpleNamespace

import pytest
from scipy.optimize import brentq

import solver.safety
from solver.analysis import analyse
from solver.case import parse_case
from solver.model import Factors
from solver.safety import (STRENGTH_TOLERANCE, design_strength_case, factor_of_safety, factor_on_load,
                           reduce_strength, search_strength)

PRANDTL_NC = 2 + math.pi  # Prandtl (1920): q_u = (2 + pi) su, weightless Tresca half-space, no surcharge


def clay_case(su=30.0, design_load=150.0, factors=None, elements=600):
    data = {"title": "weightless clay", "footing": {"width": 2.0, "design_load": design_load},
            "layers": [{"name": "clay", "model": "tresca", "undrained_strength": su, "unit_weight": 0.0}],
            "analysis": {"elements": elements, "mesh": "fixed"}}
    if factors:
        data["factors"] = factors
    return parse_case(data)


def bound(load, status="optimal"):
    return SimpleNamespace(load_kN_per_m=load, status=status)


def test_doctests():
    assert doctest.testmod(solver.safety).failed == 0


def test_reduce_strength_divides_c_su_gradient_and_tan_phi():
    case = parse_case({"footing": {"width": 1.0}, "layers": [
        {"name": "sand", "model": "mohr-coulomb", "thickness": 2.0, "cohesion": 8.0, "friction_angle": 35.0,
         "unit_weight": 19.0},
        {"name": "clay", "model": "tresca", "undrained_strength": 40.0, "strength_gradient": 3.0,
         "unit_weight": 17.0}]})
    sand, clay = reduce_strength(case, 1.6).layers
    assert sand.cohesion == pytest.approx(5.0)
    assert math.tan(math.radians(sand.friction_angle)) == pytest.approx(math.tan(math.radians(35.0)) / 1.6)
    assert clay.undrained_strength == pytest.approx(25.0) and clay.strength_gradient == pytest.approx(1.875)
    assert sand.unit_weight == 19.0 and clay.unit_weight == 17.0  # weights are not factored
    design = design_strength_case(case, Factors(friction=1.25, cohesion=1.6, undrained_strength=1.4))
    d_sand, d_clay = design.layers
    assert d_sand.cohesion == pytest.approx(5.0)
    assert math.tan(math.radians(d_sand.friction_angle)) == pytest.approx(math.tan(math.radians(35.0)) / 1.25)
    assert d_clay.undrained_strength == pytest.approx(40.0 / 1.4)


def test_factor_on_load_is_the_bracket_over_the_design_load_and_none_when_withheld():
    assert factor_on_load(300.0, 330.0, 150.0) == {"lower": 2.0, "upper": 2.2}
    assert factor_on_load(None, 330.0, 150.0) == {"lower": None, "upper": 2.2}


def test_search_proves_only_from_solved_values(monkeypatch):
    # fake bounds 3 % either side of a collapse load falling faster than 1/F, as on
    # frictional ground: 300 / F^2 kN/m; the fake solver is handed F itself
    monkeypatch.setattr(solver.safety, "reduce_strength", lambda case, F: F)
    design = 100.0
    root = math.sqrt(3.0)

    def solve(F, kind):
        return bound((0.97 if kind == "lower" else 1.03) * 300.0 / F ** 2)

    lower = search_strength("lower", None, design, 0.97 * 300.0, solve)
    upper = search_strength("upper", None, design, 1.03 * 300.0, solve)
    true_lower, true_upper = math.sqrt(0.97 * 3.0), math.sqrt(1.03 * 3.0)  # roots of each fake bound
    assert lower["value"] <= true_lower <= lower["value"] * (1 + STRENGTH_TOLERANCE)
    assert upper["value"] / (1 + STRENGTH_TOLERANCE) <= true_upper <= upper["value"]
    assert lower["value"] <= root <= upper["value"]
    for found, kind in ((lower, "lower"), (upper, "upper")):
        solved = {e["F"]: e["load_kN_per_m"] for e in found["evaluations"]}
        assert found["value"] in solved  # a value actually solved, not interpolated
        load = solved[found["value"]]
        assert load >= design if kind == "lower" else load <= design
        assert found["solves"] <= 8


def test_withheld_bound_is_not_used_and_the_search_goes_on_below_it(monkeypatch):
    # The case: the lower bound at F = 2.142 ended infeasible and the search stopped,
    # leaving the main run's F = 1 as "the" lower value. Now the search bisects below a
    # withheld F. Fake lower bound 529 / F^2 (root 2.3 at 100 kN/m), withheld from F = 2.142 on.
    monkeypatch.setattr(solver.safety, "reduce_strength", lambda case, F: F)

    def solve(F, kind):
        return bound(None, "withheld: infeasible") if F >= 2.142 else bound(529.0 / F ** 2)

    found = search_strength("lower", None, 100.0, 529.0, solve)
    assert found["value"] > 2.0  # proven by a certified solve, not the main run's F = 1
    solved = {e["F"]: e["load_kN_per_m"] for e in found["evaluations"]}
    assert solved[found["value"]] >= 100.0
    assert found["search"] == "incomplete" and "withheld" in found["reason"]
    assert all(e["load_kN_per_m"] is None for e in found["evaluations"] if e["F"] >= 2.142)
    assert sum(e["load_kN_per_m"] is None for e in found["evaluations"]) <= solver.safety.MAX_WITHHELD


def test_a_search_that_proves_nothing_beyond_F_1_gives_no_value_and_says_why(monkeypatch):
    monkeypatch.setattr(solver.safety, "reduce_strength", lambda case, F: F)
    found = search_strength("lower", None, 100.0, 300.0, lambda F, kind: bound(None, "withheld: infeasible"))
    assert found["value"] is None and found["search"] == "not found"
    assert "withheld" in found["reason"] and "F = 1" in found["reason"]
    assert found["solves"] == solver.safety.MAX_WITHHELD


def test_withheld_inside_a_closed_bracket_keeps_improving_the_upper_value(monkeypatch):
    # fake upper bound 300 / F^2: root sqrt(3); withheld in a band just above the root
    monkeypatch.setattr(solver.safety, "reduce_strength", lambda case, F: F)

    def solve(F, kind):
        return bound(None, "withheld") if 1.75 < F < 1.9 else bound(300.0 / F ** 2)

    found = search_strength("upper", None, 100.0, 300.0, solve)
    assert found["value"] is not None and found["value"] >= math.sqrt(3.0)
    assert 300.0 / found["value"] ** 2 <= 100.0


def test_withheld_bound_at_F_1_gives_nothing():
    found = search_strength("upper", None, 100.0, None, lambda F, kind: pytest.fail("must not solve"))
    assert found["value"] is None and found["solves"] == 0 and "withheld" in found["notes"][0]


def test_strength_factor_brackets_prandtl_on_weightless_clay():
    case = clay_case()
    result = analyse(case)
    fos = factor_of_safety(case, result)
    exact = PRANDTL_NC * 30.0 * 2.0 / 150.0  # q(F) = (2 + pi) su / F exactly, so F = (2 + pi) su B / P
    strength = fos["on_strength"]
    assert strength["lower"] <= exact <= strength["upper"]
    # weightless Tresca ground: LB(F) = LB(1) / F on one mesh, so F is the factor on load to the tolerance
    assert strength["lower"] == pytest.approx(fos["on_load"]["lower"], rel=STRENGTH_TOLERANCE)
    # the search stops when its bracket of the root is within the tolerance: F_upper <= (1 + tol) root
    assert fos["on_load"]["upper"] * (1 - 1e-9) <= strength["upper"] <= fos["on_load"]["upper"] * (1 + STRENGTH_TOLERANCE) * (1 + 1e-9)
    assert fos["on_load"]["lower"] == pytest.approx(result.lower.load_kN_per_m / 150.0)
    assert 0 < strength["solves"] <= 6
    assert not strength["notes"]
    assert strength["search"] == {"lower": "found", "upper": "found"}


def reissner_pressure(c, phi_deg):
    """Prandtl (1920) and Reissner (1924): q_u = c N_c on a weightless c-phi half-space without
    surcharge, N_c = (N_q - 1) cot(phi), N_q = exp(pi tan phi) tan^2(45 + phi/2)."""
    phi = math.radians(phi_deg)
    nq = math.exp(math.pi * math.tan(phi)) * math.tan(math.pi / 4 + phi / 2) ** 2
    return c * (nq - 1) / math.tan(phi)


def test_strength_factor_brackets_the_exact_factor_on_weightless_c_phi_soil():
    c, phi, B, design = 10.0, 25.0, 1.0, 80.0
    case = parse_case({"footing": {"width": B, "design_load": design},
                       "layers": [{"name": "silt", "model": "mohr-coulomb", "cohesion": c,
                                   "friction_angle": phi, "unit_weight": 0.0}],
                       "analysis": {"elements": 600, "mesh": "fixed"}})

    def pressure_at(F):
        return reissner_pressure(c / F, math.degrees(math.atan(math.tan(math.radians(phi)) / F)))

    exact = brentq(lambda F: pressure_at(F) * B - design, 1.0, 10.0)
    fos = factor_of_safety(case, analyse(case))
    assert fos["on_strength"]["lower"] <= exact <= fos["on_strength"]["upper"]
    assert fos["on_strength"]["upper"] / fos["on_strength"]["lower"] < 1.25  # a useful bracket on a coarse mesh


def test_partial_factors_check_covered_not_covered_and_undecided():
    def solve(case_F, kind):  # fake bounds 2 % either side of Prandtl for the case given
        exact = PRANDTL_NC * case_F.layers[0].undrained_strength * 2.0
        return bound(exact * (0.98 if kind == "lower" else 1.02))

    factors = {"undrained_strength": 1.4, "load": 1.35, "resistance": 1.1}
    true_rd = PRANDTL_NC * 30.0 / 1.4 * 2.0 / 1.1  # kN/m
    results = {}
    for name, design_load in (("covered", 0.9 * true_rd / 1.35), ("not covered", 1.1 * true_rd / 1.35),
                              ("undecided", true_rd / 1.35)):
        case = clay_case(design_load=design_load, factors=factors)
        result = SimpleNamespace(lower=bound(1.0), upper=bound(1.0))
        results[name] = solver.safety.partial_factor_check(case, result, design_load, solve)
    assert results["covered"]["covered"] is True and "covers" in results["covered"]["verdict"]
    assert results["not covered"]["covered"] is False and "NOT" in results["not covered"]["verdict"]
    assert results["undecided"]["covered"] is None and "undecided" in results["undecided"]["verdict"]
    check = results["covered"]
    assert check["action_kN_per_m"] == pytest.approx(0.9 * true_rd)
    assert check["design_resistance_kN_per_m"]["lower"] == pytest.approx(0.98 * true_rd)
    assert check["solves"] == 2


def test_no_design_load_and_no_factors_gives_none():
    case = replace(clay_case(), footing=replace(clay_case().footing, design_load=None))
    assert factor_of_safety(case, SimpleNamespace(lower=None, upper=None)) is None


def test_the_two_strength_searches_at_once_equal_them_in_turn():
    """The lower- and upper-bound searches on two threads (meshing takes turns under the
    gmsh lock) give exactly the serial values, solve by solve."""
    case = clay_case()
    result = analyse(case)
    serial = factor_of_safety(case, result, parallel=False)["on_strength"]
    together = factor_of_safety(case, result, parallel=True)["on_strength"]
    for kind in ("lower", "upper"):
        assert together[kind] == serial[kind]
        assert together["evaluations"][kind] == serial["evaluations"][kind]
    assert together["solves"] == serial["solves"]


def footing_with(design_load, on_load=None, on_strength=None):
    return SimpleNamespace(footing=SimpleNamespace(design_load=design_load,
                                                   required_factor_of_safety_on_load=on_load,
                                                   required_factor_of_safety_on_strength=on_strength))


def test_design_load_against_the_collapse_bracket_gets_a_plain_verdict():
    from solver.safety import safety_checks

    # the crane-rail case of the issue: 120 kN/m on a footing that collapses at 27 kN/m
    above = safety_checks(footing_with(120.0), 26.8, 27.1, {"lower": 0.223, "upper": 0.226}, {})[0]
    assert above["outcome"] == "not met" and "ABOVE the collapse load" in above["verdict"]
    carried = safety_checks(footing_with(100.0), 200.0, 210.0, {"lower": 2.0, "upper": 2.1}, {})[0]
    assert carried["outcome"] == "met" and "is carried" in carried["verdict"]
    inside = safety_checks(footing_with(205.0), 200.0, 210.0, {}, {})[0]
    assert inside["outcome"] == "undecided" and "inside the collapse bracket" in inside["verdict"]
    withheld = safety_checks(footing_with(100.0), None, 210.0, {}, {})[0]
    assert withheld["outcome"] == "undecided"


@pytest.mark.parametrize("required, load, strength, outcomes", [
    ((2.0, 1.5), (2.1, 2.3), (1.6, 1.7), ["met", "met"]),
    ((3.0, 1.8), (2.1, 2.3), (1.6, 1.7), ["not met", "not met"]),
    ((2.2, 1.65), (2.1, 2.3), (1.6, 1.7), ["undecided", "undecided"]),
    ((2.0, 1.5), (2.1, 2.3), (None, 1.7), ["met", "undecided"]),
])
def test_required_factors_of_safety_are_met_not_met_or_undecided_by_the_bracket(required, load, strength,
                                                                               outcomes):
    from solver.safety import safety_checks

    on_strength = {"lower": strength[0], "upper": strength[1],
                   "reason": {"lower": "the lower bound was withheld at F = 1.9" if strength[0] is None else None}}
    checks = safety_checks(footing_with(100.0, *required), 100.0 * load[0], 100.0 * load[1],
                           {"lower": load[0], "upper": load[1]}, on_strength)
    assert [c["check"] for c in checks] == ["design load carried", "required factor of safety on load",
                                           "required factor of safety on strength"]
    assert [c["outcome"] for c in checks[1:]] == outcomes
    assert [c["required"] for c in checks[1:]] == list(required)
    if strength[0] is None:
        assert "withheld" in checks[2]["verdict"]  # the reason, not a bare "undecided"


# -- circular footings: the whole load in kN, the axisymmetric bounds re-solved at each F ------------

def circle_case(layer: dict, design_load: float, width: float = 2.0, factors: dict | None = None,
                elements: int = 400):
    data = {"title": "circle", "footing": {"width": width, "shape": "circular", "design_load": design_load},
            "layers": [{"name": "soil", **layer}], "analysis": {"elements": elements, "mesh": "fixed"}}
    if factors:
        data["factors"] = factors
    return parse_case(data)


@pytest.fixture(scope="module")
def weightless_clay_circle():
    """A circle of 2 m on weightless clay (su 30 kPa) under 300 kN, with partial factors: its
    collapse load is proportional to su, so Q(F) = Q(1) / F exactly on one mesh."""
    case = circle_case({"model": "tresca", "undrained_strength": 30.0, "unit_weight": 0.0}, 300.0,
                       factors={"undrained_strength": 1.4, "load": 1.35, "resistance": 1.1})
    result = analyse(case)
    return case, result, factor_of_safety(case, result)


def test_a_circles_factor_on_load_is_its_whole_collapse_load_in_kN_over_the_design_load(weightless_clay_circle):
    case, result, fos = weightless_clay_circle
    area = math.pi * 2.0 ** 2 / 4
    assert fos["load_unit"] == "kN" and fos["design_load_kN"] == 300.0 and "design_load_kN_per_m" not in fos
    assert fos["design_pressure_kPa"] == pytest.approx(300.0 / area)
    for kind in ("lower", "upper"):
        bound = getattr(result, kind)
        assert bound.load_kN == pytest.approx(bound.pressure_kPa * area)  # the whole footing's load, kN
        assert fos["on_load"][kind] == pytest.approx(bound.load_kN / 300.0, rel=1e-12)
        assert all("load_kN" in e and "load_kN_per_m" not in e for e in fos["on_strength"]["evaluations"][kind])
    carried = fos["checks"][0]
    assert carried["outcome"] == "met" and "300.0 kN (the whole vertical load" in carried["verdict"]
    assert "kN/m" not in carried["verdict"]


def test_a_circles_strength_factor_brackets_its_factor_on_weightless_clay(weightless_clay_circle):
    # Q(F) = Q(1) / F, so the true F is Q_true / P, inside the factor on load's bracket; each bound's
    # search closes on its own root Q_bound(1) / P to the tolerance
    _, _, fos = weightless_clay_circle
    load, strength = fos["on_load"], fos["on_strength"]
    assert strength["search"] == {"lower": "found", "upper": "found"} and not strength["notes"]
    assert load["lower"] / (1 + STRENGTH_TOLERANCE) <= strength["lower"] <= load["lower"] * (1 + 1e-6)
    assert load["upper"] * (1 - 1e-6) <= strength["upper"] <= load["upper"] * (1 + STRENGTH_TOLERANCE)
    for kind in ("lower", "upper"):  # the values are F actually solved and certified on the circle
        solved = {e["F"]: e["load_kN"] for e in strength["evaluations"][kind]}
        assert solved[strength[kind]] >= 300.0 if kind == "lower" else solved[strength[kind]] <= 300.0
    assert 0 < strength["solves"] <= 6


def test_a_circles_partial_factor_check_is_in_kN(weightless_clay_circle):
    _, result, fos = weightless_clay_circle
    partial = fos["partial_factors"]
    assert partial["action_kN"] == pytest.approx(1.35 * 300.0) and "action_kN_per_m" not in partial
    # su / 1.4: the collapse load / 1.4, up to the mesh (the design solve asks for as many triangles as
    # the main mesh has, and gmsh meshes that count a little differently: 0.12 % seen)
    for kind in ("lower", "upper"):
        expected = getattr(result, kind).load_kN / 1.4 / 1.1
        assert partial["design_resistance_kN"][kind] == pytest.approx(expected, rel=0.01)
    assert partial["covered"] is (partial["design_resistance_kN"]["lower"] >= 1.35 * 300.0)


def test_a_circles_strength_bracket_on_frictional_ground_with_weight_holds_against_both_bounds():
    """Sand with a little cohesion under its own weight: F on strength is not the factor on load.
    Cross-checks that fail if a bound or the search is wrong: the upper bound at the lower F
    still carries the design load (LB <= UB at every F), the lower bound at the upper F does not
    exceed it, and the factor on strength is below the factor on load (frictional ground)."""
    case = circle_case({"model": "mohr-coulomb", "cohesion": 5.0, "friction_angle": 30.0, "unit_weight": 18.0},
                       500.0, width=1.5, elements=300)
    result = analyse(case)
    fos = factor_of_safety(case, result, parallel=False)
    strength = fos["on_strength"]
    lo, up = strength["lower"], strength["upper"]
    assert strength["search"] == {"lower": "found", "upper": "found"}
    assert 1.0 < lo <= up <= lo * 1.3 and up < fos["on_load"]["lower"]
    upper_at_lo = analyse(reduce_strength(case, lo), bounds="upper").upper
    lower_at_up = analyse(reduce_strength(case, up), bounds="lower").lower
    assert upper_at_lo.load_kN is not None and upper_at_lo.load_kN >= 500.0
    assert lower_at_up.load_kN is not None and lower_at_up.load_kN <= 500.0
