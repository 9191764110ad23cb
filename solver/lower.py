"""Lower bound: a Mesh of 3-node triangles -> one sparse conic program.

Method (Sloan 1988; Lyamin & Sloan 2002 for the conic yield condition;
Makrodimopoulos & Martin 2006 for the second-order cone form):

* stresses (sigma_x, sigma_y, tau_xy) vary linearly in each triangle, and every
  triangle has nodes of its own, so every edge may carry a statically
  admissible stress discontinuity;
* equilibrium with self-weight holds exactly in every triangle;
* normal and shear traction are continuous across every interior edge;
* ground-surface tractions equal the surcharge, the footing carries only
  normal stress when smooth, shear is zero on the symmetry line; the contact
  under the footing carries no tension (a footing cannot pull on the soil,
  which matters for eccentric loads);
* Mohr-Coulomb (Tresca when phi = 0) holds at every stress node as a cone
  ||(sigma_x - sigma_y, 2 tau)|| <= 2 c cos(phi) - (sigma_x + sigma_y) sin(phi);
  the stress is linear and c at most linear in depth, so it holds everywhere;
* beyond the mesh, extension elements (after Pastor 1978 and Sloan 1988):
  a semi-infinite strip on every far-boundary edge and a quarter plane at
  each far corner, each with a linear stress field in equilibrium, continuous
  in traction with its neighbours, and inside the yield cone at its finite
  points and along every rate (the recession condition), so the stress field
  is admissible on the whole half-space and the bound is rigorous with
  self-weight too (see _extension_elements).

Sign convention inside the solver: tension positive, y upward.
The objective is minus the footing load (kN/m); the load is
Q = -integral of sigma_y over the footing (times 2 on a half domain).
"""
from __future__ import annotations

import numpy as np

from .conic import ConicProgram, assemble, drop_empty_equalities
from .mesh import FAR_BASE, FAR_SIDE, FIXED, FOOTING, GROUND, SYMMETRY, Mesh
from .ground import material_arrays, node_cohesion, surcharge_on_edges
from .model import Case

SX, SY, TXY = 0, 1, 2


class _Rows:
    """Accumulates COO triplets and right-hand sides block by block."""

    def __init__(self) -> None:
        self.rows, self.cols, self.vals, self.rhs = [], [], [], []
        self.count = 0

    def block(self, n: int, rhs=0.0) -> np.ndarray:
        r = self.count + np.arange(n)
        self.count += n
        self.rhs.append(np.broadcast_to(np.asarray(rhs, dtype=float), (n,)).copy())
        return r

    def add(self, rows, cols, vals) -> None:
        rows, cols, vals = np.broadcast_arrays(rows, cols, vals)
        self.rows.append(rows.ravel()), self.cols.append(cols.ravel()), self.vals.append(vals.ravel())


