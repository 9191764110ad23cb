"""The validated Case: the one value every later stage reads.

Units are SI throughout: lengths in m, stresses in kPa, unit weights in kN/m^3,
angles in degrees as the user gives them. Depths are measured downward from the
ground surface beside the footing (the surface the case file describes); the
footing base lies at depth ``footing.embedment``.

This module holds plain data only; :mod:`solver.case` reads and checks a case
file and returns a :class:`Case`.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field

WATER_UNIT_WEIGHT = 9.81  # kN/m^3, common practice


@dataclass(frozen=True)
class Layer:
    """One horizontal soil layer, listed top to bottom.

    ``model`` is "mohr-coulomb" (drained: ``cohesion`` c' in kPa and
    ``friction_angle`` phi' in degrees) or "tresca" (undrained:
    ``undrained_strength`` su in kPa at the layer's top, rising by
    ``strength_gradient`` kPa/m with depth below that top).
    """

    name: str
    model: str
    thickness: float | None  # m; None only for the last layer (runs to the model base)
    unit_weight: float  # kN/m^3
    cohesion: float = 0.0  # kPa, mohr-coulomb
    friction_angle: float = 0.0  # degrees, mohr-coulomb
    undrained_strength: float = 0.0  # kPa, tresca, at the layer top
    strength_gradient: float = 0.0  # kPa/m, tresca
    saturated_unit_weight: float | None = None  # kN/m^3 below the water table; None = unit_weight
    dilation_angle: float | None = None  # degrees, mohr-coulomb; None = associated flow (psi = phi)

    @property
    def is_tresca(self) -> bool:
        return self.model == "tresca"

    @property
    def phi_rad(self) -> float:
        """Friction angle in radians (0 for Tresca)."""
        return 0.0 if self.is_tresca else math.radians(self.friction_angle)

    @property
    def c_top_kPa(self) -> float:
        """Cohesion (or su) at the layer's top, kPa."""
        return self.undrained_strength if self.is_tresca else self.cohesion

    @property
    def c_gradient_kPa_per_m(self) -> float:
        """Rate of increase of cohesion with depth inside the layer, kPa/m."""
        return self.strength_gradient if self.is_tresca else 0.0


@dataclass(frozen=True)
class Footing:
    """A rigid strip footing of width ``width`` (m) founded at ``embedment`` (m)."""

    width: float  # m, B
    base: str = "rough"  # "rough" | "smooth"
    embedment: float = 0.0  # m, Df
    load_inclination: float = 0.0  # degrees from vertical, toward +x
    eccentricity: float = 0.0  # m from the footing centre, toward +x
    design_load: float | None = None  # kN/m, the line load to check (optional)


@dataclass(frozen=True)
class Ground:
    surcharge: float = 0.0  # kPa on the ground surface beside the footing
    water_table: float | None = None  # m below the ground surface beside the footing; None = below the model
    slope_angle: float = 0.0  # degrees; the ground falls away to the right of the footing
    crest_setback: float = 0.0  # m, from the footing's right edge to the crest
    slope_height: float | None = None  # m, crest to toe; level ground beyond the toe


@dataclass(frozen=True)
class Factors:
    """Partial factors of the user's design approach (names as in EN 1997-1; values
    are the user's: no design approach is assumed). Strengths are divided by their
    factor, the load multiplied by its factor, the resistance divided by its factor."""

    friction: float = 1.0  # on tan(phi')
    cohesion: float = 1.0  # on c'
    undrained_strength: float = 1.0  # on su
    load: float = 1.0  # on the design load (action)
    resistance: float = 1.0  # on the bearing resistance


@dataclass(frozen=True)
class Analysis:
    bounds: str = "both"  # "lower" | "upper" | "both"
    elements: int = 4000  # target number of triangles in each bound's mesh
    backend: str = "clarabel"  # "clarabel" (its own API) | "cvxpy" (through cvxpy)


@dataclass(frozen=True)
class Case:
    title: str
    footing: Footing
    ground: Ground
    layers: tuple[Layer, ...]
    analysis: Analysis = field(default_factory=Analysis)
    factors: Factors | None = None  # partial factors, when the case gives them
    name: str = "case"  # short name for the output folder (the case file's stem)
    source_sha256: str = ""  # hash of the case file's bytes, for reports

    # -- derived quantities used by the geometry and the bounds -------------

    def layer_tops(self) -> list[float]:
        """Depth of each layer's top below the ground surface, m."""
        tops, depth = [], 0.0
        for layer in self.layers:
            tops.append(depth)
            depth += layer.thickness if layer.thickness is not None else math.inf
        return tops

    def overburden_kPa(self) -> float:
        """Vertical total stress at footing level beside the footing, kPa:
        the surcharge plus the weight of soil above the footing base."""
        stress, depth = self.ground.surcharge, 0.0
        for layer in self.layers:
            bottom = depth + (layer.thickness if layer.thickness is not None else math.inf)
            above = min(bottom, self.footing.embedment) - depth
            if above > 0:
                stress += layer.unit_weight * above
            depth = bottom
            if depth >= self.footing.embedment:
                break
        return stress

    def layers_below_base(self) -> list[tuple[Layer, float, float, float]]:
        """(layer, top, bottom, c_top) of the layers below the footing base.

        Depths are measured from the footing base (m, positive down); the last
        bottom is inf. A layer cut by the base keeps the part below it, and
        ``c_top`` (kPa) is its cohesion or su at that part's top (raised by the
        strength gradient over any part removed). Inside, c = c_top + gradient*(d - top).
        """
        out = []
        for layer, top in zip(self.layers, self.layer_tops()):
            bottom = top + (layer.thickness if layer.thickness is not None else math.inf)
            if bottom <= self.footing.embedment:
                continue
            cut = max(self.footing.embedment - top, 0.0)
            c_top = layer.c_top_kPa + layer.c_gradient_kPa_per_m * cut
            out.append((layer, max(top - self.footing.embedment, 0.0),
                        bottom - self.footing.embedment, c_top))
        return out

    @property
    def is_weightless(self) -> bool:
        return all(layer.unit_weight == 0.0 for layer, *_ in self.layers_below_base())
