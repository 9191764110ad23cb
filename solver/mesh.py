"""Geometry and mesh: a validated Case -> a triangular Mesh, through gmsh.

Coordinates: x to the right from the footing centre, y upward from the
footing base level (the model's top is y = 0), in m. The model is the soil
below the footing base; soil above it acts as the surcharge beside the footing.

One mesh stage for both bounds: first-order triangles for the lower bound,
second-order (6-node) triangles for the upper bound. The mesh conforms to every
layer interface inside the domain and is graded toward the footing edges, where
the stress and velocity fields are singular. The lower-bound mesh also has a
structured fan of triangles centred on each footing edge (:class:`FanLayout`).
"""
from __future__ import annotations

import contextlib
import dataclasses
import math
import threading
from dataclasses import dataclass

import numpy as np

from .model import Case, continues

# Boundary edge kinds (codes in Mesh.boundary_kind).
FOOTING, GROUND, SYMMETRY, FAR_SIDE, FAR_BASE = range(5)
FIXED = 5  # a drawn site's rigid boundary (solver.sitefile): no velocity (upper), any traction (lower)
AXIS = 6  # the axis r = 0 of an axisymmetric (circular) case: no radial velocity, no shear
BOUNDARY_NAMES = ("footing", "ground", "symmetry", "far side", "far base", "fixed", "axis")

_GMSH_LOCK = threading.Lock()  # gmsh keeps one global model per process


@dataclass(frozen=True)
class Domain:
    """Extent of the meshed region, m. ``half``: only x >= 0 is meshed (symmetric case).
    ``axisymmetric``: x is the radius r of a circular footing's case and x = 0 its axis."""

    half: bool
    x_min: float
    x_max: float
    depth: float
    interfaces: tuple[float, ...]  # depths (m, below the base) of layer interfaces inside the domain
    mechanism_width: float  # m, estimated extent of the collapse zone beyond the footing edge
    mechanism_depth: float  # m, estimated depth of the collapse zone
    crest_x: float | None = None  # m: the ground falls away from (crest_x, 0) ...
    toe_x: float | None = None  # ... to (toe_x, -slope_height), level beyond
    slope_height: float = 0.0  # m
    axisymmetric: bool = False

    @property
    def slope(self) -> bool:
        return self.crest_x is not None

    def air_polygon(self) -> list[tuple[float, float]]:
        """The region above the slope face and the toe level, inside the box (m)."""
        return [(self.crest_x, 0.0), (self.toe_x, -self.slope_height), (self.x_max, -self.slope_height),
                (self.x_max, 0.0)]


