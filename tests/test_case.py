"""Tests of solver.case: reading, checking and writing back a case.

The case data below is invented for the tests.
"""
from __future__ import annotations

import copy
import doctest
import hashlib
import math
import pathlib

import pytest

import solver.case
from solver.case import CaseError, case_to_dict, load_case, parse_case
from solver.model import Case, Layer

BAD_CASES = pathlib.Path(__file__).parent / "bad_cases"

VALID_TOML = """\
title = "Pump-house wall footing"
[footing]
width = 1.8
base = "smooth"
embedment = 0.6
[ground]
surcharge = 10
[[layers]]
name = "fill"
thickness = 1.2
model = "mohr-coulomb"
cohesion = 2.0
friction_angle = 34.0
unit_weight = 19.0
[[layers]]
name = "soft clay"
model = "tresca"
undrained_strength = 25.0
strength_gradient = 1.5
unit_weight = 16.5
[analysis]
bounds = "lower"
elements = 800
backend = "cvxpy"
"""

# What each bad case's message must start with: the key path, or the file for
# faults of the file itself (None).
EXPECTED_KEY = {
    "width_negative.toml": "footing.width",
    "width_zero.toml": "footing.width",
    "width_string.toml": "footing.width",
    "width_bool.toml": "footing.width",
    "width_nan.toml": "footing.width",
    "width_missing.toml": "footing.width",
    "width_typo.toml": "footing.widht",
    "footing_missing.toml": "footing",
    "footing_not_table.toml": "footing",
    "base_unknown.toml": "footing.base",
    "embedment_negative.toml": "footing.embedment",
    "embedment_below_layers.toml": "footing.embedment",
    "surcharge_inf.toml": "ground.surcharge",
    "surcharge_negative.toml": "ground.surcharge",
    "ground_typo.toml": "grund",
    "title_not_string.toml": "title",
    "layers_missing.toml": "layers",
    "layers_empty.toml": "layers",
    "layers_as_table.toml": "layers",
    "layer_not_table.toml": "layers[1]",
    "friction_angle_90.toml": "layers[1].friction_angle",
    "friction_angle_typo.toml": "layers[1].frictoin_angle",
    "friction_angle_string.toml": "layers[1].friction_angle",
    "cohesion_negative.toml": "layers[1].cohesion",
    "tresca_key_on_mohr_coulomb.toml": "layers[1].undrained_strength",
    "mohr_coulomb_key_on_tresca.toml": "layers[1].friction_angle",
    "strength_missing.toml": "layers[1]",
    "strength_zero_mohr_coulomb.toml": "layers[1].cohesion",
    "strength_zero_tresca.toml": "layers[1].undrained_strength",
    "undrained_strength_missing.toml": "layers[1].undrained_strength",
    "strength_gradient_negative.toml": "layers[1].strength_gradient",
    "model_missing.toml": "layers[1].model",
    "model_unknown.toml": "layers[1].model",
    "name_missing.toml": "layers[1].name",
    "name_blank.toml": "layers[1].name",
    "duplicate_layer_names.toml": "layers[2].name",
    "thickness_missing_not_last.toml": "layers[1].thickness",
    "thickness_zero.toml": "layers[1].thickness",
    "unit_weight_missing.toml": "layers[1].unit_weight",
    "unit_weight_in_newtons.toml": "layers[1].unit_weight",
    "elements_float.toml": "analysis.elements",
    "elements_too_few.toml": "analysis.elements",
    "elements_huge_int.toml": "analysis.elements",
    "bounds_unknown.toml": "analysis.bounds",
    "velocity_jumps_unknown.toml": "analysis.velocity_jumps",
    "backend_unknown.toml": "analysis.backend",
    "analysis_typo.toml": "anaylsis",
    "width_array.toml": "footing.width",
    "friction_angle_negative.toml": "layers[1].friction_angle",
    "layers_thinner_than_embedment.toml": "footing.embedment",
    "water_table_above_ground.toml": "ground.water_table",
    "water_table_string.toml": "ground.water_table",
    "slope_angle_90.toml": "ground.slope_angle",
    "slope_angle_overhang.toml": "ground.slope_angle",
    "slope_height_missing.toml": "ground.slope_height",
    "slope_height_on_level_ground.toml": "ground.slope_height",
    "slope_height_negative.toml": "ground.slope_height",
    "crest_setback_negative.toml": "ground.crest_setback",
    "embedment_next_to_slope.toml": "footing.embedment",
    "eccentricity_outside_footing.toml": "footing.eccentricity",
    "eccentricity_at_edge.toml": "footing.eccentricity",
    "load_inclination_smooth_base.toml": "footing.load_inclination",
    "load_inclination_90.toml": "footing.load_inclination",
    "design_load_zero.toml": "footing.design_load",
    "required_factor_without_design_load.toml": "footing.required_factor_of_safety_on_load",
    "required_factor_below_one.toml": "footing.required_factor_of_safety_on_strength",
    "dilation_above_friction.toml": "layers[1].dilation_angle",
    "dilation_on_tresca.toml": "layers[1].dilation_angle",
    "saturated_below_unit_weight.toml": "layers[1].saturated_unit_weight",
    "saturated_below_water.toml": "layers[1].saturated_unit_weight",
    "factors_unknown_key.toml": "factors.weight",
    "report_project_empty.toml": "report.project",
    "report_checked_by_two_lines.toml": "report.checked_by",
    "report_unknown_key.toml": "report.checker",
    "report_not_table.toml": "report",
    "factors_below_one.toml": "factors.friction",
    "factors_not_table.toml": "factors",
    # issue 12: values the check accepted before and that crashed, hung or misled later
    "friction_angle_85.toml": "layers[1].friction_angle",
    "friction_angle_89_9.toml": "layers[1].friction_angle",
    "friction_angle_tiny.toml": "layers[1].friction_angle",
    "thickness_1e-9.toml": "layers[1].thickness",
    "width_1e308.toml": "footing.width",
    "width_1e-300.toml": "footing.width",
    "width_in_millimetres.toml": "footing.width",
    "embedment_1e308.toml": "footing.embedment",
    "embedment_pier.toml": "footing.embedment",
    "embedment_just_above_interface.toml": "footing.embedment",
    "undrained_strength_1e308.toml": "layers[1].undrained_strength",
    "strength_gradient_1e308.toml": "layers[1].strength_gradient",
    "cohesion_1e-300.toml": "layers[1].cohesion",
    "design_load_1e308.toml": "footing.design_load",
    "surcharge_1e308.toml": "ground.surcharge",
    "slope_height_1e6.toml": "ground.slope_height",
    "slope_angle_0_001.toml": "ground.slope_angle",
    "crest_setback_1e9.toml": "ground.crest_setback",
    "crest_setback_on_level_ground.toml": "ground.crest_setback",
    "duplicate_layer_names_trailing_space.toml": "layers[2].name",
    "duplicate_layer_names_unicode_forms.toml": "layers[2].name",
    "layers_10000.toml": "layers",
    "water_table_just_below_base.toml": "ground.water_table",
    "nested_100000.toml": None,
    "key_escape_codes.toml": "footing.wid\\x1b[2J\\nth",
    "key_very_long.toml": "footing." + "w" * 69 + "...",
    "layer_key_direction_override.toml": "layers[1].\\u202ecohesion",
    "shape_unknown.toml": "footing.shape",
    "circle_load_inclination.toml": "footing.load_inclination",
    "circle_eccentricity.toml": "footing.eccentricity",
    "circle_slope.toml": "ground.slope_angle",
    "circle_design_load_in_newtons.toml": "footing.design_load",
    "circle_velocity_jumps.toml": "analysis.velocity_jumps",
    "not_toml.toml": None,
    "unclosed_table.toml": None,
    "empty.toml": None,
    "binary.toml": None,
    "latin1.toml": None,
}


