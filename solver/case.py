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

import difflib
import hashlib
import math
import numbers
import operator
import pathlib
import tomllib
from dataclasses import dataclass
from typing import Any

from solver.model import WATER_UNIT_WEIGHT, Analysis, Case, Factors, Footing, Ground, Layer

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

    def why_outside(self, value: Any) -> str:
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
        low = (self.gt is not None and number <= self.gt) or (self.ge is not None and number < self.ge)
        high = (self.lt is not None and number >= self.lt) or (self.le is not None and number > self.le)
        return self.below if low else self.above if high else ""

    @property
    def allowed(self) -> str:
        """What the key may hold, phrased to follow 'must be'."""
        if self.choices:
            return "one of " + ", ".join(repr(c) for c in self.choices)
        if self.kind is str:
            return f"a non-empty one-line string of at most {self.max_len} characters"
        limits = " and ".join(f"{sym} {getattr(self, op):g}" for op, sym, _ in _BOUNDS
                              if getattr(self, op) is not None)
        return " ".join(filter(None, (_KIND[self.kind], limits, self.unit and f"({self.unit})")))

    def read(self, value: Any) -> Any:
        """Return ``value`` as a clean Python value, or raise ValueError if not allowed."""
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
        return value


# -- the schema: one line per key ---------------------------------------------

TOP_KEYS = {"title": Key(str, default=None)}  # None: the case name
FOOTING_KEYS = {
    "width": Key(float, "m", gt=0),
    "base": Key(str, choices=("rough", "smooth"), default="rough"),
    "embedment": Key(float, "m", ge=0, default=0.0),
    "load_inclination": Key(float, "degrees from vertical", gt=-90, lt=90, default=0.0),
    "eccentricity": Key(float, "m", default=0.0),
    "design_load": Key(float, "kN/m", gt=0, default=None),
    "shape": Key(str, choices=("strip", "circular"), default="strip"),  # circular: width = diameter
}
GROUND_KEYS = {
    "surcharge": Key(float, "kPa", ge=0, default=0.0),
    "water_table": Key(float, "m below the ground surface", ge=0, default=None,
                       below="; a negative depth puts the water table above the ground surface "
                               "(standing water over the soil), which this version does not model"),
    "slope_angle": Key(float, "degrees", ge=0, lt=90, default=0.0,
                       above="; 90 degrees or more is a vertical or overhanging face, "
                               "which this version does not model"),
    "crest_setback": Key(float, "m", ge=0, default=0.0),
    "slope_height": Key(float, "m", gt=0, default=None),
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
    "target_gap": Key(float, "fraction, e.g. 0.01 for 1 %", gt=0, lt=1, default=None),
    "max_steps": Key(int, ge=1, le=20, default=6),
    "time_limit_s": Key(float, "s", gt=0, le=86400, default=600.0),
    "velocity_jumps": Key(str, choices=("none", "all"), default="none"),
}
# Strength keys of each soil model; a layer holds the keys of its own model only.
MODEL_KEYS = {
    "mohr-coulomb": {
        "cohesion": Key(float, "kPa", ge=0, default=0.0),
        "friction_angle": Key(float, "degrees", ge=0, lt=90, default=0.0),
        "dilation_angle": Key(float, "degrees", ge=0, lt=90, default=None),
    },
    "tresca": {
        "undrained_strength": Key(float, "kPa", ge=0),
        "strength_gradient": Key(float, "kPa/m", ge=0, default=0.0),
    },
}
# The keys that give a layer its strength (one of them must be > 0).
STRENGTH_KEYS = {"mohr-coulomb": ("cohesion", "friction_angle"),
                 "tresca": ("undrained_strength", "strength_gradient")}
LAYER_KEYS = {
    "name": Key(str, max_len=80),
    # None: runs down to the model base; allowed on the last layer only.
    "thickness": Key(float, "m", gt=0, default=None),
    "model": Key(str, choices=tuple(MODEL_KEYS)),
    "unit_weight": Key(float, "kN/m^3", ge=0, le=30),  # 30: sanity limit, catches N/m^3 or kg/m^3
    "saturated_unit_weight": Key(float, "kN/m^3", ge=WATER_UNIT_WEIGHT, le=30, default=None),
}
# The tables holding one dataclass each: key in the file -> (dataclass, schema).
TABLES = {"footing": (Footing, FOOTING_KEYS), "ground": (Ground, GROUND_KEYS),
          "analysis": (Analysis, ANALYSIS_KEYS), "factors": (Factors, FACTORS_KEYS)}