@dataclass(frozen=True)
class Mesh:
    """Triangles with their nodes, layers and tagged boundary edges.

    ``triangles`` is (n_el, 3) for first order or (n_el, 6) for second order:
    corners counter-clockwise, then the midside nodes of edges 0-1, 1-2, 2-0.
    Boundary edges are stored as (element, local edge) pairs; ``boundary_edges``
    gives their nodes, (n_b, 2) or (n_b, 3): two corners then the midside node.
    """

    points: np.ndarray  # (n_nodes, 2) m
    triangles: np.ndarray
    layer: np.ndarray  # (n_el,) index into Case.layers_below_base()
    boundary_element: np.ndarray  # (n_b,) the element each boundary edge belongs to
    boundary_local: np.ndarray  # (n_b,) its local edge k (corners k, k+1; midside 3 + k)
    boundary_kind: np.ndarray  # (n_b,) codes FOOTING..FAR_BASE
    domain: Domain
    footing_width: float  # m
    # Upper bound: interior edges across which the velocity may jump, as
    # (element 1, local edge 1, element 2, local edge 2); their nodes are split,
    # each side has its own (see open_velocity_jumps). None: a continuous mesh.
    jumps: np.ndarray | None = None
    fan: bool = False  # a fan of triangles round each footing edge (FanLayout)

    @property
    def order(self) -> int:
        return 1 if self.triangles.shape[1] == 3 else 2

    @property
    def n_elements(self) -> int:
        return len(self.triangles)

    @property
    def boundary_edges(self) -> np.ndarray:
        k = self.boundary_local
        nodes = [self.triangles[self.boundary_element, k], self.triangles[self.boundary_element, (k + 1) % 3]]
        if self.order == 2:
            nodes.append(self.triangles[self.boundary_element, 3 + k])
        return np.column_stack(nodes)

    def shape_gradients(self) -> np.ndarray:
        """(n_el, 3, 2) gradients (1/m) of the corner (linear) shape functions.

        >>> import numpy as np
        >>> m = Mesh(np.array([[0., 0.], [1., 0.], [0., 1.]]), np.array([[0, 1, 2]]), np.zeros(1, int),
        ...          np.zeros(0, int), np.zeros(0, int), np.zeros(0, int), None, 1.0)
        >>> m.shape_gradients()[0].tolist()
        [[-1.0, -1.0], [1.0, 0.0], [0.0, 1.0]]
        """
        p = self.corner_coordinates()
        twice_area = 2.0 * self.areas()
        nxt, prv = [1, 2, 0], [2, 0, 1]
        dx = (p[:, nxt, 1] - p[:, prv, 1]) / twice_area[:, None]
        dy = (p[:, prv, 0] - p[:, nxt, 0]) / twice_area[:, None]
        return np.stack([dx, dy], axis=2)

    def interior_edges(self) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
        """Element pairs sharing an edge: (e1, k1, e2, k2), local edge k of each.

        Both elements are counter-clockwise, so corner k1 of e1 is corner
        (k2 + 1) % 3 of e2 and corner (k1 + 1) % 3 of e1 is corner k2 of e2.
        """
        edges = self.triangles[:, [[0, 1], [1, 2], [2, 0]]].reshape(-1, 2)
        key = np.sort(edges, axis=1)
        order = np.lexsort((key[:, 1], key[:, 0]))
        same = np.all(key[order[1:]] == key[order[:-1]], axis=1)
        first, second = order[:-1][same], order[1:][same]
        return first // 3, first % 3, second // 3, second % 3

    def edge_normals(self, element: np.ndarray, local: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Outward unit normals (n, 2) and lengths (n,) in m of local edges of elements."""
        a = self.points[self.triangles[element, local]]
        b = self.points[self.triangles[element, (local + 1) % 3]]
        t = b - a
        length = np.hypot(t[:, 0], t[:, 1])
        return np.column_stack([t[:, 1], -t[:, 0]]) / length[:, None], length

    def corner_coordinates(self) -> np.ndarray:
        """(n_el, 3, 2) corner coordinates, m."""
        return self.points[self.triangles[:, :3]]

    def areas(self) -> np.ndarray:
        """(n_el,) element areas, m^2 (positive: corners are counter-clockwise)."""
        p = self.corner_coordinates()
        return 0.5 * ((p[:, 1, 0] - p[:, 0, 0]) * (p[:, 2, 1] - p[:, 0, 1])
                      - (p[:, 2, 0] - p[:, 0, 0]) * (p[:, 1, 1] - p[:, 0, 1]))


def open_velocity_jumps(mesh: Mesh, opened: np.ndarray | None = None) -> Mesh:
    """The same second-order mesh with its nodes split along chosen interior edges.

    ``opened`` is a boolean mask over ``mesh.interior_edges()`` (None: every
    interior edge). Element-local
    node slots stay joined across every other interior edge; each group of
    joined slots becomes one node (a connected-components pass, so a corner
    node where several opened edges meet gets one copy per sector between
    them). Boundary edges keep their (element, local edge) pairs; the opened
    edges are returned in ``jumps``.

    >>> import numpy as np
    >>> square = Mesh(np.array([[0., 0.], [1., 0.], [1., 1.], [0., 1.], [.5, 0.], [1., .5], [.5, .5],
    ...                         [.5, 1.], [0., .5]]), np.array([[0, 1, 2, 4, 5, 6], [0, 2, 3, 6, 7, 8]]),
    ...               np.zeros(2, int), np.zeros(0, int), np.zeros(0, int), np.zeros(0, int), None, 1.0)
    >>> split = open_velocity_jumps(square, np.array([True]))
    >>> len(split.points), split.jumps.tolist()
    (12, [[0, 2, 1, 0]])
    """
    from scipy.sparse import coo_matrix
    from scipy.sparse.csgraph import connected_components

    if mesh.order != 2:
        raise ValueError("velocity jumps need a second-order (6-node) mesh")
    e1, k1, e2, k2 = mesh.interior_edges()
    keep = np.zeros(len(e1), dtype=bool) if opened is None else ~np.asarray(opened, dtype=bool)
    slot = lambda e, j: 6 * e + j
    a, b = e1[keep], e2[keep]
    ka, kb = k1[keep], k2[keep]
    # corner k1 of e1 is corner (k2 + 1) % 3 of e2, and the other way round; midsides match
    left = np.concatenate([slot(a, ka), slot(a, (ka + 1) % 3), slot(a, 3 + ka)])
    right = np.concatenate([slot(b, (kb + 1) % 3), slot(b, kb), slot(b, 3 + kb)])
    n_slots = 6 * mesh.n_elements
    graph = coo_matrix((np.ones(len(left)), (left, right)), shape=(n_slots, n_slots))
    _, label = connected_components(graph, directed=False)
    points = np.zeros((label.max() + 1, 2))
    points[label] = mesh.points[mesh.triangles.ravel()]
    jumps = np.column_stack([e1[~keep], k1[~keep], e2[~keep], k2[~keep]])
    return Mesh(points=points, triangles=label.reshape(-1, 6), layer=mesh.layer,
                boundary_element=mesh.boundary_element, boundary_local=mesh.boundary_local,
                boundary_kind=mesh.boundary_kind, domain=mesh.domain, footing_width=mesh.footing_width,
                jumps=jumps)


@dataclass(frozen=True)
class SizeHint:
    """A wanted element size (m) at the corner nodes of a previous mesh of the same
    domain, from adaptive refinement (:mod:`solver.adapt`), grading toward the
    footing edges included (:func:`graded_size` times a factor). build_mesh
    meshes to it alone, scaled as a whole to meet its element target, so only
    its shape matters."""

    points: np.ndarray  # (n, 2) m
    triangles: np.ndarray  # (m, 3) corner nodes
    size: np.ndarray  # (n,) m

    def estimate_count(self) -> float:
        """Triangles a mesh following this size would have: about 2.3 * integral of 1/h^2."""
        p = self.points[self.triangles]
        area = 0.5 * np.abs((p[:, 1, 0] - p[:, 0, 0]) * (p[:, 2, 1] - p[:, 0, 1])
                            - (p[:, 2, 0] - p[:, 0, 0]) * (p[:, 1, 1] - p[:, 0, 1]))
        return float(2.3 * np.sum(area / self.size[self.triangles].mean(axis=1) ** 2))


def graded_size(points: np.ndarray, domain: Domain, B: float, fan: bool) -> np.ndarray:
    """(n,) m: the graded element size at points for scale 1, as build_mesh grades a mesh
    (with or without a fan): h = edge B + grading r, capped at a tenth of the domain depth,
    r the distance to the nearest footing edge (half the distance to a slope's crest).

    >>> d = Domain(True, 0.0, 10.0, 5.0, (), 3.0, 2.0)
    >>> graded_size(np.array([[0.5, 0.0], [0.5, -1.0], [9.0, -5.0]]), d, 1.0, fan=False).round(4).tolist()
    [0.002, 0.152, 0.5]
    """
    x, y = points[:, 0], points[:, 1]
    centres = [B / 2] if domain.half else [B / 2, -B / 2]
    r = np.min([np.hypot(x - c, y) for c in centres], axis=0)
    if domain.slope:
        r = np.minimum(r, 2.0 * np.hypot(x - domain.crest_x, y))
    return _size(r, B, domain, *((FAN_EDGE_SIZE, FAN_GRADING) if fan else ()))


def is_symmetric(case: Case) -> bool:
    """A vertical central load on level layered ground is symmetric about x = 0."""
    return (case.footing.load_inclination == 0.0 and case.footing.eccentricity == 0.0
            and case.ground.slope_angle == 0.0)


def plan_domain(case: Case, half: bool | None = None) -> Domain:
    """Size the domain from the strata's strengths and the collapse mechanisms they allow.

    Each candidate mechanism is a Prandtl-Reissner one (active wedge, log-spiral
    fan, passive wedge; common practice) under an equivalent footing of width b
    on top of one stratum, at its depth d: r0 = b / (2 cos(45 + phi/2)),
    r1 = r0 exp(pi/2 tan phi); it reaches 2 r1 cos(45 - phi/2) beyond the
    equivalent footing's edge and r1 below it (:func:`mechanism_candidates`).
    The domain is twice the union of the candidates plus B, so that neither
    bound is restricted by its boundary; it holds every interface between
    strata that differ (below the mesh, the lower bound's extension elements
    carry the last stratum only). The run checks afterwards whether either
    bound's field reaches the edge and grows the domain if it does
    (:func:`grow_domain`, solver.analysis).

    ``[analysis] model_width`` and ``model_depth`` (m), when given, replace the
    planned extent (the footing centred in the given width); such a domain
    does not grow. A drawn site ([geometry] file) has the extent of its drawing
    (solver.sitefile).
    """
    if case.geometry is not None:
        from .sitefile import plan_site_domain
        return plan_site_domain(case)
    B = case.footing.width
    candidates = mechanism_candidates(case)
    reach = max(x for x, _ in candidates) - B / 2  # m beyond the footing edge
    depth = max(d for _, d in candidates)
    x_max = B / 2 + 2.0 * reach + B
    # Every interface (layers and the water table) within reach of a mechanism lies inside
    # the mesh; those below the model are carried by the lower bound's extension elements
    # (solver.lower.deep_strata), so that a deep water table or a thick layer costs nothing.
    interfaces = tuple(s.bottom for s in case.strata()[:-1])
    near = [d for d in case.required_interfaces() if d < 2.0 * depth + B]
    model_depth = max(2.0 * depth + B, 1.25 * near[-1] if near else 0.0)
    slope = {}
    ground = case.ground
    if ground.slope_angle > 0:
        # The ground falls away beyond the crest; the slope's own mechanism can
        # pass below the toe (deep-seated in clay): reach past the toe by the
        # footing's zone again, and below it by as much (common practice).
        crest = B / 2 + ground.crest_setback
        toe = crest + ground.slope_height / math.tan(math.radians(ground.slope_angle))
        x_max = max(x_max, toe + 2.0 * reach + B)
        model_depth = max(model_depth, ground.slope_height + 2.0 * depth + B)
        slope = {"crest_x": crest, "toe_x": toe, "slope_height": ground.slope_height}
        half = False
    # An interface just above the model base would leave a thin band there: put the base
    # on the shallowest interface within the last fifth of the soil below the toe level instead.
    floor = model_depth - 0.2 * (model_depth - slope.get("slope_height", 0.0))
    model_depth = min([d for d in interfaces if floor < d <= model_depth], default=model_depth)
    half = is_symmetric(case) if half is None else half
    half = half or case.footing.shape == "circular"  # a circle: the meridian half-plane r >= 0
    x_min = 0.0 if half else -(B / 2 + 2.0 * reach + B)
    analysis = case.analysis
    if analysis.model_width is not None:
        x_min, x_max = (0.0 if half else -analysis.model_width / 2), analysis.model_width / 2
    if analysis.model_depth is not None:
        model_depth = analysis.model_depth
    return _domain(case, half, x_min, x_max, model_depth, reach, depth, slope)


def _domain(case: Case, half: bool, x_min: float, x_max: float, depth: float, reach: float,
            mechanism_depth: float, slope: dict) -> Domain:
    """A Domain with the interfaces that lie inside it. A base within 5 % of its depth
    below an interface is put on the interface: a thinner band under it would only cost
    small triangles (a grown or user-given depth; the plan places its base the same way)."""
    below = [s.bottom for s in case.strata()[:-1]]
    axisymmetric = case.footing.shape == "circular"
    if axisymmetric:
        # The circle's far field below the mesh carries the last meshed stratum only
        # (solver.lower_axisym): every interface between strata that differ lies inside, with
        # a band of a fifth of its depth under the deepest one.
        required = case.required_interfaces()
        depth = max([depth] + [1.25 * d for d in required if d > 0.8 * depth])
    else:
        depth = min([d for d in below if 0.95 * depth < d <= depth], default=depth)
    interfaces = tuple(d for d in below if d < depth)
    return Domain(half=half, x_min=x_min, x_max=x_max, depth=depth, interfaces=interfaces,
                  mechanism_width=reach, mechanism_depth=mechanism_depth, axisymmetric=axisymmetric,
                  **slope)


SPREAD = 2.0  # a strong stratum spreads the load onto a weaker one below it by at most this much
#               sideways per m of depth on each side (the mechanism under a crust 5 times as strong
#               as the clay below it, H = B, reached about 1.9 m per m; tests/test_domain.py)


def mechanism_candidates(case: Case) -> list[tuple[float, float]]:
    """(x, depth) in m: how far from the footing centre and how deep each plausible
    collapse mechanism reaches (Prandtl-Reissner extents, :func:`plan_domain`).

    The footing's pressure is estimated from the top stratum alone, q0 (its
    bearing capacity on a half-space of that stratum, :func:`_capacity_kPa`). A
    deeper stratum k within reach of the mechanisms above it whose own capacity
    q_k is lower is a candidate too: the stronger soil above spreads the load
    onto it, over an equivalent footing of width b_k = B q0 / q_k (the width
    that carries the footing's load at q_k), at most B + 2 SPREAD d_k. A
    mechanism that would reach into a weaker stratum is dropped: the weaker
    stratum's own candidate takes its place (a sand crust's wide mechanism
    does not form over soft clay). The rough capacities only rank the strata;
    the run checks the fields afterwards (solver.analysis)."""
    B = case.footing.width
    strata = case.strata()
    overburden = case.overburden_kPa()
    tops, capacity = [], []
    for s in strata:
        tops.append(overburden)
        capacity.append(_capacity_kPa(s, B, overburden))
        if math.isfinite(s.bottom):
            overburden += s.unit_weight * (s.bottom - s.top)
    q0 = capacity[0]
    out: list[tuple[float, float, int]] = []
    reach_depth = 0.0
    for k, s in enumerate(strata):
        if k > 0 and (continues(strata[k - 1], s) or s.top >= 2.0 * reach_depth + B or capacity[k] >= q0):
            continue  # the same soil carried on, out of reach, or no weaker than the top
        b = B if k == 0 else min(B * q0 / max(capacity[k], 1e-9), B + 2.0 * SPREAD * s.top)
        r0 = b / (2.0 * math.cos(math.pi / 4 + s.phi_rad / 2))
        r1 = r0 * math.exp(math.pi / 2 * math.tan(s.phi_rad))
        x, depth = b / 2 + 2.0 * r1 * math.cos(math.pi / 4 - s.phi_rad / 2), s.top + r1
        out.append((x, depth, k))
        reach_depth = max(reach_depth, depth)
    # a mechanism reaching a weaker stratum's top gives way to that stratum's own
    kept = [(x, d) for x, d, k in out
            if not any(j > k and strata[j].top < d and capacity[j] < capacity[k] for _, _, j in out)]
    return kept or [(x, d) for x, d, _ in out]


def _capacity_kPa(stratum, b: float, overburden: float) -> float:
    """c Nc + p Nq + 0.5 gamma b N_gamma (kPa) of a strip of width b (m) on a half-space
    of one stratum under an overburden p (kPa), c taken at b/2 below the stratum's
    top; factors of EN 1997-1 Annex D (solver.hand.bearing_factors). Only to rank strata."""
    from .hand import bearing_factors

    f = bearing_factors("ec7", math.degrees(stratum.phi_rad))
    c = stratum.c_top + stratum.c_gradient * b / 2
    return c * f["Nc"] + overburden * f["Nq"] + 0.5 * stratum.unit_weight * b * f["Ngamma"]


GROWTH = 2.0  # a domain whose edge a bound's field reaches grows by this factor that way


def grow_domain(case: Case, domain: Domain, edges: set[str]) -> Domain:
    """The domain made GROWTH times as wide beyond the footing edge toward each side in
    ``edges`` ("left", "right") and/or GROWTH times as deep ("base"), for a bound whose
    field reached those edges (solver.analysis)."""
    B = case.footing.width
    x_max = B / 2 + GROWTH * (domain.x_max - B / 2) if "right" in edges else domain.x_max
    x_min = -(B / 2 + GROWTH * (-domain.x_min - B / 2)) if "left" in edges and not domain.half else domain.x_min
    depth = GROWTH * domain.depth if "base" in edges else domain.depth
    slope = ({"crest_x": domain.crest_x, "toe_x": domain.toe_x, "slope_height": domain.slope_height}
             if domain.slope else {})
    return _domain(case, domain.half, x_min, x_max, depth, domain.mechanism_width, domain.mechanism_depth, slope)


def far_edge_names(mesh: Mesh) -> np.ndarray:
    """(n_b,) name of the far edge each boundary edge lies on: "left", "right", "base" or ""."""
    midpoint = mesh.points[mesh.boundary_edges[:, :2]].mean(axis=1)
    side = np.where(midpoint[:, 0] > 0.5 * (mesh.domain.x_min + mesh.domain.x_max), "right", "left")
    return np.where(mesh.boundary_kind == FAR_BASE, "base", np.where(mesh.boundary_kind == FAR_SIDE, side, ""))


# Fan of triangles centred on each footing edge (lower bound). A fan of stress
# discontinuities centred on the edge captures the stress singularity there
# (Sloan 1988; common practice in lower-bound limit analysis). The values were
# chosen by measurement, for accuracy per solve second over weightless Tresca
# (rough, smooth), weightless Mohr-Coulomb and self-weight cases at 1.5k-4k
# elements; within the ranges in brackets the bound changed by less than the
# scatter from one mesh to the next.
FAN_REACH = 1.0  # longest ray / B [0.85-1.0]; 0.45 (a half-disc) was 1.5-3 times as far off
FAN_CLEARANCE = 0.9  # a ray fills at most this fraction of its room to the symmetry line, the
#                      centre line between two fans, or the far boundary; a fan is a circle of
#                      this fraction of the first interface's depth (a flat fan squashed under
#                      a shallow interface gave a 5 % lower bound on a two-layer case)
# Longest ray / B below which no fan is built. A fan squashed under a shallow first interface
# did worse than none: lower bounds at 800 triangles, fan against none, with the fan's reach
# limited to 0.023 / 0.045 / 0.09 / 0.18 / 0.27 B by a sand crust over a stronger sand:
# -8 / -5 / -4 / +3 / +6 %; sand over clay -4 / -0.3 / -0.8 / +0.4 / +0.7 %; clay over
# clay within 0.3 % up to 0.09 B, then +0.6 / +1.1 %; on a weightless cohesionless crust
# 0.025 B thick under an inclined load the fan's bound was 1e-6 of the unfanned one, every
# sector meeting the stress-free apex.
FAN_MIN_REACH = 0.15
# Without a fan (the upper bound's mesh): h = s (PLAIN_EDGE_SIZE B + PLAIN_GRADING r).
# Measured on the upper bound at 4k and 8k triangles (Prandtl, exact 2 + pi; and
# N_gamma at phi = 30, reference 14.75 from memory): (0.02, 0.2) gave +1.13 % / +0.77 %
# and +7.5 % / +5.0 %; (0.002, 0.15) gave +0.63 % / +0.41 % and +4.1 % / +2.7 %: the
# continuous velocity field needs very small elements at the footing edge, where the
# exact velocity jumps. Smaller edge sizes (5e-4 to 1e-3) measured no better.
PLAIN_EDGE_SIZE = 0.002
PLAIN_GRADING = 0.15
FAN_SLOPE_SETBACK = 0.1
FAN_SLOPE_CLEARANCE = 0.5  # rays stop at this fraction of their room to a slope face (measured: 0.9 made
#                            the lower bound infeasible with a surcharge, setback 0.5 B)  # no fans when a crest is nearer than this * B to the footing edge
FAN_FIRST_RING = 0.03  # innermost ring / ray length [0.01-0.03]
FAN_ASPECT = 6.0  # radial / circumferential spacing of the cells near the edge [3.5-10]
FAN_RADIAL = 2.5  # ... but radial spacing at most this times the outside size [1.5-2.5]: long
#                   cells far out gave a 2-3 % lower bound with self-weight (stress not constant
#                   along rays there)
FAN_MIN_SECTORS = 8
FAN_REFINE = 1.4  # rim spacing of the fan = outside size at the rim / FAN_REFINE [1.4-2]
FAN_EDGE_SIZE = 0.02  # size outside the fan: h = s (FAN_EDGE_SIZE B + FAN_GRADING r), r from the
FAN_GRADING = 0.1  # edge [0.07-0.1]; 0.15-0.25 did worse, most on frictional cases (wide domains)


@dataclass(frozen=True)
class FanLayout:
    """A fan of triangles centred on each footing edge, below the surface.

    ``sectors`` rays at equal angles from the footing side round to the ground
    side; each ray is as long as its room allows (``lengths``, m): up to
    FAN_REACH B, cut short by the symmetry line (or the centre line between
    two fans), the first interface and the far boundary. Rings lie at the
    same ``fractions`` of every ray, so each is a scaled copy of the rim. The
    innermost ring is joined to the edge by one triangle per sector; every
    other cell is split in two along the same diagonal, so every inner node
    has six edges (alternating diagonals measured no better and leave nodes of
    four edges, two of them nearly parallel: nearly dependent continuity rows).
    """

    centres: tuple[float, ...]  # x of the footing edges, m
    sectors: int
    fractions: np.ndarray  # (rings,) ring position along every ray, innermost first, last 1
    lengths: np.ndarray  # (n_fans, sectors + 1) ray lengths, m

    @property
    def rings(self) -> int:
        return len(self.fractions)

    @property
    def n_elements(self) -> int:
        return len(self.centres) * self.sectors * (2 * self.rings - 1)

    def ring_nodes(self) -> np.ndarray:
        """(n_fans, rings, sectors + 1, 2) node coordinates (m), innermost ring first."""
        x, y = _ray_directions(self.sectors, np.asarray(self.centres))
        r = self.fractions[None, :, None] * self.lengths[:, None, :]
        return np.stack([np.asarray(self.centres)[:, None, None] + r * x[:, None, :],
                         r * y[:, None, :]], axis=-1)


def _ray_directions(sectors: int, centres: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """(n_fans, sectors + 1) unit ray components, from the footing side to the ground
    side (mirrored for an edge at x < 0); the end rays lie on the surface exactly."""
    angle = np.linspace(-np.pi, 0.0, sectors + 1)
    x, y = np.cos(angle), np.sin(angle)
    x[[0, -1]], y[[0, -1]] = [-1.0, 1.0], 0.0
    side = np.where(centres < 0, -1.0, 1.0)[:, None]
    return side * x[None, :], np.broadcast_to(y, (len(centres), sectors + 1)).copy()


def _ray_lengths(domain: Domain, B: float, centres: np.ndarray, x: np.ndarray, y: np.ndarray) -> np.ndarray:
    """Ray lengths (m) for unit rays (x, y) from the edges at ``centres`` (m): clear of
    the line x = 0 (the symmetry line, or the centre line between two fans), the
    far boundary and the first interface (as a circle)."""
    with np.errstate(divide="ignore"):
        inward = np.where(x * centres[:, None] < 0, np.abs(centres)[:, None] / np.abs(x), np.inf)
        outward = np.where(x * centres[:, None] > 0, (domain.x_max - np.abs(centres))[:, None] / np.abs(x), np.inf)
        down = domain.depth / np.abs(y)
    room = np.minimum(np.minimum(inward, outward), down)
    if domain.slope:
        # a ray from the edge at x = c along (x, y) leaves the soil through the slope
        # face y = -(X - crest) tan(beta) at t = (crest - c) tan(beta) / (y + x tan(beta)),
        # if it gets there above the toe
        tan_b = domain.slope_height / (domain.toe_x - domain.crest_x)
        setback = domain.crest_x - centres[:, None]
        rate = y + x * tan_b
        with np.errstate(divide="ignore", invalid="ignore"):
            t = np.where(rate > 0, setback * tan_b / rate, np.inf)
        with np.errstate(invalid="ignore"):  # inf * 0 on the surface ray
            t = np.where(np.nan_to_num(t * -y, nan=0.0) <= domain.slope_height, t, np.inf)
        # leave the crest to the unstructured mesh: a sliver between the rim and the
        # crest leaves the crest node too few triangles to turn the surcharge's end
        t = t * FAN_SLOPE_CLEARANCE / FAN_CLEARANCE
        room = np.minimum(room, t)
    if domain.interfaces:
        room = np.minimum(room, domain.interfaces[0])
    return np.minimum(FAN_REACH * B, FAN_CLEARANCE * room)


def fan_reach(domain: Domain, B: float) -> float:
    """Longest ray (m) a fan may have; 0 when there is no room for a fan (nor when
    a slope's crest is closer to the footing edge than FAN_SLOPE_SETBACK B: the
    rays along the surface would be too short to mesh)."""
    centres = np.array([B / 2] if domain.half else [B / 2, -B / 2])
    if domain.slope and domain.crest_x - B / 2 < FAN_SLOPE_SETBACK * B:
        return 0.0
    x, y = _ray_directions(720, centres)
    reach = float(_ray_lengths(domain, B, centres, x, y).max())
    return reach if reach >= FAN_MIN_REACH * B else 0.0


def _fan_layout(domain: Domain, B: float, scale: float) -> FanLayout:
    """Sectors matched to the outside size at the longest ray's end (``scale`` as in
    build_mesh); rings from FAN_FIRST_RING, FAN_ASPECT and FAN_RADIAL."""
    centres = np.array([B / 2] if domain.half else [B / 2, -B / 2])
    reach = fan_reach(domain, B)
    rim_size = scale * min(FAN_EDGE_SIZE * B + FAN_GRADING * reach, 0.1 * domain.depth)
    sectors = max(FAN_MIN_SECTORS, int(math.ceil(FAN_REFINE * math.pi * reach / rim_size)))
    x, y = _ray_directions(sectors, centres)
    return FanLayout(centres=tuple(centres), sectors=sectors,
                     fractions=_ring_fractions(domain, B, scale, sectors, reach),
                     lengths=_ray_lengths(domain, B, centres, x, y))


def _ring_fractions(domain: Domain, B: float, scale: float, sectors: int, reach: float) -> np.ndarray:
    """Ring positions along the rays (fractions of each ray, innermost first, last 1).

    Outward from FAN_FIRST_RING, each radial step on the longest ray is
    FAN_ASPECT times the circumferential spacing there, but at most
    FAN_RADIAL times the outside size at that radius (0: no such limit)."""
    step_angle = math.pi / sectors
    fractions = [FAN_FIRST_RING]
    while fractions[-1] < 1.0:
        r = fractions[-1] * reach
        step = FAN_ASPECT * step_angle * r
        if FAN_RADIAL > 0:
            step = min(step, FAN_RADIAL * scale * min(FAN_EDGE_SIZE * B + FAN_GRADING * r, 0.1 * domain.depth))
        fractions.append(fractions[-1] + step / reach)
    f = np.array(fractions)
    if len(f) > 2 and f[-1] - 1.0 > 1.0 - f[-2]:
        f = f[:-1]  # end on the ring nearer to the rim
    # stretch the log spacing so that the rim lands on 1 and the first ring stays put
    t = np.log(f / f[0]) / np.log(f[-1] / f[0])
    return np.append(f[0] ** (1.0 - t[:-1]), 1.0)


def build_mesh(case: Case, order: int, elements: int | None = None,
               domain: Domain | None = None, fan: bool | None = None,
               size_hint: SizeHint | None = None) -> Mesh:
    """Mesh the case's domain with about ``elements`` triangles of the given order.

    Without a fan the element size grows linearly with the distance r from
    the nearest footing edge, h = s (PLAIN_EDGE_SIZE B + PLAIN_GRADING r), capped
    at a tenth of the domain depth; the scale s is set from the target count and corrected after
    trial meshes (element count scales as 1/s^2).

    ``fan`` (default: on for first order, off for second) puts a structured
    fan (:class:`FanLayout`) round each footing edge and meshes the rest with
    h = s (FAN_EDGE_SIZE B + FAN_GRADING r); the fan's rim spacing matches h
    there. Second-order meshes get straight-sided midside nodes (computed here). Measured
    on the Prandtl case (weightless Tresca, exact 2 + pi, Prandtl 1920): the
    fan took the lower bound from -1.2 % to -0.05 % at 2k elements; it did not
    improve the upper bound (+3.3 % against +1.7 % at 2k), hence off for
    second order.

    Parameters
    ----------
    case : Case
    order : int
        1 (3-node triangles, lower bound) or 2 (6-node triangles, upper bound).
    elements : int, optional
        Target number of triangles (met to within about 5 %, 10 % for small
        targets); default ``case.analysis.elements``.
    domain : Domain, optional
        Default :func:`plan_domain` of the case.
    fan : bool, optional
        Build the fans (default ``order == 1``); none is built where there is
        no room (:func:`fan_reach`).
    size_hint : SizeHint, optional
        Adaptive refinement: the element size follows the hint alone (scaled
        to the target count); the hint carries the grading itself.

    A drawn site ([geometry] file) is meshed by solver.sitefile instead
    (``domain``, ``fan`` and ``size_hint`` do not apply to it).
    """
    if case.geometry is not None:
        from .sitefile import build_site_mesh
        return build_site_mesh(case, order, elements)
    domain = domain or plan_domain(case)
    target = elements or case.analysis.elements
    B = case.footing.width
    # gmsh (and OpenCASCADE's absolute tolerance of 1e-7) sees the site in units of B, so
    # meshing does not depend on the footing's size; the points are scaled back at the end.
    unit = _in_widths(domain, B)
    check_meshable(unit)
    hint = None if size_hint is None else SizeHint(size_hint.points / B, size_hint.triangles, size_hint.size / B)
    fan = ((order == 1) if fan is None else fan) and fan_reach(unit, 1.0) > 0
    scale = math.sqrt((hint.estimate_count() if hint else _estimate_count(unit, 1.0, fan)) / target)
    layout = None
    with _GMSH_LOCK:
        gmsh = _start_gmsh()
        try:
            tried = {}  # scale -> relative miss of the element count
            for attempt in range(6):
                layout = _fan_layout(unit, 1.0, scale) if fan else None
                rim = _draw(gmsh, unit, 1.0, layout)
                count = _mesh_once(gmsh, unit, 1.0, scale, layout, hint)
                count += layout.n_elements if layout else 0
                tried[scale] = abs(count / target - 1.0)
                if tried[scale] < 0.05:
                    break
                if attempt == 5:  # not converged (small targets): keep the closest
                    scale = min(tried, key=tried.get)
                    layout = _fan_layout(unit, 1.0, scale) if fan else None
                    rim = _draw(gmsh, unit, 1.0, layout)
                    _mesh_once(gmsh, unit, 1.0, scale, layout, hint)
                    break
                scale *= math.sqrt(count / target)
            points, triangles, index = _read_triangles(gmsh)
            if layout:
                rim_nodes = index[_point_nodes(gmsh, rim)]
        finally:
            gmsh.finalize()
    if layout:
        points, triangles = _add_fans(points, triangles, layout, rim_nodes)
    if order == 2:
        points = snap_crossings(points, triangles, levels=(0.0, *(-d for d in unit.interfaces)))
        # midside nodes computed here rather than by gmsh's setOrder, which on a long, thin
        # domain failed to place them and then crashed the process in gmsh.finalize
        points, triangles = _second_order(points, triangles)
    else:
        points, triangles = _split_corner_triangles(points, triangles)
    return dataclasses.replace(_assemble_mesh(points * B, triangles, domain, case), fan=layout is not None)


MESHABLE_EXTENT = 1e5  # B: the largest domain the mesher is asked for (a case file reaches 6000 B)
MESHABLE_BAND = 1e-4  # B: the thinnest band between interfaces (a case file's thinnest is 0.001 B)


def check_meshable(unit: Domain) -> None:
    """Refuse (ValueError) a domain, in units of B, that gmsh cannot mesh soundly: the case
    check keeps every case file inside these limits; this guards the other ways in."""
    levels = (0.0, *unit.interfaces, unit.depth)
    sizes = (unit.x_min, unit.x_max, unit.depth, *unit.interfaces, unit.mechanism_width, unit.mechanism_depth,
             *((unit.crest_x, unit.toe_x, unit.slope_height) if unit.slope else ()))
    if not all(math.isfinite(v) for v in sizes):
        raise ValueError(f"mesh: the domain is not finite ({unit})")
    if max(unit.x_max - unit.x_min, unit.depth) > MESHABLE_EXTENT:
        raise ValueError(f"mesh: the domain is {max(unit.x_max - unit.x_min, unit.depth):.3g} footing widths across; "
                         f"the mesher is asked for at most {MESHABLE_EXTENT:g}")
    if min(b - a for a, b in zip(levels, levels[1:])) < MESHABLE_BAND:
        raise ValueError(f"mesh: a band between interfaces is thinner than {MESHABLE_BAND:g} footing widths")


def _in_widths(domain: Domain, B: float) -> Domain:
    """The same domain with every length divided by B."""
    scaled = {key: (None if value is None else value / B)
              for key, value in vars(domain).items() if key not in ("half", "interfaces")}
    return Domain(half=domain.half, interfaces=tuple(d / B for d in domain.interfaces), **scaled)


def _split_corner_triangles(points: np.ndarray, triangles: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Split every first-order triangle with two boundary edges into three about
    its centroid.

    In the lower bound a node's stress must meet the tractions prescribed on
    every boundary edge of its triangle there; at a corner of the ground (the
    crest, the toe) two edges may carry different tractions (surcharge on one,
    none on the other), which no single stress state meets: the program would
    be infeasible. Split, each corner triangle's node sees one edge only.
    """
    edges = triangles[:, [[0, 1], [1, 2], [2, 0]]].reshape(-1, 2)
    _, inverse, counts = np.unique(np.sort(edges, axis=1), axis=0, return_inverse=True, return_counts=True)
    on_boundary = (counts[inverse.ravel()] == 1).reshape(-1, 3)
    corner = np.flatnonzero(on_boundary.sum(axis=1) >= 2)
    if len(corner) == 0:
        return points, triangles
    centre = len(points) + np.arange(len(corner))
    a, b, c = triangles[corner].T
    pieces = np.concatenate([np.column_stack([a, b, centre]), np.column_stack([b, c, centre]),
                             np.column_stack([c, a, centre])])
    keep = np.ones(len(triangles), dtype=bool)
    keep[corner] = False
    return (np.concatenate([points, points[triangles[corner]].mean(axis=1)]),
            np.concatenate([triangles[keep], pieces]))


