"""Bearing capacity factors of a rigid footing on weightless Mohr-Coulomb soil by the method of
stress characteristics (slip lines): plane strain (strip) and axial symmetry (circle), smooth
and rough base. An independent reference for verification/cases.toml, sharing no code with the
solver.

The method is that of Sokolovskii for plane strain and of Cox, Eason & Hopkins (1961) and Cox
(1962) for axial symmetry:

* Cox, A.D., Eason, G. & Hopkins, H.G. (1961). Axially symmetric plastic deformations in soils.
  Philosophical Transactions of the Royal Society of London A 254, 1-45;
* Cox, A.D. (1962). Axially-symmetric plastic deformation in soils - II. Indentation of
  ponderable soils. International Journal of Mechanical Sciences 4, 371-380
  (citation details of both from memory; neither paper is on this machine).

A value computed here is a stress field in the plastic zone only: it is not extended into the
rigid regions, so it is not itself a rigorous bound. It is believed exact for these problems,
and it is computed, not read from a published table.

Conventions (this file only). Compression positive; x = r >= 0 the distance from the footing's
axis (or centre line), y the depth below the base (down), both in m; the footing's radius (or
half width) is a = 1 m, so B = 2 m. psi is the angle from the x axis to the major principal
stress sigma_1, measured towards y. With the mean in-plane stress sigma (kPa) and the Mohr
circle's radius R = sigma sin(phi) + c cos(phi) (kPa), the yield condition gives

    sigma_x = sigma + R cos 2psi,  sigma_y = sigma - R cos 2psi,  tau_xy = R sin 2psi.

Haar-von Karman: the hoop stress is the minor principal stress, sigma_theta = sigma - R. Why:
a footing pushed into the ground drives the soil down and away from the axis (u_r >= 0), so the
hoop strain rate u_r / r is an extension. Under the associated flow rule of Mohr-Coulomb a
principal stress strictly between the major and the minor one has no strain rate, the major
one's is a compression and only the minor one's an extension (rates in the ratio
-(1 - sin phi) : (1 + sin phi)). An extending hoop direction therefore needs sigma_theta =
sigma_3: the stress lies on the edge of the yield pyramid where the hoop stress equals the
in-plane minor stress. (In the passive zone beside the footing sigma_3 = sigma_y = q, so
sigma_theta = q at the surface.) This is the choice of Shield (1955) for the Tresca punch (the
algebraically greatest stress, tension positive) and of Cox, Eason & Hopkins (1961) for
indentation (from memory).

Equilibrium (weightless; R here depends on sigma only, see below for su rising with depth):
d(sigma_x)/dx + d(tau)/dy + (sigma_x - sigma_theta)/x = 0 and
d(tau)/dx + d(sigma_y)/dy + tau/x = 0 (the terms in 1/x only for the circle). Derived here (the
combination of the two equations that holds only derivatives along one direction): with
mu = pi/4 - phi/2 the characteristics are

    alpha lines, dy/dx = tan(psi - mu):  cos(phi) d(sigma) - 2 R d(psi) = G_alpha ds,
    beta lines,  dy/dx = tan(psi + mu):  cos(phi) d(sigma) + 2 R d(psi) = G_beta ds,

ds the arc length along the line, G_alpha = (R/x) (sin(psi - mu) - sin(psi + mu)) and
G_beta = -(R/x) (sin(psi + mu) - sin(psi - mu)) for the circle, 0 in plane strain. (With
self-weight gamma, G_alpha gains -gamma cos(psi + mu) and G_beta gamma cos(psi - mu), which is
Sokolovskii's d(sigma) -+ 2 sigma tan(phi) d(psi) = gamma (dy -+ tan(phi) dx) for c = 0: a check
of the signs; gamma is not used here. tests/test_characteristics.py checks both relations
against the equilibrium equations on an arbitrary field.)

Strength rising with depth (Tresca only, phi = 0): su = su0 + rho y (su0 kPa at the base's
level, rho kPa/m), the problem of Davis & Booker (1973) for the strip and of Houlsby & Wroth
(1983) for the circle (both from memory; neither paper is on this machine). Then R = su(y),
mu = pi/4, and the equilibrium equations gain rho sin 2psi (first) and -rho cos 2psi (second)
from d(tau)/dy and d(sigma_y)/dy. The combination along a line takes the residuals with the
weights (cos c, sin c), c = psi - pi/2 + mu (alpha) or psi + pi/2 - mu (beta); the new terms
contribute rho sin(2 psi - c), which moves to the right-hand side:

    G_alpha gains -rho sin(psi + mu),   G_beta gains -rho sin(psi - mu)

(in plane strain these are the whole of G). The passive zone stays uniform in psi = 0
(sigma = q + su(y) satisfies equilibrium), and the fan's point relation at A is unchanged
(R = su0 there). Why weightless: with phi = 0 the strength does not depend on the stress, so a
unit weight gamma adds the hydrostatic field gamma (y + D) to every admissible stress field and
the same rate of work to every mechanism (incompressible flow, rigid footing): gamma enters the
collapse pressure only through the overburden at the base, which the surcharge q reproduces
(common practice; the argument of Davis & Booker (1973) for the strip, from memory). The
factor reported is q_u / su0 with q = 0, against kappa = rho B / su0 (B = 2a). Only the smooth
base is built for every kappa: with rho > 0 the rough base's rigid cone (wedge) bounded by the
fan's last beta line reaches the axis only for small kappa (the strip to about 1, the circle
to about 0.5; beyond, no fan angle up to 3 pi/4 - 0.05 brings it there: the line bends down
towards the vertical). The rough solution then needs another construction (the base itself a
characteristic over its outer part, the interface shear at su0, is one guess), which this file
does not attempt; `--rising` gives the rough rows only for KAPPAS_ROUGH.

The field (footing from x = 0 to a on the surface y = 0; the ground x > a carries the surcharge q):

1. Passive zone: beside the footing sigma_y = q, tau = 0, psi = 0 (sigma_1 horizontal): a
   Cauchy problem on the surface from a to the net's reach b, solved column by column.
2. Fan: at the footing's edge A psi turns from 0 to psi_A at one point; along that degenerate
   alpha line ds = 0, so R = R0 exp(2 tan(phi) psi) (sigma = sigma0 + 2 c psi when phi = 0)
   holds exactly. A Goursat problem between the passive zone's last beta line and A.
3. Smooth base: psi_A = pi/2, and below the footing a mixed problem between the fan's last
   beta line AC and the base, where tau = 0, i.e. psi = pi/2. Every alpha line from the passive
   zone ends on the base; the base pressure sigma + R is integrated, q_u = (2/a^2) integral of
   sigma_y r dr (circle) or (1/a) integral of sigma_y dx (strip). The alpha line through the
   base's centre O bounds the part of the net the load depends on (alpha lines past it run
   into the axis and are dropped); the net's reach b is set 3 % past it by a coarse net
   (`reach`). On the circle the pressure rises like -ln r towards the axis (seen on every
   net; the alpha lines that end near O come from a short stretch of the surface, where
   r ~ sqrt(distance)); the last sliver, inside the last alpha line (r < 0.05 a, much less on
   fine nets), is integrated with that form fitted to its two last points.
4. Rough base: a rigid cone (a wedge in plane strain) moves down with the footing; its surface
   is the fan's last beta line AC from the edge A to the axis, and the load is the vertical
   force of the soil on it, q_u = (2/a^2) integral over AC of (tau dy - sigma_y dx) x (the
   strip: (1/a) integral of (tau dy - sigma_y dx)). The fan angle psi_A decides whether AC
   reaches the axis at all. On the circle the terms in 1/x give psi - pi/2 along AC a part
   A/x next to a regular one: any A other than 0 turns AC away from the axis (down for A < 0,
   back up for A > 0). psi_A is found (brentq) so that A = 0, A fitted by least squares,
   (psi - pi/2) x = A + B x + b x^2 + c x^3, on the net's points of AC between 0.05 a and
   0.25 a from the axis (well resolved; on the last steps next to the axis the net itself
   amplifies its errors like 1/x); the piece of AC inside 0.05 a is closed with the fitted
   regular part (Gauss-Legendre). The fit on a second window (0.08 a to 0.35 a) gives the
   error of this step, added to the estimate. In plane strain there is no such term; there
   psi_A is found so that psi = pi/2 where AC meets the axis (symmetry), which gives
   Prandtl's wedge, psi_A = pi/2. On the circle the fitted regular part does not end at
   pi/2 on the axis (B about 0.1 rad, reported as `axis_tilt`): the stress at the apex of the
   cone is not symmetric. The plastic zone and its mirror image touch at the apex only, so
   this is no contradiction of the plastic field, but it is one reason why such a field is
   called incomplete: it is not shown here that it extends into the cone and the soil below.

The net: `lines` alpha lines from surface points equally spaced over [a, b] and `fan_steps`
beta lines in the fan, equal steps of psi. Each new point is where the alpha line of one known
point meets the beta line of another; position and values are found by the trapezoidal rule
(each line's direction, R and G averaged over the step: second order), iterated to
convergence. All points of one diagonal of the net (or one column in the passive zone) are
solved at once as numpy arrays; only the diagonals are looped over.

Convergence (`study`): the net halved three times or more; Richardson extrapolation for a
second-order scheme, E = v + (v - v_before) / 3, with the observed order reported beside it;
the error estimate is the last change of E (plus the fitting window's effect, rough base).
Plane strain reproduces Nq = exp(pi tan(phi)) tan^2(45 + phi/2) (Reissner 1924) and
Nc = (Nq - 1) cot(phi), 2 + pi at phi = 0 (Prandtl 1920): the check that the integrator, the
fan and the two bases are right. Weightless c-phi soil is cohesionless soil under an added
all-round pressure c cot(phi) (Caquot's corresponding states, common practice), and the
equations here are homogeneous in sigma + c cot(phi), so Nc = (Nq - 1) cot(phi) holds for the
circle too, net by net: the table computes both, from their own boundary values.

Run `python verification/characteristics.py` for the circle's table (about two minutes on one
core), `--strip` for the strip's beside the closed forms too, `--levels 5` for a net of 1024
lines as the finest (the values in verification/cases.toml); `--rising` for su rising with
depth (strip and circle, smooth on nets of 128 lines doubled, rough where it is built on nets
of 64; `--levels 4` to 1024 lines gives the circle-moc-rising values in verification/cases.toml).
"""
from __future__ import annotations

