"""Read and check a case file (TOML) and build the :class:`~solver.model.Case`.

Every key a case file may hold is listed once, in the schema tables below
(``FOOTING_KEYS``, ``GROUND_KEYS``, ``ANALYSIS_KEYS``, ``LAYER_KEYS``,
``MODEL_KEYS``): a new key is one line there (plus its field in
:mod:`solver.model`). Checks that tie keys together (thickness on every layer
but the last, strength not all zero, unique layer names, footing base inside
the soil) follow the tables.

Any bad input raises :class:`CaseError` with one line a user can act on:
``<key path>: <value> is not allowed; must be <what is allowed>``. Layers are
counted from 1, top to bottom: ``layers[1]`` is the top layer.
"""
from __future__ import annotations

import dataclasses
import difflib
import hashlib
import math
import numbers
import operator
import os
import pathlib
import stat
import tomllib
import unicodedata
from dataclasses import dataclass
from typing import Any

from solver.model import WATER_UNIT_WEIGHT, Analysis, Case, Factors, Footing, Ground, Layer, ReportInfo

MAX_FILE_BYTES = 1_000_000  # a case is a few dozen lines; anything this big is the wrong file


class CaseError(ValueError):
    """One line a user can act on: names the key, the value and what is allowed."""


REQUIRED = object()  # default of a key the user must give
_BOUNDS = (("gt", ">", operator.gt), ("ge", ">=", operator.ge),
           ("lt", "<", operator.lt), ("le", "<=", operator.le))
_KIND = {float: "a number", int: "a whole number", str: "a string"}


@dataclass(frozen=True)
class Key:
    """Schema of one key: its type, allowed range or choices, unit and default.

    >>> Key(float, "m", gt=0).allowed
    'a number > 0 (m)'
    >>> Key(str, choices=("rough", "smooth")).read("smooth")
    'smooth'
    """

    kind: type  # float (int accepted), int or str
    unit: str = ""
    gt: float | None = None
    ge: float | None = None
    lt: float | None = None
    le: float | None = None
    choices: tuple[str, ...] = ()
    default: Any = REQUIRED
    max_len: int = 200  # str only: one printable line of at most this many characters
    # numbers only: what a value below (above) the range would mean, added to the message;
    # the range alone does not say why, e.g. for a negative depth of the water table
    below: str = ""
    above: str = ""
    # numbers only: limits in footing widths B (a length the method resolves relative to the
    # footing), checked once B is known
    ge_width: float | None = None
    le_width: float | None = None
    # numbers only: 0, or at least this (a positive value below it is no measurable quantity)
    zero_or_ge: float | None = None

    def why_outside(self, value: Any, width: float | None = None) -> str:
        """``below`` or ``above`` for a finite number out of range on that side, else ''.

        >>> Key(float, gt=0, lt=90, above="; too steep").why_outside(95)
        '; too steep'
        >>> Key(float, gt=0, lt=90, above="; too steep").why_outside(-5)
        ''
        """
        if isinstance(value, bool) or not isinstance(value, numbers.Real):
            return ""
        try:
            number = float(value)
        except OverflowError:
            return ""
        if not math.isfinite(number):
            return ""
        low = (self.gt is not None and number <= self.gt) or (self.ge is not None and number < self.ge) \
            or (self.zero_or_ge is not None and 0 < number < self.zero_or_ge) \
            or (width is not None and self.ge_width is not None and number < self.ge_width * width)
        high = (self.lt is not None and number >= self.lt) or (self.le is not None and number > self.le) \
            or (width is not None and self.le_width is not None and number > self.le_width * width)
        return self.below if low else self.above if high else ""

    @property
    def allowed(self) -> str:
        """What the key may hold, phrased to follow 'must be'."""
        return self.allowed_for()

    def allowed_for(self, width: float | None = None) -> str:
        """What the key may hold for a footing of width ``width`` (m), if known.

        >>> Key(float, "m", gt=0, ge_width=0.001).allowed_for(2.0)
        'a number > 0 and >= 0.001 B = 0.002 (m)'
        >>> Key(float, "kPa", ge=0, le=1e4, zero_or_ge=0.01).allowed
        '0, or a number >= 0.01 and <= 10000 (kPa)'
        """
        if self.choices:
            return "one of " + ", ".join(repr(c) for c in self.choices)
        if self.kind is str:
            return f"a non-empty one-line string of at most {self.max_len} characters"
        bounds = {**{op: getattr(self, op) for op, _, _ in _BOUNDS}, "ge": self.zero_or_ge or self.ge}
        limits = [f"{sym} {bounds[op]:g}" for op, sym, _ in _BOUNDS if bounds[op] is not None]
        for sym, factor in ((">=", self.ge_width), ("<=", self.le_width)):
            if factor is not None:
                limits.append(f"{sym} {factor:g} B" + ("" if width is None else f" = {factor * width:.4g}"))
        return " ".join(filter(None, ("0, or" if self.zero_or_ge else "", _KIND[self.kind], " and ".join(limits),
                                      self.unit and f"({self.unit})")))

    def read(self, value: Any, width: float | None = None) -> Any:
        """Return ``value`` as a clean Python value, or raise ValueError if not allowed
        (limits in footing widths only when ``width``, B in m, is given)."""
        if self.kind is str:
            ok = isinstance(value, str) and (
                value in self.choices if self.choices
                else value.strip() != "" and value.isprintable() and len(value) <= self.max_len)
        elif isinstance(value, bool):  # bool is an int in Python, never a number here
            ok = False
        elif self.kind is int:
            ok = isinstance(value, numbers.Integral)
            value = int(value) if ok else value
        else:
            try:  # float() of a huge int overflows
                ok = isinstance(value, numbers.Real) and math.isfinite(float(value))
            except OverflowError:
                ok = False
            value = float(value) + 0.0 if ok else value  # + 0.0 turns -0.0 into 0.0
        if not ok or not all(holds(value, getattr(self, op)) for op, _, holds in _BOUNDS
                             if getattr(self, op) is not None):
            raise ValueError(value)
        if self.zero_or_ge is not None and 0 < value < self.zero_or_ge:
            raise ValueError(value)
        if width is not None and value is not None and (
                (self.ge_width is not None and value < self.ge_width * width)
                or (self.le_width is not None and value > self.le_width * width)):
            raise ValueError(value)
        return value


