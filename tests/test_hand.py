"""Tests of solver.hand: the classical closed-form bearing-capacity estimates.

The cases below are invented for the tests. Every published value is named
with its source beside it; values recalled rather than read are marked
"from memory".
"""
from __future__ import annotations

import doctest
import math

import pytest

import solver.hand
from solver.hand import _meyerhof_hanna
from solver.hand import (
    bearing_factors,
    ec7_undrained_ic,
    effective_width,
    hand_methods,
    hansen_ground_factors,
    hansen_inclination_factors,
    meyerhof_inclination_factors,
    sliding_limit_kN_per_m,
    solve_vertical_load,
    terzaghi_factors,
    terzaghi_footing,
    vesic_ground_factors,
    vesic_inclination_factors,
    where_it_falls,
)
from solver.model import Case, Footing, Ground, Layer

HOMOGENEOUS_METHODS = (
    "Terzaghi (1943), general shear",
    "Terzaghi (1943), local shear",
    "Meyerhof (1963)",
    "Brinch Hansen (1970)",
    "Vesic (1973/1975)",
    "EN 1997-1:2004 Annex D.3, undrained",
    "EN 1997-1:2004 Annex D.4, drained",
)


def by_method(case: Case) -> dict:
    return {e.method: e for e in hand_methods(case)}


def clay(name: str, su: float, thickness: float | None = None, gradient: float = 0.0,
         unit_weight: float = 17.0) -> Layer:
    return Layer(name, "tresca", thickness, unit_weight, undrained_strength=su,
                 strength_gradient=gradient)


def sand(name: str, phi: float, thickness: float | None = None, c: float = 0.0,
         unit_weight: float = 19.0) -> Layer:
    return Layer(name, "mohr-coulomb", thickness, unit_weight, cohesion=c, friction_angle=phi)


def strip_case(*layers: Layer, width: float = 2.0, embedment: float = 0.0,
               surcharge: float = 0.0, base: str = "rough") -> Case:
    return Case("test footing", Footing(width, base, embedment), Ground(surcharge), layers)


def nq_reissner(phi_deg: float) -> float:
    """Nq = e^(pi tan phi) tan^2(45 + phi/2), Reissner (1924), written out afresh here."""
    t = math.tan(math.radians(phi_deg))
    return math.exp(math.pi * t) * math.tan(math.radians(45.0 + phi_deg / 2.0)) ** 2


# -- Terzaghi's factors -------------------------------------------------------------

# Bowles, J.E. (1996), Foundation Analysis and Design, 5th ed., McGraw-Hill,
# Table 4-2, Terzaghi's bearing-capacity factors (values from memory):
# phi: (Nc, Nq, Ngamma)
BOWLES_TERZAGHI_TABLE = {
    0.0: (5.7, 1.0, 0.0),
    10.0: (9.6, 2.7, 1.2),
    20.0: (17.7, 7.4, 5.0),
    30.0: (37.2, 22.5, 19.7),
    40.0: (95.7, 81.3, 100.4),
}


@pytest.mark.parametrize("phi", sorted(BOWLES_TERZAGHI_TABLE))
def test_terzaghi_factors_reproduce_the_table(phi):
    nc, nq, ngamma = BOWLES_TERZAGHI_TABLE[phi]
    f = terzaghi_factors(phi)
    assert f["Nc"] == pytest.approx(nc, rel=0.01)
    assert f["Nq"] == pytest.approx(nq, rel=0.01)
    assert f["Ngamma"] == pytest.approx(ngamma, rel=0.01, abs=1e-12)


# Bowles (1996), Sec. 4-3: K_pgamma behind Terzaghi's N_gamma (from memory).
BOWLES_KPGAMMA = {20.0: 25.0, 25.0: 35.0, 30.0: 52.0, 35.0: 82.0, 40.0: 141.0,
                  45.0: 298.0, 50.0: 800.0}


@pytest.mark.parametrize("phi", sorted(BOWLES_KPGAMMA))
def test_terzaghi_ngamma_agrees_with_bowles_construction(phi):
    # N_gamma = (tan phi / 2)(K_pgamma / cos^2 phi - 1), Bowles (1996): an
    # independent route to the tabulated values the module carries.
    r = math.radians(phi)
    construction = math.tan(r) / 2.0 * (BOWLES_KPGAMMA[phi] / math.cos(r) ** 2 - 1.0)
    assert terzaghi_factors(phi)["Ngamma"] == pytest.approx(construction, rel=0.01)


def test_terzaghi_ngamma_is_linear_between_table_entries():
    # Table entries 30 deg (19.7) and 34 deg (36.0), Bowles (1996) Table 4-2 (from memory).
    assert terzaghi_factors(32.0)["Ngamma"] == pytest.approx((19.7 + 36.0) / 2.0)
    assert terzaghi_factors(31.0)["Ngamma"] == pytest.approx(19.7 + 0.25 * (36.0 - 19.7))


def test_terzaghi_phi_zero_nc_is_his_own_value():
    # Terzaghi (1943): Nc = 1.5 pi + 1 = 5.71 at phi = 0, not Prandtl's pi + 2.
    assert terzaghi_factors(0.0)["Nc"] == pytest.approx(1.5 * math.pi + 1.0)
    assert terzaghi_factors(1e-4)["Nc"] == pytest.approx(1.5 * math.pi + 1.0, rel=1e-4)


@pytest.mark.parametrize("phi", [-1.0, 50.5, float("nan")])
def test_terzaghi_factors_outside_the_table_raise(phi):
    with pytest.raises(ValueError, match="phi_deg"):
        terzaghi_factors(phi)


# -- the other methods' factors --------------------------------------------------

@pytest.mark.parametrize("method", ["meyerhof", "hansen", "vesic", "ec7"])
def test_nq_nc_closed_forms_at_30(method):
    # Prandtl (1920) / Reissner (1924): Nq = 18.40, Nc = 30.14 at phi = 30 (common practice).
    f = bearing_factors(method, 30.0)
    assert f["Nq"] == pytest.approx(18.40, abs=0.005)
    assert f["Nc"] == pytest.approx(30.14, abs=0.005)