OPTIONAL_TABLES = ("factors",)  # absent: None in the Case
REQUIRED_TABLES = ("footing",)
# [geometry]: the user's own drawing of the site (solver.sitefile); the path is relative to the case file.
GEOMETRY_KEYS = {"file": Key(str, "a gmsh .geo script or .msh mesh", max_len=1000)}
# Keys a drawn site does not take in this version: (key path, value when not given, why).
NOT_WITH_GEOMETRY = (
    ("footing.embedment", 0.0, "0 (m) with a [geometry] file: draw the soil beside the footing instead"),
    ("ground.water_table", None, "left out with a [geometry] file: this version takes no water table "
                                 "with a drawn site"),
    ("ground.slope_angle", 0.0, "left out with a [geometry] file: draw the slope instead"),
    ("ground.crest_setback", 0.0, "left out with a [geometry] file: draw the slope instead"),
    ("ground.slope_height", None, "left out with a [geometry] file: draw the slope instead"),
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
    ("footing.design_load", None, "left out with shape = 'circular': this version gives factors of "
                                  "safety for strip footings only"),
    ("analysis.velocity_jumps", "none", "'none' with shape = 'circular': velocity jumps are built for "
                                        "strip footings only"),
)


# -- reading ------------------------------------------------------------------

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
            where = f"{path}.{key}" if path else str(key)
            if foreign and key in foreign:
                raise CaseError(f"{where}: {foreign[key]}")
            raise CaseError(f"{where}: unknown key; {_did_you_mean(str(key), list(allowed))}")


def _read_table(table: dict, schema: dict[str, Key], path: str,
                foreign: dict[str, str] | None = None) -> dict[str, Any]:
    """Check ``table`` against ``schema``; return every schema key's value (defaults filled)."""
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
            values[key] = spec.read(table[key])
        except ValueError:
            close = difflib.get_close_matches(table[key], spec.choices, n=1) \
                if spec.choices and isinstance(table[key], str) else []
            hint = f" (did you mean {close[0]!r}?)" if close else ""
            hint = spec.why_outside(table[key]) or hint
            raise _not_allowed(where, table[key], spec.allowed, hint) from None
    return values


def _read_layer(raw: Any, path: str, is_last: bool) -> Layer:
    if not isinstance(raw, dict):
        raise _not_allowed(path, raw, "a table [[layers]] of layer keys")
    model = _read_table({"model": raw["model"]} if "model" in raw else {},
                        {"model": LAYER_KEYS["model"]}, path)["model"]
    schema = LAYER_KEYS | MODEL_KEYS[model]
    foreign = {key: f"not a {model} key; it belongs to model = {other!r} "
                    f"({model} takes {', '.join(MODEL_KEYS[model])})"
               for other, keys in MODEL_KEYS.items() if other != model for key in keys}
    values = _read_table(raw, schema, path, foreign)

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


def _read_layers(raw: Any, drawn: bool = False) -> tuple[Layer, ...]:
    if raw is None:
        raise CaseError("layers: missing; required, at least one [[layers]] table (top to bottom)")
    if not isinstance(raw, list) or not raw:
        raise _not_allowed("layers", raw,
                           "an array of tables [[layers]], at least one (top to bottom)")
    layers = tuple(_read_layer(item, f"layers[{i}]", is_last=drawn or i == len(raw))
                   for i, item in enumerate(raw, 1))
    for i, layer in enumerate(layers, 1):
        if drawn and layer.thickness is not None:
            raise _not_allowed(f"layers[{i}].thickness", layer.thickness,
                               "left out with a [geometry] file: the drawing gives each layer's extent")
    seen: dict[str, int] = {}
    for i, layer in enumerate(layers, 1):
        if layer.name in seen:
            raise _not_allowed(f"layers[{i}].name", layer.name,
                               f"unique among layers (layers[{seen[layer.name]}] has it too)")
        seen[layer.name] = i
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
    solver.case.CaseError: footing.width: -1 is not allowed; must be a number > 0 (m)
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
        parts[table] = cls(**_read_table(raw or {}, schema, table))
    drawn = data.get("geometry") is not None
    layers = _read_layers(data.get("layers"), drawn)
    if drawn:
        geometry = _read_geometry(data["geometry"], base_dir, parts, layers)
        _check_consistency(parts["footing"], parts["ground"], layers)
        return Case(title=name if title is None else title, layers=layers, name=name,
                    source_sha256=source_sha256, geometry=geometry, **parts)

    total = sum(layer.thickness for layer in layers[:-1]) + (layers[-1].thickness or math.inf)
    if parts["footing"].embedment >= total:
        raise _not_allowed("footing.embedment", parts["footing"].embedment,
                           f"< {total:g} (m), the total thickness of the layers, so that the "
                           "footing base sits in soil (or leave out the last layer's thickness)")
    _check_consistency(parts["footing"], parts["ground"], layers)
    _check_circle(parts)
    return Case(title=name if title is None else title, layers=layers, name=name,
                source_sha256=source_sha256, **parts)


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
    if parts["factors"] is not None:
        raise CaseError("factors: not allowed with shape = 'circular'; leave [factors] out: this "
                        "version gives factors of safety for strip footings only")