# -- the schema: one line per key ---------------------------------------------

TOP_KEYS = {"title": Key(str, default=None)}  # None: the case name
# Limits: every number is checked against what the method and the solver can do with it; the
# reason is in the message (``below``/``above``). Lengths the mesh must resolve or reach are
# limited in footing widths B (the mesh is built in units of B, solver.mesh). Outside the
# numeric limits the values are no soil and no strip footing: mostly a unit slip (mm for m,
# Pa for kPa), which the message says.
_UNITS = "; is that in the right units?"
FOOTING_KEYS = {
    "width": Key(float, "m", ge=0.01, le=100, above="; wider than 100 m is no strip footing" + _UNITS),
    "base": Key(str, choices=("rough", "smooth"), default="rough"),
    "embedment": Key(float, "m", ge=0, le_width=10, default=0.0,
                     above="; deeper than 10 B the footing is a pier: the soil above its base does more than "
                           "surcharge it, which this version does not model"),
    "load_inclination": Key(float, "degrees from vertical", gt=-90, lt=90, default=0.0),
    "eccentricity": Key(float, "m", default=0.0),
    # a strip's line load per m run; a circle's whole load is CIRCLE_FOOTING_KEYS' (kN)
    "design_load": Key(float, "kN/m, the line load per m run of the strip", gt=0, le=1e6, default=None,
                       above="; no strip footing carries that" + _UNITS),
    "shape": Key(str, choices=("strip", "circular"), default="strip"),  # circular: width = diameter
    # the factors of safety the design must reach (optional; checked against design_load)
    "required_factor_of_safety_on_load": Key(float, "collapse load / design load", ge=1, le=10, default=None),
    "required_factor_of_safety_on_strength": Key(float, "strength-reduction factor", ge=1, le=10, default=None),
}
# A circular footing's keys where they differ from a strip's: its design load is the whole
# vertical load on the footing, in kN (10 MPa over the widest circle, 100 m, is 7.9e7 kN).
CIRCLE_FOOTING_KEYS = {
    "design_load": Key(float, "kN, the whole vertical load on the circular footing", gt=0, le=1e8, default=None,
                       above="; no circular footing carries that" + _UNITS),
}
GROUND_KEYS = {
    "surcharge": Key(float, "kPa", ge=0, le=1e4, default=0.0, above="; that is the weight of 500 m of soil" + _UNITS),
    # Any depth: a water table below the model is carried by the extension elements (solver.lower).
    "water_table": Key(float, "m below the ground surface", ge=0, default=None,
                       below="; a negative depth puts the water table above the ground surface "
                             "(standing water over the soil), which this version does not model"),
    "slope_angle": Key(float, "degrees", ge=0, lt=90, zero_or_ge=1, default=0.0,
                       below="; 0 is level ground, and a face flatter than 1 degree runs more than 57 times its "
                             "height to its toe, farther than the model reaches: leave out the slope keys",
                       above="; 90 degrees or more is a vertical or overhanging face, which this version does not model"),
    "crest_setback": Key(float, "m", ge=0, le_width=50, default=None,  # None: not given (0 with a slope)
                         above="; farther than that the slope lies outside every collapse mechanism of the "
                               "footing (they reach about 20 B at phi' = 50 degrees): analyse level ground "
                               "(leave out the slope keys) and check the slope's own stability separately"),
    "slope_height": Key(float, "m", gt=0, le_width=100, default=None,
                        above="; beside a slope that high the slope's own stability governs, not the footing: "
                              "check the slope on its own"),
}
FACTORS_KEYS = {
    "friction": Key(float, "on tan(phi')", ge=1, le=3, default=1.0),
    "cohesion": Key(float, "on c'", ge=1, le=3, default=1.0),
    "undrained_strength": Key(float, "on su", ge=1, le=3, default=1.0),
    "load": Key(float, "on the action", ge=1, le=3, default=1.0),
    "resistance": Key(float, "on the resistance", ge=1, le=3, default=1.0),
}
ANALYSIS_KEYS = {
    "bounds": Key(str, choices=("lower", "upper", "both"), default="both"),
    "elements": Key(int, ge=200, le=400_000, default=4000),
    "backend": Key(str, choices=("clarabel", "cvxpy"), default="clarabel"),
    "mesh": Key(str, choices=("adaptive", "fixed"), default="adaptive"),
    "target_gap": Key(float, "fraction, e.g. 0.01 for 1 %", gt=0, lt=1, default=0.01),
    "max_steps": Key(int, ge=1, le=20, default=8),
    "time_limit_s": Key(float, "s", gt=0, le=86400, default=60.0),
    "velocity_jumps": Key(str, choices=("none", "all"), default="none"),
    "model_width": Key(float, "m, the footing centred in it", gt=0, default=None),
    "model_depth": Key(float, "m below the footing base", gt=0, default=None),
}
# Strengths: a positive one below 10 Pa (0.001 kPa/m for a gradient) is below anything
# measurable and below what the certificates resolve against the weight and surcharge
# stresses (solver.certify): give 0 for none. 10 MPa is beyond the strongest soils.
_TINY = "; a positive strength that small is below anything measurable: give 0 for none"
_STRONG = "; 10 MPa is beyond the strongest soils" + _UNITS
# Strength keys of each soil model; a layer holds the keys of its own model only.
MODEL_KEYS = {
    "mohr-coulomb": {
        "cohesion": Key(float, "kPa", ge=0, le=1e4, zero_or_ge=0.01, default=0.0, below=_TINY, above=_STRONG),
        "friction_angle": Key(float, "degrees", ge=0, le=50, zero_or_ge=0.1, default=0.0,
                              below="; a positive friction angle that small is no measured soil: give 0 for none",
                              above="; no soil has a friction angle above about 50 degrees (dense gravel and "
                                    "rockfill at low stress; common practice), and above it the collapse load and "
                                    "the mechanism grow faster than the conic program resolves (exp(pi tan phi'))"),
        "dilation_angle": Key(float, "degrees", ge=0, le=50, default=None),
    },
    "tresca": {
        "undrained_strength": Key(float, "kPa", ge=0, le=1e4, zero_or_ge=0.01, below=_TINY, above=_STRONG),
        "strength_gradient": Key(float, "kPa/m", ge=0, le=1e3, zero_or_ge=0.001, default=0.0, below=_TINY,
                                 above="; no clay gains 1 MPa of strength per m of depth" + _UNITS),
    },
}
# The keys that give a layer its strength (one of them must be > 0).
STRENGTH_KEYS = {"mohr-coulomb": ("cohesion", "friction_angle"),
                 "tresca": ("undrained_strength", "strength_gradient")}
