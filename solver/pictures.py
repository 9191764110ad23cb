"""Pictures of a run (matplotlib, PNG and SVG beside result.json).

* ``model``: the ground profile, the layers with their parameters, the water
  table (when given), the footing and the lower bound's mesh; the whole model
  and a detail near the footing.
* ``mechanism``: the upper bound's collapse mechanism: plastic dissipation
  shaded on the mesh, velocity arrows, the footing's motion and the extent of
  the moving soil (m and multiples of B).
* ``stress``: the lower bound's stress field: yield utilisation and the
  directions of the principal stresses in the plastic zone (compression
  positive).
* :func:`convergence_figure`: lower and upper bound, and wall time, against the
  number of elements (for runs that refine the mesh).

Symmetric cases are solved on the half domain x >= 0 and mirrored here. Colour
maps run from light to dark so that the pictures print in grey; every series
also differs in line style or marker. Text from the case file is drawn as
plain text (never as mathematics markup). Figures are built without pyplot, so
drawing has no global state.
"""
from __future__ import annotations

import io
import math
import textwrap
from pathlib import Path

import numpy as np
from matplotlib import rc_context
from matplotlib.colors import BoundaryNorm, LinearSegmentedColormap, LogNorm
from matplotlib.figure import Figure
from matplotlib.lines import Line2D
from matplotlib.patches import Patch, Rectangle
from matplotlib.tri import LinearTriInterpolator, Triangulation

from .export import BoundFields, principal_stresses, write_bytes_atomic
from .model import Case

STYLE = {"font.size": 8.5, "axes.titlesize": 9.5, "axes.labelsize": 8.5, "legend.fontsize": 8,
         "xtick.labelsize": 8, "ytick.labelsize": 8, "svg.hashsalt": "bearbound",
         "svg.fonttype": "path", "figure.dpi": 100}
PNG_DPI = 150
PAGE_WIDTH_IN = 7.2  # fits an A4 or Letter page with margins
# Layer fills: distinct lightness (so they differ in grey) and a hatch each.
LAYER_COLOURS = ("#f3e6c4", "#bfd9d4", "#dcc08a", "#9cc3bb", "#e6d7b0", "#7fa9a1")
LAYER_HATCHES = ("", ".", "/", "x", "\\", "o")
FOOTING_COLOUR = "#3a3a3a"
MOVING_SPEED = 1e-3  # as analysis.CLEAR_FRACTION: the soil 'moves' above this fraction of the footing's speed
PLASTIC_UTILISATION = 0.98  # stress points at least this close to the yield surface count as plastic
# Light-to-dark maps that print in grey.
UTILISATION_MAP = LinearSegmentedColormap.from_list("utilisation", ["#ffffff", "#e3e3e3", "#a6a6a6", "#6e6e6e"])
# (light to mid: the black velocity arrows stay visible on the darkest shade, in colour or grey)
DISSIPATION_MAP = LinearSegmentedColormap.from_list("dissipation", ["#fdf0dc", "#f2b27a", "#d27646", "#a0583a"])


def plain(text: str) -> str:
    """Text from the case file, made safe for matplotlib: a '$' is drawn, never read as mathematics.

    >>> print(plain("fill $x$"))
    fill \\$x\\$
    """
    return str(text).replace("$", r"\$")


# -- geometry helpers ------------------------------------------------------------

def mirror_points(points: np.ndarray, half: bool) -> np.ndarray:
    """Points of the half domain and their mirror images (x -> -x), when ``half``."""
    return np.vstack([points, points * [-1.0, 1.0]]) if half else points


def mirror_triangles(triangles: np.ndarray, n_points: int, half: bool,
                     points: np.ndarray | None = None) -> np.ndarray:
    """Triangles of the half domain and of its mirror image (indices into mirror_points).

    Given ``points``, mirrored triangles reuse the original of every node on x = 0, so
    that the whole is one valid triangulation (needed for interpolation)."""
    if not half:
        return triangles
    image = np.arange(n_points) + n_points
    if points is not None:
        on_axis = np.abs(points[:, 0]) <= 1e-9 * max(float(np.abs(points).max()), 1.0)
        image[on_axis] = np.flatnonzero(on_axis)
    return np.vstack([triangles, image[triangles]])