def assert_one_line_naming(exc: CaseError, where: str) -> None:
    message = str(exc)
    assert "\n" not in message and "Traceback" not in message
    assert message.startswith(where + ":"), message
    assert len(message) > len(where) + 10, message  # says more than the key


def test_corpus_and_expectations_match():
    assert sorted(p.name for p in BAD_CASES.glob("*.toml")) == sorted(EXPECTED_KEY)


@pytest.mark.parametrize("file_name", sorted(EXPECTED_KEY))
def test_bad_case_raises_one_line_naming_the_key(file_name):
    path = BAD_CASES / file_name
    with pytest.raises(CaseError) as info:
        load_case(path)
    assert_one_line_naming(info.value, EXPECTED_KEY[file_name] or str(path))


@pytest.fixture
def valid_file(tmp_path) -> pathlib.Path:
    path = tmp_path / "pump_house.toml"
    path.write_text(VALID_TOML, encoding="utf-8")
    return path


def test_valid_case_is_read_as_written(valid_file):
    case = load_case(valid_file)
    assert case.name == "pump_house"
    assert case.source_sha256 == hashlib.sha256(valid_file.read_bytes()).hexdigest()
    assert case.title == "Pump-house wall footing"
    assert (case.footing.width, case.footing.base, case.footing.embedment) == (1.8, "smooth", 0.6)
    assert case.ground.surcharge == 10.0 and isinstance(case.ground.surcharge, float)
    assert case.layers == (
        Layer(name="fill", model="mohr-coulomb", thickness=1.2, unit_weight=19.0,
              cohesion=2.0, friction_angle=34.0),
        Layer(name="soft clay", model="tresca", thickness=None, unit_weight=16.5,
              undrained_strength=25.0, strength_gradient=1.5),
    )
    analysis = case.analysis
    assert (analysis.bounds, analysis.elements, analysis.backend) == ("lower", 800, "cvxpy")


