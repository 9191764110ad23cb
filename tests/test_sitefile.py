"""Tests of solver.sitefile: the user's own site geometry (meshes/, [geometry] file).

The sites and soils are invented for the tests. The one check against the
outside is Prandtl's 2 + pi for weightless Tresca soil under a strip footing on
level ground (Prandtl 1920, Nachr. Ges. Wiss. Goettingen, Math.-Phys. Kl.,
74-85): drawn as a site, the bracket must contain it.
"""
from __future__ import annotations

import doctest
import math
import pathlib
import subprocess
import sys

import numpy as np
import pytest

import solver.sitefile
from solver.analysis import analyse
from solver.case import CaseError, case_to_dict, load_case, parse_case
from solver.cli import main
from solver.ground import surcharge_on_edges
from solver.mesh import _GMSH_LOCK, FAR_BASE, FAR_SIDE, FIXED, FOOTING, GROUND, _start_gmsh, build_mesh
from solver.sitefile import _build_drawing, _GeoError, label, parse_geo

ROOT = pathlib.Path(__file__).resolve().parent.parent
MESHES = ROOT / "meshes"
BAD = pathlib.Path(__file__).resolve().parent / "bad_geometry"
ROUND_OFF = 1e-6  # relative slack of a bracket check: round-off only
EXAMPLES = ("bench-cut", "berm", "trench-footing")

PRANDTL_GEO = """// level ground, B = 2 m (the test's own drawing)
B = 2; W = 10; D = 8;
Point(1) = {-W, -D, 0}; Point(2) = {W, -D, 0}; Point(3) = {W, 0, 0};
Point(4) = {B/2, 0, 0}; Point(5) = {-B/2, 0, 0}; Point(6) = {-W, 0, 0};
Line(1) = {1, 2}; Line(2) = {2, 3}; Line(3) = {3, 4}; Line(4) = {4, 5}; Line(5) = {5, 6}; Line(6) = {6, 1};
Curve Loop(1) = {1, 2, 3, 4, 5, 6};
Plane Surface(1) = {1};
Physical Surface("clay") = {1};
Physical Curve("far base") = {1};
Physical Curve("far side") = {2, 6};
Physical Curve("ground") = {3, 5};
Physical Curve("footing") = {4};
"""
CLAY = {"name": "clay", "model": "tresca", "undrained_strength": 40.0, "unit_weight": 0.0}


def drawn_case(folder: pathlib.Path, text: str, layers=(CLAY,), width: float = 2.0, **tables):
    (folder / "site.geo").write_text(text, encoding="utf-8")
    data = {"footing": {"width": width}, "geometry": {"file": "site.geo"}, "layers": list(layers), **tables}
    return parse_case(data, base_dir=folder)


def certified(result) -> tuple[float, float]:
    for bound in (result.lower, result.upper):
        assert bound.certificate["passed"], f"{bound.kind} bound: {bound.status}"
    return result.lower.pressure_kPa, result.upper.pressure_kPa


# -- the example sites ------------------------------------------------------------------------------

@pytest.mark.parametrize("site", EXAMPLES)
def test_example_site_brackets_its_collapse_load(site):
    case = load_case(MESHES / f"{site}.toml")
    result = analyse(case, elements=600, adaptive=False)
    lower, upper = certified(result)
    assert 0 < lower <= upper * (1 + ROUND_OFF)
    assert abs(result.lower.elements / 600 - 1) < 0.1 and abs(result.upper.elements / 600 - 1) < 0.1


def test_drawn_level_site_brackets_prandtl(tmp_path):
    """Weightless Tresca on level ground drawn as a site: (2 + pi) su inside the bracket."""
    lower, upper = certified(analyse(drawn_case(tmp_path, PRANDTL_GEO), elements=1000, adaptive=False))
    exact = (2.0 + math.pi) * CLAY["undrained_strength"]  # Prandtl (1920)
    assert lower <= exact * (1 + ROUND_OFF) and exact <= upper * (1 + ROUND_OFF)
    assert (upper - lower) / lower < 0.15  # a loose bracket at 1000 triangles would be a defect


