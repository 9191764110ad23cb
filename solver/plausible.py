"""Plausibility of a validated Case: warnings about values that are allowed but unusual.

:mod:`solver.case` refuses what cannot be solved; this stage looks at what can be
solved but is probably not what the user meant: a friction angle typed in radians,
a unit weight in t/m^3, an undrained strength in Pa, a footing width in mm. It
returns one line per finding, naming the key as the case check does (layers
counted from 1), the value and why it looks wrong. The lines are printed on the
terminal and in the report and written to result.json; they never stop a run.

The usual ranges below are common practice for natural soils and fills, wide on
purpose: a warning should mean "look again", not "unusual but right".
"""
from __future__ import annotations

import math

from .model import WATER_UNIT_WEIGHT, Case

FRICTION_ANGLE_LOW_DEG = 5.0  # drained friction angles of soils lie above this (common practice)
FRICTION_ANGLE_HIGH_DEG = 45.0  # and below this, dense gravels included (common practice); the case check refuses above 50
COHESION_HIGH_KPA = 100.0  # effective cohesion of soils rarely reaches this (common practice)
UNDRAINED_LOW_KPA = 2.0  # below the softest clays that carry a footing (common practice)
UNDRAINED_HIGH_KPA = 1000.0  # above hard clays (a few hundred kPa); more is rock or a unit slip
GRADIENT_HIGH_KPA_PER_M = 20.0  # su rising faster than this is unusual (normally consolidated: 1-2 kPa/m)
UNIT_WEIGHT_RANGE = (10.0, 24.0)  # kN/m^3: peat at the low end, dense gravel at the top (common practice)
WIDTH_RANGE_M = (0.2, 30.0)  # strip footings: narrower or wider is unusual (a width in mm?)
EMBEDMENT_WIDTHS = 2.0  # Df/B above this: the soil above the base is still counted only as a surcharge
INCLINATION_HIGH_DEG = 45.0  # a load more than this from vertical is mostly horizontal
# a footing's design load is tens to hundreds of kPa over its area (common practice); a circle's
# design_load under this over pi B^2/4 was probably typed as a pressure, not as the whole load in kN
CIRCLE_DESIGN_PRESSURE_LOW_KPA = 10.0


