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


def davis_reduction(layer: Layer) -> tuple[float, float]:
    """Davis (1968) strength reduction for a non-associated Mohr-Coulomb soil.

    With dilation angle psi < phi, c* = beta c and tan(phi*) = beta tan(phi),
    beta = cos(psi) cos(phi) / (1 - sin(psi) sin(phi)) (Davis, E.H. 1968,
    Theories of plasticity and the failure of soil masses, in Soil Mechanics:
    Selected Topics, ed. I.K. Lee, Butterworths). Returns (beta, phi* in rad);
    (1, phi) for associated flow or Tresca. The bounds computed with c*, phi*
    are the accepted approximation, no longer rigorous bounds on the
    non-associated problem.

    >>> import math
    >>> lay = Layer("sand", "mohr-coulomb", None, 19.0, friction_angle=30.0, dilation_angle=0.0)
    >>> beta, phi = davis_reduction(lay)
    >>> round(beta, 4), round(math.degrees(phi), 2)
    (0.866, 26.57)
    """
    if layer.is_tresca or layer.dilation_angle is None:
        return 1.0, layer.phi_rad
    phi, psi = layer.phi_rad, math.radians(layer.dilation_angle)
    beta = math.cos(psi) * math.cos(phi) / (1.0 - math.sin(psi) * math.sin(phi))
    return beta, math.atan(beta * math.tan(phi))


@dataclass(frozen=True)
class Footing:
    """A rigid footing founded at ``embedment`` (m): a strip of width ``width`` (m), or a
    circle of diameter ``width`` (``shape = "circular"``, analysed as axisymmetric)."""

    width: float  # m, B (the diameter of a circle)
    base: str = "rough"  # "rough" | "smooth"
    embedment: float = 0.0  # m, Df
    load_inclination: float = 0.0  # degrees from vertical, toward +x
    eccentricity: float = 0.0  # m from the footing centre, toward +x
    # the load to check (optional): a strip's line load in kN/m (per m run), along the load's line
    # of action; a circle's whole vertical load in kN (result.load_unit)
    design_load: float | None = None
    required_factor_of_safety_on_load: float | None = None  # collapse load / design load the design needs
    required_factor_of_safety_on_strength: float | None = None  # strength-reduction factor the design needs
    shape: str = "strip"  # "strip" (plane strain) | "circular" (axisymmetric, width = diameter)

    @property
    def bearing_area(self) -> float:
        """Area the collapse load is spread over: B (m^2 per m run) for a strip, pi B^2/4 (m^2)
        for a circle; collapse pressure = collapse load / bearing_area."""
        return self.width if self.shape == "strip" else math.pi * self.width ** 2 / 4.0


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
class ReportInfo:
    """Optional ``[report]`` table: who and what the report is for; printed in its heading,
    used nowhere else."""

    project: str | None = None  # free text: the project or job the check belongs to
    checked_by: str | None = None  # free text: the engineer who checks the result


@dataclass(frozen=True)
class Analysis:
    bounds: str = "both"  # "lower" | "upper" | "both"
    elements: int = 4000  # target number of triangles in each bound's mesh (adaptive: the first step's)
    backend: str = "clarabel"  # "clarabel" (its own API) | "cvxpy" (through cvxpy)
    mesh: str = "adaptive"  # "adaptive": refine until target_gap or time_limit_s | "fixed": one mesh per bound
    target_gap: float = 0.01  # adaptive refinement until (upper - lower)/lower <= this (fraction)
    max_steps: int = 8  # adaptive refinement: at most this many solve steps
    time_limit_s: float = 60.0  # adaptive refinement: no new step that would end after this
    # upper bound: velocity jumps across "all" interior edges, or "none" (measured: at equal solve
    # time the continuous field on a finer mesh was as tight or tighter; DEVELOPERS.md)
    velocity_jumps: str = "none"
    model_width: float | None = None  # m, the model's whole width, footing centred; None: planned (mesh.plan_domain)
    model_depth: float | None = None  # m below the footing base; None: planned

    @property
    def adaptive(self) -> bool:
        return self.mesh == "adaptive"


@dataclass(frozen=True)
class Stratum:
    """A horizontal band of one layer below the footing base, wholly above or
    wholly below the water table: what the mesh and both bounds see.

    Depths are measured from the footing base (m, positive down); the last
    stratum's bottom is inf. Strength: c = c_top + c_gradient * (d - top), kPa.
    ``unit_weight`` is effective (kN/m^3): the bulk weight above the water
    table, the saturated weight less that of water below it.
    """

    layer_index: int  # index into Case.layers
    name: str
    top: float
    bottom: float
    c_top: float
    c_gradient: float
    phi_rad: float
    unit_weight: float
    submerged: bool


def continues(above: Stratum, below: Stratum) -> bool:
    """Whether ``below`` is the same soil as ``above`` carried on down: the same friction
    angle, effective unit weight and strength gradient, and the same strength on both
    sides of the interface (a layer the case file splits in two)."""
    return (math.isclose(above.phi_rad, below.phi_rad) and math.isclose(above.unit_weight, below.unit_weight)
            and math.isclose(above.c_gradient, below.c_gradient)
            and math.isclose(above.c_top + above.c_gradient * (above.bottom - above.top), below.c_top,
                             abs_tol=1e-12))


