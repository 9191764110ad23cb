"""The user's own site: a gmsh drawing (a .geo script or a .msh mesh) -> a checked Mesh.

The convention (meshes/README.md has it for users):

* Coordinates in m, x to the right and y up, any origin. Each **surface
  group** (``Physical Surface("name")``) is one layer, matched by name to a
  ``[[layers]]`` table. Each **curve group** marks one kind of boundary:
  ``"footing"`` (one straight horizontal stretch, soil below it),
  ``"ground"`` (free ground surface), ``"fixed"`` (a rigid boundary the soil
  is bonded to, such as a rock head: no movement in the upper bound, any
  traction in the lower bound), ``"far side"`` (straight vertical lines on the
  model's leftmost or rightmost x) and ``"far base"`` (straight horizontal
  lines on its lowest y). Beyond a far side or base the ground, the layers and
  any fixed boundary continue unchanged to infinity: the lower bound carries
  that half-space with its extension elements, the upper bound holds the far
  boundary still (which only restricts it). Every curve on the outline of the
  soil is in exactly one curve group; curves inside the soil are in none.
* The solver works from the footing: its coordinates are shifted so that the
  footing's centre is x = 0 and the footing level is y = 0 (solver.mesh's
  convention). Depth is measured down from the footing level. A layer's
  ``undrained_strength`` is su at the layer's highest point (its top level)
  and rises by ``strength_gradient`` per m of depth below that level.
* The surcharge of ``[ground]`` acts on ground at the footing's level only
  (as in solver.ground.surcharge_on_edges), and on the level ground that the
  lower bound's far field continues from there; ground above or below that
  level is free.
* Mesh size: a .geo is meshed at about ``[analysis] elements`` triangles, graded
  from the footing's ends; a point given a size (``Point(n) = {x, y, 0, size}``
  or ``MeshSize {...} = size``) refines the mesh round it the same way. A .msh
  is used as given: its triangles for both bounds (straight-sided 6-node ones
  for the upper bound).

A .geo script is a program (gmsh's language can call the shell, include and
write files). This module never hands the user's text to gmsh: it parses a
declared subset itself (``GEO_SUBSET``), refuses anything else with the
reason, and builds the drawing through gmsh's API from the parsed numbers. A
.msh file is data; it is copied into a private temporary folder (so that gmsh
finds no option file next to it) and read there.
"""
from __future__ import annotations

import difflib
import hashlib
import math
import pathlib
import re
import tempfile
from dataclasses import dataclass, field

import numpy as np

from .case import CaseError, NotRegularFile, open_regular, shown
from .mesh import (_GMSH_LOCK, FAR_BASE, FAR_SIDE, FIXED, FOOTING, GROUND, Domain, Mesh, _second_order,
                   _start_gmsh)
from .model import Case, Geometry, Layer

GEO_MAX_BYTES = 1_000_000  # a drawn site is a few hundred lines
MSH_MAX_BYTES = 200_000_000
BOUNDARY_GROUPS = {"footing": FOOTING, "ground": GROUND, "fixed": FIXED, "far side": FAR_SIDE,
                   "far base": FAR_BASE}
GROUP_OF_KIND = {kind: name for name, kind in BOUNDARY_GROUPS.items()}
GEO_SUBSET = ("Point, Line, Circle, Curve Loop (or Line Loop), Plane Surface, Physical Curve (or Physical "
              "Line), Physical Surface, MeshSize (or Characteristic Length), variables (name = expression;), "
              "numbers, + - * / ^ ( ), Pi and the functions " )
FUNCTIONS = {"Sqrt": (1, math.sqrt), "Sin": (1, math.sin), "Cos": (1, math.cos), "Tan": (1, math.tan),
             "Asin": (1, math.asin), "Acos": (1, math.acos), "Atan": (1, math.atan), "Atan2": (2, math.atan2),
             "Exp": (1, math.exp), "Log": (1, math.log), "Abs": (1, abs), "Fabs": (1, abs),
             "Hypot": (2, math.hypot), "Min": (2, min), "Max": (2, max)}
GEO_SUBSET += ", ".join(FUNCTIONS) + "; comments // and /* */"
# Words of gmsh's language with effects outside the drawing: refused with the reason.
# (Everything outside GEO_SUBSET is refused anyway; these get a plainer message.)
_REASONS = {
    **dict.fromkeys(("SystemCall", "Shell"), "it runs a command on this machine"),
    **dict.fromkeys(("OnelabRun", "OnelabAction", "NonBlockingSystemCall"), "it runs another program"),
    **dict.fromkeys(("Include", "Merge", "MergeWithBoundingBox", "Open", "Dlmread", "ReadFile"),
                    "it reads another file"),
    **dict.fromkeys(("Printf", "Print", "Save", "SendToServer"), "it writes files or sends data"),
    **dict.fromkeys(("Delete", "DeleteFile", "RenameFile", "CreateDir", "CreateDirectory"),
                    "it deletes, renames or creates files"),
    **dict.fromkeys(("Call", "Macro", "Function", "Return", "For", "EndFor", "If", "ElseIf", "Else", "EndIf"),
                    "macros, loops and branches are not in the declared subset"),
    **dict.fromkeys(("Field", "Background"), "mesh-size fields are set by the program itself"),
    **dict.fromkeys(("Plugin",), "it runs a gmsh plugin (some write files)"),
    **dict.fromkeys(("Exit", "Abort", "Sleep", "Error", "Warning"), "it stops, pauses or signals the program"),
    **dict.fromkeys(("GetEnv", "GetString", "GetValue", "GetNumber", "SetString", "SetNumber", "DefineNumber",
                     "DefineString", "Sprintf", "StrCat", "Str"), "it reads the environment or builds strings"),
}
_ELEMENT_KINDS = {2: 3, 9: 6}  # gmsh element type -> nodes, triangles of first and second order
_LINE_KINDS = {1: 2, 8: 3}
REL_TOL = 1e-7  # geometric checks, relative to the model's size
MAX_COORDINATE = 1e6  # m; a site is at most a few hundred m across
MAX_SIZED_POINTS = 50  # points that may carry a mesh size (each is a term of the size field)
# A drawn site is tens to hundreds of entities. The caps keep what the reader builds small
# whatever the file says: ranges a:b in many lists once made gigabytes from a 1 MB file.
MAX_ENTITIES = 5000  # points, curves, curve loops, surfaces: each
MAX_LIST = 10_000  # tags in one {...} list, ranges expanded
MAX_LIST_TOTAL = 100_000  # tags in all lists of the file together
MIDSIDE_TOL = 1e-6  # a .msh midside node this far (relative to the edge) off its edge's midpoint is curved
# Element size h = s (SIZE_EDGE B + SIZE_GRADING r), r from the nearer footing end, s set for the
# element target. Measured on the Prandtl case drawn as a site (weightless Tresca, exact 2 + pi,
# Prandtl 1920) at 2k triangles: (0.002, 0.15) gave a 3.0 % gap (-1.3 % / +1.7 %), (0.02, 0.2)
# 5.4 %, (0.005, 0.15) 3.0 %, (0.01, 0.25) 4.4 %; the same values as solver.mesh's plain grading.
SIZE_EDGE, SIZE_GRADING = 0.002, 0.15


# -- the .geo subset ----------------------------------------------------------------------------------

class _GeoError(Exception):
    def __init__(self, line: int, message: str) -> None:
        super().__init__(message)
        self.line = line


@dataclass
class Drawing:
    """A .geo drawing as parsed: entities by their tags, with the line that defined each."""

    points: dict[int, tuple[float, float, float]] = field(default_factory=dict)  # x, y (m), size (m, 0: none)
    curves: dict[int, tuple[str, tuple[int, ...]]] = field(default_factory=dict)  # "line" | "arc", point tags
    loops: dict[int, tuple[int, ...]] = field(default_factory=dict)  # signed curve tags
    surfaces: dict[int, tuple[int, ...]] = field(default_factory=dict)  # loop tags, outer first
    curve_groups: dict[str, tuple[int, ...]] = field(default_factory=dict)
    surface_groups: dict[str, tuple[int, ...]] = field(default_factory=dict)
    lines: dict[tuple[str, int], int] = field(default_factory=dict)  # (kind, tag) or ("group", name) -> line


_TOKEN = re.compile(r"""(?P<space>[ \t\r\n\f]+)|(?P<comment>//[^\n]*|/\*.*?\*/)
    |(?P<number>(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?)|(?P<name>[A-Za-z_][A-Za-z0-9_]*)
    |(?P<string>"[^"\\\n]*")|(?P<symbol>[{}()\[\],;=+\-*/^:.])""", re.VERBOSE | re.DOTALL)


def _tokens(text: str) -> list[tuple[str, str, int]]:
    """(kind, text, line) of every token; comments and white space dropped."""
    out, pos, line = [], 0, 1
    while pos < len(text):
        if text.startswith("/*", pos) and "*/" not in text[pos + 2:]:
            raise _GeoError(line, "a /* comment is never closed")
        match = _TOKEN.match(text, pos)
        if match is None:
            char = text[pos]
            what = "a string may hold only plain characters (no \\ and no line break)" if char == '"' \
                else f"character {char!r} is not allowed in a site file"
            raise _GeoError(line, f"{what}; the declared subset is {GEO_SUBSET}")
        kind = match.lastgroup
        if kind not in ("space", "comment"):
            out.append((kind, match.group(), line))
        line += match.group().count("\n")
        pos = match.end()
    return out