MAX_LAYERS = 50  # every interface within reach is a line of both meshes; a boring log has far fewer
LAYER_KEYS = {
    "name": Key(str, max_len=80),
    # None: runs down to the model base; allowed on the last layer only.
    "thickness": Key(float, "m", gt=0, ge_width=0.001, default=None,
                     below="; a layer that thin is far finer than the mesh near the footing (0.002 B at its "
                           "finest): merge it into a neighbour"),
    "model": Key(str, choices=tuple(MODEL_KEYS)),
    "unit_weight": Key(float, "kN/m^3", ge=0, le=30),  # 30: sanity limit, catches N/m^3 or kg/m^3
    "saturated_unit_weight": Key(float, "kN/m^3", ge=WATER_UNIT_WEIGHT, le=30, default=None),
}
# [report]: text for the report's heading only (optional; nothing else reads it)
REPORT_KEYS = {
    "project": Key(str, "the project or job, printed in the report's heading", default=None),
    "checked_by": Key(str, "the engineer who checks the result, printed in the report's heading",
                      max_len=120, default=None),
}
# The tables holding one dataclass each: key in the file -> (dataclass, schema).
TABLES = {"footing": (Footing, FOOTING_KEYS), "ground": (Ground, GROUND_KEYS),
          "analysis": (Analysis, ANALYSIS_KEYS), "factors": (Factors, FACTORS_KEYS),
          "report": (ReportInfo, REPORT_KEYS)}
