"""The model's extent follows the mechanism: planned from the strata's strengths, the
same whether a soil is given as one layer or two, grown and solved again when a
bound's field reaches its edge, and the user's own extent when the case gives one.

The soils are invented for the tests. The strong-crust case (B = 2 m, Tresca crust
su = 100 kPa, 2 m thick, over soft clay su = 20 kPa) is the one on which the
lower bound used to stick, every mesh, because the model was too small for the
mechanism (the gap was 13.6 % at 4000 triangles).
"""
from __future__ import annotations

import dataclasses

import pytest

import solver.analysis
from solver.analysis import analyse
from solver.case import CaseError, parse_case
from solver.mesh import mechanism_candidates, plan_domain

CRUST = {"name": "crust", "thickness": 2.0, "model": "tresca", "undrained_strength": 100.0, "unit_weight": 18.0}
SOFT = {"name": "soft clay", "model": "tresca", "undrained_strength": 20.0, "unit_weight": 16.0}


def alone(layer: dict) -> dict:
    """The layer as the only one (no thickness: it runs to the model's base)."""
    return {k: v for k, v in layer.items() if k != "thickness"}


def crust_case(layers=None, **analysis) -> dict:
    return {"footing": {"width": 2.0}, "layers": layers or [CRUST, SOFT],
            "analysis": {"elements": 1000, "mesh": "fixed", **analysis}}


def extent(case) -> tuple[float, float, float]:
    d = plan_domain(case)
    return d.x_min, d.x_max, d.depth


SPLITS = [
    # (one layer, the same soil as two layers, what lies above)
    (SOFT, [{**SOFT, "name": "soft 1", "thickness": 6.0}, {**SOFT, "name": "soft 2"}], [CRUST]),
    ({"name": "clay", "model": "tresca", "undrained_strength": 15.0, "strength_gradient": 2.0, "unit_weight": 17.0},
     [{"name": "clay 1", "model": "tresca", "undrained_strength": 15.0, "strength_gradient": 2.0,
       "unit_weight": 17.0, "thickness": 3.0},
      {"name": "clay 2", "model": "tresca", "undrained_strength": 21.0, "strength_gradient": 2.0, "unit_weight": 17.0}],
     []),
    ({"name": "sand", "model": "mohr-coulomb", "friction_angle": 33.0, "cohesion": 1.0, "unit_weight": 19.0},
     [{"name": "sand 1", "model": "mohr-coulomb", "friction_angle": 33.0, "cohesion": 1.0, "unit_weight": 19.0,
       "thickness": 1.5},
      {"name": "sand 2", "model": "mohr-coulomb", "friction_angle": 33.0, "cohesion": 1.0, "unit_weight": 19.0}],
     [{**CRUST, "thickness": 0.5}]),
]


@pytest.mark.parametrize("whole, split, above", SPLITS)
def test_splitting_a_layer_in_two_does_not_change_the_model(whole, split, above):
    one = parse_case(crust_case(above + [whole]))
    two = parse_case(crust_case(above + split))
    assert extent(one) == extent(two)
    assert one.required_interfaces() == two.required_interfaces()
    assert mechanism_candidates(one) == mechanism_candidates(two)


def test_a_weaker_layer_below_widens_the_model_and_a_stronger_one_does_not():
    crust_alone = extent(parse_case(crust_case([alone(CRUST)])))
    over_soft = extent(parse_case(crust_case()))
    over_stiff = extent(parse_case(crust_case([CRUST, {**SOFT, "undrained_strength": 150.0}])))
    assert over_soft[1] > 1.5 * crust_alone[1] and over_soft[2] > 1.5 * crust_alone[2]
    # the stiff layer adds only the room every interface needs below it (1.25 times its depth)
    assert over_stiff[1] == crust_alone[1] and over_stiff[2] == max(crust_alone[2], 1.25 * 2.0)


def test_a_wide_crust_mechanism_gives_way_to_the_soft_clay_below():
    # A dense sand crust's own mechanism (phi = 38) would reach 14 m beside the footing and
    # 7.8 m down; 1 m of it over soft clay fails into the clay, and the model follows that.
    sand = {"name": "sand", "thickness": 1.0, "model": "mohr-coulomb", "friction_angle": 38.0, "unit_weight": 19.0}
    sand_alone = extent(parse_case(crust_case([alone(sand)])))
    over_clay = extent(parse_case(crust_case([sand, {**SOFT, "undrained_strength": 25.0}])))
    assert over_clay[1] < sand_alone[1] and over_clay[2] < sand_alone[2]


def test_user_model_extent_is_used_and_checked():
    case = parse_case(crust_case(model_width=30.0, model_depth=12.0))
    assert extent(case) == (0.0, 15.0, 12.0)
    # a base above the crust's interface at 2 m: the clay below is the lower bound's extension
    # elements' (solver.lower.deep_strata); the upper bound's base is fixed, still an upper bound
    shallow = plan_domain(parse_case(crust_case(model_depth=1.5)))
    assert shallow.depth == 1.5 and shallow.interfaces == ()
    with pytest.raises(CaseError, match=r"^analysis\.model_depth: 3000\.0 is not allowed; must be <= 2000 "):
        parse_case(crust_case(model_depth=3000.0))  # 1000 footing widths
    with pytest.raises(CaseError, match=r"^analysis\.model_width: 1\.8 is not allowed; must be > 2 "):
        parse_case(crust_case(model_width=1.8))
    slope = {"footing": {"width": 2.0}, "ground": {"slope_angle": 30.0, "crest_setback": 1.0, "slope_height": 3.0},
             "layers": [SOFT], "analysis": {"model_width": 10.0}}
    with pytest.raises(CaseError, match=r"^analysis\.model_width: 10\.0 is not allowed; .*slope's toe"):
        parse_case(slope)