class _Parser:
    """Recursive descent over the declared subset; evaluates numbers as it goes."""

    def __init__(self, tokens: list[tuple[str, str, int]]) -> None:
        self.tokens, self.pos = tokens, 0
        self.listed = 0  # tags in all lists so far (MAX_LIST_TOTAL)
        self.variables: dict[str, float] = {"Pi": math.pi}
        self.drawing = Drawing()

    # token helpers
    def peek(self, ahead: int = 0) -> tuple[str, str, int]:
        i = self.pos + ahead
        return self.tokens[i] if i < len(self.tokens) else ("end", "end of file", self.tokens[-1][2] if self.tokens else 1)

    def take(self) -> tuple[str, str, int]:
        token = self.peek()
        self.pos += 1
        return token

    def expect(self, text: str, after: str) -> None:
        kind, got, line = self.take()
        if got != text or kind not in ("symbol", "name"):
            raise _GeoError(line, f"expected '{text}' {after}, found '{got}'")

    def at(self, text: str) -> bool:
        return self.peek()[1] == text and self.peek()[0] in ("symbol", "name")

    # expressions: + - * / ^, unary signs, Pi, variables, FUNCTIONS
    def expression(self) -> float:
        line = self.peek()[2]
        value = self.sum()
        if not math.isfinite(value):
            raise _GeoError(line, "the expression gives no finite number")
        return value

    def sum(self) -> float:
        value = self.term()
        while self.at("+") or self.at("-"):
            op = self.take()[1]
            value = value + self.term() if op == "+" else value - self.term()
        return value

    def term(self) -> float:
        value = self.unary()
        while self.at("*") or self.at("/"):
            op, line = self.take()[1], self.peek()[2]
            right = self.unary()
            if op == "/" and right == 0.0:
                raise _GeoError(line, "division by zero")
            value = value * right if op == "*" else value / right
        return value

    def unary(self) -> float:
        if self.at("-"):
            self.take()
            return -self.unary()
        if self.at("+"):
            self.take()
            return self.unary()
        return self.power()

    def power(self) -> float:
        base = self.atom()
        if self.at("^"):
            line = self.take()[2]
            try:
                value = float(base) ** self.unary()
            except (OverflowError, ZeroDivisionError):
                raise _GeoError(line, "a power overflows or divides by zero") from None
            if isinstance(value, complex) or not math.isfinite(value):
                raise _GeoError(line, "a power gives no real finite number")
            return value
        return base

    def atom(self) -> float:
        kind, text, line = self.take()
        if kind == "number":
            value = float(text)
            if not math.isfinite(value):
                raise _GeoError(line, f"number {text} is too large")
            return value
        if text == "(" and kind == "symbol":
            value = self.expression()
            self.expect(")", "to close '('")
            return value
        if kind == "name":
            if text in FUNCTIONS:
                arity, function = FUNCTIONS[text]
                self.expect("(", f"after {text}")
                args = [self.expression()]
                while len(args) < arity:
                    self.expect(",", f"between the arguments of {text}")
                    args.append(self.expression())
                self.expect(")", f"to close {text}(")
                try:
                    value = float(function(*args))
                except (ValueError, OverflowError):
                    raise _GeoError(line, f"{text} of {', '.join(f'{a:g}' for a in args)} is not defined") from None
                return value
            if text in self.variables:
                return self.variables[text]
            if text in _REASONS:
                raise _GeoError(line, f"'{text}' is not allowed in a site file: {_REASONS[text]}")
            raise _GeoError(line, f"'{text}' is not defined (a variable must be set before it is used)")
        raise _GeoError(line, f"expected a number, found '{text}'")

    def tag(self, what: str) -> int:
        line = self.peek()[2]
        value = self.expression()
        if value != int(value) or value < 1 or value >= 2**31:
            raise _GeoError(line, f"{what} tag {value:g} is not allowed; must be a whole number >= 1")
        return int(value)

    def tag_list(self, what: str, signed: bool = False) -> list[int]:
        """{a, b, c:d, -e}: tags (signed ones keep their sign)."""
        self.expect("{", f"to open the list of {what}s")
        out: list[int] = []
        while not self.at("}"):
            line = self.peek()[2]
            first = self.expression()
            values = [first]
            if self.at(":"):
                self.take()
                last = self.expression()
                if first != int(first) or last != int(last) or last < first:
                    raise _GeoError(line, f"range {first:g}:{last:g} is not allowed; must be whole numbers a:b, a <= b")
                if len(out) + last - first + 1 > MAX_LIST:
                    raise _GeoError(line, f"range {first:g}:{last:g} is not allowed; a list holds at most {MAX_LIST} "
                                          "tags")
                values = list(range(int(first), int(last) + 1))
            if len(out) + len(values) > MAX_LIST:
                raise _GeoError(line, f"the list of {what}s is too long; a list holds at most {MAX_LIST} tags")
            self.listed += len(values)
            if self.listed > MAX_LIST_TOTAL:
                raise _GeoError(line, f"the lists of the file hold more than {MAX_LIST_TOTAL} tags together; "
                                      "a site drawing has tens to hundreds of entities")
            for value in values:
                if value != int(value) or value == 0 or (value < 0 and not signed) or abs(value) >= 2**31:
                    raise _GeoError(line, f"{what} tag {value:g} is not allowed; must be a whole number >= 1"
                                    + (" (a minus sign reverses a curve)" if signed else ""))
                out.append(int(value))
            if not self.at("}"):
                self.expect(",", f"between {what} tags")
        self.take()
        return out

    def numbers(self, after: str) -> list[float]:
        self.expect("{", after)
        out = [self.expression()]
        while self.at(","):
            self.take()
            out.append(self.expression())
        self.expect("}", "to close the list")
        return out

    # statements
    def parse(self) -> Drawing:
        while self.peek()[0] != "end":
            self.statement()
        if sum(pt[2] > 0 for pt in self.drawing.points.values()) > MAX_SIZED_POINTS:
            raise _GeoError(self.peek()[2], f"more than {MAX_SIZED_POINTS} points carry a mesh size; the program "
                                            "grades the mesh from the footing itself, sizes are for a few local "
                                            "refinements")
        return self.drawing

    def statement(self) -> None:
        kind, word, line = self.take()
        if kind != "name":
            raise _GeoError(line, f"a statement cannot start with '{word}'; the declared subset is {GEO_SUBSET}")
        if word in _REASONS:
            raise _GeoError(line, f"'{word}' is not allowed in a site file: {_REASONS[word]}")
        two = word + " " + self.peek()[1]
        if two in ("Curve Loop", "Line Loop", "Plane Surface", "Physical Curve", "Physical Line",
                   "Physical Surface", "Characteristic Length"):
            self.take()
            word = two
        d, at_line = self.drawing, line
        if word in ("Point", "Line", "Circle", "Curve Loop", "Line Loop", "Plane Surface"):
            self.expect("(", f"after {word}")
            tag = self.tag(word)
            self.expect(")", f"after the tag of {word}")
            self.expect("=", f"after {word}({tag})")
            if word == "Point":
                xyz = self.numbers(f"after Point({tag}) =")
                if len(xyz) not in (3, 4):
                    raise _GeoError(line, f"Point({tag}) needs {{x, y, z}} or {{x, y, z, size}}")
                if xyz[2] != 0.0:
                    raise _GeoError(line, f"Point({tag}) has z = {xyz[2]:g}; the site is drawn in the plane z = 0")
                if max(abs(xyz[0]), abs(xyz[1])) > MAX_COORDINATE:
                    raise _GeoError(line, f"Point({tag}) is at ({xyz[0]:g}, {xyz[1]:g}); coordinates must be "
                                          f"within +-{MAX_COORDINATE:g} m")
                size = xyz[3] if len(xyz) == 4 else 0.0
                if size < 0:
                    raise _GeoError(line, f"Point({tag}) has size {size:g}; must be >= 0 (m, 0: none)")
                self._new("point", tag, line, d.points)
                d.points[tag] = (xyz[0], xyz[1], size)
            elif word in ("Line", "Circle"):
                ends = self.tag_list("point")
                need = 2 if word == "Line" else 3
                if len(ends) != need:
                    raise _GeoError(line, f"{word}({tag}) needs {need} points"
                                    + (" {start, centre, end}" if word == "Circle" else " {start, end}"))
                for p in ends:
                    if p not in d.points:
                        raise _GeoError(line, f"{word}({tag}) uses point {p}, which is not defined above")
                self._check_curve(word, tag, ends, line)
                self._new("curve", tag, line, d.curves)
                d.curves[tag] = ("line" if word == "Line" else "arc", tuple(ends))
            elif word in ("Curve Loop", "Line Loop"):
                curves = self.tag_list("curve", signed=True)
                for c in curves:
                    if abs(c) not in d.curves:
                        raise _GeoError(line, f"{word}({tag}) uses curve {abs(c)}, which is not defined above")
                self._check_loop(word, tag, curves, line)
                self._new("loop", tag, line, d.loops)
                d.loops[tag] = tuple(curves)
            else:
                loops = self.tag_list("curve loop")
                for loop in loops:
                    if loop not in d.loops:
                        raise _GeoError(line, f"Plane Surface({tag}) uses curve loop {loop}, which is not defined above")
                if not loops:
                    raise _GeoError(line, f"Plane Surface({tag}) needs at least one curve loop")
                self._new("surface", tag, line, d.surfaces)
                d.surfaces[tag] = tuple(loops)
        elif word in ("Physical Curve", "Physical Line", "Physical Surface"):
            self.expect("(", f"after {word}")
            kind_, name, _ = self.take()
            if kind_ != "string":
                raise _GeoError(line, f'{word} needs a name in quotes, e.g. {word}("ground") = {{...}}; '
                                      "the names are the convention of meshes/README.md")
            name = name[1:-1]
            if not name.strip() or not name.isprintable() or len(name) > 80:
                raise _GeoError(line, f"group name {name!r} is not allowed; must be a one-line name of 1 to 80 characters")
            if self.at(","):
                self.take()
                self.tag("group")
            self.expect(")", f"after the name of {word}")
            self.expect("=", f'after {word}("{name}")')
            surface = word == "Physical Surface"
            tags = self.tag_list("surface" if surface else "curve")
            groups = d.surface_groups if surface else d.curve_groups
            key = ("surface group" if surface else "curve group", name)
            if name in groups:
                raise _GeoError(line, f"group '{name}' is defined twice (lines {d.lines[key]} and {line}); "
                                      "list all its entities in one statement")
            groups[name] = tuple(tags)
            d.lines[key] = line
        elif word in ("MeshSize", "Characteristic Length"):
            points = self.tag_list("point")
            self.expect("=", f"after {word} {{...}}")
            size_line = self.peek()[2]
            size = self.expression()
            if size <= 0:
                raise _GeoError(size_line, f"{word} {size:g} is not allowed; must be > 0 (m)")
            for p in points:
                if p not in d.points:
                    raise _GeoError(line, f"{word} names point {p}, which is not defined above")
                d.points[p] = d.points[p][:2] + (size,)
        elif self.at("="):
            self.take()
            if word in FUNCTIONS or word == "Pi":
                raise _GeoError(line, f"'{word}' is a built-in name; choose another variable name")
            self.variables[word] = self.expression()
        else:
            raise _GeoError(at_line, f"'{word}' is not in the site-file subset; the declared subset is {GEO_SUBSET}")
        self.expect(";", f"to end the {word} statement")

    def _new(self, kind: str, tag: int, line: int, table: dict) -> None:
        if tag in table:
            raise _GeoError(line, f"{kind} {tag} is defined twice (lines {self.drawing.lines[(kind, tag)]} and {line})")
        if len(table) >= MAX_ENTITIES:
            raise _GeoError(line, f"more than {MAX_ENTITIES} {kind}s; a site drawing has tens to hundreds of entities")
        self.drawing.lines[(kind, tag)] = line

    def _check_curve(self, word: str, tag: int, ends: list[int], line: int) -> None:
        p = np.array([self.drawing.points[t][:2] for t in ends])
        if len(set(ends)) != len(ends):
            raise _GeoError(line, f"{word}({tag}) uses the same point twice")
        if word == "Circle":  # gmsh draws the arc from start to end round the centre, shorter way, < 180 deg
            a, b = p[0] - p[1], p[2] - p[1]
            ra, rb = np.hypot(*a), np.hypot(*b)
            if abs(ra - rb) > 1e-9 * max(ra, rb):
                raise _GeoError(line, f"Circle({tag}): start and end are not the same distance from the centre "
                                      f"({ra:g} and {rb:g} m)")
            if abs(a[0] * b[1] - a[1] * b[0]) <= 1e-12 * ra * rb and a @ b < 0:
                raise _GeoError(line, f"Circle({tag}) spans 180 degrees; draw it as two arcs of less than 180")

    def _check_loop(self, word: str, tag: int, curves: list[int], line: int) -> None:
        seen: set[int] = set()
        for c in curves:
            if abs(c) in seen:
                raise _GeoError(line, f"{word}({tag}) uses curve {abs(c)} twice; a loop goes round once")
            seen.add(abs(c))
        points = [self._ends(c)[0] for c in curves]
        if len(set(points)) != len(points):
            twice = next(p for p in points if points.count(p) > 1)
            raise _GeoError(line, f"{word}({tag}) passes point {twice} twice; a loop is one simple closed curve "
                                  "(draw two surfaces that share the point instead)")
        ends = [self._ends(c) for c in curves]
        for (_, end), (start, _), c in zip(ends, ends[1:] + ends[:1], curves[1:] + curves[:1]):
            if end != start:
                raise _GeoError(line, f"{word}({tag}) is not closed: curve {c} does not start where the curve "
                                      "before it ends (order the curves head to tail; a minus sign reverses one)")

    def _ends(self, signed: int) -> tuple[int, int]:
        kind, points = self.drawing.curves[abs(signed)]
        start, end = points[0], points[-1]
        return (start, end) if signed > 0 else (end, start)


