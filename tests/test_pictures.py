"""Pictures: every figure draws, nothing overlaps or leaves the page, case text is drawn
literally, mirroring is right, files are PNG and SVG and the same on a rerun."""
import doctest
import itertools
import re
import xml.etree.ElementTree as ET

import numpy as np
import pytest
from matplotlib import rc_context
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.image import imread
from matplotlib.text import Text

import solver.pictures
from solver.analysis import analyse
from solver.case import parse_case
from solver.export import BoundFields, bound_fields
from solver.pictures import (STYLE, convergence_figure, draw_all, figure_bytes, mirror_points, mirror_triangles,
                             write_pictures)

# A three-layer scenario (invented) with awkward names: '$' would start mathematics in
# matplotlib, and the long name tests wrapping.
LAYERED = {
    "title": "Test: crane rail $beam$ on fill over clay over sand, with a title as long as a user may "
             "type it, to see that it is cut short in the pictures and not drawn off the page",
    "footing": {"width": 1.2, "embedment": 0.4, "design_load": 120.0},
    "ground": {"surcharge": 4.0},
    "layers": [
        {"name": "made ground $\\undefinedcommand$", "thickness": 1.0, "model": "mohr-coulomb",
         "cohesion": 3.0, "friction_angle": 30.0, "unit_weight": 18.0},
        {"name": "soft grey silty clay with organic pockets and shell fragments, firm with depth",
         "thickness": 2.0, "model": "tresca", "undrained_strength": 25.0, "strength_gradient": 2.0,
         "unit_weight": 17.0},
        {"name": "dense sand", "model": "mohr-coulomb", "friction_angle": 36.0, "unit_weight": 20.0},
    ],
    "analysis": {"elements": 600, "mesh": "fixed"},
}


def solved(data: dict, name: str):
    """(case, result.json's dict, fields by bound) of a case solved on its coarse mesh."""
    case = parse_case(data, name=name)
    result = analyse(case)
    fields = {k: v for k, v in (("lower", bound_fields(result.lower)), ("upper", bound_fields(result.upper)))
              if v is not None}
    return case, result.to_dict(), fields


@pytest.fixture(scope="module")
def layered_run():
    return solved(LAYERED, "layered")


def drawn_texts(fig):
    """(Text, window box) of every text the renderer draws, tick labels outside the view left out."""
    with rc_context(STYLE):
        canvas = FigureCanvasAgg(fig)
        canvas.draw()
        renderer = canvas.get_renderer()
    ticks, shown = set(), []
    for ax in fig.axes:
        for axis in (ax.xaxis, ax.yaxis):
            low, high = sorted(axis.get_view_interval())
            for tick in axis.get_major_ticks() + axis.get_minor_ticks():
                for label in (tick.label1, tick.label2):
                    ticks.add(id(label))
                    if label.get_visible() and label.get_text().strip() and \
                            low - 1e-9 <= tick.get_loc() <= high + 1e-9:
                        shown.append(label)
    shown += [t for t in fig.findobj(Text) if id(t) not in ticks and t.get_visible() and t.get_text().strip()]
    return [(t, t.get_window_extent(renderer)) for t in shown]


def test_doctests():
    assert doctest.testmod(solver.pictures).failed == 0


@pytest.mark.parametrize("run", ["layered_run", "circle_run"])
def test_every_picture_draws_with_no_text_overlapping_or_off_the_page(run, request):
    case, data, fields = request.getfixturevalue(run)
    figures = draw_all(case, data, fields)
    assert set(figures) == {"model", "mechanism", "stress", "contact"}
    for name, fig in figures.items():
        boxes = drawn_texts(fig)
        page = fig.bbox
        assert len(boxes) > 10, name
        for text, box in boxes:
            assert box.x0 >= -1 and box.y0 >= -1 and box.x1 <= page.width + 1 and box.y1 <= page.height + 1, \
                f"{name}: {text.get_text()[:40]!r} leaves the page"
        for (t1, b1), (t2, b2) in itertools.combinations(boxes, 2):
            assert not b1.overlaps(b2), f"{name}: {t1.get_text()[:30]!r} overlaps {t2.get_text()[:30]!r}"


