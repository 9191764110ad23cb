"""Classical closed-form bearing-capacity estimates, set beside the rigorous bracket.

These are the hand methods an engineer would use to check a strip footing:
Terzaghi (1943), Meyerhof (1963), Brinch Hansen (1970), Vesic (1973/1975) and
EN 1997-1:2004 Annex D on homogeneous ground, and Meyerhof & Hanna (1978),
Brown & Meyerhof (1969) and two "equivalent homogeneous" shortcuts on layered
ground. Each estimate is the ultimate average pressure q_u (kPa) under a strip
footing carrying a vertical central load. Where a method does not apply to the
case, the estimate carries ``pressure_kPa = None`` and a note saying why; no
number is made up.

Units: lengths in m, stresses in kPa, unit weights in kN/m^3, angles in degrees.

Bibliographic details (journal volumes, pages, table numbers) are from memory
and should be checked before they are cited. Values recalled rather than read
from the source are marked "from memory" where they are used.

Results are for checking by a qualified engineer; local codes and licensed
practice govern.

Sources
-------
Prandtl, L. (1920). Ueber die Haerte plastischer Koerper. Nachrichten der
    Gesellschaft der Wissenschaften zu Goettingen, Math.-Phys. Klasse, 74-85.
Reissner, H. (1924). Zum Erddruckproblem. Proc. 1st Int. Congress of Applied
    Mechanics, Delft, 295-311.
Terzaghi, K. (1943). Theoretical Soil Mechanics. John Wiley & Sons, New York.
Bowles, J.E. (1996). Foundation Analysis and Design, 5th ed. McGraw-Hill,
    New York (Table 4-2: Terzaghi's factors; table number from memory).
Meyerhof, G.G. (1963). Some recent research on the bearing capacity of
    foundations. Canadian Geotechnical Journal 1(1), 16-26.
Brinch Hansen, J. (1970). A revised and extended formula for bearing capacity.
    Danish Geotechnical Institute, Bulletin No. 28, 5-11.
Vesic, A.S. (1973). Analysis of ultimate loads of shallow foundations. Journal
    of the Soil Mechanics and Foundations Division, ASCE 99(SM1), 45-73.
Vesic, A.S. (1975). Bearing capacity of shallow foundations. In Winterkorn,
    H.F. & Fang, H.Y. (eds), Foundation Engineering Handbook, Van Nostrand
    Reinhold, New York, ch. 3, 121-147.
EN 1997-1:2004. Eurocode 7: Geotechnical design - Part 1: General rules.
    CEN, Brussels. Annex D (informative), D.3 and D.4.
Brown, J.D. & Meyerhof, G.G. (1969). Experimental study of bearing capacity in
    layered clays. Proc. 7th Int. Conf. on Soil Mechanics and Foundation
    Engineering, Mexico City, Vol. 2, 45-51.
Meyerhof, G.G. & Hanna, A.M. (1978). Ultimate bearing capacity of foundations
    on layered soils under inclined load. Canadian Geotechnical Journal 15(4),
    565-572.
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from solver.model import Case, Layer

# -- references, one line each, for HandEstimate.source -----------------------

SRC_PRANDTL = ("Prandtl, L. (1920), Nachr. Ges. Wiss. Goettingen, Math.-Phys. Kl., 74-85; "
               "Reissner, H. (1924), Proc. 1st Int. Congr. Appl. Mech., Delft, 295-311")
SRC_TERZAGHI = ("Terzaghi, K. (1943). Theoretical Soil Mechanics. Wiley, New York; N_gamma as "
                "tabulated in Bowles, J.E. (1996). Foundation Analysis and Design, 5th ed., "
                "McGraw-Hill, Table 4-2 (table number from memory)")
SRC_MEYERHOF = ("Meyerhof, G.G. (1963). Some recent research on the bearing capacity of "
                "foundations. Canadian Geotechnical Journal 1(1), 16-26")
SRC_HANSEN = ("Brinch Hansen, J. (1970). A revised and extended formula for bearing capacity. "
              "Danish Geotechnical Institute, Bulletin No. 28, 5-11")
SRC_VESIC = ("Vesic, A.S. (1973). Analysis of ultimate loads of shallow foundations. J. Soil "
             "Mech. Found. Div., ASCE 99(SM1), 45-73; Vesic, A.S. (1975). Bearing capacity of "
             "shallow foundations. In Winterkorn & Fang (eds), Foundation Engineering Handbook, "
             "Van Nostrand Reinhold, ch. 3")
SRC_EC7 = ("EN 1997-1:2004 Eurocode 7: Geotechnical design - Part 1: General rules, "
           "Annex D (informative)")
SRC_MEYERHOF_HANNA = ("Meyerhof, G.G. & Hanna, A.M. (1978). Ultimate bearing capacity of "
                      "foundations on layered soils under inclined load. Canadian Geotechnical "
                      "Journal 15(4), 565-572")
SRC_BROWN_MEYERHOF = ("Brown, J.D. & Meyerhof, G.G. (1969). Experimental study of bearing "
                      "capacity in layered clays. Proc. 7th Int. Conf. Soil Mech. Found. Eng., "
                      "Mexico City, Vol. 2, 45-51 (formula from memory)")
SRC_SHORTCUT = "common practice (equivalent homogeneous soil); factors: " + SRC_MEYERHOF

METHODS = ("terzaghi", "meyerhof", "hansen", "vesic", "ec7")

# Depth below the base taken as the zone a strip footing's shear mechanism
# reaches (common practice: about 2B for a strip).
INFLUENCE_DEPTH_WIDTHS = 2.0
# Depth below the base over which the averaging shortcut averages (the brief: B).
AVERAGING_DEPTH_WIDTHS = 1.0

_PHI_ZERO_RAD = 1e-9  # below this the phi -> 0 limits of Nc are used

# Terzaghi's factors as tabulated by Bowles (1996), Table 4-2 (values from
# memory). Terzaghi (1943) gave N_gamma only as a curve; Bowles' N_gamma comes
# from N_gamma = (tan(phi)/2) (K_pgamma / cos^2(phi) - 1) with his back-figured
# K_pgamma. Nc and Nq are printed for reference; the code computes them from
# Terzaghi's closed forms, which reproduce these columns.
TERZAGHI_TABLE_PHI_DEG = (0.0, 5.0, 10.0, 15.0, 20.0, 25.0, 30.0, 34.0, 35.0, 40.0, 45.0, 48.0, 50.0)
TERZAGHI_TABLE_NC = (5.7, 7.3, 9.6, 12.9, 17.7, 25.1, 37.2, 52.6, 57.8, 95.7, 172.3, 258.3, 347.5)
TERZAGHI_TABLE_NQ = (1.0, 1.6, 2.7, 4.4, 7.4, 12.7, 22.5, 36.5, 41.4, 81.3, 173.3, 287.9, 415.1)
TERZAGHI_TABLE_NGAMMA = (0.0, 0.5, 1.2, 2.5, 5.0, 9.7, 19.7, 36.0, 42.4, 100.4, 297.5, 780.1, 1153.2)


@dataclass(frozen=True)
class HandEstimate:
    """One closed-form estimate of the ultimate average pressure under the footing.

    Attributes
    ----------
    method : str
        Short name, e.g. "Terzaghi (1943), general shear".
    source : str
        The full reference.
    pressure_kPa : float or None
        Ultimate average pressure q_u (kPa) under the strip for a vertical
        central load; None where the method does not apply.
    factors : dict[str, float]
        Bearing-capacity factors "Nc", "Nq", "Ngamma" and any shape or depth
        factors used ("sc", "dc", ...); empty where the method does not apply.
    note : str
        Why the method does not apply, or the assumptions made.
    """

    method: str
    source: str
    pressure_kPa: float | None
    factors: dict[str, float]
    note: str


# -- bearing-capacity factors --------------------------------------------------

def _check_phi(phi_deg: float, max_deg: float = 90.0, inclusive: bool = False) -> float:
    """phi_deg as a float, or ValueError naming the value and the allowed range."""
    phi = float(phi_deg)
    ok = math.isfinite(phi) and phi >= 0.0 and (phi <= max_deg if inclusive else phi < max_deg)
    if not ok:
        limit = f"from 0 to {max_deg:g}" if inclusive else f"from 0 to below {max_deg:g}"
        raise ValueError(f"phi_deg: {phi_deg!r} is not allowed; must be a number {limit} (degrees)")
    return phi


def _nq_reissner(phi_rad: float) -> float:
    """Nq = e^(pi tan phi) tan^2(45 + phi/2) (Reissner 1924)."""
    return math.exp(math.pi * math.tan(phi_rad)) * math.tan(math.pi / 4 + phi_rad / 2) ** 2


def _nc_prandtl(nq: float, phi_rad: float) -> float:
    """Nc = (Nq - 1) cot phi (Prandtl 1920), pi + 2 in the limit phi -> 0."""
    return math.pi + 2.0 if phi_rad < _PHI_ZERO_RAD else (nq - 1.0) / math.tan(phi_rad)


def terzaghi_factors(phi_deg: float) -> dict[str, float]:
    """Terzaghi's (1943) bearing-capacity factors for general shear.

    Nc and Nq are Terzaghi's closed forms (Terzaghi 1943, Theoretical Soil
    Mechanics, Wiley):

    * Nq = a^2 / (2 cos^2(45 + phi/2)), a = exp((3 pi/4 - phi/2) tan phi)
    * Nc = (Nq - 1) cot phi, and 1.5 pi + 1 = 5.71 at phi = 0.

    Terzaghi gave N_gamma only as a curve. N_gamma here is the table printed by
    Bowles, J.E. (1996), Foundation Analysis and Design, 5th ed., McGraw-Hill,
    Table 4-2 (values and table number from memory), which Bowles computed from
    N_gamma = (tan phi / 2)(K_pgamma / cos^2 phi - 1). The table lists phi =
    0, 5, ..., 30, 34, 35, 40, 45, 48, 50 degrees; between entries N_gamma is
    interpolated linearly in phi. Beyond 50 degrees there is no table value and
    a ValueError is raised.

    Parameters
    ----------
    phi_deg : float
        Friction angle, degrees, 0 to 50.

    Returns
    -------
    dict
        {"Nc", "Nq", "Ngamma"}.

    Examples
    --------
    >>> f = terzaghi_factors(30.0)
    >>> round(f["Nc"], 1), round(f["Nq"], 1), f["Ngamma"]
    (37.2, 22.5, 19.7)
    >>> round(terzaghi_factors(0.0)["Nc"], 2)
    5.71
    """
    phi = _check_phi(phi_deg, 50.0, inclusive=True)  # Terzaghi's table ends at 50 degrees
    phi_rad = math.radians(phi)
    a = math.exp((0.75 * math.pi - phi_rad / 2) * math.tan(phi_rad))
    nq = a * a / (2.0 * math.cos(math.pi / 4 + phi_rad / 2) ** 2)
    nc = 1.5 * math.pi + 1.0 if phi_rad < _PHI_ZERO_RAD else (nq - 1.0) / math.tan(phi_rad)
    ngamma = float(np.interp(phi, TERZAGHI_TABLE_PHI_DEG, TERZAGHI_TABLE_NGAMMA))
    return {"Nc": nc, "Nq": nq, "Ngamma": ngamma}


def bearing_factors(method: str, phi_deg: float) -> dict[str, float]:
    """Bearing-capacity factors Nc, Nq, N_gamma of one method.

    For every method but Terzaghi's, Nq = e^(pi tan phi) tan^2(45 + phi/2)
    (Reissner 1924) and Nc = (Nq - 1) cot phi (Prandtl 1920), with Nc = pi + 2
    at phi = 0. N_gamma differs:

    * "meyerhof": (Nq - 1) tan(1.4 phi) -- Meyerhof (1963), Can. Geotech. J. 1(1).
    * "hansen": 1.5 (Nq - 1) tan phi -- Brinch Hansen (1970), DGI Bulletin 28.
    * "vesic": 2 (Nq + 1) tan phi -- Vesic (1973), J. SMFD ASCE 99(SM1); Vesic (1975).
    * "ec7": 2 (Nq - 1) tan phi, for a rough base (delta >= phi'/2), as
      EN 1997-1:2004 Annex D.4 states (from memory).
    * "terzaghi": :func:`terzaghi_factors`.

    Parameters
    ----------
    method : str
        One of "terzaghi", "meyerhof", "hansen", "vesic", "ec7".
    phi_deg : float
        Friction angle, degrees (0 to below 90; 0 to 50 for Terzaghi).

    Returns
    -------
    dict
        {"Nc", "Nq", "Ngamma"}.

    Examples
    --------
    >>> f = bearing_factors("meyerhof", 30.0)
    >>> round(f["Nq"], 2), round(f["Nc"], 2), round(f["Ngamma"], 2)
    (18.4, 30.14, 15.67)
    >>> round(bearing_factors("ec7", 0.0)["Nc"], 4)
    5.1416
    """
    if method not in METHODS:
        raise ValueError(f"method: {method!r} is not allowed; must be one of {', '.join(METHODS)}")
    if method == "terzaghi":
        return terzaghi_factors(phi_deg)
    phi_rad = math.radians(_check_phi(phi_deg))
    nq = _nq_reissner(phi_rad)
    nc = _nc_prandtl(nq, phi_rad)
    tan_phi = math.tan(phi_rad)
    if method == "meyerhof":
        ngamma = (nq - 1.0) * math.tan(1.4 * phi_rad)
    elif method == "hansen":
        ngamma = 1.5 * (nq - 1.0) * tan_phi
    elif method == "vesic":
        ngamma = 2.0 * (nq + 1.0) * tan_phi
    else:  # ec7
        ngamma = 2.0 * (nq - 1.0) * tan_phi
    return {"Nc": nc, "Nq": nq, "Ngamma": ngamma}


# -- depth factors (strip: all shape factors are 1) ------------------------------

def meyerhof_depth_factors(phi_deg: float, depth_over_width: float) -> dict[str, float]:
    """Meyerhof (1963) depth factors, Can. Geotech. J. 1(1), 16-26 (from memory).

    dc = 1 + 0.2 sqrt(Kp) D/B; dq = dgamma = 1 + 0.1 sqrt(Kp) D/B for
    phi > 10 degrees and 1 for phi = 0, with Kp = tan^2(45 + phi/2). The paper
    gives no value for 0 < phi <= 10 degrees; this module uses 1 there, the
    lower (phi = 0) choice.

    >>> meyerhof_depth_factors(0.0, 0.5)
    {'dc': 1.1, 'dq': 1.0, 'dgamma': 1.0}
    """
    root_kp = math.tan(math.radians(45.0 + phi_deg / 2.0))
    dc = 1.0 + 0.2 * root_kp * depth_over_width
    dq = 1.0 + 0.1 * root_kp * depth_over_width if phi_deg > 10.0 else 1.0
    return {"dc": dc, "dq": dq, "dgamma": dq}


def _hansen_k(depth_over_width: float) -> float:
    """k = D/B for D/B <= 1, arctan(D/B) (radians) beyond (Brinch Hansen 1970)."""
    return depth_over_width if depth_over_width <= 1.0 else math.atan(depth_over_width)


def hansen_depth_factors(phi_deg: float, depth_over_width: float) -> dict[str, float]:
    """Brinch Hansen (1970) depth factors, DGI Bulletin 28 (from memory).

    dc = 1 + 0.4 k; dq = 1 + 2 tan phi (1 - sin phi)^2 k; dgamma = 1, with
    k = D/B for D/B <= 1 and arctan(D/B) beyond (so k jumps at D/B = 1, as in
    the source). For phi = 0 this is Hansen's 5.14 su (1 + d'c) + q, d'c = 0.4k.

    >>> hansen_depth_factors(0.0, 0.5)
    {'dc': 1.2, 'dq': 1.0, 'dgamma': 1.0}
    """
    k = _hansen_k(depth_over_width)
    phi_rad = math.radians(phi_deg)
    dq = 1.0 + 2.0 * math.tan(phi_rad) * (1.0 - math.sin(phi_rad)) ** 2 * k
    return {"dc": 1.0 + 0.4 * k, "dq": dq, "dgamma": 1.0}


def vesic_depth_factors(phi_deg: float, depth_over_width: float) -> dict[str, float]:
    """Vesic (1973, 1975) depth factors (from memory).

    Vesic took Brinch Hansen's dq = 1 + 2 tan phi (1 - sin phi)^2 k and
    dgamma = 1, and dc = dq - (1 - dq) / (Nc tan phi) for phi > 0,
    dc = 1 + 0.4 k for phi = 0 (k as in :func:`hansen_depth_factors`).
    """
    out = hansen_depth_factors(phi_deg, depth_over_width)
    phi_rad = math.radians(phi_deg)
    if phi_rad >= _PHI_ZERO_RAD:
        nc = bearing_factors("vesic", phi_deg)["Nc"]
        out["dc"] = out["dq"] - (1.0 - out["dq"]) / (nc * math.tan(phi_rad))
    return out


def _strip_pressure(c: float, q: float, gamma: float, width: float,
                    f: dict[str, float], d: dict[str, float] | None = None) -> float:
    """q_u = c Nc dc + q Nq dq + 0.5 gamma B Ngamma dgamma, kPa (strip: s = 1)."""
    d = d or {"dc": 1.0, "dq": 1.0, "dgamma": 1.0}
    return (c * f["Nc"] * d["dc"] + q * f["Nq"] * d["dq"]
            + 0.5 * gamma * width * f["Ngamma"] * d["dgamma"])


# -- Terzaghi --------------------------------------------------------------------

_TERZAGHI_SHAPES = ("strip", "square", "circle", "rectangle")


def terzaghi_footing(phi_deg: float, c_kPa: float, gamma: float, B: float, q: float,
                     shape: str = "strip", L: float | None = None,
                     local_shear: bool = False) -> HandEstimate:
    """Terzaghi's (1943) ultimate bearing pressure of a footing, kPa.

    Terzaghi, K. (1943), Theoretical Soil Mechanics, Wiley, New York:

    * strip: q_u = c Nc + q Nq + 0.5 gamma B Ngamma
    * square: q_u = 1.3 c Nc + q Nq + 0.4 gamma B Ngamma
    * circle (B = diameter): q_u = 1.3 c Nc + q Nq + 0.3 gamma B Ngamma
    * rectangle B x L (not Terzaghi's; common practice, running between his
      strip and square): q_u = (1 + 0.3 B/L) c Nc + q Nq + 0.5 (1 - 0.2 B/L) gamma B Ngamma

    Local shear (Terzaghi 1943): c* = 2/3 c and tan phi* = 2/3 tan phi, with
    the factors taken at phi*. Factors from :func:`terzaghi_factors`. Terzaghi
    counts the soil above the base only as the surcharge q (no depth factors)
    and assumes a rough base (common practice).

    Parameters
    ----------
    phi_deg : float
        Friction angle, degrees (0 to 50 after any local-shear reduction).
    c_kPa : float
        Cohesion (or su with phi = 0), kPa.
    gamma : float
        Unit weight of the soil below the base, kN/m^3.
    B : float
        Width (diameter of a circle), m.
    q : float
        Overburden pressure at footing level, kPa.
    shape : {"strip", "square", "circle", "rectangle"}
    L : float, optional
        Length of a rectangle, m (L >= B).
    local_shear : bool
        Use Terzaghi's reduced strength for local shear.

    Examples
    --------
    >>> round(terzaghi_footing(0.0, 50.0, 18.0, 2.0, 0.0).pressure_kPa, 1)
    285.6
    """
    if shape not in _TERZAGHI_SHAPES:
        raise ValueError(f"shape: {shape!r} is not allowed; must be one of {', '.join(_TERZAGHI_SHAPES)}")
    for key, value in (("c_kPa", c_kPa), ("gamma", gamma), ("q", q)):
        if not (math.isfinite(value) and value >= 0.0):
            raise ValueError(f"{key}: {value!r} is not allowed; must be a number >= 0")
    if not (math.isfinite(B) and B > 0.0):
        raise ValueError(f"B: {B!r} is not allowed; must be a number > 0 (m)")
    if shape == "rectangle" and (L is None or not math.isfinite(L) or L < B):
        raise ValueError(f"L: {L!r} is not allowed; a rectangle needs a length L >= B = {B} (m)")
    phi_deg = float(phi_deg)
    c_use, phi_use = float(c_kPa), phi_deg
    if local_shear:
        _check_phi(phi_deg)
        c_use = 2.0 / 3.0 * c_use
        phi_use = math.degrees(math.atan(2.0 / 3.0 * math.tan(math.radians(phi_deg))))
    f = terzaghi_factors(phi_use)
    if shape == "strip":
        sc, sgamma = 1.0, 1.0
    elif shape == "square":
        sc, sgamma = 1.3, 0.8  # 1.3 c Nc, 0.4 gamma B Ngamma = 0.8 x 0.5
    elif shape == "circle":
        sc, sgamma = 1.3, 0.6  # 0.3 gamma B Ngamma = 0.6 x 0.5
    else:
        sc, sgamma = 1.0 + 0.3 * B / L, 1.0 - 0.2 * B / L
    pressure = sc * c_use * f["Nc"] + q * f["Nq"] + 0.5 * sgamma * gamma * B * f["Ngamma"]
    factors = dict(f)
    notes = ["soil above the base counts only as surcharge q (Terzaghi has no depth factors)"]
    if shape != "strip":
        factors.update(sc=sc, sgamma=sgamma)
    if shape == "rectangle":
        notes.append("rectangle factors are common practice, not Terzaghi's")
    if local_shear:
        factors.update(phi_local_deg=phi_use, c_local_kPa=c_use)
        notes.insert(0, f"local shear: c* = 2/3 c = {c_use:.3g} kPa, "
                        f"tan phi* = 2/3 tan phi, phi* = {phi_use:.2f} deg")
    name = f"Terzaghi (1943), {'local' if local_shear else 'general'} shear"
    if shape != "strip":
        name += f", {shape}"
    return HandEstimate(name, SRC_TERZAGHI, float(pressure), factors, "; ".join(notes))


# -- reading the ground ------------------------------------------------------------

@dataclass(frozen=True)
class _Soil:
    """Strength of one soil as a hand method sees it."""

    name: str
    tresca: bool
    c_kPa: float  # c' (mohr-coulomb) or su at the top of the part considered (tresca)
    phi_deg: float  # 0 for tresca
    gamma: float  # kN/m^3
    gradient: float  # kPa/m (tresca)


def _soil(layer: Layer, c_top: float) -> _Soil:
    if layer.is_tresca:
        return _Soil(layer.name, True, c_top, 0.0, layer.unit_weight, layer.strength_gradient)
    return _Soil(layer.name, False, layer.cohesion, layer.friction_angle, layer.unit_weight, 0.0)


def _same_ground(a: tuple[Layer, float, float, float], b: tuple[Layer, float, float, float]) -> bool:
    """True if layer ``b`` continues layer ``a`` with the same properties (and,
    for Tresca, the same straight su profile)."""
    la, top_a, bottom_a, c_a = a
    lb, _, _, c_b = b
    close = lambda x, y: math.isclose(x, y, rel_tol=1e-9, abs_tol=1e-9)  # noqa: E731
    if la.model != lb.model or not close(la.unit_weight, lb.unit_weight):
        return False
    if la.is_tresca:
        return (close(la.strength_gradient, lb.strength_gradient)
                and close(c_b, c_a + la.strength_gradient * (bottom_a - top_a)))
    return close(la.cohesion, lb.cohesion) and close(la.friction_angle, lb.friction_angle)


def _homogeneous(case: Case) -> tuple[_Soil | None, str]:
    """The one soil below the base, with a note; or None and why not."""
    below = case.layers_below_base()
    first = below[0]
    soil = _soil(first[0], first[3])
    notes = []
    if len(below) > 1:
        if not all(_same_ground(a, b) for a, b in zip(below, below[1:])):
            names = ", ".join(f"'{layer.name}'" for layer, *_ in below)
            return None, (f"layered ground ({len(below)} layers below the base: {names}); "
                          "this method is for homogeneous ground - see the layered methods")
        notes.append(f"the {len(below)} layers below the base have the same properties: "
                     "taken as one")
    if soil.tresca:
        notes.append(f"phi = 0, su = {soil.c_kPa:.4g} kPa at the base")
        if soil.gradient > 0.0:
            notes.append(f"the method ignores the su gradient of {soil.gradient:.4g} kPa/m "
                         "(conservative: su rises with depth)")
    else:
        notes.append(f"c' = {soil.c_kPa:.4g} kPa, phi' = {soil.phi_deg:.4g} deg")
    return soil, "; ".join(notes)


def _none(method: str, source: str, why: str) -> HandEstimate:
    return HandEstimate(method, source, None, {}, why)


# -- homogeneous methods ----------------------------------------------------------

def _terzaghi_on(case: Case, soil: _Soil | None, why: str, local_shear: bool) -> HandEstimate:
    name = f"Terzaghi (1943), {'local' if local_shear else 'general'} shear"
    if soil is None:
        return _none(name, SRC_TERZAGHI, why)
    phi_used = soil.phi_deg if not local_shear else math.degrees(
        math.atan(2.0 / 3.0 * math.tan(math.radians(soil.phi_deg))))
    if phi_used > 50.0:
        return _none(name, SRC_TERZAGHI, f"phi = {phi_used:.4g} deg is beyond Terzaghi's "
                                         "table (0 to 50 deg)")
    est = terzaghi_footing(soil.phi_deg, soil.c_kPa, soil.gamma, case.footing.width,
                           case.overburden_kPa(), "strip", local_shear=local_shear)
    notes = [why, est.note]
    if case.footing.base == "smooth" and soil.phi_deg > 0.0 and soil.gamma > 0.0:
        notes.append("Terzaghi's mechanism assumes a rough base; this footing is smooth "
                     "(common practice)")
    return HandEstimate(est.method, est.source, est.pressure_kPa, est.factors, "; ".join(notes))


def _general_on(case: Case, soil: _Soil | None, why: str, method: str) -> HandEstimate:
    """Meyerhof, Hansen or Vesic on homogeneous ground, strip, with depth factors."""
    name, source, depth = {
        "meyerhof": ("Meyerhof (1963)", SRC_MEYERHOF, meyerhof_depth_factors),
        "hansen": ("Brinch Hansen (1970)", SRC_HANSEN, hansen_depth_factors),
        "vesic": ("Vesic (1973/1975)", SRC_VESIC, vesic_depth_factors),
    }[method]
    if soil is None:
        return _none(name, source, why)
    width, embedment = case.footing.width, case.footing.embedment
    f = bearing_factors(method, soil.phi_deg)
    d = depth(soil.phi_deg, embedment / width)
    pressure = _strip_pressure(soil.c_kPa, case.overburden_kPa(), soil.gamma, width, f, d)
    factors = {**f, "sc": 1.0, "sq": 1.0, "sgamma": 1.0, **d}
    notes = [why, "strip: shape factors 1"]
    notes.append(f"depth factors for D/B = {embedment / width:.3g}" if embedment > 0.0
                 else "surface footing: depth factors 1")
    return HandEstimate(name, source, float(pressure), factors, "; ".join(notes))


def _ec7_undrained(case: Case, soil: _Soil | None, why: str) -> HandEstimate:
    """EN 1997-1:2004 Annex D.3: R/A' = (pi + 2) cu bc sc ic + q (strip, vertical: 1)."""
    name = "EN 1997-1:2004 Annex D.3, undrained"
    source = SRC_EC7 + ", D.3"
    if soil is None:
        return _none(name, source, why)
    if not soil.tresca:
        return _none(name, source, "the ground is Mohr-Coulomb (drained c', phi'); D.3 is the "
                                   "undrained (Tresca) check - see D.4")
    pressure = (math.pi + 2.0) * soil.c_kPa + case.overburden_kPa()
    factors = {"Nc": math.pi + 2.0, "Nq": 1.0, "Ngamma": 0.0, "bc": 1.0, "sc": 1.0, "ic": 1.0}
    note = f"{why}; strip, vertical load: bc = sc = ic = 1; Annex D has no depth factors"
    return HandEstimate(name, source, float(pressure), factors, note)