def own_node_triangulation(fields: BoundFields, half: bool) -> Triangulation:
    """Each triangle with its own three points (the lower bound's stress jumps across edges)."""
    pts = fields.points[fields.triangles[:, :3]].reshape(-1, 2)
    tri = np.arange(len(pts)).reshape(-1, 3)
    pts_all = mirror_points(pts, half)
    return Triangulation(pts_all[:, 0], pts_all[:, 1], mirror_triangles(tri, len(pts), half))


def corner_triangulation(fields: BoundFields, half: bool) -> Triangulation:
    pts = mirror_points(fields.points, half)
    tri = mirror_triangles(fields.triangles[:, :3], len(fields.points), half)
    return Triangulation(pts[:, 0], pts[:, 1], tri)


def split_quadratic(triangles: np.ndarray) -> np.ndarray:
    """Four linear triangles per 6-node triangle (corners 0-2, midsides 3: 0-1, 4: 1-2, 5: 2-0)."""
    t = triangles
    return np.vstack([t[:, [0, 3, 5]], t[:, [3, 1, 4]], t[:, [5, 4, 2]], t[:, [3, 4, 5]]])


def view_extent(B: float, domain: dict, mechanism: dict | None) -> tuple[float, float]:
    """Half-width and depth (m) of the detail view: the mechanism with some room around it."""
    if mechanism and mechanism.get("mechanism_half_width_m"):
        half_width, depth = mechanism["mechanism_half_width_m"], mechanism["mechanism_depth_m"]
    else:
        half_width = B / 2 + domain.get("estimated_mechanism_width_m", 2 * B)
        depth = domain.get("estimated_mechanism_depth_m", 2 * B)
    half_width = min(1.15 * half_width + 0.3 * B, domain["width_m"] / (1 if domain["half_domain_by_symmetry"] else 2))
    depth = min(1.25 * depth + 0.3 * B, domain["depth_m"])
    return half_width, depth


def _layer_label(layer, top: float, bottom: float) -> str:
    """One legend line per layer: name, depths below ground, model and parameters with units."""
    if layer.is_tresca:
        strength = f"Tresca, su = {layer.undrained_strength:g} kPa at its top"
        if layer.strength_gradient:
            strength += f", rising {layer.strength_gradient:g} kPa/m"
    else:
        strength = f"Mohr-Coulomb, c\u2032 = {layer.cohesion:g} kPa, \u03c6\u2032 = {layer.friction_angle:g}\u00b0"
    depths = f"from {top:g} m below ground down" if math.isinf(bottom) else f"{top:g} to {bottom:g} m below ground"
    return textwrap.fill(f"{plain(layer.name)} ({depths}): {strength}, \u03b3 = {layer.unit_weight:g} kN/m\u00b3",
                         105, subsequent_indent="    ")


