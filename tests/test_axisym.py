"""Circular footings (axisymmetric bounds): the formulation's exactness, checked apart
from the solver, and the bounds' rigour on small meshes.

Published values these checks lean on are in verification/cases.toml with their
sources; the relations used here are exact: Caquot's theorem of corresponding
states (a weightless c-phi soil is a cohesionless one under an added all-round
pressure c cot(phi), so Nc = (Nq - 1) cot(phi) for any footing shape).
"""
from __future__ import annotations

import math
from dataclasses import replace

import numpy as np
import pytest

from solver.analysis import analyse
from solver.case import parse_case
from solver.certify_axisym import (INTERIOR, _evaluate, certify_lower_axisym, certify_upper_axisym,
                                   equilibrium_residual, mohr_coulomb_excess)
from solver.conic import solve
from solver.lower_axisym import lower_bound_program_axisym, product_coefficients
from solver.mesh import AXIS, FOOTING, build_mesh
from solver.upper import velocities
from solver.upper_axisym import (EG, ER, ET, EZ, axis_points, bernstein_basis, dissipation_weights, rate_coefficients,
                                 upper_bound_program_axisym, velocity_map_axisym)


def solved_upper(case, elements: int):
    """(case, mesh, program, solution) of a circle's upper bound on a fixed mesh."""
    mesh = build_mesh(case, order=2, elements=elements)
    program = upper_bound_program_axisym(case, mesh)
    return case, mesh, program, solve(program)


def circle(**layer) -> dict:
    soil = {"name": "soil", "model": "tresca", "unit_weight": 0.0, "undrained_strength": 40.0} | layer
    return {"footing": {"width": 2.0, "shape": "circular"}, "layers": [soil]}


def clay(base: str = "rough", **layer):
    data = circle(**layer)
    data["footing"]["base"] = base
    return parse_case(data)


@pytest.fixture(scope="module")
def coarse_meshes():
    case = clay()
    return case, build_mesh(case, order=1, elements=400), build_mesh(case, order=2, elements=400)


def test_mesh_has_the_axis_as_a_boundary_of_its_own(coarse_meshes):
    _, lower, upper = coarse_meshes
    for mesh in (lower, upper):
        assert mesh.domain.axisymmetric and mesh.domain.half
        on_axis = mesh.boundary_edges[mesh.boundary_kind == AXIS]
        assert len(on_axis) > 0 and np.all(mesh.points[on_axis, 0] == 0.0)


def test_equilibrium_is_exact_for_an_analytic_field_with_shear_and_hoop(coarse_meshes):
    # S_r = A r^2, T = B r z, S_z = gamma r z - B z^2/2 + D r^2 and r sigma_theta = (2A + B) r^2
    # meet both equations: sigma_r = A r, tau = B z, sigma_theta = (2A + B) r (derived by hand).
    _, mesh, _ = coarse_meshes
    A, B, D, gamma = 3.0, -2.0, 0.5, 18.0
    p = mesh.corner_coordinates()
    r, z = p[..., 0], p[..., 1]
    weighted = np.stack([A * product_coefficients(r, r),
                         gamma * product_coefficients(r, z) - B / 2 * product_coefficients(z, z)
                         + D * product_coefficients(r, r),
                         B * product_coefficients(r, z),
                         (2 * A + B) * product_coefficients(r, r)], axis=-1)
    lam = np.broadcast_to(INTERIOR, (mesh.n_elements,) + INTERIOR.shape)
    residual = equilibrium_residual(mesh, weighted, np.full(mesh.n_elements, gamma), lam)
    assert residual.max() < 1e-9
    # and the residual sees a field that is not in equilibrium: the hoop stress off by 1 kPa
    wrong = weighted.copy()
    wrong[..., 3] += product_coefficients(r, np.ones_like(r))
    assert equilibrium_residual(mesh, wrong, np.full(mesh.n_elements, gamma), lam).max() > 1e-3
    sigma, _, radius, _ = _evaluate(mesh, weighted, lam)
    assert np.allclose(sigma[..., 0], A * radius) and np.allclose(sigma[..., 3], (2 * A + B) * radius)