def parse_geo(text: str) -> Drawing:
    """Parse a .geo script in the declared subset (``GEO_SUBSET``); raise ``_GeoError``
    on anything else.

    >>> d = parse_geo('lc = 0.5; Point(1) = {0, 0, 0, lc}; Point(2) = {2*lc, 0, 0};'
    ...               'Line(1) = {1, 2}; Physical Curve("ground") = {1};')
    >>> d.points[2], d.curves[1], d.curve_groups
    ((1.0, 0.0, 0.0), ('line', (1, 2)), {'ground': (1,)})
    >>> parse_geo('SystemCall "touch x";')
    Traceback (most recent call last):
    ...
    solver.sitefile._GeoError: 'SystemCall' is not allowed in a site file: it runs a command on this machine
    """
    parser = _Parser(_tokens(text))
    try:
        return parser.parse()
    except RecursionError:
        raise _GeoError(parser.peek()[2], "an expression is nested too deeply") from None


def _arc_extremes(centre: np.ndarray, start: np.ndarray, end: np.ndarray) -> tuple[float, float]:
    """Highest and lowest y (m) of the shorter arc from start to end round centre."""
    a, b = start - centre, end - centre
    radius = float(np.hypot(*a))
    turn = a[0] * b[1] - a[1] * b[0]
    ys = [start[1], end[1]]
    for direction in (np.array([0.0, 1.0]), np.array([0.0, -1.0])):
        # direction lies in the arc when it is turned to from a and turns to b the arc's way
        if (a[0] * direction[1] - a[1] * direction[0]) * turn >= 0 and \
                (direction[0] * b[1] - direction[1] * b[0]) * turn >= 0 and a @ direction + b @ direction > -radius:
            ys.append(centre[1] + radius * direction[1])
    return max(ys), min(ys)


def _drawing_levels(drawing: Drawing) -> dict[str, tuple[float, float]]:
    """Highest and lowest y (m, the user's coordinates) of each surface group, exact for arcs."""
    curve_y = {}
    for tag, (kind, pts) in drawing.curves.items():
        xy = [np.array(drawing.points[p][:2]) for p in pts]
        curve_y[tag] = (max(xy[0][1], xy[-1][1]), min(xy[0][1], xy[-1][1])) if kind == "line" \
            else _arc_extremes(xy[1], xy[0], xy[2])
    out = {}
    for name, surfaces in drawing.surface_groups.items():
        ys = [curve_y[abs(c)] for s in surfaces if s in drawing.surfaces
              for loop in drawing.surfaces[s] for c in drawing.loops[loop]]
        if ys:
            out[name] = (max(y[0] for y in ys), min(y[1] for y in ys))
    return out


# -- reading a site file ------------------------------------------------------------------------------

@dataclass
class _Raw:
    """A site mesh as gmsh holds it, before any check: the user's coordinates."""

    points: np.ndarray  # (n, 2) m
    triangles: np.ndarray  # (m, 3) or (m, 6) rows of points
    tri_entity: np.ndarray  # (m,) surface tag
    lines: np.ndarray  # (k, 2) corner rows of points of the curve elements
    line_entity: np.ndarray  # (k,) curve tag
    surface_groups: dict[str, tuple[int, ...]]
    curve_groups: dict[str, tuple[int, ...]]


def label(path: str | pathlib.Path) -> str:
    """The file as named in messages: relative to the working folder when inside it, any
    control character escaped (``solver.case.shown``)."""
    path = pathlib.Path(path)
    try:
        return shown(path.resolve().relative_to(pathlib.Path.cwd().resolve()), 200)
    except ValueError:
        return shown(path, 200)


def _read_bytes(path: pathlib.Path, where: str) -> bytes:
    limit = GEO_MAX_BYTES if path.suffix.lower() == ".geo" else MSH_MAX_BYTES
    try:
        with open_regular(path) as stream:
            raw = stream.read(limit + 1)
    except FileNotFoundError:
        raise CaseError(f"{where}: {label(path)} is not allowed; no such file") from None
    except IsADirectoryError:
        raise CaseError(f"{where}: {label(path)} is not allowed; it is a folder, must be a .geo or .msh file") from None
    except NotRegularFile as exc:
        raise CaseError(f"{where}: {label(path)} is not allowed; it is {exc.strerror}, must be a .geo or .msh "
                        "file") from None
    except OSError as exc:
        raise CaseError(f"{where}: cannot read {label(path)} ({shown(' '.join(str(exc).split()), 200)})") from None
    if len(raw) > limit:
        raise CaseError(f"{label(path)}: larger than {limit // 1_000_000} MB; is this the right file?")
    return raw


def _geo_text(raw: bytes, name: str) -> Drawing:
    if b"\0" in raw:
        raise CaseError(f"{name}: binary data (NUL bytes); a .geo script is text")
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        line = raw[:exc.start].count(b"\n") + 1
        raise CaseError(f"{name}: not UTF-8 text (bad byte at line {line}); save it as UTF-8") from None
    try:
        drawing = parse_geo(text)
    except _GeoError as exc:
        raise CaseError(f"{name}: line {exc.line}: {exc}") from None
    if not drawing.surfaces:
        raise CaseError(f"{name}: no Plane Surface; the soil is drawn as plane surfaces, one surface group per layer")
    for kind, groups, table in (("surface", drawing.surface_groups, drawing.surfaces),
                                ("curve", drawing.curve_groups, drawing.curves)):
        for group, tags in groups.items():
            for tag in tags:
                if tag not in table:
                    raise CaseError(f"{name}: group '{group}' (line {drawing.lines[(kind + ' group', group)]}) "
                                    f"names {kind} {tag}, which is not defined")
    _check_distinct_points(drawing, name)
    _check_crossings(drawing, name)
    _check_surfaces_apart(drawing, name)
    return drawing


