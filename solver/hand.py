"""Classical closed-form bearing-capacity estimates, set beside the rigorous bracket.

These are the hand methods an engineer would use to check a strip footing:
Terzaghi (1943), Meyerhof (1963), Brinch Hansen (1970), Vesic (1973/1975) and
EN 1997-1:2004 Annex D on homogeneous ground, and Meyerhof & Hanna (1978),
Brown & Meyerhof (1969) and two "equivalent homogeneous" shortcuts on layered
ground. Each estimate is the vertical collapse load of the strip divided by
its full width B (``pressure_kPa``, kPa), the quantity both bounds report.
Where a method does not cover the case, the estimate carries
``pressure_kPa = None`` and a note saying why; no number is made up.

The case's loads and ground enter every method the same way:

* eccentric load (e, m): Meyerhof's effective width B' = B - 2|e| (Meyerhof
  1953, 1963). The method's pressure q_u' acts on B'; the vertical collapse
  load is V = q_u' B' and ``pressure_kPa`` = q_u' B'/B. B' is in ``factors``
  as "B_prime_m".
* inclined load (delta from vertical): each method's own inclination factors
  where it has them. Most need H and V: for a given inclination H = V tan(delta),
  so V is solved for (``solve_vertical_load``, brentq) and the note says so.
  Meyerhof's (1963) factors depend on delta alone, so no solve is needed.
  Terzaghi (1943), Brown & Meyerhof (1969) and the two-layer formula of
  Meyerhof & Hanna (1978) as coded here have none: None, with the reason.
  A rough base cannot carry more horizontal load than the soil under it:
  H <= B' c + V tan(phi) (common practice, the sliding check); where that
  limit is reached first, the estimate is the sliding load and says so.
* sloping ground beside the footing (slope angle beta, falling away on the +x
  side): Brinch Hansen's (1970) and Vesic's (1975) ground-inclination factors.
  They are for a footing at the crest of an unbounded slope; for a footing set
  back from the crest, or a slope of limited height, they are applied
  unchanged, as if at the crest of an unbounded slope (conservative; the note
  says so). Meyerhof (1957) gave the setback effect only as charts, not
  reproduced; Terzaghi (1943), Meyerhof (1963) and EN 1997-1 Annex D have no
  ground-inclination factors: those estimates are None ("does not cover a
  sloping ground"), as are the layered methods.
* water table: q is the effective overburden (``Case.overburden_kPa``); in
  the N_gamma term gamma is the mean effective unit weight over B' below the
  base (common practice: gamma' = gamma_sat - gamma_w below the water table,
  which is linear interpolation between gamma' and gamma when the water
  table lies between the base and B' below it). The pressures are effective,
  as the bounds' are; with the water table above the base, the total contact
  pressure adds the pore pressure there (the note gives it).

Units: lengths in m, stresses in kPa, unit weights in kN/m^3, angles in degrees,
line loads in kN/m.

What reports give: each estimate cites the paper of its published formula.
A value that could only be recalled from a chart or table and not checked
against its source here is not given in reports: Terzaghi's N_gamma (he gave
it as a curve; the tables of it are recalled), so Terzaghi's estimate is given
only where the N_gamma term vanishes, and Meyerhof & Hanna's Ks and ca/c1 (read
from their charts), so their method says where it applies but gives no value.
The docstrings below mark "from memory" where a formula or a bibliographic
detail was written down from memory rather than read from the paper; such a
detail should be checked against the paper before it is relied on.

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
    New York (Table 4-2: Terzaghi's factors; Tables 4-1, 4-5: the factors of
    Meyerhof, Hansen and Vesic as tabulated there; table numbers from memory).
Meyerhof, G.G. (1953). The bearing capacity of foundations under eccentric
    and inclined loads. Proc. 3rd Int. Conf. on Soil Mechanics and Foundation
    Engineering, Zurich, Vol. 1, 440-445.
Meyerhof, G.G. (1957). The ultimate bearing capacity of foundations on
    slopes. Proc. 4th Int. Conf. on Soil Mechanics and Foundation Engineering,
    London, Vol. 1, 384-386.
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

from collections.abc import Callable

from scipy.optimize import brentq

from solver.model import WATER_UNIT_WEIGHT, Case, Layer, davis_reduction

# -- references, one line each, for HandEstimate.source -----------------------

SRC_PRANDTL = ("Prandtl, L. (1920), Nachr. Ges. Wiss. Goettingen, Math.-Phys. Kl., 74-85; "
               "Reissner, H. (1924), Proc. 1st Int. Congr. Appl. Mech., Delft, 295-311")
SRC_TERZAGHI = "Terzaghi, K. (1943). Theoretical Soil Mechanics. John Wiley & Sons, New York (Nc, Nq)"
# Terzaghi's N_gamma values, recalled: used by terzaghi_footing (library and tests), never in reports
SRC_TERZAGHI_NGAMMA = ("N_gamma as tabulated in Bowles, J.E. (1996). Foundation Analysis and Design, 5th ed., "
                       "McGraw-Hill, Table 4-2 (values and table number from memory)")
TERZAGHI_NGAMMA_UNCHECKED = ("Terzaghi (1943) gave N_gamma only as a curve, and the tables of it could not be "
                             "checked against a source here, so no value is given where the N_gamma term "
                             "counts (phi > 0 on soil with weight) - see Meyerhof, Hansen, Vesic, EN 1997-1")
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
                      "Mexico City, Vol. 2, 45-51 (strip: Nc = 1.5 H/B + 5.14 su2/su1)")
MEYERHOF_HANNA_UNCHECKED = ("the punching-shear coefficient Ks and the adhesion ratio ca/c1 are read from "
                            "the paper's charts, which could not be checked against the paper here, so no "
                            "value is given")
SRC_SHORTCUT = "common practice (equivalent homogeneous soil); factors: " + SRC_MEYERHOF
SRC_MEYERHOF_1953 = ("Meyerhof, G.G. (1953). The bearing capacity of foundations under eccentric "
                     "and inclined loads. Proc. 3rd Int. Conf. Soil Mech. Found. Eng., Zurich, "
                     "Vol. 1, 440-445 (effective width B' = B - 2e)")
SRC_MEYERHOF_1957 = ("Meyerhof, G.G. (1957). The ultimate bearing capacity of foundations on "
                     "slopes. Proc. 4th Int. Conf. Soil Mech. Found. Eng., London, Vol. 1, 384-386")

METHODS = ("terzaghi", "meyerhof", "hansen", "vesic", "ec7")

# Depth below the base taken as the zone a strip footing's shear mechanism
# reaches (common practice: about 2B for a strip).
INFLUENCE_DEPTH_WIDTHS = 2.0
# Depth below the base over which the averaging shortcut averages (the brief: B).
AVERAGING_DEPTH_WIDTHS = 1.0

_PHI_ZERO_RAD = 1e-9  # below this the phi -> 0 limits of Nc are used
_PHI_ZERO_DEG = math.degrees(_PHI_ZERO_RAD)  # the same, degrees: phi = 0 forms of the factors

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
        Vertical collapse load of the strip divided by its full width B, kPa
        (for a central vertical load, the ultimate average pressure q_u; for an
        eccentric load q_u' B'/B); None where the method does not apply.
    factors : dict[str, float]
        Bearing-capacity factors "Nc", "Nq", "Ngamma" and any shape, depth,
        inclination or ground factors used ("sc", "dc", "iq", "gq", ...), the
        effective width "B_prime_m" (m) and, for an inclined load, the solved
        "V_kN_per_m" and "H_kN_per_m"; empty where the method does not apply.
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


# -- eccentric and inclined loads, sloping ground -------------------------------

def effective_width(width_m: float, eccentricity_m: float) -> float:
    """Meyerhof's effective width B' = B - 2|e|, m (Meyerhof 1953, 1963).

    The load is taken as uniform over the width B' centred on its line of
    action. Raises ValueError when |e| >= B/2 (no width left).

    >>> effective_width(2.0, 0.25), effective_width(2.0, -0.25)
    (1.5, 1.5)
    """
    width_eff = float(width_m) - 2.0 * abs(float(eccentricity_m))
    if not (math.isfinite(width_eff) and width_eff > 0.0):
        raise ValueError(f"eccentricity_m: {eccentricity_m!r} is not allowed; must be less than "
                         f"B/2 = {width_m / 2:g} (m) in size")
    return width_eff


def meyerhof_inclination_factors(delta_deg: float, phi_deg: float) -> dict[str, float]:
    """Meyerhof's (1963) inclination factors, Can. Geotech. J. 1(1) (from memory).

    ic = iq = (1 - delta/90)^2 and igamma = (1 - delta/phi)^2 for delta <= phi,
    0 beyond (delta, phi in degrees). With phi = 0, igamma is 0 for any
    delta > 0 (N_gamma is 0 there anyway). They depend on the inclination
    alone, not on V or H.

    >>> f = meyerhof_inclination_factors(10.0, 30.0)
    >>> round(f["ic"], 4), round(f["igamma"], 4)
    (0.7901, 0.4444)
    """
    delta = abs(float(delta_deg))
    ic = (1.0 - delta / 90.0) ** 2
    if delta == 0.0:
        igamma = 1.0
    elif phi_deg <= 0.0 or delta >= phi_deg:
        igamma = 0.0
    else:
        igamma = (1.0 - delta / phi_deg) ** 2
    return {"ic": ic, "iq": ic, "igamma": igamma}


def _shear_ratio(H: float, width_eff: float, c_kPa: float) -> float:
    """H / (A' c), capped at 1 (the sliding limit of a rough base on phi = 0 soil)."""
    if H <= 0.0:
        return 0.0
    return min(H / (width_eff * c_kPa), 1.0) if c_kPa > 0.0 else 1.0


def _load_ratio(phi_deg: float, H: float, V: float, c_kPa: float, width_eff: float) -> float:
    """H / (V + A' c cot phi) with A' = B' per m run; 0 for H = 0."""
    if H == 0.0:
        return 0.0
    return H / (V + width_eff * c_kPa / math.tan(math.radians(phi_deg)))


def hansen_inclination_factors(phi_deg: float, H: float, V: float, c_kPa: float,
                               width_eff: float) -> dict[str, float]:
    """Brinch Hansen's (1970) inclination factors for a level base, DGI Bulletin 28
    (from memory, as tabulated by Bowles 1996, Table 4-5).

    H, V in kN/m; A' = B' (m^2 per m run); the base adhesion ca is taken as c
    (a rough base, common practice).

    * phi > 0: iq = [1 - 0.5 H/(V + A' c cot phi)]^5,
      igamma = [1 - 0.7 H/(V + A' c cot phi)]^5, ic = iq - (1 - iq)/(Nq - 1).
    * phi = 0: the additive i'c = 0.5 - 0.5 sqrt(1 - H/(A' c)), used as
      q_u = (2 + pi) su (1 + d'c - i'c - g'c) + q; H <= A' c.

    A negative base of a power is taken as 0.

    >>> round(hansen_inclination_factors(0.0, 20.0, 100.0, 20.0, 2.0)["i'c"], 4)  # H/(A' c) = 0.5
    0.1464
    """
    if phi_deg <= _PHI_ZERO_DEG:
        return {"i'c": 0.5 - 0.5 * math.sqrt(1.0 - _shear_ratio(H, width_eff, c_kPa))}
    ratio = _load_ratio(phi_deg, H, V, c_kPa, width_eff)
    iq = max(1.0 - 0.5 * ratio, 0.0) ** 5
    igamma = max(1.0 - 0.7 * ratio, 0.0) ** 5
    nq = _nq_reissner(math.radians(phi_deg))
    return {"ic": iq - (1.0 - iq) / (nq - 1.0), "iq": iq, "igamma": igamma}


def vesic_inclination_factors(phi_deg: float, H: float, V: float, c_kPa: float,
                              width_eff: float, m: float = 2.0) -> dict[str, float]:
    """Vesic's (1973, 1975) inclination factors (from memory).

    m = (2 + B/L)/(1 + B/L) for a load inclined in the B direction: 2 for a strip.

    * iq = [1 - H/(V + A' c cot phi)]^m, igamma = [1 - H/(V + A' c cot phi)]^(m+1),
      ic = iq - (1 - iq)/(Nc tan phi) for phi > 0;
    * ic = 1 - m H/(A' c Nc) for phi = 0 (Nc = 2 + pi).

    H, V in kN/m, A' = B'; ca = c (rough base). A negative base is taken as 0.

    >>> round(vesic_inclination_factors(30.0, 10.0, 100.0, 0.0, 2.0)["igamma"], 4)
    0.729
    """
    if phi_deg <= _PHI_ZERO_DEG:
        ic = 1.0 - m * _shear_ratio(H, width_eff, c_kPa) / (math.pi + 2.0)
        return {"ic": max(ic, 0.0), "iq": 1.0, "igamma": 1.0, "m": m}
    base = max(1.0 - _load_ratio(phi_deg, H, V, c_kPa, width_eff), 0.0)
    iq, igamma = base ** m, base ** (m + 1.0)
    phi_rad = math.radians(phi_deg)
    nc = _nc_prandtl(_nq_reissner(phi_rad), phi_rad)
    return {"ic": iq - (1.0 - iq) / (nc * math.tan(phi_rad)), "iq": iq, "igamma": igamma, "m": m}


def ec7_inclination_factors(phi_deg: float, H: float, V: float, c_kPa: float,
                            width_eff: float, m: float = 2.0) -> dict[str, float]:
    """EN 1997-1:2004 Annex D.4 (drained) inclination factors (from memory).

    iq = [1 - H/(V + A' c' cot phi')]^m, igamma = [1 - H/(V + A' c' cot phi')]^(m+1),
    ic = iq - (1 - iq)/(Nc tan phi'), with m = mB = (2 + B'/L')/(1 + B'/L') for
    H in the direction of B': 2 for a strip. A negative base is taken as 0.
    For phi' = 0 see :func:`ec7_undrained_ic` (D.3).
    """
    if phi_deg <= _PHI_ZERO_DEG:
        raise ValueError(f"phi_deg: {phi_deg!r} is not allowed; D.4 needs phi' > 0 "
                         "(see ec7_undrained_ic for D.3)")
    return vesic_inclination_factors(phi_deg, H, V, c_kPa, width_eff, m)


def ec7_undrained_ic(H: float, width_eff: float, cu_kPa: float) -> float:
    """EN 1997-1:2004 Annex D.3 (undrained): ic = 0.5 (1 + sqrt(1 - H/(A' cu))),
    H <= A' cu (from memory). H in kN/m, A' = B' (m^2 per m run).

    >>> ec7_undrained_ic(0.0, 2.0, 40.0), ec7_undrained_ic(80.0, 2.0, 40.0)
    (1.0, 0.5)
    """
    return 0.5 * (1.0 + math.sqrt(1.0 - _shear_ratio(H, width_eff, cu_kPa)))


def hansen_ground_factors(phi_deg: float, beta_deg: float) -> dict[str, float] | None:
    """Brinch Hansen's (1970) ground-inclination factors, DGI Bulletin 28 (from
    memory, as tabulated by Bowles 1996, Table 4-5).

    For a footing at the crest of ground falling away at beta (degrees):

    * phi > 0: gc = 1 - beta/147, gq = ggamma = (1 - 0.5 tan beta)^5;
    * phi = 0: the additive g'c = beta/147 (q_u = (2 + pi) su (1 + d'c - i'c - g'c) + q).

    beta/147 (degrees) is 2 beta/(2 + pi) with beta in radians: the Prandtl
    field with its passive fan shortened by beta, Nc = 2 + pi - 2 beta
    (common practice). Returns None for phi > 0 and beta >= phi, where the
    cohesionless slope itself would be at failure and the factors do not hold.

    >>> f = hansen_ground_factors(30.0, 10.0)
    >>> round(f["gc"], 4), round(f["gq"], 4)
    (0.932, 0.6304)
    """
    beta = float(beta_deg)
    if phi_deg > _PHI_ZERO_DEG and beta >= phi_deg:
        return None
    if phi_deg <= _PHI_ZERO_DEG:
        return {"g'c": beta / 147.0, "gq": 1.0, "ggamma": 1.0}
    g = (1.0 - 0.5 * math.tan(math.radians(beta))) ** 5
    return {"gc": 1.0 - beta / 147.0, "gq": g, "ggamma": g}


def vesic_ground_factors(phi_deg: float, beta_deg: float) -> dict[str, float] | None:
    """Vesic's (1975) ground-inclination factors (from memory).

    For a footing at the crest of ground falling away at beta:

    * gq = ggamma = (1 - tan beta)^2; gc = gq - (1 - gq)/(Nc tan phi) for phi > 0
      (some tabulations print 5.14 tan phi in place of Nc tan phi);
    * phi = 0: the additive g'c = 2 beta/(2 + pi) (beta in radians), and
      N_gamma = -2 sin beta in place of 0: self-weight now works against the
      footing, as the ground falls away.

    Returns None for phi > 0 and beta >= phi (Vesic's limit beta < phi).

    >>> f = vesic_ground_factors(0.0, 30.0)
    >>> round(f["g'c"], 4), round(f["Ngamma"], 4)
    (0.2037, -1.0)
    """
    beta_rad = math.radians(float(beta_deg))
    if phi_deg > _PHI_ZERO_DEG and beta_deg >= phi_deg:
        return None
    if phi_deg <= _PHI_ZERO_DEG:
        return {"g'c": 2.0 * beta_rad / (math.pi + 2.0), "gq": 1.0, "ggamma": 1.0,
                "Ngamma": -2.0 * math.sin(beta_rad)}
    g = (1.0 - math.tan(beta_rad)) ** 2
    phi_rad = math.radians(phi_deg)
    nc = _nc_prandtl(_nq_reissner(phi_rad), phi_rad)
    return {"gc": g - (1.0 - g) / (nc * math.tan(phi_rad)), "gq": g, "ggamma": g}


def sliding_limit_kN_per_m(tan_delta: float, c_kPa: float, phi_deg: float,
                           width_eff: float) -> float:
    """Largest V (kN/m) a rough base can carry at H = V tan(delta) before it slides.

    Sliding in the soil just under a rough base: H <= B' c + V tan(phi)
    (common practice). inf when tan(delta) <= tan(phi) and nothing limits V.

    >>> round(sliding_limit_kN_per_m(math.tan(math.radians(20.0)), 40.0, 0.0, 2.0), 2)
    219.8
    """
    excess = tan_delta - math.tan(math.radians(phi_deg))
    if tan_delta <= 0.0 or excess <= 0.0:
        return math.inf
    return width_eff * c_kPa / excess


def solve_vertical_load(pressure_kPa: Callable[[float, float], float], width_eff: float,
                        tan_delta: float, v_limit: float = math.inf) -> tuple[float, bool]:
    """Vertical collapse load V (kN/m) of a method whose factors need H and V.

    Solves V = B' q_u'(V, H) with H = V tan(delta) by brentq, where
    ``pressure_kPa(V, H)`` is the method's q_u' on the effective width B'. q_u'
    must not rise as V (and with it H) grows, which holds for every factor
    set here; the root is then unique and lies in [0, B' q_u'(0, 0)].
    ``v_limit`` caps V (sliding, :func:`sliding_limit_kN_per_m`); returns
    (V, True) when the cap is reached before the formula's root.

    >>> v, capped = solve_vertical_load(lambda V, H: 100.0 - 0.1 * H, 2.0, 1.0)
    >>> round(v, 4), capped
    (166.6667, False)
    """
    top = width_eff * pressure_kPa(0.0, 0.0)
    if tan_delta == 0.0:
        return min(top, v_limit), top > v_limit
    def gap(V: float) -> float:
        return V - width_eff * pressure_kPa(V, V * tan_delta)
    if v_limit < top and gap(v_limit) <= 0.0:
        return v_limit, True
    hi = min(top, v_limit)
    if gap(hi) <= 0.0:  # only at round-off: q_u' did not fall at all
        return hi, False
    return float(brentq(gap, 0.0, hi, xtol=1e-12 * max(top, 1.0), rtol=1e-12)), False


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
    source = SRC_TERZAGHI + (f"; {SRC_TERZAGHI_NGAMMA}" if f["Ngamma"] > 0.0 and gamma > 0.0 else "")
    return HandEstimate(name, source, float(pressure), factors, "; ".join(notes))


# -- reading the ground ------------------------------------------------------------

@dataclass(frozen=True)
class _Soil:
    """Strength of one soil as a hand method sees it."""

    name: str
    tresca: bool
    c_kPa: float  # c' (mohr-coulomb) or su at the top of the part considered (tresca)
    phi_deg: float  # 0 for tresca
    gamma: float  # kN/m^3, bulk (above the water table)
    gradient: float  # kPa/m (tresca)
    layer: Layer | None = None  # the layer itself, for its weight below the water table


def _soil(layer: Layer, c_top: float) -> _Soil:
    if layer.is_tresca:
        return _Soil(layer.name, True, c_top, 0.0, layer.unit_weight, layer.strength_gradient, layer)
    return _Soil(layer.name, False, layer.cohesion, layer.friction_angle, layer.unit_weight, 0.0, layer)


def _same_ground(a: tuple[Layer, float, float, float], b: tuple[Layer, float, float, float]) -> bool:
    """True if layer ``b`` continues layer ``a`` with the same properties (and,
    for Tresca, the same straight su profile)."""
    la, top_a, bottom_a, c_a = a
    lb, _, _, c_b = b
    close = lambda x, y: math.isclose(x, y, rel_tol=1e-9, abs_tol=1e-9)  # noqa: E731
    if la.model != lb.model or not close(la.unit_weight, lb.unit_weight):
        return False
    saturated = [lay.unit_weight if lay.saturated_unit_weight is None else lay.saturated_unit_weight
                 for lay in (la, lb)]
    if not close(*saturated):
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
            # the layered methods are strip formulas here: under a circle only the bracket is left
            return None, (f"layered ground ({len(below)} layers below the base: {names}); "
                          "this method is for homogeneous ground - see the "
                          + ("layered methods" if case.footing.shape == "strip" else
                             "bracket (this version has no layered method for a circle)"))
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


@dataclass(frozen=True)
class _Setting:
    """The case's loads and ground beside the footing, as every hand method sees them."""

    width: float  # B, m
    width_eff: float  # B' = B - 2|e|, m
    eccentricity: float  # m
    delta_deg: float  # |load inclination| from vertical, degrees
    beta_deg: float  # slope angle, degrees (0: level ground)
    setback: float  # m, right edge of the footing to the crest
    slope_height: float | None  # m
    q: float  # effective overburden at footing level, kPa
    water_below_base: float  # m (negative: above the base; inf: none)
    pore_pressure_base: float  # kPa

    @property
    def tan_delta(self) -> float:
        return math.tan(math.radians(self.delta_deg))


def _setting(case: Case) -> _Setting:
    f, g = case.footing, case.ground
    return _Setting(f.width, effective_width(f.width, f.eccentricity), f.eccentricity,
                    abs(f.load_inclination), g.slope_angle, g.crest_setback, g.slope_height,
                    case.overburden_kPa(), case.water_depth_below_base(),
                    case.pore_pressure_at_base_kPa())


def _mean_gamma(case: Case, layer: Layer, top: float, bottom: float) -> float:
    """Mean effective unit weight (kN/m^3) of ``layer``'s soil between depths ``top``
    and ``bottom`` below the base (m), as if it filled that range: gamma above the
    water table, gamma_sat - gamma_w below it (common practice). Over [0, B'] this is
    the usual rule for the N_gamma term: gamma' when the water table is at or above
    the base, gamma when it is B' or more below, linear in between. A range of no
    thickness gives the value at ``top``.

    >>> from solver.model import Footing, Ground
    >>> sand = Layer("sand", "mohr-coulomb", None, 18.0, friction_angle=30.0, saturated_unit_weight=20.0)
    >>> wet = Case("t", Footing(2.0), Ground(water_table=0.5), (sand,))
    >>> round(_mean_gamma(wet, sand, 0.0, 2.0), 4)  # 0.25 x 18 + 0.75 x (20 - 9.81)
    12.1425
    """
    dry = layer.unit_weight
    wet = max((layer.saturated_unit_weight if layer.saturated_unit_weight is not None
               else layer.unit_weight) - WATER_UNIT_WEIGHT, 0.0)
    water = case.water_depth_below_base()
    if bottom <= top:
        return dry if top < water else wet
    dry_part = min(max(water, top), bottom) - top
    return (dry * dry_part + wet * (bottom - top - dry_part)) / (bottom - top)


def _setting_notes(st: _Setting, soil: _Soil | None, gamma: float | None) -> list[str]:
    """The notes every method shares about the loads, the ground and the water."""
    notes = []
    if st.eccentricity != 0.0:
        notes.append(f"eccentric load e = {st.eccentricity:.4g} m: effective width B' = B - 2|e| = "
                     f"{st.width_eff:.4g} m (Meyerhof 1953, 1963); pressure = q_u' B'/B")
    if math.isfinite(st.water_below_base) and gamma is not None and soil is not None \
            and not soil.tresca and st.water_below_base < st.width_eff:
        notes.append(f"water table {st.water_below_base:.3g} m below the base: gamma = {gamma:.4g} "
                     "kN/m^3 in the N_gamma term (mean effective weight over B' below the base, "
                     "common practice)")
    if st.pore_pressure_base > 0.0:
        notes.append(f"effective pressure (q' = {st.q:.4g} kPa): the total contact pressure adds "
                     f"the pore pressure {st.pore_pressure_base:.4g} kPa at the base")
    if st.beta_deg > 0.0 and st.delta_deg > 0.0:
        notes.append("the factors do not tell which way H points; toward the slope is the worse case")
    return notes


def _slope_note(st: _Setting) -> str:
    where = (f"footing set back {st.setback:.3g} m from the crest: factors applied as if at the crest"
             if st.setback > 0.0 else "footing at the crest")
    return (f"ground falls away at beta = {st.beta_deg:.3g} deg; {where} of an unbounded slope "
            f"(conservative; slope height {st.slope_height:.3g} m not used); the slope's own "
            "stability is a separate check")


NO_SLOPE = "does not cover a sloping ground"
NOT_FOR_CIRCLE = ("circular footing: this version gives Terzaghi's circle form and EN 1997-1's shape "
                  "factors only")


def _inclined_note(st: _Setting, capped: bool, solved: bool) -> str:
    text = f"load inclined {st.delta_deg:.3g} deg from vertical: H = V tan(delta)"
    if solved:
        text += "; V solved from V = B' q_u'(V, H) (brentq), as the i factors depend on H and V"
    if capped:
        text += ("; limited by sliding under the rough base, H = B' c + V tan(phi) (common "
                 "practice, the separate sliding check): the value is the sliding load")
    return text


def _finish(name: str, source: str, st: _Setting, V: float, factors: dict[str, float],
            notes: list[str]) -> HandEstimate:
    """The estimate from the vertical collapse load V (kN/m): pressure V/B."""
    factors = {**factors, "B_prime_m": st.width_eff}
    if st.eccentricity != 0.0:
        source = f"{source}; B' after {SRC_MEYERHOF_1953}"
    if st.delta_deg > 0.0:
        factors.update(V_kN_per_m=V, H_kN_per_m=V * st.tan_delta)
    return HandEstimate(name, source, float(V / st.width), factors,
                        "; ".join(n for n in notes if n))


# -- homogeneous methods ----------------------------------------------------------

def _terzaghi_on(case: Case, soil: _Soil | None, why: str, local_shear: bool) -> HandEstimate:
    """Terzaghi (1943) on B' with the effective gamma; no inclination or ground factors."""
    name = f"Terzaghi (1943), {'local' if local_shear else 'general'} shear"
    if soil is None:
        return _none(name, SRC_TERZAGHI, why)
    st = _setting(case)
    if st.delta_deg > 0.0:
        return _none(name, SRC_TERZAGHI, "inclined load: Terzaghi (1943) gives no inclination "
                                         "factors - see Meyerhof, Hansen, Vesic, EN 1997-1")
    if st.beta_deg > 0.0:
        return _none(name, SRC_TERZAGHI, f"{NO_SLOPE}: Terzaghi (1943) has no ground-inclination "
                                         "factors - see Hansen, Vesic")
    phi_used = soil.phi_deg if not local_shear else math.degrees(
        math.atan(2.0 / 3.0 * math.tan(math.radians(soil.phi_deg))))
    if phi_used > 50.0:
        return _none(name, SRC_TERZAGHI, f"phi = {phi_used:.4g} deg is beyond Terzaghi's "
                                         "table (0 to 50 deg)")
    gamma = _mean_gamma(case, soil.layer, 0.0, st.width_eff)
    if phi_used > 0.0 and gamma > 0.0:
        # for a circle this version has only EN 1997-1's shape factors beside Terzaghi's forms
        return _none(name, SRC_TERZAGHI, TERZAGHI_NGAMMA_UNCHECKED if case.footing.shape == "strip"
                     else TERZAGHI_NGAMMA_UNCHECKED.replace("Meyerhof, Hansen, Vesic, EN 1997-1", "EN 1997-1"))
    est = terzaghi_footing(soil.phi_deg, soil.c_kPa, gamma, st.width_eff, st.q,
                           "circle" if case.footing.shape == "circular" else "strip", local_shear=local_shear)
    notes = [why, est.note, *_setting_notes(st, soil, gamma)]
    if st.eccentricity != 0.0:
        notes.append("B' with Terzaghi's factors is common practice, not Terzaghi's")
    if case.footing.base == "smooth" and soil.phi_deg > 0.0 and soil.gamma > 0.0:
        notes.append("Terzaghi's mechanism assumes a rough base; this footing is smooth "
                     "(common practice)")
    return _finish(est.method, est.source, st, est.pressure_kPa * st.width_eff, est.factors, notes)


_GENERAL = {
    "meyerhof": ("Meyerhof (1963)", SRC_MEYERHOF, meyerhof_depth_factors),
    "hansen": ("Brinch Hansen (1970)", SRC_HANSEN, hansen_depth_factors),
    "vesic": ("Vesic (1973/1975)", SRC_VESIC, vesic_depth_factors),
}


def _general_on(case: Case, soil: _Soil | None, why: str, method: str) -> HandEstimate:
    """Meyerhof, Hansen or Vesic on homogeneous ground: strip, depth, inclination and
    (Hansen, Vesic) ground factors, on B'.

    phi > 0 (and Meyerhof at any phi), multiplicative:
    q_u' = c Nc dc ic gc + q Nq dq iq gq + 0.5 gamma B' Ngamma dgamma igamma ggamma.
    phi = 0, Hansen and Vesic, their additive form (from memory):
    q_u' = (2 + pi) su (1 + d'c - i'c - g'c) + q (+ 0.5 gamma B' Ngamma, Vesic on a slope),
    with d'c = dc - 1 and Vesic's i'c = 1 - ic = m H/(A' su Nc).
    Depth factors use D/B with the full width (common practice).
    """
    name, source, depth = _GENERAL[method]
    if soil is None:
        return _none(name, source, why)
    st = _setting(case)
    phi, c = soil.phi_deg, soil.c_kPa
    zero = phi <= _PHI_ZERO_DEG
    ground: dict[str, float] = {}
    if st.beta_deg > 0.0:
        if method == "meyerhof":
            return _none(name, source, f"{NO_SLOPE}: Meyerhof (1963) has no ground-inclination "
                                       "factors, and the slope charts of " + SRC_MEYERHOF_1957
                                       + " are not reproduced here - see Hansen, Vesic")
        found = (hansen_ground_factors if method == "hansen" else vesic_ground_factors)(phi, st.beta_deg)
        if found is None:
            return _none(name, source, f"slope angle beta = {st.beta_deg:.3g} deg >= phi = {phi:.3g} "
                                       "deg: the ground factors hold only for beta < phi (a "
                                       "cohesionless slope that steep is itself at failure)")
        ground = found
    f = bearing_factors(method, phi)
    d = depth(phi, case.footing.embedment / st.width)
    gamma = _mean_gamma(case, soil.layer, 0.0, st.width_eff)
    ngamma = ground.get("Ngamma", f["Ngamma"])

    def inclination(V: float, H: float) -> dict[str, float]:
        if method == "meyerhof":
            return meyerhof_inclination_factors(st.delta_deg, phi)
        if method == "hansen":
            return hansen_inclination_factors(phi, H, V, c, st.width_eff)
        return vesic_inclination_factors(phi, H, V, c, st.width_eff)

    def pressure(V: float, H: float) -> float:
        i = inclination(V, H)
        if zero and method != "meyerhof":
            i_add = i["i'c"] if method == "hansen" else 1.0 - i["ic"]
            return (c * f["Nc"] * (d["dc"] - i_add - ground.get("g'c", 0.0)) + st.q * f["Nq"] * d["dq"]
                    + 0.5 * gamma * st.width_eff * ngamma * d["dgamma"])
        return (c * f["Nc"] * d["dc"] * i.get("ic", 1.0) * ground.get("gc", 1.0)
                + st.q * f["Nq"] * d["dq"] * i.get("iq", 1.0) * ground.get("gq", 1.0)
                + 0.5 * gamma * st.width_eff * ngamma * d["dgamma"] * i.get("igamma", 1.0)
                * ground.get("ggamma", 1.0))

    if pressure(0.0, 0.0) <= 0.0:
        return _none(name, source, "the formula gives no positive capacity for this case")
    limit = sliding_limit_kN_per_m(st.tan_delta, c, phi, st.width_eff)
    if method == "meyerhof":  # factors depend on delta alone: no solve
        top = st.width_eff * pressure(0.0, 0.0)
        V, capped, solved = min(top, limit), top > limit, False
    else:
        (V, capped), solved = solve_vertical_load(pressure, st.width_eff, st.tan_delta, limit), True
    H = V * st.tan_delta
    factors = {**f, "Ngamma": ngamma, "sc": 1.0, "sq": 1.0, "sgamma": 1.0, **d,
               **inclination(V, H), **ground}
    notes = [why, "strip: shape factors 1",
             f"depth factors for D/B = {case.footing.embedment / st.width:.3g}"
             if case.footing.embedment > 0.0 else "surface footing: depth factors 1",
             *_setting_notes(st, soil, gamma)]
    if st.delta_deg > 0.0:
        notes.append(_inclined_note(st, capped, solved and st.delta_deg > 0.0))
    if st.beta_deg > 0.0:
        notes.append(_slope_note(st))
    return _finish(name, source, st, V, factors, notes)


def _ec7_undrained(case: Case, soil: _Soil | None, why: str) -> HandEstimate:
    """EN 1997-1:2004 Annex D.3: R/A' = (pi + 2) cu bc sc ic + q on B'; strip and level
    base: bc = sc = 1; ic = 0.5 (1 + sqrt(1 - H/(A' cu))) with V solved for (from memory)."""
    name = "EN 1997-1:2004 Annex D.3, undrained"
    source = SRC_EC7 + ", D.3"
    if soil is None:
        return _none(name, source, why)
    if not soil.tresca:
        return _none(name, source, "the ground is Mohr-Coulomb (drained c', phi'); D.3 is the "
                                   "undrained (Tresca) check - see D.4")
    st = _setting(case)
    if st.beta_deg > 0.0:
        return _none(name, source, f"{NO_SLOPE}: Annex D has no ground-inclination factors "
                                   "(its b factors are for an inclined base)")
    cu = soil.c_kPa
    sc = ec7_shape_factors(case, 0.0)["sc_undrained"]

    def pressure(V: float, H: float) -> float:
        return (math.pi + 2.0) * cu * sc * ec7_undrained_ic(H, st.width_eff, cu) + st.q

    limit = sliding_limit_kN_per_m(st.tan_delta, cu, 0.0, st.width_eff)  # ic's own range, H <= A' cu
    V, capped = solve_vertical_load(pressure, st.width_eff, st.tan_delta, limit)
    ic = ec7_undrained_ic(V * st.tan_delta, st.width_eff, cu)
    factors = {"Nc": math.pi + 2.0, "Nq": 1.0, "Ngamma": 0.0, "bc": 1.0, "sc": sc, "ic": ic}
    load = "vertical load: ic = 1" if st.delta_deg == 0.0 else f"ic = {ic:.4g}"
    shape = "strip" if sc == 1.0 else "circle: sc = 1.2 (from memory)"
    notes = [why, f"{shape}, level base: bc = 1; {load}; Annex D has no depth factors",
             *_setting_notes(st, soil, None)]
    if st.delta_deg > 0.0:
        notes.append(_inclined_note(st, capped, True))
    return _finish(name, source, st, V, factors, notes)


def ec7_shape_factors(case: Case, phi_deg: float) -> dict[str, float]:
    """EN 1997-1:2004 Annex D shape factors: 1 for a strip; for a circle (B = L) sc = 1.2
    undrained, and drained sq = 1 + sin(phi'), sgamma = 0.7, sc = (sq Nq - 1)/(Nq - 1)
    (the factors for a square or circular footing; from memory).

    >>> from solver.model import Footing, Ground
    >>> clay = Layer("clay", "tresca", None, 18.0, undrained_strength=40.0)
    >>> ec7_shape_factors(Case("t", Footing(2.0, shape="circular"), Ground(), (clay,)), 30.0)["sq"]
    1.5
    """
    if case.footing.shape == "strip":
        return {"sc": 1.0, "sq": 1.0, "sgamma": 1.0, "sc_undrained": 1.0}
    sq = 1.0 + math.sin(math.radians(phi_deg))
    nq = bearing_factors("ec7", phi_deg)["Nq"] if phi_deg > 0.0 else 1.0
    sc = (sq * nq - 1.0) / (nq - 1.0) if nq > 1.0 else 1.2
    return {"sc": sc, "sq": sq, "sgamma": 0.7, "sc_undrained": 1.2}


def _ec7_drained(case: Case, soil: _Soil | None, why: str) -> HandEstimate:
    """EN 1997-1:2004 Annex D.4: R/A' = c' Nc bc sc ic + q' Nq bq sq iq + 0.5 gamma' B' Ngamma
    bgamma sgamma igamma; strip, level base: b = s = 1; i from :func:`ec7_inclination_factors`
    with V solved for."""
    name = "EN 1997-1:2004 Annex D.4, drained"
    source = SRC_EC7 + ", D.4"
    if soil is None:
        return _none(name, source, why)
    if soil.tresca:
        return _none(name, source, "the ground is undrained (Tresca); D.4 is the drained "
                                   "check - see D.3")
    st = _setting(case)
    if st.beta_deg > 0.0:
        return _none(name, source, f"{NO_SLOPE}: Annex D has no ground-inclination factors "
                                   "(its b factors are for an inclined base)")
    phi, c = soil.phi_deg, soil.c_kPa
    if st.delta_deg > 0.0 and phi <= _PHI_ZERO_DEG:
        return _none(name, source, "inclined load with phi' = 0: the D.4 inclination factors "
                                   "need phi' > 0")
    f = bearing_factors("ec7", phi)
    shape = ec7_shape_factors(case, phi)
    gamma = _mean_gamma(case, soil.layer, 0.0, st.width_eff)

    def inclination(V: float, H: float) -> dict[str, float]:
        if st.delta_deg == 0.0:
            return {"ic": 1.0, "iq": 1.0, "igamma": 1.0}
        return ec7_inclination_factors(phi, H, V, c, st.width_eff)

    def pressure(V: float, H: float) -> float:
        i = inclination(V, H)
        return (c * f["Nc"] * shape["sc"] * i["ic"] + st.q * f["Nq"] * shape["sq"] * i["iq"]
                + 0.5 * gamma * st.width_eff * f["Ngamma"] * shape["sgamma"] * i["igamma"])

    limit = sliding_limit_kN_per_m(st.tan_delta, c, phi, st.width_eff)
    V, capped = solve_vertical_load(pressure, st.width_eff, st.tan_delta, limit)
    i = inclination(V, V * st.tan_delta)
    factors = {**f, "bc": 1.0, "bq": 1.0, "bgamma": 1.0, "sc": shape["sc"], "sq": shape["sq"],
               "sgamma": shape["sgamma"], "ic": i["ic"], "iq": i["iq"], "igamma": i["igamma"]}
    shape_note = ("strip, level base: b = s = 1" if case.footing.shape == "strip" else
                  "circle, level base: b = 1, sq = 1 + sin phi', sgamma = 0.7, sc = (sq Nq - 1)/(Nq - 1) "
                  "(from memory)")
    notes = [why, shape_note + ("; vertical load: i = 1" if st.delta_deg == 0.0
                                                    else "; m = 2 (strip, H along B')"),
             "Annex D has no depth factors", *_setting_notes(st, soil, gamma)]
    if st.delta_deg > 0.0:
        notes.append(_inclined_note(st, capped, True))
    if case.footing.base == "smooth" and phi > 0.0 and gamma > 0.0:
        notes.append("the Annex's Ngamma is for a rough base (delta >= phi'/2); this footing "
                     "is smooth, so the gamma term is likely too high")
    return _finish(name, source, st, V, factors, notes)


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


def _layered_refusal(case: Case, method: str, source: str) -> HandEstimate | None:
    """None estimate for what the layered formulas here do not cover: inclined loads, slopes."""
    st = _setting(case)
    if st.beta_deg > 0.0:
        return _none(method, source, f"{NO_SLOPE}: the layered formulas here are for level ground")
    if st.delta_deg > 0.0:
        return _none(method, source, "inclined load: the layered formulas here are for a vertical "
                                     "load (Meyerhof & Hanna's inclined-load form rests on their "
                                     "charts, not reproduced)")
    return None


def _meyerhof_hanna(case: Case, recalled_charts: bool = False) -> HandEstimate:
    """Meyerhof & Hanna (1978), Can. Geotech. J. 15(4): strong layer over weak, strip.

    Without ``recalled_charts`` (as every report calls it) the estimate says where the
    method does not apply and otherwise gives no value, as its Ks and ca/c1 are chart
    values recalled, not checked (MEYERHOF_HANNA_UNCHECKED); with it, the value below
    (tests, and a check against the charts once they are at hand).

    q_u = q_b + 2 ca H / B + (gamma1 H^2 + 2 q H) Ks tan(phi1) / B - gamma1 H <= q_t

    q_b = c2 Nc2 + (q + gamma1 H) Nq2 + 0.5 gamma2 B Ngamma2 (a footing at the interface)
    q_t = c1 Nc1 + q Nq1 + 0.5 gamma1 B Ngamma1 (a thick top layer)

    with Meyerhof's (1963) factors and, for a strip, shape factors 1; no depth
    factors, as the method is usually stated (from memory). The published form
    has gamma1 Df where the overburden q (surcharge + soil above the base)
    stands here. The strong-over-weak test is q2/q1 < 1, q_i = c_i Nc_i +
    0.5 gamma_i B Ngamma_i. Sand over clay and strong clay over weak clay are
    the special cases phi2 = 0 and phi1 = phi2 = 0 of this one formula.

    An eccentric load acts on B' = B - 2|e| in place of B (common practice)
    and the pressure is q_u B'/B. Unit weights are effective (gamma1 over the
    top layer's thickness, gamma2 over B' below the interface, q_t's gamma1
    over B'); q is the effective overburden. Inclined loads and slopes: None.

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
    refused = _layered_refusal(case, method, SRC_MEYERHOF_HANNA)
    if refused is not None:
        return refused
    top, low, h = found
    st = _setting(case)
    width, q = st.width_eff, st.q
    gamma1 = _mean_gamma(case, top.layer, 0.0, h)  # over the punched layer
    gamma1_thick = _mean_gamma(case, top.layer, 0.0, width)  # as if the top layer ran deep
    gamma2 = _mean_gamma(case, low.layer, h, h + width)
    f1 = bearing_factors("meyerhof", top.phi_deg)
    f2 = bearing_factors("meyerhof", low.phi_deg)
    q1 = top.c_kPa * f1["Nc"] + 0.5 * gamma1_thick * width * f1["Ngamma"]
    q2 = low.c_kPa * f2["Nc"] + 0.5 * gamma2 * width * f2["Ngamma"]
    if q1 <= 0.0:
        return _none(method, SRC_MEYERHOF_HANNA, f"the top layer '{top.name}' has no strength at "
                                                 "the surface (c = 0 and gamma = 0)")
    ratio = q2 / q1
    if ratio >= 1.0:
        return _none(method, SRC_MEYERHOF_HANNA,
                     f"the top layer '{top.name}' is not the stronger (q2/q1 = {ratio:.3g} >= 1); "
                     "the strong-over-weak formula does not apply")
    if not recalled_charts:
        return _none(method, SRC_MEYERHOF_HANNA, MEYERHOF_HANNA_UNCHECKED)
    q_top = _strip_pressure(top.c_kPa, q, gamma1_thick, width, f1)
    q_base = _strip_pressure(low.c_kPa, q + gamma1 * h, gamma2, width, f2)
    ca_over_c1 = 0.6 + 0.4 * ratio
    ks = math.tan(math.radians(45.0 + top.phi_deg / 2.0)) ** 2
    punching = (2.0 * ca_over_c1 * top.c_kPa * h / width
                + (gamma1 * h * h + 2.0 * q * h) * ks * math.tan(math.radians(top.phi_deg)) / width
                - gamma1 * h)
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
    if math.isfinite(st.water_below_base) and st.water_below_base < h + width:
        notes.append(f"effective unit weights below the water table: gamma1 = {gamma1:.4g}, "
                     f"gamma2 = {gamma2:.4g} kN/m^3")
    notes += _setting_notes(st, None, None)
    return _finish(method, SRC_MEYERHOF_HANNA, st, pressure * width, factors, notes)


def _brown_meyerhof(case: Case) -> HandEstimate:
    """Brown & Meyerhof (1969): stiff clay (su1) over soft clay (su2), strip (from memory).

    q_u = su1 Nc + q, Nc = 1.5 H/B + 5.14 su2/su1 <= 5.14 (su2/su1 < 1), with
    5.14 taken as pi + 2. H is the depth of the interface below the base.
    Proc. 7th ICSMFE, Mexico City, Vol. 2, 45-51; formula recalled, not checked
    against the paper. An eccentric load acts on B' in place of B (common
    practice); inclined loads and slopes: None.
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
    refused = _layered_refusal(case, method, SRC_BROWN_MEYERHOF)
    if refused is not None:
        return refused
    st = _setting(case)
    width = st.width_eff
    ratio = low.c_kPa / top.c_kPa
    nc = min(1.5 * h / width + (math.pi + 2.0) * ratio, math.pi + 2.0)
    pressure = top.c_kPa * nc + st.q
    notes = [f"su1 = {top.c_kPa:.4g} kPa ('{top.name}') over su2 = {low.c_kPa:.4g} kPa "
             f"('{low.name}'), H = {h:.3g} m below the base"]
    if nc >= math.pi + 2.0:
        notes.append(f"soft layer deep enough (H/B = {h / width:.3g}): the top-layer value governs")
    if top.gradient > 0.0 or low.gradient > 0.0:
        notes.append("su taken at each layer's top; the su gradient is ignored (conservative)")
    notes += _setting_notes(st, None, None)
    factors = {"Nc": nc, "Nq": 1.0, "Ngamma": 0.0, "su2_over_su1": ratio, "H_over_B": h / width}
    return _finish(method, SRC_BROWN_MEYERHOF, st, pressure * width, factors, notes)