def test_three_cones_are_the_three_dimensional_mohr_coulomb_condition():
    # principal stresses (p + R, p - R, sigma_theta): the excess over all pairs is <= 0 exactly
    # when each pair obeys sigma_i (1 + s) - sigma_j (1 - s) <= 2 c cos(phi)
    rng = np.random.default_rng(7)
    stress = rng.normal(scale=50.0, size=(2000, 4))
    phi = np.radians(25.0)
    excess = mohr_coulomb_excess(stress, 20.0, phi)
    centre, radius = (stress[:, 0] + stress[:, 1]) / 2, np.hypot((stress[:, 0] - stress[:, 1]) / 2, stress[:, 2])
    principal = np.stack([centre + radius, centre - radius, stress[:, 3]], 1)
    s = math.sin(phi)
    pairs = np.max(principal[:, :, None] * (1 + s) - principal[:, None, :] * (1 - s), axis=(1, 2)) - 40 * math.cos(phi)
    assert np.allclose(excess, pairs)
    assert (excess < 0).any() and (excess > 0).any()


def test_lower_bound_certificate_catches_a_spoiled_field(coarse_meshes):
    case, mesh, _ = coarse_meshes
    program = lower_bound_program_axisym(case, mesh)
    solution = solve(program)
    certificate = certify_lower_axisym(case, mesh, program, solution)
    assert certificate["passed"], certificate
    assert certificate["equilibrium_kPa"] < 1e-6 and certificate["traction_jump_kPa"] < 1e-6
    spoiled = replace(solution, x=solution.x.copy())
    spoiled.x[21 * 7 + 4] += 5.0  # one Bernstein coefficient of one triangle, 5 kPa
    bad = certify_lower_axisym(case, mesh, program, spoiled)
    assert not bad["passed"] and max(bad["equilibrium_kPa"], bad["traction_jump_kPa"]) > 1e-2


def test_velocity_map_fixes_the_axis_and_moves_the_footing(coarse_meshes):
    case, _, mesh = coarse_meshes
    T, f, motion = velocity_map_axisym(case, mesh)
    z = np.random.default_rng(3).normal(size=T.shape[1])
    z[motion["v"]] = -1.0
    w = (T @ z + f).reshape(-1, 2)
    axis = np.unique(mesh.boundary_edges[mesh.boundary_kind == AXIS])
    foot = np.unique(mesh.boundary_edges[mesh.boundary_kind == FOOTING])
    assert np.all(w[axis] == 0.0)
    assert np.allclose(w[foot, 1], -mesh.points[foot, 0]) and np.all(w[foot, 0] == 0.0)  # rough


def test_dissipation_weights_bound_the_integral_from_above(coarse_meshes):
    # w_a >= integral of c B_a / r over each triangle (fine subdivision quadrature), tight to
    # a few per cent off the axis; then for any coefficients E_a (0 at points on the axis)
    # integral of c g(r^2 e)/r <= sum_a w_a g(E_a). Triangles at and near the axis included.
    case, _, mesh = coarse_meshes
    chosen = np.argsort(mesh.corner_coordinates()[..., 0].min(axis=1))[:60]
    weights = dissipation_weights(case, mesh)[chosen]
    n = 60  # centroid rule on n^2 sub-triangles
    i, j = np.meshgrid(np.arange(n), np.arange(n), indexing="ij")
    lam = np.concatenate([np.stack([(i + 1 / 3) / n, (j + 1 / 3) / n], -1)[(i + j) < n],
                          np.stack([(i + 2 / 3) / n, (j + 2 / 3) / n], -1)[(i + j) < n - 1]])
    lam = np.column_stack([1 - lam.sum(1), lam])
    r = (lam @ mesh.corner_coordinates()[chosen, :, 0].T).T  # (elements, points); c = 40 kPa
    exact = mesh.areas()[chosen, None] * np.mean(40.0 * bernstein_basis(lam)[None] / r[..., None], axis=1)
    live = ~axis_points(mesh)[chosen]
    assert np.all(exact[live] <= weights[live] * (1 + 1e-9))
    corners = mesh.corner_coordinates()[chosen, :, 0]
    far = corners.min(axis=1) > 2 * np.sqrt(2 * mesh.areas()[chosen])
    assert far.any() and np.all(weights[far] <= 1.05 * exact[far])
    rates = np.random.default_rng(11).normal(size=(len(chosen), 6, 4))
    rates[~live] = 0.0
    g = lambda E: (np.maximum(np.abs(E[..., ER] + E[..., EZ]), np.hypot(E[..., ER] - E[..., EZ], E[..., EG]))
                   + np.abs(E[..., ET]))  # noqa: E731
    values = np.einsum("pa,eac->epc", bernstein_basis(lam), rates)
    integral = mesh.areas()[chosen] * np.mean(40.0 * g(values) / r, axis=1)
    assert np.all(integral <= np.sum(weights * g(rates), axis=1))