def test_fixed_base_holds_the_soil_and_carries_at_least_the_far_field_load(tmp_path):
    """A rigid base 1 m below a 2 m footing: the soil on it does not move in the upper
    bound, and as rock is stronger than soil the true collapse load can only exceed that
    of the half-space, so the fixed-base upper bound must be at least the half-space
    lower bound."""
    shallow = PRANDTL_GEO.replace("D = 8", "D = 1").replace('Physical Curve("far base")', 'Physical Curve("fixed")')
    fixed = drawn_case(tmp_path, shallow)
    result = analyse(fixed, elements=800, adaptive=False)
    certified(result)
    mesh = result.upper.mesh
    assert np.count_nonzero(mesh.boundary_kind == FIXED) > 0 and not np.any(mesh.boundary_kind == FAR_BASE)
    on_rock = np.unique(mesh.boundary_edges[mesh.boundary_kind == FIXED])
    assert np.all(result.upper.fields["velocity"][on_rock] == 0.0)
    half_space = analyse(drawn_case(tmp_path, PRANDTL_GEO), elements=800, bounds="lower", adaptive=False).lower
    assert half_space.certificate["passed"] and result.upper.pressure_kPa >= half_space.pressure_kPa


# -- coordinates, strength with depth, surcharge ----------------------------------------------------

def test_mesh_is_in_footing_coordinates():
    case = load_case(MESHES / "bench-cut.toml")
    assert case.geometry.origin == (11.2, 10.0)  # the footing's centre at its level, in the drawing
    mesh = build_mesh(case, order=1, elements=600)
    foot = mesh.boundary_edges[mesh.boundary_kind == FOOTING]
    assert np.all(mesh.points[foot, 1] == 0.0)
    assert np.isclose(mesh.points[foot, 0].min(), -0.8) and np.isclose(mesh.points[foot, 0].max(), 0.8)
    normal, _ = mesh.edge_normals(mesh.boundary_element[mesh.boundary_kind == FOOTING],
                                  mesh.boundary_local[mesh.boundary_kind == FOOTING])
    assert np.allclose(normal, [0.0, 1.0])  # soil below the footing
    assert np.all(mesh.areas() > 0)
    side = mesh.boundary_edges[mesh.boundary_kind == FAR_SIDE]
    assert set(np.unique(mesh.points[side, 0])) == {-11.2, 16.8}
    assert np.all(mesh.points[mesh.boundary_edges[mesh.boundary_kind == FAR_BASE], 1] == -10.0)


def test_layers_and_strength_follow_the_drawing():
    case = load_case(MESHES / "berm.toml")
    berm, soft, firm = case.strata()
    # the footing is on the 1.5 m berm: soft clay's top (the original ground) is 1.5 m below it
    assert (berm.top, soft.top, firm.top) == (0.0, 1.5, 5.5)
    assert soft.c_top == 18.0 and soft.c_gradient == 1.5
    mesh = build_mesh(case, order=1, elements=600)
    centroid_y = mesh.points[mesh.triangles].mean(axis=1)[:, 1]
    assert np.all(centroid_y[mesh.layer == 0] > -1.5)  # berm fill above the original ground
    assert np.all(centroid_y[mesh.layer == 2] < -5.5)  # firm clay below the interface at y = -4


def test_surcharge_acts_on_ground_at_the_footing_level_only():
    case = load_case(MESHES / "berm.toml")  # 5 kPa on the berm's crest
    mesh = build_mesh(case, order=1, elements=600)
    ground = mesh.boundary_kind == GROUND
    q = surcharge_on_edges(case, mesh, ground)
    y = mesh.points[mesh.boundary_edges[ground]][:, :, 1].mean(axis=1)
    assert np.all(q[y == 0.0] == 5.0) and np.count_nonzero(y == 0.0) > 0
    assert np.all(q[y != 0.0] == 0.0) and np.count_nonzero(y < -1.0) > 0  # slopes, original ground