def test_labels_carry_units_and_case_text_is_literal(layered_run):
    case, data, fields = layered_run
    figures = draw_all(case, data, fields)
    texts = {name: " ".join(t.get_text() for t, _ in drawn_texts(fig)) for name, fig in figures.items()}
    for name in figures:
        assert "(m)" in texts[name], name  # axes in metres
    assert "kN/m\u00b3" in texts["model"] and "kPa" in texts["model"]
    assert "shear strain rate, 1/m per unit footing velocity" in texts["mechanism"]
    assert "B)" in texts["mechanism"] and "m deep" in texts["mechanism"]  # extent in m and in B
    assert "yield utilisation" in texts["stress"] and "compression" in texts["stress"]
    # the '$...$' of the case file is escaped, so matplotlib draws it instead of parsing it
    # (unescaped, \undefinedcommand would make the drawing fail)
    assert r"made ground \$\undefinedcommand\$" in texts["model"]


def test_written_files_are_png_and_svg_without_script_and_repeatable(layered_run, tmp_path):
    case, data, fields = layered_run
    paths = write_pictures(draw_all(case, data, fields), tmp_path)
    assert sorted(p.name for p in paths) == sorted(f"{n}.{e}" for n in ("model", "mechanism", "stress", "contact")
                                                   for e in ("png", "svg"))
    for path in paths:
        if path.suffix == ".png":
            image = imread(path)
            assert image.shape[1] >= 1000 and image.std() > 0.05  # 7.2 in at 150 dpi, not blank
        else:
            root = ET.parse(path).getroot()
            assert root.tag.endswith("svg")
            assert "<script" not in path.read_text()
    again = tmp_path / "again"
    write_pictures(draw_all(case, data, fields), again)
    for path in paths:
        assert (again / path.name).read_bytes() == path.read_bytes(), path.name


def test_mirror_keeps_one_node_on_the_axis():
    points = np.array([[0.0, 0.0], [1.0, 0.0], [0.0, -1.0]])
    triangles = np.array([[0, 2, 1]])
    mirrored = mirror_points(points, True)
    both = mirror_triangles(triangles, 3, True, points)
    assert mirrored.shape == (6, 2) and np.allclose(mirrored[4], [-1.0, 0.0])
    assert both.tolist() == [[0, 2, 1], [0, 2, 4]]  # the axis nodes 0 and 2 are shared


def test_stress_picture_reads_compression_positive():
    # one triangle under vertical compression 100 kPa and horizontal 20 kPa (compression positive):
    # the major principal direction is vertical
    pts = np.array([[0.0, 0.0], [1.0, -1.0], [0.0, -1.0]])
    fields = BoundFields("lower", pts, np.array([[0, 2, 1]]), np.zeros(1, int),
                         {"stress_kPa": np.tile([20.0, 100.0, 0.0], (1, 3, 1)), "utilisation": np.ones((1, 3))})
    _, _, angle = solver.pictures.principal_stresses(fields.arrays["stress_kPa"].mean(axis=1))
    assert abs(abs(angle[0]) - np.pi / 2) < 1e-12


def test_convergence_figure_from_rows():
    rows = [(4000, 201.0, 212.0, 20.0), (1000, 195.0, 225.0, 3.0), (16000, None, 208.0, 120.0)]
    fig = convergence_figure(rows, title="Test refinement")
    left, right = fig.axes
    lines = {line.get_label(): line for line in left.get_lines()}
    assert lines["lower bound"].get_xdata().tolist() == [1000, 4000, 16000]  # sorted by elements
    assert np.isnan(lines["lower bound"].get_ydata()[-1])  # a withheld bound is left out
    assert left.get_ylabel() == "collapse pressure (kPa)" and right.get_ylabel() == "wall time (s)"
    assert right.get_yscale() == "log"
    assert len(figure_bytes(fig, "png")) > 10_000


# A slope scenario (invented): a footing 1 m from the crest of a 30-degree cutting 2 m high,
# an inclined and eccentric load, a water table that meets the slope face, a surcharge on the
# level ground; coarse meshes, so that it solves in about a second.
SLOPE = {
    "title": "Test: strip beside a cutting, inclined and eccentric load",
    "footing": {"width": 1.0, "load_inclination": 10.0, "eccentricity": 0.1, "design_load": 90.0},
    "ground": {"slope_angle": 30.0, "crest_setback": 1.0, "slope_height": 2.0, "water_table": 1.5,
               "surcharge": 3.0},
    "layers": [
        {"name": "sandy fill", "thickness": 1.0, "model": "mohr-coulomb", "cohesion": 8.0,
         "friction_angle": 28.0, "dilation_angle": 14.0, "unit_weight": 18.0, "saturated_unit_weight": 19.5},
        {"name": "stiff clay", "model": "tresca", "undrained_strength": 40.0, "unit_weight": 18.0},
    ],
    "analysis": {"elements": 600, "mesh": "fixed"},
}