@pytest.mark.parametrize("phi", [0.0, 30.0])
def test_upper_bound_flow_rule_holds_inside_every_triangle(phi):
    layer = {"model": "mohr-coulomb", "cohesion": 10.0, "friction_angle": phi, "unit_weight": 18.0} if phi else {}
    data = circle(**layer)
    if phi:
        data["layers"][0].pop("undrained_strength")
    case, mesh, program, solution = solved_upper(parse_case(data), 300)
    certificate = certify_upper_axisym(case, mesh, program, solution)
    assert certificate["passed"], certificate
    w = velocities(program, solution.x)
    nodal = np.concatenate([w[mesh.triangles, 0], w[mesh.triangles, 1]], axis=1)
    coefficients = np.einsum("eacn,en->eac", rate_coefficients(mesh), nodal)
    rates = np.einsum("pa,eac->epc", bernstein_basis(INTERIOR), coefficients)  # r^2 e at interior points
    trace = rates[..., ER] + rates[..., EZ] + rates[..., ET]
    size = np.abs(rates).max()
    absolute = (np.maximum(np.abs(rates[..., ER] + rates[..., EZ]), np.hypot(rates[..., ER] - rates[..., EZ], rates[..., EG]))
                + np.abs(rates[..., ET]))
    if phi:
        assert np.all(trace >= math.sin(math.radians(phi)) * absolute - 1e-6 * size)
    else:
        assert np.all(np.abs(trace) <= 1e-6 * size)


def test_caquot_relates_the_cohesion_and_surcharge_brackets():
    # Nc = (Nq - 1) cot(phi) holds for a weightless soil whatever the footing's shape; both
    # discrete programs map onto each other by the same all-round pressure, so each bound obeys it.
    phi = 20.0
    data_c = {"footing": {"width": 2.0, "shape": "circular"},
              "layers": [{"name": "s", "model": "mohr-coulomb", "unit_weight": 0.0, "cohesion": 10.0,
                          "friction_angle": phi}]}
    data_q = {"footing": {"width": 2.0, "shape": "circular"}, "ground": {"surcharge": 10.0},
              "layers": [{"name": "s", "model": "mohr-coulomb", "unit_weight": 0.0, "cohesion": 0.0,
                          "friction_angle": phi}]}
    nc = analyse(parse_case(data_c), elements=400, parallel=False, adaptive=False)
    nq = analyse(parse_case(data_q), elements=400, parallel=False, adaptive=False)
    cot = 1 / math.tan(math.radians(phi))
    for kind in ("lower", "upper"):
        from_nq = (getattr(nq, kind).pressure_kPa / 10.0 - 1) * cot
        assert getattr(nc, kind).pressure_kPa / 10.0 == pytest.approx(from_nq, rel=2e-3), kind
    assert nc.lower.pressure_kPa < nc.upper.pressure_kPa


def test_circular_run_gives_loads_in_kN_and_the_hand_forms_beside_them(tmp_path):
    result = analyse(clay(base="smooth"), elements=500, parallel=False, adaptive=False)
    area = math.pi * 2.0 ** 2 / 4
    assert result.footing_shape == "circular" and result.load_unit == "kN"
    for bound in (result.lower, result.upper):
        assert bound.load_kN_per_m is None and bound.load_kN == pytest.approx(bound.pressure_kPa * area)
        assert bound.certificate["passed"]
    assert result.lower.pressure_kPa <= result.upper.pressure_kPa
    assert result.to_dict()["footing_shape"] == "circular"
    terzaghi = next(h for h in result.hand_methods if h["method"].startswith("Terzaghi (1943), general"))
    assert "circle" in terzaghi["method"]
    # 1.3 x 5.7 su, Terzaghi's circle, lies above the upper bound on weightless clay: unconservative
    assert terzaghi["where"].startswith("ABOVE")
    fields = result.upper.fields
    assert fields["velocity"].shape == (len(result.upper.mesh.points), 2)
    assert result.lower.fields["stress"].shape == (result.lower.elements, 3, 3)
    import meshio
    from solver.export import bound_fields, write_fields_vtu
    path = write_fields_vtu(bound_fields(result.lower), bound_fields(result.upper), tmp_path)
    hoop = meshio.read(path).point_data["lb_sigma_theta_kPa"]
    assert np.isfinite(hoop[:3 * result.lower.elements]).all() and np.isnan(hoop[3 * result.lower.elements:]).all()