def _meyerhof_on(case: Case, c: float, phi_deg: float, gamma: float
                 ) -> tuple[float, dict[str, float], bool]:
    """Meyerhof (1963) on B' with depth and inclination factors: (V in kN/m, the
    factors used, whether sliding limited V). Inclination factors depend on delta
    alone, so V needs no solve."""
    st = _setting(case)
    f = bearing_factors("meyerhof", phi_deg)
    d = meyerhof_depth_factors(phi_deg, case.footing.embedment / st.width)
    i = meyerhof_inclination_factors(st.delta_deg, phi_deg)
    pressure = (c * f["Nc"] * d["dc"] * i["ic"] + st.q * f["Nq"] * d["dq"] * i["iq"]
                + 0.5 * gamma * st.width_eff * f["Ngamma"] * d["dgamma"] * i["igamma"])
    limit = sliding_limit_kN_per_m(st.tan_delta, c, phi_deg, st.width_eff)
    V = st.width_eff * pressure
    return min(V, limit), {**f, **d, **i}, V > limit


def _weakest_layer(case: Case) -> HandEstimate:
    """Equivalent homogeneous soil: the weakest layer within 2B below the base.

    Each layer whose top lies within the zone is taken alone as homogeneous
    ground (Tresca: the lowest su it has inside the zone; gamma: its effective
    weight over B' below the base) and given Meyerhof's (1963) strip pressure
    with depth and inclination factors on B'; the lowest governs. Common
    practice; it ignores any help from stronger layers. Slopes: None.
    """
    method = f"Equivalent homogeneous: weakest layer within {INFLUENCE_DEPTH_WIDTHS:g}B"
    st = _setting(case)
    if st.beta_deg > 0.0:
        return _none(method, SRC_SHORTCUT, f"{NO_SLOPE}: Meyerhof (1963) has no ground-inclination "
                                           "factors")
    zone = INFLUENCE_DEPTH_WIDTHS * case.footing.width
    best: tuple[float, dict[str, float], _Soil, bool] | None = None
    for layer, top, bottom, c_top in case.layers_below_base():
        if top >= zone:
            break
        soil = _soil(layer, c_top)
        c = min(c_top, c_top + soil.gradient * (min(bottom, zone) - top)) if soil.tresca else soil.c_kPa
        V, factors, capped = _meyerhof_on(case, c, soil.phi_deg, _mean_gamma(case, layer, 0.0, st.width_eff))
        if best is None or V < best[0]:
            best = (V, factors, soil, capped)
    V, factors, soil, capped = best
    notes = [f"weakest layer within {zone:.3g} m below the base: '{soil.name}', taken as "
             "homogeneous; Meyerhof (1963) factors with depth factors; stronger layers ignored"]
    if soil.tresca and soil.gradient > 0.0:
        notes.append("su at the layer's top, gradient ignored")
    notes += _setting_notes(st, None, None)
    if st.delta_deg > 0.0:
        notes.append(_inclined_note(st, capped, False))
    return _finish(method, SRC_SHORTCUT, st, V, factors, notes)