@pytest.fixture(scope="module")
def slope_run():
    case, data, fields = solved(SLOPE, "slope")
    assert set(fields) == {"lower", "upper"}
    return case, data, fields


def ground_top(domain, x):
    """The soil's top (m) at x, from result.json's slope keys: level, the face, level beyond the toe
    (written here again, independently of solver.pictures.Profile)."""
    crest, toe, height = domain["slope_crest_x_m"], domain["slope_toe_x_m"], domain["slope_height_m"]
    return np.where(x <= crest, 0.0, np.where(x >= toe, -height, -(x - crest) * height / (toe - crest)))


def in_soil(domain, x, y, tol=1e-9):
    return (y <= ground_top(domain, x) + tol) & (x >= domain["x_min_m"] - tol) & (x <= domain["x_max_m"] + tol)


def test_slope_pictures_put_no_arrow_and_no_soil_line_in_the_air(slope_run):
    from matplotlib.quiver import Quiver

    case, data, fields = slope_run
    domain = data["domain"]
    figures = draw_all(case, data, fields)
    ax = figures["mechanism"].axes[0]
    arrows = [c for c in ax.collections if isinstance(c, Quiver)]
    assert len(arrows) == 1
    q = arrows[0]
    assert q.pivot == "middle" and q.scale_units == "xy" and q.angles == "xy"
    assert len(q.X) >= 20  # the mechanism is drawn, not filtered away
    half = np.column_stack([q.U, q.V]) / (2 * q.scale)  # arrow from centre - half to centre + half
    centre = np.column_stack([q.X, q.Y])
    for t in np.linspace(-1.0, 1.0, 21):  # every arrow along its whole length
        point = centre + t * half
        assert in_soil(domain, point[:, 0], point[:, 1]).all(), f"an arrow leaves the soil at {t:+.1f} of its half"
    # the arrows reach the soil right up to the slope face (the fastest soil moves out through it)
    face = (q.X > domain["slope_crest_x_m"]) & (q.X < domain["slope_toe_x_m"])
    assert face.any()
    # interfaces (dashed) and the water table (dash-dot) end where they meet the ground
    for name, fig in figures.items():
        if name == "contact":
            continue  # a graph of stress along the base, not a map of the ground
        for axes in fig.axes:
            for line in axes.get_lines():
                if line.get_linestyle() in ("--", "-."):  # interfaces; the water table's dash-dot is '--' here
                    x, y = (np.asarray(v, dtype=float) for v in line.get_data())
                    assert in_soil(domain, x, y, tol=1e-6).all(), (name, x, y)
    # the water table, 1.5 m down, ends on the slope face three quarters of the way to the toe
    water = [line for line in ax.get_lines()
             if line.get_color() == solver.pictures.WATER_COLOUR and len(line.get_xdata()) == 2]
    assert len(water) == 1
    x, y = (np.asarray(v, dtype=float) for v in water[0].get_data())
    crest, toe = domain["slope_crest_x_m"], domain["slope_toe_x_m"]
    assert y.tolist() == [-1.5, -1.5] and abs(x[1] - (crest + 0.75 * (toe - crest))) < 1e-9


def air_pixels_are_blank(fig, ax, domain, clearance: float):
    """Render the figure and check that the air above the slope face, ``clearance`` m above the
    ground and away from any text or legend, is white. Returns the number of pixels checked."""
    with rc_context(STYLE):
        canvas = FigureCanvasAgg(fig)
        canvas.draw()
        renderer = canvas.get_renderer()
    image = np.asarray(canvas.buffer_rgba())[..., :3] / 255.0
    (x0, x1), (y0, y1) = ax.get_xlim(), ax.get_ylim()
    gx, gy = np.meshgrid(np.linspace(x0, x1, 80)[1:-1], np.linspace(y0, y1, 40)[1:-1])
    gx, gy = gx.ravel(), gy.ravel()
    air = (gy > ground_top(domain, gx) + clearance) & (gy < -clearance) & (gx > domain["slope_crest_x_m"])
    pixels = ax.transData.transform(np.column_stack([gx[air], gy[air]]))
    boxes = [t.get_window_extent(renderer).expanded(1.1, 1.4) for t in fig.findobj(Text)
             if t.get_visible() and t.get_text().strip()]
    if ax.get_legend() is not None:
        boxes.append(ax.get_legend().get_window_extent(renderer))
    keep = [p for p in pixels if not any(b.contains(*p) for b in boxes)]
    height = image.shape[0]
    for px, py in keep:
        patch = image[int(height - py) - 1:int(height - py) + 2, int(px) - 1:int(px) + 2]
        assert patch.min() > 0.97, f"something is drawn in the air at pixel {px:.0f}, {py:.0f}"
    return len(keep)