# Ngamma at phi = 30 as tabulated for each formula (values from memory):
# Meyerhof (1963) 15.67; Brinch Hansen (1970) 15.07; Vesic (1973) 22.40;
# EN 1997-1:2004 Annex D 20.09.
@pytest.mark.parametrize("method, ngamma", [("meyerhof", 15.67), ("hansen", 15.07),
                                            ("vesic", 22.40), ("ec7", 20.09)])
def test_ngamma_at_30(method, ngamma):
    assert bearing_factors(method, 30.0)["Ngamma"] == pytest.approx(ngamma, abs=0.005)


@pytest.mark.parametrize("method", ["meyerhof", "hansen", "vesic", "ec7"])
def test_phi_zero_limits(method):
    # Prandtl (1920): Nc = pi + 2 for a weightless Tresca half-space; Nq = 1, Ngamma = 0.
    f = bearing_factors(method, 0.0)
    assert f == pytest.approx({"Nc": math.pi + 2.0, "Nq": 1.0, "Ngamma": 0.0})
    # The phi -> 0 branch joins the general formula without a step.
    assert bearing_factors(method, 1e-4)["Nc"] == pytest.approx(math.pi + 2.0, rel=1e-4)


@pytest.mark.parametrize("phi", [5.0, 25.0, 42.0])
def test_factors_follow_reissner_prandtl(phi):
    nq = nq_reissner(phi)
    nc = (nq - 1.0) / math.tan(math.radians(phi))
    for method in ("meyerhof", "hansen", "vesic", "ec7"):
        f = bearing_factors(method, phi)
        assert f["Nq"] == pytest.approx(nq) and f["Nc"] == pytest.approx(nc)


def test_bearing_factors_bad_method_names_the_choices():
    with pytest.raises(ValueError, match="method: 'prandtl' is not allowed; must be one of terzaghi"):
        bearing_factors("prandtl", 30.0)


# -- terzaghi_footing --------------------------------------------------------------

def test_terzaghi_shapes():
    # Terzaghi (1943): strip c Nc + q Nq + 0.5 g B Ng; square 1.3 c Nc + q Nq + 0.4 g B Ng;
    # circle 1.3 c Nc + q Nq + 0.3 g B Ng.
    phi, c, g, b, q = 30.0, 10.0, 18.0, 2.0, 20.0
    f = terzaghi_factors(phi)
    strip = terzaghi_footing(phi, c, g, b, q).pressure_kPa
    square = terzaghi_footing(phi, c, g, b, q, "square").pressure_kPa
    circle = terzaghi_footing(phi, c, g, b, q, "circle").pressure_kPa
    assert strip == pytest.approx(c * f["Nc"] + q * f["Nq"] + 0.5 * g * b * f["Ngamma"])
    assert square == pytest.approx(1.3 * c * f["Nc"] + q * f["Nq"] + 0.4 * g * b * f["Ngamma"])
    assert circle == pytest.approx(1.3 * c * f["Nc"] + q * f["Nq"] + 0.3 * g * b * f["Ngamma"])
    # A rectangle with L = B is the square; a very long one tends to the strip.
    assert terzaghi_footing(phi, c, g, b, q, "rectangle", L=b).pressure_kPa == pytest.approx(square)
    assert terzaghi_footing(phi, c, g, b, q, "rectangle", L=1e6).pressure_kPa == pytest.approx(strip, rel=1e-5)


def test_terzaghi_local_shear_reduces_strength():
    # Terzaghi (1943): c* = 2/3 c, tan phi* = 2/3 tan phi.
    local = terzaghi_footing(30.0, 12.0, 18.0, 2.0, 20.0, local_shear=True)
    phi_star = math.degrees(math.atan(2.0 / 3.0 * math.tan(math.radians(30.0))))
    assert local.factors["phi_local_deg"] == pytest.approx(phi_star)
    assert phi_star == pytest.approx(21.05, abs=0.01)
    same = terzaghi_footing(phi_star, 8.0, 18.0, 2.0, 20.0)
    assert local.pressure_kPa == pytest.approx(same.pressure_kPa)
    assert local.method == "Terzaghi (1943), local shear"
    assert local.pressure_kPa < terzaghi_footing(30.0, 12.0, 18.0, 2.0, 20.0).pressure_kPa


@pytest.mark.parametrize("kwargs, key", [({"shape": "oval"}, "shape"), ({"B": 0.0}, "B"),
                                         ({"shape": "rectangle"}, "L"), ({"c_kPa": -1.0}, "c_kPa")])
def test_terzaghi_footing_bad_input_names_the_key(kwargs, key):
    args = {"phi_deg": 30.0, "c_kPa": 0.0, "gamma": 18.0, "B": 2.0, "q": 0.0, **kwargs}
    with pytest.raises(ValueError, match=f"^{key}: "):
        terzaghi_footing(**args)


# -- hand_methods on homogeneous ground ---------------------------------------------

def test_ec7_undrained_on_homogeneous_tresca():
    # EN 1997-1:2004 Annex D.3, strip, vertical load: R/A' = (pi + 2) cu + q.
    case = strip_case(clay("crust", 30.0, thickness=0.8, unit_weight=18.0),
                      clay("clay", 40.0, gradient=2.5, unit_weight=18.0),
                      embedment=1.2, surcharge=5.0)
    # The base (1.2 m) lies in "clay", whose top is at 0.8 m: su at the base = 40 + 2.5*0.4.
    su_base, q = 41.0, 5.0 + 18.0 * 1.2
    est = by_method(case)["EN 1997-1:2004 Annex D.3, undrained"]
    assert est.pressure_kPa == pytest.approx((math.pi + 2.0) * su_base + q)
    assert "ignores the su gradient" in est.note and "no depth factors" in est.note
    assert by_method(case)["EN 1997-1:2004 Annex D.4, drained"].pressure_kPa is None