def test_element_target_and_point_sizes(tmp_path):
    plain = drawn_case(tmp_path, PRANDTL_GEO)
    mesh = build_mesh(plain, order=1, elements=1500)
    assert abs(mesh.n_elements / 1500 - 1) < 0.05
    refined = drawn_case(tmp_path, PRANDTL_GEO + "MeshSize {3} = 0.05;")  # the right far side's top
    fine = build_mesh(refined, order=1, elements=1500)
    corner = np.array([10.0, 0.0])

    def smallest_near(m):
        near = np.linalg.norm(m.points[m.triangles].mean(axis=1) - corner, axis=1) < 1.0
        return np.sqrt(2 * m.areas()[near]).min()

    assert smallest_near(fine) < 0.5 * smallest_near(mesh)


def test_upper_bound_mesh_has_straight_sides():
    case = load_case(MESHES / "trench-footing.toml")
    mesh = build_mesh(case, order=2, elements=600)
    p = mesh.points
    for k in range(3):
        mid = (p[mesh.triangles[:, k]] + p[mesh.triangles[:, (k + 1) % 3]]) / 2
        assert np.allclose(p[mesh.triangles[:, 3 + k]], mid)


STEP_GEO = """// ground left of the footing: up 5 cm, then a short step down through the footing level
Point(1) = {-10, -8, 0}; Point(2) = {10, -8, 0}; Point(3) = {10, 0, 0}; Point(4) = {1, 0, 0};
Point(5) = {-1, 0, 0}; Point(6) = {-2.95, 0.05, 0}; Point(7) = {-3.05, -0.05, 0}; Point(8) = {-10, -0.05, 0};
Line(1) = {1, 2}; Line(2) = {2, 3}; Line(3) = {3, 4}; Line(4) = {4, 5}; Line(5) = {5, 6}; Line(6) = {6, 7};
Line(7) = {7, 8}; Line(8) = {8, 1};
Curve Loop(1) = {1:8};
Plane Surface(1) = {1};
Physical Surface("clay") = {1};
Physical Curve("far base") = {1};
Physical Curve("far side") = {2, 8};
Physical Curve("ground") = {3, 5, 6, 7};
Physical Curve("footing") = {4};
"""


def test_ground_edge_centred_on_the_footing_level_is_refused(tmp_path):
    """The bounds take the surcharge on ground edges centred on the footing level; a sloping
    edge that only crosses it there is refused rather than loaded differently by each."""
    with pytest.raises(CaseError, match=r"site\.geo: group 'ground': a mesh edge near \(-3, 0\) crosses"):
        drawn_case(tmp_path, STEP_GEO)


OVERHANG_GEO = """// the ground at the footing's level ends in a 60-degree corner over an overhang
Point(1) = {-10, -8, 0}; Point(2) = {10, -8, 0}; Point(3) = {10, -3, 0}; Point(4) = {2, -3, 0};
Point(5) = {2, -Sqrt(3), 0}; Point(6) = {3, 0, 0}; Point(7) = {1, 0, 0}; Point(8) = {-1, 0, 0};
Point(9) = {-10, 0, 0};
Line(1) = {1, 2}; Line(2) = {2, 3}; Line(3) = {3, 4}; Line(4) = {4, 5}; Line(5) = {5, 6}; Line(6) = {6, 7};
Line(7) = {7, 8}; Line(8) = {8, 9}; Line(9) = {9, 1};
Curve Loop(1) = {1:9};
Plane Surface(1) = {1};
Physical Surface("clay") = {1};
Physical Curve("far base") = {1};
Physical Curve("far side") = {2, 9};
Physical Curve("ground") = {3, 4, 5, 6, 8};
Physical Curve("footing") = {7};
"""