def _ec7_drained(case: Case, soil: _Soil | None, why: str) -> HandEstimate:
    """EN 1997-1:2004 Annex D.4: R/A' = c' Nc + q' Nq + 0.5 gamma' B' Ngamma (b, s, i = 1)."""
    name = "EN 1997-1:2004 Annex D.4, drained"
    source = SRC_EC7 + ", D.4"
    if soil is None:
        return _none(name, source, why)
    if soil.tresca:
        return _none(name, source, "the ground is undrained (Tresca); D.4 is the drained "
                                   "check - see D.3")
    f = bearing_factors("ec7", soil.phi_deg)
    pressure = _strip_pressure(soil.c_kPa, case.overburden_kPa(), soil.gamma, case.footing.width, f)
    factors = {**f, "bc": 1.0, "bq": 1.0, "bgamma": 1.0, "sc": 1.0, "sq": 1.0, "sgamma": 1.0,
               "ic": 1.0, "iq": 1.0, "igamma": 1.0}
    notes = [why, "strip, vertical load, level base: b = s = i = 1",
             "Annex D has no depth factors"]
    if case.footing.base == "smooth" and soil.phi_deg > 0.0 and soil.gamma > 0.0:
        notes.append("the Annex's Ngamma is for a rough base (delta >= phi'/2); this footing "
                     "is smooth, so the gamma term is likely too high")
    return HandEstimate(name, source, float(pressure), factors, "; ".join(notes))