def test_surface_footing_on_tresca_all_general_methods_give_prandtl():
    # Prandtl (1920): q_u = (pi + 2) su + q on a surface strip on uniform Tresca ground;
    # with D = 0 every depth factor is 1. Terzaghi (1943) uses his own 5.71.
    case = strip_case(clay("clay", 50.0), surcharge=12.0)
    found = by_method(case)
    for name in ("Meyerhof (1963)", "Brinch Hansen (1970)", "Vesic (1973/1975)",
                 "EN 1997-1:2004 Annex D.3, undrained"):
        assert found[name].pressure_kPa == pytest.approx((math.pi + 2.0) * 50.0 + 12.0), name
    assert found["Terzaghi (1943), general shear"].pressure_kPa == pytest.approx(
        (1.5 * math.pi + 1.0) * 50.0 + 12.0)


def test_depth_factors_on_embedded_tresca():
    # D/B = 0.5, phi = 0: Meyerhof (1963) dc = 1 + 0.2 D/B; Brinch Hansen (1970)
    # dc = 1 + 0.4 D/B (from memory). q = 17 * 1.
    case = strip_case(clay("clay", 40.0), embedment=1.0)
    found = by_method(case)
    assert found["Meyerhof (1963)"].pressure_kPa == pytest.approx(5.1416 * 40.0 * 1.1 + 17.0, rel=1e-4)
    assert found["Brinch Hansen (1970)"].pressure_kPa == pytest.approx(5.1416 * 40.0 * 1.2 + 17.0, rel=1e-4)
    assert found["Vesic (1973/1975)"].factors["dc"] == pytest.approx(1.2)


def test_drained_sand_strip():
    # Surface strip on sand, c' = 0, q = 0: q_u = 0.5 gamma B Ngamma for each method.
    case = strip_case(sand("sand", 30.0), width=1.5)
    found = by_method(case)
    for name, method in (("Meyerhof (1963)", "meyerhof"), ("Brinch Hansen (1970)", "hansen"),
                         ("Vesic (1973/1975)", "vesic"), ("EN 1997-1:2004 Annex D.4, drained", "ec7")):
        ngamma = bearing_factors(method, 30.0)["Ngamma"]
        assert found[name].pressure_kPa == pytest.approx(0.5 * 19.0 * 1.5 * ngamma), name
    # Terzaghi's N_gamma is a recalled table: no value in reports where the N_gamma term counts
    for name in ("Terzaghi (1943), general shear", "Terzaghi (1943), local shear"):
        assert found[name].pressure_kPa is None and "N_gamma" in found[name].note
    assert found["EN 1997-1:2004 Annex D.3, undrained"].pressure_kPa is None


def test_terzaghi_is_given_where_its_n_gamma_term_vanishes():
    # weightless c-phi soil: Terzaghi (1943) q_u = c Nc + q Nq with his closed forms, no table
    case = strip_case(sand("silt", 25.0, c=10.0, unit_weight=0.0), surcharge=5.0)
    f = terzaghi_factors(25.0)
    found = by_method(case)["Terzaghi (1943), general shear"]
    assert found.pressure_kPa == pytest.approx(10.0 * f["Nc"] + 5.0 * f["Nq"])
    assert "from memory" not in found.source and "Bowles" not in found.source


def test_smooth_base_is_flagged_for_rough_base_formulas():
    case = strip_case(sand("sand", 35.0), base="smooth")
    found = by_method(case)
    assert "rough base" in found["EN 1997-1:2004 Annex D.4, drained"].note
    weightless = by_method(strip_case(sand("sand", 35.0, c=1.0, unit_weight=0.0), base="smooth"))
    assert "rough base" not in weightless["Terzaghi (1943), general shear"].note  # no gamma term, no matter


def test_alike_layers_count_as_homogeneous():
    one = strip_case(sand("sand", 33.0, c=2.0), embedment=0.5)
    two = strip_case(sand("upper", 33.0, thickness=1.5, c=2.0), sand("lower", 33.0, c=2.0), embedment=0.5)
    for a, b in zip(hand_methods(one), hand_methods(two)):
        assert a.method == b.method and a.pressure_kPa == b.pressure_kPa


# -- hand_methods on layered ground -------------------------------------------------

def test_layered_ground_gives_none_with_a_reason_for_homogeneous_methods():
    case = strip_case(sand("sand", 38.0, thickness=1.0), clay("soft clay", 25.0))
    found = by_method(case)
    for name in HOMOGENEOUS_METHODS:
        assert found[name].pressure_kPa is None, name
        assert "layered ground" in found[name].note and "'soft clay'" in found[name].note
        assert found[name].factors == {}
    hanna = found["Meyerhof & Hanna (1978), strong over weak"]
    assert hanna.pressure_kPa is None and "charts" in hanna.note  # applies, but its chart values are recalled


def test_methods_keep_their_order_on_every_case():
    a = [e.method for e in hand_methods(strip_case(clay("clay", 40.0)))]
    b = [e.method for e in hand_methods(strip_case(sand("sand", 38.0, thickness=1.0), clay("clay", 25.0)))]
    assert a == b and len(a) == 11


def _meyerhof_surface(c: float, phi: float, gamma: float, width: float, q: float) -> float:
    """c Nc + q Nq + 0.5 gamma B Ngamma with Meyerhof's (1963) factors, written out here."""
    nq = nq_reissner(phi)
    nc = math.pi + 2.0 if phi == 0 else (nq - 1.0) / math.tan(math.radians(phi))
    ngamma = (nq - 1.0) * math.tan(math.radians(1.4 * phi))
    return c * nc + q * nq + 0.5 * gamma * width * ngamma