def test_lower_bound_mesh_splits_corner_triangles(tmp_path, monkeypatch):
    """Where the surcharge ends at a sharp corner of the ground, one triangle with both
    edges would need one stress to meet two tractions: the lower bound is infeasible.
    The lower bound's mesh splits such triangles (control: unsplit, it is infeasible)."""
    clay = dict(CLAY, unit_weight=18.0)
    case = drawn_case(tmp_path, OVERHANG_GEO, layers=(clay,), ground={"surcharge": 20.0})
    mesh = build_mesh(case, order=1, elements=400)
    assert np.bincount(mesh.boundary_element, minlength=mesh.n_elements).max() == 1
    assert analyse(case, elements=400, bounds="lower", adaptive=False).lower.certificate["passed"]
    unsplit = solver.sitefile.check_site
    monkeypatch.setattr(solver.sitefile, "check_site",
                        lambda *args, split_corners=False: unsplit(*args, split_corners=False))
    mesh = build_mesh(case, order=1, elements=400)
    assert np.bincount(mesh.boundary_element, minlength=mesh.n_elements).max() == 2  # the 60-degree corner
    assert "infeasible" in analyse(case, elements=400, bounds="lower", adaptive=False).lower.status


def test_case_round_trip_keeps_the_drawing():
    case = load_case(MESHES / "trench-footing.toml")
    data = case_to_dict(case)
    assert data["geometry"] == {"file": str(MESHES / "trench-footing.geo")}
    assert parse_case(data, name=case.name, source_sha256=case.source_sha256) == case


def test_changed_file_is_refused(tmp_path):
    case = drawn_case(tmp_path, PRANDTL_GEO)
    (tmp_path / "site.geo").write_text(PRANDTL_GEO.replace("W = 10", "W = 12"), encoding="utf-8")
    with pytest.raises(CaseError, match="changed since the case was read"):
        build_mesh(case, order=1, elements=600)


# -- .msh files ---------------------------------------------------------------------------------------

def write_msh(geo: pathlib.Path, out: pathlib.Path, *, order: int = 1, quads: bool = False) -> int:
    """Mesh one of our .geo drawings through the sitefile builder and save a .msh with its
    named groups; returns the number of surface elements."""
    drawing = parse_geo(geo.read_text(encoding="utf-8"))
    with _GMSH_LOCK:
        gmsh = _start_gmsh()
        try:
            _build_drawing(gmsh, drawing)
            for dim, groups in ((2, drawing.surface_groups), (1, drawing.curve_groups)):
                for name, tags in groups.items():
                    gmsh.model.addPhysicalGroup(dim, list(tags), name=name)
            gmsh.option.setNumber("Mesh.MeshSizeFactor", 1.2)
            if quads:
                gmsh.option.setNumber("Mesh.RecombineAll", 1)
            gmsh.model.mesh.generate(2)
            if order == 2:
                gmsh.model.mesh.setOrder(2)
            count = sum(len(t) for t in gmsh.model.mesh.getElements(2)[1])
            gmsh.write(str(out))
        finally:
            gmsh.finalize()
    return count


@pytest.mark.parametrize("order", [1, 2])
def test_msh_file_is_taken_as_given(tmp_path, order):
    count = write_msh(MESHES / "bench-cut.geo", tmp_path / "bench.msh", order=order)
    text = (MESHES / "bench-cut.toml").read_text(encoding="utf-8").replace("bench-cut.geo", "bench.msh")
    (tmp_path / "bench.toml").write_text(text, encoding="utf-8")
    case = load_case(tmp_path / "bench.toml")
    result = analyse(case, elements=5000, adaptive=False)  # ignored: a .msh is used as given
    lower, upper = certified(result)
    assert result.lower.elements == result.upper.elements == count
    assert 0 < lower <= upper * (1 + ROUND_OFF)


def test_msh_with_quadrangles_is_refused(tmp_path):
    write_msh(MESHES / "bench-cut.geo", tmp_path / "bench.msh", quads=True)
    text = (MESHES / "bench-cut.toml").read_text(encoding="utf-8").replace("bench-cut.geo", "bench.msh")
    (tmp_path / "bench.toml").write_text(text, encoding="utf-8")
    with pytest.raises(CaseError, match=r"bench\.msh: surface \d+ holds 'Quadrilateral 4' elements"):
        load_case(tmp_path / "bench.toml")