def _draw_ground(ax, case: Case, x_min: float, x_max: float, y_min: float, surcharge_marks: bool) -> list:
    """Layer bands below the base, the soil above the base beside the footing, the ground
    surface, the surcharge and the water table. Returns legend handles."""
    handles = []
    B, Df = case.footing.width, case.footing.embedment
    below = {id(layer): (top, bottom) for layer, top, bottom, _ in case.layers_below_base()}
    for i, (layer, top) in enumerate(zip(case.layers, case.layer_tops())):
        if id(layer) not in below:
            continue  # wholly above the base: carried as surcharge, drawn below with that soil
        colour, hatch = LAYER_COLOURS[i % len(LAYER_COLOURS)], LAYER_HATCHES[i % len(LAYER_HATCHES)]
        base_top, base_bottom = below[id(layer)]
        low = max(-base_bottom, y_min) if math.isfinite(base_bottom) else y_min
        ax.add_patch(Rectangle((x_min, low), x_max - x_min, -base_top - low, facecolor=colour, hatch=hatch,
                               edgecolor="#6b6b6b", linewidth=0.0, zorder=0))
        if base_top > 0:
            ax.axhline(-base_top, color="#4d4d4d", linewidth=0.8, linestyle="--", zorder=3)
        bottom = top + layer.thickness if layer.thickness is not None else math.inf
        handles.append(Patch(facecolor=colour, hatch=hatch, edgecolor="#6b6b6b",
                             label=_layer_label(layer, top, bottom)))
    if Df > 0:
        for left in (x_min, B / 2):
            ax.add_patch(Rectangle((left, 0.0), x_max - B / 2, Df, facecolor="#ececec", hatch="---",
                                   edgecolor="#9a9a9a", linewidth=0.0, zorder=0))
        handles.append(Patch(facecolor="#ececec", hatch="---", edgecolor="#9a9a9a",
                             label=f"soil above the base (Df = {Df:g} m): not meshed, carried as the surcharge "
                                   f"{case.overburden_kPa():g} kPa beside the footing"))
    ax.plot([x_min, -B / 2, -B / 2], [Df, Df, 0], color="black", linewidth=0.9, zorder=4)
    ax.plot([B / 2, B / 2, x_max], [0, Df, Df], color="black", linewidth=0.9, zorder=4)
    if case.ground.surcharge > 0:
        marks = np.linspace(0.95 * x_min, 0.95 * x_max, 41)
        marks = marks[np.abs(marks) > B / 2 + 0.02 * (x_max - x_min)]
        if surcharge_marks:
            ax.plot(marks, np.full(marks.shape, Df + 0.06 * B), linestyle="none", marker=7, color="black",
                    markersize=4, zorder=5)
        handles.append(Line2D([], [], linestyle="none", marker=7, color="black", markersize=4,
                              label=f"surcharge on the ground surface: {case.ground.surcharge:g} kPa"))
    water = case.ground.water_table
    if water is not None:
        y = Df - water
        ax.axhline(y, color="#1f4e9c", linestyle=(0, (6, 3)), linewidth=1.0, zorder=5)
        ax.plot([x_min + 0.04 * (x_max - x_min)], [y], marker="v", color="#1f4e9c", markersize=6, zorder=5)
        handles.append(Line2D([], [], color="#1f4e9c", linestyle=(0, (6, 3)), marker="v",
                              label=f"water table, {water:g} m below ground"))
    return handles


def _draw_footing(ax, B: float, Df: float, stem: float) -> Patch:
    ax.add_patch(Rectangle((-B / 2, 0.0), B, Df + stem, facecolor=FOOTING_COLOUR, edgecolor="black",
                           linewidth=0.8, zorder=6))
    return Patch(facecolor=FOOTING_COLOUR, edgecolor="black", label=f"footing, B = {B:g} m")


def _draw_interfaces(ax, case: Case) -> None:
    for _, layer_top, _, _ in case.layers_below_base():
        if layer_top > 0:
            ax.axhline(-layer_top, color="#4d4d4d", linewidth=0.8, linestyle="--", zorder=3)


def _draw_surface(ax, B: float, Df: float, hw: float) -> None:
    ax.plot([-hw, -B / 2, -B / 2], [Df, Df, 0], color="black", linewidth=0.9, zorder=4)
    ax.plot([B / 2, B / 2, hw], [0, Df, Df], color="black", linewidth=0.9, zorder=4)


def _mesh_lines(ax, tri: Triangulation, linewidth: float):
    ax.triplot(tri, color="#202020", linewidth=linewidth, alpha=0.45, zorder=2, rasterized=True)