def test_pictures_name_a_circle_by_its_diameter():
    from solver.pictures import footing_label

    circle = parse_case({"footing": {"width": 12.0, "shape": "circular"},
                         "layers": [{"name": "clay", "model": "tresca", "undrained_strength": 30.0, "unit_weight": 18.0}]})
    strip = parse_case({"footing": {"width": 12.0},
                        "layers": [{"name": "clay", "model": "tresca", "undrained_strength": 30.0, "unit_weight": 18.0}]})
    assert "diameter B = 12 m" in footing_label(circle, 12.0) and "axis" in footing_label(circle, 12.0)
    assert footing_label(strip, 12.0) == "footing, B = 12 m"


# -- the upper bound's velocities restored before the certificate (as the strip's) ----------

@pytest.fixture(scope="module")
def tresca_upper():
    """A rough Tresca circle under its own weight and a surcharge: one solved upper bound."""
    data = circle(unit_weight=17.0)
    data["ground"] = {"surcharge": 10.0}
    data["footing"]["base"] = "rough"
    return solved_upper(parse_case(data), 400)


def corner_divergence(mesh, program, x) -> float:
    """The largest |div(W, U)| L at a triangle corner (Tresca incompressibility), computed
    here from the velocities, relative to the largest free velocity."""
    from solver.upper import corner_shape_gradients
    w = velocities(program, x)
    grad = corner_shape_gradients(mesh) * np.sqrt(2.0 * mesh.areas())[:, None, None, None]
    div = np.einsum("emi,ei->em", grad[..., 0], w[mesh.triangles, 0]) \
        + np.einsum("emi,ei->em", grad[..., 1], w[mesh.triangles, 1])
    return float(np.abs(div).max() / max(1.0, np.abs(x[:program.layout["T"].shape[1]]).max()))


def test_tresca_circle_velocities_are_projected_onto_exact_incompressibility(tresca_upper):
    # The solver meets the incompressibility rows only to its tolerance; the certificate must
    # judge the field it reports, restored to round-off, and recompute the load from it.
    from solver.certify_axisym import restore_velocities_axisym
    case, mesh, program, solution = tresca_upper
    assert corner_divergence(mesh, program, solution.x) > 1e-12  # as solved: not exact
    certificate = certify_upper_axisym(case, mesh, program, solution)
    assert certificate["passed"], certificate
    assert certificate["restored"]["incompressibility_after"] < 1e-12
    assert certificate["limits"]["incompressibility"] == 1e-10
    assert certificate["incompressibility"] <= 1e-10
    restored = restore_velocities_axisym(case, mesh, program, solution)
    assert corner_divergence(mesh, program, restored.x) < 1e-12
    assert restored.x[program.layout["motion"]["v"]] == pytest.approx(-1.0, abs=1e-14)
    # the bound reported is at least the load recomputed from the restored, admissible field
    again = certify_upper_axisym(case, mesh, program, restored)
    assert "restored" not in again or again["restored"] == certificate["restored"]
    assert certificate["recomputed_kN"] == pytest.approx(again["recomputed_kN"], rel=1e-12)
    assert certificate["load_kN"] >= again["recomputed_kN"]