def test_slope_pictures_leave_the_air_blank(slope_run):
    case, data, fields = slope_run
    figures = draw_all(case, data, fields)
    mechanism = figures["mechanism"].axes[0]
    for artist in list(mechanism.artists):  # the arrows' key sits in the air by design
        artist.remove()
    checked = [air_pixels_are_blank(figures["model"], figures["model"].axes[1], data["domain"], 0.15),
               air_pixels_are_blank(figures["mechanism"], mechanism, data["domain"], 0.15),
               air_pixels_are_blank(figures["stress"], figures["stress"].axes[0], data["domain"], 0.15)]
    assert min(checked) >= 30, checked  # enough of the air was looked at


def test_slope_pictures_draw_the_profile_the_crest_toe_and_the_inclined_eccentric_load(slope_run):
    from matplotlib.text import Annotation

    case, data, fields = slope_run
    domain = data["domain"]
    crest, toe, height = domain["slope_crest_x_m"], domain["slope_toe_x_m"], domain["slope_height_m"]
    figures = draw_all(case, data, fields)
    figures.pop("contact")  # a graph of stress along the base, not a map of the ground
    for name, fig in figures.items():
        ax = fig.axes[1] if name == "model" else fig.axes[0]
        # the ground line runs through the crest and the toe
        vertices = np.vstack([np.column_stack(line.get_data()) for line in ax.get_lines()
                              if line.get_linestyle() == "-" and line.get_color() == "black"])
        for corner in ((crest, 0.0), (toe, -height)):
            assert np.min(np.hypot(*(vertices - corner).T)) < 1e-9, (name, corner)
        texts = [t.get_text() for t, _ in drawn_texts(fig)]
        assert "crest" in texts and "toe" in texts, name
        assert any(t.startswith("30.0\u00b0") and "2 m high" in t for t in texts), name
        # the load arrow: along 10 degrees from vertical toward +x, its line through the base at e = 0.1 m
        loads = [a for a in ax.texts if isinstance(a, Annotation) and a.arrow_patch is not None
                 and a.arrow_patch.get_linewidth() > 1.5]
        assert len(loads) == 1, name
        (hx, hy), (tx, ty) = loads[0].xy, loads[0].xyann
        direction = np.array([hx - tx, hy - ty]) / np.hypot(hx - tx, hy - ty)
        assert np.allclose(direction, [np.sin(np.radians(10.0)), -np.cos(np.radians(10.0))]), name
        assert abs(hx + hy * np.tan(np.radians(10.0)) - 0.1) < 1e-9, name  # reaches y = 0 at x = e
    legend = " ".join(t.get_text() for t in figures["model"].axes[2].get_legend().get_texts())
    for words in ("10\u00b0 from vertical toward +x", "e = 0.1 m", "30\u00b0", "1 m beyond the footing's edge",
                  "falling 2 m", "saturated 19.5 kN/m\u00b3", "\u03c8\u2032 = 14\u00b0", "1.5 m below",
                  "none on the slope"):
        assert words in legend, words


def test_slope_pictures_keep_their_text_clear(slope_run):
    case, data, fields = slope_run
    for name, fig in draw_all(case, data, fields).items():
        boxes = drawn_texts(fig)
        for text, box in boxes:
            assert box.x0 >= -1 and box.y0 >= -1 and box.x1 <= fig.bbox.width + 1 and box.y1 <= fig.bbox.height + 1, \
                f"{name}: {text.get_text()[:40]!r} leaves the page"
        for (t1, b1), (t2, b2) in itertools.combinations(boxes, 2):
            assert not b1.overlaps(b2), f"{name}: {t1.get_text()[:30]!r} overlaps {t2.get_text()[:30]!r}"