def test_meyerhof_hanna_limits():
    # Meyerhof & Hanna (1978): as H -> 0 the formula tends to q_b, the lower layer's
    # own capacity; for a deep weak layer it is capped at q_t, the top layer's.
    thin = strip_case(sand("sand", 40.0, thickness=1e-6), clay("clay", 30.0))
    est = _meyerhof_hanna(thin, recalled_charts=True)
    assert est.pressure_kPa == pytest.approx(_meyerhof_surface(30.0, 0.0, 17.0, 2.0, 0.0), rel=1e-4)
    deep = strip_case(sand("sand", 40.0, thickness=10.0), clay("clay", 30.0))
    est = _meyerhof_hanna(deep, recalled_charts=True)
    assert est.pressure_kPa == pytest.approx(_meyerhof_surface(0.0, 40.0, 19.0, 2.0, 0.0))
    assert "top-layer value" in est.note and "from memory" in est.note


def test_meyerhof_hanna_sand_over_clay_lies_between_its_limits():
    case = strip_case(sand("sand", 40.0, thickness=1.0), clay("clay", 30.0))
    value = _meyerhof_hanna(case, recalled_charts=True).pressure_kPa
    assert _meyerhof_surface(30.0, 0.0, 17.0, 2.0, 0.0) < value < _meyerhof_surface(0.0, 40.0, 19.0, 2.0, 0.0)


def test_meyerhof_hanna_clay_over_clay_punching_term():
    # Strong clay over weak clay, Meyerhof & Hanna (1978): q_u = 5.14 c2 + 2 ca H / B + q <= q_t.
    case = strip_case(clay("stiff", 100.0, thickness=1.0), clay("soft", 30.0), surcharge=10.0)
    est = _meyerhof_hanna(case, recalled_charts=True)
    ca = est.factors["ca_over_c1"] * 100.0
    assert 0.6 * 100.0 <= ca <= 100.0
    assert est.pressure_kPa == pytest.approx((math.pi + 2.0) * 30.0 + 2.0 * ca * 1.0 / 2.0 + 10.0)


def test_meyerhof_hanna_does_not_apply():
    three = strip_case(sand("sand", 40.0, thickness=1.0), clay("clay", 30.0, thickness=1.0), sand("gravel", 42.0))
    assert "more than two layers" in by_method(three)["Meyerhof & Hanna (1978), strong over weak"].note
    weak_over_strong = strip_case(clay("soft", 20.0, thickness=1.0), clay("stiff", 80.0))
    est = by_method(weak_over_strong)["Meyerhof & Hanna (1978), strong over weak"]
    assert est.pressure_kPa is None and "not the stronger" in est.note
    homogeneous = strip_case(clay("clay", 30.0))
    assert by_method(homogeneous)["Meyerhof & Hanna (1978), strong over weak"].pressure_kPa is None


def test_brown_meyerhof():
    # Brown & Meyerhof (1969), from memory: Nc = 1.5 H/B + 5.14 su2/su1 <= 5.14; q_u = su1 Nc + q.
    name = "Brown & Meyerhof (1969), stiff clay over soft clay"
    thin = by_method(strip_case(clay("stiff", 90.0, thickness=0.5), clay("soft", 30.0)))[name]
    assert thin.pressure_kPa == pytest.approx(90.0 * (1.5 * 0.5 / 2.0 + (math.pi + 2.0) / 3.0))
    thick = by_method(strip_case(clay("stiff", 90.0, thickness=6.0), clay("soft", 30.0)))[name]
    assert thick.pressure_kPa == pytest.approx((math.pi + 2.0) * 90.0)
    on_sand = by_method(strip_case(sand("sand", 38.0, thickness=1.0), clay("soft", 30.0)))[name]
    assert on_sand.pressure_kPa is None and "Tresca" in on_sand.note
    soft_over_stiff = by_method(strip_case(clay("soft", 30.0, thickness=1.0), clay("stiff", 90.0)))[name]
    assert soft_over_stiff.pressure_kPa is None and "stiff layer over a soft one" in soft_over_stiff.note


def test_equivalent_homogeneous_shortcuts():
    # Two clays each B/2 thick in the top B: the average su is their mean; the weakest
    # layer (within 2B) alone gives (pi + 2) su_min on a surface strip.
    case = strip_case(clay("upper", 60.0, thickness=1.0), clay("lower", 20.0), width=2.0)
    found = by_method(case)
    avg = found["Equivalent homogeneous: average over 1B"]
    assert avg.factors["c_avg_kPa"] == pytest.approx(40.0)
    assert avg.pressure_kPa == pytest.approx((math.pi + 2.0) * 40.0)
    weakest = found["Equivalent homogeneous: weakest layer within 2B"]
    assert weakest.pressure_kPa == pytest.approx((math.pi + 2.0) * 20.0) and "'lower'" in weakest.note
    # A weak layer deeper than 2B is outside the zone.
    deep = by_method(strip_case(clay("upper", 60.0, thickness=5.0), clay("lower", 20.0), width=2.0))
    assert deep["Equivalent homogeneous: weakest layer within 2B"].pressure_kPa == pytest.approx((math.pi + 2.0) * 60.0)


# -- where_it_falls -------------------------------------------------------------

@pytest.mark.parametrize("pressure, lower, upper, expected", [
    (250.0, 280.0, 320.0, "below the lower bound (conservative)"),
    (280.0, 280.0, 320.0, "inside the bracket"),
    (300.0, 280.0, 320.0, "inside the bracket"),
    (320.0, 280.0, 320.0, "inside the bracket"),
    (321.0, 280.0, 320.0, "ABOVE THE UPPER BOUND (unconservative)"),
    (300.0, None, 320.0, "no bracket"),
    (300.0, 280.0, None, "no bracket"),
    (None, 280.0, 320.0, "no estimate"),
])
def test_where_it_falls(pressure, lower, upper, expected):
    assert where_it_falls(pressure, lower, upper) == expected


