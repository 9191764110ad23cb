"""Geometry and mesh: a validated Case -> a triangular Mesh, through gmsh.

Coordinates: x to the right from the footing centre, y upward from the
footing base level (the model's top is y = 0), in m. The model is the soil
below the footing base; soil above it acts as the surcharge beside the footing.

One mesh stage for both bounds: first-order triangles for the lower bound,
second-order (6-node) triangles for the upper bound. The mesh conforms to every
layer interface inside the domain and is graded toward the footing edges, where
the stress and velocity fields are singular.
"""
from __future__ import annotations

import math
import threading
from dataclasses import dataclass

import numpy as np

from .model import Case

# Boundary edge kinds (codes in Mesh.boundary_kind).
FOOTING, GROUND, SYMMETRY, FAR_SIDE, FAR_BASE = range(5)
BOUNDARY_NAMES = ("footing", "ground", "symmetry", "far side", "far base")

_GMSH_LOCK = threading.Lock()  # gmsh keeps one global model per process


@dataclass(frozen=True)
class Domain:
    """Extent of the meshed region, m. ``half``: only x >= 0 is meshed (symmetric case)."""

    half: bool
    x_min: float
    x_max: float
    depth: float
    interfaces: tuple[float, ...]  # depths (m, below the base) of layer interfaces inside the domain
    mechanism_width: float  # m, estimated extent of the collapse zone beyond the footing edge
    mechanism_depth: float  # m, estimated depth of the collapse zone


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
        n_el = self.n_elements
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


def is_symmetric(case: Case) -> bool:
    """A vertical central load on level layered ground is symmetric about x = 0."""
    return True


def plan_domain(case: Case, half: bool | None = None) -> Domain:
    """Size the domain from B and the strongest friction angle below the base.

    The collapse zone is estimated from the Prandtl-Reissner mechanism
    (active wedge, log-spiral fan, passive wedge; common practice):
    r0 = B / (2 cos(45 + phi/2)), r1 = r0 exp(pi/2 tan phi), surface extent
    beyond the edge 2 r1 cos(45 - phi/2), depth at most r1. The domain is made
    twice that plus B so that neither bound is restricted by its boundary; the
    result reports whether the upper-bound mechanism stayed clear of it.
    """
    B = case.footing.width
    layers = case.layers_below_base()
    phi = max(layer.phi_rad for layer, *_ in layers)
    r0 = B / (2.0 * math.cos(math.pi / 4 + phi / 2))
    r1 = r0 * math.exp(math.pi / 2 * math.tan(phi))
    width = 2.0 * r1 * math.cos(math.pi / 4 - phi / 2)
    depth = r1
    # A weak layer under a strong crust draws the mechanism down: reach past
    # the deepest interface within the estimated zone (punching, common practice).
    interfaces_near = [bottom for _, _, bottom, _ in layers[:-1] if bottom < 2.0 * depth + B]
    if interfaces_near:
        depth = max(depth, max(interfaces_near) + r0)
        width = max(width, max(interfaces_near) + width)
    x_max = B / 2 + 2.0 * width + B
    # Every interface lies inside the mesh: below it, the lower bound's extension
    # elements carry the last layer only.
    interfaces = tuple(bottom for _, _, bottom, _ in layers[:-1])
    model_depth = max(2.0 * depth + B, 1.25 * interfaces[-1] if interfaces else 0.0)
    half = is_symmetric(case) if half is None else half
    return Domain(half=half, x_min=0.0 if half else -x_max, x_max=x_max, depth=model_depth,
                  interfaces=interfaces, mechanism_width=width, mechanism_depth=depth)


def build_mesh(case: Case, order: int, elements: int | None = None,
               domain: Domain | None = None) -> Mesh:
    """Mesh the case's domain with about ``elements`` triangles of the given order.

    The element size grows linearly with the distance r from the nearest
    footing edge, h = s (0.02 B + 0.2 r), capped at a tenth of the domain
    depth; the scale s is set from the target count and corrected once after a
    trial mesh (element count scales as 1/s^2).
    """
    domain = domain or plan_domain(case)
    target = elements or case.analysis.elements
    B = case.footing.width
    scale = math.sqrt(_estimate_count(domain, B) / target)
    with _GMSH_LOCK:
        gmsh = _start_gmsh()
        try:
            _draw(gmsh, domain, B)
            for _ in range(3):
                count = _mesh_once(gmsh, domain, B, scale, order=1)
                if abs(count - target) < 0.05 * target:
                    break
                scale *= math.sqrt(count / target)
            if order == 2 or count == 0 or abs(count - target) >= 0.05 * target:
                _mesh_once(gmsh, domain, B, scale, order=order)
            points, triangles = _read_triangles(gmsh, order)
        finally:
            gmsh.finalize()
    return _assemble_mesh(points, triangles, domain, case)