def test_detail_view_follows_an_asymmetric_mechanism():
    # a mechanism to the right of a level footing (an eccentric load, say): the view is no
    # longer centred on the footing, and the moving soil fits inside it
    case = parse_case({"footing": {"width": 2.0, "eccentricity": 0.4}, "layers": [
        {"name": "clay", "model": "tresca", "undrained_strength": 30.0, "unit_weight": 18.0}]}, name="e")
    domain = {"half_domain_by_symmetry": False, "width_m": 40.0, "depth_m": 10.0, "x_min_m": -20.0,
              "x_max_m": 20.0}
    profile = solver.pictures.Profile.of(case, domain)
    lo, hi, depth = solver.pictures.detail_view(profile, domain, (-1.0, 6.0, 2.0))
    assert lo <= -1.0 and hi >= 6.0 and depth >= 2.0
    assert hi - 6.0 < 2.0 and -1.0 - lo < 2.0  # room around it, not the whole model
    assert lo > -hi  # not centred


def berm_top(x):
    """The ground of meshes/berm.geo in the solver's coordinates (written here from the drawing's
    numbers, independently of solver.pictures): crest at the footing level y = 0 out to |x| = 4 m,
    side slopes down to the original ground, y = -1.5 m, at |x| = 9 m."""
    return np.interp(np.abs(x), [4.0, 9.0], [0.0, -1.5])


def test_drawn_site_pictures_draw_the_mesh_outline_and_leave_the_air_blank(tmp_path):
    from pathlib import Path

    from solver.case import load_case
    from solver.export import read_fields_vtu, write_fields_vtu

    case = load_case(Path(__file__).resolve().parents[1] / "meshes" / "berm.toml")
    result = analyse(case, elements=600, adaptive=False)
    # through fields.vtu, as `bearbound report` draws them (lower-bound nodes unshared there)
    write_fields_vtu(bound_fields(result.lower), bound_fields(result.upper), tmp_path)
    fields = read_fields_vtu(tmp_path / "fields.vtu")
    data = result.to_dict()
    figures = draw_all(case, data, fields)
    # the outline drawn is the solver's tagged boundary of the lower-bound mesh, edge for edge
    mesh = result.lower.mesh
    expected = {tuple(sorted(map(tuple, np.round(mesh.points[e[:2]], 9).tolist()))) for e in mesh.boundary_edges}
    ax = figures["model"].axes[0]
    drawn = set()
    for line in ax.get_lines():
        if line.get_linestyle() == "-" and line.get_color() == "black":
            xy = np.round(np.column_stack(line.get_data()), 9)
            drawn |= {tuple(sorted(map(tuple, xy[i:i + 2].tolist()))) for i in range(len(xy) - 1)}
    assert drawn == expected
    # the legend names the layers without level-ground depths
    legend = " ".join(t.get_text() for t in figures["model"].axes[2].get_legend().get_texts())
    assert "berm fill: Mohr-Coulomb" in legend and "inf m" not in legend and "below ground" not in legend
    # the air above the berm's side slopes is white in the model's detail and the field pictures
    mechanism = figures["mechanism"].axes[0]
    for artist in list(mechanism.artists):  # the arrows' key sits in the air by design
        artist.remove()
    for fig, ax in ((figures["model"], figures["model"].axes[1]), (figures["mechanism"], mechanism),
                    (figures["stress"], figures["stress"].axes[0])):
        with rc_context(STYLE):
            canvas = FigureCanvasAgg(fig)
            canvas.draw()
            renderer = canvas.get_renderer()
        image = np.asarray(canvas.buffer_rgba())[..., :3] / 255.0
        (x0, x1), (y0, y1) = ax.get_xlim(), ax.get_ylim()
        gx, gy = np.meshgrid(np.linspace(x0, x1, 80)[1:-1], np.linspace(y0, y1, 40)[1:-1])
        gx, gy = gx.ravel(), gy.ravel()
        air = (gy > berm_top(gx) + 0.15) & (gy < -0.15) & (np.abs(gx) > 4.5)
        boxes = [t.get_window_extent(renderer).expanded(1.1, 1.4) for t in fig.findobj(Text)
                 if t.get_visible() and t.get_text().strip()]
        if ax.get_legend() is not None:
            boxes.append(ax.get_legend().get_window_extent(renderer))
        pixels = [p for p in ax.transData.transform(np.column_stack([gx[air], gy[air]]))
                  if not any(b.contains(*p) for b in boxes)]
        assert len(pixels) >= 30
        height = image.shape[0]
        for px, py in pixels:
            patch = image[int(height - py) - 1:int(height - py) + 2, int(px) - 1:int(px) + 2]
            assert patch.min() > 0.97, f"something is drawn in the air at pixel {px:.0f}, {py:.0f}"