def _axes_labels(ax):
    ax.set_xlabel("x from the footing centre (m)")
    ax.set_ylabel("y (m), 0 at the footing base")
    ax.set_aspect("equal")


LEFT_IN, RIGHT_IN = 0.8, 0.2  # room for the y tick labels and label; a little on the right
PLOT_WIDTH_IN = PAGE_WIDTH_IN - LEFT_IN - RIGHT_IN
MAX_PLOT_HEIGHT_IN = 4.5
TITLE_IN, XLABEL_IN = 0.32, 0.55  # a title above, tick labels and axis label below an axes
CAPTION_FONT = 7.5
CAPTION_CHARS = 118  # characters per caption line at CAPTION_FONT across the page
LINE_IN = 0.135  # one line of 8-point text
TITLE_CHARS = 80  # a title of the page's width (the case title is cut short: the report has it whole)


class _Column:
    """Rows stacked from the top at fixed heights (inches): a layout computed once, so that
    equal-aspect plots, colour bars, legends and captions never overlap."""

    def __init__(self, rows: list[tuple[str, float]]):
        self.height = sum(h for _, h in rows)
        self.fig = Figure(figsize=(PAGE_WIDTH_IN, self.height))
        self.rows, y = {}, 0.0
        for name, h in rows:
            self.rows[name] = (y, h)
            y += h

    def axes(self, name: str, width_in: float = PLOT_WIDTH_IN, left_in: float | None = None):
        y, h = self.rows[name]
        left = LEFT_IN + (PLOT_WIDTH_IN - width_in) / 2 if left_in is None else left_in
        return self.fig.add_axes((left / PAGE_WIDTH_IN, 1 - (y + h) / self.height,
                                  width_in / PAGE_WIDTH_IN, h / self.height))

    def text(self, name: str, text: str, **style):
        y, _ = self.rows[name]
        return self.fig.text(0.1 / PAGE_WIDTH_IN, 1 - y / self.height, text, ha="left", va="top", **style)


def _plot_size(x_range: float, y_range: float) -> tuple[float, float]:
    """Width and height (inches) of an equal-aspect plot of the page's width, height capped."""
    height = PLOT_WIDTH_IN * y_range / x_range
    if height <= MAX_PLOT_HEIGHT_IN:
        return PLOT_WIDTH_IN, height
    return MAX_PLOT_HEIGHT_IN * x_range / y_range, MAX_PLOT_HEIGHT_IN


def _field_layout(x_range: float, y_range: float, caption: str):
    """Figure, main axes and colour-bar axes of a field picture, with its caption."""
    lines = textwrap.wrap(caption, CAPTION_CHARS)
    width, height = _plot_size(x_range, y_range)
    column = _Column([("title", TITLE_IN), ("main", height), ("xlabel", XLABEL_IN), ("bar", 0.14),
                      ("barlabel", 0.5), ("caption", 0.14 * len(lines) + 0.08)])
    ax, cax = column.axes("main", width), column.axes("bar")
    column.text("caption", "\n".join(lines), fontsize=CAPTION_FONT)
    return column.fig, ax, cax


def _legend_height(labels: list[str]) -> float:
    """Inches a one-column legend of these (already wrapped) labels needs."""
    return sum(LINE_IN * max(1, label.count("\n") + 1) + 0.06 for label in labels) + 0.12


# -- the pictures ---------------------------------------------------------------