def _averaged(case: Case) -> HandEstimate:
    """Equivalent homogeneous soil: thickness-weighted average c, tan(phi), gamma
    over B below the base, then Meyerhof's (1963) strip pressure with depth and
    inclination factors on B'. Common practice. Tresca su is averaged over its
    linear profile; gamma is effective below the water table. Slopes: None.
    Drained and undrained layers together: None (an average of phi' and su
    describes no soil).
    """
    method = f"Equivalent homogeneous: average over {AVERAGING_DEPTH_WIDTHS:g}B"
    st = _setting(case)
    if st.beta_deg > 0.0:
        return _none(method, SRC_SHORTCUT, f"{NO_SLOPE}: Meyerhof (1963) has no ground-inclination "
                                           "factors")
    zone = AVERAGING_DEPTH_WIDTHS * case.footing.width
    rows = []  # (thickness in zone, mean c, tan phi, gamma, tresca)
    for layer, top, bottom, c_top in case.layers_below_base():
        if top >= zone:
            break
        t = min(bottom, zone) - top
        soil = _soil(layer, c_top)
        c_mean = c_top + soil.gradient * t / 2.0 if soil.tresca else soil.c_kPa
        rows.append((t, c_mean, math.tan(math.radians(soil.phi_deg)),
                     _mean_gamma(case, layer, top, top + t), soil.tresca))
    if len({r[4] for r in rows}) > 1:
        names = ", ".join(f"'{layer.name}'" for layer, top, *_ in case.layers_below_base() if top < zone)
        return _none(method, SRC_SHORTCUT,
                     f"the layers within {zone:.3g} m below the base ({names}) mix drained (c', phi') and "
                     "undrained (su) strengths; an average of a friction angle with an undrained strength "
                     "describes no soil, as the drained and the undrained analyses answer different questions "
                     "- see the weakest-layer shortcut")
    data = np.array([r[:4] for r in rows], dtype=float)
    weights = data[:, 0] / zone
    c_bar, tan_bar, gamma_bar = (weights[:, None] * data[:, 1:]).sum(axis=0)
    phi_bar = math.degrees(math.atan(tan_bar))
    V, factors, capped = _meyerhof_on(case, float(c_bar), phi_bar, float(gamma_bar))
    factors.update(c_avg_kPa=float(c_bar), phi_avg_deg=phi_bar, gamma_avg=float(gamma_bar))
    notes = [f"average over {zone:.3g} m below the base of {len(rows)} layer(s): "
             f"c = {c_bar:.4g} kPa, phi = {phi_bar:.4g} deg, gamma = {gamma_bar:.4g} kN/m^3",
             "Meyerhof (1963) factors with depth factors"]
    notes += _setting_notes(st, None, None)
    if st.delta_deg > 0.0:
        notes.append(_inclined_note(st, capped, False))
    return _finish(method, SRC_SHORTCUT, st, V, factors, notes)


