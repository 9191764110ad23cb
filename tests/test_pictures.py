"""Pictures: every figure draws, nothing overlaps or leaves the page, case text is drawn
literally, mirroring is right, files are PNG and SVG and the same on a rerun."""
import doctest
import itertools
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
    "analysis": {"elements": 600},
}


@pytest.fixture(scope="module")
def layered_run():
    case = parse_case(LAYERED, name="layered")
    result = analyse(case)
    fields = {k: v for k, v in (("lower", bound_fields(result.lower)), ("upper", bound_fields(result.upper)))
              if v is not None}
    return case, result.to_dict(), fields


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


def test_every_picture_draws_with_no_text_overlapping_or_off_the_page(layered_run):
    case, data, fields = layered_run
    figures = draw_all(case, data, fields)
    assert set(figures) == {"model", "mechanism", "stress"}
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
    assert "kN/m\u00b3 per unit footing velocity" in texts["mechanism"]
    assert "B)" in texts["mechanism"] and "m deep" in texts["mechanism"]  # extent in m and in B
    assert "yield utilisation" in texts["stress"] and "compression" in texts["stress"]
    # the '$...$' of the case file is escaped, so matplotlib draws it instead of parsing it
    # (unescaped, \undefinedcommand would make the drawing fail)
    assert r"made ground \$\undefinedcommand\$" in texts["model"]


def test_written_files_are_png_and_svg_without_script_and_repeatable(layered_run, tmp_path):
    case, data, fields = layered_run
    paths = write_pictures(draw_all(case, data, fields), tmp_path)
    assert sorted(p.name for p in paths) == sorted(f"{n}.{e}" for n in ("model", "mechanism", "stress")
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