def model_figure(case: Case, domain: dict, lower: BoundFields | None, upper: BoundFields | None,
                 mechanism: dict | None = None) -> Figure:
    """The model: layers, ground profile, water table, footing and mesh (whole model and detail)."""
    B, Df = case.footing.width, case.footing.embedment
    half = domain["half_domain_by_symmetry"]
    x_far = domain["width_m"] if half else domain["width_m"] / 2
    depth = domain["depth_m"]
    top = Df + 0.3 * B
    mesh_fields = lower if lower is not None else upper
    hw, vd = view_extent(B, domain, mechanism)
    with rc_context(STYLE):
        kind = "lower" if lower is not None else "upper"
        mesh_label = (f"mesh of the {kind} bound: {mesh_fields.n_elements} triangles"
                      + (" on the half x \u2265 0, mirrored" if half else "")) if mesh_fields else "no mesh"
        probe = Figure().add_subplot()  # the legend entries, to size the legend's row
        labels = [h.get_label() for h in _draw_ground(probe, case, -1, 1, -1, False)] + ["footing", mesh_label]
        whole, detail = _plot_size(2 * x_far, depth + top), _plot_size(2 * hw, vd + top)
        column = _Column([("title0", TITLE_IN), ("whole", whole[1]), ("xlabel0", XLABEL_IN),
                          ("title1", TITLE_IN), ("detail", detail[1]), ("xlabel1", XLABEL_IN),
                          ("legend", _legend_height(labels))])
        fig = column.fig
        axes = (column.axes("whole", whole[0]), column.axes("detail", detail[0]))
        handles = []
        for ax, (x_lim, y_lim, lw) in zip(axes, ((x_far, depth, 0.12), (hw, vd, 0.3))):
            handles = _draw_ground(ax, case, -x_lim * 1.05, x_lim * 1.05, -y_lim * 1.05,
                                   surcharge_marks=ax is axes[1])
            footing = _draw_footing(ax, B, Df, stem=0.25 * B)
            if mesh_fields is not None:
                _mesh_lines(ax, corner_triangulation(mesh_fields, half), lw)
            ax.set_xlim(-x_lim, x_lim)
            ax.set_ylim(-y_lim, top)
            _axes_labels(ax)
        ax0, ax1 = axes
        ax0.add_patch(Rectangle((-hw, -vd), 2 * hw, vd + top, fill=False, edgecolor="black",
                                linestyle=":", linewidth=1.0, zorder=7))
        ax0.set_title(textwrap.shorten(f"The model: {plain(case.title)}", TITLE_CHARS, placeholder=" ..."),
                      loc="left")
        ax1.set_title("Detail near the footing (dotted frame above)", loc="left")
        handles = handles + [footing, Line2D([], [], color="#202020", linewidth=0.5, alpha=0.6, label=mesh_label)]
        lax = column.axes("legend", PAGE_WIDTH_IN - 0.2, left_in=0.1)
        lax.axis("off")
        lax.legend(handles=handles, loc="upper left", ncols=1, frameon=False, handlelength=2.2,
                   handleheight=1.1, borderaxespad=0.0)
    return fig