import argparse
import math
import sys
import time
from collections.abc import Callable
from typing import NamedTuple

import numpy as np
from scipy.optimize import brentq

RADIUS_M = 1.0  # the footing's radius (half width) a; the factors do not depend on it
HOOP = -1.0  # sigma_theta = sigma + HOOP R: the minor principal stress (module docstring)
TOLERANCE = 1e-13  # relative change of an iterated point at which the trapezoidal step is solved
MAX_ITERATIONS = 60
REACH_MARGIN = 1.03  # the net reaches 3 % past the last alpha line the load depends on
AXIS_SLIVER = 0.05  # the last alpha line must end nearer the axis than this fraction of a
BASES = ("smooth", "rough")
FIRST_WINDOW = (0.05, 0.25)  # m from the axis: where the cone's surface is fitted (rough base)
SECOND_WINDOW = (0.08, 0.35)  # the same, to see how much the fit's form matters


class Soil(NamedTuple):
    """A weightless Mohr-Coulomb soil (Tresca when the friction angle is 0) under a surcharge;
    a Tresca soil's strength may rise with depth, su = cohesion_kPa + strength_gradient y."""

    friction_angle_deg: float
    cohesion_kPa: float  # c, or su0 at the base's level
    surcharge_kPa: float
    strength_gradient_kPa_per_m: float = 0.0  # rho, Tresca only

    @property
    def phi(self) -> float:
        return math.radians(self.friction_angle_deg)

    @property
    def mu(self) -> float:
        """rad: the characteristics' angle to the major principal stress, pi/4 - phi/2."""
        return math.pi / 4 - self.phi / 2

    def radius_kPa(self, sigma: np.ndarray, depth_m: np.ndarray) -> np.ndarray:
        """kPa: the Mohr circle's radius R at mean in-plane stress ``sigma`` and ``depth_m``."""
        cohesion = self.cohesion_kPa + self.strength_gradient_kPa_per_m * depth_m
        return sigma * math.sin(self.phi) + cohesion * math.cos(self.phi)

    def check(self) -> None:
        """A strength gradient only with phi = 0 (the relations below are derived for Tresca)."""
        if self.strength_gradient_kPa_per_m != 0.0 and self.friction_angle_deg != 0.0:
            raise ValueError(f"strength_gradient_kPa_per_m: {self.strength_gradient_kPa_per_m:g} is not "
                             f"allowed with friction_angle_deg {self.friction_angle_deg:g}; Tresca (0) only")

    def surface_sigma_kPa(self) -> float:
        """kPa: sigma in the passive zone at the surface (sigma_y = q, psi = 0)."""
        return (self.surcharge_kPa + self.cohesion_kPa * math.cos(self.phi)) / (1.0 - math.sin(self.phi))

    def fan_sigma_kPa(self, psi: np.ndarray) -> np.ndarray:
        """kPa: sigma at the footing's edge where psi has turned from 0 (exact there)."""
        s0 = self.surface_sigma_kPa()
        if self.phi == 0.0:
            return s0 + 2.0 * self.cohesion_kPa * psi
        r = self.radius_kPa(np.asarray(s0), 0.0) * np.exp(2.0 * math.tan(self.phi) * psi)
        return (r - self.cohesion_kPa * math.cos(self.phi)) / math.sin(self.phi)