OPTIONAL_TABLES = ("factors", "report")  # absent: None in the Case
REQUIRED_TABLES = ("footing",)
# [geometry]: the user's own drawing of the site (solver.sitefile); the path is relative to the case file.
GEOMETRY_KEYS = {"file": Key(str, "a gmsh .geo script or .msh mesh", max_len=1000)}
# Keys a drawn site does not take in this version: (key path, value when not given, why).
NOT_WITH_GEOMETRY = (
    ("footing.embedment", 0.0, "0 (m) with a [geometry] file: draw the soil beside the footing instead"),
    ("ground.water_table", None, "left out with a [geometry] file: this version takes no water table "
                                 "with a drawn site"),
    ("ground.slope_angle", 0.0, "left out with a [geometry] file: draw the slope instead"),
    ("ground.crest_setback", None, "left out with a [geometry] file: draw the slope instead"),
    ("ground.slope_height", None, "left out with a [geometry] file: draw the slope instead"),
    ("analysis.model_width", None, "left out with a [geometry] file: the drawing gives the model's extent"),
    ("analysis.model_depth", None, "left out with a [geometry] file: the drawing gives the model's extent"),
    ("footing.shape", "strip", "'strip' with a [geometry] file: this version analyses a drawn site "
                               "as a strip footing only"),
)
# Keys a circular (axisymmetric) footing does not take in this version: (key path, value when
# not given, what is allowed and why). A slope, an inclined or an eccentric load is not axisymmetric.
NOT_WITH_CIRCLE = (
    ("footing.load_inclination", 0.0, "0 (degrees) with shape = 'circular': this version analyses a "
                                      "circular footing under a central vertical load only"),
    ("footing.eccentricity", 0.0, "0 (m) with shape = 'circular': this version analyses a circular "
                                  "footing under a central vertical load only"),
    ("ground.slope_angle", 0.0, "0 (degrees) with shape = 'circular': a slope beside a circle is not "
                                "axisymmetric"),
    ("analysis.velocity_jumps", "none", "'none' with shape = 'circular': velocity jumps are built for "
                                        "strip footings only"),
)


# -- reading ------------------------------------------------------------------

def shown(text: Any, limit: int = 120) -> str:
    """User text (a key, a path, a name) as it may appear in one line of a message or a
    report: control characters and terminal escape codes written as escapes (``\\n``,
    ``\\x1b``), at most ``limit`` characters.

    >>> shown("clay\\x1b[2J\\nnext"), shown("k" * 200, 20)
    ('clay\\\\x1b[2J\\\\nnext', 'kkkkkkkkkkkkkkkkk...')
    """
    text = str(text)
    if not text.isprintable():
        text = "".join(c if c.isprintable() else repr(c)[1:-1] for c in text)
    return text if len(text) <= limit else text[:limit - 3] + "..."


def _show(value: Any) -> str:
    """repr of a value, cut short and on one line, for a message (booleans as TOML spells them)."""
    text = str(value).lower() if isinstance(value, bool) else " ".join(repr(value).split())
    return text if len(text) <= 60 else text[:57] + "..."


def _not_allowed(path: str, value: Any, allowed: str, hint: str = "") -> CaseError:
    return CaseError(f"{path}: {_show(value)} is not allowed; must be {allowed}{hint}")


def _did_you_mean(word: str, options: list[str]) -> str:
    close = difflib.get_close_matches(word, options, n=1)
    return f"did you mean {close[0]!r}?" if close else "allowed: " + ", ".join(options)


def _check_keys(table: dict, allowed: dict, path: str,
                foreign: dict[str, str] | None = None) -> None:
    """Raise on the first key of ``table`` the schema ``allowed`` does not list."""
    for key in table:
        if key not in allowed:
            where = shown(f"{path}.{key}" if path else key, 80)
            if foreign and key in foreign:
                raise CaseError(f"{where}: {foreign[key]}")
            raise CaseError(f"{where}: unknown key; {_did_you_mean(str(key), list(allowed))}")


def _read_table(table: dict, schema: dict[str, Key], path: str,
                foreign: dict[str, str] | None = None, width: float | None = None) -> dict[str, Any]:
    """Check ``table`` against ``schema``; return every schema key's value (defaults filled).
    ``width``: the footing width B (m), for the limits given in widths."""
    _check_keys(table, schema, path, foreign)
    values = {}
    for key, spec in schema.items():
        where = f"{path}.{key}" if path else key
        if key not in table:
            if spec.default is REQUIRED:
                raise CaseError(f"{where}: missing; required, must be {spec.allowed}")
            values[key] = spec.default
            continue
        try:
            values[key] = spec.read(table[key], width)
        except ValueError:
            close = difflib.get_close_matches(table[key], spec.choices, n=1) \
                if spec.choices and isinstance(table[key], str) else []
            hint = f" (did you mean {close[0]!r}?)" if close else ""
            hint = spec.why_outside(table[key], width) or hint
            raise _not_allowed(where, table[key], spec.allowed_for(width), hint) from None
    return values


def footing_schema(raw: dict) -> dict[str, Key]:
    """The schema of a [footing] table by its ``shape`` (read and checked first): a circle's
    design load is the whole load in kN (CIRCLE_FOOTING_KEYS), a strip's a line load in kN/m.

    >>> footing_schema({"shape": "circular"})["design_load"].unit
    'kN, the whole vertical load on the circular footing'
    """
    shape = _read_table({"shape": raw["shape"]} if "shape" in raw else {},
                        {"shape": FOOTING_KEYS["shape"]}, "footing")["shape"]
    return FOOTING_KEYS | CIRCLE_FOOTING_KEYS if shape == "circular" else FOOTING_KEYS