def test_valid_case_round_trips(valid_file):
    case = load_case(valid_file)
    again = parse_case(case_to_dict(case), name=case.name, source_sha256=case.source_sha256)
    assert again == case
    assert parse_case(case_to_dict(case)) == Case(
        **{**case.__dict__, "name": "case", "source_sha256": ""})


def test_defaults_are_filled_and_title_defaults_to_name():
    case = parse_case({"footing": {"width": 2},
                       "layers": [{"name": "sand", "model": "mohr-coulomb",
                                   "friction_angle": 30, "unit_weight": 0}]}, name="demo")
    assert case.title == "demo"
    assert (case.footing.base, case.footing.embedment, case.ground.surcharge) == ("rough", 0.0, 0.0)
    analysis = case.analysis
    assert (analysis.bounds, analysis.elements, analysis.backend) == ("both", 4000, "clarabel")
    assert case.layers[0].cohesion == 0.0 and case.layers[0].thickness is None
    assert case.is_weightless  # unit_weight = 0 is allowed
    assert parse_case(case_to_dict(case), name="demo") == case


def test_a_circles_design_load_is_its_whole_load_in_kN_a_strips_a_line_load_in_kN_per_m():
    def case(shape: str, design_load: float, **footing):
        return parse_case({"footing": {"width": 60.0, "shape": shape, "design_load": design_load, **footing},
                           "layers": [{"name": "clay", "model": "tresca", "undrained_strength": 40.0,
                                       "unit_weight": 18.0}]})

    # a 60 m tank at 400 kPa: 1.13e6 kN on the whole footing, more than any strip's kN/m
    whole = 400.0 * math.pi * 60.0 ** 2 / 4
    tank = case("circular", whole, required_factor_of_safety_on_load=2.5,
                required_factor_of_safety_on_strength=1.4)
    assert tank.footing.design_load == whole and tank.footing.bearing_area == pytest.approx(math.pi * 900.0)
    assert parse_case(case_to_dict(tank)) == tank
    with pytest.raises(CaseError) as info:
        case("strip", whole)
    assert str(info.value).startswith("footing.design_load: ") and "(kN/m, the line load per m run of the strip)" \
        in str(info.value) and "no strip footing carries that" in str(info.value)
    with pytest.raises(CaseError) as info:
        load_case(BAD_CASES / "circle_design_load_in_newtons.toml")
    assert "(kN, the whole vertical load on the circular footing)" in str(info.value)
    assert "no circular footing carries that; is that in the right units?" in str(info.value)
    # partial factors are taken for a circle too
    with_factors = parse_case({"footing": {"width": 3.0, "shape": "circular", "design_load": 900.0},
                               "factors": {"undrained_strength": 1.4, "load": 1.35},
                               "layers": [{"name": "clay", "model": "tresca", "undrained_strength": 40.0,
                                           "unit_weight": 18.0}]})
    assert with_factors.factors.undrained_strength == 1.4