class Capacity(NamedTuple):
    """One net's result: the average pressure under the footing and what it rests on."""

    pressure_kPa: float  # q_u, load / footing area (or / B for a strip)
    lines: int  # alpha lines from the passive zone's surface
    fan_steps: int
    reach_m: float  # b: the passive zone's surface runs from a to b
    fan_angle: float  # rad: psi_A, pi/2 on a smooth base, found on a rough one
    axis_gap_m: float  # smooth: where the last alpha line ends; rough: 0
    axis_tilt: float  # rad, rough: psi - pi/2 at the axis of the cone's fitted regular part


class Study(NamedTuple):
    """Values on nets halved in turn and their Richardson extrapolation."""

    values: list[float]  # the factor (q_u / c or q_u / q), coarsest first
    lines: list[int]
    order: float  # observed order of convergence from the last three nets
    extrapolated: float
    error: float  # estimate: the change of the extrapolated value from the last net but one
    fan_angle: float  # rad, on the finest net
    axis_tilt: float  # rad, rough: psi - pi/2 at the cone's apex (fitted), on the finest net
    window_spread: float  # rough: the finest value's change with the second fitting window
    seconds: float


# -- one step of the net -----------------------------------------------------------

def _sources(soil: Soil, axisymmetric: bool, x: np.ndarray, y: np.ndarray, sigma: np.ndarray,
             psi: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """kPa/m: G_alpha and G_beta (module docstring); zero in plane strain with uniform strength."""
    minus, plus = np.sin(psi - soil.mu), np.sin(psi + soil.mu)
    rising = soil.strength_gradient_kPa_per_m  # d(su)/dy, Tresca only
    g_alpha, g_beta = -rising * plus, -rising * minus
    if axisymmetric:
        r_over_x = soil.radius_kPa(sigma, y) / x
        g_alpha = g_alpha + r_over_x * (minus + HOOP * plus)
        g_beta = g_beta - r_over_x * (plus + HOOP * minus)
    return g_alpha, g_beta


def _settled(new: np.ndarray, old: np.ndarray) -> np.ndarray:
    """Rows of an iterated point whose last change is below TOLERANCE (relative to 1 + |value|)."""
    return np.all(np.abs(new - old) <= TOLERANCE * (1.0 + np.abs(new)), axis=1)


def _converged(new: np.ndarray, old: np.ndarray) -> bool:
    return bool(np.all(_settled(new, old)))


def _unconverged(new: np.ndarray, old: np.ndarray) -> np.ndarray:
    """``new`` with NaN in the rows whose iteration has not settled: they are not points of the
    field (the callers' checks then stop the net short of the axis, which is reported)."""
    return np.where(_settled(new, old)[:, None], new, np.nan)


def _meet(a: np.ndarray, b: np.ndarray, soil: Soil, axisymmetric: bool) -> np.ndarray:
    """Points (n, 4: x m, y m, sigma kPa, psi rad) where the alpha line through each point of
    ``a`` meets the beta line through the matching point of ``b``."""
    cos_phi, mu = math.cos(soil.phi), soil.mu
    ga_a, gb_b = _sources(soil, axisymmetric, *a.T)[0], _sources(soil, axisymmetric, *b.T)[1]
    ra, rb = soil.radius_kPa(a[:, 2], a[:, 1]), soil.radius_kPa(b[:, 2], b[:, 1])
    p = 0.5 * (a + b)
    for _ in range(MAX_ITERATIONS):
        th_a = 0.5 * (a[:, 3] + p[:, 3]) - mu
        th_b = 0.5 * (b[:, 3] + p[:, 3]) + mu
        ca, sa, cb, sb = np.cos(th_a), np.sin(th_a), np.cos(th_b), np.sin(th_b)
        dx, dy = b[:, 0] - a[:, 0], b[:, 1] - a[:, 1]
        det = cb * sa - ca * sb  # sin(th_a - th_b), about -cos(phi): never small
        t_a = (cb * dy - sb * dx) / det
        t_b = (ca * dy - sa * dx) / det
        x, y = a[:, 0] + t_a * ca, a[:, 1] + t_a * sa
        ga_p, gb_p = _sources(soil, axisymmetric, x, y, p[:, 2], p[:, 3])
        rp = soil.radius_kPa(p[:, 2], y)
        r_a, r_b = 0.5 * (ra + rp), 0.5 * (rb + rp)  # R averaged along each step
        g_a, g_b = 0.5 * (ga_a + ga_p) * t_a, 0.5 * (gb_b + gb_p) * t_b
        # cos(phi)(s - s_a) - 2 r_a (psi - psi_a) = g_a;  cos(phi)(s - s_b) + 2 r_b (psi - psi_b) = g_b
        psi = (cos_phi * (b[:, 2] - a[:, 2]) + 2 * r_a * a[:, 3] + 2 * r_b * b[:, 3] + g_b - g_a) \
            / (2 * (r_a + r_b))
        sigma = a[:, 2] + (2 * r_a * (psi - a[:, 3]) + g_a) / cos_phi
        new = np.column_stack([x, y, sigma, psi])
        if _converged(new, p):
            return new
        p = new
    return _unconverged(new, p)


def _to_base(a: np.ndarray, psi_base: float, soil: Soil, axisymmetric: bool) -> np.ndarray:
    """Points on the base y = 0 at the end of the alpha line through each point of ``a``,
    where psi = ``psi_base``."""
    cos_phi, mu = math.cos(soil.phi), soil.mu
    ga_a = _sources(soil, axisymmetric, *a.T)[0]
    ra = soil.radius_kPa(a[:, 2], a[:, 1])
    p = a.copy()
    p[:, 1], p[:, 3] = 0.0, psi_base
    for _ in range(MAX_ITERATIONS):
        th_a = 0.5 * (a[:, 3] + psi_base) - mu
        t_a = -a[:, 1] / np.sin(th_a)
        x = a[:, 0] + t_a * np.cos(th_a)
        ga_p = _sources(soil, axisymmetric, x, np.zeros_like(x), p[:, 2], p[:, 3])[0]
        r_a = 0.5 * (ra + soil.radius_kPa(p[:, 2], 0.0))
        sigma = a[:, 2] + (2 * r_a * (psi_base - a[:, 3]) + 0.5 * (ga_a + ga_p) * t_a) / cos_phi
        new = np.column_stack([x, np.zeros_like(x), sigma, np.full_like(x, psi_base)])
        if _converged(new, p):
            return new
        p = new
    return _unconverged(new, p)


def _valid(points: np.ndarray, soil: Soil) -> np.ndarray:
    """Rows that are points of the field: finite, off the axis, a real Mohr circle."""
    return (np.all(np.isfinite(points), axis=1) & (points[:, 0] > 0.0)
            & (soil.radius_kPa(points[:, 2], points[:, 1]) > 0.0))


def _solved(step: Callable[..., np.ndarray], soil: Soil, *known: np.ndarray) -> np.ndarray:
    """``step`` applied where every known point is valid; NaN elsewhere. An alpha line past the
    one through the axis point runs into the axis (x -> 0 with psi away from pi/2, where the
    terms in 1/x grow without limit); such points are marked NaN here and never used."""
    out = np.full_like(known[0], np.nan)
    ok = np.logical_and.reduce([_valid(k, soil) for k in known])
    if np.any(ok):
        with np.errstate(over="ignore", invalid="ignore", divide="ignore"):
            new = step(*[k[ok] for k in known])
        good = _valid(new, soil)
        rows = np.flatnonzero(ok)[good]
        out[rows] = new[good]
    return out


# -- the three zones ------------------------------------------------------------------

def _passive_zone(soil: Soil, axisymmetric: bool, reach_m: float, lines: int) -> np.ndarray:
    """The passive zone's last beta line, from the edge A down to the alpha line from b:
    (lines + 1, 4). Column j of the zone holds the points j steps along each alpha line."""
    surface = np.zeros((lines + 1, 4))
    surface[:, 0] = np.linspace(RADIUS_M, reach_m, lines + 1)
    surface[:, 2] = soil.surface_sigma_kPa()
    column, edge_line = surface, [surface[0]]
    step = lambda a, b: _meet(a, b, soil, axisymmetric)  # noqa: E731
    for _ in range(lines):
        column = _solved(step, soil, column[1:], column[:-1])  # alpha from (k, j-1), beta from (k-1, j-1)
        edge_line.append(column[0])
    return np.array(edge_line)


def _fan(soil: Soil, axisymmetric: bool, edge_line: np.ndarray, fan_angle: float,
         fan_steps: int) -> np.ndarray:
    """The fan's net (lines + 1, fan_steps + 1, 4): [k, j] on alpha line k and beta line j
    (j = 0 the passive zone's last beta line, [0, j] the edge A itself)."""
    lines = len(edge_line) - 1
    psi = np.linspace(0.0, fan_angle, fan_steps + 1)
    net = np.full((lines + 1, fan_steps + 1, 4), np.nan)
    net[:, 0] = edge_line
    net[0, :, 0], net[0, :, 1], net[0, :, 2], net[0, :, 3] = RADIUS_M, 0.0, soil.fan_sigma_kPa(psi), psi
    step = lambda a, b: _meet(a, b, soil, axisymmetric)  # noqa: E731
    for diagonal in range(2, lines + fan_steps + 1):
        k = np.arange(max(1, diagonal - fan_steps), min(lines, diagonal - 1) + 1)
        j = diagonal - k
        net[k, j] = _solved(step, soil, net[k, j - 1], net[k - 1, j])
    return net


def _active_zone(soil: Soil, axisymmetric: bool, cone_line: np.ndarray) -> np.ndarray:
    """Base points (lines + 1, 4) of the smooth base's mixed problem: [k] where alpha line k
    ends on the base (psi = pi/2). ``cone_line``: the fan's last beta line AC."""
    lines = len(cone_line) - 1
    net = np.full((lines + 1, lines + 1, 4), np.nan)  # [k, n]: alpha line k, beta line from base point n
    net[:, 0] = cone_line
    meet = lambda a, b: _meet(a, b, soil, axisymmetric)  # noqa: E731
    base = lambda a: _to_base(a, math.pi / 2, soil, axisymmetric)  # noqa: E731
    for diagonal in range(2, 2 * lines + 1):
        n = np.arange(max(1, diagonal - lines), diagonal // 2 + 1)
        k = diagonal - n
        inner = n < k
        net[k[inner], n[inner]] = _solved(meet, soil, net[k[inner], n[inner] - 1], net[k[inner] - 1, n[inner]])
        if diagonal % 2 == 0:
            m = diagonal // 2
            net[m, m] = _solved(base, soil, net[m, m - 1][None, :])[0]
    return net[np.arange(lines + 1), np.arange(lines + 1)]


# -- loads ----------------------------------------------------------------------------

def _ordered_prefix(x: np.ndarray) -> int:
    """Length of the leading run of valid points whose x falls strictly towards the axis."""
    falling = x[1:] < x[:-1]  # False where either is NaN
    return 1 + (int(np.argmin(falling)) if not np.all(falling) else len(falling))


def _base_load(soil: Soil, base: np.ndarray, axisymmetric: bool) -> tuple[float, float]:
    """(q_u kPa, where the last alpha line ends m) from the smooth base's points, edge first."""
    end = _ordered_prefix(base[:, 0])
    x = base[:end, 0]
    pressure = base[:end, 2] + soil.radius_kPa(base[:end, 2], 0.0)  # sigma_y = sigma + R at psi = pi/2
    if axisymmetric:
        moment = -np.sum(0.5 * (pressure[1:] * x[1:] + pressure[:-1] * x[:-1]) * np.diff(x))
        # The sliver next to the axis: there the pressure rises like -b ln r (seen in every net:
        # the alpha lines that end near the axis come from a short stretch of the surface, where
        # x ~ sqrt(distance)); the integral of (p_K - b ln(r / x_K)) r dr from 0 to x_K.
        b = -(pressure[-1] - pressure[-2]) / math.log(x[-1] / x[-2])
        moment += 0.5 * x[-1] ** 2 * (pressure[-1] + 0.5 * max(b, 0.0))
        return 2.0 * moment / RADIUS_M ** 2, float(x[-1])
    # The sliver next to the centre line, the pressure's last slope carried on to x = 0 (it is
    # uniform on uniform soil; with strength rising with depth it is not).
    slope = (pressure[-1] - pressure[-2]) / (x[-1] - x[-2])
    force = -np.sum(0.5 * (pressure[1:] + pressure[:-1]) * np.diff(x)) + x[-1] * (pressure[-1] - 0.5 * slope * x[-1])
    return force / RADIUS_M, float(x[-1])


class AxisFit(NamedTuple):
    """The cone's surface near the axis, fitted on the net's points in AXIS_WINDOW."""

    singular: float  # m rad: A in psi - pi/2 = A/x + B + b x + c x^2 (circle); 0 in plane strain
    tilt: float  # rad: B, psi - pi/2 at the axis of the regular part
    psi: np.ndarray  # (B, b, c): psi - pi/2 regular part, lowest power first
    depth: np.ndarray  # y(x), m: cubic, lowest power first
    sigma: np.ndarray  # sigma(x), kPa: cubic


def _axis_fit(line: np.ndarray, axisymmetric: bool, window: tuple[float, float]) -> AxisFit:
    """Least-squares fits of the cone's surface (``line``, edge first) on its points with x
    in ``window`` (m), where the net resolves it well."""
    end = _ordered_prefix(line[:, 0])
    x, y, sigma, psi = line[:end].T
    inside = (x >= window[0]) & (x <= window[1])
    if np.count_nonzero(inside) < 6:
        raise ArithmeticError(f"{np.count_nonzero(inside)} points of the cone's surface lie within "
                              f"{window[0]:g} to {window[1]:g} m of the axis; 6 are needed (a finer net)")
    x, y, sigma, tilt = x[inside], y[inside], sigma[inside], psi[inside] - math.pi / 2
    powers = np.vander(x, 4, increasing=True)
    if axisymmetric:  # (psi - pi/2) x = A + B x + b x^2 + c x^3
        singular, *regular = np.linalg.lstsq(powers, tilt * x, rcond=None)[0]
    else:
        singular, regular = 0.0, np.linalg.lstsq(powers[:, :3], tilt, rcond=None)[0]
    return AxisFit(float(singular), float(regular[0]), np.asarray(regular),
                   np.linalg.lstsq(powers, y, rcond=None)[0], np.linalg.lstsq(powers, sigma, rcond=None)[0])


def _cone_to_axis(line: np.ndarray, fit: AxisFit, window: tuple[float, float]) -> np.ndarray:
    """The cone's surface from the edge to the axis: the net's points down to the window's
    near end, then the fitted regular part (psi - pi/2 = B + b x + c x^2, the singular
    term dropped) at Gauss-Legendre points down to the axis, with weights: (n, 5), the last
    column the closing piece's quadrature weights in x (0 on the net's points)."""
    end = _ordered_prefix(line[:, 0])
    kept = line[:end][line[:end, 0] >= window[0]]
    nodes, weights = np.polynomial.legendre.leggauss(8)
    x_end = kept[-1, 0]
    x = 0.5 * x_end * (1.0 - nodes)  # from near x_end down to near 0
    closing = np.column_stack([x, np.polynomial.polynomial.polyval(x, fit.depth),
                               np.polynomial.polynomial.polyval(x, fit.sigma),
                               math.pi / 2 + np.polynomial.polynomial.polyval(x, fit.psi),
                               0.5 * x_end * weights])
    return np.vstack([np.column_stack([kept, np.zeros(len(kept))]), closing])


def _cone_load(soil: Soil, cone: np.ndarray, fit: AxisFit, axisymmetric: bool) -> float:
    """q_u kPa: the vertical force of the soil on the rigid cone (wedge) whose surface is
    ``cone`` (from `_cone_to_axis`), per footing area (per half width)."""
    net = cone[:, 4] == 0.0
    x, y, sigma, psi = cone[:, :4].T
    radius = soil.radius_kPa(sigma, y)
    sigma_y, tau = sigma - radius * np.cos(2 * psi), radius * np.sin(2 * psi)
    weight = x if axisymmetric else np.ones_like(x)
    # force per length of the surface: tau dy - sigma_y dx (outward normal dy, -dx)
    fy, fx = tau[net] * weight[net], -sigma_y[net] * weight[net]
    xn, yn = x[net], y[net]
    force = np.sum(0.5 * (fy[1:] + fy[:-1]) * np.diff(yn) + 0.5 * (fx[1:] + fx[:-1]) * np.diff(xn))
    # the closing piece, x from the last net point to 0: dy = y'(x) dx, and dx runs negative
    slope = np.polynomial.polynomial.polyval(x[~net], np.polynomial.polynomial.polyder(fit.depth))
    force -= np.sum(cone[~net, 4] * weight[~net] * (tau[~net] * slope - sigma_y[~net]))
    return (2.0 * force / RADIUS_M ** 2) if axisymmetric else force / RADIUS_M


def _rough_fan_angle(cone_line: Callable[[float], np.ndarray], soil: Soil, tolerance: float) -> float:
    """rad: a first, coarse fan angle for a rough base, where the sign of ``miss`` changes.

    ``miss`` (m) is how far from the axis the cone's surface turns away, signed by psi - pi/2
    there: on the circle a psi off the one sought grows like 1/x towards the axis and turns
    the line away, down when below, back up when above (in plane strain it crosses the axis
    with psi_A); on a net the sign change is a jump of the order of one step."""
    def miss(fan_angle: float) -> float:
        line = cone_line(fan_angle)
        last = line[_ordered_prefix(line[:, 0]) - 1]
        return float(math.copysign(last[0], last[3] - math.pi / 2))

    low, high = math.pi / 2 - 0.05, math.pi - soil.mu - 0.05  # AC leaves A below the base
    if not miss(low) <= 0.0 < miss(high):
        raise ArithmeticError(f"no fan angle from {low:.6f} to {high:.6f} rad brings the cone to the axis")
    return brentq(miss, low, high, xtol=tolerance)


# -- one net, its reach, a convergence study --------------------------------------------

def capacity(soil: Soil, base: str, axisymmetric: bool, lines: int, fan_steps: int,
             reach_m: float, fan_bracket: tuple[float, float] | None = None,
             window: tuple[float, float] = FIRST_WINDOW) -> Capacity:
    """q_u on one net: ``lines`` alpha lines from the surface [a, ``reach_m``], ``fan_steps``
    beta lines in the fan. A rough base's fan angle is found (brentq) on this net, within
    ``fan_bracket`` (rad) when given; ``window`` (m from the axis) is where the cone's surface
    is fitted to find it (module docstring)."""
    if base not in BASES:
        raise ValueError(f"base: {base!r} is not allowed; must be one of {', '.join(BASES)}")
    soil.check()
    edge_line = _passive_zone(soil, axisymmetric, reach_m, lines)
    if base == "smooth":
        fan = _fan(soil, axisymmetric, edge_line, math.pi / 2, fan_steps)
        pressure, gap = _base_load(soil, _active_zone(soil, axisymmetric, fan[:, -1]), axisymmetric)
        if gap > AXIS_SLIVER * RADIUS_M:
            raise ArithmeticError(f"the net ends {gap:.3g} m from the axis; reach_m {reach_m:g} is too short")
        return Capacity(pressure, lines, fan_steps, reach_m, math.pi / 2, gap, 0.0)

    def cone_line(fan_angle: float) -> np.ndarray:
        return _fan(soil, axisymmetric, edge_line, fan_angle, fan_steps)[:, -1]

    def off_axis(fan_angle: float) -> float:
        fit = _axis_fit(cone_line(fan_angle), axisymmetric, window)
        return fit.singular if axisymmetric else fit.tilt

    if fan_bracket is None:
        guess = _rough_fan_angle(cone_line, soil, 1e-4)
        fan_bracket = (guess - 0.02, guess + 0.02)
    fan_angle = brentq(off_axis, *fan_bracket, xtol=1e-13)
    line = cone_line(fan_angle)
    fit = _axis_fit(line, axisymmetric, window)
    cone = _cone_to_axis(line, fit, window)
    return Capacity(_cone_load(soil, cone, fit, axisymmetric), lines, fan_steps, reach_m, fan_angle,
                    0.0, fit.tilt)


def reach(soil: Soil, base: str, axisymmetric: bool, lines: int = 64) -> float:
    """m: how far along the surface (from the axis) the net must reach so that the part of it
    the load depends on is inside: a coarse net on a generous guess, 3 exp(pi/2 tan(phi))
    tan(45 + phi/2) a beyond the edge (the strip's plastic zone reaches less far), then the
    first alpha line not needed, with a margin. When that part spans less than a quarter of
    the coarse net (strength rising steeply with depth makes the plastic zone shallow and
    short), the coarse net is redone on twice that part, so that the reach is resolved."""
    soil.check()
    phi = soil.phi
    guess = RADIUS_M * (1.0 + 3.0 * math.exp(math.pi / 2 * math.tan(phi)) * math.tan(math.pi / 4 + phi / 2))
    for _ in range(2):
        surface = np.linspace(RADIUS_M, guess, lines + 1)
        edge_line = _passive_zone(soil, axisymmetric, guess, lines)
        if base == "smooth":
            fan = _fan(soil, axisymmetric, edge_line, math.pi / 2, lines // 2)
            end = _ordered_prefix(_active_zone(soil, axisymmetric, fan[:, -1])[:, 0])
            margin = REACH_MARGIN
        else:
            def cone_line(fan_angle: float) -> np.ndarray:
                return _fan(soil, axisymmetric, edge_line, fan_angle, lines // 2)[:, -1]

            end = _ordered_prefix(cone_line(_rough_fan_angle(cone_line, soil, 1e-3))[:, 0])
            margin = 1.0 + 2.0 * (REACH_MARGIN - 1.0)  # the fan angle moves on finer nets
        if end > lines:
            raise ArithmeticError(f"the guess {guess:g} m does not reach the axis")
        if 4 * end >= lines:
            break
        guess = float(surface[2 * end])
    return RADIUS_M + margin * (surface[end] - RADIUS_M)


def factor(soil: Soil, pressure_kPa: float) -> float:
    """q_u / c when there is no surcharge (Nc), q_u / q otherwise (Nq, c = 0)."""
    return pressure_kPa / (soil.surcharge_kPa if soil.cohesion_kPa == 0.0 else soil.cohesion_kPa)


def study(soil: Soil, base: str, axisymmetric: bool, coarsest: int = 64, levels: int = 4,
          fan_ratio: float = 0.5, progress: Callable[[str], None] | None = None) -> Study:
    """The factor on ``levels`` nets, each with twice the lines and fan steps of the one
    before, and its Richardson extrapolation (the scheme is of second order:
    E = v + (v - v_before) / 3). ``error`` is |E - E_before|, plus, on a rough base, the
    change of the finest value when the cone is fitted on a second window (0.08 to 0.35 m
    instead of 0.05 to 0.25 m); ``order`` is log2 of the ratio of the last two differences."""
    if soil.cohesion_kPa * soil.surcharge_kPa != 0.0 or soil.cohesion_kPa + soil.surcharge_kPa <= 0.0:
        raise ValueError("soil: give either cohesion_kPa or surcharge_kPa > 0, the other 0")
    start = time.perf_counter()
    reach_m = reach(soil, base, axisymmetric)
    values, counts, bracket, results = [], [], None, []
    for level in range(levels):
        lines = coarsest * 2 ** level
        fan_steps = max(2, round(fan_ratio * lines))
        results.append(capacity(soil, base, axisymmetric, lines, fan_steps, reach_m, bracket))
        values.append(factor(soil, results[-1].pressure_kPa))
        counts.append(lines)
        if base == "rough":
            bracket = (results[-1].fan_angle - 0.01, results[-1].fan_angle + 0.01)
        if progress:
            progress(f"  {lines:5d} lines, {fan_steps:4d} fan steps: {values[-1]:.7f} "
                     f"({time.perf_counter() - start:.0f} s)")
    spread = 0.0
    if base == "rough":
        other = capacity(soil, base, axisymmetric, counts[-1], max(2, round(fan_ratio * counts[-1])),
                         reach_m, bracket, window=SECOND_WINDOW)
        spread = abs(factor(soil, other.pressure_kPa) - values[-1])
    extrapolated = [v + (v - w) / 3.0 for v, w in zip(values[1:], values[:-1])]
    d1, d2 = values[-2] - values[-3], values[-1] - values[-2]
    order = math.log2(abs(d1 / d2)) if d2 != 0.0 and d1 != 0.0 else math.inf
    return Study([float(v) for v in values], counts, order, float(extrapolated[-1]),
                 float(abs(extrapolated[-1] - extrapolated[-2]) + spread), results[-1].fan_angle,
                 results[-1].axis_tilt, float(spread), time.perf_counter() - start)


# -- the table ------------------------------------------------------------------------

FRICTION_ANGLES_DEG = (0.0, 10.0, 20.0, 30.0)


def closed_form(friction_angle_deg: float, which: str) -> float:
    """The strip's exact factor: Nq = exp(pi tan phi) tan^2(45 + phi/2) (Reissner 1924),
    Nc = (Nq - 1) cot phi (Prandtl 1920; Reissner 1924), 2 + pi at phi = 0."""
    phi = math.radians(friction_angle_deg)
    nq = math.exp(math.pi * math.tan(phi)) * math.tan(math.pi / 4 + phi / 2) ** 2
    if which == "Nq":
        return nq
    return 2.0 + math.pi if phi == 0.0 else (nq - 1.0) / math.tan(phi)


def soil_for(friction_angle_deg: float, which: str) -> Soil:
    """Nc: c = 1 kPa, q = 0; Nq: c = 0, q = 1 kPa (the factors do not depend on the values)."""
    return Soil(friction_angle_deg, 1.0, 0.0) if which == "Nc" else Soil(friction_angle_deg, 0.0, 1.0)


def rows(axisymmetric: bool, coarsest: int, levels: int,
         progress: Callable[[str], None] | None = None) -> list[dict]:
    """Every factor of the table: Nc and Nq (not at phi = 0, where Nq = 1 with no strength),
    smooth and rough, for FRICTION_ANGLES_DEG."""
    table = []
    for friction_angle in FRICTION_ANGLES_DEG:
        for which in ("Nc", "Nq"):
            if which == "Nq" and friction_angle == 0.0:
                continue
            for base in BASES:
                if progress:
                    progress(f"{'circle' if axisymmetric else 'strip'}, {base}, phi {friction_angle:g}, {which}:")
                result = study(soil_for(friction_angle, which), base, axisymmetric, coarsest, levels,
                               progress=progress)
                table.append({"shape": "circle" if axisymmetric else "strip", "base": base,
                              "phi": friction_angle, "factor": which, **result._asdict()})
    return table


def format_rows(table: list[dict], closed: bool) -> str:
    """The rows as an aligned text table; ``closed``: beside the strip's closed forms."""
    head = ["shape", "base", "phi", "factor", *[f"{n} lines" for n in table[0]["lines"]], "order",
            "extrapolated", "est. error", "fan angle deg", "s"]
    if closed:
        head[-1:-1] = ["closed form", "difference"]
    cells = [head]
    for row in table:
        line = [row["shape"], row["base"], f"{row['phi']:g}", row["factor"],
                *[f"{v:.6f}" for v in row["values"]], f"{row['order']:.2f}",
                f"{row['extrapolated']:.6f}", f"{row['error']:.1e}",
                f"{math.degrees(row['fan_angle']):.3f}", f"{row['seconds']:.0f}"]
        if closed:
            exact = closed_form(row["phi"], row["factor"])
            line[-1:-1] = [f"{exact:.6f}", f"{row['extrapolated'] - exact:+.1e}"]
        cells.append(line)
    return _aligned(cells, text_columns=4)


def _aligned(cells: list[list[str]], text_columns: int) -> str:
    """Rows of cells (the first the header) as an aligned text table: the first
    ``text_columns`` columns left-aligned, the numbers right-aligned, a rule under the header."""
    widths = [max(len(row[i]) for row in cells) for i in range(len(cells[0]))]
    text = ["  ".join(c.rjust(w) if i >= text_columns else c.ljust(w) for i, (c, w) in enumerate(zip(row, widths)))
            for row in cells]
    text.insert(1, "  ".join("-" * w for w in widths))
    return "\n".join(text)


KAPPAS = (0.0, 1.0, 2.0, 5.0, 10.0, 20.0)  # rho B / su0 for the rising-strength table
# The rough base's cone (wedge) reaches the axis only for small kappa (module docstring).
KAPPAS_ROUGH = {False: (0.5, 1.0), True: (0.5,)}
# F recalled from Davis & Booker's (1973) chart for q_u = F [(2 + pi) su0 + rho B / 4], as in
# verification/cases.toml (from memory; the recollection does not say rough or smooth).
DAVIS_BOOKER_FROM_MEMORY = {0.0: 1.0, 2.0: 1.1, 10.0: 1.27, 20.0: 1.4}


def rising_soil(kappa: float) -> Soil:
    """su0 = 1 kPa, rho = kappa su0 / B kPa/m (B = 2a), no surcharge."""
    return Soil(0.0, 1.0, 0.0, kappa / (2.0 * RADIUS_M))


def rising_rows(axisymmetric: bool, base: str, coarsest: int, levels: int,
                progress: Callable[[str], None] | None = None) -> list[dict]:
    """q_u / su0 for KAPPAS (smooth) or KAPPAS_ROUGH (rough: only where the cone reaches the
    axis, module docstring)."""
    table = []
    for kappa in KAPPAS if base == "smooth" else KAPPAS_ROUGH[axisymmetric]:
        if progress:
            progress(f"{'circle' if axisymmetric else 'strip'}, {base}, rho B/su0 = {kappa:g}:")
        result = study(rising_soil(kappa), base, axisymmetric, coarsest, levels, progress=progress)
        table.append({"shape": "circle" if axisymmetric else "strip", "base": base, "kappa": kappa,
                      **result._asdict()})
    return table


def format_rising(table: list[dict]) -> str:
    """The rising-strength rows as an aligned text table; the strip beside Davis & Booker's
    form with the computed F and the F recalled from their chart."""
    strip = table[0]["shape"] == "strip"
    head = ["shape", "base", "rho B/su0", *[f"{n} lines" for n in table[0]["lines"]], "order", "extrapolated",
            "est. error"] + (["F computed", "F recalled"] if strip else [])
    cells = [head]
    for row in table:
        line = [row["shape"], row["base"], f"{row['kappa']:g}", *[f"{v:.6f}" for v in row["values"]], f"{row['order']:.2f}",
                f"{row['extrapolated']:.6f}", f"{row['error']:.1e}"]
        if strip:
            recalled = DAVIS_BOOKER_FROM_MEMORY.get(row["kappa"])
            line += [f"{row['extrapolated'] / (2.0 + math.pi + row['kappa'] / 4.0):.4f}",
                     "-" if recalled is None else f"{recalled:g}"]
        cells.append(line)
    return _aligned(cells, text_columns=2)


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(prog="verification/characteristics.py",
                                     description=__doc__.splitlines()[0])
    parser.add_argument("--levels", type=int, default=4, choices=range(3, 7), metavar="3..6",
                        help="nets of 64 lines doubled this many times less one (default 4: 64 to 512)")
    parser.add_argument("--strip", action="store_true", help="also the strip, beside its closed forms")
    parser.add_argument("--rising", action="store_true",
                        help="instead: Tresca soil with su rising with depth, strip and circle (smooth, "
                             "and rough for small kappa), nets of 128 lines doubled (rough: 64)")
    args = parser.parse_args(argv)
    levels = args.levels
    say = lambda line: print(line, file=sys.stderr, flush=True)  # noqa: E731
    if args.rising:
        print("Tresca soil, su = su0 + rho y: q_u / su0 (q_u = load / footing area; strip: "
              "F = (q_u / su0) / (2 + pi + rho B / (4 su0)), recalled F from memory of Davis & Booker 1973):\n")
        for axisymmetric in (False, True):
            print(format_rising(rising_rows(axisymmetric, "smooth", 128, levels, say)), "\n")
            print(format_rising(rising_rows(axisymmetric, "rough", 64, levels + 1, say)), "\n")
        return 0
    if args.strip:
        print("Strip (plane strain) against the closed forms:\n")
        print(format_rows(rows(False, 64, levels, say), closed=True), "\n")
    print("Circle (axial symmetry, Haar-von Karman, hoop stress = minor principal stress); "
          "q_u = load / footing area:\n")
    print(format_rows(rows(True, 64, levels, say), closed=False))
    print("\nNets: 'lines' alpha lines from the surface, half as many fan steps; extrapolated: "
          "Richardson on the last two nets (second order); est. error: the extrapolation's last "
          "change, plus on a rough base the effect of the cone's fitting window. A value of the "
          "method of characteristics is a stress field in the plastic zone only: believed exact, "
          "not itself a rigorous bound.")
    return 0


if __name__ == "__main__":
    sys.exit(main())