def test_where_it_falls_rejects_crossed_bounds():
    with pytest.raises(ValueError, match="^lower: "):
        where_it_falls(300.0, 330.0, 320.0)


def test_doctests():
    assert doctest.testmod(solver.hand).failed == 0


# -- issue 3: eccentric and inclined loads, sloping ground, water table ----------------------

PRANDTL = math.pi + 2.0


def loaded_case(*layers: Layer, width: float = 2.0, eccentricity: float = 0.0, inclination: float = 0.0,
                embedment: float = 0.0, surcharge: float = 0.0, water_table: float | None = None,
                slope: float = 0.0, setback: float = 0.0, slope_height: float | None = None) -> Case:
    return Case("test footing", Footing(width, "rough", embedment, inclination, eccentricity),
                Ground(surcharge, water_table, slope, setback, slope_height), layers)


def test_effective_width():
    # Meyerhof (1953): B' = B - 2|e|.
    assert effective_width(2.0, 0.3) == pytest.approx(1.4)
    assert effective_width(2.0, -0.3) == pytest.approx(1.4)
    with pytest.raises(ValueError, match="^eccentricity_m: "):
        effective_width(2.0, 1.0)


def test_eccentric_load_on_tresca_uses_b_prime_in_every_method():
    # Weightless Tresca, e = 0.25 B: (2 + pi) su B'/B with B' = B/2 (Meyerhof 1953, 1963);
    # Terzaghi (1943) with his own 5.71 on B' (common practice).
    found = by_method(loaded_case(clay("clay", 40.0, unit_weight=0.0), eccentricity=0.5))
    for name in ("Meyerhof (1963)", "Brinch Hansen (1970)", "Vesic (1973/1975)",
                 "EN 1997-1:2004 Annex D.3, undrained", "Equivalent homogeneous: average over 1B"):
        assert found[name].pressure_kPa == pytest.approx(PRANDTL * 40.0 * 0.5), name
        assert found[name].factors["B_prime_m"] == pytest.approx(1.0), name
        assert "B' = B - 2|e|" in found[name].note, name
    assert found["Terzaghi (1943), general shear"].pressure_kPa == pytest.approx(
        (1.5 * math.pi + 1.0) * 40.0 * 0.5)


@pytest.mark.parametrize("layers", [
    (sand("sand", 33.0, c=3.0),),
    (clay("clay", 45.0),),
    (clay("stiff", 90.0, thickness=0.8), clay("soft", 30.0)),
    (sand("sand", 40.0, thickness=0.8), clay("soft", 30.0)),
])
def test_eccentric_estimate_is_the_b_prime_footings_times_b_prime_over_b(layers):
    # B' behaviour: on a surface footing (depth factors 1), each method's estimate for width
    # B and eccentricity e equals its estimate for a central footing of width B', scaled by
    # B'/B. The equivalent-homogeneous shortcuts size their zone from B, so they are left out
    # on layered ground.
    b, e = 2.0, 0.35
    off = by_method(loaded_case(*layers, width=b, eccentricity=e, surcharge=8.0))
    central = by_method(loaded_case(*layers, width=b - 2 * e, surcharge=8.0))
    for name, est in off.items():
        if len(layers) > 1 and name.startswith("Equivalent"):
            continue
        if est.pressure_kPa is None:
            assert central[name].pressure_kPa is None, name
            continue
        assert est.pressure_kPa == pytest.approx(central[name].pressure_kPa * (b - 2 * e) / b, rel=1e-9), name


def test_meyerhof_inclination_factors():
    # Meyerhof (1963), from memory: ic = iq = (1 - delta/90)^2, igamma = (1 - delta/phi)^2.
    f = meyerhof_inclination_factors(15.0, 30.0)
    assert f["ic"] == pytest.approx((75.0 / 90.0) ** 2) and f["iq"] == f["ic"]
    assert f["igamma"] == pytest.approx(0.25)
    assert meyerhof_inclination_factors(30.0, 30.0)["igamma"] == 0.0  # delta >= phi
    assert meyerhof_inclination_factors(0.0, 0.0) == {"ic": 1.0, "iq": 1.0, "igamma": 1.0}


def test_undrained_inclination_factors_of_hansen_vesic_and_ec7():
    # H/(A' cu) = 0 and 1 (the sliding limit): Brinch Hansen (1970) i'c = 0.5 - 0.5 sqrt(1 - H/(A' ca))
    # runs from 0 to 0.5; EN 1997-1 D.3 ic = 0.5 (1 + sqrt(1 - H/(A' cu))) from 1 to 0.5 and is
    # 1 - i'c throughout (the Annex takes Hansen's form); Vesic (1975) ic = 1 - m H/(A' ca Nc), m = 2.
    # All from memory.
    width, cu = 2.0, 40.0
    for h in (0.0, 0.3, 0.7, 1.0):
        H = h * width * cu
        hansen = hansen_inclination_factors(0.0, H, 200.0, cu, width)["i'c"]
        assert hansen == pytest.approx(0.5 - 0.5 * math.sqrt(1.0 - h))
        assert ec7_undrained_ic(H, width, cu) == pytest.approx(1.0 - hansen)
        assert vesic_inclination_factors(0.0, H, 200.0, cu, width)["ic"] == pytest.approx(1.0 - 2.0 * h / PRANDTL)


