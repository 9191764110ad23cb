"""Lower bound of a circular footing (axisymmetric): a Mesh of 3-node triangles in the
meridian half-plane -> one sparse conic program.

Coordinates: r = x >= 0 (the mesh's x, the axis at r = 0), z = y upward. Stresses,
tension positive: sigma_r, sigma_z, tau_rz and the hoop stress sigma_theta, which
is a principal stress. The parts follow the published formulations (triangles with
a stress discontinuity on every edge, Sloan 1988; the hoop stress as a fourth
stress, Khatri & Kumar 2009 and Tang, Toh & Phoon 2014; Mohr-Coulomb as
second-order cones, Makrodimopoulos & Martin 2006); the stress field, its exact
equilibrium and the far field are worked out here.

* Why not linear stresses: with sigma_r, sigma_z, tau linear in (r, z), pointwise
  equilibrium (both equations times r) forces tau = A r and d tau/dz = 0 in every
  triangle, which leaves 6 free values per triangle against about 6 traction
  continuity rows per triangle: the field is fixed by its boundary values and the
  footing carries only the surcharge (measured). Weighted stresses S = r sigma
  linear per triangle do better on weightless soil but keep the hoop stress
  constant in each triangle, which cannot follow self-weight (sand under its own
  weight was infeasible). So the field is written through weighted stresses that
  are quadratic in each triangle:
      S_r = r sigma_r, S_z = r sigma_z, T = r tau   (quadratic),
      sigma_theta = dS_r/dr + dT/dz                  (linear),
      dT/dr + dS_z/dz = gamma r                      (linear: three rows per triangle).
  Then, exactly and everywhere in the triangle (r > 0),
      d sigma_r/dr + d tau/dz + (sigma_r - sigma_theta)/r = (dS_r/dr + dT/dz - sigma_theta)/r = 0,
      d tau/dr + d sigma_z/dz + tau/r - gamma = (dT/dr + dS_z/dz - gamma r)/r = 0.
  The geostatic field (S_r = K gamma r z, S_z = gamma r z) lies in this space. The
  variables are the Bernstein coefficients of S / r_c (kPa; r_c the centroid's
  radius) and sigma_theta at the corners: 21 per triangle, 6 left free by the 6
  equilibrium rows and continuity (sigma_theta is a variable of its own, tied by
  its three rows, so that the cones carry O(1) coefficients: written through the
  gradients, r sigma_theta brought r/L into them, up to 2000, and the solver took
  two to four times the iterations). The certificate recomputes both equations
  from sigma = S/r at interior points of every triangle.
* Yield. The yield set {(sigma, c)} is a convex cone, so sigma(x) obeys
  Mohr-Coulomb with c(x) exactly when (S, r sigma_theta) obeys it with r c (r > 0).
  (S, r sigma_theta, r c) is a quadratic polynomial in the triangle; written in the
  Bernstein basis (nonnegative, summing to one) its value at every point is a
  convex combination of its six Bernstein coefficients, so yield at those six
  control points (the coefficients of r sigma_theta and of r c computed exactly as
  products of linear functions) gives yield everywhere.
* Mohr-Coulomb over all three principal pairs (:func:`mohr_coulomb_rows`). With
  p = (sigma_r + sigma_z)/2, R = ||((sigma_r - sigma_z)/2, tau)||, s = sin(phi),
  k = c cos(phi), the in-plane principal stresses are p +- R and
      sigma_max (1 + s) - sigma_min (1 - s) <= 2k   over all pairs
  is exactly three second-order cones on the same deviator:
      2R         <= 2k - 2p s                                   (in-plane pair)
      (1 - s) 2R <= 4k - 2(1 + s) sigma_theta + (1 - s) 2p      (hoop largest)
      (1 + s) 2R <= 4k - (1 + s) 2p + 2(1 - s) sigma_theta      (hoop smallest)
  (the other pairs are implied: the condition grows with sigma_max and falls
  with sigma_min). Written as one cone t >= 2R per point and three nonnegative rows
  (measured: about half the iterations of three cones per point).
* The axis. At r = 0 the strength r c of the weighted field is 0 and r sigma_theta
  is 0, where Mohr-Coulomb admits only S = 0: so S = 0 at every node on the axis
  (rows, not cones: that cone has no interior). The field sigma = S/r then stays
  bounded, and the cylinder r = eps round the axis carries a force of order eps:
  nothing more is needed there.
* Traction continuity across every edge: S . n is quadratic along an edge, so its
  three Bernstein coefficients match; ground tractions equal the surcharge, a
  smooth footing carries no shear, the contact carries no tension (each at the
  edge's three coefficients, which bound the quadratic).
* Beyond the mesh (r > R_far or z < -D), a field admissible to infinity
  (:func:`_far_field`): beside the mesh, r-independent columns (sigma_z
  geostatic, tau = 0, sigma_theta = sigma_r = the mesh's on the far side,
  quadratic in z); under the mesh, a semi-infinite column below each base edge (tau = 0,
  r sigma_r quadratic in r and continuous from column to column, sigma_theta =
  d(r sigma_r)/dr, sigma_z the mesh's on the base edge, all growing with depth at
  the rates (g, -gamma, 0, g), g one variable); below the far side, a corner
  region with sigma_r = sigma_theta. Every piece meets both equilibrium equations
  exactly, tractions are continuous across every ray, and yield holds at the
  finite points and along the rate (the recession condition), so everywhere. A
  truncated domain with prescribed far tractions would not do: global equilibrium
  would force the footing load to zero.

The objective is minus the footing load Q = -2 pi integral(sigma_z r dr) over the
footing (kN). Rows are written over "stress slots" (the scaled stress state at
each control point, and at each far-field point) and mapped to the variables by
one sparse product.
"""
from __future__ import annotations

