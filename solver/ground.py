"""The ground as both bounds see it: per-stratum material arrays, strength at a
point, and the surcharge on the ground surface. Derived from the Case only."""
from __future__ import annotations

import numpy as np

from .mesh import Mesh
from .model import Case


def material_arrays(case: Case) -> dict[str, np.ndarray]:
    """Per-stratum arrays (index = Case.strata(), the mesh's element layer index):
    phi (rad), effective gamma (kN/m^3), top and bottom depth (m), c at top (kPa),
    c gradient (kPa/m)."""
    strata = case.strata()
    return {
        "phi": np.array([s.phi_rad for s in strata]),
        "gamma": np.array([s.unit_weight for s in strata]),
        "top": np.array([s.top for s in strata]),
        "bottom": np.array([s.bottom for s in strata]),
        "c_top": np.array([s.c_top for s in strata]),
        "c_gradient": np.array([s.c_gradient for s in strata]),
    }


def node_cohesion(material: dict, layer: np.ndarray, depth: np.ndarray) -> np.ndarray:
    """c (kPa) at points of given layers and depths below the base (any shape)."""
    return material["c_top"][layer] + material["c_gradient"][layer] * (depth - material["top"][layer])


def surcharge_on_edges(case: Case, mesh: Mesh, mask: np.ndarray) -> np.ndarray:
    """Surcharge (kPa) on boundary edges: the overburden on ground at the footing's
    level (y = 0); none on a slope face or below it."""
    mid_y = mesh.points[mesh.boundary_edges[mask][:, :2], 1].mean(axis=1)
    return np.where(np.abs(mid_y) < 1e-9 * mesh.domain.x_max, case.overburden_kPa(), 0.0)