def _estimate_count(domain: Domain, B: float) -> float:
    """Triangles expected for scale 1: about 2.3 * integral of 1/h^2 over the domain."""
    xs = np.linspace(domain.x_min, domain.x_max, 200)
    ys = np.linspace(-domain.depth, 0.0, 120)
    X, Y = np.meshgrid(xs, ys)
    h = _size(np.hypot(np.abs(X) - B / 2, Y), B, domain)
    cell = (xs[1] - xs[0]) * (ys[1] - ys[0])
    return float(2.3 * np.sum(cell / h**2))


def _size(r, B: float, domain: Domain):
    return np.minimum(0.02 * B + 0.2 * r, 0.1 * domain.depth)


def _start_gmsh():
    import gmsh
    # readConfigFiles/interruptible off: works off the main thread and in workers.
    gmsh.initialize(readConfigFiles=False, interruptible=False)
    gmsh.option.setNumber("General.Terminal", 0)
    gmsh.option.setNumber("General.Verbosity", 0)
    gmsh.model.add("bearbound")
    return gmsh


def _draw(gmsh, domain: Domain, B: float) -> None:
    """Stacked rectangles, one per layer band, fragmented with the footing edges."""
    occ = gmsh.model.occ
    tops = (0.0,) + domain.interfaces
    bottoms = domain.interfaces + (domain.depth,)
    width = domain.x_max - domain.x_min
    bands = [(2, occ.addRectangle(domain.x_min, -b, 0.0, width, b - t)) for t, b in zip(tops, bottoms)]
    edges = [(0, occ.addPoint(B / 2, 0.0, 0.0))]
    if not domain.half:
        edges.append((0, occ.addPoint(-B / 2, 0.0, 0.0)))
    occ.fragment(bands, edges)
    occ.synchronize()


def _mesh_once(gmsh, domain: Domain, B: float, scale: float, order: int) -> int:
    mesh = gmsh.model.mesh
    mesh.clear()
    mesh.field.remove(1) if 1 in mesh.field.list() else None
    mesh.field.remove(2) if 2 in mesh.field.list() else None
    edge_points = [tag for dim, tag in gmsh.model.getEntities(0)
                   if abs(gmsh.model.getValue(0, tag, [])[1]) < 1e-12
                   and abs(abs(gmsh.model.getValue(0, tag, [])[0]) - B / 2) < 1e-9 * B]
    mesh.field.add("Distance", 1)
    mesh.field.setNumbers(1, "PointsList", edge_points)
    mesh.field.add("MathEval", 2)
    mesh.field.setString(2, "F", f"{scale}*Min(0.02*{B}+0.2*F1, {0.1 * domain.depth})")
    mesh.field.setAsBackgroundMesh(2)
    gmsh.option.setNumber("Mesh.MeshSizeExtendFromBoundary", 0)
    gmsh.option.setNumber("Mesh.MeshSizeFromPoints", 0)
    gmsh.option.setNumber("Mesh.MeshSizeFromCurvature", 0)
    gmsh.option.setNumber("Mesh.Algorithm", 6)  # Frontal-Delaunay: well-shaped triangles
    gmsh.option.setNumber("Mesh.ElementOrder", 1)
    mesh.generate(2)
    if order == 2:
        mesh.setOrder(2)
    types, tags, _ = mesh.getElements(2)
    return int(sum(len(t) for t in tags))


def _read_triangles(gmsh, order: int) -> tuple[np.ndarray, np.ndarray]:
    node_tags, coords, _ = gmsh.model.mesh.getNodes()
    points = coords.reshape(-1, 3)[:, :2]
    index = np.full(int(node_tags.max()) + 1, -1, dtype=np.int64)
    index[node_tags.astype(np.int64)] = np.arange(len(node_tags))
    element_type = 2 if order == 1 else 9  # gmsh: 3-node and 6-node triangles
    _, nodes = gmsh.model.mesh.getElementsByType(element_type)
    triangles = index[nodes.astype(np.int64)].reshape(-1, 3 * order)
    return points.copy(), triangles


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
        kind[np.abs(midpoint[:, 0]) < tol] = SYMMETRY
    else:
        kind[np.abs(midpoint[:, 0] + domain.x_max) < tol] = FAR_SIDE
    if np.any(kind < 0):
        raise RuntimeError("mesh: a boundary edge lies on no known boundary")
    return Mesh(points=points, triangles=triangles, layer=layer, boundary_element=boundary_element,
                boundary_local=boundary_local, boundary_kind=kind, domain=domain, footing_width=B)