# -- the list the program prints ----------------------------------------------------

def _level_stand_in(case: Case) -> Case:
    """The same case as level ground with no drawing, only to list the methods' names."""
    import dataclasses
    return dataclasses.replace(case, geometry=None, layers=case.layers[:1])


STRENGTHS = ("as analysed", "as given")
INFORMATION_ONLY = ("information only: on c', phi' as given, not compared with the bracket, which uses "
                    "the Davis (1968) reduced strength")


def davis_reduced(case: Case) -> Case:
    """The case with the strength the bounds use: each Mohr-Coulomb layer with a dilation
    angle gets c* and phi* of the Davis (1968) reduction (``model.davis_reduction``) and
    no dilation angle; every other layer as given.

    >>> from solver.model import Footing, Ground
    >>> sand = Layer("sand", "mohr-coulomb", None, 19.0, cohesion=2.0, friction_angle=30.0, dilation_angle=0.0)
    >>> reduced = davis_reduced(Case("t", Footing(2.0), Ground(), (sand,))).layers[0]
    >>> round(reduced.cohesion, 3), round(reduced.friction_angle, 2), reduced.dilation_angle
    (1.732, 26.57, None)
    """
    import dataclasses

    def reduced(layer: Layer) -> Layer:
        if layer.is_tresca or layer.dilation_angle is None:
            return layer
        factor, phi = davis_reduction(layer)
        return dataclasses.replace(layer, cohesion=factor * layer.cohesion, friction_angle=math.degrees(phi),
                                   dilation_angle=None)

    return dataclasses.replace(case, layers=tuple(reduced(layer) for layer in case.layers))