# -- issue 14: the pictures show what the numbers mean ----------------------------------

SAND_OVER_CLAY = {
    "title": "Test: cohesionless sand over clay",
    "footing": {"width": 1.5},
    "layers": [
        {"name": "clean sand", "thickness": 1.0, "model": "mohr-coulomb", "cohesion": 0.0,
         "friction_angle": 34.0, "unit_weight": 18.0},
        {"name": "firm clay", "model": "tresca", "undrained_strength": 35.0, "unit_weight": 18.0},
    ],
    "analysis": {"elements": 600, "mesh": "fixed"},
}


@pytest.fixture(scope="module")
def sand_run():
    return solved(SAND_OVER_CLAY, "sand")


def test_the_mechanism_shows_in_a_cohesionless_layer_and_names_the_layers(sand_run):
    from solver.pictures import shear_strain_rate, split_quadratic

    case, data, fields = sand_run
    upper = fields["upper"]
    in_sand = upper.layer == 0
    assert np.all(upper.arrays["dissipation"][in_sand] == 0.0)  # c' = 0: nothing to shade by dissipation
    rate = shear_strain_rate(upper.points, upper.triangles, upper.arrays["velocity"])
    sub_in_sand = np.tile(in_sand, 4)  # split_quadratic's order: the four sub-triangles, element by element
    shown = rate[sub_in_sand] >= 1e-3 * rate.max()
    assert shown.mean() > 0.05  # the sand's shear zones are shaded
    fig = draw_all(case, data, fields)["mechanism"]
    ax = fig.axes[0]
    mirrored = 2 if data["domain"]["half_domain_by_symmetry"] else 1
    shade = [c for c in ax.collections if c.get_array() is not None and len(c.get_array()) == mirrored * len(rate)]
    assert len(shade) == 1 and len(split_quadratic(upper.triangles)) == len(rate)  # shaded by the strain rate
    texts = " ".join(t.get_text() for t, _ in drawn_texts(fig))
    assert "clean sand" in texts and "firm clay" in texts and "shear strain rate" in texts


def test_the_extent_frame_arrows_and_result_use_one_threshold(sand_run):
    from matplotlib.quiver import Quiver
    from matplotlib.patches import Rectangle
    from solver.pictures import MOVING_SPEED, moving_extent

    case, data, fields = sand_run
    half = data["domain"]["half_domain_by_symmetry"]
    extra = data["upper"]["extra"]
    assert extra["mechanism_speed_fraction"] == MOVING_SPEED == 0.05
    x_lo, x_hi, depth = moving_extent(fields["upper"], half)
    assert extra["mechanism_depth_m"] == pytest.approx(depth)
    assert extra["mechanism_x_max_m"] == pytest.approx(x_hi)
    fig = draw_all(case, data, fields)["mechanism"]
    ax = fig.axes[0]
    frames = [p for p in ax.patches if isinstance(p, Rectangle) and p.get_linestyle() == "--"]
    assert len(frames) == 1 and frames[0].get_x() == pytest.approx(x_lo) and frames[0].get_width() == pytest.approx(x_hi - x_lo)
    quiver = [c for c in ax.collections if isinstance(c, Quiver)][0]
    cell = (ax.get_xlim()[1] - ax.get_xlim()[0]) / solver.pictures.ARROW_CELLS
    assert quiver.X.min() >= x_lo - cell and quiver.X.max() <= x_hi + cell  # no arrow outside the frame
    assert quiver.Y.min() >= -depth - cell
    caption = " ".join(t.get_text() for t in fig.texts)
    assert "faster than 5% of the footing" in " ".join(caption.split())