def mechanism_figure(case: Case, domain: dict, upper: BoundFields, mechanism: dict | None,
                     pressure_kPa: float | None) -> Figure:
    """The upper bound's mechanism: dissipation shaded, velocity arrows, extent."""
    B, Df = case.footing.width, case.footing.embedment
    half = domain["half_domain_by_symmetry"]
    hw, vd = view_extent(B, domain, mechanism)
    top = Df + 0.45 * B
    caption = ("Shading: plastic dissipation per unit area (white: rigid, below 1/1000 of the peak). Arrows: "
               "soil velocity per unit downward velocity of the footing (thick arrow).")
    if mechanism and mechanism.get("mechanism_half_width_m"):
        mw, md = mechanism["mechanism_half_width_m"], mechanism["mechanism_depth_m"]
        caption += (f" Dashed frame: the soil moving faster than {MOVING_SPEED:.1%} of the footing, "
                    f"{2 * mw:.2f} m wide ({2 * mw / B:.2f} B) and {md:.2f} m deep ({md / B:.2f} B).")
    else:
        mw = md = None
    if any(not layer.is_tresca and layer.cohesion == 0 for layer, *_ in case.layers_below_base()):
        caption += (" A cohesionless layer (c\u2032 = 0) dissipates no energy under associated flow: "
                    "it shows no shading, its motion shows in the arrows.")
    caption += " Dashed lines: layer interfaces."
    with rc_context(STYLE):
        fig, ax, cax = _field_layout(2 * hw, vd + top, caption)
        tri = corner_triangulation(upper, half)
        density = np.concatenate([upper.arrays["dissipation"]] * (2 if half else 1))
        peak = float(density.max()) if density.size and density.max() > 0 else 1.0
        cmap = DISSIPATION_MAP.with_extremes(under="white")
        shade = ax.tripcolor(tri, facecolors=np.maximum(density, peak * 1e-9), cmap=cmap,
                             norm=LogNorm(vmin=peak * 1e-3, vmax=peak), rasterized=True, zorder=1)
        _draw_interfaces(ax, case)
        # velocity arrows on a regular grid, interpolated on the 6-node triangles split in four
        pts = mirror_points(upper.points, half)
        vel = upper.arrays["velocity"]
        vel = np.vstack([vel, vel * [-1.0, 1.0]]) if half else vel
        sub = mirror_triangles(split_quadratic(upper.triangles), len(upper.points), half, upper.points)
        fine = Triangulation(pts[:, 0], pts[:, 1], sub)
        spacing = 2 * hw / 30
        gx, gy = np.meshgrid(np.arange(-hw + spacing / 2, hw, spacing), np.arange(-spacing / 2, -vd, -spacing))
        u = LinearTriInterpolator(fine, vel[:, 0])(gx, gy)
        v = LinearTriInterpolator(fine, vel[:, 1])(gx, gy)
        speed = np.ma.hypot(u, v)
        show = ~np.ma.getmaskarray(speed) & (speed.filled(0) > 0.02)
        arrows = ax.quiver(gx[show], gy[show], u[show], v[show], angles="xy", scale_units="xy",
                           scale=1.0 / (0.9 * spacing), width=0.0026, color="#000000", zorder=5)
        ax.quiverkey(arrows, 0.74, 0.05, 1.0, "footing velocity", labelpos="E", coordinates="axes",
                     fontproperties={"size": 7.5})
        _draw_footing(ax, B, Df, stem=0.2 * B)
        ax.annotate("", xy=(0, Df + 0.2 * B), xytext=(0, top - 0.05 * B), zorder=7,
                    arrowprops={"arrowstyle": "-|>", "color": "black", "linewidth": 1.6})
        _draw_surface(ax, B, Df, hw)
        if mw is not None:
            ax.add_patch(Rectangle((-mw, -md), 2 * mw, md, fill=False, edgecolor="black", linestyle="--",
                                   linewidth=1.0, zorder=6))
            ax.annotate("", xy=(mw, -md), xytext=(mw, 0), zorder=7,
                        arrowprops={"arrowstyle": "<->", "color": "black", "linewidth": 0.8})
            ax.text(mw - 0.01 * hw, -md / 2, f"depth {md:.2f} m\n= {md / B:.2f} B", ha="right", va="center",
                    zorder=8, fontsize=7.5, bbox={"facecolor": "white", "edgecolor": "none", "alpha": 0.9, "pad": 1.5})
            ax.annotate("", xy=(-mw, -md), xytext=(mw, -md), zorder=7,
                        arrowprops={"arrowstyle": "<->", "color": "black", "linewidth": 0.8})
            ax.text(0, -md - 0.01 * vd, f"width {2 * mw:.2f} m = {2 * mw / B:.2f} B", ha="center", va="top",
                    zorder=8, fontsize=7.5, bbox={"facecolor": "white", "edgecolor": "none", "alpha": 0.9, "pad": 1.5})
        ax.set_xlim(-hw, hw)
        ax.set_ylim(-vd, top)
        _axes_labels(ax)
        bound = f"upper bound {pressure_kPa:.1f} kPa" if pressure_kPa is not None else "upper bound withheld"
        ax.set_title(f"Upper bound: collapse mechanism ({bound}; {upper.n_elements} six-node triangles)",
                     loc="left")
        bar = fig.colorbar(shade, cax=cax, orientation="horizontal", extend="min")
        bar.set_label("plastic dissipation, kN/m\u00b3 per unit footing velocity (log scale)")
    return fig