def _read_layer(raw: Any, path: str, is_last: bool, width: float) -> Layer:
    if not isinstance(raw, dict):
        raise _not_allowed(path, raw, "a table [[layers]] of layer keys")
    model = _read_table({"model": raw["model"]} if "model" in raw else {},
                        {"model": LAYER_KEYS["model"]}, path)["model"]
    schema = LAYER_KEYS | MODEL_KEYS[model]
    foreign = {key: f"not a {model} key; it belongs to model = {other!r} "
                    f"({model} takes {', '.join(MODEL_KEYS[model])})"
               for other, keys in MODEL_KEYS.items() if other != model for key in keys}
    values = _read_table(raw, schema, path, foreign, width)

    if values["thickness"] is None and not is_last:
        raise CaseError(f"{path}.thickness: missing; every layer but the last needs one, "
                        f"must be {LAYER_KEYS['thickness'].allowed}")
    strength = list(STRENGTH_KEYS[model])
    if not any(key in raw for key in strength):
        raise CaseError(f"{path}: missing {' and '.join(strength)}; a {model} layer "
                        "needs at least one of them")
    if all(values[key] == 0.0 for key in strength):
        first, *rest = strength
        raise CaseError(f"{path}.{first}: {_show(values[first])} with "
                        + ", ".join(f"{key} = {_show(values[key])}" for key in rest)
                        + f" is not allowed; a {model} layer needs strength: "
                        + " or ".join(f"{key} > 0" for key in strength))
    return Layer(**values)


def _read_layers(raw: Any, width: float, drawn: bool = False) -> tuple[Layer, ...]:
    """The [[layers]] tables, top to bottom, for a footing of width ``width`` (m)."""
    if raw is None:
        raise CaseError("layers: missing; required, at least one [[layers]] table (top to bottom)")
    if not isinstance(raw, list) or not raw:
        raise _not_allowed("layers", raw,
                           "an array of tables [[layers]], at least one (top to bottom)")
    if len(raw) > MAX_LAYERS:
        raise CaseError(f"layers: {len(raw)} [[layers]] tables is not allowed; must be at most {MAX_LAYERS}: "
                        "merge layers of like soil (each interface within reach is a line of the mesh)")
    layers = tuple(_read_layer(item, f"layers[{i}]", is_last=drawn or i == len(raw), width=width)
                   for i, item in enumerate(raw, 1))
    for i, layer in enumerate(layers, 1):
        if drawn and layer.thickness is not None:
            raise _not_allowed(f"layers[{i}].thickness", layer.thickness,
                               "left out with a [geometry] file: the drawing gives each layer's extent")
    seen: dict[str, int] = {}
    for i, layer in enumerate(layers, 1):
        # names that look the same are the same: surrounding spaces and Unicode
        # normalisation forms (a composed and a decomposed accent) do not tell layers apart
        same = unicodedata.normalize("NFC", layer.name.strip())
        if same in seen:
            why = "" if layers[seen[same] - 1].name == layer.name else ", but for spaces or the Unicode form"
            raise _not_allowed(f"layers[{i}].name", layer.name,
                               f"unique among layers (layers[{seen[same]}] has it too{why})")
        seen[same] = i
    return layers


def parse_case(data: dict, *, name: str = "case", source_sha256: str = "",
               base_dir: str | pathlib.Path | None = None) -> Case:
    """Check the keys of a case (as read from TOML) and return the :class:`Case`.

    Parameters
    ----------
    data : dict
        The case as nested dicts and lists, keys as in the case file.
    name : str
        Short name of the case (the case file's stem); also the default title.
    source_sha256 : str
        Hash of the case file's bytes, carried into reports.
    base_dir : str or Path, optional
        Folder that a relative ``geometry.file`` is read from (the case file's
        folder; default the working folder).

    Returns
    -------
    Case

    Raises
    ------
    CaseError
        On the first key that is unknown, missing, of the wrong type or out of range.

    Examples
    --------
    >>> case = parse_case({"footing": {"width": 2.0}, "layers": [
    ...     {"name": "clay", "model": "tresca", "unit_weight": 18, "undrained_strength": 40}]})
    >>> case.title, case.footing.base, case.layers[0].unit_weight, case.layers[0].thickness
    ('case', 'rough', 18.0, None)
    >>> parse_case({"footing": {"width": -1}, "layers": []})
    Traceback (most recent call last):
    ...
    solver.case.CaseError: footing.width: -1 is not allowed; must be a number >= 0.01 and <= 100 (m)
    """
    if not isinstance(data, dict):
        raise _not_allowed("case", data, "a table of keys")
    _check_keys(data, TOP_KEYS | dict.fromkeys(TABLES) | {"layers": None, "geometry": None}, "")
    title = _read_table({k: data[k] for k in TOP_KEYS if k in data}, TOP_KEYS, "")["title"]

    parts = {}
    for table, (cls, schema) in TABLES.items():
        raw = data.get(table)
        if raw is None and table in REQUIRED_TABLES:
            needs = ", ".join(k for k, spec in schema.items() if spec.default is REQUIRED)
            raise CaseError(f"{table}: missing; required table [{table}] (needs {needs})")
        if not isinstance(raw, dict | None):
            raise _not_allowed(table, raw, f"a table [{table}]")
        if raw is None and table in OPTIONAL_TABLES:
            parts[table] = None
            continue
        if table == "footing":
            schema = footing_schema(raw)
        # [footing] is read first; its own limits in widths once its width is known
        width = parts["footing"].width if "footing" in parts else _read_table(raw, schema, table)["width"]
        parts[table] = cls(**_read_table(raw or {}, schema, table, width=width))
    drawn = data.get("geometry") is not None
    layers = _read_layers(data.get("layers"), parts["footing"].width, drawn)
    ground = parts["ground"]
    if drawn:
        geometry = _read_geometry(data["geometry"], base_dir, parts, layers)
    elif ground.slope_angle == 0 and ground.crest_setback is not None:
        raise _not_allowed("ground.crest_setback", ground.crest_setback,
                           "left out on level ground: give it only with slope_angle > 0 (degrees)")
    parts["ground"] = dataclasses.replace(ground, crest_setback=ground.crest_setback or 0.0)
    if drawn:
        _check_consistency(parts["footing"], parts["ground"], layers)
        return Case(title=shown(name, 200) if title is None else title, layers=layers, name=name,
                    source_sha256=source_sha256, geometry=geometry, **parts)

    total = sum(layer.thickness for layer in layers[:-1]) + (layers[-1].thickness or math.inf)
    if parts["footing"].embedment >= total:
        raise _not_allowed("footing.embedment", parts["footing"].embedment,
                           f"< {total:g} (m), the total thickness of the layers, so that the "
                           "footing base sits in soil (or leave out the last layer's thickness)")
    _check_consistency(parts["footing"], parts["ground"], layers)
    _check_circle(parts)
    case = Case(title=shown(name, 200) if title is None else title, layers=layers, name=name,
                source_sha256=source_sha256, **parts)
    _check_strata(case)
    _check_model_extent(case)
    _check_circle_depths(case)
    return case