def test_both_field_pictures_frame_the_plastic_zone_and_the_mechanism(slope_run):
    from solver.pictures import moving_extent, plastic_extent

    case, data, fields = slope_run
    figures = draw_all(case, data, fields)
    half = data["domain"]["half_domain_by_symmetry"]
    zones = [plastic_extent(fields["lower"], half), moving_extent(fields["upper"], half)]
    views = {name: (figures[name].axes[0].get_xlim(), figures[name].axes[0].get_ylim())
             for name in ("mechanism", "stress")}
    assert views["mechanism"] == views["stress"]  # one view: the pictures match
    (x0, x1), (y0, _) = views["stress"]
    domain = data["domain"]
    for lo, hi, depth in zones:
        assert x0 <= max(lo, domain["x_min_m"]) + 1e-9 and min(hi, domain["x_max_m"]) <= x1 + 1e-9
        assert y0 <= -min(depth, domain["depth_m"]) + 1e-9


@pytest.mark.parametrize("run", ["slope_run", "layered_run"])
def test_the_contact_stresses_carry_the_lower_bound_load(run, request):
    # the normal stress along the base integrates to the vertical collapse load of the lower
    # bound, the shear stress to its horizontal component (a half domain mirrored)
    from solver.pictures import contact_stresses

    case, data, fields = request.getfixturevalue(run)
    x, normal, shear = contact_stresses(fields["lower"], case.footing.width, data["domain"]["half_domain_by_symmetry"])
    length = x[:, 1] - x[:, 0]
    assert length.min() > 0 and length.sum() == pytest.approx(case.footing.width)
    extra = data["lower"]["extra"]
    assert (normal.mean(axis=1) * length).sum() == pytest.approx(extra["vertical_kN_per_m"], rel=2e-3)
    assert (shear.mean(axis=1) * length).sum() == pytest.approx(extra["horizontal_kN_per_m"],
                                                                abs=2e-3 * extra["vertical_kN_per_m"])
    assert normal.min() >= -1e-6 * normal.max()  # the contact carries no tension
    fig = draw_all(case, data, fields)["contact"]
    texts = " ".join(t.get_text() for t, _ in drawn_texts(fig))
    assert "normal stress" in texts and "shear stress" in texts and "(kPa)" in texts


# -- a circular footing: the half section r >= 0 with its axis, never mirrored --------------

# An invented tank on a crust over soft clay with a water table: every kind of line the
# pictures draw beside the axis (interfaces, water, soil above the base).
CIRCLE = {
    "title": "Test: tank on a crust over soft clay",
    "footing": {"width": 4.0, "shape": "circular", "embedment": 0.3},
    "ground": {"water_table": 1.0},
    "layers": [
        {"name": "crust", "thickness": 1.5, "model": "tresca", "undrained_strength": 45.0, "unit_weight": 18.5},
        {"name": "soft clay", "model": "tresca", "undrained_strength": 18.0, "strength_gradient": 2.0,
         "unit_weight": 16.5},
    ],
    "analysis": {"elements": 400, "mesh": "fixed"},
}


@pytest.fixture(scope="module")
def circle_run():
    return solved(CIRCLE, "circle")


def section_axes(fig):
    """The axes of a picture along the section (the model's two views, a field's main view, the
    contact chart): those whose x label measures from the centre or the axis (not a colour bar)."""
    return [ax for ax in fig.axes if " from the " in ax.get_xlabel()]


def axis_lines(ax):
    """Lines drawn along x = 0 from the bottom of the view to its top (a circle's axis)."""
    low, high = ax.get_ylim()
    found = []
    for line in ax.get_lines():
        x, y = (np.asarray(v, dtype=float) for v in line.get_data())
        if len(x) and np.all(x == 0.0) and y.min() <= low + 1e-9 and y.max() >= high - 1e-9:
            found.append(line)
    return found