def _estimate_count(domain: Domain, B: float, fan: bool = False) -> float:
    """Triangles expected for scale 1: about 2.3 * integral of 1/h^2 over the domain
    (outside the fans, plus the fans' own count, if any)."""
    xs = np.linspace(domain.x_min, domain.x_max, 200)
    ys = np.linspace(-domain.depth, 0.0, 120)
    X, Y = np.meshgrid(xs, ys)
    r = np.hypot(np.abs(X) - B / 2, Y)
    h = _size(r, B, domain, *((FAN_EDGE_SIZE, FAN_GRADING) if fan else ()))
    cell = (xs[1] - xs[0]) * (ys[1] - ys[0])
    if not fan:
        return float(2.3 * np.sum(cell / h**2))
    layout = _fan_layout(domain, B, 1.0)
    return float(2.3 * np.sum((r > fan_reach(domain, B)) * cell / h**2)) + layout.n_elements


def _size(r, B: float, domain: Domain, edge_size: float | None = None, grading: float | None = None):
    """Element size (m) at distance r (m) from the nearest footing edge, for scale 1."""
    edge_size = PLAIN_EDGE_SIZE if edge_size is None else edge_size
    grading = PLAIN_GRADING if grading is None else grading
    return np.minimum(edge_size * B + grading * r, 0.1 * domain.depth)


