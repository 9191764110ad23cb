"""``bearbound init``: a commented starter case file.

The scenario is invented: a strip footing under a boundary wall, on silty sand over
firm clay with the water table in the clay. Every key a case file may hold is in it,
those a first run needs as TOML, the optional ones commented out; each says what it is,
its unit and what is allowed. The allowed ranges are read from the case check's own
schema (solver.case), so the comments cannot drift from what the check accepts.
"""
from __future__ import annotations

import textwrap

from .case import (ANALYSIS_KEYS, CIRCLE_FOOTING_KEYS, FACTORS_KEYS, FOOTING_KEYS, GEOMETRY_KEYS, GROUND_KEYS,
                   LAYER_KEYS, MODEL_KEYS, REPORT_KEYS, REQUIRED, TOP_KEYS, Key)

HEADER = """\
# bearbound case file: a starter, written by `bearbound init`.
# The scenario is invented, for a first run only: a strip footing under a boundary wall,
# on silty sand over firm clay, the water table in the clay. Replace every value with your own.
# Units are SI: m, kPa, kN/m^3, degrees; loads in kN/m (per m run) for a strip, in kN (the
# whole footing) for a circle. A line starting with # is a comment; remove the # before an
# optional key to use it. Check a case without solving with
# `bearbound preview FILE` (a picture of the model) and `bearbound hand FILE`.
# Results are for checking by a qualified geotechnical engineer; local codes and licensed
# practice govern.
"""

# (table header or "" for the top level, commented out?, [(key, TOML value, commented out?, what it is)])
Entry = tuple[str, str, bool, str]
SECTIONS: list[tuple[str, bool, list[Entry]]] = [
    ("", False, [
        ("title", '"Boundary wall footing on silty sand over firm clay (invented starter case)"', False,
         "free text: the report's title (default: the file's name)"),
    ]),
    ("[footing]", False, [
        ("width", "1.2", False, "the footing width B (a circle's diameter)"),
        ("shape", '"strip"', False, "strip (plane strain, loads per m run, kN/m) | circular (axisymmetric: "
                                    "a vertical central load, no slope in this version; loads are the whole "
                                    "footing's, kN)"),
        ("base", '"rough"', False, "the contact under the footing: rough (no slip) or smooth (no shear)"),
        ("embedment", "0.5", False, "depth Df of the footing base below the ground; the soil above the base "
                                    "acts as a surcharge beside the footing"),
        ("load_inclination", "0.0", False, "the load's angle from vertical, positive toward +x (rough base only)"),
        ("eccentricity", "0.0", False, "where the load meets the base, from the footing's centre, positive "
                                       "toward +x; inside the footing"),
        ("design_load", "120.0", False, "the load to check, optional (without it no factor of safety is worked "
                                        "out): a strip's line load per m run, along the load's line of action; "
                                        "with shape = \"circular\" the whole vertical load on the footing, not "
                                        "a pressure, allowed: "
                                        f"{CIRCLE_FOOTING_KEYS['design_load'].allowed}; for a strip"),
        ("required_factor_of_safety_on_load", "3.0", True, "optional: the collapse load / design load the "
                                                           "design must reach (needs design_load)"),
        ("required_factor_of_safety_on_strength", "1.5", True, "optional: the strength-reduction factor the "
                                                               "design must reach (needs design_load)"),
    ]),
    ("[ground]", False, [
        ("surcharge", "5.0", False, "a uniform pressure on the ground beside the footing (paving, stored goods)"),
        ("water_table", "2.5", False, "depth of a horizontal, hydrostatic water table below the ground beside "
                                      "the footing; optional: leave it out for none"),
        ("slope_angle", "26.6", True, "optional: a slope falling away to the right (+x) of the footing; give "
                                      "crest_setback and slope_height with it (embedment must then be 0)"),
        ("crest_setback", "1.0", True, "optional, with a slope: the footing's right edge to the crest"),
        ("slope_height", "4.0", True, "optional, with a slope: the crest to the toe"),
    ]),
]
LAYERS: list[tuple[str, list[Entry]]] = [
    ("mohr-coulomb", [
        ("name", '"silty sand"', False, "unique among the layers; shown in the pictures and the report"),
        ("thickness", "2.0", False, "from the layer's top down (the first layer's top is the ground surface)"),
        ("model", '"mohr-coulomb"', False, "mohr-coulomb: drained, c' and phi' | tresca: undrained, su"),
        ("cohesion", "2.0", False, "effective cohesion c'"),
        ("friction_angle", "30.0", False, "effective friction angle phi'"),
        ("dilation_angle", "10.0", True, "optional: psi' < phi' for a soil that dilates less than associated "
                                         "flow; the strength is then reduced after Davis (1968) and the bounds "
                                         "are no longer rigorous for the soil as given"),
        ("unit_weight", "18.5", False, "bulk unit weight above the water table"),
        ("saturated_unit_weight", "19.5", False, "below the water table (optional; default: unit_weight)"),
    ]),
    ("tresca", [
        ("name", '"firm clay"', False, "unique among the layers"),
        ("thickness", "6.0", True, "optional for the last layer: without it the layer runs on below the model"),
        ("model", '"tresca"', False, "undrained: su, rising with depth by strength_gradient"),
        ("undrained_strength", "40.0", False, "undrained strength su at the layer's top"),
        ("strength_gradient", "1.5", False, "how fast su rises with depth in the layer (optional; default 0)"),
        ("unit_weight", "18.0", False, "bulk unit weight above the water table"),
        ("saturated_unit_weight", "18.5", False, "below the water table (optional; default: unit_weight)"),
    ]),
]
TAIL: list[tuple[str, bool, list[Entry]]] = [
    ("[analysis]", False, [
        ("bounds", '"both"', False, "which bounds to compute"),
        ("mesh", '"adaptive"', False, "adaptive: refine until target_gap or time_limit_s | fixed: one mesh of "
                                      "elements triangles per bound (quicker; --fixed-mesh does the same)"),
        ("target_gap", "0.01", False, "adaptive: stop once (upper - lower) / lower is at most this (0.01 = 1 %)"),
        ("time_limit_s", "60.0", False, "adaptive: start no step that would end after this"),
        ("max_steps", "8", False, "adaptive: at most this many solve steps"),
        ("elements", "4000", False, "triangles in each bound's mesh: the first adaptive step's, or the fixed "
                                    "mesh's"),
        ("backend", '"clarabel"', False, "the conic solver: clarabel (its own interface) | cvxpy"),
        ("velocity_jumps", '"none"', False, "upper bound: all lets the velocity jump across every interior edge "
                                            "(slower; off by default)"),
        ("model_width", "30.0", True, "optional: the model's whole width, the footing centred in it (default: "
                                      "planned from the soils)"),
        ("model_depth", "15.0", True, "optional: the model's depth below the footing base (default: planned)"),
    ]),
    ("[factors]", True, [
        ("friction", "1.25", True, "partial factor on tan(phi')"),
        ("cohesion", "1.25", True, "partial factor on c'"),
        ("undrained_strength", "1.4", True, "partial factor on su"),
        ("load", "1.35", True, "partial factor on the action (design_load)"),
        ("resistance", "1.0", True, "partial factor on the resistance"),
    ]),
    ("[report]", True, [
        ("project", '"Boundary wall, plot 12"', True, "printed at the head of the report"),
        ("checked_by", '"A. Checker"', True, "printed at the head of the report"),
    ]),
    ("[geometry]", True, [
        ("file", '"site.geo"', True, "a site drawn in gmsh (.geo or .msh, relative to this file) instead of "
                                     "level layers; see the README for what it takes"),
    ]),
]
WIDTH = 100  # characters of a comment line
SCHEMAS = {"": TOP_KEYS, "[footing]": FOOTING_KEYS, "[ground]": GROUND_KEYS, "[analysis]": ANALYSIS_KEYS,
           "[factors]": FACTORS_KEYS, "[report]": REPORT_KEYS, "[geometry]": GEOMETRY_KEYS}