def test_drained_inclination_factors_of_hansen_and_vesic():
    # phi = 30, c = 10 kPa, B' = 2 m, H = 50, V = 300 kN/m: ratio H/(V + A' c cot phi), written
    # out afresh. Brinch Hansen (1970): exponents 5 with 0.5 and 0.7; Vesic (1975): m = 2 and
    # m + 1 = 3; ic = iq - (1 - iq)/(Nq - 1) in both (Nc tan phi = Nq - 1). From memory.
    ratio = 50.0 / (300.0 + 2.0 * 10.0 / math.tan(math.radians(30.0)))
    nq = nq_reissner(30.0)
    h = hansen_inclination_factors(30.0, 50.0, 300.0, 10.0, 2.0)
    assert h["iq"] == pytest.approx((1 - 0.5 * ratio) ** 5) and h["igamma"] == pytest.approx((1 - 0.7 * ratio) ** 5)
    assert h["ic"] == pytest.approx(h["iq"] - (1 - h["iq"]) / (nq - 1))
    v = vesic_inclination_factors(30.0, 50.0, 300.0, 10.0, 2.0)
    assert v["iq"] == pytest.approx((1 - ratio) ** 2) and v["igamma"] == pytest.approx((1 - ratio) ** 3)
    assert v["ic"] == pytest.approx(v["iq"] - (1 - v["iq"]) / (nq - 1))


def test_inclined_load_on_tresca():
    # Meyerhof (1963): no solve, (2 + pi) su (1 - delta/90)^2. EN 1997-1 D.3: V solved from
    # V = B' [(2 + pi) cu ic(H) + q] with H = V tan(delta) -- the returned V must satisfy it.
    case = loaded_case(clay("clay", 40.0, unit_weight=0.0), inclination=10.0)
    found = by_method(case)
    meyerhof = found["Meyerhof (1963)"]
    assert meyerhof.pressure_kPa == pytest.approx(PRANDTL * 40.0 * (80.0 / 90.0) ** 2)
    assert "brentq" not in meyerhof.note
    ec7 = found["EN 1997-1:2004 Annex D.3, undrained"]
    V, H = ec7.factors["V_kN_per_m"], ec7.factors["H_kN_per_m"]
    assert H == pytest.approx(V * math.tan(math.radians(10.0)))
    assert V == pytest.approx(2.0 * PRANDTL * 40.0 * 0.5 * (1 + math.sqrt(1 - H / (2.0 * 40.0))), rel=1e-9)
    assert ec7.pressure_kPa == pytest.approx(V / 2.0) and "brentq" in ec7.note
    # Brinch Hansen's phi = 0 form 1 - i'c is the Annex's ic: the same estimate.
    assert found["Brinch Hansen (1970)"].pressure_kPa == pytest.approx(ec7.pressure_kPa, rel=1e-9)
    for name in ("Terzaghi (1943), general shear", "Terzaghi (1943), local shear"):
        assert found[name].pressure_kPa is None and "inclination" in found[name].note
        assert found[name].factors == {}


@pytest.mark.parametrize("name", ["Brinch Hansen (1970)", "Vesic (1973/1975)", "EN 1997-1:2004 Annex D.4, drained"])
def test_inclined_load_on_sand_solves_v_consistently(name):
    # The solved V must reproduce itself through the reported factors:
    # V = B' (c Nc dc ic + q Nq dq iq + 0.5 gamma B' Ngamma dgamma igamma), H = V tan(delta).
    case = loaded_case(sand("sand", 34.0, c=4.0), inclination=12.0, eccentricity=0.2, surcharge=15.0)
    est = by_method(case)[name]
    f, width = est.factors, est.factors["B_prime_m"]
    d = {k: f.get(k, 1.0) for k in ("dc", "dq", "dgamma")}
    q_prime = (4.0 * f["Nc"] * d["dc"] * f["ic"] + 15.0 * f["Nq"] * d["dq"] * f["iq"]
               + 0.5 * 19.0 * width * f["Ngamma"] * d["dgamma"] * f["igamma"])
    assert f["V_kN_per_m"] == pytest.approx(width * q_prime, rel=1e-9)
    assert est.pressure_kPa == pytest.approx(f["V_kN_per_m"] / 2.0)
    assert f["H_kN_per_m"] == pytest.approx(f["V_kN_per_m"] * math.tan(math.radians(12.0)))
    vertical = by_method(loaded_case(sand("sand", 34.0, c=4.0), eccentricity=0.2, surcharge=15.0))[name]
    assert est.pressure_kPa < vertical.pressure_kPa


def test_sliding_limits_a_steeply_inclined_load():
    # A rough base on Tresca soil cannot carry H > B' su (common practice): at 30 degrees
    # Meyerhof's (1963) factor alone would give H = 1.32 su B, so the sliding load governs.
    case = loaded_case(clay("clay", 40.0, unit_weight=0.0), inclination=30.0)
    slide = 2.0 * 40.0 / math.tan(math.radians(30.0)) / 2.0
    assert PRANDTL * (60.0 / 90.0) ** 2 * math.tan(math.radians(30.0)) > 1.0  # above the limit
    for name in ("Meyerhof (1963)", "Vesic (1973/1975)", "EN 1997-1:2004 Annex D.3, undrained"):
        est = by_method(case)[name]
        assert est.pressure_kPa == pytest.approx(slide), name
        assert "sliding" in est.note, name
    assert sliding_limit_kN_per_m(0.3, 10.0, 30.0, 2.0) == math.inf  # tan(delta) < tan(phi)


def test_solve_vertical_load_on_a_known_line():
    # q_u'(H) = 100 - 0.1 H on B' = 2, tan(delta) = 1: V = 2 (100 - 0.1 V), V = 200/1.2.
    V, capped = solve_vertical_load(lambda V, H: 100.0 - 0.1 * H, 2.0, 1.0)
    assert V == pytest.approx(200.0 / 1.2) and not capped
    V, capped = solve_vertical_load(lambda V, H: 100.0 - 0.1 * H, 2.0, 1.0, v_limit=150.0)
    assert V == 150.0 and capped