MAX_MODEL_WIDTHS = 1000  # [analysis] model_width and model_depth at most this many footing widths


def _check_model_extent(case: Case) -> None:
    """A model extent the user gives must hold the footing and the slope, and
    be at most MAX_MODEL_WIDTHS footing widths."""
    a, g, B = case.analysis, case.ground, case.footing.width
    if a.model_width is not None:
        toe = (B / 2 + g.crest_setback + g.slope_height / math.tan(math.radians(g.slope_angle))
               if g.slope_angle > 0 else 0.0)
        least, what = (2 * toe, "twice the distance from the footing's centre to the slope's toe") if toe \
            else (B, "the footing width")
        if a.model_width <= least:
            raise _not_allowed("analysis.model_width", a.model_width, f"> {least:g} (m), {what}")
    if a.model_depth is not None:
        # Interfaces may lie below the model: the lower bound's extension elements carry the
        # strata there (solver.lower.deep_strata); the upper bound holds the base fixed.
        least = g.slope_height or 0.0
        if a.model_depth <= least:
            raise _not_allowed("analysis.model_depth", a.model_depth,
                               f"> {least:g} (m below the footing base), so that the model holds the slope")
    for key, value in (("model_width", a.model_width), ("model_depth", a.model_depth)):
        if value is not None and value > MAX_MODEL_WIDTHS * B:
            raise _not_allowed(f"analysis.{key}", value,
                               f"<= {MAX_MODEL_WIDTHS * B:g} (m), {MAX_MODEL_WIDTHS} footing widths: no "
                               "mechanism reaches that far, and a larger model only spreads the elements thinner")


def _read_geometry(raw: Any, base_dir: str | pathlib.Path | None, parts: dict, layers: tuple[Layer, ...]):
    """[geometry]: refuse the keys a drawn site does not take, then read and check the
    drawing (solver.sitefile; gmsh is loaded only here)."""
    if not isinstance(raw, dict):
        raise _not_allowed("geometry", raw, "a table [geometry] with file = \"<site>.geo\" or \".msh\"")
    file = _read_table(raw, GEOMETRY_KEYS, "geometry")["file"]
    for key, unset, why in NOT_WITH_GEOMETRY:
        table, field_name = key.split(".")
        value = getattr(parts[table], field_name)
        if value != unset:
            raise _not_allowed(key, value, why)
    path = pathlib.Path(file)
    if not path.is_absolute():
        path = pathlib.Path(base_dir or ".") / path
    from .sitefile import read_site  # imports gmsh

    return read_site(path, layers, parts["footing"].width, where="geometry.file")


def _check_circle(parts: dict) -> None:
    """Refuse what a circular footing does not take in this version (NOT_WITH_CIRCLE)."""
    if parts["footing"].shape != "circular":
        return
    for key, unset, why in NOT_WITH_CIRCLE:
        table, field_name = key.split(".")
        value = getattr(parts[table], field_name)
        if value != unset:
            raise _not_allowed(key, value, why)


CIRCLE_DEEPEST_INTERFACE = 50  # footing widths below the base: deepest interface a circle's model holds