def uses_davis(case: Case) -> bool:
    """Whether the bounds use a Davis-reduced strength for some layer (a dilation angle given)."""
    return any(not layer.is_tresca and layer.dilation_angle is not None for layer in case.layers)


def hand_methods(case: Case, strength: str = "as analysed") -> list[HandEstimate]:
    """Every hand method for the case's strip footing, under the case's load and ground.

    ``strength``: "as analysed" (default) uses the strength the bounds use, so that the
    estimates compare with the bracket like with like: where a layer has a dilation angle,
    c* and phi* of the Davis (1968) reduction (:func:`davis_reduced`), said in each
    estimate's note. "as given" uses c', phi' as typed; with a dilation angle those
    estimates are information only (:data:`INFORMATION_ONLY`), not comparable with the
    bracket. Without a dilation angle the two are the same.

    Homogeneous-ground methods (one layer below the base, or all layers below
    it alike): Terzaghi (1943) general and local shear, Meyerhof (1963), Brinch
    Hansen (1970), Vesic (1973/1975) -- each with its depth factors where the
    embedment is > 0 -- and EN 1997-1:2004 Annex D.3 (undrained, Tresca) and
    D.4 (drained, Mohr-Coulomb), which has no depth factors. Mohr-Coulomb
    layers use c', phi'; Tresca layers use phi = 0 and su at the base.

    Layered-ground methods: Meyerhof & Hanna (1978), Brown & Meyerhof (1969),
    and the equivalent-homogeneous shortcuts (weakest layer within 2B; average
    c, tan phi, gamma over B).

    Eccentric loads use B' = B - 2|e| everywhere, inclined loads each method's
    inclination factors, slopes Hansen's and Vesic's ground factors, and the
    water table effective weights (see the module docstring). Every
    ``pressure_kPa`` is the vertical collapse load divided by B.

    The list always holds the same methods in the same order; a method that
    does not apply has ``pressure_kPa = None`` and says why.
    """
    if getattr(case, "geometry", None) is not None:
        # A drawn site has no layer thicknesses nor a level profile the formulas could read.
        why_drawn = "a site drawn in gmsh: the closed-form methods need level ground and layer thicknesses"
        return [_none(e.method, e.source, why_drawn) for e in hand_methods(_level_stand_in(case))]
    if strength not in STRENGTHS:
        raise ValueError(f"strength: {strength!r} is not allowed; must be one of {', '.join(STRENGTHS)}")
    if not uses_davis(case):
        return _methods(case)
    if strength == "as given":
        return [_noted(e, INFORMATION_ONLY) for e in _methods(case)]
    reduced = [(layer, davis_reduction(layer)) for layer in case.layers
               if not layer.is_tresca and layer.dilation_angle is not None]
    basis = ("on the strength the bounds use, c* and phi* of the Davis (1968) reduction for the dilation angle: "
             + "; ".join(f"'{layer.name}': psi = {layer.dilation_angle:g}, c* = {factor * layer.cohesion:.3g} kPa, "
                         f"phi* = {math.degrees(phi):.2f} deg" for layer, (factor, phi) in reduced))
    return [_noted(e, basis) for e in _methods(davis_reduced(case))]