def _allowed(spec: Key) -> str:
    default = "" if spec.default in (REQUIRED, None) else f"; default {spec.default!r}".replace("'", '"')
    return f"allowed: {spec.allowed}{default}"


def _entries(entries: list[Entry], schema: dict[str, Key], table_off: bool) -> list[str]:
    lines = []
    for key, value, off, what in entries:
        lines += textwrap.wrap(f"{key}: {what}; {_allowed(schema[key])}", WIDTH, initial_indent="# ",
                               subsequent_indent="#   ", break_on_hyphens=False)
        lines.append(("# " if off or table_off else "") + f"{key} = {value}")
    return lines


def starter_text() -> str:
    """The starter case file's text (it parses and solves as written)."""
    lines = [HEADER.rstrip("\n")]
    for header, off, entries in SECTIONS:
        lines.append("")
        if header:
            lines.append(header)
        lines += _entries(entries, SCHEMAS[header], off)
    for model, entries in LAYERS:
        lines += ["", "# One [[layers]] table per layer, top to bottom (at most 50).", "[[layers]]"]
        lines += _entries(entries, LAYER_KEYS | MODEL_KEYS[model], False)
    for header, off, entries in TAIL:
        lines.append("")
        if off:
            lines.append("# Optional: remove the # before the table's header and before the keys you give.")
        lines.append(("# " if off else "") + header)
        lines += _entries(entries, SCHEMAS[header], off)
    return "\n".join(lines) + "\n"