def test_circle_velocities_far_from_incompressible_are_not_restored(tresca_upper):
    case, mesh, program, solution = tresca_upper
    x = solution.x.copy()
    inside = np.setdiff1d(mesh.triangles[:, :3], mesh.boundary_edges)  # corners off every boundary
    node = inside[len(inside) // 2]
    columns = program.layout["T"].tocsr()[2 * node: 2 * node + 2].nonzero()[1]
    assert len(columns) == 2
    x[columns] += 0.01  # far beyond the solver's slack
    certificate = certify_upper_axisym(case, mesh, program, replace(solution, x=x))
    assert not certificate["passed"]
    assert "restored" not in certificate
    assert certificate["incompressibility"] > 1e-4


def test_restoring_a_circle_in_sand_over_clay_keeps_the_sands_flow_rule():
    # Tresca clay is projected while the sand's control points are held (their cones are
    # not equalities; the projection must not spend the solver's slack on them).
    data = {"footing": {"width": 2.0, "shape": "circular", "base": "rough"},
            "layers": [{"name": "sand", "model": "mohr-coulomb", "thickness": 0.5, "unit_weight": 18.0,
                        "cohesion": 0.0, "friction_angle": 32.0},
                       {"name": "clay", "model": "tresca", "unit_weight": 17.0, "undrained_strength": 30.0}]}
    case, mesh, program, solution = solved_upper(parse_case(data), 400)
    certificate = certify_upper_axisym(case, mesh, program, solution)
    assert certificate["passed"], certificate
    assert certificate["incompressibility"] <= 1e-10 and "restored" in certificate
    assert certificate["flow_rule"] <= certificate["limits"]["flow_rule"]


# -- nearly criss-cross nodes in the upper bound's mesh ---------------------------------

def star(offset: tuple[float, float], centre_y: float = 0.5):
    """Four triangles round one node near the crossing (0.5, centre_y) of a quadrilateral's
    diagonals: corners (0, 0), (1, 0), (1, 1), (0, 1) moved so the crossing is at centre_y."""
    top = 2 * centre_y
    points = np.array([[0.0, 0.0], [1.0, 0.0], [1.0, top], [0.0, top],
                       [0.5 + offset[0], centre_y + offset[1]]])
    triangles = np.array([[0, 1, 4], [1, 2, 4], [2, 3, 4], [3, 0, 4]])
    return points, triangles


def test_a_nearly_criss_cross_node_is_moved_onto_its_crossing():
    from solver.mesh import CROSSING_SNAP, snap_crossings
    points, triangles = star((1e-3, -2e-3))
    moved = snap_crossings(points, triangles)
    assert moved[4] == pytest.approx([0.5, 0.5], abs=1e-15)
    assert np.array_equal(moved[:4], points[:4])  # the boundary stays
    far = star((1.5 * CROSSING_SNAP, 0.0))[0]  # h about sqrt(0.5): an offset over CROSSING_SNAP h stays
    assert np.array_equal(snap_crossings(far, triangles), far)
    # on an interface (y = 0.5, through corners 4, 5 below): only along it, when one line lies on it
    points = np.array([[0.5, 0.0], [1.0, 0.5], [0.5, 1.0], [0.0, 0.5], [0.5 + 1e-3, 0.5]])
    moved = snap_crossings(points, triangles, levels=(0.5,))
    assert moved[4, 1] == 0.5 and moved[4, 0] == pytest.approx(0.5, abs=1e-15)
    points[4, 1] = 0.5 + 1e-3  # off the interface level: left alone there
    assert np.array_equal(snap_crossings(points, triangles, levels=(0.5 + 1e-3,)), points)


WATER_TANK = {"footing": {"width": 12.0, "shape": "circular", "base": "rough", "embedment": 0.5},
              "ground": {"water_table": 1.5},
              "layers": [{"name": "crust", "model": "tresca", "thickness": 2.5, "unit_weight": 18.5,
                          "saturated_unit_weight": 19.0, "undrained_strength": 45.0},
                         {"name": "soft clay", "model": "tresca", "unit_weight": 16.5, "undrained_strength": 18.0,
                          "strength_gradient": 1.8}],
              "analysis": {"mesh": "fixed", "elements": 1000}}


def test_a_thin_band_of_criss_cross_stars_does_not_stall_the_circles_upper_bound():
    # examples/water-tank.toml: the 1 m band above the water table is meshed in stars of four
    # triangles whose nodes sit 1e-4 to 1e-3 h off their crossings; their incompressibility
    # rows were nearly dependent and the solve crept (70 iterations here, 200 and "almost
    # solved" at 2k triangles, against 22-24 with the nodes on their crossings).
    case = parse_case(WATER_TANK)
    mesh = build_mesh(case, order=2, elements=1000)
    program = upper_bound_program_axisym(case, mesh)
    solution = solve(program)
    assert solution.status == "optimal" and solution.iterations < 45, (solution.status, solution.iterations)
    assert certify_upper_axisym(case, mesh, program, solution)["passed"]