def _check_consistency(footing: Footing, ground: Ground, layers: tuple[Layer, ...]) -> None:
    """Rules that tie keys together (one line each, naming the key that breaks them)."""
    if abs(footing.eccentricity) >= footing.width / 2:
        raise _not_allowed("footing.eccentricity", footing.eccentricity,
                           f"between -{footing.width / 2:g} and {footing.width / 2:g} (m), inside the footing")
    if footing.load_inclination != 0 and footing.base == "smooth":
        raise _not_allowed("footing.load_inclination", footing.load_inclination,
                           "0 (degrees) under a smooth base: a smooth base carries no horizontal load")
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


def read_toml_file(path: str | pathlib.Path, what: str = "case file") -> tuple[dict | None, bytes]:
    """Read a small TOML file (UTF-8, at most 1 MB): (its tables, or None when it is
    blank, and its bytes). Every problem with the file is one CaseError line
    naming the file; ``what`` names the kind of file in those lines."""
    try:
        path = pathlib.Path(path)
        with path.open("rb") as stream:
            raw = stream.read(MAX_FILE_BYTES + 1)  # never read more than the limit
    except FileNotFoundError:
        raise CaseError(f"{path}: no such {what}") from None
    except IsADirectoryError:
        raise CaseError(f"{path}: is a directory; must be a {what} (TOML)") from None
    except (OSError, TypeError, ValueError) as exc:  # permissions, bad path type, NUL in the path
        where = str(path) if str(path).isprintable() else _show(str(path))
        reason = " ".join(str(exc).split())
        raise CaseError(f"{where}: cannot read the {what} ({reason})") from None
    if len(raw) > MAX_FILE_BYTES:
        raise CaseError(f"{path}: larger than 1 MB; a {what} is short TOML text, "
                        "is this the right file?")
    if b"\0" in raw:
        raise CaseError(f"{path}: binary data (NUL bytes); must be a TOML text file")
    try:
        text = raw.decode("utf-8-sig")  # tolerate the byte-order mark some editors write
    except UnicodeDecodeError as exc:
        line = raw[:exc.start].count(b"\n") + 1
        raise CaseError(f"{path}: not UTF-8 text (bad byte at line {line}); "
                        f"save the {what} as UTF-8") from None
    if not text.strip():
        return None, raw
    try:
        return tomllib.loads(text), raw
    except tomllib.TOMLDecodeError as exc:
        raise CaseError(f"{path}: not valid TOML: {' '.join(str(exc).split())}") from None


def load_case(path: str | pathlib.Path) -> Case:
    """Read a case file (TOML, UTF-8, at most 1 MB) and return the checked :class:`Case`.

    The case name is the file's stem and ``source_sha256`` the SHA-256 of its bytes.
    Any problem with the file or its keys raises :class:`CaseError` (one line).
    """
    data, raw = read_toml_file(path)
    path = pathlib.Path(path)
    if data is None:
        raise CaseError(f"{path}: the file is empty; a case needs a [footing] table "
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
    for table, (_, schema) in TABLES.items():
        if getattr(case, table) is not None:
            out[table] = keys_of(getattr(case, table), schema)
    out["layers"] = [keys_of(layer, LAYER_KEYS | MODEL_KEYS[layer.model]) for layer in case.layers]
    if case.geometry is not None:
        out["geometry"] = {"file": case.geometry.file}  # absolute: reads the same file from anywhere
    return out
