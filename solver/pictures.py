"""Pictures of a run (matplotlib, PNG and SVG beside result.json).

* ``model``: the ground profile, the layers with their parameters, the water
  table (when given), the footing with its load and the lower bound's mesh; the
  whole model and a detail near the footing.
* ``mechanism``: the upper bound's collapse mechanism: the shear strain rate
  shaded on the mesh (it shows the mechanism in every soil, cohesionless ones
  included), the layers named, velocity arrows, the footing's motion and the
  extent of the moving soil (m and multiples of B).
* ``stress``: the lower bound's stress field: yield utilisation and the
  directions of the principal stresses in the plastic zone (compression
  positive).
* ``contact``: the lower bound's normal and shear stresses along the footing
  base, from its stress field.
* Every detail view frames the upper bound's moving soil and the lower bound's
  plastic zone together, so that neither is cut off and the pictures match.
* :func:`convergence_figure`: lower and upper bound, and wall time, against the
  number of elements (for runs that refine the mesh).

The ground is drawn as it is modelled (:class:`Profile`): level, or level to a
crest, down a slope face to a toe and level beyond. Everything that belongs to
the soil (layer bands, interfaces, the water table, velocity arrows, the
mechanism's frame) is drawn only below the ground surface; the air stays blank.
The load is drawn along its line of action: inclined as given and through the
base at its eccentricity.

Symmetric strip cases are solved on the half domain x >= 0 and mirrored here. A
circular footing (axisymmetric) is drawn as it is solved: the half section r >= 0
through its axis (x is the radius r), never mirrored, with the axis of symmetry
drawn as a chain line at r = 0 and named in words, the footing from r = 0 to B/2. Colour
maps run from light to dark so that the pictures print in grey; every series
also differs in line style or marker. Text from the case file is drawn as
plain text (never as mathematics markup). Figures are built without pyplot, so
drawing has no global state.
"""
from __future__ import annotations

import contextlib
import io
import math
import textwrap
import warnings
from collections.abc import Iterator
from dataclasses import dataclass
from pathlib import Path

import numpy as np
from matplotlib import rc_context
from matplotlib.colors import BoundaryNorm, LinearSegmentedColormap, LogNorm
from matplotlib.figure import Figure
from matplotlib.lines import Line2D
from matplotlib.collections import LineCollection, PolyCollection
from matplotlib.patches import Patch, PathPatch, Polygon, Rectangle
from matplotlib.path import Path as MplPath
from matplotlib.tri import Triangulation

from .export import BoundFields, principal_stresses, write_bytes_atomic
from .model import Case
from .result import MOVING_SPEED_FRACTION

STYLE = {"font.size": 8.5, "axes.titlesize": 9.5, "axes.labelsize": 8.5, "legend.fontsize": 8,
         "xtick.labelsize": 8, "ytick.labelsize": 8, "svg.hashsalt": "bearbound",
         "svg.fonttype": "path", "figure.dpi": 100}
PNG_DPI = 150
PAGE_WIDTH_IN = 7.2  # fits an A4 or Letter page with margins
# Layer fills: distinct lightness (so they differ in grey) and a hatch each.
LAYER_COLOURS = ("#f3e6c4", "#bfd9d4", "#dcc08a", "#9cc3bb", "#e6d7b0", "#7fa9a1")
LAYER_HATCHES = ("", ".", "/", "x", "\\", "o")
FOOTING_COLOUR = "#3a3a3a"
WATER_COLOUR = "#1f4e9c"  # dark: reads as a dark grey in print; the dash pattern tells it apart
WATER_STYLE = (0, (6, 2, 1, 2))  # dash-dot: distinct from the dashed layer interfaces
# the soil 'moves' above this fraction of the footing's speed: the frame, the stated extent and the
# arrows all use it, so the frame encloses what the arrows show (result.MOVING_SPEED_FRACTION)
MOVING_SPEED = MOVING_SPEED_FRACTION
PLASTIC_UTILISATION = 0.98  # stress points at least this close to the yield surface count as plastic
ARROW_CELLS = 30  # velocity arrows and stress crosses: grid cells across the detail view
ARROW_LONGEST = 0.8  # the fastest soil's arrow, in grid cells
ARROW_CLEARANCE = 0.08  # grid cells an arrow's ends keep below the ground surface (room for the head)
# Light-to-dark maps that print in grey.
UTILISATION_MAP = LinearSegmentedColormap.from_list("utilisation", ["#ffffff", "#e3e3e3", "#a6a6a6", "#6e6e6e"])
# (light to mid: the black velocity arrows stay visible on the darkest shade, in colour or grey)
STRAIN_RATE_MAP = LinearSegmentedColormap.from_list("strain rate", ["#fdf0dc", "#f2b27a", "#d27646", "#a0583a"])


def plain(text: str) -> str:
    """Text from the case file, made safe for matplotlib: a '$' is drawn, never read as mathematics.

    >>> print(plain("fill $x$"))
    fill \\$x\\$
    """
    return str(text).replace("$", r"\$")


# -- the ground as drawn ------------------------------------------------------------

@dataclass(frozen=True)
class Profile:
    """The ground surface and the soil below it, as the pictures draw them.

    Coordinates in m: x from the footing centre, y up, y = 0 at the footing base.
    Level ground lies at y = 0 (the soil above the base, ``Df`` thick, is drawn as
    a band beside the footing but is not meshed). Beside a slope the ground is
    level at y = 0 up to the crest, falls along the face to the toe at
    (``toe_x``, -``slope_height``) and is level beyond. The soil is the region at
    or below that surface inside the meshed box; the rest is air.

    >>> p = Profile(B=1.0, Df=0.0, x_min=-10.0, x_max=20.0, depth=8.0, crest_x=1.0, toe_x=5.0, slope_height=2.0)
    >>> p.surface_y(np.array([-3.0, 1.0, 3.0, 5.0, 9.0])).tolist()
    [0.0, 0.0, -1.0, -2.0, -2.0]
    >>> p.in_soil(np.array([[3.0, -0.5], [3.0, -1.5], [8.0, -1.0]])).tolist()
    [False, True, False]
    >>> p.soil_end(-1.0), p.soil_end(-3.0)
    (3.0, 20.0)
    """

    B: float  # m, footing width
    Df: float  # m, embedment
    x_min: float  # m, the meshed box (a strip's half domain's mirror image included; 0 on a circle's axis)
    x_max: float
    depth: float  # m below the base
    crest_x: float | None = None  # m, None: level ground
    toe_x: float | None = None
    slope_height: float = 0.0  # m
    axis: bool = False  # a circle: x is the radius r and x_min = 0 its axis; nothing is drawn at r < 0

    @classmethod
    def of(cls, case: Case, domain: dict) -> Profile:
        """From the case and result.json's "domain" (older results without the box's ends
        or the slope keys are read as a level, centred box)."""
        half = bool(domain.get("half_domain_by_symmetry"))
        axis = is_circle(case)
        if domain.get("x_max_m") is not None:
            x_max = float(domain["x_max_m"])
            x_min = -x_max if half and not axis else float(domain["x_min_m"])
        else:
            x_max = float(domain["width_m"]) if half or axis else float(domain["width_m"]) / 2
            x_min = 0.0 if axis else -x_max
        crest, toe = domain.get("slope_crest_x_m"), domain.get("slope_toe_x_m")
        if crest is None or toe is None:
            crest = toe = None
        return cls(B=case.footing.width, Df=case.footing.embedment, x_min=x_min, x_max=x_max,
                   depth=float(domain["depth_m"]), crest_x=crest, toe_x=toe,
                   slope_height=float(domain.get("slope_height_m") or 0.0) if crest is not None else 0.0,
                   axis=axis)

    @property
    def slope(self) -> bool:
        return self.crest_x is not None

    @property
    def slope_angle_deg(self) -> float:
        return math.degrees(math.atan2(self.slope_height, self.toe_x - self.crest_x)) if self.slope else 0.0

    def surface_y(self, x: np.ndarray) -> np.ndarray:
        """Height (m) of the soil's top at x (the base level y = 0 beside the footing on level ground)."""
        x = np.asarray(x, dtype=float)
        if not self.slope:
            return np.zeros_like(x)
        return np.interp(x, [self.crest_x, self.toe_x], [0.0, -self.slope_height])

    def soil_end(self, y: float) -> float:
        """The largest x (m) at which the level y is still in the soil (its left end is x_min)."""
        if not self.slope or y <= -self.slope_height:
            return self.x_max
        return min(self.crest_x + (-y) * (self.toe_x - self.crest_x) / self.slope_height, self.x_max)

    def in_soil(self, points: np.ndarray, clearance: float = 0.0) -> np.ndarray:
        """Whether points (n, 2) lie in the soil at least ``clearance`` (m, vertically) below its top."""
        x, y = points[:, 0], points[:, 1]
        return ((x >= self.x_min) & (x <= self.x_max) & (y >= -self.depth)
                & (y <= self.surface_y(x) - clearance))

    def segments_in_soil(self, start: np.ndarray, end: np.ndarray, clearance: float = 0.0) -> np.ndarray:
        """Whether the straight segments start-end (n, 2 each) lie wholly in the soil.

        The soil left of the toe is convex (below a concave surface), and so is the soil
        right of it: a segment lies in the soil when its ends do and, if it crosses the
        toe's vertical, so does that crossing point."""
        inside = self.in_soil(start, clearance) & self.in_soil(end, clearance)
        if not self.slope:
            return inside
        x0, x1 = start[:, 0], end[:, 0]
        spans = (np.minimum(x0, x1) < self.toe_x) & (np.maximum(x0, x1) > self.toe_x)
        with np.errstate(divide="ignore", invalid="ignore"):
            t = np.where(spans, (self.toe_x - x0) / (x1 - x0), 0.0)
        crossing = start + t[:, None] * (end - start)
        return inside & (~spans | self.in_soil(crossing, clearance))

    def surface_corners(self, x_lo: float, x_hi: float) -> np.ndarray:
        """(n, 2) the soil's top from x_lo to x_hi (m): its ends and the crest and toe between."""
        xs = [x_lo] + ([x for x in (self.crest_x, self.toe_x) if x_lo < x < x_hi] if self.slope else []) + [x_hi]
        xs = np.array(xs)
        return np.column_stack([xs, self.surface_y(xs)])

    def soil_polygon(self, x_lo: float, x_hi: float, y_lo: float) -> np.ndarray:
        """(n, 2) corners of the soil within x_lo..x_hi and above y_lo (m), counter-clockwise."""
        top = self.surface_corners(x_lo, x_hi)[::-1]
        return np.vstack([[[x_lo, y_lo], [x_hi, y_lo]], top])

    def ground_lines(self, x_lo: float, x_hi: float) -> list[np.ndarray]:
        """The ground surface left and right of the footing (m), as polylines: the top of the
        soil above the base (y = Df) on level ground, the true profile beside a slope. A
        circle's half section has the right one only (its left is the axis).

        >>> len(Profile(B=2.0, Df=0.5, x_min=0.0, x_max=9.0, depth=5.0, axis=True).ground_lines(0.0, 9.0))
        1
        """
        half = self.B / 2
        left = np.array([[x_lo, self.Df], [-half, self.Df], [-half, 0.0]])
        right = self.surface_corners(half, max(x_hi, half))
        right[:, 1] += self.Df  # a slope comes with Df = 0 (the case file refuses both)
        right = np.vstack([[[half, 0.0]], right])
        return [right] if self.axis else [left, right]

    def clip_patch(self, ax, x_lo: float, x_hi: float, y_lo: float) -> Polygon:
        """A patch (not drawn) of the soil, a little beyond the given box (never across a
        circle's axis), to clip artists to."""
        pad = 0.05 * (x_hi - x_lo)
        left = max(x_lo - pad, self.x_min) if self.axis else x_lo - pad
        return Polygon(self.soil_polygon(left, x_hi + pad, y_lo - pad), closed=True,
                       transform=ax.transData)