def test_ground_factors():
    # Brinch Hansen (1970): gc = 1 - beta/147, gq = ggamma = (1 - 0.5 tan beta)^5; Vesic (1975):
    # gq = ggamma = (1 - tan beta)^2 (both from memory). Hansen's beta/147 (degrees) is
    # 2 beta/(2 + pi) (radians), the Prandtl field with its passive fan shortened by beta
    # (common practice), which is Vesic's phi = 0 g'c: equal to 0.3 % (147 for 147.3).
    t = math.tan(math.radians(15.0))
    h = hansen_ground_factors(35.0, 15.0)
    assert h["gc"] == pytest.approx(1 - 15.0 / 147.0) and h["gq"] == pytest.approx((1 - 0.5 * t) ** 5)
    v = vesic_ground_factors(35.0, 15.0)
    assert v["gq"] == pytest.approx((1 - t) ** 2) and v["ggamma"] == v["gq"]
    for beta in (10.0, 30.0, 45.0):
        assert hansen_ground_factors(0.0, beta)["g'c"] == pytest.approx(
            vesic_ground_factors(0.0, beta)["g'c"], rel=3e-3)
    assert vesic_ground_factors(0.0, 30.0)["Ngamma"] == pytest.approx(-1.0)  # -2 sin(beta), Vesic (1975)
    assert hansen_ground_factors(30.0, 30.0) is None and vesic_ground_factors(30.0, 35.0) is None


def test_slope_beside_the_footing():
    # Footing at the crest, weightless Tresca: Hansen's (1970) phi = 0 form gives
    # (2 + pi) su (1 - beta/147); methods without ground factors say so and give None.
    case = loaded_case(clay("clay", 40.0, unit_weight=0.0), slope=30.0, slope_height=4.0)
    found = by_method(case)
    assert found["Brinch Hansen (1970)"].pressure_kPa == pytest.approx(PRANDTL * 40.0 * (1 - 30.0 / 147.0))
    assert found["Vesic (1973/1975)"].pressure_kPa == pytest.approx(
        40.0 * (PRANDTL - 2.0 * math.radians(30.0)))
    for name in ("Terzaghi (1943), general shear", "Meyerhof (1963)", "EN 1997-1:2004 Annex D.3, undrained",
                 "Equivalent homogeneous: weakest layer within 2B", "Equivalent homogeneous: average over 1B"):
        assert found[name].pressure_kPa is None and "does not cover a sloping ground" in found[name].note, name
    # With self-weight, Vesic's phi = 0 N_gamma = -2 sin(beta) lowers his value by gamma B sin(beta).
    heavy = by_method(loaded_case(clay("clay", 40.0, unit_weight=18.0), slope=30.0, slope_height=4.0))
    assert heavy["Vesic (1973/1975)"].pressure_kPa == pytest.approx(
        found["Vesic (1973/1975)"].pressure_kPa - 18.0 * 2.0 * 0.5)


def test_setback_is_treated_as_at_the_crest_and_steep_slopes_are_refused():
    crest = by_method(loaded_case(sand("sand", 32.0, c=5.0), slope=20.0, slope_height=3.0))
    back = by_method(loaded_case(sand("sand", 32.0, c=5.0), slope=20.0, slope_height=3.0, setback=1.5))
    for name in ("Brinch Hansen (1970)", "Vesic (1973/1975)"):
        assert back[name].pressure_kPa == pytest.approx(crest[name].pressure_kPa)
        assert "as if at the crest" in back[name].note and "conservative" in back[name].note
    steep = by_method(loaded_case(sand("sand", 30.0), slope=35.0, slope_height=3.0))
    for name in ("Brinch Hansen (1970)", "Vesic (1973/1975)"):
        assert steep[name].pressure_kPa is None and "beta < phi" in steep[name].note


@pytest.mark.parametrize("water_table, gamma", [
    (0.0, 20.0 - 9.81),  # at the base: gamma' (common practice)
    (2.0, 18.0),  # B below the base: gamma
    (10.0, 18.0),
    (0.5, 0.25 * 18.0 + 0.75 * (20.0 - 9.81)),  # between: linear in the depth of the water table
])
def test_water_table_in_the_ngamma_term(water_table, gamma):
    wet_sand = Layer("sand", "mohr-coulomb", None, 18.0, friction_angle=30.0, saturated_unit_weight=20.0)
    found = by_method(loaded_case(wet_sand, water_table=water_table))
    for name, method in (("Meyerhof (1963)", "meyerhof"), ("Vesic (1973/1975)", "vesic"),
                         ("EN 1997-1:2004 Annex D.4, drained", "ec7")):
        ngamma = bearing_factors(method, 30.0)["Ngamma"]
        assert found[name].pressure_kPa == pytest.approx(0.5 * gamma * 2.0 * ngamma), name


def test_water_above_the_base_gives_effective_pressures_and_says_so():
    wet_sand = Layer("sand", "mohr-coulomb", None, 18.0, friction_angle=30.0, saturated_unit_weight=20.0)
    case = loaded_case(wet_sand, embedment=1.0, water_table=0.4)
    q_eff = 18.0 * 0.4 + (20.0 - 9.81) * 0.6  # = Case.overburden_kPa()
    assert case.overburden_kPa() == pytest.approx(q_eff)
    est = by_method(case)["EN 1997-1:2004 Annex D.4, drained"]
    f = bearing_factors("ec7", 30.0)
    assert est.pressure_kPa == pytest.approx(q_eff * f["Nq"] + 0.5 * (20.0 - 9.81) * 2.0 * f["Ngamma"])
    assert "pore pressure" in est.note


def test_layered_methods_under_inclined_load_and_slope_say_why():
    crust = (clay("stiff", 90.0, thickness=0.8), clay("soft", 30.0))
    for kwargs, words in (({"inclination": 8.0}, "inclined load"),
                          ({"slope": 20.0, "slope_height": 2.0}, "does not cover a sloping ground")):
        found = by_method(loaded_case(*crust, **kwargs))
        for name in ("Meyerhof & Hanna (1978), strong over weak",
                     "Brown & Meyerhof (1969), stiff clay over soft clay"):
            assert found[name].pressure_kPa is None and words in found[name].note, name
            assert found[name].factors == {}
    # The shortcuts take Meyerhof's inclination factors: the weakest layer's value.
    found = by_method(loaded_case(*crust, inclination=8.0))
    assert found["Equivalent homogeneous: weakest layer within 2B"].pressure_kPa == pytest.approx(
        PRANDTL * 30.0 * (82.0 / 90.0) ** 2)