def _start_gmsh():
    import gmsh
    # readConfigFiles/interruptible off: works off the main thread and in workers.
    with _signal_actions_kept():
        gmsh.initialize(readConfigFiles=False, interruptible=False)
    gmsh.option.setNumber("General.Terminal", 0)
    gmsh.option.setNumber("General.Verbosity", 0)
    return gmsh


# gmsh.initialize resets signal actions to the default (measured: SIGTERM, SIGHUP and
# SIGPIPE), which would kill the process mid-write on a SIGTERM that the command line
# handles as a Ctrl-C, or on a closed pipe that Python reports as BrokenPipeError. Every
# catchable signal's action is put back, not only those measured.
_UNCATCHABLE = ("SIGKILL", "SIGSTOP")


@contextlib.contextmanager
def _signal_actions_kept():
    """Put back the process's signal actions after the block, at the C level (sigaction),
    so that it works from any thread, not only Python's main one."""
    import ctypes
    import signal

    try:
        sigaction = ctypes.CDLL(None, use_errno=True).sigaction
    except (AttributeError, OSError):  # no C library sigaction: nothing to keep
        yield
        return
    skip = {int(getattr(signal, name)) for name in _UNCATCHABLE if hasattr(signal, name)}
    numbers = [int(number) for number in signal.valid_signals() if int(number) not in skip]
    saved = {number: ctypes.create_string_buffer(512) for number in numbers}  # > sizeof(struct sigaction)
    for number, buffer in saved.items():
        sigaction(number, None, buffer)
    try:
        yield
    finally:
        for number, buffer in saved.items():
            sigaction(number, buffer, None)