def is_circle(case: Case) -> bool:
    """A circular footing, analysed and drawn in the half section r >= 0 through its axis."""
    return getattr(case.footing, "shape", "strip") == "circular"


def mirrored(case: Case, domain: dict) -> bool:
    """Whether the pictures mirror the solved half domain: a symmetric strip's, never a circle's
    (its half section r >= 0 is the whole of what is drawn)."""
    return bool(domain.get("half_domain_by_symmetry")) and not is_circle(case)


# -- geometry helpers ------------------------------------------------------------

def mirror_points(points: np.ndarray, half: bool) -> np.ndarray:
    """Points of the half domain and their mirror images (x -> -x), when ``half``."""
    return np.vstack([points, points * [-1.0, 1.0]]) if half else points


def mirror_triangles(triangles: np.ndarray, n_points: int, half: bool,
                     points: np.ndarray | None = None) -> np.ndarray:
    """Triangles of the half domain and of its mirror image (indices into mirror_points).

    Given ``points``, mirrored triangles reuse the original of every node on x = 0, so
    that the whole is one valid triangulation (needed for interpolation)."""
    if not half:
        return triangles
    image = np.arange(n_points) + n_points
    if points is not None:
        on_axis = np.abs(points[:, 0]) <= 1e-9 * max(float(np.abs(points).max()), 1.0)
        image[on_axis] = np.flatnonzero(on_axis)
    return np.vstack([triangles, image[triangles]])


def own_node_triangulation(fields: BoundFields, half: bool) -> Triangulation:
    """Each triangle with its own three points (the lower bound's stress jumps across edges)."""
    pts = fields.points[fields.triangles[:, :3]].reshape(-1, 2)
    tri = np.arange(len(pts)).reshape(-1, 3)
    pts_all = mirror_points(pts, half)
    return Triangulation(pts_all[:, 0], pts_all[:, 1], mirror_triangles(tri, len(pts), half))


def corner_triangulation(fields: BoundFields, half: bool) -> Triangulation:
    pts = mirror_points(fields.points, half)
    tri = mirror_triangles(fields.triangles[:, :3], len(fields.points), half)
    return Triangulation(pts[:, 0], pts[:, 1], tri)


def interpolate_per_triangle(points: np.ndarray, triangles: np.ndarray, values: np.ndarray,
                             gx: np.ndarray, gy: np.ndarray) -> tuple[np.ma.MaskedArray, np.ma.MaskedArray]:
    """Linear interpolation of nodal (n, 2) values at grid points, each from the nodes of
    the triangle it falls in. Nodes may repeat a position (an upper bound with velocity
    jumps gives each side of an edge its own nodes): the triangle search runs on the
    merged positions, the values come from the triangle's own nodes. Masked outside.

    >>> import numpy as np
    >>> p = np.array([[0., 0.], [1., 0.], [0., 1.], [1., 0.], [1., 1.], [0., 1.]])
    >>> u, v = interpolate_per_triangle(p, np.array([[0, 1, 2], [3, 4, 5]]),
    ...                                 np.array([[0., 0.], [0., 0.], [0., 0.], [1., 2.], [1., 2.], [1., 2.]]),
    ...                                 np.array([0.2, 0.8]), np.array([0.2, 0.8]))
    >>> u.tolist(), v.tolist()
    ([0.0, 1.0], [0.0, 2.0])
    """
    unique, index = np.unique(np.round(points, 12), axis=0, return_inverse=True)
    merged = Triangulation(unique[:, 0], unique[:, 1], index.ravel()[triangles])
    found = merged.get_trifinder()(gx, gy)
    inside = found >= 0
    corners = points[triangles[np.where(inside, found, 0)]]  # (..., 3, 2)
    a, b, c = corners[..., 0, :], corners[..., 1, :], corners[..., 2, :]
    det = (b[..., 0] - a[..., 0]) * (c[..., 1] - a[..., 1]) - (c[..., 0] - a[..., 0]) * (b[..., 1] - a[..., 1])
    det = np.where(inside, det, 1.0)
    l1 = ((gx - a[..., 0]) * (c[..., 1] - a[..., 1]) - (c[..., 0] - a[..., 0]) * (gy - a[..., 1])) / det
    l2 = ((b[..., 0] - a[..., 0]) * (gy - a[..., 1]) - (gx - a[..., 0]) * (b[..., 1] - a[..., 1])) / det
    weights = np.stack([1.0 - l1 - l2, l1, l2], axis=-1)
    nodal = values[triangles[np.where(inside, found, 0)]]  # (..., 3, 2)
    out = np.einsum("...k,...kd->...d", weights, nodal)
    return (np.ma.masked_array(out[..., 0], mask=~inside), np.ma.masked_array(out[..., 1], mask=~inside))


def split_quadratic(triangles: np.ndarray) -> np.ndarray:
    """Four linear triangles per 6-node triangle (corners 0-2, midsides 3: 0-1, 4: 1-2, 5: 2-0)."""
    t = triangles
    return np.vstack([t[:, [0, 3, 5]], t[:, [3, 1, 4]], t[:, [5, 4, 2]], t[:, [3, 4, 5]]])


# area coordinates of the centroids of split_quadratic's four sub-triangles, in its order
SUB_CENTROIDS = np.array([[2 / 3, 1 / 6, 1 / 6], [1 / 6, 2 / 3, 1 / 6], [1 / 6, 1 / 6, 2 / 3], [1 / 3, 1 / 3, 1 / 3]])


def shear_strain_rate(points: np.ndarray, triangles: np.ndarray, velocity: np.ndarray) -> np.ndarray:
    """The largest engineering shear strain rate sqrt((e_xx - e_yy)^2 + g_xy^2) = |e_1 - e_3| of a
    quadratic velocity field (6-node triangles, nodal ``velocity`` per unit footing velocity), 1/m,
    at the centroid of each of :func:`split_quadratic`'s four sub-triangles, in its order.

    It shows the mechanism in every soil; the plastic dissipation does not where c' = 0 (zero
    under associated flow).

    >>> p = np.array([[0., 0.], [1., 0.], [0., 1.], [.5, 0.], [.5, .5], [0., .5]])
    >>> shear_strain_rate(p, np.array([[0, 1, 2, 3, 4, 5]]), np.column_stack([p[:, 1], 0 * p[:, 1]])).round(12)
    array([1., 1., 1., 1.])
    """
    x, y = (points[triangles[:, :3], k] for k in (0, 1))  # (n, 3) corners
    b = np.column_stack([y[:, 1] - y[:, 2], y[:, 2] - y[:, 0], y[:, 0] - y[:, 1]])  # d(area coordinate)/dx * 2A
    c = np.column_stack([x[:, 2] - x[:, 1], x[:, 0] - x[:, 2], x[:, 1] - x[:, 0]])  # d(area coordinate)/dy * 2A
    twice_area = x[:, 0] * b[:, 0] + x[:, 1] * b[:, 1] + x[:, 2] * b[:, 2]
    vel = velocity[triangles]  # (n, 6, 2)
    out = []
    for L in SUB_CENTROIDS:
        # dN_j / dL_k of the six quadratic shape functions (corners 0-2, midsides 0-1, 1-2, 2-0)
        dN = np.array([[4 * L[0] - 1, 0, 0], [0, 4 * L[1] - 1, 0], [0, 0, 4 * L[2] - 1],
                       [4 * L[1], 4 * L[0], 0], [0, 4 * L[2], 4 * L[1]], [4 * L[2], 0, 4 * L[0]]])
        dx = np.einsum("jk,nk->nj", dN, b) / twice_area[:, None]  # (n, 6)
        dy = np.einsum("jk,nk->nj", dN, c) / twice_area[:, None]
        exx, eyy = (dx * vel[..., 0]).sum(1), (dy * vel[..., 1]).sum(1)
        gxy = (dy * vel[..., 0]).sum(1) + (dx * vel[..., 1]).sum(1)
        out.append(np.hypot(exx - eyy, gxy))
    return np.concatenate(out)


def velocity_jumps(upper: BoundFields) -> tuple[np.ndarray, np.ndarray]:
    """The upper bound's velocity jumps, found from the mesh: edges whose two triangles have
    nodes of their own there. Returns the ends (n, 2, 2) m and the jump's mean size over the
    edge (Simpson's rule on its ends and middle) per unit footing velocity, m/m; empty when
    the velocity is continuous.

    >>> p = np.array([[0., 0.], [1., 0.], [0., 1.], [.5, 0.], [.5, .5], [0., .5],
    ...               [1., 0.], [1., 1.], [0., 1.], [1., .5], [.5, 1.], [.5, .5]])
    >>> v = np.zeros((12, 2)); v[6:, 0] = 2.0
    >>> f = BoundFields("upper", p, np.array([[0, 1, 2, 3, 4, 5], [6, 7, 8, 9, 10, 11]]), np.zeros(2, int),
    ...                 {"velocity": v})
    >>> ends, size = velocity_jumps(f)
    >>> ends.tolist(), size.tolist()
    ([[[0.0, 1.0], [1.0, 0.0]]], [2.0])
    """
    tri, vel = np.asarray(upper.triangles), np.asarray(upper.arrays["velocity"])
    if tri.shape[1] != 6 or not len(tri):
        return np.zeros((0, 2, 2)), np.zeros(0)
    edges = tri[:, [[0, 1, 3], [1, 2, 4], [2, 0, 5]]].reshape(-1, 3)  # (3n, 3): ends and middle
    scale = max(float(np.abs(upper.points).max()), 1.0)
    where = np.round(upper.points / (1e-9 * scale)).astype(np.int64)
    a, b = where[edges[:, 0]], where[edges[:, 1]]
    flip = (a[:, 0] > b[:, 0]) | ((a[:, 0] == b[:, 0]) & (a[:, 1] > b[:, 1]))
    edges[flip] = edges[flip][:, [1, 0, 2]]  # each edge from its lower end, so the two sides line up
    key = np.column_stack([where[edges[:, 0]], where[edges[:, 1]]])
    _, which, count = np.unique(key, axis=0, return_inverse=True, return_counts=True)
    which = which.reshape(-1)
    order = np.argsort(which, kind="stable")
    pair = (which[order[:-1]] == which[order[1:]]) & (count[which[order[:-1]]] == 2)
    one, two = edges[order[:-1][pair]], edges[order[1:][pair]]
    split = (one != two).any(axis=1)
    one, two = one[split], two[split]
    size = np.linalg.norm(vel[one] - vel[two], axis=2)  # (m, 3)
    mean = (size[:, 0] + size[:, 1] + 4.0 * size[:, 2]) / 6.0
    return upper.points[one[:, :2]], mean


# -- a site drawn in gmsh ------------------------------------------------------------