def input_warnings(case: Case) -> list[str]:
    """One line for each value of the case that is allowed but unusual (see the module docstring).

    >>> from solver.case import parse_case
    >>> case = parse_case({"footing": {"width": 1.0}, "layers": [{"name": "crust", "model": "mohr-coulomb",
    ...     "cohesion": 5.0, "friction_angle": 0.6, "unit_weight": 18.0}]})
    >>> print(input_warnings(case)[0])  # doctest: +ELLIPSIS
    layers[1].friction_angle = 0.6 degrees is implausibly small for a drained soil ...; if it was typed in radians, 0.6 rad = 34.4 degrees; ...
    """
    out = []
    for i, layer in enumerate(case.layers, 1):
        where = f"layers[{i}]"
        if layer.is_tresca:
            su, gradient = layer.undrained_strength, layer.strength_gradient
            if 0.0 < su < UNDRAINED_LOW_KPA or (su == 0.0 and gradient < 0.1 * UNDRAINED_LOW_KPA):
                out.append(f"{where}.undrained_strength = {su:g} kPa is implausibly small (the softest clays "
                           f"that carry a footing have su of a few kPa and more); is the unit kPa?")
            if su > UNDRAINED_HIGH_KPA:
                out.append(f"{where}.undrained_strength = {su:g} kPa is above the range of hard clays (a few "
                           f"hundred kPa); was it typed in Pa, or in another unit than kPa?")
            if gradient > GRADIENT_HIGH_KPA_PER_M:
                out.append(f"{where}.strength_gradient = {gradient:g} kPa/m is unusually steep (normally "
                           "consolidated clays gain about 1 to 2 kPa per m); is the unit kPa/m?")
        else:
            phi, c = layer.friction_angle, layer.cohesion
            if 0.0 < phi < FRICTION_ANGLE_LOW_DEG:
                radians = (f"; if it was typed in radians, {phi:g} rad = {math.degrees(phi):.1f} degrees"
                           if phi <= math.pi / 2 else "")
                out.append(f"{where}.friction_angle = {phi:g} degrees is implausibly small for a drained soil "
                           f"(usually {FRICTION_ANGLE_LOW_DEG:g} to {FRICTION_ANGLE_HIGH_DEG:g} degrees){radians}; "
                           "an undrained clay is model = \"tresca\" with undrained_strength")
            if phi > FRICTION_ANGLE_HIGH_DEG:
                out.append(f"{where}.friction_angle = {phi:g} degrees is above the usual range of soils (up to "
                           f"about {FRICTION_ANGLE_HIGH_DEG:g} degrees)")
            if c > COHESION_HIGH_KPA:
                out.append(f"{where}.cohesion = {c:g} kPa is a high effective cohesion for a soil (rarely above "
                           f"{COHESION_HIGH_KPA:g} kPa); an undrained strength is model = \"tresca\"")
        weights = [("unit_weight", layer.unit_weight)]
        if layer.saturated_unit_weight is not None:
            weights.append(("saturated_unit_weight", layer.saturated_unit_weight))
        for key, gamma in weights:
            if gamma == 0.0:
                out.append(f"{where}.{key} = 0: a weightless soil, as in checks against solutions without "
                           f"self-weight; real soils weigh about {UNIT_WEIGHT_RANGE[0]:g} to "
                           f"{UNIT_WEIGHT_RANGE[1]:g} kN/m^3")
            elif not UNIT_WEIGHT_RANGE[0] <= gamma <= UNIT_WEIGHT_RANGE[1]:
                unit = (f"; if it was typed in t/m^3 or g/cm^3, {gamma:g} x 9.81 = {gamma * 9.81:.1f} kN/m^3"
                        if gamma < 3.0 else "")
                out.append(f"{where}.{key} = {gamma:g} kN/m^3 is outside the usual range of soils "
                           f"({UNIT_WEIGHT_RANGE[0]:g} to {UNIT_WEIGHT_RANGE[1]:g} kN/m^3){unit}")
        if (layer.saturated_unit_weight is not None and case.ground.water_table is not None
                and layer.saturated_unit_weight - WATER_UNIT_WEIGHT < 0.2 * layer.unit_weight):
            out.append(f"{where}.saturated_unit_weight = {layer.saturated_unit_weight:g} kN/m^3 leaves an "
                       f"effective weight of only {layer.saturated_unit_weight - WATER_UNIT_WEIGHT:.2f} kN/m^3 "
                       f"below the water table (saturated weight less {WATER_UNIT_WEIGHT:g})")
    f = case.footing
    if not WIDTH_RANGE_M[0] <= f.width <= WIDTH_RANGE_M[1]:
        why = ("is the unit m, not cm or mm?" if f.width < WIDTH_RANGE_M[0] else
               "that is a raft or an embankment rather than a strip footing; is the unit m?")
        out.append(f"footing.width = {f.width:g} m is unusual for a strip footing ({WIDTH_RANGE_M[0]:g} to "
                   f"{WIDTH_RANGE_M[1]:g} m); {why}")
    if f.embedment > EMBEDMENT_WIDTHS * f.width:
        out.append(f"footing.embedment = {f.embedment:g} m is more than {EMBEDMENT_WIDTHS:g} B deep: the soil "
                   "above the base still counts only as a surcharge (its strength is ignored), which "
                   "underestimates a deep footing's capacity")
    if abs(f.load_inclination) > INCLINATION_HIGH_DEG:
        out.append(f"footing.load_inclination = {f.load_inclination:g} degrees from vertical is a mostly "
                   f"horizontal load; if it was measured from the horizontal, the value from vertical is "
                   f"{90 - abs(f.load_inclination):g}")
    if f.shape == "circular" and f.design_load is not None \
            and f.design_load / f.bearing_area < CIRCLE_DESIGN_PRESSURE_LOW_KPA:
        out.append(f"footing.design_load = {f.design_load:g} kN is only {f.design_load / f.bearing_area:.3g} kPa "
                   f"over the circle's area pi B^2/4 = {f.bearing_area:.4g} m^2: a circle's design load is the whole "
                   f"vertical load in kN, not a pressure; if {f.design_load:g} kPa was meant, the load is "
                   f"{f.design_load * f.bearing_area:.5g} kN")
    return out