# -- layered ground ------------------------------------------------------------

def _two_layers(case: Case, method: str, source: str
                ) -> tuple[tuple[_Soil, _Soil, float] | None, HandEstimate | None]:
    """(top soil, lower soil, H) for a two-layer method, or the None estimate."""
    below = case.layers_below_base()
    if len(below) < 2 or _homogeneous(case)[0] is not None:
        return None, _none(method, source, "homogeneous ground below the base: a two-layer "
                                           "method does not apply - see the homogeneous methods")
    zone = INFLUENCE_DEPTH_WIDTHS * case.footing.width
    if len(below) > 2 and below[2][1] < zone:
        names = ", ".join(f"'{layer.name}'" for layer, top, *_ in below if top < zone)
        return None, _none(method, source, f"more than two layers within {INFLUENCE_DEPTH_WIDTHS:g}B "
                                           f"= {zone:.3g} m below the base ({names}); the "
                                           "method is for two layers")
    (l1, _, h, c1), (l2, _, _, c2) = below[0], below[1]
    return (_soil(l1, c1), _soil(l2, c2), h), None


def _meyerhof_hanna(case: Case) -> HandEstimate:
    """Meyerhof & Hanna (1978), Can. Geotech. J. 15(4): strong layer over weak, strip.

    q_u = q_b + 2 ca H / B + (gamma1 H^2 + 2 q H) Ks tan(phi1) / B - gamma1 H <= q_t

    q_b = c2 Nc2 + (q + gamma1 H) Nq2 + 0.5 gamma2 B Ngamma2 (a footing at the interface)
    q_t = c1 Nc1 + q Nq1 + 0.5 gamma1 B Ngamma1 (a thick top layer)

    with Meyerhof's (1963) factors and, for a strip, shape factors 1; no depth
    factors, as the method is usually stated (from memory). The published form
    has gamma1 Df where the overburden q (surcharge + soil above the base)
    stands here. The strong-over-weak test is q2/q1 < 1, q_i = c_i Nc_i +
    0.5 gamma_i B Ngamma_i. Sand over clay and strong clay over weak clay are
    the special cases phi2 = 0 and phi1 = phi2 = 0 of this one formula.

    Ks and ca/c1 come from charts in the paper, which are not reproduced here.
    In their place (approximations from memory, not the charts):

    * Ks = tan^2(45 + phi1/2): the punched planes taken in Rankine's passive
      state with full friction (delta = phi1), from Meyerhof & Hanna's
      construction Ks tan(phi1) = Kp tan(delta); no dependence on q2/q1.
    * ca/c1 = 0.6 + 0.4 q2/q1: a straight line between the chart's ends as
      recalled (about 0.6 at q2/q1 = 0, 1 at q2/q1 = 1).
    """
    method = "Meyerhof & Hanna (1978), strong over weak"
    found, none = _two_layers(case, method, SRC_MEYERHOF_HANNA)
    if found is None:
        return none
    top, low, h = found
    width, q = case.footing.width, case.overburden_kPa()
    f1 = bearing_factors("meyerhof", top.phi_deg)
    f2 = bearing_factors("meyerhof", low.phi_deg)
    q1 = top.c_kPa * f1["Nc"] + 0.5 * top.gamma * width * f1["Ngamma"]
    q2 = low.c_kPa * f2["Nc"] + 0.5 * low.gamma * width * f2["Ngamma"]
    if q1 <= 0.0:
        return _none(method, SRC_MEYERHOF_HANNA, f"the top layer '{top.name}' has no strength at "
                                                 "the surface (c = 0 and gamma = 0)")
    ratio = q2 / q1
    if ratio >= 1.0:
        return _none(method, SRC_MEYERHOF_HANNA,
                     f"the top layer '{top.name}' is not the stronger (q2/q1 = {ratio:.3g} >= 1); "
                     "the strong-over-weak formula does not apply")
    q_top = _strip_pressure(top.c_kPa, q, top.gamma, width, f1)
    q_base = _strip_pressure(low.c_kPa, q + top.gamma * h, low.gamma, width, f2)
    ca_over_c1 = 0.6 + 0.4 * ratio
    ks = math.tan(math.radians(45.0 + top.phi_deg / 2.0)) ** 2
    punching = (2.0 * ca_over_c1 * top.c_kPa * h / width
                + (top.gamma * h * h + 2.0 * q * h) * ks * math.tan(math.radians(top.phi_deg)) / width
                - top.gamma * h)
    formula = q_base + punching
    pressure = min(formula, q_top)
    factors = {"Nc": f1["Nc"], "Nq": f1["Nq"], "Ngamma": f1["Ngamma"],
               "Nc_2": f2["Nc"], "Nq_2": f2["Nq"], "Ngamma_2": f2["Ngamma"],
               "q2_over_q1": ratio, "Ks": ks, "ca_over_c1": ca_over_c1, "H_over_B": h / width}
    notes = [f"top '{top.name}' over '{low.name}', H = {h:.3g} m below the base",
             "Ks = tan^2(45 + phi1/2) and ca/c1 = 0.6 + 0.4 q2/q1 are approximations from "
             "memory, not the paper's charts",
             "Meyerhof (1963) factors; strip: shape factors 1; no depth factors",
             "overburden q replaces gamma1 Df in the published formula"]
    if formula >= q_top:
        notes.append(f"weak layer deep enough (H/B = {h / width:.3g}): the top-layer value q_t governs")
    if (top.tresca and top.gradient > 0.0) or (low.tresca and low.gradient > 0.0):
        notes.append("su taken at each layer's top; the su gradient is ignored (conservative)")
    if case.layers_below_base()[2:]:
        notes.append(f"layers deeper than {INFLUENCE_DEPTH_WIDTHS:g}B below the base are ignored")
    return HandEstimate(method, SRC_MEYERHOF_HANNA, float(pressure), factors, "; ".join(notes))


