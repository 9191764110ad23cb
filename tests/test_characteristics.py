"""The method-of-characteristics reference generator (verification/characteristics.py).

Its relations are checked against the equilibrium equations on an arbitrary field, its
plane-strain nets against the closed forms of Prandtl (1920) and Reissner (1924), and its
smooth circle against the value recalled for Shield (1955). The module is loaded by path,
as the verification runner is.
"""
from __future__ import annotations

import importlib.util
import math
import tomllib
from pathlib import Path

import numpy as np
import pytest

ROOT = Path(__file__).resolve().parent.parent
SPEC = importlib.util.spec_from_file_location("bearbound_characteristics_test",
                                              ROOT / "verification" / "characteristics.py")
ch = importlib.util.module_from_spec(SPEC)
SPEC.loader.exec_module(ch)

# Recalled, not read from the paper (no copy on this machine): Shield, R.T. (1955). On the
# plastic flow of metals under conditions of axial symmetry. Proc. R. Soc. Lond. A 233,
# 267-287: q_u / su = 5.69 for a smooth circular punch (from memory, as in verification/cases.toml).
SHIELD_SMOOTH_FROM_MEMORY = 5.69


def _field(x: float, y: float) -> tuple[float, float]:
    """An arbitrary smooth field (sigma kPa, psi rad): no solution of anything."""
    return 5.0 + 2.0 * x + 0.3 * y * y + x * y, 0.3 + 0.2 * x - 0.5 * y + 0.1 * x * y


@pytest.mark.parametrize(("friction_angle", "strength_gradient"), [(0.0, 0.0), (20.0, 0.0), (0.0, 2.5)])
@pytest.mark.parametrize("axisymmetric", [False, True])
def test_each_relation_is_a_combination_of_the_equilibrium_equations(friction_angle, strength_gradient,
                                                                     axisymmetric):
    # Along each characteristic, cos(phi) d(sigma)/ds -+ 2 R d(psi)/ds - G must equal a
    # combination of the two equilibrium residuals; on an arbitrary field the residuals are
    # not zero, so a wrong sign or term in G shows. With su rising with depth (Tresca) the
    # residuals are taken of the stresses built with R = su0 + rho y, so the terms in d(su)/dy
    # that G must carry come from the finite differences, not from the generator's algebra.
    soil = ch.Soil(friction_angle, 3.0, 0.0, strength_gradient)
    x0, y0, h = 1.3, 0.7, 1e-5

    def stresses(x: float, y: float) -> np.ndarray:
        sigma, psi = _field(x, y)
        radius = float(soil.radius_kPa(np.asarray(sigma), y))
        return np.array([sigma + radius * math.cos(2 * psi), sigma - radius * math.cos(2 * psi),
                         radius * math.sin(2 * psi), sigma + ch.HOOP * radius])

    def d(f, axis: int):
        step = (h, 0.0) if axis == 0 else (0.0, h)
        return (f(x0 + step[0], y0 + step[1]) - f(x0 - step[0], y0 - step[1])) / (2 * h)

    sx, sy, tau, hoop = stresses(x0, y0)
    grad_s, grad_t = d(stresses, 0), d(stresses, 1)
    ring = 1.0 / x0 if axisymmetric else 0.0
    res_x = grad_s[0] + grad_t[2] + ring * (sx - hoop)  # d sx/dx + d tau/dy + (sx - st)/x
    res_y = grad_s[2] + grad_t[1] + ring * tau  # d tau/dx + d sy/dy + tau/x
    sigma, psi = _field(x0, y0)
    radius = float(soil.radius_kPa(np.asarray(sigma), y0))
    g_alpha, g_beta = (float(g[0]) for g in ch._sources(soil, axisymmetric, np.array([x0]), np.array([y0]),
                                                            np.array([sigma]), np.array([psi])))
    mu = soil.mu
    for direction, sign, g, combination in ((psi - mu, -1.0, g_alpha, psi - math.pi / 2 + mu),
                                            (psi + mu, 1.0, g_beta, psi + math.pi / 2 - mu)):
        e = np.array([math.cos(direction), math.sin(direction)])
        ds_sigma = np.dot([d(lambda x, y: _field(x, y)[0], 0), d(lambda x, y: _field(x, y)[0], 1)], e)
        ds_psi = np.dot([d(lambda x, y: _field(x, y)[1], 0), d(lambda x, y: _field(x, y)[1], 1)], e)
        along = math.cos(soil.phi) * ds_sigma + sign * 2 * radius * ds_psi - g
        assert along == pytest.approx(math.cos(combination) * res_x + math.sin(combination) * res_y,
                                      rel=1e-6, abs=1e-6)