UTILISATION_LEVELS = (0.0, 0.5, 0.7, 0.8, 0.9, 0.95, 0.98, 1.0)


def stress_figure(case: Case, domain: dict, lower: BoundFields, mechanism: dict | None,
                  pressure_kPa: float | None) -> Figure:
    """The lower bound's stress field: utilisation and principal directions in the plastic zone."""
    B, Df = case.footing.width, case.footing.embedment
    half = domain["half_domain_by_symmetry"]
    hw, vd = view_extent(B, domain, mechanism)
    top = Df + 0.45 * B
    caption = (f"Shading: yield utilisation, the stress deviator over its value on the yield surface at the same "
               f"mean stress (1: on the yield surface). Crosses: principal stress directions (compression "
               f"positive) where every node of a triangle is within {1 - PLASTIC_UTILISATION:.0%} of the yield "
               f"surface, one per grid cell. Dashed lines: layer interfaces.")
    with rc_context(STYLE):
        fig, ax, cax = _field_layout(2 * hw, vd + top, caption)
        tri = own_node_triangulation(lower, half)
        util = lower.arrays["utilisation"].reshape(-1)
        util = np.clip(np.concatenate([util] * (2 if half else 1)), 0.0, 1.0)
        shade = ax.tricontourf(tri, util, levels=list(UTILISATION_LEVELS), cmap=UTILISATION_MAP, zorder=1,
                               norm=BoundaryNorm(UTILISATION_LEVELS, UTILISATION_MAP.N))
        shade.set_rasterized(True)
        _draw_interfaces(ax, case)
        # principal directions at the centroids of plastic triangles, one per grid cell
        stress = lower.arrays["stress_kPa"].mean(axis=1)  # compression positive
        centroid = lower.points[lower.triangles[:, :3]].mean(axis=1)
        plastic = lower.arrays["utilisation"].min(axis=1) >= PLASTIC_UTILISATION
        if half:
            stress = np.vstack([stress, stress * [1.0, 1.0, -1.0]])
            centroid = np.vstack([centroid, centroid * [-1.0, 1.0]])
            plastic = np.concatenate([plastic, plastic])
        spacing = 2 * hw / 30
        inside = plastic & (np.abs(centroid[:, 0]) < hw) & (centroid[:, 1] > -vd)
        picked = np.flatnonzero(inside)
        _, first = np.unique(np.floor(centroid[picked] / spacing).astype(int), axis=0, return_index=True)
        picked = picked[first]
        _, _, angle = principal_stresses(stress[picked])
        for turn, size, width in ((0.0, 0.75, 0.0026), (np.pi / 2, 0.4, 0.0013)):
            ax.quiver(centroid[picked, 0], centroid[picked, 1], size * spacing * np.cos(angle + turn),
                      size * spacing * np.sin(angle + turn), angles="xy", scale_units="xy", scale=1.0,
                      pivot="middle", headwidth=0, headlength=0, headaxislength=0, width=width,
                      color="black", zorder=5)
        _draw_footing(ax, B, Df, stem=0.2 * B)
        _draw_surface(ax, B, Df, hw)
        ax.set_xlim(-hw, hw)
        ax.set_ylim(-vd, top)
        _axes_labels(ax)
        bound = f"lower bound {pressure_kPa:.1f} kPa" if pressure_kPa is not None else "lower bound withheld"
        ax.set_title(f"Lower bound: stress field ({bound}; {lower.n_elements} triangles)", loc="left")
        ax.legend(handles=[Line2D([], [], color="black", linewidth=2.0,
                                  label="major principal stress \u03c3\u2081 (compression): direction"),
                           Line2D([], [], color="black", linewidth=0.9,
                                  label="minor principal stress \u03c3\u2083: direction")],
                  loc="lower left", framealpha=0.95, fontsize=7.5)
        bar = fig.colorbar(shade, cax=cax, orientation="horizontal", ticks=list(UTILISATION_LEVELS))
        bar.set_label("yield utilisation (1 = plastic)")
    return fig