def _brown_meyerhof(case: Case) -> HandEstimate:
    """Brown & Meyerhof (1969): stiff clay (su1) over soft clay (su2), strip (from memory).

    q_u = su1 Nc + q, Nc = 1.5 H/B + 5.14 su2/su1 <= 5.14 (su2/su1 < 1), with
    5.14 taken as pi + 2. H is the depth of the interface below the base.
    Proc. 7th ICSMFE, Mexico City, Vol. 2, 45-51; formula recalled, not checked
    against the paper.
    """
    method = "Brown & Meyerhof (1969), stiff clay over soft clay"
    found, none = _two_layers(case, method, SRC_BROWN_MEYERHOF)
    if found is None:
        return none
    top, low, h = found
    if not (top.tresca and low.tresca):
        kinds = " over ".join("undrained clay (Tresca)" if s.tresca else "Mohr-Coulomb soil"
                              for s in (top, low))
        return _none(method, SRC_BROWN_MEYERHOF, f"the method is for two undrained clay (Tresca) "
                                                 f"layers; here: {kinds}")
    if top.c_kPa <= low.c_kPa:
        return _none(method, SRC_BROWN_MEYERHOF,
                     f"su1 = {top.c_kPa:.4g} kPa is not above su2 = {low.c_kPa:.4g} kPa (soft over "
                     "stiffer clay); the formula covers a stiff layer over a soft one")
    width = case.footing.width
    ratio = low.c_kPa / top.c_kPa
    nc = min(1.5 * h / width + (math.pi + 2.0) * ratio, math.pi + 2.0)
    pressure = top.c_kPa * nc + case.overburden_kPa()
    notes = [f"su1 = {top.c_kPa:.4g} kPa ('{top.name}') over su2 = {low.c_kPa:.4g} kPa "
             f"('{low.name}'), H = {h:.3g} m below the base", "formula from memory"]
    if nc >= math.pi + 2.0:
        notes.append(f"soft layer deep enough (H/B = {h / width:.3g}): the top-layer value governs")
    if top.gradient > 0.0 or low.gradient > 0.0:
        notes.append("su taken at each layer's top; the su gradient is ignored (conservative)")
    factors = {"Nc": nc, "Nq": 1.0, "Ngamma": 0.0, "su2_over_su1": ratio, "H_over_B": h / width}
    return HandEstimate(method, SRC_BROWN_MEYERHOF, float(pressure), factors, "; ".join(notes))


