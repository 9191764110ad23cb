"""The plausibility stage: values the case check allows but a checking engineer would
question come back as warning lines naming the key; they never stop a run."""
import doctest
import subprocess
import sys

import pytest

import solver.plausible
from solver.case import parse_case
from solver.plausible import input_warnings


def case_with(layer=None, footing=None, ground=None):
    base = {"name": "soil", "model": "mohr-coulomb", "cohesion": 2.0, "friction_angle": 32.0, "unit_weight": 19.0}
    data = {"footing": {"width": 1.5, **(footing or {})},
            "layers": [{**base, **(layer or {})} if (layer or {}).get("model") != "tresca"
                       else {"name": "clay", "unit_weight": 18.0, **layer}]}
    if ground:
        data["ground"] = ground
    return parse_case(data)


def test_doctests():
    assert doctest.testmod(solver.plausible).failed == 0


def test_a_usual_case_gives_no_warning():
    assert input_warnings(case_with()) == []
    assert input_warnings(case_with({"model": "tresca", "undrained_strength": 40.0, "strength_gradient": 1.5})) == []


@pytest.mark.parametrize("layer, footing, key, words", [
    # the crane-rail case of the issue: 0.6 typed in radians, with a little cohesion
    ({"friction_angle": 0.6, "cohesion": 5.0}, None, "layers[1].friction_angle", "34.4 degrees"),
    ({"friction_angle": 3.0, "cohesion": 0.0}, None, "layers[1].friction_angle", "implausibly small"),
    ({"friction_angle": 48.0}, None, "layers[1].friction_angle", "above the usual range"),
    ({"cohesion": 250.0}, None, "layers[1].cohesion", "tresca"),
    ({"unit_weight": 1.9}, None, "layers[1].unit_weight", "18.6 kN/m^3"),
    ({"unit_weight": 0.0}, None, "layers[1].unit_weight", "weightless"),
    ({"unit_weight": 27.0}, None, "layers[1].unit_weight", "outside the usual range"),
    ({"model": "tresca", "undrained_strength": 0.5}, None, "layers[1].undrained_strength", "implausibly small"),
    ({"model": "tresca", "undrained_strength": 5000.0}, None, "layers[1].undrained_strength", "in Pa"),
    ({"model": "tresca", "undrained_strength": 20.0, "strength_gradient": 40.0}, None,
     "layers[1].strength_gradient", "steep"),
    (None, {"width": 0.05}, "footing.width", "not cm or mm"),
    (None, {"width": 45.0}, "footing.width", "raft"),
    (None, {"embedment": 4.0}, "footing.embedment", "surcharge"),
    (None, {"load_inclination": 75.0}, "footing.load_inclination", "15"),
    # a tank's 179 kPa typed as its design load: the whole load over pi 8^2/4 is 9,000 kN
    (None, {"width": 8.0, "shape": "circular", "design_load": 179.0}, "footing.design_load", "the load is 8997.5 kN"),
])
def test_each_unusual_value_is_named_with_its_key_and_a_reason(layer, footing, key, words):
    warnings = input_warnings(case_with(layer, footing))
    assert len(warnings) == 1, warnings
    assert warnings[0].startswith(key) and words in warnings[0]
    assert "\n" not in warnings[0]


def test_a_saturated_weight_close_to_water_is_warned_only_with_a_water_table():
    layer = {"unit_weight": 10.2, "saturated_unit_weight": 10.5}  # peat-like
    assert input_warnings(case_with(layer)) == []
    found = input_warnings(case_with(layer, ground={"water_table": 1.0}))
    assert len(found) == 1 and found[0].startswith("layers[1].saturated_unit_weight")


def test_hand_command_prints_the_warning_and_still_runs(tmp_path):
    case = tmp_path / "crane.toml"
    case.write_text('[footing]\nwidth = 1.0\n[[layers]]\nname = "crust"\nmodel = "mohr-coulomb"\n'
                    'cohesion = 5.0\nfriction_angle = 0.6\nunit_weight = 18.0\n')
    done = subprocess.run([sys.executable, "-m", "solver.cli", "hand", str(case)], cwd=tmp_path,
                          capture_output=True, text=True, timeout=120)
    assert done.returncode == 0, done.stderr
    assert "WARNING: layers[1].friction_angle = 0.6 degrees" in done.stdout and "Terzaghi" in done.stdout