@dataclass(frozen=True)
class _Curves:
    """Every curve of a drawing as arrays (m): ends, end point tags, and for arcs the
    centre, radius, start direction and signed sweep (|sweep| < pi)."""

    tags: np.ndarray  # (n,) curve tags
    arc: np.ndarray  # (n,) bool
    start: np.ndarray  # (n, 2)
    end: np.ndarray  # (n, 2)
    ends: np.ndarray  # (n, 2) point tags
    centre: np.ndarray  # (n, 2); arcs only
    radius: np.ndarray  # (n,)
    sweep: np.ndarray  # (n,) radians, counter-clockwise positive
    box: np.ndarray  # (n, 4) x_min, y_min, x_max, y_max (an arc's whole circle: a safe overestimate)

    @classmethod
    def of(cls, drawing: Drawing) -> _Curves:
        tags = np.array(sorted(drawing.curves), dtype=np.int64)
        kinds = [drawing.curves[t] for t in tags]
        xy = {t: drawing.points[t][:2] for t in drawing.points}
        start = np.array([xy[pts[0]] for _, pts in kinds], dtype=float).reshape(-1, 2)
        end = np.array([xy[pts[-1]] for _, pts in kinds], dtype=float).reshape(-1, 2)
        arc = np.array([kind == "arc" for kind, _ in kinds], dtype=bool)
        centre = np.array([xy[pts[1]] if kind == "arc" else (0.0, 0.0) for kind, pts in kinds],
                          dtype=float).reshape(-1, 2)
        a, b = start - centre, end - centre
        radius = np.where(arc, np.hypot(a[:, 0], a[:, 1]), 0.0)
        sweep = np.where(arc, np.arctan2(_cross(a, b), (a * b).sum(axis=1)), 0.0)
        low = np.where(arc[:, None], centre - radius[:, None], np.minimum(start, end))
        high = np.where(arc[:, None], centre + radius[:, None], np.maximum(start, end))
        return cls(tags=tags, arc=arc, start=start, end=end,
                   ends=np.array([(pts[0], pts[-1]) for _, pts in kinds], dtype=np.int64).reshape(-1, 2),
                   centre=centre, radius=radius, sweep=sweep, box=np.hstack([low, high]))