@dataclass(frozen=True)
class Geometry:
    """The user's own drawing of the site ([geometry] file: a gmsh .geo script or
    .msh mesh), as read and checked by :mod:`solver.sitefile`.

    The solver's coordinates put the footing centre at x = 0 and the footing
    level at y = 0 (``origin`` is that point in the drawing's coordinates, m).
    Depths are measured down from the footing level (m; negative above it).
    """

    file: str  # absolute path of the .geo or .msh file
    sha256: str  # of its bytes when the case was read; the mesh stage re-checks it
    origin: tuple[float, float]  # m, the footing centre at footing level in the drawing's x, y
    x_min: float  # m, extent of the soil in the solver's coordinates
    x_max: float
    y_min: float
    y_max: float
    layer_tops: tuple[float, ...]  # m below the footing level of each layer's highest point (Case.layers order)
    layer_bottoms: tuple[float, ...]  # m below the footing level of each layer's lowest point


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
    geometry: Geometry | None = None  # a drawn site; None: level layers as the keys describe
    report: ReportInfo | None = None  # [report]: project and checker for the report's heading

    # -- derived quantities used by the geometry and the bounds -------------

    def layer_tops(self) -> list[float]:
        """Depth of each layer's top below the ground surface, m."""
        tops, depth = [], 0.0
        for layer in self.layers:
            tops.append(depth)
            depth += layer.thickness if layer.thickness is not None else math.inf
        return tops

    def overburden_kPa(self) -> float:
        """Vertical effective stress at footing level beside the footing, kPa: the
        surcharge plus the weight of soil above the footing base (saturated weight
        less that of water below the water table)."""
        stress = self.ground.surcharge
        water = self.ground.water_table if self.ground.water_table is not None else math.inf
        for layer, top in zip(self.layers, self.layer_tops()):
            bottom = top + (layer.thickness if layer.thickness is not None else math.inf)
            dry = max(min(bottom, water, self.footing.embedment) - top, 0.0)
            wet = max(min(bottom, self.footing.embedment) - max(top, water), 0.0)
            saturated = layer.saturated_unit_weight if layer.saturated_unit_weight is not None else layer.unit_weight
            stress += layer.unit_weight * dry + max(saturated - WATER_UNIT_WEIGHT, 0.0) * wet
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

    def water_depth_below_base(self) -> float:
        """Depth of the water table below the footing base, m (negative: above the base;
        inf: no water table in the model)."""
        if self.ground.water_table is None:
            return math.inf
        return self.ground.water_table - self.footing.embedment

    def pore_pressure_at_base_kPa(self) -> float:
        """Hydrostatic pore pressure at the footing base level, kPa (0 above the water table)."""
        return WATER_UNIT_WEIGHT * max(0.0, -self.water_depth_below_base())

    def strata(self) -> list[Stratum]:
        """The layers below the base, split at the water table (see :class:`Stratum`).

        Pressures computed on these effective weights are effective: where the
        water table is above the base, the total contact pressure adds
        ``pore_pressure_at_base_kPa()``. For Tresca layers this is the same
        analysis as one in total stress (a hydrostatic pore pressure does not
        change the Tresca yield condition).

        A drawn site has one stratum per layer, in ``layers`` order: ``top`` is the
        depth of the layer's highest point, where c (or su) is the layer's value,
        rising by its gradient per m below that level (no water table).
        """
        if self.geometry is not None:
            return [Stratum(index, layer.name, top, bottom, davis_reduction(layer)[0] * layer.c_top_kPa,
                            davis_reduction(layer)[0] * layer.c_gradient_kPa_per_m, davis_reduction(layer)[1],
                            layer.unit_weight, False)
                    for index, (layer, top, bottom) in enumerate(zip(self.layers, self.geometry.layer_tops,
                                                                     self.geometry.layer_bottoms))]
        water = self.water_depth_below_base()
        out = []
        tops = self.layer_tops()
        for index, layer in enumerate(self.layers):
            top_in_file = tops[index]
            # the last layer runs on below the model, whatever thickness it was given
            last = index == len(self.layers) - 1
            bottom_in_file = math.inf if last or layer.thickness is None else top_in_file + layer.thickness
            top = max(top_in_file - self.footing.embedment, 0.0)
            bottom = bottom_in_file - self.footing.embedment
            if bottom <= 0.0:
                continue
            c_top = layer.c_top_kPa + layer.c_gradient_kPa_per_m * (top + self.footing.embedment - top_in_file)
            wet_weight = (layer.saturated_unit_weight if layer.saturated_unit_weight is not None
                          else layer.unit_weight) - WATER_UNIT_WEIGHT
            wet_weight = max(wet_weight, 0.0)
            factor, phi = davis_reduction(layer)
            pieces = [(top, min(bottom, water), False), (max(top, water), bottom, True)]
            for a, b, wet in pieces:
                if b > a:
                    out.append(Stratum(index, layer.name, a, b,
                                       factor * (c_top + layer.c_gradient_kPa_per_m * (a - top)),
                                       factor * layer.c_gradient_kPa_per_m, phi,
                                       wet_weight if wet else layer.unit_weight, wet))
        return out

    def required_interfaces(self) -> list[float]:
        """Depths (m below the base) of the interfaces between strata that differ: the
        model must hold these (below the mesh, the lower bound's extension elements
        carry the last stratum only). An interface where the soil goes on unchanged
        (:func:`continues`: a layer the case file splits in two) need not be inside."""
        strata = self.strata()
        return [a.bottom for a, b in zip(strata, strata[1:]) if not continues(a, b)]

    @property
    def is_weightless(self) -> bool:
        return all(layer.unit_weight == 0.0 for layer, *_ in self.layers_below_base())