@dataclass
class DrawnSite:
    """A site drawn by the user in gmsh, as the pictures draw it: the soil is the union of
    the mesh's triangles, its outline the edges that only one triangle uses (the mesh's own
    boundary; found from the triangles, so it works as well on fields read back from
    fields.vtu, where every lower-bound triangle has its own nodes).

    Coordinates in m, as the solver's (x from the footing centre, y up, 0 at the footing
    level). Triangles are counter-clockwise, so each outline edge has the soil on its left.

    >>> f = BoundFields("lower", np.array([[0., 0.], [1., 0.], [0., 1.], [1., 0.], [1., 1.], [0., 1.]]),
    ...                 np.array([[0, 1, 2], [3, 4, 5]]), np.array([0, 1]), {})
    >>> site = DrawnSite.of(f, half=False)
    >>> len(site.points), len(site.outline), len(site.interfaces)
    (4, 4, 1)
    >>> site.in_soil(np.array([[0.5, 0.5], [1.5, 0.5], [0.5, 0.95]]), clearance=0.1).tolist()
    [True, False, False]
    """

    points: np.ndarray  # (n, 2) m, coincident nodes merged
    triangles: np.ndarray  # (n_el, 3) corner indices, counter-clockwise
    layer: np.ndarray  # (n_el,) index into Case.layers_below_base()
    outline: np.ndarray  # (n_b, 2) node pairs, the soil on the left of each
    interfaces: np.ndarray  # (n_i, 2) node pairs between triangles of different layers
    triangulation: Triangulation

    @classmethod
    def of(cls, fields: BoundFields, half: bool) -> DrawnSite:
        pts = mirror_points(fields.points, half)
        tri = mirror_triangles(fields.triangles[:, :3], len(fields.points), half)
        layer = np.concatenate([fields.layer] * (2 if half else 1)).astype(int)
        points, merged = np.unique(pts, axis=0, return_inverse=True)
        tri = merged.reshape(-1)[tri]
        a, b, c = (points[tri[:, k]] for k in range(3))
        clockwise = (b - a)[:, 0] * (c - a)[:, 1] - (b - a)[:, 1] * (c - a)[:, 0] < 0  # mirrored ones turn the other way
        tri[clockwise] = tri[clockwise][:, [0, 2, 1]]
        edges = np.concatenate([tri[:, [0, 1]], tri[:, [1, 2]], tri[:, [2, 0]]])
        owner = np.tile(np.arange(len(tri)), 3)
        _, which, count = np.unique(np.sort(edges, axis=1), axis=0, return_inverse=True, return_counts=True)
        which = which.reshape(-1)
        outline = edges[count[which] == 1]
        order = np.argsort(which, kind="stable")  # the two uses of an inner edge side by side
        pair = which[order[:-1]] == which[order[1:]]
        first, second = order[:-1][pair], order[1:][pair]
        interfaces = edges[first[layer[owner[first]] != layer[owner[second]]]]
        return cls(points, tri, layer, outline, interfaces, Triangulation(points[:, 0], points[:, 1], tri))

    @property
    def y_top(self) -> float:
        """The highest point of the soil, m."""
        return float(self.points[:, 1].max())

    def top_at(self, x: float) -> float:
        """The soil's highest point (m) on the vertical at x, to 1/1000 of the soil's height
        (the footing level, 0, where that vertical misses the soil)."""
        y = np.linspace(self.y_top, float(self.points[:, 1].min()), 1001)
        inside = self.in_soil(np.column_stack([np.full_like(y, x), y]))
        return float(y[inside.argmax()]) if inside.any() else 0.0

    def in_soil(self, points: np.ndarray, clearance: float = 0.0) -> np.ndarray:
        """Whether points (n, 2) lie in a triangle, and so does the point ``clearance`` (m) above."""
        finder = self.triangulation.get_trifinder()
        x, y = np.asarray(points, dtype=float).T
        return (finder(x, y) >= 0) & (finder(x, y + clearance) >= 0)

    def segments_in_soil(self, start: np.ndarray, end: np.ndarray, clearance: float = 0.0) -> np.ndarray:
        """Whether the segments start-end (n, 2 each) lie in the soil, tested at nine points along
        each (an arrow is short beside the drawn features, so nine points find any corner it cuts)."""
        inside = np.ones(len(start), dtype=bool)
        for t in np.linspace(0.0, 1.0, 9):
            inside &= self.in_soil(start + t * (end - start), clearance)
        return inside

    def loops(self) -> list[np.ndarray]:
        """The outline as closed polylines (m), each with its first point repeated at its end."""
        following = dict(zip(self.outline[:, 0].tolist(), self.outline[:, 1].tolist()))
        loops = []
        while following:
            start, node = next(iter(following.items()))
            chain = [start]
            while node != start and node in following:
                chain.append(node)
                node = following.pop(node)
            following.pop(start, None)
            loops.append(self.points[chain + [start]])
        return loops

    def clip_patch(self, ax) -> PathPatch:
        """A patch (not drawn) of the soil to clip artists to."""
        loops = self.loops()
        codes = np.concatenate([[MplPath.MOVETO] + [MplPath.LINETO] * (len(p) - 2) + [MplPath.CLOSEPOLY]
                                for p in loops])
        return PathPatch(MplPath(np.vstack(loops), codes), transform=ax.transData)


def _drawn_site(case: Case, fields: BoundFields | None, half: bool) -> DrawnSite | None:
    """The drawn site of a case with a [geometry] file (None for level ground or a slope)."""
    if case.geometry is None or fields is None:
        return None
    return DrawnSite.of(fields, half)