# -- refusals -----------------------------------------------------------------------------------------

BAD_CASES = {  # file -> (the message starts with, and contains)
    "geometry_system_call.toml": ("system_call.geo", "'SystemCall' is not allowed in a site file"),
    "geometry_msh_script.toml": ("msh_script.MSH", "not a gmsh mesh file; a .msh must begin with the line $MeshFormat"),
    "geometry_crossing.toml": ("crossing.geo", "curves 2 and 6 cross at (10, -3.63636), which is not an end point of both"),
    "geometry_arc_crossing.toml": ("arc_crossing.geo", "curves 1 and 7 cross at (-8.64575, -8)"),
    "geometry_overlapping.toml": ("overlapping.geo", "curves 1 and 7 run along each other near (-5, -8)"),
    "geometry_touching.toml": ("touching.geo", "curves 7 and 8 touch at (-8, -3), which is not an end point of both"),
    "geometry_nested.toml": ("nested.geo", "surfaces 1 and 2 overlap near (0, -5)"),
    "geometry_many_ranges.toml": ("many_ranges.geo", "line 26: the lists of the file hold more than 100000 tags"),
    "geometry_loop_twice.toml": ("loop_twice.geo", "line 6: Curve Loop(1) uses curve 1 twice"),
    "geometry_include.toml": ("include.geo", "'Include' is not allowed in a site file: it reads another file"),
    "geometry_field.toml": ("field.geo", "'Field' is not allowed"),
    "geometry_no_footing.toml": ("no_footing.geo", "group 'footing' is missing"),
    "geometry_group_typo.toml": ("group_typo.geo", "curve group 'far sides' is not a boundary kind; did you mean 'far side'?"),
    "geometry_layer_typo.toml": ("layer_typo.geo", "surface group 'clai' matches no [[layers]] name; did you mean 'clay'?"),
    "geometry_layer_not_drawn.toml": ("site.geo", "group 'gravel' is missing; layers[2] 'gravel' must be drawn"),
    "geometry_untagged_curve.toml": ("untagged_curve.geo", "curve 6 near (-8, -3) is on the outline of the soil but in no boundary group"),
    "geometry_far_side_sloping.toml": ("far_side_sloping.geo", "group 'far side': curve 2"),
    "geometry_footing_sloping.toml": ("footing_sloping.geo", "group 'footing' is not level"),
    "geometry_interface_tagged.toml": ("interface_tagged.geo", "group 'ground': curve 7"),
    "geometry_open_loop.toml": ("open_loop.geo", "line 6: Curve Loop(1) is not closed"),
    "geometry_far_base_on_ground.toml": ("far_base_on_ground.geo", "group 'far base': curve 1 ends at (-8, -6) on 'ground'"),
    "geometry_same_point_twice.toml": ("same_point_twice.geo", "points 3 and 7 are at the same place"),
    "geometry_width_mismatch.toml": ("footing.width", "must be 2 (m), the width of group 'footing'"),
    "geometry_thickness_given.toml": ("layers[1].thickness", "left out with a [geometry] file"),
    "geometry_water_table.toml": ("ground.water_table", "no water table with a drawn site"),
    "geometry_slope_keys.toml": ("ground.slope_angle", "draw the slope instead"),
    "geometry_embedment.toml": ("footing.embedment", "draw the soil beside the footing instead"),
    "geometry_circular.toml": ("footing.shape", "as a strip footing only"),
    "geometry_file_missing.toml": ("geometry.file", "no such file"),
    "geometry_file_extension.toml": ("geometry.file", "must be a gmsh .geo script or .msh mesh"),
    "geometry_key_typo.toml": ("geometry.fiel", "did you mean 'file'?"),
    "geometry_not_table.toml": ("geometry", "must be a table [geometry]"),
}