def test_circle_pictures_draw_the_half_section_from_the_axis(circle_run):
    from matplotlib.patches import Rectangle

    from solver.pictures import FOOTING_COLOUR
    from solver.preview import preview_figure

    case, data, fields = circle_run
    B = case.footing.width
    figures = draw_all(case, data, fields)
    figures["preview"] = preview_figure(case)
    for name, fig in figures.items():
        axes = section_axes(fig)
        assert axes, name
        for ax in axes:
            lo, hi = ax.get_xlim()
            # the view starts at the axis: at most a narrow blank gutter left of r = 0 (before,
            # the section was mirrored and the view ran from -hi to hi)
            assert -0.07 * (hi - lo) <= lo <= 0.0, (name, lo, hi)
            assert "radius r" in ax.get_xlabel(), name
            lines = axis_lines(ax)
            assert len(lines) == 1 and lines[0].get_linestyle() != "-", name  # one chain line, not solid
            assert any("axis of symmetry" in t.get_text() for t in ax.texts), name  # named in words beside it
            # nothing but the axis and the gutter lies left of r = 0
            for line in ax.get_lines():
                x = np.asarray(line.get_xdata(), dtype=float)
                assert not len(x) or np.nanmin(x) >= -1e-9, name
            for patch in ax.patches:
                if isinstance(patch, Rectangle) and patch.get_facecolor()[:3] == \
                        tuple(int(FOOTING_COLOUR[i:i + 2], 16) / 255 for i in (1, 3, 5)):
                    assert patch.get_x() == 0.0 and patch.get_width() == pytest.approx(B / 2), name
        titles = " ".join(ax.get_title(loc="left") for ax in fig.axes)
        assert "half section r \u2265 0" in titles.lower(), name
    # the fields themselves (shading, arrows, crosses) are drawn on r >= 0 only, up to the axis
    from matplotlib.quiver import Quiver

    for name in ("mechanism", "stress"):
        ax = section_axes(figures[name])[0]
        shading = [c for c in ax.collections if not isinstance(c, Quiver)]
        arrows = [c for c in ax.collections if isinstance(c, Quiver)]
        assert shading and arrows, name
        left = min(float(np.nanmin(path.vertices[:, 0])) for c in shading for path in c.get_paths())
        assert left == pytest.approx(0.0, abs=1e-9), name
        assert min(float(c.get_offsets()[:, 0].min()) for c in arrows) > 0.0, name


def test_circle_contact_stresses_carry_the_load_over_the_area(circle_run):
    # along a radius from the axis to the edge; the normal stress times 2 pi r integrates to the
    # lower bound's load (kN). Drawn straight between corner values while r sigma is quadratic
    # along an edge, so the integral agrees closely, not exactly.
    from solver.pictures import contact_stresses

    case, data, fields = circle_run
    B = case.footing.width
    x, normal, _ = contact_stresses(fields["lower"], B, half=False)
    assert x.min() == pytest.approx(0.0, abs=1e-12) and x.max() == pytest.approx(B / 2)
    r0, r1 = x[:, 0], x[:, 1]
    force = 2 * np.pi * ((r1 - r0) * (normal[:, 0] * (2 * r0 + r1) + normal[:, 1] * (r0 + 2 * r1)) / 6).sum()
    assert force == pytest.approx(data["lower"]["load_kN"], rel=1e-2)
    texts = " ".join(t.get_text() for t, _ in drawn_texts(draw_all(case, data, fields)["contact"]))
    assert "toward +r" in texts and "over the area" in texts and "2\u03c0r" in texts


def test_strip_pictures_still_show_the_whole_width(layered_run):
    # a symmetric strip is solved on x >= 0 and mirrored: its views stay centred, with no axis
    case, data, fields = layered_run
    assert data["domain"]["half_domain_by_symmetry"]
    for name, fig in draw_all(case, data, fields).items():
        for ax in section_axes(fig):
            lo, hi = ax.get_xlim()
            assert lo == pytest.approx(-hi), name
            assert ax.get_xlabel().startswith("x from the footing centre"), name
            assert not axis_lines(ax) and not any("axis of symmetry" in t.get_text() for t in ax.texts), name


def test_circle_report_and_export_say_what_the_pictures_show(circle_run, tmp_path):
    import meshio

    from solver.export import write_fields_vtu
    from solver.report import Run, build_html

    case, data, fields = circle_run
    page = build_html(Run(out_dir=tmp_path, data=data, case=case, fields=fields),
                      images={name: b"png" for name in ("model", "mechanism", "stress", "contact")})
    captions = re.findall(r"<figcaption>(.*?)</figcaption>", page)
    assert len(captions) == 4 and all("half section r \u2265 0" in c for c in captions)
    reach = max(fields["upper"].points[np.hypot(*fields["upper"].arrays["velocity"].T) > 0.05, 0])
    assert f"out to r = {reach:.2f}&#8201;m from the axis" in page and "x from -" not in page
    # fields.vtu: the half section as solved, r >= 0, not mirrored
    points = meshio.read(write_fields_vtu(fields["lower"], fields["upper"], tmp_path)).points
    assert points[:, 0].min() == 0.0 and points[:, 0].max() == pytest.approx(data["domain"]["x_max_m"])