def _draw(gmsh, domain: Domain, B: float, layout: FanLayout | None = None) -> np.ndarray | None:
    """Stacked rectangles, one per layer band, fragmented with the footing edges.

    With a fan layout, each fan's region (bounded by its rim polyline) is cut
    out of the top band instead, every rim segment is meshed as one edge, and
    the gmsh point tags of the rim nodes are returned, (n_fans, sectors + 1).
    """
    gmsh.clear()
    gmsh.model.add("bearbound")
    occ = gmsh.model.occ
    tops = (0.0,) + domain.interfaces
    bottoms = domain.interfaces + (domain.depth,)
    width = domain.x_max - domain.x_min
    bands = [(2, occ.addRectangle(domain.x_min, -b, 0.0, width, b - t)) for t, b in zip(tops, bottoms)]
    if domain.slope:
        corners = [occ.addPoint(x, y, 0.0) for x, y in domain.air_polygon()]
        lines = [occ.addLine(a, b) for a, b in zip(corners, corners[1:] + corners[:1])]
        air = occ.addPlaneSurface([occ.addCurveLoop(lines)])
        kept, _ = occ.cut(bands, [(2, air)])
        bands = sorted(kept, key=lambda dimtag: -occ.getCenterOfMass(*dimtag)[1])  # top band first
    if layout is None:
        centres = [B / 2] if domain.half else [B / 2, -B / 2]
        occ.fragment(bands, [(0, occ.addPoint(x, 0.0, 0.0)) for x in centres])
        occ.synchronize()
        _embed_crest_points(gmsh, domain, B)
        return None
    rim = layout.ring_nodes()[:, -1]  # (n_fans, sectors + 1, 2)
    cutters = []
    for centre, nodes in zip(layout.centres, rim):
        # closed through a point above the surface, so the cut leaves a clean notch
        corners = [occ.addPoint(x, y, 0.0) for x, y in nodes] + [occ.addPoint(centre, B, 0.0)]
        lines = [occ.addLine(a, b) for a, b in zip(corners, corners[1:] + corners[:1])]
        cutters.append((2, occ.addPlaneSurface([occ.addCurveLoop(lines)])))
    top, _ = occ.cut(bands[:1], cutters)
    if len(bands) > 1:
        occ.fragment(top, bands[1:])
    occ.synchronize()
    # rim nodes -> geometric points (coordinates survive the cut to within OCC's tolerance)
    point_tags = np.array([tag for _, tag in gmsh.model.getEntities(0)])
    xy = np.array([gmsh.model.getValue(0, int(tag), [])[:2] for tag in point_tags])
    gap = np.hypot(*(rim.reshape(-1, 1, 2) - xy[None]).transpose(2, 0, 1))
    nearest = np.argmin(gap, axis=1)
    if np.any(gap[np.arange(len(nearest)), nearest] > 1e-6 * B):
        raise RuntimeError("mesh: a fan rim node was lost when cutting the fan out")
    rim_tags = point_tags[nearest].reshape(rim.shape[:2])
    # rim segments (consecutive rim nodes of one fan) carry no inner mesh nodes
    position = {int(t): (f, i) for (f, i), t in np.ndenumerate(rim_tags)}
    for _, curve in gmsh.model.getEntities(1):
        ends = [position.get(abs(t)) for _, t in gmsh.model.getBoundary([(1, curve)], oriented=False)]
        if len(ends) == 2 and None not in ends and ends[0][0] == ends[1][0] and abs(ends[0][1] - ends[1][1]) == 1:
            gmsh.model.mesh.setTransfiniteCurve(curve, 2)
    _embed_crest_points(gmsh, domain, B)
    return rim_tags