def information_only(case: Case) -> list[HandEstimate]:
    """With a dilation angle: the methods on c', phi' as given whose value differs from the one
    on the bounds' reduced strength (information only, never compared); else none."""
    if not uses_davis(case):
        return []
    analysed = {e.method: e.pressure_kPa for e in hand_methods(case)}
    return [e for e in hand_methods(case, "as given")
            if e.pressure_kPa is not None and e.pressure_kPa != analysed.get(e.method)]


def _noted(estimate: HandEstimate, note: str) -> HandEstimate:
    """The estimate with ``note`` before its own (only where it gives a value: the others say why not)."""
    import dataclasses

    if estimate.pressure_kPa is None:
        return estimate
    return dataclasses.replace(estimate, note="; ".join(n for n in (note, estimate.note) if n))


def _methods(case: Case) -> list[HandEstimate]:
    """The methods on the case's layers as they stand (see :func:`hand_methods`)."""
    soil, why = _homogeneous(case)
    if case.footing.shape == "circular":
        # Terzaghi's circle and EN 1997-1's shape factors; the others are strip formulas here
        import dataclasses
        strip = dataclasses.replace(case, footing=dataclasses.replace(case.footing, shape="strip"))
        own = {0: _terzaghi_on(case, soil, why, local_shear=False), 1: _terzaghi_on(case, soil, why, local_shear=True),
               5: _ec7_undrained(case, soil, why), 6: _ec7_drained(case, soil, why)}
        return [own[i] if i in own else _none(e.method, e.source, NOT_FOR_CIRCLE)
                for i, e in enumerate(hand_methods(strip))]
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