def _meyerhof_on(case: Case, c: float, phi_deg: float, gamma: float) -> tuple[float, dict[str, float]]:
    """Meyerhof (1963) strip pressure with depth factors, and the factors used."""
    width = case.footing.width
    f = bearing_factors("meyerhof", phi_deg)
    d = meyerhof_depth_factors(phi_deg, case.footing.embedment / width)
    return _strip_pressure(c, case.overburden_kPa(), gamma, width, f, d), {**f, **d}


def _weakest_layer(case: Case) -> HandEstimate:
    """Equivalent homogeneous soil: the weakest layer within 2B below the base.

    Each layer whose top lies within the zone is taken alone as homogeneous
    ground (Tresca: the lowest su it has inside the zone) and given Meyerhof's
    (1963) strip pressure with depth factors; the lowest governs. Common
    practice; it ignores any help from stronger layers.
    """
    method = f"Equivalent homogeneous: weakest layer within {INFLUENCE_DEPTH_WIDTHS:g}B"
    zone = INFLUENCE_DEPTH_WIDTHS * case.footing.width
    best: tuple[float, dict[str, float], _Soil] | None = None
    for layer, top, bottom, c_top in case.layers_below_base():
        if top >= zone:
            break
        soil = _soil(layer, c_top)
        c = min(c_top, c_top + soil.gradient * (min(bottom, zone) - top)) if soil.tresca else soil.c_kPa
        pressure, factors = _meyerhof_on(case, c, soil.phi_deg, soil.gamma)
        if best is None or pressure < best[0]:
            best = (pressure, factors, soil)
    pressure, factors, soil = best
    note = (f"weakest layer within {zone:.3g} m below the base: '{soil.name}', taken as "
            "homogeneous; Meyerhof (1963) factors with depth factors; stronger layers ignored")
    if soil.tresca and soil.gradient > 0.0:
        note += "; su at the layer's top, gradient ignored"
    return HandEstimate(method, SRC_SHORTCUT, float(pressure), factors, note)