def convergence_figure(rows: list[tuple[int, float | None, float | None, float]],
                       title: str = "Bounds against mesh size") -> Figure:
    """Lower and upper bound (kPa) and wall time (s) against the number of elements.

    ``rows``: (elements, lower_kPa, upper_kPa, wall_s); a withheld bound is None and is
    left out of its line.
    """
    rows = sorted(rows, key=lambda r: r[0])
    n = np.array([r[0] for r in rows], dtype=float)
    lower = np.array([np.nan if r[1] is None else r[1] for r in rows])
    upper = np.array([np.nan if r[2] is None else r[2] for r in rows])
    wall = np.array([r[3] for r in rows], dtype=float)
    with rc_context(STYLE):
        fig = Figure(figsize=(PAGE_WIDTH_IN, 3.2), layout="constrained")
        left, right = fig.subplots(1, 2, width_ratios=[1.6, 1])
        left.plot(n, upper, linestyle="--", marker="s", markerfacecolor="white", color="black", label="upper bound")
        left.plot(n, lower, linestyle="-", marker="o", color="black", label="lower bound")
        both = np.isfinite(lower) & np.isfinite(upper)
        left.fill_between(n[both], lower[both], upper[both], color="#d0d0d0", label="bracket")
        left.set_xscale("log")
        left.set_xlabel("elements in each bound's mesh")
        left.set_ylabel("collapse pressure (kPa)")
        left.legend(loc="best")
        left.set_title(plain(title), loc="left")
        right.plot(n, wall, marker="^", color="black", linestyle="-")
        right.set_xscale("log")
        right.set_yscale("log")
        right.set_xlabel("elements in each bound's mesh")
        right.set_ylabel("wall time (s)")
        right.set_title("Wall time", loc="left")
        for ax in (left, right):
            ax.grid(True, which="both", color="#e0e0e0", linewidth=0.5)
    return fig


# -- writing ------------------------------------------------------------------------

def figure_bytes(fig: Figure, fmt: str) -> bytes:
    """PNG or SVG bytes of a figure, without a date (a rerun writes the same file)."""
    buffer = io.BytesIO()
    metadata = {"Date": None} if fmt == "svg" else {"Software": None}
    with rc_context(STYLE):
        fig.savefig(buffer, format=fmt, dpi=PNG_DPI, metadata=metadata, facecolor="white")
    return buffer.getvalue()


def draw_all(case: Case, data: dict, fields: dict[str, BoundFields]) -> dict[str, Figure]:
    """Every picture the run's data allows, by name: model, mechanism, stress."""
    domain = data["domain"]
    upper_data, lower_data = data.get("upper") or {}, data.get("lower") or {}
    mechanism = upper_data.get("extra") or None
    figures = {"model": model_figure(case, domain, fields.get("lower"), fields.get("upper"), mechanism)}
    if "upper" in fields:
        figures["mechanism"] = mechanism_figure(case, domain, fields["upper"], mechanism,
                                                upper_data.get("pressure_kPa"))
    if "lower" in fields:
        figures["stress"] = stress_figure(case, domain, fields["lower"], mechanism,
                                          lower_data.get("pressure_kPa"))
    return figures


def write_pictures(figures: dict[str, Figure], out_dir: Path) -> list[Path]:
    """Write each figure as <name>.png and <name>.svg into out_dir (atomically); returns the paths."""
    paths = []
    for name, fig in figures.items():
        for fmt in ("png", "svg"):
            path = Path(out_dir) / f"{name}.{fmt}"
            write_bytes_atomic(path, figure_bytes(fig, fmt))
            paths.append(path)
    return paths