@pytest.mark.parametrize("base", ch.BASES)
def test_strip_on_tresca_soil_is_two_plus_pi_on_any_net(base):
    # phi = 0: the relations are linear, so the trapezoidal steps are exact (Prandtl 1920).
    soil = ch.Soil(0.0, 1.0, 0.0)
    result = ch.capacity(soil, base, False, 64, 32, ch.reach(soil, base, False))
    assert result.pressure_kPa == pytest.approx(2.0 + math.pi, rel=1e-12)
    assert result.fan_angle == pytest.approx(math.pi / 2, abs=1e-10)


@pytest.mark.parametrize(("friction_angle", "which", "base"), [(30.0, "Nq", "smooth"), (20.0, "Nc", "smooth")])
def test_strip_converges_at_second_order_to_the_closed_forms(friction_angle, which, base):
    # Nq = exp(pi tan phi) tan^2(45 + phi/2) (Reissner 1924), Nc = (Nq - 1) cot phi (Prandtl
    # 1920; Reissner 1924). The net's error falls fourfold per halving and the extrapolation
    # removes it; a wrong relation or fan would converge elsewhere.
    soil = ch.soil_for(friction_angle, which)
    exact = ch.closed_form(friction_angle, which)
    reach = ch.reach(soil, base, False)
    values = [ch.factor(soil, ch.capacity(soil, base, False, n, n // 2, reach).pressure_kPa)
              for n in (32, 64, 128)]
    errors = np.abs(np.array(values) - exact)
    assert errors[0] > errors[1] > errors[2] > 0.0
    assert 3.5 < errors[1] / errors[2] < 4.5
    assert values[2] + (values[2] - values[1]) / 3 == pytest.approx(exact, rel=2e-5)


def test_rough_strip_finds_prandtls_wedge_and_the_smooth_value():
    # Weightless soil: a rough strip carries what a smooth one does, on a rigid wedge whose
    # sides leave the edges at 45 + phi/2 (Prandtl 1920), i.e. psi_A = pi/2. The rough path
    # (shooting for the fan angle, the load on the wedge's surface) against the smooth one
    # (the load on the base) on the same net.
    soil = ch.soil_for(20.0, "Nc")
    rough = ch.capacity(soil, "rough", False, 64, 32, ch.reach(soil, "rough", False))
    smooth = ch.capacity(soil, "smooth", False, 64, 32, ch.reach(soil, "smooth", False))
    assert rough.fan_angle == pytest.approx(math.pi / 2, abs=2e-4)
    assert rough.pressure_kPa == pytest.approx(smooth.pressure_kPa, rel=1e-6)
    assert rough.pressure_kPa == pytest.approx(ch.closed_form(20.0, "Nc"), rel=2e-4)


def test_circle_nc_and_nq_correspond_net_by_net():
    # Caquot's corresponding states (common practice): weightless c-phi soil is cohesionless
    # soil under an extra all-round pressure c cot(phi), so Nc = (Nq - 1) cot(phi) on the
    # circle too; the net's equations are homogeneous in sigma + c cot(phi), so it holds on
    # one net to round-off although the two start from different surface values.
    phi = 20.0
    nc, nq = (ch.factor(ch.soil_for(phi, which),
                        ch.capacity(ch.soil_for(phi, which), "smooth", True, 48, 24, 2.6).pressure_kPa)
              for which in ("Nc", "Nq"))
    assert nc == pytest.approx((nq - 1.0) / math.tan(math.radians(phi)), rel=1e-10)


def test_smooth_circle_on_tresca_soil_converges_near_the_recalled_value():
    soil = ch.Soil(0.0, 1.0, 0.0)
    reach = ch.reach(soil, "smooth", True)
    values = [ch.capacity(soil, "smooth", True, n, n // 2, reach).pressure_kPa for n in (64, 128, 256)]
    steps = np.abs(np.diff(values))
    assert steps[1] < steps[0] / 2  # converging
    extrapolated = values[2] + (values[2] - values[1]) / 3
    assert abs(extrapolated - values[2]) < 1e-4
    # 5.69 given to three figures (from memory): within its rounding, 0.005.
    assert abs(extrapolated - SHIELD_SMOOTH_FROM_MEMORY) <= 0.005


def test_verification_cases_of_the_method_match_the_generator():
    # Every case marked "method of characteristics" was typed from the generator's table
    # (nets up to 1024 lines); a net of 128 lines must agree with the typed value within that
    # net's own error (below 2e-4 in the table; 1e-3 allowed), so a typing slip or a changed
    # generator shows. The rough c-phi cases and the rough one with su rising take several
    # seconds each: the tables (`--levels 5`, `--rising --levels 4`) cover them.
    cases = tomllib.loads((ROOT / "verification" / "cases.toml").read_text())["cases"]
    ours = [c for c in cases if c["reference_note"] == "method of characteristics"]
    assert ours
    for case in ours:
        soil_data = case["case"]["layers"][0]
        phi = soil_data.get("friction_angle", 0.0)
        which = "Nq" if case["quantity"] == "nq" else "Nc"
        base = case["case"]["footing"]["base"]
        rising = soil_data.get("strength_gradient", 0.0) > 0.0
        if base == "rough" and (phi > 0.0 or rising):
            continue
        soil = ch.soil_for(phi, which)
        if rising:  # rho B / su0, B the case's width or diameter
            soil = ch.rising_soil(soil_data["strength_gradient"] * case["case"]["footing"]["width"]
                                  / soil_data["undrained_strength"])
        circle = case["case"]["footing"].get("shape") == "circular"
        value = ch.factor(soil, ch.capacity(soil, base, circle, 128, 64, ch.reach(soil, base, circle)).pressure_kPa)
        assert value == pytest.approx(case["reference"], rel=1e-3), case["id"]


# -- strength rising with depth (Tresca) ------------------------------------------------

def test_rising_strength_needs_tresca_soil():
    with pytest.raises(ValueError, match="strength_gradient_kPa_per_m"):
        ch.capacity(ch.Soil(20.0, 1.0, 0.0, 1.0), "smooth", False, 16, 8, 2.0)


@pytest.mark.parametrize("kappa", [2.0, 10.0])
def test_smooth_strip_with_rising_strength_converges_at_second_order_within_rigorous_limits(kappa):
    # su = su0 + rho y makes the relations non-linear in position, so the nets now carry an
    # error of second order (a wrong or missing gradient term would not converge like this,
    # and the relation test above pins the terms themselves). The limit must lie between two
    # rigorous limits of the true collapse load: (2 + pi) su0 (the uniform field of su0 is
    # admissible, su >= su0 everywhere; Prandtl 1920) and Prandtl's mechanism integrated on the
    # su profile, (2 + pi) + 2 kappa (an upper bound; derived in verification/runner.py).
    soil = ch.rising_soil(kappa)
    reach = ch.reach(soil, "smooth", False)
    values = [ch.capacity(soil, "smooth", False, n, n // 2, reach).pressure_kPa for n in (64, 128, 256)]
    steps = np.diff(values)
    assert 3.0 < steps[0] / steps[1] < 5.0
    extrapolated = values[2] + steps[1] / 3.0
    assert abs(extrapolated - values[2]) < 1e-4
    assert 2.0 + math.pi < extrapolated < 2.0 + math.pi + 2.0 * kappa


def test_smooth_circle_with_rising_strength_starts_at_shields_value_and_rises_with_kappa():
    # kappa = 0 is Shield's smooth punch (5.69, from memory); a soil stronger everywhere
    # carries no less (lower-bound theorem), so q_u / su0 must rise with kappa. The values
    # themselves are pinned by the cases test above (typed from the generator's table).
    values = []
    for kappa in (0.0, 1.0, 2.0):
        soil = ch.rising_soil(kappa)
        values.append(ch.capacity(soil, "smooth", True, 64, 32, ch.reach(soil, "smooth", True)).pressure_kPa)
    assert values[0] == pytest.approx(SHIELD_SMOOTH_FROM_MEMORY, abs=0.005)
    assert values[0] < values[1] < values[2]


def test_rough_strip_with_rising_strength_carries_more_than_the_smooth_one():
    # A rough base may take any shear up to su0, so the smooth footing's stress field is
    # admissible under the rough one too: the rough value may not be lower. With su rising the
    # rigid wedge is curved and its fan angle exceeds pi/2 (uniform soil: exactly pi/2, equal
    # values). The rough construction reaches the axis only for small kappa (0.5 here).
    soil = ch.rising_soil(0.5)
    rough = ch.capacity(soil, "rough", False, 64, 32, ch.reach(soil, "rough", False))
    smooth = ch.capacity(soil, "smooth", False, 64, 32, ch.reach(soil, "smooth", False))
    assert rough.fan_angle > math.pi / 2 + 0.1
    assert rough.pressure_kPa > smooth.pressure_kPa * 1.01
    assert rough.pressure_kPa < 2.0 + math.pi + 2.0 * 0.5  # Prandtl's mechanism on the su profile