def _check_circle_depths(case: Case) -> None:
    """A circular footing's model holds every interface between strata that differ (the far
    field below its mesh carries the last meshed stratum only, solver.lower_axisym): one
    deeper than CIRCLE_DEEPEST_INTERFACE footing widths would make a model thousands of
    widths deep, and the model_depth a user gives must hold them all."""
    if case.footing.shape != "circular" or not case.required_interfaces():
        return
    deepest, B = case.required_interfaces()[-1], case.footing.width
    water = case.water_depth_below_base()
    key, value = (("ground.water_table", case.ground.water_table) if deepest == water
                  else ("layers", f"an interface {deepest + case.footing.embedment:g} m deep"))
    if deepest > CIRCLE_DEEPEST_INTERFACE * B:
        raise _not_allowed(key, value, f"within {CIRCLE_DEEPEST_INTERFACE} B ({CIRCLE_DEEPEST_INTERFACE * B:g} m) "
                           "below the base with shape = 'circular': this version meshes every interface under a "
                           "circle, and no mechanism of the footing reaches that deep; leave it out")
    depth = case.analysis.model_depth
    if depth is not None and depth <= deepest:
        raise _not_allowed("analysis.model_depth", depth, f"> {deepest:g} (m below the footing base) with "
                           "shape = 'circular': the model must hold every interface under a circle in this version")


def _check_strata(case: Case) -> None:
    """No band of soil below the base thinner than a layer may be: the footing base and the
    water table cut the layers into the bands the mesh resolves (Case.strata)."""
    factor = LAYER_KEYS["thickness"].ge_width
    thinnest = factor * case.footing.width
    water, base = case.water_depth_below_base(), case.footing.embedment
    for band in case.strata():
        if band.bottom - band.top >= thinnest:
            continue
        if water in (band.top, band.bottom):
            key, value = "ground.water_table", case.ground.water_table
            other = band.bottom if water == band.top else band.top
        else:
            key, value, other = "footing.embedment", base, band.bottom
        what = "the footing base" if other == 0.0 else "the water table" if other == water else "a layer interface"
        raise _not_allowed(key, value, f"{other + base:g} (m), {what}, or at least {thinnest:.4g} m ({factor:g} B) "
                                       "from it: a band of soil thinner than that is finer than the mesh resolves")


def _check_consistency(footing: Footing, ground: Ground, layers: tuple[Layer, ...]) -> None:
    """Rules that tie keys together (one line each, naming the key that breaks them)."""
    if abs(footing.eccentricity) >= footing.width / 2:
        raise _not_allowed("footing.eccentricity", footing.eccentricity,
                           f"between -{footing.width / 2:g} and {footing.width / 2:g} (m), inside the footing")
    if footing.load_inclination != 0 and footing.base == "smooth":
        raise _not_allowed("footing.load_inclination", footing.load_inclination,
                           "0 (degrees) under a smooth base: a smooth base carries no horizontal load")
    for key in ("required_factor_of_safety_on_load", "required_factor_of_safety_on_strength"):
        if getattr(footing, key) is not None and footing.design_load is None:
            raise _not_allowed(f"footing.{key}", getattr(footing, key),
                               "given together with footing.design_load (kN/m), the load it is checked against")
    if ground.slope_angle > 0 and ground.slope_height is None:
        raise CaseError(f"ground.slope_height: missing; required when slope_angle = "
                        f"{ground.slope_angle:g} > 0, must be {GROUND_KEYS['slope_height'].allowed}")
    if ground.slope_angle == 0 and ground.slope_height is not None:
        raise _not_allowed("ground.slope_height", ground.slope_height,
                           "left out on level ground: give it only with slope_angle > 0 (degrees)")
    if ground.slope_angle > 0 and footing.embedment > 0:
        raise _not_allowed("footing.embedment", footing.embedment,
                           "0 (m) next to a slope in this version: the embedment is modelled as a "
                           "surcharge on level ground")
    for i, layer in enumerate(layers, 1):
        if layer.saturated_unit_weight is not None and layer.saturated_unit_weight < layer.unit_weight:
            raise _not_allowed(f"layers[{i}].saturated_unit_weight", layer.saturated_unit_weight,
                               f">= unit_weight = {layer.unit_weight:g} (kN/m^3)")
        if layer.dilation_angle is not None and layer.dilation_angle > layer.friction_angle:
            raise _not_allowed(f"layers[{i}].dilation_angle", layer.dilation_angle,
                               f"<= friction_angle = {layer.friction_angle:g} (degrees)")


class NotRegularFile(OSError):
    """A path that is a FIFO, a device or a socket: reading it could block for ever or never end."""


_FILE_KINDS = ((stat.S_ISFIFO, "a named pipe (FIFO)"), (stat.S_ISCHR, "a character device"),
               (stat.S_ISBLK, "a block device"), (stat.S_ISSOCK, "a socket"))