def _segments_line(points: np.ndarray, pairs: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """x and y (m) of node pairs as one polyline broken by NaN (one Line2D for many edges)."""
    xy = np.concatenate([points[pairs], np.full((len(pairs), 1, 2), np.nan)], axis=1).reshape(-1, 2)
    return xy[:, 0], xy[:, 1]


def _draw_site_lines(ax, site: DrawnSite) -> None:
    """The drawn site's layer interfaces (dashed) and its outline (the ground and the model's edges)."""
    if len(site.interfaces):
        ax.plot(*_segments_line(site.points, site.interfaces), color="#4d4d4d", linewidth=0.8, linestyle="--",
                zorder=3)
    for loop in site.loops():
        ax.plot(loop[:, 0], loop[:, 1], color="black", linewidth=1.0, zorder=4, solid_joinstyle="miter")


def _layer_colour_index(case: Case) -> list[int]:
    """For each entry of Case.layers_below_base(), its index in Case.layers (fill and hatch)."""
    position = {id(layer): i for i, layer in enumerate(case.layers)}
    return [position[id(layer)] for layer, *_ in case.layers_below_base()]


def _draw_site(ax, case: Case, site: DrawnSite) -> None:
    """Every triangle filled in its layer's colour and hatch, then interfaces and outline."""
    colour = _layer_colour_index(case)
    for index in np.unique(site.layer):
        i = colour[index]
        ax.add_collection(PolyCollection(site.points[site.triangles[site.layer == index]],
                                         facecolors=LAYER_COLOURS[i % len(LAYER_COLOURS)],
                                         hatch=LAYER_HATCHES[i % len(LAYER_HATCHES)], edgecolors="#6b6b6b",
                                         linewidths=0.0, antialiaseds=False, zorder=0, rasterized=True))
    _draw_site_lines(ax, site)


def _site_handles(case: Case) -> list:
    """Legend entries of a drawn site: its layers by name (their extent is in the drawing) and the outline."""
    handles = []
    colour = _layer_colour_index(case)
    for (layer, *_), i in zip(case.layers_below_base(), colour):
        handles.append(Patch(facecolor=LAYER_COLOURS[i % len(LAYER_COLOURS)],
                             hatch=LAYER_HATCHES[i % len(LAYER_HATCHES)], edgecolor="#6b6b6b",
                             label=_layer_label(layer, 0.0, math.inf, None, False, drawn=True)))
    handles.append(Line2D([], [], color="black", linewidth=1.0,
                          label="outline of the soil as drawn (the mesh's boundary); air above it is left blank"))
    if case.ground.surcharge > 0:
        handles.append(Patch(facecolor="none", edgecolor="none",
                             label=f"surcharge {case.ground.surcharge:g} kPa on the ground at the footing's "
                                   "level (y = 0) beside the footing (not marked)"))
    return handles


def moving_extent(upper: BoundFields | None, half: bool) -> tuple[float, float, float] | None:
    """(x_lo, x_hi, depth) in m of the soil moving faster than MOVING_SPEED (per unit velocity of
    the footing along the load), from the upper bound's nodal velocities; None if nothing moves.

    >>> f = BoundFields("upper", np.array([[0.0, 0.0], [2.0, -1.0], [5.0, -3.0]]), np.zeros((0, 6), int),
    ...                 np.zeros(0, int), {"velocity": np.array([[0.0, -1.0], [0.5, 0.5], [0.0, 0.0]])})
    >>> moving_extent(f, half=True)
    (-2.0, 2.0, 1.0)
    """
    if upper is None or "velocity" not in upper.arrays:
        return None
    moving = np.hypot(*np.asarray(upper.arrays["velocity"]).T) > MOVING_SPEED
    if not moving.any():
        return None
    x, depth = upper.points[moving, 0], float(-upper.points[moving, 1].min())
    if half:
        reach = float(np.abs(x).max())
        return -reach, reach, depth
    return float(x.min()), float(x.max()), depth


def footing_motion(case: Case, upper: BoundFields, half: bool) -> dict | None:
    """The rigid footing's velocity read from the nodes on its base (per unit velocity along
    the load): horizontal ``u`` (rough base only; None on a smooth one, where the soil
    slides), and vertical ``v_left``, ``v_right`` at its edges (negative: down)."""
    B = case.footing.width
    p, vel = upper.points, np.asarray(upper.arrays.get("velocity", np.zeros((0, 2))))
    if len(vel) != len(p):
        return None
    tol = 1e-9 * max(float(np.abs(p).max()), 1.0)
    base = (np.abs(p[:, 1]) <= tol) & (np.abs(p[:, 0]) <= B / 2 + tol)
    if base.sum() < 2:
        return None
    x, v = p[base, 0], vel[base, 1]
    if half:
        x, v = np.concatenate([x, -x]), np.concatenate([v, v])
    slope, at_centre = np.polyfit(x, v, 1)  # rigid: v = v_centre + omega x
    u = float(np.median(vel[base, 0])) if case.footing.base == "rough" and not half else (0.0 if half else None)
    return {"u": u, "v_left": float(at_centre - slope * B / 2), "v_right": float(at_centre + slope * B / 2)}


def detail_view(profile: Profile, domain: dict, extent: tuple[float, float, float] | None
                ) -> tuple[float, float, float]:
    """x_lo, x_hi and depth (m) of the detail view: the mechanism with some room around it (centred
    on the footing for a symmetric case), the crest, and the toe when it is within a mechanism's
    width of the moving soil."""
    B = profile.B
    if extent is not None:
        x_lo, x_hi, depth = extent
    else:
        reach = B / 2 + domain.get("estimated_mechanism_width_m", 2 * B)
        x_lo, x_hi, depth = -reach, reach, domain.get("estimated_mechanism_depth_m", 2 * B)
    x_lo, x_hi = min(x_lo, -B / 2), max(x_hi, B / 2)
    room = 0.075 * (x_hi - x_lo) + 0.3 * B
    lo, hi, down = x_lo - room, x_hi + room, 1.25 * depth + 0.3 * B
    if profile.slope:
        hi = max(hi, profile.crest_x + 0.5 * B)
        if profile.toe_x - x_hi <= x_hi - x_lo:
            hi = max(hi, profile.toe_x + room)
            down = max(down, profile.slope_height + 0.3 * B)
    if extent is None or domain.get("half_domain_by_symmetry"):
        lo, hi = -max(-lo, hi), max(-lo, hi)  # a symmetric case, or nothing measured: centred
    return max(lo, profile.x_min), min(hi, profile.x_max), min(down, profile.depth)


def _wrap(text: str) -> str:
    return textwrap.fill(text, 105, subsequent_indent="    ")


def _layer_label(layer, top: float, bottom: float, water: float | None, slope: bool, drawn: bool = False) -> str:
    """One legend line per layer: name, depths below ground (m), model and parameters with units;
    ``water``: the water table's depth below ground (m), None when there is none. A layer of a
    drawn site (``drawn``) has no depths: the drawing gives its extent."""
    if layer.is_tresca:
        strength = f"Tresca, su = {layer.undrained_strength:g} kPa at its {'highest point' if drawn else 'top'}"
        if layer.strength_gradient:
            strength += f", rising {layer.strength_gradient:g} kPa/m"
    else:
        strength = f"Mohr-Coulomb, c\u2032 = {layer.cohesion:g} kPa, \u03c6\u2032 = {layer.friction_angle:g}\u00b0"
        if layer.dilation_angle is not None:
            strength += f", dilation \u03c8\u2032 = {layer.dilation_angle:g}\u00b0 (Davis reduction)"
    weight = f"\u03b3 = {layer.unit_weight:g} kN/m\u00b3"
    if water is not None and layer.saturated_unit_weight is not None:
        weight += f", saturated {layer.saturated_unit_weight:g} kN/m\u00b3"
    elif water is not None and bottom > water:
        weight += " above and below the water table"
    if drawn:
        return _wrap(f"{plain(layer.name)}: {strength}, {weight}")
    ground = "below the ground beside the footing" if slope else "below ground"
    depths = f"from {top:g} m {ground} down" if math.isinf(bottom) else f"{top:g} to {bottom:g} m {ground}"
    return _wrap(f"{plain(layer.name)} ({depths}): {strength}, {weight}")


def _ratio(profile: Profile) -> str:
    run = (profile.toe_x - profile.crest_x) / profile.slope_height
    return f"1 : {run:.2f}"


def _ground_handles(case: Case, profile: Profile) -> list:
    """Legend entries of the ground: layers, soil above the base, surface, surcharge, water table."""
    handles = []
    Df = case.footing.embedment
    below = {id(layer) for layer, *_ in case.layers_below_base()}
    water = case.ground.water_table
    for i, (layer, top) in enumerate(zip(case.layers, case.layer_tops())):
        if id(layer) not in below:
            continue  # wholly above the base: carried as surcharge, shown as that soil
        bottom = top + layer.thickness if layer.thickness is not None else math.inf
        handles.append(Patch(facecolor=LAYER_COLOURS[i % len(LAYER_COLOURS)],
                             hatch=LAYER_HATCHES[i % len(LAYER_HATCHES)], edgecolor="#6b6b6b",
                             label=_layer_label(layer, top, bottom, water, profile.slope)))
    if Df > 0:
        handles.append(Patch(facecolor="#ececec", hatch="---", edgecolor="#9a9a9a",
                             label=_wrap(f"soil above the base (Df = {Df:g} m): not meshed, carried as the "
                                         f"surcharge {case.overburden_kPa():g} kPa beside the footing")))
    if profile.slope:
        g = case.ground
        handles.append(Line2D([], [], color="black", linewidth=1.2, marker="o", markersize=4,
                              markerfacecolor="white",
                              label=_wrap(f"ground surface: level to the crest {g.crest_setback:g} m beyond the "
                                          f"footing's edge (x = {profile.crest_x:g} m), a slope of "
                                          f"{g.slope_angle:g}\u00b0 ({_ratio(profile)}, vertical : horizontal) "
                                          "falling "
                                          f"{profile.slope_height:g} m to the toe (x = {profile.toe_x:.2f} m), "
                                          "level beyond; air above it is left blank")))
    if case.ground.surcharge > 0:
        where = "on the level ground at footing level (none on the slope or beyond the toe)" if profile.slope \
            else "on the ground surface"
        handles.append(Line2D([], [], linestyle="none", marker=7, color="black", markersize=4,
                              label=f"surcharge {where}: {case.ground.surcharge:g} kPa"))
    if water is not None:
        ground = "the ground beside the footing" if profile.slope else "ground"
        text = f"water table, {case.ground.water_table:g} m below {ground}" + (" (drawn in the soil only)"
                                                                              if profile.slope else "")
        if case.pore_pressure_at_base_kPa() > 0:
            text += f"; pore pressure at the base {case.pore_pressure_at_base_kPa():.1f} kPa"
        handles.append(Line2D([], [], color=WATER_COLOUR, linestyle=WATER_STYLE, marker="v", label=_wrap(text)))
    return handles


def _clip(artists, patch) -> None:
    for artist in artists if isinstance(artists, (list, tuple)) else [artists]:
        artist.set_clip_path(patch)


def _draw_ground(ax, case: Case, profile: Profile, x_lo: float, x_hi: float, y_lo: float,
                 marks_within: tuple[float, float] | None) -> None:
    """Layer bands (in the soil only), the soil above the base beside the footing, the
    ground surface, the surcharge (marked within ``marks_within``, m, when given) and the
    water table, over x_lo..x_hi and down to y_lo (m)."""
    B, Df = case.footing.width, case.footing.embedment
    soil = profile.clip_patch(ax, x_lo, x_hi, y_lo)
    below = {id(layer): (top, bottom) for layer, top, bottom, _ in case.layers_below_base()}
    for i, layer in enumerate(case.layers):
        if id(layer) not in below:
            continue
        base_top, base_bottom = below[id(layer)]
        if -base_top < y_lo:
            continue
        low = max(-base_bottom, y_lo) if math.isfinite(base_bottom) else y_lo
        band = ax.add_patch(Rectangle((x_lo, low), x_hi - x_lo, -base_top - low,
                                      facecolor=LAYER_COLOURS[i % len(LAYER_COLOURS)],
                                      hatch=LAYER_HATCHES[i % len(LAYER_HATCHES)],
                                      edgecolor="#6b6b6b", linewidth=0.0, zorder=0))
        _clip(band, soil)
    _draw_interfaces(ax, case, profile, x_lo, x_hi)
    if Df > 0:
        for left, right in ((x_lo, -B / 2), (B / 2, x_hi)) if not profile.axis else ((B / 2, x_hi),):
            ax.add_patch(Rectangle((left, 0.0), right - left, Df, facecolor="#ececec", hatch="---",
                                   edgecolor="#9a9a9a", linewidth=0.0, zorder=0))
    _draw_surface(ax, profile, x_lo, x_hi)
    if case.ground.surcharge > 0 and marks_within is not None:
        lo, hi = marks_within
        level_end = profile.crest_x if profile.slope else hi  # the surcharge acts at footing level only
        marks = np.linspace(lo, hi, 41)[1:-1]
        marks = marks[(np.abs(marks) > B / 2 + 0.02 * (hi - lo)) & (marks <= level_end)]
        ax.plot(marks, np.full(marks.shape, Df + 0.06 * B), linestyle="none", marker=7, color="black",
                markersize=4, zorder=5)
    _draw_water(ax, case, profile, x_lo, x_hi, y_lo, marker=True)


def _draw_water(ax, case: Case, profile: Profile, x_lo: float, x_hi: float, y_lo: float, marker: bool) -> None:
    """The water table from the left edge to where it meets the ground (the slope face)."""
    if case.ground.water_table is None:
        return
    y = case.footing.embedment - case.ground.water_table
    if y < y_lo:
        return
    start = max(x_lo, profile.x_min)
    end = min(profile.soil_end(min(y, 0.0)), x_hi) if y <= 0 else x_hi  # above the base: beside the footing
    ax.plot([start, end], [y, y], color=WATER_COLOUR, linestyle=WATER_STYLE, linewidth=1.0, zorder=5)
    if marker:
        ax.plot([start + 0.04 * (x_hi - x_lo)], [y], marker="v", color=WATER_COLOUR, markersize=6, zorder=5)


def _draw_interfaces(ax, case: Case, profile: Profile, x_lo: float, x_hi: float) -> None:
    """Dashed layer interfaces, each from the left edge to where it meets the ground."""
    for _, layer_top, _, _ in case.layers_below_base():
        if layer_top > 0:
            ax.plot([max(x_lo, profile.x_min), min(profile.soil_end(-layer_top), x_hi)], [-layer_top, -layer_top],
                    color="#4d4d4d", linewidth=0.8, linestyle="--", zorder=3)


def _draw_surface(ax, profile: Profile, x_lo: float, x_hi: float) -> None:
    for line in profile.ground_lines(x_lo, x_hi):
        ax.plot(line[:, 0], line[:, 1], color="black", linewidth=1.0, zorder=4, solid_joinstyle="miter")


def _mark_slope(ax, profile: Profile, x_lo: float, x_hi: float, labels: bool) -> None:
    """Crest and toe as open circles (labelled when ``labels``), and the slope's angle along its face."""
    if not profile.slope:
        return
    H = profile.slope_height
    points = [(x, y, name) for x, y, name in ((profile.crest_x, 0.0, "crest"), (profile.toe_x, -H, "toe"))
              if x_lo <= x <= x_hi]
    for x, y, name in points:
        ax.plot([x], [y], marker="o", markersize=4.5, markerfacecolor="white", markeredgecolor="black",
                zorder=8, clip_on=False)
        if labels:
            ax.annotate(name, (x, y), xytext=(4, 4), textcoords="offset points", ha="left", va="bottom",
                        fontsize=7.5, zorder=8)
    if labels:
        right = min(profile.toe_x, x_hi)
        if right - profile.crest_x > 0.25 * (x_hi - x_lo):  # room along the face for the label
            mid = (profile.crest_x + right) / 2
            ax.annotate(f"{profile.slope_angle_deg:.1f}\u00b0 ({_ratio(profile)}), {H:g} m high",
                        (mid, float(profile.surface_y(np.array(mid)))), xytext=(0, 5),
                        textcoords="offset points", ha="center", va="bottom", fontsize=7.5,
                        rotation=-profile.slope_angle_deg, rotation_mode="anchor", zorder=8)


def footing_label(case, B: float) -> str:
    """The footing's legend entry: a circle's B is its diameter, and it is drawn in the half
    section r >= 0, from its axis to its edge."""
    if is_circle(case):
        return f"circular footing, diameter B = {B:g} m: drawn from its axis, r = 0, to its edge, r = B/2 = {B / 2:g} m"
    return f"footing, B = {B:g} m"


def _draw_footing(ax, B: float, Df: float, stem: float, axis: bool = False) -> None:
    """The footing from -B/2 to B/2, or on a circle's half section (``axis``) from 0 to B/2."""
    left = 0.0 if axis else -B / 2
    ax.add_patch(Rectangle((left, 0.0), B / 2 - left, Df + stem, facecolor=FOOTING_COLOUR, edgecolor="black",
                           linewidth=0.8, zorder=6))


def _draw_load(ax, case: Case, y_head: float, length: float) -> None:
    """The load as a thick arrow along its line of action, head on the top of the footing;
    the line continues (dotted) through the footing to the base at the eccentricity."""
    delta = math.radians(case.footing.load_inclination)
    e = case.footing.eccentricity
    x_head = e - y_head * math.tan(delta)  # the line of action passes through (e, 0)
    tail = (x_head - length * math.sin(delta), y_head + length * math.cos(delta))
    ax.annotate("", xy=(x_head, y_head), xytext=tail, zorder=9,
                arrowprops={"arrowstyle": "-|>,head_length=0.5,head_width=0.25", "color": "black",
                            "linewidth": 1.8, "shrinkA": 0, "shrinkB": 0})
    if delta != 0 or e != 0:
        ax.plot([x_head, e], [y_head, 0.0], color="white", linestyle=":", linewidth=1.0, zorder=9)
        ax.plot([e], [0.0], marker="o", markersize=3.5, markerfacecolor="white", markeredgecolor="black",
                zorder=9, clip_on=False)


def _load_label(case: Case) -> str:
    f = case.footing
    if is_circle(case):  # central and vertical only (the case check)
        return "load: vertical, along the axis of symmetry (the whole circle's load)"
    if f.load_inclination == 0 and f.eccentricity == 0:
        return "load: vertical, through the footing's centre"
    side = "+x" if f.load_inclination > 0 else "-x"
    slant = "vertical" if f.load_inclination == 0 else \
        f"{abs(f.load_inclination):g}\u00b0 from vertical toward {side}"
    return f"load: {slant}, through the base at e = {f.eccentricity:g} m from the centre (dotted: line of action)"


def _mesh_lines(ax, tri: Triangulation, linewidth: float):
    ax.triplot(tri, color="#202020", linewidth=linewidth, alpha=0.45, zorder=2, rasterized=True)


def _axes_labels(ax, axis: bool = False):
    """Axis labels of a section; ``axis``: a circle's half section, whose x is the radius r."""
    ax.set_xlabel("radius r from the axis of symmetry (m)" if axis else "x from the footing centre (m)")
    ax.set_ylabel("z (m), 0 at the footing base" if axis else "y (m), 0 at the footing base")
    ax.set_aspect("equal")


# A circle's axis of symmetry: a chain line (long dash, short dash), the drafting mark of a centre
# line, in black; the water table's dash-dot is shorter and blue.
AXIS_STYLE = (0, (10, 3, 2, 3))
AXIS_TEXT = "axis of symmetry, r = 0"
HALF_SECTION = "half section r \u2265 0 through the axis"  # what a circle's picture shows, in its title
SECTION_LINE = "Half section r \u2265 0 through the circle's axis of symmetry (chain line, r = 0)"
TITLE_LINE_IN = 0.17  # a second title line (a circle's SECTION_LINE)
AXIS_GUTTER = 0.02  # of a view's width: blank room left of the axis, so that its line shows beside the frame
CHART_GUTTER = 0.035  # B: the contact chart's room left of the axis, for the axis's name clear of the curves


def view_left(profile: Profile, x_lo: float, x_hi: float) -> float:
    """The left end (m) of a view from x_lo to x_hi: x_lo, or on a circle's half section a narrow
    blank gutter left of the axis (x_lo = 0), nothing drawn in it.

    >>> view_left(Profile(B=2.0, Df=0.0, x_min=0.0, x_max=10.0, depth=5.0, axis=True), 0.0, 10.0)
    -0.2
    """
    return x_lo - AXIS_GUTTER * (x_hi - x_lo) if profile.axis else x_lo


def _section_caption(circle: bool) -> str:
    """A circle's caption begins by saying what is drawn: the half section r >= 0 and its axis."""
    if not circle:
        return ""
    return ("Half section r \u2265 0 through the circular footing's axis of symmetry (the chain line at r = 0, "
            "named along it); the field is the same in every such section. ")


def _field_title(head: str, numbers: str, circle: bool) -> str:
    """A field picture's title: what it shows and its numbers; a circle's has a second line
    saying that it is the half section r >= 0, and its numbers on a line of their own, since
    the half section's frame is narrower than the title on one line (room: :func:`_title_height`)."""
    return f"{head}\n({numbers})\n{SECTION_LINE}" if circle else f"{head} ({numbers})"


def _title_height(circle: bool) -> float:
    """Inches of a picture's title row: one line, or three for a circle (:func:`_field_title`)."""
    return TITLE_IN + (2 * TITLE_LINE_IN if circle else 0.0)


def _draw_axis(ax, y_lo: float, y_hi: float, side: str = "right") -> None:
    """A circle's axis of symmetry, r = 0, from y_lo to y_hi, named along it from the bottom, on
    its ``side`` ("left": in a gutter wide enough for the name)."""
    ax.plot([0.0, 0.0], [y_lo, y_hi], color="black", linestyle=AXIS_STYLE, linewidth=1.1, zorder=8)
    ax.annotate(AXIS_TEXT, (0.0, y_lo), xytext=(3 if side == "right" else -3, 4), textcoords="offset points",
                rotation=90, ha="left" if side == "right" else "right", va="bottom", fontsize=7, zorder=8,
                bbox={"facecolor": "white", "edgecolor": "none", "alpha": 0.85, "pad": 1.2})


LEFT_IN, RIGHT_IN = 0.8, 0.2  # room for the y tick labels and label; a little on the right
PLOT_WIDTH_IN = PAGE_WIDTH_IN - LEFT_IN - RIGHT_IN
MAX_PLOT_HEIGHT_IN = 4.5
TITLE_IN, XLABEL_IN = 0.32, 0.55  # a title above, tick labels and axis label below an axes
CAPTION_FONT = 7.5
CAPTION_CHARS = 118  # characters per caption line at CAPTION_FONT across the page
LINE_IN = 0.135  # one line of 8-point text
TITLE_CHARS = 80  # a title of the page's width (the case title is cut short: the report has it whole)


class _Column:
    """Rows stacked from the top at fixed heights (inches): a layout computed once, so that
    equal-aspect plots, colour bars, legends and captions never overlap."""

    def __init__(self, rows: list[tuple[str, float]]):
        self.height = sum(h for _, h in rows)
        self.fig = Figure(figsize=(PAGE_WIDTH_IN, self.height))
        self.rows, y = {}, 0.0
        for name, h in rows:
            self.rows[name] = (y, h)
            y += h

    def axes(self, name: str, width_in: float = PLOT_WIDTH_IN, left_in: float | None = None):
        y, h = self.rows[name]
        left = LEFT_IN + (PLOT_WIDTH_IN - width_in) / 2 if left_in is None else left_in
        return self.fig.add_axes((left / PAGE_WIDTH_IN, 1 - (y + h) / self.height,
                                  width_in / PAGE_WIDTH_IN, h / self.height))

    def text(self, name: str, text: str, **style):
        y, _ = self.rows[name]
        return self.fig.text(0.1 / PAGE_WIDTH_IN, 1 - y / self.height, text, ha="left", va="top", **style)


def _plot_size(x_range: float, y_range: float) -> tuple[float, float]:
    """Width and height (inches) of an equal-aspect plot of the page's width, height capped."""
    height = PLOT_WIDTH_IN * y_range / x_range
    if height <= MAX_PLOT_HEIGHT_IN:
        return PLOT_WIDTH_IN, height
    return MAX_PLOT_HEIGHT_IN * x_range / y_range, MAX_PLOT_HEIGHT_IN


def _field_layout(x_range: float, y_range: float, caption: str, circle: bool = False):
    """Figure, main axes and colour-bar axes of a field picture, with its caption."""
    lines = textwrap.wrap(caption, CAPTION_CHARS)
    width, height = _plot_size(x_range, y_range)
    column = _Column([("title", _title_height(circle)), ("main", height), ("xlabel", XLABEL_IN), ("bar", 0.14),
                      ("barlabel", 0.5), ("caption", 0.14 * len(lines) + 0.08)])
    ax, cax = column.axes("main", width), column.axes("bar")
    column.text("caption", "\n".join(lines), fontsize=CAPTION_FONT)
    return column.fig, ax, cax


def _legend_height(labels: list[str]) -> float:
    """Inches a one-column legend of these (already wrapped) labels needs."""
    return sum(LINE_IN * max(1, label.count("\n") + 1) + 0.06 for label in labels) + 0.12


# -- the pictures ---------------------------------------------------------------

STEM = 0.2  # B: the footing drawn this far above the ground, so that it shows


def _load_length(B: float, x_lo: float, x_hi: float) -> float:
    """Length (m) of the load arrow: a quarter of B, but long enough to see in a wide view."""
    return max(0.25 * B, 0.045 * (x_hi - x_lo))


def _top(case: Case, x_lo: float, x_hi: float, site: DrawnSite | None = None) -> float:
    """Top of a detail view (m): room for the footing's stem, the load arrow and a margin, and
    for a drawn site's ground above the footing."""
    B = case.footing.width
    top = case.footing.embedment + STEM * B + _load_length(B, x_lo, x_hi) + 0.06 * B
    return max(top, site.y_top + 0.06 * B) if site is not None else top


def model_figure(case: Case, domain: dict, lower: BoundFields | None, upper: BoundFields | None,
                 mechanism: dict | None = None, show_mesh: bool = True, title: str = "The model") -> Figure:
    """The model: layers, ground profile, water table, footing and load, mesh (whole model and detail).

    ``mechanism`` (result.json's upper-bound "extra") is read for the detail view only when
    there is no upper-bound velocity field to measure the moving soil from. ``show_mesh``
    False leaves the mesh's lines out (a drawn site still takes its outline from the mesh);
    ``title`` heads the picture, before the case's title."""
    B, Df = case.footing.width, case.footing.embedment
    half = mirrored(case, domain)
    profile = Profile.of(case, domain)
    mesh_fields = lower if lower is not None else upper
    site = _drawn_site(case, mesh_fields, half)
    x_lo, x_hi, vd = detail_view(profile, domain, view_extent(upper, lower, half, mechanism))
    tops = (max(Df, site.y_top if site else 0.0) + 0.3 * B, _top(case, x_lo, x_hi, site))
    with rc_context(STYLE):
        kind = "lower" if lower is not None else "upper"
        drawn_mesh = mesh_fields if show_mesh else None
        mesh_label = (f"mesh of the {kind} bound: {mesh_fields.n_elements} triangles"
                      + (" on the half x \u2265 0, mirrored" if half else "")
                      + (" on the half section r \u2265 0, as solved" if profile.axis else "")) if drawn_mesh \
            else "no mesh"
        footing = Patch(facecolor=FOOTING_COLOUR, edgecolor="black", label=footing_label(case, B))
        load = Line2D([], [], color="black", linewidth=1.8, marker=">", markersize=4, label=_load_label(case))
        handles = (_site_handles(case) if site else _ground_handles(case, profile)) + [footing, load]
        if profile.axis:
            handles.append(Line2D([], [], color="black", linestyle=AXIS_STYLE, linewidth=1.1,
                                  label=f"{AXIS_TEXT}: the circle is this half section r \u2265 0 turned about it"))
        if drawn_mesh:
            handles.append(Line2D([], [], color="#202020", linewidth=0.5, alpha=0.6, label=mesh_label))
        whole = _plot_size(profile.x_max - view_left(profile, profile.x_min, profile.x_max), profile.depth + tops[0])
        detail = _plot_size(x_hi - view_left(profile, x_lo, x_hi), vd + tops[1])
        column = _Column([("title0", _title_height(profile.axis)), ("whole", whole[1]), ("xlabel0", XLABEL_IN),
                          ("title1", TITLE_IN), ("detail", detail[1]), ("xlabel1", XLABEL_IN),
                          ("legend", _legend_height([h.get_label() for h in handles]))])
        fig = column.fig
        axes = (column.axes("whole", whole[0]), column.axes("detail", detail[0]))
        views = ((profile.x_min, profile.x_max, profile.depth, tops[0], 0.12),
                 (x_lo, x_hi, vd, tops[1], 0.3))
        for ax, (lo, hi, down, top, lw) in zip(axes, views):
            pad = 0.05 * (hi - lo)
            if site is not None:
                _draw_site(ax, case, site)
            else:
                _draw_ground(ax, case, profile, lo - pad, hi + pad, -down - pad,
                             marks_within=(lo, hi) if ax is axes[1] else None)
            _draw_footing(ax, B, Df, stem=STEM * B, axis=profile.axis)
            _mark_slope(ax, profile, lo, hi, labels=ax is axes[1])
            if drawn_mesh is not None:
                _mesh_lines(ax, corner_triangulation(drawn_mesh, half), lw)
            if profile.axis:
                _draw_axis(ax, -down, top)
            ax.set_xlim(view_left(profile, lo, hi), hi)
            ax.set_ylim(-down, top)
            _axes_labels(ax, profile.axis)
        ax0, ax1 = axes
        _draw_load(ax1, case, Df + STEM * B, _load_length(B, x_lo, x_hi))
        ax0.add_patch(Rectangle((x_lo, -vd), x_hi - x_lo, vd + tops[1], fill=False, edgecolor="black",
                                linestyle=":", linewidth=1.0, zorder=7))
        ax0.set_title(textwrap.shorten(f"{title}: {plain(case.title)}", TITLE_CHARS, placeholder=" ...")
                      + (f"\n{SECTION_LINE}" if profile.axis else ""), loc="left")
        ax1.set_title("Detail near the footing (dotted frame above)" + (f"; {HALF_SECTION}" if profile.axis else ""),
                      loc="left")
        lax = column.axes("legend", PAGE_WIDTH_IN - 0.2, left_in=0.1)
        lax.axis("off")
        lax.legend(handles=handles, loc="upper left", ncols=1, frameon=False, handlelength=2.2,
                   handleheight=1.1, borderaxespad=0.0)
    return fig


def _extent(upper: BoundFields | None, half: bool, mechanism: dict | None) -> tuple[float, float, float] | None:
    """The moving soil's extent: measured on the velocity field, else from result.json's numbers."""
    extent = moving_extent(upper, half)
    if extent is None and mechanism and mechanism.get("mechanism_half_width_m"):
        reach = mechanism["mechanism_half_width_m"]
        extent = (-reach, reach, mechanism["mechanism_depth_m"])
    return extent


def plastic_extent(lower: BoundFields | None, half: bool) -> tuple[float, float, float] | None:
    """(x_lo, x_hi, depth) in m of the lower bound's plastic zone: the triangles whose every
    stress node is within 1 - PLASTIC_UTILISATION of the yield surface; None if there is none.

    >>> f = BoundFields("lower", np.array([[0., 0.], [1., 0.], [0., -1.], [3., -2.]]), np.array([[0, 1, 2], [1, 3, 2]]),
    ...                 np.zeros(2, int), {"utilisation": np.array([[1.0, 0.99, 0.985], [0.5, 1.0, 1.0]])})
    >>> plastic_extent(f, half=True)
    (-1.0, 1.0, 1.0)
    """
    if lower is None or "utilisation" not in lower.arrays:
        return None
    plastic = np.asarray(lower.arrays["utilisation"]).min(axis=1) >= PLASTIC_UTILISATION
    if not plastic.any():
        return None
    corners = lower.points[lower.triangles[plastic][:, :3]].reshape(-1, 2)
    x, depth = corners[:, 0], float(max(-corners[:, 1].min(), 0.0))
    if half:
        reach = float(np.abs(x).max())
        return -reach, reach, depth
    return float(x.min()), float(x.max()), depth


def view_extent(upper: BoundFields | None, lower: BoundFields | None, half: bool,
                mechanism: dict | None) -> tuple[float, float, float] | None:
    """What every detail view frames: the moving soil of the upper bound and the plastic zone of
    the lower bound together, so that neither field is cut off and the pictures share one view."""
    found = [e for e in (_extent(upper, half, mechanism), plastic_extent(lower, half)) if e is not None]
    if not found:
        return None
    return min(e[0] for e in found), max(e[1] for e in found), max(e[2] for e in found)


def _draw_jumps(ax, ends: np.ndarray, size: np.ndarray, half: bool, peak: float, cmap, soil) -> None:
    """The upper bound's velocity jumps (:func:`velocity_jumps`) as lines shaded like the
    triangles: a jump's size over its length (a shear strain rate, as if spread over a width
    equal to its length, about the size of the triangles beside it), 1/m per unit footing
    velocity, so a slip line and a shear band look alike; jumps below 1/1000 of the peak are
    not drawn."""
    if not len(size):
        return
    rate = size / np.maximum(np.hypot(*(ends[:, 1] - ends[:, 0]).T), 1e-12)
    if half:
        ends = np.concatenate([ends, ends * [-1.0, 1.0]])
        rate = np.concatenate([rate, rate])
    shown = rate >= peak * 1e-3
    if not shown.any():
        return
    lines = LineCollection(ends[shown], array=np.minimum(rate[shown], peak), cmap=cmap,
                           norm=LogNorm(vmin=peak * 1e-3, vmax=peak), linewidths=1.1, zorder=2)
    ax.add_collection(lines)
    _clip(lines, soil)


def _name_layers(ax, case: Case, profile: Profile, site: DrawnSite | None, x_lo: float, x_hi: float,
                 vd: float, keep_clear: list | None = None) -> None:
    """Each layer's name in the soil it fills (cut short; the model picture has it whole). Call it
    last, once the view and every other text are in place: each name takes the first of a few
    places in its band (just below its top at the right, then at the left, then lower down; on a
    drawn site, among its triangles) where it overlaps no other text nor the boxes in
    ``keep_clear`` (axes fractions, x0, y0, x1, y1); a name with no free place is left out."""
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.transforms import Bbox

    renderer = (ax.figure.canvas if hasattr(ax.figure.canvas, "get_renderer")
                else FigureCanvasAgg(ax.figure)).get_renderer()
    taken = [t.get_window_extent(renderer) for t in ax.texts if t.get_visible() and t.get_text().strip()]
    taken += [Bbox([ax.transAxes.transform((x0, y0)), ax.transAxes.transform((x1, y1))])
              for x0, y0, x1, y1 in keep_clear or []]
    frame = ax.get_window_extent(renderer)

    def place(name: str, spots: list[tuple[float, float, str, str]]) -> None:
        text = textwrap.shorten(plain(name), 36, placeholder=" ...")
        for x, y, ha, va in spots:
            label = ax.text(x, y, text, ha=ha, va=va, fontsize=7, zorder=8,
                            bbox={"facecolor": "white", "edgecolor": "none", "alpha": 0.85, "pad": 1.2})
            box = label.get_window_extent(renderer).expanded(1.04, 1.15)
            inside = frame.x0 <= box.x0 and box.x1 <= frame.x1 and frame.y0 <= box.y0 and box.y1 <= frame.y1
            if inside and not any(box.overlaps(other) for other in taken):
                taken.append(box)
                return
            label.remove()

    below = case.layers_below_base()
    if site is not None:
        centroid = site.points[site.triangles].mean(axis=1)
        inside = (centroid[:, 0] > x_lo) & (centroid[:, 0] < x_hi) & (centroid[:, 1] > -vd)
        for index, (layer, *_) in enumerate(below):
            mine = np.flatnonzero(inside & (site.layer == index))
            if len(mine):
                middle = centroid[mine].mean(axis=0)
                ranked = mine[np.argsort(np.hypot(*(centroid[mine] - middle).T))][:: max(len(mine) // 6, 1)]
                place(layer.name, [(float(centroid[i, 0]), float(centroid[i, 1]), "center", "center")
                                   for i in ranked[:6]])
        return
    margin_x, margin_y = 0.012 * (x_hi - x_lo), 0.02 * vd
    for layer, top, bottom, _ in below:
        if top >= 0.9 * vd:
            continue  # too little of the band in view for its name
        low = min(bottom, vd)
        spots = []
        for y in (-top - margin_y, -(top + low) / 2, -low + 4 * margin_y):
            spots += [(min(x_hi, profile.soil_end(y)) - margin_x, y, "right", "top"),
                      (max(x_lo, profile.x_min) + margin_x, y, "left", "top")]
        place(layer.name, spots)


def _motion_text(motion: dict | None) -> str:
    if motion is None:
        return ""
    left, right = motion["v_left"], motion["v_right"]
    vertical = (f"vertical {left:.2f} (negative: down)" if abs(left - right) <= 1e-3 * max(abs(left), abs(right), 1e-9)
                else f"vertical {left:.2f} at its left edge and {right:.2f} at its right edge (negative: down)")
    horizontal = ("free to slide (smooth base)" if motion["u"] is None
                  else f"horizontal {motion['u']:.2f}")
    return f" Footing (rigid): {horizontal}, {vertical}."


def mechanism_figure(case: Case, domain: dict, upper: BoundFields, mechanism: dict | None,
                     pressure_kPa: float | None, lower: BoundFields | None = None) -> Figure:
    """The upper bound's mechanism: shear strain rate shaded, layers named, velocity arrows, extent
    (all in the soil). The view frames the lower bound's plastic zone too (``lower``), as the
    stress picture does, so that the two pictures match. A circle's is drawn in its half section
    r >= 0 (:data:`HALF_SECTION`)."""
    B, Df = case.footing.width, case.footing.embedment
    half = mirrored(case, domain)
    profile = Profile.of(case, domain)
    circle = profile.axis
    extent = _extent(upper, half, mechanism)
    if circle and extent is not None:
        extent = (0.0, extent[1], extent[2])  # the moving soil reaches the axis (the footing moves there)
    x_lo, x_hi, vd = detail_view(profile, domain, view_extent(upper, lower, half, mechanism))
    x_left = view_left(profile, x_lo, x_hi)
    site = _drawn_site(case, upper, half)
    top = _top(case, x_lo, x_hi, site)
    caption = _section_caption(circle) + (
               "Shading: the shear strain rate (the largest engineering shear strain rate, |\u03b5\u0307\u2081 "
               "\u2212 \u03b5\u0307\u2083|, per unit footing velocity; white: rigid, below 1/1000 of the peak"
               + ("; in the r-z plane: the hoop strain rate u_r/r is left out" if circle else "") + "). It "
               "shows the mechanism in every soil, a cohesionless one included, where the plastic dissipation "
               f"is zero. Arrows: soil velocity where the soil moves faster than {MOVING_SPEED:.0%} of the "
               "footing, each centred on its point and drawn only where it lies wholly in the soil, length in "
               "proportion to the speed (key: the footing's velocity along the load = 1). Thick arrow: the "
               "load along its line of action.")
    caption += _motion_text(footing_motion(case, upper, bool(domain["half_domain_by_symmetry"])))
    jump_ends, jump_size = velocity_jumps(upper)
    if len(jump_size):
        caption += (" Shaded lines: velocity jumps across triangle edges, the jump over the edge's length "
                    "(as if spread over a band that wide).")
    if extent is not None:
        mx_lo, mx_hi, md = extent
        where = (f"out to r = {mx_hi:.2f} m from the axis ({mx_hi / B:.2f} B; {2 * mx_hi:.2f} m = "
                 f"{2 * mx_hi / B:.2f} B across the circle)" if circle else
                 f"{mx_hi - mx_lo:.2f} m wide ({(mx_hi - mx_lo) / B:.2f} B, x from {mx_lo:.2f} to {mx_hi:.2f} m)")
        caption += (f" Dashed frame (in the soil): the soil moving faster than {MOVING_SPEED:.0%} of the footing "
                    f"(where the arrows are drawn), {where} and {md:.2f} m deep ({md / B:.2f} B).")
    caption += " Dashed lines: layer interfaces; each layer is named in its band."
    if case.ground.water_table is not None:
        caption += " Short dash-dot line (blue): the water table." if circle else " Dash-dot line: the water table."
    with rc_context(STYLE):
        fig, ax, cax = _field_layout(x_hi - x_left, vd + top, caption, circle)
        soil = site.clip_patch(ax) if site else profile.clip_patch(ax, x_lo, x_hi, -vd)
        pts = mirror_points(upper.points, half)
        sub = mirror_triangles(split_quadratic(upper.triangles), len(upper.points), half, upper.points)
        rate = shear_strain_rate(upper.points, upper.triangles, np.asarray(upper.arrays["velocity"]))
        rate = np.concatenate([rate] * (2 if half else 1))
        peak = float(rate.max()) if rate.size and rate.max() > 0 else 1.0
        cmap = STRAIN_RATE_MAP.with_extremes(under="white")
        shade = ax.tripcolor(Triangulation(pts[:, 0], pts[:, 1], sub), facecolors=np.maximum(rate, peak * 1e-9),
                             cmap=cmap, norm=LogNorm(vmin=peak * 1e-3, vmax=peak), rasterized=True, zorder=1)
        _draw_jumps(ax, jump_ends, jump_size, half, peak, cmap, soil)
        if site is None:
            _draw_interfaces(ax, case, profile, x_lo, x_hi)
            _draw_water(ax, case, profile, x_lo, x_hi, -vd, marker=False)
        arrows, unit = _velocity_arrows(ax, upper, half, site or profile, x_lo, x_hi, vd,
                                        site.y_top if site else 0.0)
        if arrows is not None:
            _clip(arrows, soil)
            key = _key_value(unit)
            # the key sits in the air above a slope, clear of the arrows; below level ground otherwise
            ax.quiverkey(arrows, 0.62, 0.9 if profile.slope or site else 0.05, key,  # key_y below
                         f"{key:g} \u00d7 the footing's velocity along the load", labelpos="E",
                         coordinates="axes",
                         fontproperties={"size": 7.5})
        _draw_footing(ax, B, Df, stem=STEM * B, axis=circle)
        _draw_load(ax, case, Df + STEM * B, _load_length(B, x_lo, x_hi))
        if site is not None:
            _draw_site_lines(ax, site)
        else:
            _draw_surface(ax, profile, x_lo, x_hi)
        _mark_slope(ax, profile, x_lo, x_hi, labels=True)
        if circle:
            _draw_axis(ax, -vd, top)
        if extent is not None:
            frame = ax.add_patch(Rectangle((mx_lo, -md), mx_hi - mx_lo, md, fill=False, edgecolor="black",
                                           linestyle="--", linewidth=1.0, zorder=6))
            _clip(frame, soil)
            # dimensions along the left side and the bottom: both lie in the soil (the moving soil
            # touches the bottom edge and the footing's left edge is left of any crest); on a drawn
            # site the left side starts at the soil's top there. A circle's left side is its axis,
            # drawn already: its depth goes on the right side.
            dim_x = mx_hi if circle else mx_lo
            dim_top = site.top_at(mx_lo) if site is not None else 0.0
            ax.annotate("", xy=(dim_x, -md), xytext=(dim_x, dim_top), zorder=7,
                        arrowprops={"arrowstyle": "<->", "color": "black", "linewidth": 0.8})
            ax.text(dim_x + (-0.01 if circle else 0.01) * (x_hi - x_lo), (dim_top - md) / 2,
                    f"depth {md:.2f} m\n= {md / B:.2f} B", ha="right" if circle else "left",
                    va="center", zorder=8, fontsize=7.5,
                    bbox={"facecolor": "white", "edgecolor": "none", "alpha": 0.9, "pad": 1.5})
            ax.annotate("", xy=(mx_lo, -md), xytext=(mx_hi, -md), zorder=7,
                        arrowprops={"arrowstyle": "<->", "color": "black", "linewidth": 0.8})
            ax.text((mx_lo + mx_hi) / 2, -md - 0.01 * vd,
                    f"out to r = {mx_hi:.2f} m = {mx_hi / B:.2f} B" if circle else
                    f"width {mx_hi - mx_lo:.2f} m = {(mx_hi - mx_lo) / B:.2f} B",
                    ha="center", va="top", zorder=8, fontsize=7.5,
                    bbox={"facecolor": "white", "edgecolor": "none", "alpha": 0.9, "pad": 1.5})
        ax.set_xlim(x_left, x_hi)
        ax.set_ylim(-vd, top)
        _axes_labels(ax, circle)
        bound = f"upper bound {pressure_kPa:.1f} kPa" if pressure_kPa is not None else "upper bound withheld"
        ax.set_title(_field_title("Upper bound: collapse mechanism", f"{bound}; {upper.n_elements} six-node triangles",
                                  circle), loc="left")
        key_y = 0.9 if profile.slope or site else 0.05
        clear = [((-0.75 * B - x_left) / (x_hi - x_left), (vd - 0.5 * B) / (vd + top),  # the soil under the footing
                  (0.75 * B - x_left) / (x_hi - x_left), 1.0)]
        _name_layers(ax, case, profile, site, x_lo, x_hi, vd,
                     keep_clear=clear + ([(0.6, key_y - 0.05, 1.0, key_y + 0.05)] if arrows is not None else []))
        bar = fig.colorbar(shade, cax=cax, orientation="horizontal", extend="min")
        bar.set_label("shear strain rate, 1/m per unit footing velocity (log scale)")
    return fig


def _key_value(unit: float) -> float:
    """A round velocity for the arrows' key, no more than the fastest arrow (``unit``).

    >>> _key_value(0.7), _key_value(3.4), _key_value(12.0)
    (0.5, 3.0, 10.0)
    """
    for value in (10.0, 5.0, 3.0, 2.0, 1.0, 0.5, 0.2, 0.1):
        if value <= unit * 1.0001:
            return value
    return unit


def _velocity_arrows(ax, upper: BoundFields, half: bool, ground: Profile | DrawnSite, x_lo: float, x_hi: float,
                     vd: float, y_top: float = 0.0):
    """Velocity arrows on a regular grid from y_top (m, the soil's top) down, centred on their grid
    points, kept only where the whole arrow lies in the soil (``ground``: the profile or the drawn
    site). Returns the quiver (None if no arrow) and the fastest speed."""
    pts = mirror_points(upper.points, half)
    vel = np.asarray(upper.arrays["velocity"])
    vel = np.vstack([vel, vel * [-1.0, 1.0]]) if half else vel
    sub = mirror_triangles(split_quadratic(upper.triangles), len(upper.points), half, upper.points)
    spacing = (x_hi - x_lo) / ARROW_CELLS
    gx, gy = np.meshgrid(np.arange(x_lo + spacing / 2, x_hi, spacing), np.arange(y_top - spacing / 2, -vd, -spacing))
    u, v = interpolate_per_triangle(pts, sub, vel, gx, gy)
    speed = np.ma.hypot(u, v)
    known = ~np.ma.getmaskarray(speed)
    fastest = float(speed[known].max()) if known.any() else 0.0
    if fastest <= 0:
        return None, 0.0
    scale = fastest / (ARROW_LONGEST * spacing)  # velocity per m of arrow
    show = known & (speed.filled(0) > MOVING_SPEED)  # as the frame: the soil counted as moving
    centre = np.column_stack([gx[show], gy[show]])
    half_arrow = np.column_stack([u[show].filled(0), v[show].filled(0)]) / (2 * scale)
    fits = ground.segments_in_soil(centre - half_arrow, centre + half_arrow, ARROW_CLEARANCE * spacing)
    if not fits.any():
        return None, fastest
    centre, arrow = centre[fits], 2 * half_arrow[fits] * scale
    quiver = ax.quiver(centre[:, 0], centre[:, 1], arrow[:, 0], arrow[:, 1], angles="xy", scale_units="xy",
                       scale=scale, pivot="middle", width=0.0026, color="#000000", zorder=5)
    return quiver, fastest


UTILISATION_LEVELS = (0.0, 0.5, 0.7, 0.8, 0.9, 0.95, 0.98, 1.0)


def stress_figure(case: Case, domain: dict, lower: BoundFields, mechanism: dict | None,
                  pressure_kPa: float | None, upper: BoundFields | None = None) -> Figure:
    """The lower bound's stress field: utilisation and principal directions in the plastic zone.
    The view frames its plastic zone and the mechanism's moving soil (``upper`` when given, else
    ``mechanism``) together, as the mechanism picture does, so both pictures match. A circle's
    is drawn in its half section r >= 0 (:data:`HALF_SECTION`)."""
    B, Df = case.footing.width, case.footing.embedment
    half = mirrored(case, domain)
    profile = Profile.of(case, domain)
    circle = profile.axis
    x_lo, x_hi, vd = detail_view(profile, domain, view_extent(upper, lower, half, mechanism))
    x_left = view_left(profile, x_lo, x_hi)
    site = _drawn_site(case, upper if upper is not None else lower, half)
    top = _top(case, x_lo, x_hi, site)
    if circle:  # the circle's utilisation takes the hoop stress in (solver.certify_axisym)
        shading = ("yield utilisation, the largest principal stress difference (the hoop stress included) over "
                   "its value on the yield surface at the same mean of those two stresses")
        crosses = ("principal stress directions in the r-z plane (compression positive; the hoop stress, the "
                   "third principal stress, acts normal to the section)")
    else:
        shading = "yield utilisation, the stress deviator over its value on the yield surface at the same mean stress"
        crosses = "principal stress directions (compression positive)"
    caption = _section_caption(circle) + (
               f"Shading: {shading} (1: on the yield surface). Crosses: {crosses} "
               f"where every node of a triangle is within {1 - PLASTIC_UTILISATION:.0%} of the yield "
               f"surface, one per grid cell. Thick arrow: the load along its line of action. "
               f"Dashed lines: layer interfaces.")
    if case.ground.water_table is not None:
        caption += " Short dash-dot line (blue): the water table." if circle else " Dash-dot line: the water table."
    with rc_context(STYLE):
        fig, ax, cax = _field_layout(x_hi - x_left, vd + top, caption, circle)
        soil = site.clip_patch(ax) if site else profile.clip_patch(ax, x_lo, x_hi, -vd)
        tri = own_node_triangulation(lower, half)
        util = lower.arrays["utilisation"].reshape(-1)
        util = np.clip(np.concatenate([util] * (2 if half else 1)), 0.0, 1.0)
        shade = ax.tricontourf(tri, util, levels=list(UTILISATION_LEVELS), cmap=UTILISATION_MAP, zorder=1,
                               norm=BoundaryNorm(UTILISATION_LEVELS, UTILISATION_MAP.N))
        shade.set_rasterized(True)
        if site is None:
            _draw_interfaces(ax, case, profile, x_lo, x_hi)
            _draw_water(ax, case, profile, x_lo, x_hi, -vd, marker=False)
        # principal directions at the centroids of plastic triangles, one per grid cell
        stress = lower.arrays["stress_kPa"].mean(axis=1)  # compression positive
        centroid = lower.points[lower.triangles[:, :3]].mean(axis=1)
        plastic = lower.arrays["utilisation"].min(axis=1) >= PLASTIC_UTILISATION
        if half:
            stress = np.vstack([stress, stress * [1.0, 1.0, -1.0]])
            centroid = np.vstack([centroid, centroid * [-1.0, 1.0]])
            plastic = np.concatenate([plastic, plastic])
        spacing = (x_hi - x_lo) / ARROW_CELLS
        inside = plastic & (centroid[:, 0] > x_lo) & (centroid[:, 0] < x_hi) & (centroid[:, 1] > -vd)
        picked = np.flatnonzero(inside)
        _, first = np.unique(np.floor(centroid[picked] / spacing).astype(int), axis=0, return_index=True)
        picked = picked[first]
        _, _, angle = principal_stresses(stress[picked])
        for turn, size, width in ((0.0, 0.75, 0.0026), (np.pi / 2, 0.4, 0.0013)):
            crosses = ax.quiver(centroid[picked, 0], centroid[picked, 1], size * spacing * np.cos(angle + turn),
                                size * spacing * np.sin(angle + turn), angles="xy", scale_units="xy", scale=1.0,
                                pivot="middle", headwidth=0, headlength=0, headaxislength=0, width=width,
                                color="black", zorder=5)
            _clip(crosses, soil)  # a cross at the slope face is cut there, never drawn in the air
        _draw_footing(ax, B, Df, stem=STEM * B, axis=circle)
        _draw_load(ax, case, Df + STEM * B, _load_length(B, x_lo, x_hi))
        if site is not None:
            _draw_site_lines(ax, site)
        else:
            _draw_surface(ax, profile, x_lo, x_hi)
        _mark_slope(ax, profile, x_lo, x_hi, labels=True)
        if circle:
            _draw_axis(ax, -vd, top)
        ax.set_xlim(x_left, x_hi)
        ax.set_ylim(-vd, top)
        _axes_labels(ax, circle)
        bound = f"lower bound {pressure_kPa:.1f} kPa" if pressure_kPa is not None else "lower bound withheld"
        ax.set_title(_field_title("Lower bound: stress field", f"{bound}; {lower.n_elements} triangles", circle),
                     loc="left")
        plane = " in the r-z plane" if circle else ""
        ax.legend(handles=[Line2D([], [], color="black", linewidth=2.0,
                                  label=f"major principal stress \u03c3\u2081{plane} (compression): direction"),
                           Line2D([], [], color="black", linewidth=0.9,
                                  label=f"minor principal stress \u03c3\u2083{plane}: direction")],
                  loc="upper right" if profile.slope or site else "lower right" if circle else "lower left",
                  framealpha=0.95, fontsize=7.5)
        bar = fig.colorbar(shade, cax=cax, orientation="horizontal", ticks=list(UTILISATION_LEVELS))
        bar.set_label("yield utilisation (1 = plastic)")
    return fig


def contact_stresses(lower: BoundFields, width_m: float, half: bool
                     ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """The lower bound's stresses along the footing base, from its stress field: for each
    triangle edge on the base (y = 0, |x| <= B/2), sorted along x, its ends' x (n, 2) m, the
    normal stress (n, 2) kPa compression positive and the shear stress on the soil (n, 2) kPa,
    positive toward +x (the footing pushing the soil that way). Linear along each edge; a
    half domain is mirrored (normal stress even, shear stress odd).

    >>> f = BoundFields("lower", np.array([[0., 0.], [1., 0.], [0., -1.]]), np.array([[0, 1, 2]]), np.zeros(1, int),
    ...                 {"stress_kPa": np.array([[[0., 100., -10.], [0., 80., -10.], [0., 0., 0.]]])})
    >>> x, normal, shear = contact_stresses(f, 2.0, half=True)
    >>> x.tolist(), normal.tolist(), shear.tolist()
    ([[-1.0, -0.0], [0.0, 1.0]], [[80.0, 100.0], [100.0, 80.0]], [[-10.0, -10.0], [10.0, 10.0]])
    """
    corners = lower.points[lower.triangles[:, :3]]  # (n, 3, 2)
    tol = 1e-7 * max(float(np.abs(lower.points).max()), 1.0)
    on = (np.abs(corners[..., 1]) <= tol) & (np.abs(corners[..., 0]) <= width_m / 2 + tol)
    stress = np.asarray(lower.arrays["stress_kPa"])  # (n, 3, 3) compression positive
    xs, normal, shear = [], [], []
    for a, b in ((0, 1), (1, 2), (2, 0)):  # the three local edges
        edge = on[:, a] & on[:, b]
        xs.append(np.column_stack([corners[edge, a, 0], corners[edge, b, 0]]))
        normal.append(np.column_stack([stress[edge, a, 1], stress[edge, b, 1]]))
        shear.append(np.column_stack([-stress[edge, a, 2], -stress[edge, b, 2]]))  # tau_xy, tension positive
    x, n, t = (np.concatenate(v) for v in (xs, normal, shear))
    swap = x[:, 0] > x[:, 1]
    x[swap], n[swap], t[swap] = x[swap][:, ::-1], n[swap][:, ::-1], t[swap][:, ::-1]
    if half:
        x, n, t = (np.concatenate([-x[:, ::-1], x]), np.concatenate([n[:, ::-1], n]),
                   np.concatenate([-t[:, ::-1], t]))
    order = np.argsort(x.mean(axis=1), kind="stable")
    return x[order], n[order], t[order]


def contact_figure(case: Case, domain: dict, lower: BoundFields, pressure_kPa: float | None,
                   pore_pressure_kPa: float = 0.0) -> Figure:
    """The lower bound's normal and shear stresses along the footing base (:func:`contact_stresses`),
    with their mean (the lower-bound pressure) and, when given, the design load's vertical pressure.
    A circle's are drawn along its radius, from the axis (r = 0) to the edge (r = B/2)."""
    B = case.footing.width
    circle = is_circle(case)
    x, normal, shear = contact_stresses(lower, B, mirrored(case, domain))
    if circle:
        caption = _section_caption(True) + (
            "Along the footing base, from the axis (r = 0) to the edge (r = B/2), from the lower bound's stress "
            "field: the normal stress (compression positive) and the shear stress on the soil (positive outward, "
            "toward +r). Both are drawn as straight lines between each triangle's corner values (the field's "
            "r \u03c3 is quadratic along an edge) and may jump from one triangle to the next. They are one "
            "statically admissible distribution that carries the lower-bound collapse load, not the contact "
            "pressure under working loads; their mean over the base's area, which weights each radius r by its "
            "circumference 2\u03c0r (the edge counts more than the centre), is the lower-bound pressure. The "
            "contact carries no tension.")
    else:
        caption = ("Along the footing base, from the lower bound's stress field: the normal stress (compression "
                   "positive) and the shear stress on the soil (positive toward +x). Both are linear along each "
                   "triangle's edge and may jump from one triangle to the next. They are one statically admissible "
                   "distribution that carries the lower-bound collapse load, not the contact pressure under working "
                   "loads; the mean of the normal stress over B is the lower-bound pressure. The contact carries no "
                   "tension.")
    if pore_pressure_kPa > 0:
        caption += f" Stresses are effective: the total normal stress adds the pore pressure {pore_pressure_kPa:.1f} kPa."
    lines = textwrap.wrap(caption, CAPTION_CHARS)
    with rc_context(STYLE):
        column = _Column([("title", _title_height(circle)), ("main", 2.6), ("xlabel", XLABEL_IN),
                          ("caption", 0.14 * len(lines) + 0.08)])
        ax = column.axes("main")
        column.text("caption", "\n".join(lines), fontsize=CAPTION_FONT)
        ax.axhline(0.0, color="#9a9a9a", linewidth=0.6, zorder=1)
        for edge in (B / 2,) if circle else (-B / 2, B / 2):
            ax.axvline(edge, color="#4d4d4d", linewidth=0.8, linestyle=":", zorder=1)
        ax.plot(x.ravel(), normal.ravel(), color="black", linewidth=1.6, zorder=4,
                label="normal stress (compression positive)")
        ax.plot(x.ravel(), shear.ravel(), color="black", linewidth=1.1, linestyle="--", zorder=4,
                label="shear stress on the soil (positive " + ("outward, toward +r)" if circle else "toward +x)"))
        if pressure_kPa is not None:
            mean = "mean over the area" if circle else "mean normal stress"
            ax.axhline(pressure_kPa, color="black", linewidth=0.9, linestyle=":", zorder=3,
                       label=f"{mean} = lower-bound pressure {pressure_kPa:.1f} kPa")
        design = case.footing.design_load
        if design is not None:
            # a strip's line load over B; a circle's whole load (kN) over pi B^2/4
            vertical = design * math.cos(math.radians(case.footing.load_inclination)) / case.footing.bearing_area
            over = "over pi B^2/4" if circle else "vertical component / B"
            ax.axhline(vertical, color="#4d4d4d", linewidth=0.9, linestyle="-.", zorder=3,
                       label=f"design load {over} = {vertical:.1f} kPa")
        ax.set_xlim(-CHART_GUTTER * B if circle else -0.55 * B, 0.55 * B)
        top = max(float(np.nanmax(np.abs(np.concatenate([normal.ravel(), shear.ravel(), [1.0]])))), pressure_kPa or 0.0)
        y_lo = min(0.0, float(np.nanmin(shear)) if shear.size else 0.0) - 0.05 * top
        ax.set_ylim(y_lo, 1.45 * top)
        if circle:
            _draw_axis(ax, y_lo, 1.45 * top, side="left")  # in the gutter, clear of the curves
            ax.set_xlabel("radius r from the axis of symmetry (m); dotted vertical: the footing's edge, r = B/2")
        else:
            ax.set_xlabel("x from the footing centre (m); dotted verticals: the footing's edges")
        ax.set_ylabel("stress on the base (kPa)")
        ax.legend(loc="upper center", ncols=2, fontsize=7, framealpha=0.95)
        ax.grid(True, color="#e0e0e0", linewidth=0.5)
        bound = f"lower bound {pressure_kPa:.1f} kPa" if pressure_kPa is not None else "lower bound withheld"
        size = f"diameter B = {B:g} m" if circle else f"B = {B:g} m"
        ax.set_title(_field_title("Lower bound: stresses under the footing", f"{bound}; {size}", circle), loc="left")
    return column.fig


def convergence_figure(rows: list[tuple[int, float | None, float | None, float]],
                       title: str = "Bounds against mesh size") -> Figure:
    """Lower and upper bound (kPa) and wall time (s) against the number of elements.

    ``rows``: (elements, lower_kPa, upper_kPa, wall_s); a withheld bound is None and is
    left out of its line.
    """
    rows = sorted(rows, key=lambda r: r[0])
    n = np.array([r[0] for r in rows], dtype=float)
    lower = np.array([np.nan if r[1] is None else r[1] for r in rows])
    upper = np.array([np.nan if r[2] is None else r[2] for r in rows])
    wall = np.array([r[3] for r in rows], dtype=float)
    with rc_context(STYLE):
        fig = Figure(figsize=(PAGE_WIDTH_IN, 3.2), layout="constrained")
        left, right = fig.subplots(1, 2, width_ratios=[1.6, 1])
        left.plot(n, upper, linestyle="--", marker="s", markerfacecolor="white", color="black", label="upper bound")
        left.plot(n, lower, linestyle="-", marker="o", color="black", label="lower bound")
        both = np.isfinite(lower) & np.isfinite(upper)
        left.fill_between(n[both], lower[both], upper[both], color="#d0d0d0", label="bracket")
        left.set_xscale("log")
        left.set_xlabel("elements in each bound's mesh")
        left.set_ylabel("collapse pressure (kPa)")
        left.legend(loc="best")
        left.set_title(plain(title), loc="left")
        right.plot(n, wall, marker="^", color="black", linestyle="-")
        right.set_xscale("log")
        right.set_yscale("log")
        right.set_xlabel("elements in each bound's mesh")
        right.set_ylabel("wall time (s)")
        right.set_title("Wall time", loc="left")
        for ax in (left, right):
            ax.grid(True, which="both", color="#e0e0e0", linewidth=0.5)
    return fig


# -- writing ------------------------------------------------------------------------

# matplotlib warns once per character its font lacks (a title in Chinese, an emoji in a
# layer name); the picture shows a box there and the report gives the text exactly, so the
# warning says nothing a user can act on. Only this warning is silenced, only while drawing.
MISSING_GLYPH = r"Glyph \d+ .*missing from"


@contextlib.contextmanager
def missing_glyphs_quiet() -> Iterator[None]:
    with warnings.catch_warnings():
        warnings.filterwarnings("ignore", message=MISSING_GLYPH, category=UserWarning)
        yield


def figure_bytes(fig: Figure, fmt: str) -> bytes:
    """PNG or SVG bytes of a figure, without a date (a rerun writes the same file)."""
    buffer = io.BytesIO()
    metadata = {"Date": None} if fmt == "svg" else {"Software": None}
    with rc_context(STYLE), missing_glyphs_quiet():
        fig.savefig(buffer, format=fmt, dpi=PNG_DPI, metadata=metadata, facecolor="white")
    return buffer.getvalue()


def draw_all(case: Case, data: dict, fields: dict[str, BoundFields], progress=None) -> dict[str, Figure]:
    """Every picture the run's data allows, by name: model, mechanism, stress, contact.
    ``progress`` (a solver.progress.Progress) counts them on its bar."""
    domain = data["domain"]
    upper_data, lower_data = data.get("upper") or {}, data.get("lower") or {}
    mechanism = upper_data.get("extra") or None
    drawings = {"model": lambda: model_figure(case, domain, fields.get("lower"), fields.get("upper"), mechanism)}
    if "upper" in fields:
        drawings["mechanism"] = lambda: mechanism_figure(case, domain, fields["upper"], mechanism,
                                                         upper_data.get("pressure_kPa"), fields.get("lower"))
    if "lower" in fields:
        drawings["stress"] = lambda: stress_figure(case, domain, fields["lower"], mechanism,
                                                   lower_data.get("pressure_kPa"), fields.get("upper"))
        drawings["contact"] = lambda: contact_figure(case, domain, fields["lower"], lower_data.get("pressure_kPa"),
                                                     data.get("pore_pressure_at_base_kPa") or 0.0)
    figures = {}
    for done, (name, draw) in enumerate(drawings.items()):
        if progress is not None:
            progress.bar(f"drawing {name}", done, len(drawings))
        figures[name] = draw()
    return figures


def write_pictures(figures: dict[str, Figure], out_dir: Path, progress=None) -> list[Path]:
    """Write each figure as <name>.png and <name>.svg into out_dir (atomically); returns the paths.
    ``progress`` (a solver.progress.Progress) counts the files on its bar."""
    paths = []
    total = 2 * len(figures)
    for name, fig in figures.items():
        for fmt in ("png", "svg"):
            if progress is not None:
                progress.bar(f"writing {name}.{fmt}", len(paths), total)
            path = Path(out_dir) / f"{name}.{fmt}"
            write_bytes_atomic(path, figure_bytes(fig, fmt))
            paths.append(path)
    if progress is not None:
        progress.bar("pictures", total, total)
    return paths