import numpy as np
import scipy.sparse as sp

from .conic import ConicProgram, assemble, drop_empty_equalities, drop_repeated_equalities
from .ground import material_arrays, node_cohesion, surcharge_on_edges
from .lower import _Rows, _straight_boundary_ends, traction_coefficients
from .mesh import FAR_BASE, FAR_SIDE, FOOTING, GROUND, Mesh
from .model import Case

SR, SZ, TRZ, ST = 0, 1, 2, 3  # sigma_r, sigma_z, tau_rz, sigma_theta
# Control points of a triangle: its corners, then the midpoints of edges 0-1, 1-2, 2-0,
# as barycentric weights; a linear function's Bernstein coefficient is its value there.
CONTROL = np.array([[1, 0, 0], [0, 1, 0], [0, 0, 1], [.5, .5, 0], [0, .5, .5], [.5, 0, .5]])
EDGE_PAIRS = ((0, 1), (1, 2), (2, 0))


def snapped_normals(mesh: Mesh, element: np.ndarray, local: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Outward unit normals and lengths (m) of edges, with a component below 1e-12 set to 0:
    an edge vertical or level to round-off (a fan ray at -90 degrees) is treated as
    exactly so, so that rows which are then multiples of one another are recognised."""
    normal, length = mesh.edge_normals(element, local)
    normal = np.where(np.abs(normal) < 1e-12, 0.0, normal)
    return normal / np.hypot(normal[:, 0], normal[:, 1])[:, None], length


def product_coefficients(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """(..., 6) Bernstein coefficients (at CONTROL) of the product of two linear functions
    given by their corner values (..., 3): a_i b_i at corner i, (a_i b_j + a_j b_i)/2 on edge ij.

    >>> product_coefficients(np.array([0.0, 1.0, 2.0]), np.array([1.0, 1.0, 1.0])).tolist()
    [0.0, 1.0, 2.0, 0.5, 1.5, 1.0]
    """
    edges = [(a[..., i] * b[..., j] + a[..., j] * b[..., i]) / 2 for i, j in EDGE_PAIRS]
    return np.concatenate([a * b, np.stack(edges, axis=-1)], axis=-1)


def bernstein_index() -> np.ndarray:
    """(3, 3): the control point of e_i + e_k (corner i when i = k, else the edge's midpoint)."""
    index = np.diag(np.arange(3))
    for k, (i, j) in enumerate(EDGE_PAIRS):
        index[i, j] = index[j, i] = 3 + k
    return index


ALPHA = bernstein_index()


def control_state_map(case: Case, mesh: Mesh) -> dict:
    """The stress state at every control point of every triangle, scaled by 1/r_c.

    The variables of a triangle are the Bernstein coefficients of (S_r, S_z, T) / r_c,
    variable 3 a + stress at control point a, then sigma_theta at its corners (variables
    18-20, kPa). ``coeff`` (n_el, 6, 4, 21): the Bernstein coefficients of
    (S_r, S_z, T, r sigma_theta) / r_c over them; ``strength`` (n_el, 6): those of r c / r_c
    (kPa); ``radius`` (n_el, 6): r at the control points (m); ``rc`` (n_el,): the centroids'
    radii (m); ``hoop`` (n_el, 3, 18): (dS_r/dr + dT/dz) / r_c at the corners over the
    coefficients (the gradient of a quadratic at corner i is 2 sum_k b_(i+k) grad l_k),
    which the hoop rows set equal to sigma_theta / r_c there."""
    mat = material_arrays(case)
    p = mesh.corner_coordinates()
    r, z = p[..., 0], p[..., 1]
    rc = r.mean(axis=1)
    grad = mesh.shape_gradients()  # (n_el, 3, 2)
    n_el = mesh.n_elements
    coeff = np.zeros((n_el, 6, 4, 21))
    for stress in (SR, SZ, TRZ):
        coeff[:, np.arange(6), stress, 3 * np.arange(6) + stress] = 1.0
    hoop = np.zeros((n_el, 3, 18))
    for i in range(3):
        for k in range(3):
            hoop[:, i, 3 * ALPHA[i, k] + SR] += 2.0 * grad[:, k, 0]
            hoop[:, i, 3 * ALPHA[i, k] + TRZ] += 2.0 * grad[:, k, 1]
    coeff[:, :, ST, 18:] = np.swapaxes(product_coefficients(r[:, None, :], np.eye(3)), 1, 2) / rc[:, None, None]
    c = node_cohesion(mat, mesh.layer[:, None], -z)
    return {"coeff": coeff, "strength": product_coefficients(r, c) / rc[:, None], "radius": r @ CONTROL.T,
            "rc": rc, "hoop": hoop}


def mohr_coulomb_rows(eq: _Rows, nonneg: _Rows, cone: _Rows, slots: np.ndarray, c, phi, first_aux: int,
                      hoop_implied: np.ndarray | None = None) -> int:
    """Mohr-Coulomb over the three principal pairs (module docstring) on stress slots (n, 4),
    s = b - A x: for each point an auxiliary slot t >= ||(sigma_r - sigma_z, 2 tau)|| (one
    cone) and the three conditions as nonnegative rows,
        2 k - s (sr + sz) - t >= 0,  4 k - 2 (1 + s) st + (1 - s)(sr + sz) - (1 - s) t >= 0,
        4 k - (1 + s)(sr + sz) + 2 (1 - s) st - (1 + s) t >= 0;
    where c = 0 and phi = 0 there is no interior, and the equalities sigma_r = sigma_z,
    tau = 0, sigma_theta = sigma_r are written instead (but the last where ``hoop_implied``:
    other rows imply it). The auxiliary slots are numbered from ``first_aux``; returns how
    many were used."""
    n = len(slots)
    c = np.broadcast_to(np.asarray(c, float), (n,))
    phi = np.broadcast_to(np.asarray(phi, float), (n,))
    apex = (c == 0.0) & (phi == 0.0)
    implied = np.zeros(n, dtype=bool) if hoop_implied is None else hoop_implied
    for stresses, coefficients, where in (((SR, SZ), (1.0, -1.0), apex), ((TRZ,), (1.0,), apex),
                                          ((ST, SR), (1.0, -1.0), apex & ~implied)):
        eq.add(eq.block(int(where.sum()))[:, None], slots[where][:, list(stresses)], np.array(coefficients))
    s, k = np.sin(phi[~apex]), (c * np.cos(phi))[~apex]
    live = slots[~apex]
    m = len(live)
    t = first_aux + np.arange(m)
    r = cone.count + 3 * np.arange(m)
    cone.count += 3 * m
    cone.rhs.append(np.zeros(3 * m))
    cone.add(r, t, -1.0)
    cone.add(r + 1, live[:, SR], -1.0)
    cone.add(r + 1, live[:, SZ], 1.0)
    cone.add(r + 2, live[:, TRZ], -2.0)
    # (factor of k, weight of t, coefficient of sigma_r + sigma_z and of sigma_theta)
    for k_factor, weight, sum_part, hoop in ((2.0, 1.0, -s, None),
                                             (4.0, 1.0 - s, 1.0 - s, -2.0 * (1.0 + s)),
                                             (4.0, 1.0 + s, -(1.0 + s), 2.0 * (1.0 - s))):
        r = nonneg.block(m, k_factor * k)
        nonneg.add(r, live[:, SR], -sum_part)
        nonneg.add(r, live[:, SZ], -sum_part)
        if hoop is not None:
            nonneg.add(r, live[:, ST], -hoop)
        nonneg.add(r, t, weight)
    return m


def geostatic_sigma_z(case: Case, depth) -> np.ndarray:
    """kPa, tension positive: the vertical stress of level ground at depths (m below the base)."""
    mat = material_arrays(case)
    bottom = np.minimum(mat["bottom"], 1e300)
    inside = np.clip(np.asarray(depth, float)[..., None] - mat["top"], 0.0, bottom - mat["top"])
    return -case.overburden_kPa() - np.sum(mat["gamma"] * inside, axis=-1)


def lower_bound_program_axisym(case: Case, mesh: Mesh) -> ConicProgram:
    """Assemble the axisymmetric lower-bound program (vectorised; one COO assembly)."""
    if mesh.order != 1 or not mesh.domain.axisymmetric:
        raise ValueError("the axisymmetric lower bound needs a first-order mesh of the meridian half-plane")
    n_el = mesh.n_elements
    mat = material_arrays(case)
    smooth = case.footing.base == "smooth"
    state = control_state_map(case, mesh)
    rc, radius = state["rc"], state["radius"]
    slot = np.arange(24 * n_el).reshape(n_el, 6, 4)  # stress slot of (element, control point, stress)
    far = _far_field(case, mesh, state, slot)
    S, s0, n_var = far["S"], far["s0"], far["n_var"]
    eq, cone, nonneg = _Rows(), _Rows(), _Rows()

    # 1. Equilibrium: dT/dr + dS_z/dz = gamma r at the three corners (a linear identity),
    #    rows over the variables, times the triangle's size L = sqrt(2 area), over r_c.
    L = np.sqrt(2.0 * mesh.areas())
    gamma = mat["gamma"][mesh.layer]
    grad = mesh.shape_gradients()
    direct = []
    for i in range(3):
        r = eq.block(n_el, gamma * radius[:, i] * L / rc)
        for k in range(3):
            first = 21 * np.arange(n_el) + 3 * ALPHA[i, k]
            direct += [(r, first + TRZ, 2.0 * L * grad[:, k, 0]), (r, first + SZ, 2.0 * L * grad[:, k, 1])]
    # ... and the hoop stress at the corners: sigma_theta_i = (dS_r/dr + dT/dz)(corner i), times L / r_c
    coefficients = 21 * np.arange(n_el)[:, None] + np.arange(18)
    for i in range(3):
        r = eq.block(n_el)
        direct += [(np.broadcast_to(r[:, None], coefficients.shape), coefficients, -L[:, None] * state["hoop"][:, i]),
                   (r, 21 * np.arange(n_el) + 18 + i, L / rc)]

    # 2. S = 0 at every control point on the axis.
    axis_slots = slot[:, :, :3][radius == 0.0]  # (n, 3): S_r, S_z, T
    eq.add(eq.block(axis_slots.size), axis_slots.ravel(), 1.0)

    # 3. Traction continuity across every interior edge: its three Bernstein coefficients
    #    (rows in S / r at the control points; on the axis both sides are 0 already).
    e1, k1, e2, k2 = mesh.interior_edges()
    normal, _ = snapped_normals(mesh, e1, k1)
    redundant = _straight_boundary_ends(mesh, e1, k1) + [np.full(len(e1), -1)]
    # where both sides have no strength (phi = 0, c = 0: su rising from 0 at the surface), the
    # yield rows make both states hydrostatic, with no shear traction on any plane: the shear
    # row is implied (measured: one dependent row per such edge end, 63 on a 300-triangle mesh)
    no_strength = (state["strength"] == 0.0) & (mat["phi"][mesh.layer][:, None] == 0.0)
    dropped = []
    for end, (a, b) in enumerate([(k1, (k2 + 1) % 3), ((k1 + 1) % 3, k2), (3 + k1, 3 + k2)]):
        hydrostatic = no_strength[e1, a] & no_strength[e2, b] & (radius[e1, a] > 0.0)
        at = radius[e1, a]
        inverse = np.where(at > 0.0, 1.0 / np.where(at > 0.0, at, 1.0), 0.0)[:, None]
        for which, coefficient in enumerate(traction_coefficients(normal)):
            r = eq.block(len(e1))
            eq.add(r[:, None], slot[e1, a, :3], coefficient * rc[e1, None] * inverse)
            eq.add(r[:, None], slot[e2, b, :3], -coefficient * rc[e2, None] * inverse)
            # at a straight ground node both rows are fixed by the ground's when both states are too
            implied = hydrostatic & ((which == 1) | (redundant[end] >= 0))
            dropped.append(r[(redundant[end] == which) | implied])

    # 4. Boundary tractions, at the edges' three control points: ground (S_z = -q r,
    #    T = 0), smooth footing and the far boundary (T = 0: the far field carries no
    #    shear); all these edges are level or vertical.
    be, bk, kind = mesh.boundary_element, mesh.boundary_local, mesh.boundary_kind
    ground = kind == GROUND
    q_edge = surcharge_on_edges(case, mesh, ground)
    shear_free = ground | ((kind == FOOTING) & smooth) | np.isin(kind, (FAR_SIDE, FAR_BASE))
    ge = be[ground]
    for point in (bk, (bk + 1) % 3, 3 + bk):
        gp = point[ground]
        eq.add(eq.block(len(ge), -q_edge), slot[ge, gp, SZ], rc[ge] / radius[ge, gp])
        eq.add(eq.block(int(shear_free.sum())), slot[be[shear_free], point[shear_free], TRZ], 1.0)

    # 5. Yield at every control point off the axis and at every point of the far field (the
    #    auxiliary t of each point is a slot of its own, mapped to a variable of its own).
    points = radius > 0.0
    phi = np.broadcast_to(mat["phi"][mesh.layer][:, None], (n_el, 6))
    yield_slots = np.concatenate([slot[points], far["yield_slots"]])
    yield_c = np.concatenate([state["strength"][points], far["yield_c"]])
    yield_phi = np.concatenate([phi[points], far["yield_phi"]])
    # On a ground edge with no strength at its three points (su rising from 0 at the surface),
    # sigma_z = -q and the in-plane apex rows fix S_r there, the corners' rows fix the (linear)
    # hoop stress: the midpoint's hoop row repeats them (measured: one dependent row per such edge).
    implied = np.zeros((n_el, 6), dtype=bool)
    ends = no_strength[ge, bk[ground]] & no_strength[ge, (bk[ground] + 1) % 3] & no_strength[ge, 3 + bk[ground]]
    implied[ge[ends], 3 + bk[ground][ends]] = True
    n_aux = mohr_coulomb_rows(eq, nonneg, cone, yield_slots, yield_c, yield_phi, first_aux=S.shape[0],
                              hoop_implied=np.concatenate([implied[points], np.zeros(len(far["yield_c"]), bool)]))
    S = sp.bmat([[S, None], [None, sp.identity(n_aux, format="csr")]]).tocsr()  # each t is a variable
    s0 = np.concatenate([s0, np.zeros(n_aux)])
    n_var += n_aux

    # 6. No tension under the footing: -S_z >= 0 at the footing edges' control points.
    foot = kind == FOOTING
    fe, fk = be[foot], bk[foot]
    on_foot = np.column_stack([fk, (fk + 1) % 3, 3 + fk])
    contact = np.unique(slot[fe[:, None], on_foot, SZ])
    nonneg.add(nonneg.block(len(contact)), contact, 1.0)

    # 7. Map slots to variables, merge repeated rows, drop empty ones.
    n_zero, n_nonneg = eq.count, nonneg.count
    n_rows = n_zero + n_nonneg + cone.count
    rows = eq.rows + [r + n_zero for r in nonneg.rows] + [r + n_zero + n_nonneg for r in cone.rows]
    A_slots = assemble(rows, eq.cols + nonneg.cols + cone.cols, eq.vals + nonneg.vals + cone.vals,
                       n_rows, S.shape[0])
    A_direct = assemble(*[[part[i] for part in direct] for i in range(3)], n_rows, n_var)
    b = np.concatenate(eq.rhs + nonneg.rhs + cone.rhs) - A_slots @ s0
    A = (A_slots @ S + A_direct).tocsr()
    keep = np.ones(n_rows, dtype=bool)
    keep[np.concatenate(dropped)] = False
    A, b, n_zero = A[keep].tocsc(), b[keep], n_zero - int((~keep[:n_zero]).sum())
    A, b, n_zero = drop_repeated_equalities(A, b, n_zero)
    A, b, n_zero = drop_empty_equalities(A, b, n_zero, scale=max(case.overburden_kPa(), 1.0))

    # minimise -Q = 2 pi integral(S_z dr) over the footing: a quadratic's integral is the
    # mean of its Bernstein coefficients times the length
    ra, rb = mesh.points[mesh.triangles[fe[:, None], on_foot[:, :2]], 0].T
    objective_slots = np.zeros(S.shape[0])
    np.add.at(objective_slots, slot[fe[:, None], on_foot, SZ].ravel(),
              np.repeat(2.0 * np.pi * rc[fe] * np.abs(rb - ra) / 3.0, 3))
    return ConicProgram(c=np.asarray(S.T @ objective_slots).ravel(), A=A, b=b, n_zero=n_zero,
                        n_nonneg=n_nonneg, n_soc=cone.count // 3,
                        objective_constant=float(objective_slots @ s0), kind="lower",
                        layout={"S": S, "s0": s0, "slot": slot, "yield_slots": yield_slots,
                                "yield_c": yield_c, "yield_phi": yield_phi, "axisymmetric": True})


def _far_field(case: Case, mesh: Mesh, state: dict, slot: np.ndarray) -> dict:
    """The slot map S (slots -> variables) with offsets s0, the far field included.

    Variables: the Bernstein coefficients of (S_r, S_z, T)/r_c of every triangle;
    along the far base, sigma_r at every node off the axis and the middle Bernstein
    coefficient of r sigma_r on every edge, over r there (kPa; r sigma_r is quadratic
    on each edge and continuous, 0 on the axis); g, the rate of sigma_r and
    sigma_theta with depth below the base (kPa/m). Far-field slots, each a point
    where yield is checked (the stresses, or the Bernstein coefficients of r sigma
    over r): the three control points of every far-side edge (sigma_r = sigma_theta
    = the mesh's, sigma_z geostatic, tau = 0), of every base edge off the axis
    (sigma_theta = d(r sigma_r)/dr, sigma_z the mesh's), the far corner, and the rate
    (g, -gamma, 0, g), whose strength is c's rate with depth.
    """
    n_el = mesh.n_elements
    mat = material_arrays(case)
    rc, radius = state["rc"], state["radius"]
    be, bk, kind = mesh.boundary_element, mesh.boundary_local, mesh.boundary_kind
    element_var = 21 * np.arange(n_el)[:, None] + np.arange(21)
    rows = [np.broadcast_to(slot[..., None], state["coeff"].shape)]
    cols = [np.broadcast_to(element_var[:, None, None, :], state["coeff"].shape)]
    vals = [state["coeff"]]
    offsets = []
    n_slots = 24 * n_el

    base = np.flatnonzero(kind == FAR_BASE)
    base_nodes = np.unique(mesh.boundary_edges[base])
    base_nodes = base_nodes[mesh.points[base_nodes, 0] > 0.0]
    n_var = 21 * n_el
    node_var = np.full(len(mesh.points), -1)  # sigma_r at far-base nodes; -1: none (on the axis, 0)
    node_var[base_nodes] = n_var + np.arange(len(base_nodes))
    n_var += len(base_nodes)
    middle_var = n_var + np.arange(len(base))
    n_var += len(base)
    rate = n_var  # g, kPa/m
    n_var += 1
    last = len(mat["phi"]) - 1
    D = mesh.domain.depth

    def new_slots(n: int) -> np.ndarray:
        nonlocal n_slots
        out = n_slots + np.arange(4 * n).reshape(n, 4)
        n_slots += 4 * n
        return out

    def add(target, column, value) -> None:
        target, column, value = np.broadcast_arrays(target, column, np.asarray(value, float))
        use = column >= 0
        rows.append(target[use]), cols.append(column[use]), vals.append(value[use])

    yield_slots, yield_c, yield_phi = [], [], []
    # beside the mesh: r-independent columns on each far-side edge, at its three control points
    side = np.flatnonzero(kind == FAR_SIDE)
    e, k = be[side], bk[side]
    z_end = mesh.points[mesh.triangles[e[:, None], np.column_stack([k, (k + 1) % 3])], 1]
    for point, depth in ((k, -z_end[:, 0]), ((k + 1) % 3, -z_end[:, 1]), (3 + k, -z_end.mean(axis=1))):
        s = new_slots(len(side))
        for stress in (SR, ST):  # sigma_r = S_r / R
            add(s[:, stress], element_var[e, 3 * point + SR], rc[e] / radius[e, point])
        offsets.append((s[:, SZ], geostatic_sigma_z(case, depth)))
        yield_slots.append(s), yield_c.append(node_cohesion(mat, mesh.layer[e], depth))
        yield_phi.append(mat["phi"][mesh.layer[e]])
    # under the mesh: a column below each base edge, at its control points off the axis;
    # F = r sigma_r has Bernstein coefficients (rP fP, rM fM, rQ fQ), r F' = r x (linear F')
    e, k = be[base], bk[base]
    P, Q = mesh.triangles[e, k], mesh.triangles[e, (k + 1) % 3]
    rP, rQ = mesh.points[P, 0], mesh.points[Q, 0]
    rM = (rP + rQ) / 2
    span = rQ - rP
    # d0 = 2 (F_M - F_P)/span, d1 = 2 (F_Q - F_M)/span: (column, coefficient) pairs
    d0 = [(middle_var, 2 * rM / span), (node_var[P], -2 * rP / span)]
    d1 = [(node_var[Q], 2 * rQ / span), (middle_var, -2 * rM / span)]
    hoop = {0: [(col, rP * v) for col, v in d0],  # Bernstein coefficients of r F'
            1: [(col, rQ * v) for col, v in d1],
            2: [(col, rP * v / 2) for col, v in d1] + [(col, rQ * v / 2) for col, v in d0]}
    for which, point, r_at, own in ((0, k, rP, node_var[P]), (1, (k + 1) % 3, rQ, node_var[Q]),
                                     (2, 3 + k, rM, middle_var)):
        live = r_at > 0.0
        s = np.full((len(base), 4), -1)
        s[live] = new_slots(int(live.sum()))
        add(s[live, SR], own[live], 1.0)
        for col, value in hoop[which]:
            add(s[live, ST], col[live], value[live] / r_at[live])
        add(s[live, SZ], element_var[e, 3 * point + SZ][live], (rc[e] / np.where(live, r_at, 1.0))[live])
        yield_slots.append(s[live]), yield_c.append(np.full(int(live.sum()), node_cohesion(mat, last, D)))
        yield_phi.append(np.full(int(live.sum()), mat["phi"][last]))
    # the far corner (r >= R_far, z <= -D) and the rate with depth below the base
    corner_node = base_nodes[np.argmax(mesh.points[base_nodes, 0])]
    s = new_slots(2)
    add(s[0, [SR, ST]], node_var[corner_node], 1.0)
    add(s[1, [SR, ST]], rate, 1.0)
    offsets.append((s[0, SZ], geostatic_sigma_z(case, D)))
    offsets.append((s[1, SZ], -mat["gamma"][last]))
    yield_slots.append(s)
    yield_c.append(np.array([node_cohesion(mat, last, D), mat["c_gradient"][last]]))
    yield_phi.append(np.full(2, mat["phi"][last]))

    s0 = np.zeros(n_slots)
    for target, value in offsets:
        s0[np.ravel(target)] = np.ravel(value)
    flat = lambda parts: np.concatenate([np.ravel(p) for p in parts])  # noqa: E731
    S = sp.coo_matrix((flat(vals), (flat(rows), flat(cols))), shape=(n_slots, n_var)).tocsr()
    return {"S": S, "s0": s0, "n_var": n_var, "yield_slots": np.concatenate(yield_slots),
            "yield_c": np.concatenate(yield_c), "yield_phi": np.concatenate(yield_phi)}