# -- like with like, no averages of unlike soils, no recalled values in reports ---------

def test_with_a_dilation_angle_the_methods_use_the_bounds_reduced_strength():
    # Davis (1968): beta = cos(psi) cos(phi) / (1 - sin(psi) sin(phi)); c* = beta c, tan(phi*) = beta tan(phi)
    phi, psi, c = 35.0, 5.0, 4.0
    beta = (math.cos(math.radians(psi)) * math.cos(math.radians(phi))
            / (1.0 - math.sin(math.radians(psi)) * math.sin(math.radians(phi))))
    phi_star = math.degrees(math.atan(beta * math.tan(math.radians(phi))))
    dilating = Layer("sand", "mohr-coulomb", None, 19.0, cohesion=c, friction_angle=phi, dilation_angle=psi)
    case = strip_case(dilating, embedment=0.5)
    analysed = by_method(case)["Meyerhof (1963)"]
    like = by_method(strip_case(sand("sand", phi_star, c=beta * c), embedment=0.5))["Meyerhof (1963)"]
    assert analysed.pressure_kPa == pytest.approx(like.pressure_kPa)
    assert "Davis (1968)" in analysed.note and f"phi* = {phi_star:.2f}" in analysed.note
    given = {e.method: e for e in hand_methods(case, "as given")}["Meyerhof (1963)"]
    full = by_method(strip_case(sand("sand", phi, c=c), embedment=0.5))["Meyerhof (1963)"]
    assert given.pressure_kPa == pytest.approx(full.pressure_kPa)
    assert given.pressure_kPa > analysed.pressure_kPa
    assert given.note.startswith("information only")
    # without a dilation angle both are the same list
    plain = strip_case(sand("sand", phi, c=c))
    assert hand_methods(plain) == hand_methods(plain, "as given")


def test_a_run_with_a_dilation_angle_flags_only_like_with_like():
    # The issue: with a dilation angle every hand method came out ABOVE THE UPPER BOUND, as the
    # bracket used phi* and the methods the full phi. Now the flags come from phi* only.
    from solver.analysis import analyse
    from solver.case import parse_case

    case = parse_case({"footing": {"width": 1.0, "embedment": 0.5}, "layers": [
        {"name": "sand", "model": "mohr-coulomb", "cohesion": 2.0, "friction_angle": 35.0,
         "dilation_angle": 0.0, "unit_weight": 19.0}], "analysis": {"elements": 400, "mesh": "fixed"}})
    result = analyse(case, parallel=False)
    compared = {r["method"]: r for r in result.hand_methods}
    given = {r["method"]: r for r in result.hand_methods_as_given}
    assert given and set(given) <= set(compared)
    values = [r for r in result.hand_methods if r["pressure_kPa"] is not None]
    assert values and not all(r["where"].startswith("ABOVE") for r in values)
    for method, row in given.items():  # only those the full strength changes, never flagged
        assert row["where"] == "information only" and row["pressure_kPa"] > compared[method]["pressure_kPa"]
    assert "hand_methods_as_given" in result.to_dict()


def test_the_average_shortcut_does_not_average_drained_with_undrained_layers():
    # sand 0.5 m over clay, both within B = 2 m: phi' and su must not be averaged
    case = strip_case(sand("sand", 34.0, thickness=0.5), clay("clay", 40.0))
    est = by_method(case)["Equivalent homogeneous: average over 1B"]
    assert est.pressure_kPa is None and "mix drained" in est.note and "'clay'" in est.note
    # two drained layers still average
    drained = strip_case(sand("sand", 34.0, thickness=0.5), sand("silt", 28.0, c=3.0))
    assert by_method(drained)["Equivalent homogeneous: average over 1B"].pressure_kPa is not None


@pytest.mark.parametrize("layers", [
    (sand("sand", 32.0),),
    (clay("clay", 40.0),),
    (sand("sand", 38.0, thickness=1.0), clay("soft clay", 20.0)),
    (clay("stiff", 90.0, thickness=1.0), clay("soft", 25.0)),
    (sand("upper", 36.0, thickness=0.8), sand("lower", 28.0, c=5.0)),
])
def test_no_estimate_says_from_memory(layers):
    for strength in ("as analysed", "as given"):
        for est in hand_methods(strip_case(*layers, embedment=0.5), strength):
            assert "from memory" not in est.source and "from memory" not in est.note, est.method
            assert "memory" not in est.note and "recalled" not in est.note, est.method


def test_a_circle_on_sand_with_weight_points_only_to_the_methods_it_has():
    """Terzaghi gives no value where N_gamma counts; for a circle the note must send the reader
    to the one method this version gives a circle (EN 1997-1), not to strip-only methods."""
    from dataclasses import replace

    strip = strip_case(sand("sand", 32.0))
    circle = replace(strip, footing=replace(strip.footing, shape="circular"))
    for case, pointed in ((strip, "see Meyerhof, Hansen, Vesic, EN 1997-1"), (circle, "- see EN 1997-1")):
        note = by_method(case)["Terzaghi (1943), general shear"].note
        assert note.endswith(pointed), note


def test_layered_ground_under_a_circle_does_not_point_to_strip_only_methods():
    from dataclasses import replace

    strip = strip_case(clay("crust", 60.0, thickness=1.0), clay("soft", 20.0))
    circle = replace(strip, footing=replace(strip.footing, shape="circular"))
    assert by_method(strip)["Terzaghi (1943), general shear"].note.endswith("see the layered methods")
    note = by_method(circle)["Terzaghi (1943), general shear"].note
    assert "layered methods" not in note and note.endswith("no layered method for a circle)")