def _averaged(case: Case) -> HandEstimate:
    """Equivalent homogeneous soil: thickness-weighted average c, tan(phi), gamma
    over B below the base, then Meyerhof's (1963) strip pressure with depth
    factors. Common practice. Tresca su is averaged over its linear profile.
    """
    method = f"Equivalent homogeneous: average over {AVERAGING_DEPTH_WIDTHS:g}B"
    zone = AVERAGING_DEPTH_WIDTHS * case.footing.width
    rows = []  # (thickness in zone, mean c, tan phi, gamma, tresca)
    for layer, top, bottom, c_top in case.layers_below_base():
        if top >= zone:
            break
        t = min(bottom, zone) - top
        soil = _soil(layer, c_top)
        c_mean = c_top + soil.gradient * t / 2.0 if soil.tresca else soil.c_kPa
        rows.append((t, c_mean, math.tan(math.radians(soil.phi_deg)), soil.gamma, soil.tresca))
    data = np.array([r[:4] for r in rows], dtype=float)
    weights = data[:, 0] / zone
    c_bar, tan_bar, gamma_bar = (weights[:, None] * data[:, 1:]).sum(axis=0)
    phi_bar = math.degrees(math.atan(tan_bar))
    pressure, factors = _meyerhof_on(case, float(c_bar), phi_bar, float(gamma_bar))
    factors.update(c_avg_kPa=float(c_bar), phi_avg_deg=phi_bar, gamma_avg=float(gamma_bar))
    notes = [f"average over {zone:.3g} m below the base of {len(rows)} layer(s): "
             f"c = {c_bar:.4g} kPa, phi = {phi_bar:.4g} deg, gamma = {gamma_bar:.4g} kN/m^3",
             "Meyerhof (1963) factors with depth factors"]
    if len({r[4] for r in rows}) > 1:
        notes.append("mixes drained (c', phi') and undrained (su) strengths")
    return HandEstimate(method, SRC_SHORTCUT, float(pressure), factors, "; ".join(notes))