CREST_POINTS = 3  # nodes embedded round the crest, so that several triangles meet there
CREST_RADIUS = 0.02  # their distance from the crest, times B


def _embed_crest_points(gmsh, domain: Domain, B: float) -> None:
    """Embed CREST_POINTS nodes just inside the soil round the crest.

    The lower bound needs several triangles at a ground corner where the
    surcharge ends (each triangle's node meets the tractions of its own edge
    only, and stress discontinuities between them turn the load's end); a
    mesher left to itself often puts one obtuse triangle there.
    """
    if not domain.slope:
        return
    beta = math.atan2(domain.slope_height, domain.toe_x - domain.crest_x)
    inside = math.pi - beta  # the soil's angle at the crest, from the level ground round to the face
    angles = math.pi + inside * np.arange(1, CREST_POINTS + 1) / (CREST_POINTS + 1)
    xy = np.column_stack([domain.crest_x + CREST_RADIUS * B * np.cos(angles), CREST_RADIUS * B * np.sin(angles)])
    for x, y in xy:
        for _, surface in gmsh.model.getEntities(2):
            if gmsh.model.isInside(2, surface, [x, y, 0.0]):
                point = gmsh.model.occ.addPoint(x, y, 0.0)
                gmsh.model.occ.synchronize()
                gmsh.model.mesh.embed(0, [point], 2, surface)
                break