def _cross(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    return a[..., 0] * b[..., 1] - a[..., 1] * b[..., 0]


def _on_arc(c: _Curves, k: np.ndarray, q: np.ndarray, tol: float) -> np.ndarray:
    """Whether points q (m, 2), each on the circle of arc k (m,), lie on the arc itself."""
    a = c.start[k] - c.centre[k]
    v = q - c.centre[k]
    angle = np.arctan2(_cross(a, v), (a * v).sum(axis=1))  # from the start, in (-pi, pi]
    slack = tol / np.maximum(c.radius[k], 1e-300)
    w = c.sweep[k]
    return np.where(w >= 0, (angle >= -slack) & (angle <= w + slack), (angle <= slack) & (angle >= w - slack))


def _meetings(c: _Curves, i: np.ndarray, j: np.ndarray, tol: float):
    """Where curve pairs (i, j) meet: (pair, point (m, 2)) of isolated meeting points and
    (pair, point) of pairs that overlap along a stretch. Vectorised over the pairs."""
    pairs, points, overlaps, where = [], [], [], []
    # line with line
    ll = np.flatnonzero(~c.arc[i] & ~c.arc[j])
    if len(ll):
        a, b = i[ll], j[ll]
        d1, d2 = c.end[a] - c.start[a], c.end[b] - c.start[b]
        r = c.start[b] - c.start[a]
        n1, n2 = np.hypot(*d1.T), np.hypot(*d2.T)
        denom = _cross(d1, d2)
        crossing = np.abs(denom) > 1e-12 * n1 * n2
        with np.errstate(divide="ignore", invalid="ignore"):
            s = np.where(crossing, _cross(r, d2) / denom, np.nan)
            t = np.where(crossing, _cross(r, d1) / denom, np.nan)
        e1, e2 = tol / n1, tol / n2
        hit = crossing & (s >= -e1) & (s <= 1 + e1) & (t >= -e2) & (t <= 1 + e2)
        pairs.append(ll[hit])
        points.append(c.start[a[hit]] + s[hit, None] * d1[hit])
        # parallel: collinear ones share a stretch, or touch end to end
        collinear = ~crossing & (np.abs(_cross(d1, r)) / n1 <= tol)
        u0 = (r * d1).sum(axis=1) / n1**2
        u1 = ((c.end[b] - c.start[a]) * d1).sum(axis=1) / n1**2
        lo, hi = np.maximum(0.0, np.minimum(u0, u1)), np.minimum(1.0, np.maximum(u0, u1))
        shared = collinear & ((hi - lo) * n1 > tol)
        touch = collinear & ~shared & ((hi - lo) * n1 >= -tol)
        overlaps.append(ll[shared])
        where.append(c.start[a[shared]] + ((lo + hi) / 2)[shared, None] * d1[shared])
        pairs.append(ll[touch])
        points.append(c.start[a[touch]] + ((lo + hi) / 2)[touch, None] * d1[touch])
    # line with arc (either order)
    la = np.flatnonzero(c.arc[i] != c.arc[j])
    if len(la):
        line = np.where(c.arc[i[la]], j[la], i[la])
        arc = np.where(c.arc[i[la]], i[la], j[la])
        d = c.end[line] - c.start[line]
        n = np.hypot(*d.T)
        u = d / n[:, None]
        along = ((c.centre[arc] - c.start[line]) * u).sum(axis=1)
        foot = c.start[line] + along[:, None] * u
        gap = np.hypot(*(c.centre[arc] - foot).T)
        near = gap <= c.radius[arc] + tol
        half = np.sqrt(np.maximum(c.radius[arc] ** 2 - gap**2, 0.0))
        for sign in (-1.0, 1.0):
            t = (along + sign * half) / n
            q = foot + (sign * half)[:, None] * u
            hit = near & (t >= -tol / n) & (t <= 1 + tol / n) & _on_arc(c, arc, q, tol)
            pairs.append(la[hit])
            points.append(q[hit])
    # arc with arc
    aa = np.flatnonzero(c.arc[i] & c.arc[j])
    if len(aa):
        a, b = i[aa], j[aa]
        dv = c.centre[b] - c.centre[a]
        dist = np.hypot(*dv.T)
        ra, rb = c.radius[a], c.radius[b]
        same = (dist <= tol) & (np.abs(ra - rb) <= tol)
        if same.any():  # one circle: the arcs overlap when a point of one lies inside the other
            inside = np.zeros(len(aa), dtype=bool)
            for one, other in ((a, b), (b, a)):
                for fraction in (0.0, 0.5, 1.0):
                    angle = np.arctan2(*(c.start[one] - c.centre[one])[:, ::-1].T) + fraction * c.sweep[one]
                    q = c.centre[one] + c.radius[one][:, None] * np.column_stack([np.cos(angle), np.sin(angle)])
                    strict = _on_arc(c, other, q, -tol)  # inside by more than tol
                    inside |= strict
                    if fraction == 0.5:
                        mid = q
            overlapping = same & inside
            overlaps.append(aa[overlapping])
            where.append(mid[overlapping])
        apart = ~same & (dist > tol) & (dist <= ra + rb + tol) & (dist >= np.abs(ra - rb) - tol)
        with np.errstate(divide="ignore", invalid="ignore"):
            along = np.where(apart, (ra**2 - rb**2 + dist**2) / (2 * dist), 0.0)
            u = np.where(apart[:, None], dv / dist[:, None], 0.0)
        half = np.sqrt(np.maximum(ra**2 - along**2, 0.0))
        base = c.centre[a] + along[:, None] * u
        normal = np.column_stack([-u[:, 1], u[:, 0]])
        for sign in (-1.0, 1.0):
            q = base + (sign * half)[:, None] * normal
            hit = apart & _on_arc(c, a, q, tol) & _on_arc(c, b, q, tol)
            pairs.append(aa[hit])
            points.append(q[hit])
    join = lambda parts, shape: np.concatenate(parts) if parts else np.zeros(shape)  # noqa: E731
    return (join(pairs, (0,)).astype(np.int64), join(points, (0, 2)),
            join(overlaps, (0,)).astype(np.int64), join(where, (0, 2)))


def _check_crossings(drawing: Drawing, name: str) -> None:
    """Curves may meet only at points they both end at: a curve that crosses another,
    runs along it, or ends on it away from its end points is refused before meshing
    (gmsh can loop for ever on such a drawing). Vectorised over curve pairs in blocks,
    after a bounding-box test."""
    c = _Curves.of(drawing)
    n = len(c.tags)
    if n < 2:
        return
    xy = np.array([p[:2] for p in drawing.points.values()])
    tol = REL_TOL * max(float(np.ptp(xy[:, 0])), float(np.ptp(xy[:, 1])), 1e-300)
    for first in range(0, n, 256):
        rows = np.arange(first, min(first + 256, n))
        box = c.box
        near = ((box[rows, None, 0] <= box[None, :, 2] + tol) & (box[None, :, 0] <= box[rows, None, 2] + tol)
                & (box[rows, None, 1] <= box[None, :, 3] + tol) & (box[None, :, 1] <= box[rows, None, 3] + tol)
                & (np.arange(n)[None, :] > rows[:, None]))
        r, k = np.nonzero(near)
        i, j = rows[r], k
        pair, point, overlap, overlap_at = _meetings(c, i, j, tol)
        if len(overlap):
            a, b = sorted((int(c.tags[i[overlap[0]]]), int(c.tags[j[overlap[0]]])))
            x, y = overlap_at[0]
            raise CaseError(f"{name}: curves {a} and {b} run along each other near ({x:g}, {y:g}); each stretch "
                            "of the outline and of every interface is one curve")
        # a meeting point is allowed only at an end point the two curves share
        allowed = np.zeros(len(pair), dtype=bool)
        for end_i in (0, 1):
            for end_j in (0, 1):
                tag = c.ends[i[pair], end_i]
                same = tag == c.ends[j[pair], end_j]
                at = c.start[i[pair]] if end_i == 0 else c.end[i[pair]]
                allowed |= same & (np.hypot(*(point - at).T) <= tol)
        if not allowed.all():
            m = int(np.flatnonzero(~allowed)[0])
            a, b = int(c.tags[i[pair[m]]]), int(c.tags[j[pair[m]]])
            x, y = point[m]
            ends = np.vstack([c.start[[i[pair[m]], j[pair[m]]]], c.end[[i[pair[m]], j[pair[m]]]]])
            how = "touch" if np.any(np.hypot(*(ends - point[m]).T) <= tol) else "cross"
            raise CaseError(f"{name}: curves {min(a, b)} and {max(a, b)} {how} at ({x:g}, {y:g}), which is not an "
                            "end point of both; curves may meet only at points they share (split a curve there)")


def _check_surfaces_apart(drawing: Drawing, name: str) -> None:
    """No two plane surfaces cover the same soil, and every hole lies inside its surface's
    outer loop. With no crossing curves (checked before), a surface that overlaps another
    has a curve inside it: the midpoint of each curve of one surface that is not a curve
    of the other is tested against the other's region (arcs drawn as 64 chords)."""
    if not drawing.surfaces:
        return
    c = _Curves.of(drawing)
    row = {int(t): k for k, t in enumerate(c.tags)}
    xy = np.array([p[:2] for p in drawing.points.values()])
    size = max(float(np.ptp(xy[:, 0])), float(np.ptp(xy[:, 1])), 1e-300)
    angle = np.arctan2(*(c.start - c.centre)[:, ::-1].T) + 0.5 * c.sweep
    middle = np.where(c.arc[:, None], c.centre + c.radius[:, None] * np.column_stack([np.cos(angle), np.sin(angle)]),
                      (c.start + c.end) / 2)

    def polygon(loop: int) -> np.ndarray:
        parts = []
        for signed in drawing.loops[loop]:
            k = row[abs(signed)]
            if c.arc[k]:
                steps = np.linspace(0.0, 1.0, 65)
                start = np.arctan2(*(c.start[k] - c.centre[k])[::-1])
                ring = c.centre[k] + c.radius[k] * np.column_stack([np.cos(start + steps * c.sweep[k]),
                                                                    np.sin(start + steps * c.sweep[k])])
            else:
                ring = np.vstack([c.start[k], c.end[k]])
            parts.append(ring if signed > 0 else ring[::-1])
        return np.vstack(parts)

    def inside(poly: np.ndarray, q: np.ndarray) -> np.ndarray:
        """Even-odd rule, vectorised over points and edges."""
        a, b = poly, np.roll(poly, -1, axis=0)
        spans = (a[None, :, 1] > q[:, None, 1]) != (b[None, :, 1] > q[:, None, 1])
        with np.errstate(divide="ignore", invalid="ignore"):
            x = a[None, :, 0] + (q[:, None, 1] - a[None, :, 1]) * (b - a)[None, :, 0] / (b - a)[None, :, 1]
        return (spans & (q[:, None, 0] < x)).sum(axis=1) % 2 == 1

    curves_of = {s: {abs(k) for loop in loops for k in drawing.loops[loop]} for s, loops in drawing.surfaces.items()}
    for tag, loops in drawing.surfaces.items():  # holes inside the outer loop
        outer = polygon(loops[0])
        for loop in loops[1:]:
            own = [row[abs(k)] for k in drawing.loops[loop] if abs(k) not in {abs(o) for o in drawing.loops[loops[0]]}]
            if own and not inside(outer, middle[own]).all():
                raise CaseError(f"{name}: Plane Surface({tag}): curve loop {loop} is not inside its outer loop "
                                f"{loops[0]}; a hole must lie inside the surface")
    regions = {s: [polygon(loop) for loop in loops] for s, loops in drawing.surfaces.items()}
    tags = sorted(drawing.surfaces)
    for other in tags:
        outer, *holes = regions[other]
        low, high = outer.min(axis=0) - REL_TOL * size, outer.max(axis=0) + REL_TOL * size
        for tag in tags:
            if tag == other:
                continue
            if curves_of[tag] == curves_of[other]:
                raise CaseError(f"{name}: surfaces {min(tag, other)} and {max(tag, other)} are bounded by the same "
                                "curves; each piece of soil is one surface")
            own = [row[k] for k in sorted(curves_of[tag] - curves_of[other])]
            q = middle[own]
            q = q[np.all((q >= low) & (q <= high), axis=1)]
            if not len(q):
                continue
            covered = inside(outer, q)
            for hole in holes:
                covered &= ~inside(hole, q)
            if covered.any():
                x, y = q[np.flatnonzero(covered)[0]]
                raise CaseError(f"{name}: surfaces {min(tag, other)} and {max(tag, other)} overlap near ({x:g}, {y:g}); "
                                "each piece of soil is one surface (a surface inside another is drawn as its hole)")


def _check_distinct_points(drawing: Drawing, name: str) -> None:
    """Adjacent surfaces must share their points and curves: two points at one place
    would leave a crack in the mesh."""
    tags = np.array(list(drawing.points))
    xy = np.array([drawing.points[t][:2] for t in tags])
    size = max(float(np.ptp(xy[:, 0])), float(np.ptp(xy[:, 1])), 1e-300)
    order = np.lexsort((xy[:, 1], xy[:, 0]))
    close = np.all(np.abs(np.diff(xy[order], axis=0)) <= REL_TOL * size, axis=1)
    if close.any():
        i = int(np.flatnonzero(close)[0])
        a, b = sorted((int(tags[order[i]]), int(tags[order[i + 1]])))
        raise CaseError(f"{name}: points {a} and {b} are at the same place ({xy[order[i], 0]:g}, {xy[order[i], 1]:g}); "
                        "adjacent surfaces must share their points and curves")
    pairs = {}
    for tag, (kind, pts) in drawing.curves.items():
        key = (kind, frozenset(pts))
        if key in pairs:
            raise CaseError(f"{name}: curves {pairs[key]} and {tag} join the same points; "
                            "adjacent surfaces must share one curve")
        pairs[key] = tag


def _build_drawing(gmsh, drawing: Drawing) -> None:
    """The drawing in gmsh's built-in kernel, from the parsed numbers only."""
    gmsh.clear()
    gmsh.model.add("site")
    geo = gmsh.model.geo
    for tag, (x, y, size) in drawing.points.items():
        geo.addPoint(x, y, 0.0, size, tag)
    for tag, (kind, pts) in drawing.curves.items():
        if kind == "line":
            geo.addLine(pts[0], pts[1], tag)
        else:
            geo.addCircleArc(pts[0], pts[1], pts[2], tag)
    for tag, curves in drawing.loops.items():
        geo.addCurveLoop(list(curves), tag)
    for tag, loops in drawing.surfaces.items():
        geo.addPlaneSurface(list(loops), tag)
    geo.synchronize()


def _sources(drawing: Drawing, footing_ends: np.ndarray, B: float) -> np.ndarray:
    """(k, 3) refinement sources (x, y, h0 in m): the footing's ends with SIZE_EDGE B and
    every point given a size with that size. The size at x is h = s min(cap, min over
    sources of h0 + SIZE_GRADING r), r from the source: each source adds only about
    2 pi / SIZE_GRADING^2 ln(R / h0) triangles, so even a tiny size cannot blow the mesh up."""
    sized = [(x, y, size) for x, y, size in drawing.points.values() if size > 0]
    ends = [(float(x), float(y), SIZE_EDGE * B) for x, y in footing_ends]
    return np.array(ends + sized, dtype=float)


def _size_field(gmsh, sources: np.ndarray, cap: float) -> None:
    """The background size field of :func:`_sources` (scale: Mesh.MeshSizeFactor)."""
    mesh = gmsh.model.mesh
    # plain Python floats only: numpy's repr would not parse as gmsh's expression language
    terms = [f"{float(h)!r}+{float(SIZE_GRADING)!r}*Sqrt((x-({float(x)!r}))^2+(y-({float(y)!r}))^2)"
             for x, y, h in sources]
    expression = f"{float(cap)!r}"
    for term in terms:  # gmsh's Min takes two arguments
        expression = f"Min({term}, {expression})"
    field_tag = mesh.field.add("MathEval")
    mesh.field.setString(field_tag, "F", expression)
    mesh.field.setAsBackgroundMesh(field_tag)


def _estimate_count(drawing: Drawing, sources: np.ndarray, cap: float) -> float:
    """Triangles at scale 1: about 2.3 * integral of 1/h^2 over the drawing's bounding box
    (an overestimate: the first mesh is coarser than the target, never far finer)."""
    xy = np.array([p[:2] for p in drawing.points.values()])
    xs = np.linspace(xy[:, 0].min(), xy[:, 0].max(), 200)
    ys = np.linspace(xy[:, 1].min(), xy[:, 1].max(), 120)
    X, Y = np.meshgrid(xs, ys)
    r = np.hypot(X[..., None] - sources[:, 0], Y[..., None] - sources[:, 1])
    h = np.minimum((sources[:, 2] + SIZE_GRADING * r).min(axis=-1), cap)
    return float(2.3 * np.sum((xs[1] - xs[0]) * (ys[1] - ys[0]) / h**2))


def _mesh_drawing(gmsh, drawing: Drawing, name: str, sources: np.ndarray, cap: float, target: int) -> int:
    """Mesh at about ``target`` first-order triangles (within 5 %, as build_mesh); returns the count."""
    _size_field(gmsh, sources, cap)
    gmsh.option.setNumber("Mesh.MeshSizeFromPoints", 0)  # point sizes are in the field (_sources)
    gmsh.option.setNumber("Mesh.MeshSizeExtendFromBoundary", 0)
    gmsh.option.setNumber("Mesh.MeshSizeFromCurvature", 0)
    gmsh.option.setNumber("Mesh.Algorithm", 6)  # Frontal-Delaunay: well-shaped triangles
    gmsh.option.setNumber("Mesh.ElementOrder", 1)
    scale, tried = math.sqrt(_estimate_count(drawing, sources, cap) / target), {}
    for attempt in range(8):
        gmsh.option.setNumber("Mesh.MeshSizeFactor", scale)
        gmsh.model.mesh.clear()
        try:
            gmsh.model.mesh.generate(2)
        except Exception as exc:  # gmsh raises a bare Exception with its last error
            raise CaseError(f"{name}: gmsh could not mesh the drawing ({' '.join(str(exc).split())}); "
                            "check that no curve crosses another") from None
        count = int(sum(len(t) for t in gmsh.model.mesh.getElements(2)[1]))
        if count == 0:
            raise CaseError(f"{name}: the drawing gives no triangles; check the curve loops and surfaces")
        tried[scale] = abs(count / target - 1.0)
        if tried[scale] < 0.05 or attempt == 7:
            break
        scale *= math.sqrt(count / target)
    best = min(tried, key=tried.get)
    if best != scale:
        gmsh.option.setNumber("Mesh.MeshSizeFactor", best)
        gmsh.model.mesh.clear()
        gmsh.model.mesh.generate(2)
    return int(sum(len(t) for t in gmsh.model.mesh.getElements(2)[1]))


def _extract(gmsh, name: str, surface_groups: dict, curve_groups: dict) -> _Raw:
    """Nodes, triangles and curve elements of the gmsh model, with their entities."""
    node_tags, coords, _ = gmsh.model.mesh.getNodes()
    if len(node_tags) == 0:
        raise CaseError(f"{name}: holds no mesh nodes")
    xyz = coords.reshape(-1, 3)
    if np.any(np.abs(xyz[:, 2]) > REL_TOL * max(float(np.ptp(xyz[:, 0])), float(np.ptp(xyz[:, 1])), 1e-300)):
        raise CaseError(f"{name}: nodes off the plane z = 0; the site is drawn in the x-y plane")
    index = np.full(int(node_tags.max()) + 1, -1, dtype=np.int64)
    index[node_tags.astype(np.int64)] = np.arange(len(node_tags))
    triangles, tri_entity, lines, line_entity = [], [], [], []
    for dim, tag in gmsh.model.getEntities(2):
        for etype, _, nodes in zip(*gmsh.model.mesh.getElements(dim, tag)):
            if etype not in _ELEMENT_KINDS:
                element = gmsh.model.mesh.getElementProperties(etype)[0]
                raise CaseError(f"{name}: surface {tag} holds '{element}' elements; only triangles "
                                "(3-node or 6-node) are allowed")
            triangles.append(index[nodes.astype(np.int64)].reshape(-1, _ELEMENT_KINDS[etype]))
            tri_entity.append(np.full(len(triangles[-1]), tag))
    for dim, tag in gmsh.model.getEntities(1):
        for etype, _, nodes in zip(*gmsh.model.mesh.getElements(dim, tag)):
            if etype in _LINE_KINDS:
                lines.append(index[nodes.astype(np.int64)].reshape(-1, _LINE_KINDS[etype])[:, :2])
                line_entity.append(np.full(len(lines[-1]), tag))
    if not triangles:
        raise CaseError(f"{name}: holds no triangles; the soil must be meshed surfaces in layer groups")
    if len({t.shape[1] for t in triangles}) > 1:
        raise CaseError(f"{name}: mixes 3-node and 6-node triangles; use one order throughout")
    return _Raw(points=xyz[:, :2].copy(), triangles=np.concatenate(triangles), tri_entity=np.concatenate(tri_entity),
                lines=np.concatenate(lines) if lines else np.zeros((0, 2), np.int64),
                line_entity=np.concatenate(line_entity) if line_entity else np.zeros(0, np.int64),
                surface_groups=surface_groups, curve_groups=curve_groups)


def _msh_groups(gmsh, name: str) -> tuple[dict, dict]:
    surface_groups, curve_groups = {}, {}
    for dim, tag in gmsh.model.getPhysicalGroups():
        group = gmsh.model.getPhysicalName(dim, tag)
        if dim not in (1, 2):
            continue
        if not group:
            raise CaseError(f"{name}: physical group {tag} ({'curves' if dim == 1 else 'surfaces'}) has no name; "
                            "the groups are named by the convention of meshes/README.md")
        if not group.isprintable() or len(group) > 80:  # as a .geo's names (_Parser.statement)
            raise CaseError(f"{name}: physical group {tag} has the name {shown(repr(group), 60)}; must be a "
                            "one-line name of 1 to 80 characters")
        table = curve_groups if dim == 1 else surface_groups
        table[group] = tuple(table.get(group, ())) + tuple(int(t) for t in gmsh.model.getEntitiesForPhysicalGroup(dim, tag))
    return surface_groups, curve_groups


# The first line gmsh must see for it to read a file as a mesh (MSH 2.x or 4.x, ASCII or binary):
# gmsh picks its reader from the file's first line, not its name, and runs anything else as a
# .geo script (a `SystemCall "..."` line in a file named .msh is a command it executes).
_MSH_HEADER = re.compile(rb"\$MeshFormat\r?\n[ \t]*(?:2\.[0-2]|4\.[01])[ \t]+[01][ \t]+8[ \t]*\r?\n")


def check_msh_header(raw: bytes, name: str) -> None:
    """Refuse, before gmsh sees them, bytes that gmsh would not read as a mesh file.

    >>> check_msh_header(b"$MeshFormat\\n4.1 0 8\\n$EndMeshFormat\\n", "site.msh")
    >>> check_msh_header(b'SystemCall "touch x";\\n', "site.msh")
    Traceback (most recent call last):
    ...
    solver.case.CaseError: site.msh: not a gmsh mesh file; a .msh must begin with the line $MeshFormat and a version line such as 4.1 0 8 (MSH 2.x or 4.x): it is read as data, never run as a script
    """
    if _MSH_HEADER.match(raw) is None:
        raise CaseError(f"{name}: not a gmsh mesh file; a .msh must begin with the line $MeshFormat and a "
                        "version line such as 4.1 0 8 (MSH 2.x or 4.x): it is read as data, never run as a script")


def _read_msh(gmsh, raw: bytes, name: str) -> _Raw:
    """Read the .msh bytes from a private copy (gmsh would also read an option file beside the original),
    once their first line says they are a mesh (``check_msh_header``)."""
    check_msh_header(raw, name)
    with tempfile.TemporaryDirectory(prefix="bearbound-site-") as folder:
        copy = pathlib.Path(folder) / "site.msh"
        copy.write_bytes(raw)
        gmsh.clear()
        try:
            gmsh.open(str(copy))
        except Exception as exc:
            reason = shown(" ".join(str(exc).split()), 200) or "no reason given"
            raise CaseError(f"{name}: gmsh cannot read it as a mesh ({reason})") from None
    surface_groups, curve_groups = _msh_groups(gmsh, name)
    return _extract(gmsh, name, surface_groups, curve_groups)


# -- checks and assembly ------------------------------------------------------------------------------

@dataclass(frozen=True)
class _Site:
    """A checked site mesh in the solver's coordinates (footing centre x = 0, footing level y = 0)."""

    points: np.ndarray
    triangles: np.ndarray  # (m, 3) counter-clockwise
    layer: np.ndarray  # (m,) index into case.layers
    boundary_element: np.ndarray
    boundary_local: np.ndarray
    boundary_kind: np.ndarray
    origin: tuple[float, float]  # the footing centre at footing level, user's coordinates (m)
    width: float  # m, of the footing


def _suggest(word: str, options) -> str:
    close = difflib.get_close_matches(word, list(options), n=1)
    return f"did you mean '{close[0]}'?" if close else "allowed: " + ", ".join(f"'{o}'" for o in options)


def _check_groups(raw: _Raw, layers: tuple[Layer, ...], name: str) -> tuple[np.ndarray, dict[int, int]]:
    """Layer index of every triangle, and the boundary kind of every grouped curve."""
    layer_names = [layer.name for layer in layers]
    for group in raw.surface_groups:
        if group not in layer_names:
            hint = " (a boundary name belongs on a Physical Curve)" if group in BOUNDARY_GROUPS else ""
            raise CaseError(f"{name}: surface group '{group}' matches no [[layers]] name{hint}; "
                            f"{_suggest(group, layer_names)}")
    for group in raw.curve_groups:
        if group not in BOUNDARY_GROUPS:
            hint = " (a layer name belongs on a Physical Surface)" if group in layer_names else ""
            raise CaseError(f"{name}: curve group '{group}' is not a boundary kind{hint}; "
                            f"{_suggest(group, BOUNDARY_GROUPS)}")
    entity_layer: dict[int, int] = {}
    for group, tags in raw.surface_groups.items():
        for tag in tags:
            if tag in entity_layer and layer_names[entity_layer[tag]] != group:
                raise CaseError(f"{name}: surface {tag} is in two layer groups, '{layer_names[entity_layer[tag]]}' "
                                f"and '{group}'; each surface is one layer")
            entity_layer[tag] = layer_names.index(group)
    meshed = set(np.unique(raw.tri_entity).tolist())
    for tag in sorted(meshed):
        if tag not in entity_layer:
            raise CaseError(f"{name}: surface {tag} is in no layer group; put it in a Physical Surface named "
                            "after its [[layers]] name")
    for i, layer_name in enumerate(layer_names):
        if not any(entity_layer.get(t) == i for t in meshed):
            raise CaseError(f"{name}: group '{layer_name}' is missing; layers[{i + 1}] '{layer_name}' must be "
                            "drawn as a Physical Surface of that name")
    curve_kind: dict[int, int] = {}
    for group, tags in raw.curve_groups.items():
        for tag in tags:
            if tag in curve_kind and curve_kind[tag] != BOUNDARY_GROUPS[group]:
                raise CaseError(f"{name}: curve {tag} is in two boundary groups, '{GROUP_OF_KIND[curve_kind[tag]]}' "
                                f"and '{group}'; each curve is one kind of boundary")
            curve_kind[tag] = BOUNDARY_GROUPS[group]
    for group in ("footing", "ground"):
        if group not in raw.curve_groups:
            raise CaseError(f"{name}: group '{group}' is missing; the footing base must be a Physical Curve "
                            "'footing' with 'ground' at both its ends")
    return _lookup(entity_layer, raw.tri_entity), curve_kind


def _lookup(table: dict[int, int], keys: np.ndarray) -> np.ndarray:
    """table[key] for an array of keys, -1 where absent (vectorised)."""
    if not table:
        return np.full(len(keys), -1)
    tags = np.array(sorted(table))
    values = np.array([table[t] for t in tags])
    at = np.clip(np.searchsorted(tags, keys), 0, len(tags) - 1)
    return np.where(tags[at] == keys, values[at], -1)


def _corner_triangles(raw: _Raw, name: str) -> np.ndarray:
    """First-order triangles; a 6-node .msh must have straight sides (midside nodes at the midpoints)."""
    tri = raw.triangles
    if tri.shape[1] == 6:
        p = raw.points
        for k in range(3):
            a, b, m = p[tri[:, k]], p[tri[:, (k + 1) % 3]], p[tri[:, 3 + k]]
            off = np.hypot(*(m - (a + b) / 2).T) / np.maximum(np.hypot(*(b - a).T), 1e-300)
            if np.any(off > MIDSIDE_TOL):
                e = int(np.argmax(off))
                raise CaseError(f"{name}: a 6-node triangle near ({m[e, 0]:g}, {m[e, 1]:g}) has a curved side; "
                                "both bounds take element sides straight (use a first-order mesh or straight sides)")
    return tri[:, :3].copy()


def check_site(raw: _Raw, layers: tuple[Layer, ...], footing_width: float | None, name: str,
               split_corners: bool = False) -> _Site:
    """Every rule of the convention on a site mesh; the mesh in the solver's coordinates.

    ``split_corners`` (the lower bound's mesh): every triangle with two edges on the
    outline is split in three about its centroid (:func:`_split_corners`).
    Raises CaseError (one line naming the file, the group and what is expected)."""
    layer_of, curve_kind = _check_groups(raw, layers, name)
    tri = _corner_triangles(raw, name)
    p = raw.points
    size = max(float(np.ptp(p[tri.ravel(), 0])), float(np.ptp(p[tri.ravel(), 1])))
    tol = REL_TOL * size

    signed = ((p[tri[:, 1], 0] - p[tri[:, 0], 0]) * (p[tri[:, 2], 1] - p[tri[:, 0], 1])
              - (p[tri[:, 2], 0] - p[tri[:, 0], 0]) * (p[tri[:, 1], 1] - p[tri[:, 0], 1]))
    if np.any(np.abs(signed) <= 1e-12 * size * size):
        c = p[tri[int(np.argmin(np.abs(signed)))]].mean(axis=0)
        raise CaseError(f"{name}: a triangle near ({c[0]:g}, {c[1]:g}) has no area")
    tri[signed < 0] = tri[signed < 0][:, [0, 2, 1]]
    if split_corners:
        p, tri, layer_of = _split_corners(p, tri, layer_of)

    edges = tri[:, [[0, 1], [1, 2], [2, 0]]].reshape(-1, 2)
    key = np.sort(edges, axis=1)
    unique, inverse, counts = np.unique(key, axis=0, return_inverse=True, return_counts=True)
    inverse = inverse.ravel()
    if np.any(counts > 2):
        c = p[unique[int(np.argmax(counts))]].mean(axis=0)
        raise CaseError(f"{name}: more than two triangles share an edge near ({c[0]:g}, {c[1]:g}); surfaces overlap")
    on_boundary = np.flatnonzero(counts[inverse] == 1)
    b_edges = edges[on_boundary]  # counter-clockwise round the soil: outward normal (ty, -tx)

    # boundary kind of each outline edge, from the curve elements lying on it (vectorised)
    n = len(p)
    edge_key = unique[:, 0] * n + unique[:, 1]
    line_key = raw.lines.min(axis=1) * n + raw.lines.max(axis=1)
    at = np.clip(np.searchsorted(edge_key, line_key), 0, max(len(edge_key) - 1, 0))
    found = edge_key[at] == line_key
    position = np.full(len(unique), -1)
    position[inverse[on_boundary]] = np.arange(len(on_boundary))
    line_pos = np.where(found, position[at], -1)
    line_kind = _lookup(curve_kind, raw.line_entity)
    for bad, what in ((~found, "is not on the edge of any surface; a boundary curve must bound the soil"),
                      (found & (line_pos < 0), "lies inside the soil, between two surfaces; only the outline "
                                               "takes a boundary group")):
        bad = bad & (line_kind >= 0)
        if bad.any():
            i = int(np.flatnonzero(bad)[0])
            mid = p[raw.lines[i]].mean(axis=0)
            raise CaseError(f"{name}: group '{GROUP_OF_KIND[int(line_kind[i])]}': curve {raw.line_entity[i]} near "
                            f"({mid[0]:g}, {mid[1]:g}) {what}")
    b_kind = np.full(len(on_boundary), -1)
    b_curve = np.full(len(on_boundary), -1)
    b_curve[line_pos[line_pos >= 0]] = raw.line_entity[line_pos >= 0]
    grouped = (line_pos >= 0) & (line_kind >= 0)
    b_kind[line_pos[grouped]] = line_kind[grouped]
    if np.any(b_kind < 0):
        j = int(np.flatnonzero(b_kind < 0)[0])
        mid = p[b_edges[j]].mean(axis=0)
        which = f"curve {b_curve[j]}" if b_curve[j] >= 0 else "the outline"
        raise CaseError(f"{name}: {which} near ({mid[0]:g}, {mid[1]:g}) is on the outline of the soil but in no "
                        f"boundary group; put it in one of {', '.join(repr(g) for g in BOUNDARY_GROUPS)}")
    _check_outline(p, b_edges, name, tol)
    pair = _kinds_at_nodes(b_edges, b_kind, n)  # (n, 2): the kinds of the two outline edges at each node

    # the footing: one straight horizontal stretch, soil below, ground at both ends
    fe = b_edges[b_kind == FOOTING]
    y_f = float(np.mean(p[fe, 1]))
    if np.any(np.abs(p[fe, 1] - y_f) > tol):
        j = int(np.argmax(np.abs(p[fe, 1] - y_f).max(axis=1)))
        raise CaseError(f"{name}: group 'footing' is not level (y from {p[fe, 1].min():g} to {p[fe, 1].max():g} m, "
                        f"near x = {p[fe[j], 0].mean():g}); the footing base must be one straight horizontal line")
    if np.any(p[fe[:, 1], 0] > p[fe[:, 0], 0]):  # counter-clockwise: soil below means the edge runs to -x
        raise CaseError(f"{name}: group 'footing' has soil above it; the footing rests on the soil below its curve")
    x_a, x_b = float(p[fe, 0].min()), float(p[fe, 0].max())
    ends = np.flatnonzero(np.bincount(fe.ravel(), minlength=n) == 1)
    if len(ends) != 2:
        raise CaseError(f"{name}: group 'footing' is in pieces between x = {x_a:g} and {x_b:g} m; "
                        "the footing base must be one unbroken stretch")
    width = x_b - x_a
    if footing_width is not None and abs(width - footing_width) > 1e-6 * max(width, footing_width):
        raise CaseError(f"footing.width: {footing_width:g} is not allowed; must be {width:g} (m), the width of "
                        f"group 'footing' in {name}")
    other = np.where(pair[ends, 0] == FOOTING, pair[ends, 1], pair[ends, 0])
    if np.any(other != GROUND):
        i = int(np.flatnonzero(other != GROUND)[0])
        raise CaseError(f"{name}: group 'footing': its end at ({p[ends[i], 0]:g}, {p[ends[i], 1]:g}) meets "
                        f"'{GROUP_OF_KIND[int(other[i])]}'; each end of the footing must meet 'ground'")

    # the far field: straight vertical sides on the extreme x, a straight horizontal base on the lowest y
    used = np.unique(tri)
    x_lo, x_hi, y_lo = float(p[used, 0].min()), float(p[used, 0].max()), float(p[used, 1].min())
    side, base = b_kind == FAR_SIDE, b_kind == FAR_BASE
    xs, ys = p[b_edges, 0], p[b_edges, 1]
    off_side = side & ~(np.all(np.abs(xs - x_lo) <= tol, axis=1) | np.all(np.abs(xs - x_hi) <= tol, axis=1))
    off_base = base & np.any(np.abs(ys - y_lo) > tol, axis=1)
    for bad, group, rule in ((off_side, "far side", f"x = {x_lo:g} or x = {x_hi:g}; a far side must be a straight "
                                                    "vertical line on the model's leftmost or rightmost x"),
                             (off_base, "far base", f"y = {y_lo:g}; the far base must be a straight horizontal line "
                                                    "on the model's lowest y")):
        if bad.any():
            j = int(np.flatnonzero(bad)[0])
            mid = p[b_edges[j]].mean(axis=0)
            raise CaseError(f"{name}: group '{group}': curve {b_curve[j]} near ({mid[0]:g}, {mid[1]:g}) is not on {rule}")
    # each end of a far curve: another far curve, 'fixed', or 'ground' at the top of a far side
    far = np.flatnonzero(side | base)
    node = b_edges[far].ravel()
    kind = np.repeat(b_kind[far], 2)
    is_top = ys[far][:, ::-1] < ys[far]  # this end is above the other end of its edge
    other = np.where(pair[node, 0] == kind, pair[node, 1], pair[node, 0])
    ok = np.isin(other, (FAR_SIDE, FAR_BASE, FIXED)) | ((other == GROUND) & (kind == FAR_SIDE) & is_top.ravel())
    if not ok.all():
        i = int(np.flatnonzero(~ok)[0])
        raise CaseError(f"{name}: group '{GROUP_OF_KIND[int(kind[i])]}': curve {b_curve[far[i // 2]]} ends at "
                        f"({p[node[i], 0]:g}, {p[node[i], 1]:g}) on '{GROUP_OF_KIND[int(other[i])]}'; the far field "
                        "must end on 'ground' (at the top of a far side), on 'fixed', or on another far curve")

    # the solver's coordinates: footing centre x = 0, footing level y = 0 (snapped exactly)
    origin = ((x_a + x_b) / 2, y_f)
    points = p - np.array(origin)
    points[np.abs(points[:, 1]) <= tol, 1] = 0.0
    # both bounds put the surcharge on ground edges centred on the footing level; a sloping
    # edge that only crosses that level there must not take it (the bounds would differ)
    g = b_edges[b_kind == GROUND]
    crossing = (np.abs(points[g, 1].mean(axis=1)) <= tol) & (points[g[:, 0], 1] != points[g[:, 1], 1])
    if crossing.any():
        mid = p[g[np.flatnonzero(crossing)[0]]].mean(axis=0)
        raise CaseError(f"{name}: group 'ground': a mesh edge near ({mid[0]:g}, {mid[1]:g}) crosses the footing's "
                        f"level y = {y_f:g} at its middle; put a point on that ground curve at the footing's level")
    side_nodes = np.unique(b_edges[side])
    for x_end in (x_lo, x_hi):
        points[side_nodes[np.abs(p[side_nodes, 0] - x_end) <= tol], 0] = x_end - origin[0]
    points[np.unique(b_edges[base]), 1] = y_lo - origin[1]

    element, local = on_boundary // 3, on_boundary % 3
    return _Site(points=points, triangles=tri, layer=layer_of, boundary_element=element, boundary_local=local,
                 boundary_kind=b_kind, origin=origin, width=width)


def _split_corners(points: np.ndarray, triangles: np.ndarray, layer: np.ndarray):
    """Split each counter-clockwise triangle with two or more outline edges in three
    about its centroid (the pieces stay counter-clockwise and in the same layer).

    In the lower bound a node's stress meets the tractions of every outline edge of
    its triangle; at a corner of the ground where the surcharge ends (a crest at the
    footing's level) the two edges carry different tractions, which no one stress
    state meets unless the corner angle is 90 degrees: the program would be
    infeasible. Split, each piece's node at the corner sees one edge only. (The same
    cure as solver.mesh applies to its own meshes.)
    """
    edges = np.sort(triangles[:, [[0, 1], [1, 2], [2, 0]]].reshape(-1, 2), axis=1)
    _, inverse, counts = np.unique(edges, axis=0, return_inverse=True, return_counts=True)
    outline = (counts[inverse.ravel()] == 1).reshape(-1, 3).sum(axis=1)
    corner = np.flatnonzero(outline >= 2)
    if len(corner) == 0:
        return points, triangles, layer
    centre = len(points) + np.arange(len(corner))
    a, b, c = triangles[corner].T
    keep = np.ones(len(triangles), dtype=bool)
    keep[corner] = False
    pieces = np.concatenate([np.column_stack([a, b, centre]), np.column_stack([b, c, centre]),
                             np.column_stack([c, a, centre])])
    return (np.concatenate([points, points[triangles[corner]].mean(axis=1)]),
            np.concatenate([triangles[keep], pieces]), np.concatenate([layer[keep], np.tile(layer[corner], 3)]))


def _kinds_at_nodes(b_edges: np.ndarray, b_kind: np.ndarray, n: int) -> np.ndarray:
    """(n, 2) kinds of the two outline edges at each node (-1 off the outline); every
    outline node has exactly two (checked by _check_outline)."""
    out = np.full((n, 2), -1)
    nodes = b_edges.ravel()
    kinds = np.repeat(b_kind, 2)
    order = np.argsort(nodes, kind="stable")
    nodes, kinds = nodes[order], kinds[order]
    first = np.r_[True, nodes[1:] != nodes[:-1]]
    out[nodes[first], 0] = kinds[first]
    out[nodes[~first], 1] = kinds[~first]
    return out


def _check_outline(p: np.ndarray, b_edges: np.ndarray, name: str, tol: float) -> None:
    """The outline is a set of simple closed curves: two outline edges at every outline
    node, and no two outline edges crossing."""
    count = np.bincount(b_edges.ravel(), minlength=len(p))
    if np.any((count != 0) & (count != 2)):
        node = int(np.flatnonzero((count != 0) & (count != 2))[0])
        raise CaseError(f"{name}: the outline of the soil touches itself at ({p[node, 0]:g}, {p[node, 1]:g}); "
                        "surfaces must meet along curves, not at single points")
    a, b = p[b_edges[:, 0]], p[b_edges[:, 1]]
    for start in range(0, len(b_edges), 256):  # proper crossings, vectorised in blocks
        i = slice(start, start + 256)
        d1 = b[i, None] - a[i, None]
        d2 = (b - a)[None]
        r = a[None] - a[i, None]
        denom = d1[..., 0] * d2[..., 1] - d1[..., 1] * d2[..., 0]
        with np.errstate(divide="ignore", invalid="ignore"):
            s = (r[..., 0] * d2[..., 1] - r[..., 1] * d2[..., 0]) / denom
            t = (r[..., 0] * d1[..., 1] - r[..., 1] * d1[..., 0]) / denom
        eps = 1e-9
        cross = (np.abs(denom) > tol * tol) & (s > eps) & (s < 1 - eps) & (t > eps) & (t < 1 - eps)
        if cross.any():
            j, k = np.argwhere(cross)[0]
            c = a[start + j] + s[j, k] * (b[start + j] - a[start + j])
            raise CaseError(f"{name}: the outline crosses itself near ({c[0]:g}, {c[1]:g}); curves must not cross")


# -- the stages' entry points -------------------------------------------------------------------------

def _site_raw(gmsh, path: pathlib.Path, raw_bytes: bytes, name: str,
              target: int | None) -> tuple[_Raw, Drawing | None]:
    """The raw site mesh from the file's bytes: a .geo is parsed, built and meshed at about
    ``target`` triangles (a coarse mesh when None), a .msh read as given."""
    if path.suffix.lower() == ".msh":
        return _read_msh(gmsh, raw_bytes, name), None
    drawing = _geo_text(raw_bytes, name)
    _build_drawing(gmsh, drawing)
    # the footing's ends and the model's size, for the size field
    foot = [c for c in drawing.curve_groups.get("footing", ()) if c in drawing.curves]
    xy = np.array([drawing.points[t][:2] for t in drawing.points])
    height, span = float(np.ptp(xy[:, 1])), float(np.ptp(xy[:, 0]))
    if foot:
        ends = np.array([drawing.points[p][:2] for c in foot for p in drawing.curves[c][1]])
        B = float(np.ptp(ends[:, 0])) or max(span, height) / 10
        ends = ends[[np.argmin(ends[:, 0]), np.argmax(ends[:, 0])]]
    else:  # reported missing by the checks; any size does to get there
        B, ends = max(span, height) / 10, xy[:1]
    cap = 0.1 * max(height, span / 4, B)
    _mesh_drawing(gmsh, drawing, name, _sources(drawing, ends, B), cap, target or 300)
    return _extract(gmsh, name, drawing.surface_groups, drawing.curve_groups), drawing


def read_site(path: str | pathlib.Path, layers: tuple[Layer, ...], footing_width: float,
              where: str = "geometry.file") -> Geometry:
    """Read and check a site file for a case: the :class:`~solver.model.Geometry` the
    case keeps (file, hash, footing origin, extent, each layer's top and bottom depth).

    Raises CaseError on the first thing missing or inconsistent."""
    path = pathlib.Path(path).resolve()
    if path.suffix.lower() not in (".geo", ".msh"):
        raise CaseError(f"{where}: {label(path)} is not allowed; must be a gmsh .geo script or .msh mesh")
    raw_bytes = _read_bytes(path, where)
    name = label(path)
    with _GMSH_LOCK:
        gmsh = _start_gmsh()
        try:
            raw, drawing = _site_raw(gmsh, path, raw_bytes, name, None)
        finally:
            gmsh.finalize()
    site = check_site(raw, layers, footing_width, name)
    x_c, y_f = site.origin
    if drawing is not None:  # exact levels of the drawn layers (arcs included)
        levels = _drawing_levels(drawing)
        tops = tuple(float(y_f - levels[layer.name][0]) for layer in layers)
        bottoms = tuple(float(y_f - levels[layer.name][1]) for layer in layers)
    else:
        y = site.points[site.triangles, 1]
        tops = tuple(float(-y[site.layer == i].max()) for i in range(len(layers)))
        bottoms = tuple(float(-y[site.layer == i].min()) for i in range(len(layers)))
    used = np.unique(site.triangles)
    return Geometry(file=str(path), sha256=hashlib.sha256(raw_bytes).hexdigest(), origin=(float(x_c), float(y_f)),
                    x_min=float(site.points[used, 0].min()), x_max=float(site.points[used, 0].max()),
                    y_min=float(site.points[used, 1].min()), y_max=float(site.points[used, 1].max()),
                    layer_tops=tops, layer_bottoms=bottoms)


def plan_site_domain(case: Case) -> Domain:
    """The Domain of a drawn site (solver coordinates). The collapse-zone estimate is
    the Prandtl-Reissner one of plan_domain (common practice), for the result only:
    the drawing fixes the extent."""
    g = case.geometry
    B = case.footing.width
    phi = max(s.phi_rad for s in case.strata())
    r0 = B / (2.0 * math.cos(math.pi / 4 + phi / 2))
    r1 = r0 * math.exp(math.pi / 2 * math.tan(phi))
    return Domain(half=False, x_min=g.x_min, x_max=g.x_max, depth=-g.y_min, interfaces=(),
                  mechanism_width=2.0 * r1 * math.cos(math.pi / 4 - phi / 2), mechanism_depth=r1)


def build_site_mesh(case: Case, order: int, elements: int | None = None) -> Mesh:
    """Mesh a case's drawn site for one bound: first order (lower bound) or second order
    with straight sides (upper bound). A .geo is meshed at about ``elements``
    triangles (default ``case.analysis.elements``); a .msh is taken as given.

    The file must still hold the bytes that were checked when the case was read.
    """
    g = case.geometry
    path = pathlib.Path(g.file)
    name = label(path)
    raw_bytes = _read_bytes(path, "geometry.file")
    if hashlib.sha256(raw_bytes).hexdigest() != g.sha256:
        raise CaseError(f"{name}: changed since the case was read; run the case again")
    with _GMSH_LOCK:
        gmsh = _start_gmsh()
        try:
            raw, _ = _site_raw(gmsh, path, raw_bytes, name, elements or case.analysis.elements)
        finally:
            gmsh.finalize()
    site = check_site(raw, case.layers, case.footing.width, name, split_corners=order == 1)
    used = np.unique(site.triangles)
    renumber = np.full(len(site.points), -1, dtype=np.int64)
    renumber[used] = np.arange(len(used))
    points, triangles = site.points[used], renumber[site.triangles]
    if order == 2:
        points, triangles = _second_order(points, triangles)
    return Mesh(points=points, triangles=triangles, layer=site.layer, boundary_element=site.boundary_element,
                boundary_local=site.boundary_local, boundary_kind=site.boundary_kind,
                domain=plan_site_domain(case), footing_width=case.footing.width)