def test_no_field_reaches_the_edge_of_the_planned_model_on_plain_cases():
    for layers in ([{"name": "clay", "model": "tresca", "undrained_strength": 30.0, "unit_weight": 0.0}],
                   [{"name": "sand", "model": "mohr-coulomb", "friction_angle": 30.0, "unit_weight": 18.0}]):
        result = analyse(parse_case(crust_case(layers)))
        for bound in (result.lower, result.upper):
            assert bound.pressure_kPa is not None
            assert bound.extra["field_at_edge"] == [] and bound.extra["domain_growths"] == 0


def test_a_model_too_small_for_the_mechanism_grows_and_both_bounds_improve(monkeypatch):
    case = parse_case(crust_case())
    small = parse_case(crust_case(model_width=16.0, model_depth=6.0))  # the user fixed it: no growth
    stuck = analyse(small)
    assert "lower" in " ".join(stuck.notes) and "model_width / model_depth fix that edge" in " ".join(stuck.notes)
    for bound in (stuck.lower, stuck.upper):
        assert bound.extra["field_at_edge"] and bound.extra["domain_growths"] == 0
    # the same small model as the plan: the run grows it
    monkeypatch.setattr(solver.analysis, "plan_domain", lambda c: plan_domain(small))
    grown = analyse(case)
    assert grown.lower.extra["domain_growths"] >= 1 and grown.upper.extra["domain_growths"] >= 1
    assert grown.lower.pressure_kPa > stuck.lower.pressure_kPa
    assert grown.upper.pressure_kPa < stuck.upper.pressure_kPa
    assert grown.domain["depth_m"] > 6.0 and grown.domain["x_max_m"] > 8.0
    assert grown.lower.certificate["passed"] and grown.upper.certificate["passed"]


def test_adaptive_steps_grow_the_domain_of_a_bound_whose_field_reaches_its_edge(monkeypatch):
    small = parse_case(crust_case(model_width=16.0, model_depth=6.0))
    case = parse_case(crust_case(mesh="adaptive", target_gap=1e-4, max_steps=2, time_limit_s=300))
    monkeypatch.setattr(solver.analysis, "plan_domain", lambda c: plan_domain(small))
    result = analyse(case)
    first, second = result.adapt_history
    assert first["field_at_edge"]["lower"] and "lower" in second["refined"]
    assert result.lower.extra["domain_growths"] == 1
    assert result.lower.mesh.domain.depth > 6.0 or result.lower.mesh.domain.x_max > 8.0


def test_extended_hint_covers_the_grown_domain():
    import numpy as np

    from solver.adapt import extend_hint, lower_size_hint
    from solver.mesh import build_mesh, grow_domain

    case = parse_case(crust_case(model_width=16.0, model_depth=6.0))
    bound = analyse(case, bounds="lower").lower
    hint = lower_size_hint(bound)
    bigger = grow_domain(case, bound.mesh.domain, {"right", "base"})
    extended = extend_hint(hint, bigger, bound.mesh)
    assert extended.estimate_count() > hint.estimate_count()
    mesh = build_mesh(dataclasses.replace(case, analysis=dataclasses.replace(case.analysis, model_width=None)),
                      order=1, elements=1200, domain=bigger, size_hint=extended)
    assert abs(mesh.n_elements / 1200 - 1) < 0.15
    assert np.isclose(mesh.points[:, 0].max(), bigger.x_max) and np.isclose(mesh.points[:, 1].min(), -bigger.depth)


def test_a_larger_model_that_does_no_better_is_named_not_said_to_be_missing(monkeypatch):
    # An upper bound at the model's right edge is solved again on a larger model, which gives a
    # higher (looser) value on the same number of triangles: the first is kept, and the note
    # must say the larger one was tried, never that there was no time for it.
    import types

    from solver.result import BoundResult

    case = parse_case(crust_case())
    values = iter([300.0, 310.0, 320.0, 330.0])  # every larger model a little looser

    def fake_run_bounds(case, requests, backend, settings, parallel):
        (kind, elements, _, domain), = requests
        bound = BoundResult(kind=kind, pressure_kPa=next(values), load_kN_per_m=None, status="optimal",
                            certificate={"passed": True}, elements=elements, variables=0, equalities=0, cones=0,
                            iterations=1, timing=dict.fromkeys(("mesh_s", "assemble_s", "solve_s", "certify_s"), 0.0),
                            method="", extra={"field_at_edge": ["right"], "domain_width_m": domain.x_max - domain.x_min,
                                              "domain_depth_m": domain.depth})
        bound.mesh = types.SimpleNamespace(domain=domain)  # what the growth reads of the mesh
        return {kind: bound}, 0.0

    monkeypatch.setattr(solver.analysis, "run_bounds", fake_run_bounds)
    result = analyse(case, bounds="upper", adaptive=False)
    assert result.upper.pressure_kPa == 300.0 and result.upper.extra["domain_growths"] == 0
    tried = result.upper.extra["larger_model_tried"]
    assert tried["pressure"] == "330.00 kPa" and tried["domain_width_m"] > result.upper.extra["domain_width_m"]
    note = next(n for n in result.notes if "edge of its model" in n)
    assert "it was solved on a larger one too" in note and "330.00 kPa" in note and "no time" not in note