def _mesh_once(gmsh, domain: Domain, B: float, scale: float,
               layout: FanLayout | None = None, size_hint: SizeHint | None = None) -> int:
    """Mesh the drawn domain with first-order triangles; returns their number."""
    mesh = gmsh.model.mesh
    mesh.clear()
    for tag in mesh.field.list():
        mesh.field.remove(tag)
    centres = [B / 2] if domain.half else [B / 2, -B / 2]
    distance = ", ".join(f"Sqrt((x-({x}))^2+y^2)" for x in centres)
    if domain.slope:  # the mechanism leaves the ground at or below the crest: refine there too
        distance += f", 2*Sqrt((x-({domain.crest_x}))^2+y^2)"
    distance = f"Min({distance})" if "," in distance else distance
    edge, grading = (FAN_EDGE_SIZE, FAN_GRADING) if layout else (PLAIN_EDGE_SIZE, PLAIN_GRADING)
    mesh.field.add("MathEval", 1)
    mesh.field.setString(1, "F", f"{scale}*Min({edge * B}+{grading}*{distance}, {0.1 * domain.depth})")
    if size_hint is None:
        mesh.field.setAsBackgroundMesh(1)
    else:
        # the hint as a post-processing view of scalar triangles, all at once
        view = gmsh.view.add("size hint")
        p = size_hint.points[size_hint.triangles]  # (m, 3, 2)
        values = scale * size_hint.size[size_hint.triangles]
        data = np.concatenate([p[:, :, 0], p[:, :, 1], np.zeros_like(values), values], axis=1)
        gmsh.view.addListData(view, "ST", len(values), data.ravel().tolist())
        mesh.field.add("PostView", 2)
        mesh.field.setNumber(2, "ViewTag", view)
        mesh.field.setAsBackgroundMesh(2)
    gmsh.option.setNumber("Mesh.MeshSizeExtendFromBoundary", 0)
    gmsh.option.setNumber("Mesh.MeshSizeFromPoints", 0)
    gmsh.option.setNumber("Mesh.MeshSizeFromCurvature", 0)
    gmsh.option.setNumber("Mesh.Algorithm", 6)  # Frontal-Delaunay: well-shaped triangles
    gmsh.option.setNumber("Mesh.ElementOrder", 1)
    mesh.generate(2)
    types, tags, _ = mesh.getElements(2)
    return int(sum(len(t) for t in tags))


def _point_nodes(gmsh, point_tags: np.ndarray) -> np.ndarray:
    """gmsh node tag of the mesh node on each geometric point (same shape)."""
    flat = [int(gmsh.model.mesh.getNodes(0, int(tag))[0][0]) for tag in point_tags.ravel()]
    return np.array(flat, dtype=np.int64).reshape(point_tags.shape)