def open_regular(path: str | pathlib.Path):
    """Open a file for reading in binary, refusing anything but a regular file before a
    byte is read: the open itself does not block (O_NONBLOCK, for a FIFO with no
    writer), and the kind is taken from the open file, so it cannot change in between.

    Raises FileNotFoundError, IsADirectoryError, NotRegularFile or another OSError.
    """
    flags = os.O_RDONLY | os.O_NONBLOCK | getattr(os, "O_NOCTTY", 0) | getattr(os, "O_CLOEXEC", 0)
    fd = os.open(path, flags)
    try:
        mode = os.fstat(fd).st_mode
        if stat.S_ISDIR(mode):
            raise IsADirectoryError(21, "Is a directory", str(path))
        if not stat.S_ISREG(mode):
            kind = next((name for test, name in _FILE_KINDS if test(mode)), "not a regular file")
            raise NotRegularFile(0, kind, str(path))
        os.set_blocking(fd, True)
        return os.fdopen(fd, "rb")
    except BaseException:
        os.close(fd)
        raise


def read_toml_file(path: str | pathlib.Path, what: str = "case file") -> tuple[dict | None, bytes]:
    """Read a small TOML file (UTF-8, at most 1 MB): (its tables, or None when it is
    blank, and its bytes). Every problem with the file is one CaseError line
    naming the file; ``what`` names the kind of file in those lines."""
    where = shown(path, 200)
    try:
        path = pathlib.Path(path)
        with open_regular(path) as stream:
            raw = stream.read(MAX_FILE_BYTES + 1)  # never read more than the limit
    except FileNotFoundError:
        raise CaseError(f"{where}: no such {what}") from None
    except IsADirectoryError:
        raise CaseError(f"{where}: is a directory; must be a {what} (TOML)") from None
    except NotRegularFile as exc:
        raise CaseError(f"{where}: is {exc.strerror}, not a file; must be a {what} (TOML)") from None
    except (OSError, TypeError, ValueError) as exc:  # permissions, bad path type, NUL in the path
        raise CaseError(f"{where}: cannot read the {what} ({shown(' '.join(str(exc).split()), 200)})") from None
    if len(raw) > MAX_FILE_BYTES:
        raise CaseError(f"{where}: larger than 1 MB; a {what} is short TOML text, "
                        "is this the right file?")
    if b"\0" in raw:
        raise CaseError(f"{where}: binary data (NUL bytes); must be a TOML text file")
    try:
        text = raw.decode("utf-8-sig")  # tolerate the byte-order mark some editors write
    except UnicodeDecodeError as exc:
        line = raw[:exc.start].count(b"\n") + 1
        raise CaseError(f"{where}: not UTF-8 text (bad byte at line {line}); "
                        f"save the {what} as UTF-8") from None
    if not text.strip():
        return None, raw
    try:
        return tomllib.loads(text), raw
    except tomllib.TOMLDecodeError as exc:
        raise CaseError(f"{where}: not valid TOML: {shown(' '.join(str(exc).split()), 200)}") from None
    except RecursionError:  # tomllib reads nested arrays and tables recursively
        raise CaseError(f"{where}: arrays or tables nested too deeply; a {what} nests a few levels") from None


def load_case(path: str | pathlib.Path) -> Case:
    """Read a case file (TOML, UTF-8, at most 1 MB) and return the checked :class:`Case`.

    The case name is the file's stem and ``source_sha256`` the SHA-256 of its bytes.
    Any problem with the file or its keys raises :class:`CaseError` (one line).
    """
    data, raw = read_toml_file(path)
    path = pathlib.Path(path)
    if data is None:
        raise CaseError(f"{shown(path, 200)}: the file is empty; a case needs a [footing] table "
                        "and at least one [[layers]] table")
    return parse_case(data, name=path.stem, source_sha256=hashlib.sha256(raw).hexdigest(),
                      base_dir=path.parent)


def case_to_dict(case: Case) -> dict:
    """The case as the nested dict a case file holds; the inverse of :func:`parse_case`.

    Every key is written, defaults included, except those whose value is None
    (not given, such as the last layer's thickness); a layer holds only its
    model's keys. ``name`` and ``source_sha256`` are not
    case-file keys: pass them to :func:`parse_case` again to get an equal Case.

    >>> case = parse_case({"footing": {"width": 1.5}, "layers": [
    ...     {"name": "sand", "model": "mohr-coulomb", "unit_weight": 19, "friction_angle": 32}]})
    >>> sand = case_to_dict(case)["layers"][0]
    >>> sand["friction_angle"], sand["cohesion"], "thickness" in sand
    (32.0, 0.0, False)
    >>> parse_case(case_to_dict(case)) == case
    True
    """
    def keys_of(obj: Any, schema: dict[str, Key]) -> dict[str, Any]:
        # None means "not given" (TOML has no null), so it is left out.
        return {key: getattr(obj, key) for key in schema if getattr(obj, key) is not None}

    out: dict[str, Any] = {"title": case.title}
    for table, (_, schema) in TABLES.items():  # the footing's keys are the same for both shapes
        if getattr(case, table) is not None:
            out[table] = keys_of(getattr(case, table), schema)
    if case.ground.slope_angle == 0:
        out["ground"].pop("crest_setback")  # no crest on level ground: a key given there is refused
    out["layers"] = [keys_of(layer, LAYER_KEYS | MODEL_KEYS[layer.model]) for layer in case.layers]
    if case.geometry is not None:
        out["geometry"] = {"file": case.geometry.file}  # absolute: reads the same file from anywhere
    return out