# -- the list the program prints ----------------------------------------------------

def hand_methods(case: Case) -> list[HandEstimate]:
    """Every hand method for the case's strip footing under a vertical central load.

    Homogeneous-ground methods (one layer below the base, or all layers below
    it alike): Terzaghi (1943) general and local shear, Meyerhof (1963), Brinch
    Hansen (1970), Vesic (1973/1975) -- each with its depth factors where the
    embedment is > 0 -- and EN 1997-1:2004 Annex D.3 (undrained, Tresca) and
    D.4 (drained, Mohr-Coulomb), which has no depth factors. Mohr-Coulomb
    layers use c', phi'; Tresca layers use phi = 0 and su at the base.

    Layered-ground methods: Meyerhof & Hanna (1978), Brown & Meyerhof (1969),
    and the equivalent-homogeneous shortcuts (weakest layer within 2B; average
    c, tan phi, gamma over B).

    The list always holds the same methods in the same order; a method that
    does not apply has ``pressure_kPa = None`` and says why.
    """
    soil, why = _homogeneous(case)
    return [
        _terzaghi_on(case, soil, why, local_shear=False),
        _terzaghi_on(case, soil, why, local_shear=True),
        _general_on(case, soil, why, "meyerhof"),
        _general_on(case, soil, why, "hansen"),
        _general_on(case, soil, why, "vesic"),
        _ec7_undrained(case, soil, why),
        _ec7_drained(case, soil, why),
        _meyerhof_hanna(case),
        _brown_meyerhof(case),
        _weakest_layer(case),
        _averaged(case),
    ]


def where_it_falls(pressure_kPa: float | None, lower: float | None, upper: float | None) -> str:
    """Where a hand estimate lies against the rigorous bracket [lower, upper] (kPa).

    Returns "below the lower bound (conservative)", "inside the bracket",
    "ABOVE THE UPPER BOUND (unconservative)", "no bracket" when a bound is
    None, or "no estimate" when the pressure is None. A value on a bound counts
    as inside.

    >>> where_it_falls(300.0, 280.0, 320.0)
    'inside the bracket'
    >>> where_it_falls(350.0, 280.0, 320.0)
    'ABOVE THE UPPER BOUND (unconservative)'
    """
    if lower is None or upper is None:
        return "no bracket"
    if pressure_kPa is None:
        return "no estimate"
    if lower > upper:
        raise ValueError(f"lower: {lower!r} is not allowed; must not exceed upper = {upper!r} (kPa)")
    if pressure_kPa < lower:
        return "below the lower bound (conservative)"
    if pressure_kPa > upper:
        return "ABOVE THE UPPER BOUND (unconservative)"
    return "inside the bracket"