def _add_fans(points: np.ndarray, triangles: np.ndarray, layout: FanLayout,
              rim_nodes: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Append each fan's nodes and triangles (first order) to the gmsh mesh.

    The rim reuses gmsh's nodes (``rim_nodes``, rows of ``points``), so the
    fan conforms to the rest of the mesh."""
    S, M = layout.sectors, layout.rings
    rings = layout.ring_nodes()
    new_points, new_triangles = [points], [triangles]
    n = len(points)
    for centre, nodes, rim in zip(layout.centres, rings, rim_nodes):
        ring = np.empty((M, S + 1), dtype=np.int64)  # point row of (ring j, ray i)
        ring[:-1] = n + np.arange((M - 1) * (S + 1)).reshape(M - 1, S + 1)
        ring[-1] = rim
        apex = n + (M - 1) * (S + 1)
        new_points += [nodes[:-1].reshape(-1, 2), np.array([[centre, 0.0]])]
        n = apex + 1
        i = np.arange(S)
        first = np.column_stack([np.full(S, apex), ring[0, i], ring[0, i + 1]])
        a, b = ring[:-1, :-1], ring[:-1, 1:]  # inner ring, rays i and i + 1
        c, d = ring[1:, :-1], ring[1:, 1:]  # outer ring
        # one diagonal direction throughout (alternating ones measured no better)
        new_triangles += [first, np.stack([a, c, d], -1).reshape(-1, 3), np.stack([a, d, b], -1).reshape(-1, 3)]
    return np.concatenate(new_points), np.concatenate(new_triangles)


# An interior node with exactly four triangles whose edges lie nearly on two straight lines
# (a criss-cross star) makes the upper bound's four incompressibility rows at that node nearly
# dependent: exactly on the crossing they are dependent (the corner divergence of each of the
# four triangles is set by the derivatives along the four half-lines alone, as for linear
# triangles), a little off it their smallest singular value is about the offset over the
# element size. Measured: the water-tank example at 2k triangles had six such stars in a
# 1 m band, offsets 2.5e-4 to 1.1e-3 of h; at 1.1e-3 (singular values 128 : 0.125) Clarabel's
# primal residual stalled at 2.6e-7 on those four rows and the upper bound ended "almost
# solved" at its 200-iteration limit (11.4 s); with the node moved onto the crossing, 24
# iterations, 1.6 s, and a bound 2e-6 lower (the dependent row frees the patch); moved 0.1 h
# away from it, 31 iterations and a bound 1e-5 higher. So such a node is moved onto the
# crossing, which any admissible mesh allows: the bound stays that of the mesh solved.
CROSSING_SNAP = 0.05  # offset / h below which a criss-cross node is moved onto its crossing


def snap_crossings(points: np.ndarray, triangles: np.ndarray, levels: tuple[float, ...] = (),
                   rounds: int = 3) -> np.ndarray:
    """Points (first-order mesh) with every nearly criss-cross interior node moved onto the
    crossing of its star's two lines (see CROSSING_SNAP). A node on the domain's boundary is
    never moved; a node at one of ``levels`` (y of the ground and the layer interfaces) only
    along that level, when one of its star's lines lies on it. Two such nodes joined by an
    edge are moved in turns (``rounds``), the lower-numbered first."""
    points = points.copy()
    tri = triangles[:, :3]
    edges = np.sort(tri[:, [[0, 1], [1, 2], [2, 0]]].reshape(-1, 2), axis=1)
    unique, counts = np.unique(edges, axis=0, return_counts=True)
    on_boundary = np.zeros(len(points), dtype=bool)
    on_boundary[unique[counts == 1].ravel()] = True
    star = np.bincount(tri.ravel(), minlength=len(points))
    node = np.flatnonzero((star == 4) & ~on_boundary)
    if not len(node):
        return points
    # each candidate's four triangles, then its four neighbours in angular order
    slot = np.argsort(tri.ravel(), kind="stable")
    first = np.searchsorted(tri.ravel()[slot], node)
    element = slot[first[:, None] + np.arange(4)] // 3  # (n, 4)
    others = tri[element].reshape(len(node), 12)
    others = others[others != node[:, None]].reshape(len(node), 8)
    size = max(float(np.ptp(points[:, 0])), float(np.ptp(points[:, 1])), 1.0)
    for _ in range(rounds):
        d = points[others] - points[node][:, None, :]
        order = np.argsort(np.arctan2(d[..., 1], d[..., 0]), axis=1)
        paired = np.take_along_axis(others, order, axis=1)
        ring = paired[:, ::2]  # each neighbour appears twice: a closed star of four triangles
        closed = np.all(paired[:, 1::2] == ring, axis=1)
        v = points[ring]  # (n, 4, 2)
        d1, d2 = v[:, 2] - v[:, 0], v[:, 3] - v[:, 1]
        cross = d1[:, 0] * d2[:, 1] - d1[:, 1] * d2[:, 0]
        w = v[:, 1] - v[:, 0]
        t = (w[:, 0] * d2[:, 1] - w[:, 1] * d2[:, 0]) / np.where(cross != 0.0, cross, 1.0)
        crossing = v[:, 0] + t[:, None] * d1
        h = np.sqrt(np.mean(np.sum((v - points[node][:, None, :]) ** 2, axis=2), axis=1))
        offset = np.linalg.norm(crossing - points[node], axis=1)
        move = closed & (cross != 0.0) & (offset > 0.0) & (offset < CROSSING_SNAP * h)
        tol = 1e-9 * size
        for level in levels:  # a node at an interface moves only along it
            at = np.abs(points[node, 1] - level) < tol
            along = np.any([(np.abs(v[:, a, 1] - level) < tol) & (np.abs(v[:, a + 2, 1] - level) < tol)
                            for a in (0, 1)], axis=0)
            move &= ~at | along
            crossing[at & along, 1] = level
        if not np.any(move):
            break
        # two such nodes joined by an edge (each moves the other's crossing): the lower-numbered
        # one moves this round
        nearest = np.full(len(points), len(points))
        np.minimum.at(nearest, ring[move].ravel(), node[move].repeat(4))
        move &= nearest[node] > node
        before = _signed_areas(points, tri[element[move]])
        trial = points.copy()
        trial[node[move]] = crossing[move]
        kept = np.all(np.sign(_signed_areas(trial, tri[element[move]])) == np.sign(before), axis=1)
        points[node[move][kept]] = crossing[move][kept]
    return points


def _signed_areas(points: np.ndarray, triangles: np.ndarray) -> np.ndarray:
    """Twice the signed area of each triangle of any shape (..., 3) of corner rows."""
    p = points[triangles]
    return ((p[..., 1, 0] - p[..., 0, 0]) * (p[..., 2, 1] - p[..., 0, 1])
            - (p[..., 2, 0] - p[..., 0, 0]) * (p[..., 1, 1] - p[..., 0, 1]))


def _second_order(points: np.ndarray, triangles: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """6-node triangles with straight sides: a midside node on every edge."""
    edges = triangles[:, [[0, 1], [1, 2], [2, 0]]].reshape(-1, 2)
    unique, inverse = np.unique(np.sort(edges, axis=1), axis=0, return_inverse=True)
    mid = points[unique].mean(axis=1)
    midside = len(points) + inverse.reshape(-1, 3)
    return np.concatenate([points, mid]), np.column_stack([triangles, midside])


def _read_triangles(gmsh) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Points (n, 2), 3-node triangles (rows of points) and the gmsh node tag -> row map."""
    node_tags, coords, _ = gmsh.model.mesh.getNodes()
    points = coords.reshape(-1, 3)[:, :2]
    index = np.full(int(node_tags.max()) + 1, -1, dtype=np.int64)
    index[node_tags.astype(np.int64)] = np.arange(len(node_tags))
    _, nodes = gmsh.model.mesh.getElementsByType(2)  # gmsh: 3-node triangles
    triangles = index[nodes.astype(np.int64)].reshape(-1, 3)
    return points.copy(), triangles, index


def _assemble_mesh(points: np.ndarray, triangles: np.ndarray, domain: Domain, case: Case) -> Mesh:
    """Drop unused nodes, orient counter-clockwise, tag layers and boundary edges."""
    used = np.unique(triangles)
    renumber = np.full(len(points), -1, dtype=np.int64)
    renumber[used] = np.arange(len(used))
    points, triangles = points[used], renumber[triangles]

    p = points[triangles[:, :3]]
    signed = ((p[:, 1, 0] - p[:, 0, 0]) * (p[:, 2, 1] - p[:, 0, 1])
              - (p[:, 2, 0] - p[:, 0, 0]) * (p[:, 1, 1] - p[:, 0, 1]))
    flip = signed < 0
    if triangles.shape[1] == 3:
        triangles[flip] = triangles[flip][:, [0, 2, 1]]
    else:
        triangles[flip] = triangles[flip][:, [0, 2, 1, 5, 4, 3]]

    centroid_depth = -points[triangles[:, :3], 1].mean(axis=1)
    layer = np.searchsorted(np.asarray(domain.interfaces), centroid_depth)

    # Boundary edges: element edges that belong to one element only.
    edges = triangles[:, [[0, 1], [1, 2], [2, 0]]].reshape(-1, 2)
    _, inverse, counts = np.unique(np.sort(edges, axis=1), axis=0, return_inverse=True, return_counts=True)
    on_boundary = np.flatnonzero(counts[inverse.ravel()] == 1)
    boundary_element, boundary_local = on_boundary // 3, on_boundary % 3
    boundary = edges[on_boundary]
    midpoint = points[boundary[:, :2]].mean(axis=1)
    scale = domain.x_max
    tol = 1e-9 * scale
    B = case.footing.width
    kind = np.full(len(boundary), -1)
    top = np.abs(midpoint[:, 1]) < tol
    kind[top] = np.where(np.abs(midpoint[top, 0]) < B / 2, FOOTING, GROUND)
    kind[np.abs(midpoint[:, 1] + domain.depth) < tol] = FAR_BASE
    kind[np.abs(midpoint[:, 0] - domain.x_max) < tol] = FAR_SIDE
    if domain.half:
        kind[np.abs(midpoint[:, 0]) < tol] = AXIS if domain.axisymmetric else SYMMETRY
    else:
        kind[np.abs(midpoint[:, 0] - domain.x_min) < tol] = FAR_SIDE
    if domain.slope:
        tan_b = domain.slope_height / (domain.toe_x - domain.crest_x)
        x, y = midpoint[:, 0], midpoint[:, 1]
        face = (np.abs(y + (x - domain.crest_x) * tan_b) < tol) & (y <= tol) & (y >= -domain.slope_height - tol)
        toe = (np.abs(y + domain.slope_height) < tol) & (x >= domain.toe_x - tol) & (x < domain.x_max - tol)
        kind[face | toe] = GROUND
    if np.any(kind < 0):
        raise RuntimeError("mesh: a boundary edge lies on no known boundary")
    return Mesh(points=points, triangles=triangles, layer=layer, boundary_element=boundary_element,
                boundary_local=boundary_local, boundary_kind=kind, domain=domain, footing_width=B)