def test_the_silo_example_states_its_design_load_as_the_whole_load_in_kN():
    silo = load_case(pathlib.Path(__file__).parent.parent / "examples" / "grain-silo.toml")
    assert silo.footing.shape == "circular" and silo.footing.design_load == 9000.0
    # its comment: 9,000 kN is 179 kPa over pi B^2/4 = 50.3 m^2
    assert silo.footing.bearing_area == pytest.approx(50.27, abs=0.01)
    assert silo.footing.design_load / silo.footing.bearing_area == pytest.approx(179.0, abs=0.05)


def test_typo_message_suggests_the_key():
    with pytest.raises(CaseError) as info:
        load_case(BAD_CASES / "friction_angle_typo.toml")
    assert str(info.value) == (
        "layers[1].frictoin_angle: unknown key; did you mean 'friction_angle'?")


def test_other_model_key_names_its_model():
    with pytest.raises(CaseError, match=r"belongs to model = 'tresca'"):
        load_case(BAD_CASES / "tresca_key_on_mohr_coulomb.toml")


def test_value_message_gives_value_and_range():
    with pytest.raises(CaseError) as info:
        load_case(BAD_CASES / "width_negative.toml")
    assert str(info.value) == "footing.width: -1.0 is not allowed; must be a number >= 0.01 and <= 100 (m)"


def test_toml_syntax_error_gives_the_line():
    with pytest.raises(CaseError, match=r"line 2"):
        load_case(BAD_CASES / "not_toml.toml")


def test_file_over_1_MB_is_refused_unread(tmp_path):
    big = tmp_path / "big.toml"
    big.write_text("# padding\n" * 500_000)  # 5 MB of valid TOML comments
    with pytest.raises(CaseError) as info:
        load_case(big)
    assert_one_line_naming(info.value, str(big))
    assert "1 MB" in str(info.value)


@pytest.mark.parametrize("make", [lambda d: d / "missing.toml", lambda d: d])
def test_missing_file_or_directory(tmp_path, make):
    path = make(tmp_path)
    with pytest.raises(CaseError) as info:
        load_case(path)
    assert_one_line_naming(info.value, str(path))


def test_not_a_table_is_refused():
    with pytest.raises(CaseError, match=r"^case: "):
        parse_case([1, 2])  # type: ignore[arg-type]


ODD_VALUES = [None, True, "x", "", "a\nb", [], {}, [1], math.nan, -math.inf, 10**400,
              -1, 0, 0.5, 89.99, 1e9]


def _leaves(data, path=()):
    """Paths to every value inside nested dicts and lists."""
    items = (data.items() if isinstance(data, dict)
             else enumerate(data) if isinstance(data, list) else ())
    for key, value in items:
        yield path + (key,)
        yield from _leaves(value, path + (key,))


def test_any_value_anywhere_gives_a_case_or_a_one_line_error(valid_file):
    """Put each odd value at each place of a valid case: never anything but CaseError."""
    base = case_to_dict(load_case(valid_file))
    errors = 0
    for where in list(_leaves(base)):
        for value in ODD_VALUES:
            data = copy.deepcopy(base)
            target = data
            for key in where[:-1]:
                target = target[key]
            target[where[-1]] = value
            try:
                assert isinstance(parse_case(data), Case)
            except CaseError as exc:
                errors += 1
                assert "\n" not in str(exc)
    assert errors > 0


def test_doctests():
    result = doctest.testmod(solver.case)
    assert result.attempted > 0 and result.failed == 0