def test_bad_corpus_and_expectations_match():
    assert sorted(p.name for p in BAD.glob("geometry_*.toml")) == sorted(BAD_CASES)


@pytest.mark.parametrize("file_name", sorted(BAD_CASES))
def test_bad_geometry_is_refused_in_one_line(file_name):
    starts, says = BAD_CASES[file_name]
    with pytest.raises(CaseError) as info:
        load_case(BAD / file_name)
    assert not (pathlib.Path.cwd() / "bearbound-test-marker").exists()  # the corpus's SystemCall lines
    message = str(info.value)
    assert "\n" not in message and "Traceback" not in message
    where = message.split(": ", 1)[0]
    assert where == starts or where.endswith("/" + starts) and where == label(BAD / starts), message
    assert says in message, message


def test_bad_geometry_exits_2_through_the_cli(tmp_path, capsys):
    out = tmp_path / "out"
    assert main(["run", str(BAD / "geometry_layer_typo.toml"), "--out", str(out)]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and "surface group 'clai'" in err[0]
    assert not out.exists()  # nothing written


def test_crossing_outline_is_refused_from_the_command_line_at_once(tmp_path):
    """gmsh meshed this drawing for ever (more than 150 s, no output); the check before
    meshing refuses it in one line. The timeout is the test: a hang fails it."""
    done = subprocess.run([sys.executable, "-m", "solver.cli", "run", str(BAD / "geometry_crossing.toml"), "--out",
                           str(tmp_path / "out")], capture_output=True, text=True, timeout=60)
    assert done.returncode == 2 and done.stderr.count("\n") == 1 and "cross at" in done.stderr, done.stderr
    assert not (tmp_path / "out").exists()


@pytest.mark.parametrize("text, says", [
    ("Physical Curve(\"g\") = {1:20000};", "a list holds at most 10000 tags"),
    ("Physical Curve(\"g\") = {" + ", ".join(["1:5000"] * 3) + "};", "a list holds at most 10000 tags"),
    ("".join(f"Physical Curve(\"g{i}\") = {{1:9999}};\n" for i in range(30000)), "more than 100000 tags together"),
    ("".join(f"Point({i}) = {{{i}, 0, 0}};" for i in range(1, 5003)), "more than 5000 points"),
])
def test_lists_and_entities_are_capped(text, says):
    """A 1 MB file of capped ranges once made lists of billions of tags; the caps refuse it
    after at most MAX_LIST_TOTAL tags (the last case is a 1 MB file)."""
    with pytest.raises(_GeoError) as info:
        parse_geo(text)
    assert says in str(info.value)


def test_legal_meetings_pass_the_crossing_check():
    """Curves that meet only at shared end points, arcs tangent to lines at a shared point,
    collinear lines end to end and a hole inside its surface are all allowed."""
    drawing = parse_geo("""
        Point(1) = {-10, -8, 0}; Point(2) = {0, -8, 0}; Point(3) = {10, -8, 0}; Point(4) = {10, 0, 0};
        Point(5) = {1, 0, 0}; Point(6) = {-1, 0, 0}; Point(7) = {-10, 0, 0};
        Point(8) = {-4, -4, 0}; Point(9) = {-2, -4, 0}; Point(10) = {-2, -2, 0}; Point(11) = {-2, -6, 0};
        Line(1) = {1, 2}; Line(2) = {2, 3}; Line(3) = {3, 4}; Line(4) = {4, 5}; Line(5) = {5, 6};
        Line(6) = {6, 7}; Line(7) = {7, 1};
        Circle(8) = {8, 9, 10}; Line(9) = {10, 11}; Circle(10) = {11, 9, 8};
        Curve Loop(1) = {1, 2, 3, 4, 5, 6, 7}; Curve Loop(2) = {8, 9, 10};
        Plane Surface(1) = {1, 2}; Plane Surface(2) = {2};
    """)
    solver.sitefile._check_crossings(drawing, "site.geo")
    solver.sitefile._check_surfaces_apart(drawing, "site.geo")
    for site in EXAMPLES:
        drawing = parse_geo((MESHES / f"{site}.geo").read_text(encoding="utf-8"))
        solver.sitefile._check_crossings(drawing, site)
        solver.sitefile._check_surfaces_apart(drawing, site)


SYSTEM_CALL = 'SystemCall "touch {marker}";\n'


def test_system_call_runs_nothing(tmp_path):
    """A script that tries a shell command is refused before anything runs. Control:
    gmsh's own interpreter, given the same file, does run it (so the marker test can fail)."""
    marker = tmp_path / "marker"
    text = PRANDTL_GEO + SYSTEM_CALL.format(marker=marker)
    with pytest.raises(CaseError, match=r"site\.geo: line 13: 'SystemCall' is not allowed in a site file: "
                                        r"it runs a command on this machine"):
        drawn_case(tmp_path, text)
    assert not marker.exists()
    control = tmp_path / "control.geo"
    control.write_text(SYSTEM_CALL.format(marker=tmp_path / "control-marker"), encoding="utf-8")
    subprocess.run([sys.executable, "-c", "import gmsh, sys; gmsh.initialize(readConfigFiles=False); "
                    "gmsh.option.setNumber('General.Terminal', 0); gmsh.open(sys.argv[1]); gmsh.finalize()",
                    str(control)], check=True, timeout=120)
    assert (tmp_path / "control-marker").exists()


MSH_SCRIPTS = {  # a script under a mesh's name, in the shapes gmsh's first-line test might let through
    "plain": 'SystemCall "touch {marker}";\n',
    "byte-order mark": '\ufeff$MeshFormat\n4.1 0 8\n$EndMeshFormat\nSystemCall "touch {marker}";\n',
    "comment first": '// $MeshFormat\nSystemCall "touch {marker}";\n',
    "comments section": '$Comments\nSystemCall "touch {marker}";\n$EndComments\n',
    "header later": 'SystemCall "touch {marker}";\n$MeshFormat\n4.1 0 8\n$EndMeshFormat\n',
}


@pytest.mark.parametrize("shape", sorted(MSH_SCRIPTS))
@pytest.mark.parametrize("file_name", ["site.msh", "SITE.Msh"])
def test_msh_that_is_a_script_runs_nothing(tmp_path, shape, file_name):
    """A .msh is data: a file that does not begin as gmsh's mesh files do is refused before
    gmsh sees it, whatever the case of its extension. Control: gmsh itself, given the
    plain file, runs the command (so the marker test can fail)."""
    marker = tmp_path / "marker"
    (tmp_path / file_name).write_text(MSH_SCRIPTS[shape].format(marker=marker), encoding="utf-8")
    data = {"footing": {"width": 2.0}, "geometry": {"file": file_name}, "layers": [CLAY]}
    with pytest.raises(CaseError, match=r"not a gmsh mesh file; a \.msh must begin with the line \$MeshFormat"):
        parse_case(data, base_dir=tmp_path)
    assert not marker.exists()
    if shape == "plain" and file_name == "site.msh":
        subprocess.run([sys.executable, "-c", "import gmsh, sys; gmsh.initialize(readConfigFiles=False); "
                        "gmsh.option.setNumber('General.Terminal', 0); gmsh.open(sys.argv[1]); gmsh.finalize()",
                        str(tmp_path / file_name)], check=True, timeout=120)
        assert marker.exists()


def test_msh_header_then_a_script_is_read_as_a_mesh_and_runs_nothing(tmp_path):
    """Past a real mesh header gmsh's mesh reader takes the file: no line of it is run."""
    marker = tmp_path / "marker"
    (tmp_path / "site.msh").write_text("$MeshFormat\n4.1 0 8\n$EndMeshFormat\n"
                                       + SYSTEM_CALL.format(marker=marker), encoding="utf-8")
    data = {"footing": {"width": 2.0}, "geometry": {"file": "site.msh"}, "layers": [CLAY]}
    with pytest.raises(CaseError, match="site.msh: "):
        parse_case(data, base_dir=tmp_path)
    assert not marker.exists()


REFUSED_WORDS = ["SystemCall", "Shell", "Include", "Merge", "OnelabRun", "Plugin", "Exit", "Printf", "Print",
                 "Save", "Sleep", "Call", "Macro", "Function", "Field", "Background", "Delete", "For", "If",
                 "GetEnv", "Sprintf"]


@pytest.mark.parametrize("word", REFUSED_WORDS)
def test_effectful_words_are_refused_with_the_reason(word):
    with pytest.raises(_GeoError) as info:
        parse_geo(f'lc = 1;\n{word} "x";\n')
    assert info.value.line == 2 and f"'{word}' is not allowed in a site file: " in str(info.value)


@pytest.mark.parametrize("text, says", [
    ("Mesh.Algorithm = 6;", "'Mesh' is not in the site-file subset"),
    ('SetFactory("OpenCASCADE");', "'SetFactory' is not in the site-file subset"),
    ("Rectangle(1) = {0, 0, 0, 1, 1};", "'Rectangle' is not in the site-file subset"),
    ("x = y + 1;", "'y' is not defined"),
    ("x = 1 / 0;", "division by zero"),
    ("x = 1e308 * 10;", "no finite number"),
    ("x = " + "(" * 5000 + "1" + ")" * 5000 + ";", "nested too deeply"),
    ("Point(1) = {0, 0, 1};", "the plane z = 0"),
    ("Point(1) = {0, 0, 0}; Point(1) = {1, 0, 0};", "point 1 is defined twice"),
    ("Point(1) = {0, 0, 0}; Line(1) = {1, 2};", "uses point 2, which is not defined"),
    ('Physical Curve(5) = {1};', "needs a name in quotes"),
    ("Point(1) = {0, 0, 0}; Point(2) = {1, 0, 0}; Point(3) = {2, 0, 0}; Circle(1) = {1, 2, 3};", "180 degrees"),
    ('x = 1 # 2;', "character '#' is not allowed"),
    ("/* never closed", "never closed"),
])
def test_outside_the_subset_is_refused(text, says):
    with pytest.raises(_GeoError, match=None) as info:
        parse_geo(text)
    assert says in str(info.value)


def test_subset_expressions_evaluate_as_gmsh_does():
    d = parse_geo("""
        a = 2; b = -a^2 + Sqrt(16) * Cos(0);   // -4 + 4: the power binds tighter than the sign
        Point(1) = {b, Atan2(1, 1) * 4 / Pi, 0};
        Point(2) = {Hypot(3, 4), Min(1, 2) - Max(0, -1), 0, 0.5};
        Point(3) = {5, 5, 0}; Point(4) = {0, 5, 0};
        Line(1) = {1, 2}; Line(2) = {2, 3}; Line(3) = {3, 4}; Line(4) = {4, 1};
        Line Loop(7) = {1:4};
        Plane Surface(1) = {7};
        Physical Line("ground", 3) = {1:3};
        Characteristic Length {1, 3} = a / 10;
    """)
    assert d.points[1] == (0.0, 1.0, 0.2) and d.points[2] == (5.0, 1.0, 0.5) and d.points[3][2] == 0.2
    assert d.loops[7] == (1, 2, 3, 4) and d.curve_groups == {"ground": (1, 2, 3)}


def test_random_bytes_only_ever_give_a_refusal():
    rng = np.random.default_rng(7)
    alphabet = list('Point(){},;=+-*/^:"ab 1.5e3\nLine Circle Physical Curve Loop Plane Surface //')
    for _ in range(300):
        text = "".join(rng.choice(alphabet, size=int(rng.integers(1, 80))))
        try:
            parse_geo(text)
        except _GeoError:
            pass


def test_doctests():
    failures, _ = doctest.testmod(solver.sitefile)
    assert failures == 0