def traction_coefficients(normal: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """(n, 3) coefficients of sigma_n and tau_n on (sigma_x, sigma_y, tau_xy) for unit normals (n, 2).

    >>> sn, tn = traction_coefficients(np.array([[0.0, 1.0]]))
    >>> sn.tolist(), tn.tolist()
    ([[0.0, 1.0, 0.0]], [[-0.0, 0.0, -1.0]])
    """
    nx, ny = normal[:, 0], normal[:, 1]
    sn = np.column_stack([nx * nx, ny * ny, 2 * nx * ny])
    tn = np.column_stack([-nx * ny, nx * ny, nx * nx - ny * ny])
    return sn, tn


def _continuity(eq: _Rows, a: np.ndarray, b: np.ndarray, normal: np.ndarray) -> list[np.ndarray]:
    """Traction on planes of given normals equal for stress triples a and b (n, 3): 2 rows each."""
    out = []
    for coeff in traction_coefficients(normal):
        r = eq.block(len(a))[:, None]
        eq.add(r, a, coeff)
        eq.add(r, b, -coeff)
        out.append(r[:, 0])
    return out


def _prescribe(eq: _Rows, stress: np.ndarray, normal: np.ndarray, sigma_n=None, tau_n=None):
    """Rows fixing the normal and/or shear traction of stress triples (n, 3); returns their
    (variable triple, coefficients, value) for de-duplication."""
    sn, tn = traction_coefficients(normal)
    out = []
    for coeff, value in ((sn, sigma_n), (tn, tau_n)):
        if value is not None:
            out.append((stress, coeff, np.broadcast_to(np.asarray(value, float), (len(stress),))))
    return out


def _cones(cone: _Rows, stress: np.ndarray, c: np.ndarray, phi: np.ndarray) -> None:
    """Mohr-Coulomb cone ||(sx - sy, 2 txy)|| <= 2 c cos(phi) - (sx + sy) sin(phi) on
    stress triples (n, 3), as s = b - A x in SOC_3. With c the rate of cohesion
    along a direction, the same cone is the recession condition of a linear field."""
    _band_cone(cone, [(stress, np.ones(len(stress)))], c, phi)


def _equilibrium(eq: _Rows, d_dx: list, d_dy: list, gamma: np.ndarray, scale: np.ndarray) -> None:
    """d sx/dx + d txy/dy = 0 and d txy/dx + d sy/dy = gamma, each derivative given as
    a list of (variables (n, 3), weights (n,)) terms; rows multiplied by ``scale`` (m)."""
    rx, ry = eq.block(len(gamma)), eq.block(len(gamma), gamma * scale)
    for terms, comps in ((d_dx, ((rx, SX), (ry, TXY))), (d_dy, ((rx, TXY), (ry, SY)))):
        for variables, weight in terms:
            for r, comp in comps:
                eq.add(r, variables[:, comp], weight * scale)


def lower_bound_program(case: Case, mesh: Mesh) -> ConicProgram:
    """Assemble the lower-bound program (vectorised; one COO assembly)."""
    if mesh.order != 1:
        raise ValueError("the lower bound needs a first-order mesh")
    n_el = mesh.n_elements
    mat = material_arrays(case)
    q = case.overburden_kPa()
    half = mesh.domain.half
    smooth = case.footing.base == "smooth"
    eq, cone = _Rows(), _Rows()

    stress = np.arange(9 * n_el).reshape(n_el, 3, 3)  # variable of (element, corner, component)
    n_var = 9 * n_el

    # 1. Equilibrium with self-weight in every triangle (rows scaled by L = sqrt(2A)).
    grad = mesh.shape_gradients()
    L = np.sqrt(2.0 * mesh.areas())
    gamma = mat["gamma"][mesh.layer]
    _equilibrium(eq, [(stress[:, i], grad[:, i, 0]) for i in range(3)],
                 [(stress[:, i], grad[:, i, 1]) for i in range(3)], gamma, L)

    # 2. Traction continuity across every interior edge, at both ends.
    e1, k1, e2, k2 = mesh.interior_edges()
    normal, _ = mesh.edge_normals(e1, k1)
    redundant = _straight_boundary_ends(mesh, e1, k1)
    dropped = []
    for end, (a, b) in enumerate([(k1, (k2 + 1) % 3), ((k1 + 1) % 3, k2)]):
        for which, r in enumerate(_continuity(eq, stress[e1, a], stress[e2, b], normal)):
            dropped.append(r[redundant[end] == which])

    # 3. Tractions on the mesh's own boundary: ground, footing, symmetry line.
    prescribed = []
    be, bk, kind = mesh.boundary_element, mesh.boundary_local, mesh.boundary_kind
    bnormal, blength = mesh.edge_normals(be, bk)
    ground = kind == GROUND
    q_edge = surcharge_on_edges(case, mesh, ground)
    for end in (bk, (bk + 1) % 3):
        for mask, sigma_n, tau_n in ((ground, -q_edge, 0.0),
                                     (kind == SYMMETRY, None, 0.0),
                                     ((kind == FOOTING) & smooth, None, 0.0)):
            prescribed += _prescribe(eq, stress[be[mask], end[mask]], bnormal[mask], sigma_n, tau_n)

    # 4. Extension elements beyond the far boundary (see module docstring).
    strips = _extension_elements(case, mesh, mat, stress, n_var, eq, cone, prescribed, q)
    n_var = strips["n_var"]

    # 5. Yield at every stress node (before the prescribed rows are added: a node with no
    #    strength gives rows that may repeat a prescribed traction, merged there).
    depth = -mesh.points[mesh.triangles, 1]
    prescribed += _yield(cone, stress.reshape(-1, 3), node_cohesion(mat, np.repeat(mesh.layer, 3), depth.ravel()),
                         np.repeat(mat["phi"][mesh.layer], 3))
    for triple, c, phi in strips["cones"]:
        prescribed += _yield(cone, triple, c, phi)
    _add_prescribed(eq, prescribed)

    # 6. The footing's contact stresses resolve to a force P = (integral tau, integral sigma_y)
    #    on the soil; on a full domain it must point along the load (inclination delta from
    #    vertical) with its line of action through (e, 0). On a half domain, symmetry does it.
    foot = kind == FOOTING
    fe, fk, flen = be[foot], bk[foot], blength[foot]
    ends_local = np.column_stack([fk, (fk + 1) % 3])
    weight = np.repeat(flen[:, None] / 2, 2, 1)  # integral of a linear field over each edge
    delta = np.radians(case.footing.load_inclination)
    e = case.footing.eccentricity
    foot_sy, foot_txy = stress[fe[:, None], ends_local, SY], stress[fe[:, None], ends_local, TXY]
    if not half:
        r = eq.block(1)  # P_x cos(delta) + P_y sin(delta) = 0
        if not smooth:
            eq.add(r, foot_txy, np.cos(delta) * weight)
        eq.add(r, foot_sy, np.sin(delta) * weight)
        xa, xb = mesh.points[mesh.triangles[fe[:, None], ends_local], 0].T
        r = eq.block(1)  # moment about (e, 0): integral of (x - e) sigma_y = 0 (exact for linear fields)
        eq.add(r, foot_sy, np.column_stack([flen * (2 * xa + xb - 3 * e) / 6, flen * (xa + 2 * xb - 3 * e) / 6]))

    # 7. No tension under the footing: a footing cannot pull on the soil, so the
    #    contact normal stress is compressive, sigma_y <= 0, at every contact node
    #    (written as the cone (-sigma_y, 0, 0)). The upper bound's bonded footing
    #    stays an upper bound of this problem: no separation is one admissible case.
    contact = np.unique(foot_sy.ravel())
    r = cone.count + 3 * np.arange(len(contact))
    cone.count += 3 * len(contact)
    cone.rhs.append(np.zeros(3 * len(contact)))
    cone.add(r, contact, 1.0)

    n_zero = eq.count
    A = assemble(eq.rows + [r + n_zero for r in cone.rows], eq.cols + cone.cols, eq.vals + cone.vals,
                 n_zero + cone.count, n_var)
    b = np.concatenate(eq.rhs + cone.rhs)
    keep = np.ones(A.shape[0], dtype=bool)
    keep[np.concatenate(dropped)] = False
    A, b, n_zero = A[keep].tocsc(), b[keep], n_zero - int((~keep).sum())
    A, b, n_zero = drop_empty_equalities(A, b, n_zero, scale=max(q, 1.0))

    # maximise the load Q = P_x sin(delta) - P_y cos(delta): minimise -Q
    objective = np.zeros(n_var)
    factor = 2.0 if half else 1.0  # the half domain carries half the load
    np.add.at(objective, foot_sy.ravel(), (factor * np.cos(delta) * weight).ravel())
    if not smooth and delta != 0.0:
        np.add.at(objective, foot_txy.ravel(), (-factor * np.sin(delta) * weight).ravel())
    return ConicProgram(c=objective, A=A, b=b, n_zero=n_zero, n_soc=cone.count // 3,
                        kind="lower",
                        layout={"stress": stress, "strips": strips["layout"], "symmetry_factor": factor})


def _add_prescribed(eq: _Rows, prescribed: list) -> None:
    """Add prescribed-traction rows once each: at domain corners two edges may fix
    the same component of the same node (e.g. shear on the symmetry line and
    under a smooth footing), which would be a dependent pair."""
    if not prescribed:
        return
    triples = np.concatenate([p[0] for p in prescribed])
    coeffs = np.concatenate([p[1] for p in prescribed])
    values = np.concatenate([p[2] for p in prescribed])
    sign = np.sign(coeffs[np.arange(len(coeffs)), np.argmax(np.abs(coeffs) > 1e-12, axis=1)])
    coeffs, values = coeffs * sign[:, None], values * sign
    key = np.column_stack([triples, np.round(coeffs * 1e9)])
    _, first = np.unique(key, axis=0, return_index=True)
    r = eq.block(len(first), values[first])
    eq.add(r[:, None], triples[first], coeffs[first])


def _yield(cone: _Rows, stress: np.ndarray, c, phi) -> list:
    """Yield on stress triples (n, 3): the cone of :func:`_cones`, except where
    c = 0 and phi = 0 (a Tresca recession condition with no strength gain along
    the rate, or a node where the undrained strength is zero). There the cone
    ||(sx - sy, 2 txy)|| <= 0 has no interior, only its apex, which breaks the
    interior-point method's assumption of a strictly feasible point, so it is
    written as the equalities sx = sy, txy = 0 it means. (Measured on Prandtl's
    case, whose far strips have such rates: 33 -> 30 iterations at 10k triangles,
    37 -> 38 at 20k, the same bound; the gain is robustness, not speed.) Those
    equalities are returned as prescribed rows (triple, coefficients, value) for
    :func:`_add_prescribed`, which merges the shear row with a ground node's own."""
    c = np.broadcast_to(np.asarray(c, float), (len(stress),))
    phi = np.broadcast_to(np.asarray(phi, float), (len(stress),))
    apex = (c == 0.0) & (phi == 0.0)
    _cones(cone, stress[~apex], c[~apex], phi[~apex])
    n = int(apex.sum())
    zero = np.zeros(n)
    return [(stress[apex], np.tile([1.0, -1.0, 0.0], (n, 1)), zero),
            (stress[apex], np.tile([0.0, 0.0, 1.0], (n, 1)), zero)]


def deep_strata(case: Case, mesh: Mesh) -> list[int]:
    """Indices (into Case.strata()) of the strata below the model base, top first; empty
    when the model's last stratum runs on to infinity (or for a drawn site)."""
    if case.geometry is not None:
        return []
    first = len(mesh.domain.interfaces) + 1  # the mesh holds strata 0 .. len(interfaces)
    return list(range(first, len(case.strata())))


def _deep_strata_cones(eq: _Rows, cone: _Rows, mat: dict, deep: list[int], model_depth: float, B: float,
                       points: list[tuple[np.ndarray, np.ndarray]], downward: list[np.ndarray],
                       sideways: np.ndarray) -> None:
    """Yield below the model base, where the strata ``deep`` lie (a water table or layer
    interfaces deeper than any mechanism reaches).

    Below the base, the extension elements' fields are linear in the depth s below it,
    sigma = sigma_0 + s G (``points``: pairs of triples of variables, sigma_0 a point on the
    base and G its downward rate, each rate once in ``downward``), in equilibrium with the
    weight gamma_0 of the model's last stratum. The ground's own weight gamma(s) differs
    below, so the field there is
    sigma + tau(s) with tau = (t, t, 0), t(s) = integral from 0 to s of (gamma_0 - gamma):
    an isotropic stress depending on depth alone, in equilibrium with the weight
    difference, continuous in traction across every horizontal interface and every
    vertical ray between the elements (all carry the same tau), and free of shear on a
    symmetry line. On each band of one stratum the field is linear in s, so yield at both
    ends of the band (in that stratum's cone, with its strength there) gives yield on the
    whole band; on the last band, yield at its top and the recession condition on
    G + (b, b, 0), b = gamma_0 - gamma_last, give it to infinity. A corner's sideways rate
    (``sideways``) meets every stratum's recession condition (the strength does not
    change sideways). Each cone is divided by 1 + H/B (H the depth of its point below the
    base), which keeps its entries of order one at any depth.
    """
    strata = [deep[0] - 1] + deep  # the model's last stratum, then those below the base
    levels = [0.0] + [max(mat["top"][k] - model_depth, 0.0) for k in deep]  # band tops, m below the base
    gamma0 = mat["gamma"][strata[0]]

    def shift(level: float) -> float:
        """t(level) / (1 + level / B), band by band so that no term overflows."""
        return sum((gamma0 - mat["gamma"][k]) * ((min(level, end) - start) / (1.0 + level / B))
                   for k, start, end in zip(strata, levels, levels[1:] + [np.inf]) if level > start)

    for j, k in enumerate(strata):
        ends = levels[j:j + 2] if j > 0 else levels[1:2]  # the base itself: the elements' own cones
        phi, gradient = mat["phi"][k], mat["c_gradient"][k]
        for level in ends:
            weight = 1.0 / (1.0 + level / B)
            c = weight * mat["c_top"][k] + gradient * ((level + model_depth - mat["top"][k]) * weight)
            for point, down in points:
                n = len(point)
                _band_cone(cone, [(point, np.full(n, weight)), (down, np.full(n, level * weight))],
                           c, phi, shift(level), eq)
        if j > 0:  # the model's own stratum: the corner's own cones
            _band_cone(cone, [(sideways, np.ones(len(sideways)))], 0.0, phi, 0.0, eq)
    last = strata[-1]
    for down in downward:
        _band_cone(cone, [(down, np.ones(len(down)))], mat["c_gradient"][last], mat["phi"][last],
                   gamma0 - mat["gamma"][last], eq)


def _band_cone(cone: _Rows, terms: list, c, phi, mean: float = 0.0, eq: _Rows | None = None) -> None:
    """The yield cone of :func:`_cones` on the stress sum(weight * triple) + (mean, mean, 0)
    (``terms``: (triples (n, 3), weights (n,)); c, phi per row or one for all). Given
    ``eq``, a cone with c = 0 and phi = 0 everywhere, which has no interior, is written as
    the equalities it means instead (see _yield)."""
    n = len(terms[0][0])
    if n == 0:
        return
    c = np.broadcast_to(np.asarray(c, float), (n,))
    phi = np.broadcast_to(np.asarray(phi, float), (n,))
    if eq is not None and np.all(phi == 0.0) and np.all(c == 0.0):
        for components, signs in (((SX, SY), (1.0, -1.0)), ((TXY,), (1.0,))):
            r = eq.block(n)
            for triple, weight in terms:
                for comp, sign in zip(components, signs):
                    eq.add(r, triple[:, comp], sign * weight)
        return
    rhs = np.zeros((n, 3))
    rhs[:, 0] = 2.0 * c * np.cos(phi) - 2.0 * mean * np.sin(phi)
    r = cone.count + 3 * np.arange(n)
    cone.count += 3 * n
    cone.rhs.append(rhs.ravel())
    sin = np.sin(phi)
    for triple, weight in terms:
        cone.add(r, triple[:, SX], sin * weight)
        cone.add(r, triple[:, SY], sin * weight)
        cone.add(r + 1, triple[:, SX], -weight)
        cone.add(r + 1, triple[:, SY], weight)
        cone.add(r + 2, triple[:, TXY], -2.0 * weight)


def _extension_elements(case, mesh, mat, stress, n_var, eq, cone, prescribed, q) -> dict:
    """Semi-infinite strips on every far-boundary edge and quarter planes at the corners.

    A strip on edge P-Q with outward normal d carries the linear field
    sigma(P + t (Q - P) + s d) = (1 - t) sP + t sQ + s G, s >= 0; a corner at C
    between strips of directions d1, d2 carries sigma_C + s1 G1 + s2 G2. Each
    satisfies equilibrium, traction continuity with its neighbours along their
    shared edges and rays, and yield at its finite corners plus the recession
    condition on every rate G (so yield holds to infinity). Rays on the ground
    surface carry the surcharge; rays on the symmetry line carry no shear.
    """
    far = np.flatnonzero(np.isin(mesh.boundary_kind, (FAR_SIDE, FAR_BASE)))
    e, k = mesh.boundary_element[far], mesh.boundary_local[far]
    n_s = len(far)
    d, length = mesh.edge_normals(e, k)
    P, Q = mesh.triangles[e, k], mesh.triangles[e, (k + 1) % 3]
    strip = n_var + np.arange(9 * n_s).reshape(n_s, 3, 3)  # sP, sQ, G
    n_var += 9 * n_s
    layer = mesh.layer[e]
    phi, gamma = mat["phi"][layer], mat["gamma"][layer]
    unit = (mesh.points[Q] - mesh.points[P]) / length[:, None]
    jump = [(strip[:, 1], 1.0 / length), (strip[:, 0], -1.0 / length)]
    _equilibrium(eq, [(v, w * unit[:, 0]) for v, w in jump] + [(strip[:, 2], d[:, 0])],
                 [(v, w * unit[:, 1]) for v, w in jump] + [(strip[:, 2], d[:, 1])], gamma, length)
    _continuity(eq, stress[e, k], strip[:, 0], d)
    _continuity(eq, stress[e, (k + 1) % 3], strip[:, 1], d)
    depth_rate = -d[:, 1]  # m of depth per m along d
    g = mat["c_gradient"][layer]
    deep = deep_strata(case, mesh)
    # a base strip's rate reaches the strata below the model, if any: deep_strata_cones
    down = (mesh.boundary_kind[far] == FAR_BASE) & bool(deep)
    cones = [(strip[:, 0], node_cohesion(mat, layer, -mesh.points[P, 1]), phi),
             (strip[:, 1], node_cohesion(mat, layer, -mesh.points[Q, 1]), phi),
             (strip[~down, 2], (g * depth_rate)[~down], phi[~down])]

    # Strip ends: pair ends sharing a node; parallel strips meet along a ray,
    # perpendicular ones at a corner; an unpaired end lies on the ground or the symmetry line.
    node = np.concatenate([P, Q])
    which = np.concatenate([np.zeros(n_s, int), np.ones(n_s, int)])
    owner = np.concatenate([np.arange(n_s), np.arange(n_s)])
    order = np.argsort(node, kind="stable")
    node, which, owner = node[order], which[order], owner[order]
    same = node[1:] == node[:-1]
    a, b = np.flatnonzero(same), np.flatnonzero(same) + 1
    paired = np.zeros(len(node), dtype=bool)
    paired[a], paired[b] = True, True
    sa, sb = owner[a], owner[b]
    parallel = np.abs(d[sa, 0] * d[sb, 1] - d[sa, 1] * d[sb, 0]) < 1e-9
    ray_normal = np.column_stack([-d[:, 1], d[:, 0]])
    pa, pb = sa[parallel], sb[parallel]
    _continuity(eq, strip[pa, which[a][parallel]], strip[pb, which[b][parallel]], ray_normal[pa])
    _continuity(eq, strip[pa, 2], strip[pb, 2], ray_normal[pa])

    ca, cb = sa[~parallel], sb[~parallel]
    n_c = len(ca)
    corner = n_var + np.arange(9 * n_c).reshape(n_c, 3, 3)  # sigma_C, G along d[ca], G along d[cb]
    n_var += 9 * n_c
    c_layer = layer[ca]
    for strip_id, end, rate in ((ca, which[a][~parallel], 1), (cb, which[b][~parallel], 2)):
        _continuity(eq, strip[strip_id, end], corner[:, 0], ray_normal[strip_id])
        _continuity(eq, strip[strip_id, 2], corner[:, rate], ray_normal[strip_id])
    d1, d2 = d[ca], d[cb]
    _equilibrium(eq, [(corner[:, 1], d1[:, 0]), (corner[:, 2], d2[:, 0])],
                 [(corner[:, 1], d1[:, 1]), (corner[:, 2], d2[:, 1])], mat["gamma"][c_layer], np.ones(n_c))
    c_node = node[a][~parallel]
    c_phi = mat["phi"][c_layer]
    cones += [(corner[:, 0], node_cohesion(mat, c_layer, -mesh.points[c_node, 1]), c_phi)]
    for rate, direction in ((corner[:, 1], d1), (corner[:, 2], d2)):
        keep = ~(np.isclose(direction[:, 1], -1.0) & bool(deep))  # the downward rate: deep_strata_cones
        cones.append((rate[keep], (mat["c_gradient"][c_layer] * -direction[:, 1])[keep], c_phi[keep]))
    if deep:
        # base strips: their two ends and downward rate; corners: their point, downward
        # and sideways rates (each corner has one strip of each direction)
        first_down = np.isclose(d1[:, 1], -1.0)[:, None]
        base_rate = strip[down, 2]
        corner_down = np.where(first_down, corner[:, 1], corner[:, 2])
        _deep_strata_cones(eq, cone, mat, deep, mesh.domain.depth, mesh.footing_width,
                           [(strip[down, 0], base_rate), (strip[down, 1], base_rate), (corner[:, 0], corner_down)],
                           [base_rate, corner_down], np.where(first_down, corner[:, 2], corner[:, 1]))

    loose = ~paired
    s_id, s_end, s_node = owner[loose], which[loose], node[loose]
    ground_edges = mesh.boundary_kind == GROUND
    on_ground = np.isin(s_node, mesh.boundary_edges[ground_edges][:, :2])
    on_symmetry = np.isin(s_node, mesh.boundary_edges[mesh.boundary_kind == SYMMETRY][:, :2]) & ~on_ground
    # a fixed (rigid) boundary continues along the ray and carries any traction: no condition there
    on_fixed = np.isin(s_node, mesh.boundary_edges[mesh.boundary_kind == FIXED][:, :2])
    if not np.all(on_ground | on_symmetry | on_fixed):
        raise RuntimeError("extension elements: a far-boundary chain ends nowhere known")
    # the ray continues the level ground beyond the mesh: the surcharge there is that of
    # ground at the footing's level, none at the toe of a slope
    y = mesh.points[s_node[on_ground], 1]
    q_ray = np.where(np.abs(y) < 1e-9 * mesh.domain.x_max, q, 0.0)
    up = np.tile([0.0, 1.0], (on_ground.sum(), 1))
    gs = s_id[on_ground]
    prescribed += _prescribe(eq, strip[gs, s_end[on_ground]], up, -q_ray, 0.0)
    prescribed += _prescribe(eq, strip[gs, 2], up, 0.0, 0.0)
    ss = s_id[on_symmetry]
    side = np.tile([1.0, 0.0], (on_symmetry.sum(), 1))
    prescribed += _prescribe(eq, strip[ss, s_end[on_symmetry]], side, None, 0.0)
    prescribed += _prescribe(eq, strip[ss, 2], side, None, 0.0)
    return {"n_var": n_var, "cones": cones, "layout": {"strip": strip, "corner": corner}}


def _straight_boundary_ends(mesh: Mesh, e1: np.ndarray, k1: np.ndarray) -> list[np.ndarray]:
    """Which continuity row (0 normal, 1 shear, -1 none) is redundant at each end of
    each interior edge.

    At a ground-surface node on a straight stretch that has only two triangles,
    both traction rows across the one interior edge reduce to the jump of the
    stress along the surface: they are linearly dependent, and the solver slows
    and stalls on dependent equalities. Keep the row in which that jump has the
    larger coefficient.
    """
    n_nodes = len(mesh.points)
    valence = np.bincount(mesh.triangles[:, :3].ravel(), minlength=n_nodes)
    full = mesh.boundary_kind == GROUND
    nodes = mesh.boundary_edges[full, :2]
    kind = mesh.boundary_kind[full]
    normals, _ = mesh.edge_normals(mesh.boundary_element[full], mesh.boundary_local[full])
    count = np.bincount(nodes.ravel(), minlength=n_nodes)
    # each node's two boundary edges: written forward and backward, last write wins
    kind_a, kind_b = np.full(n_nodes, -1), np.full(n_nodes, -1)
    normal_a, normal_b = np.zeros((n_nodes, 2)), np.zeros((n_nodes, 2))
    kind_a[nodes.ravel()] = np.repeat(kind, 2)
    normal_a[nodes.ravel()] = np.repeat(normals, 2, axis=0)
    kind_b[nodes[::-1].ravel()] = np.repeat(kind[::-1], 2)
    normal_b[nodes[::-1].ravel()] = np.repeat(normals[::-1], 2, axis=0)
    straight = np.abs(normal_a[:, 0] * normal_b[:, 1] - normal_a[:, 1] * normal_b[:, 0]) < 1e-9
    flagged = (valence == 2) & (count == 2) & (kind_a == kind_b) & straight
    tangent = np.column_stack([-normal_a[:, 1], normal_a[:, 0]])
    out = []
    normal, _ = mesh.edge_normals(e1, k1)
    for local in (k1, (k1 + 1) % 3):
        node = mesh.triangles[e1, local]
        t = tangent[node]
        along = np.abs(np.sum(normal * t, axis=1))
        across = np.abs(normal[:, 0] * t[:, 1] - normal[:, 1] * t[:, 0])
        # jump coefficient: (n.t)^2 in the normal row, (n.t)(n.m) in the shear row
        redundant = np.where(along * along >= along * across, 1, 0)
        out.append(np.where(flagged[node], redundant, -1))
    return out


