"""Sweeps: the sweep file's checks, the points it makes, and a real run on a
LocalCluster of 2 worker processes checked against the same cases solved one by one."""
import csv
import doctest
import json
import math
import subprocess
import sys
import urllib.error
import urllib.request
from pathlib import Path

import pytest

import solver.sweep
from solver.analysis import analyse
from solver.case import CaseError, parse_case
from solver.sweep import CERTIFIED, FAILED, load_sweep, parse_sweep, run_sweep, solve_point

ROOT = Path(__file__).resolve().parent.parent

# Weightless two-layer Tresca ground on a tiny mesh: about 0.4 s a point.
BASE = {"title": "Stiff clay over soft clay",
        "footing": {"width": 1.0},
        "layers": [{"name": "stiff clay", "thickness": 0.5, "model": "tresca",
                    "undrained_strength": 40.0, "unit_weight": 0.0},
                   {"name": "soft clay", "model": "tresca", "undrained_strength": 20.0, "unit_weight": 0.0}],
        "analysis": {"elements": 400, "mesh": "fixed"}}


def sweep_of(vary, **more):
    return parse_sweep({"base": BASE, "vary": vary, **more}, name="t")


def one_line_error(call, *words):
    with pytest.raises(CaseError) as info:
        call()
    message = str(info.value)
    assert "\n" not in message, message
    for word in words:
        assert word in message, message
    return message


# -- the sweep file ------------------------------------------------------------

def test_cross_puts_the_first_key_outermost_and_fills_each_case():
    sweep = sweep_of({"layers.0.thickness": [0.25, 0.5, 1.0], "footing.width": [1.0, 2.0]})
    assert [tuple(p.values.values()) for p in sweep.points] == [
        (0.25, 1.0), (0.25, 2.0), (0.5, 1.0), (0.5, 2.0), (1.0, 1.0), (1.0, 2.0)]
    case = sweep.points[3].case_dict
    assert case["layers"][0]["thickness"] == 0.5 and case["footing"]["width"] == 2.0
    assert case["layers"][1]["undrained_strength"] == 20.0  # untouched keys come from the base
    assert sweep.chart.x == "layers.0.thickness" and sweep.chart.lines == "footing.width"
    assert len({p.sha256 for p in sweep.points}) == 6


def test_zip_ranges_and_unquoted_dotted_keys():
    sweep = sweep_of({"layers": {"0": {"thickness": {"start": 0.1, "stop": 0.5, "num": 5}}},
                      "layers.1.undrained_strength": [10, 15, 20, 25, 30]}, combine="zip")
    assert [p.values["layers.0.thickness"] for p in sweep.points] == [0.1, 0.2, 0.3, 0.4, 0.5]
    assert [p.case_dict["layers"][1]["undrained_strength"] for p in sweep.points] == [10, 15, 20, 25, 30]
    assert sweep.chart.lines is None  # zip: one band against the first key


def test_hash_follows_the_whole_case():
    a = sweep_of({"footing.width": [1.0, 2.0]})
    b = sweep_of({"footing.width": [2.0]})
    c = parse_sweep({"base": {**BASE, "analysis": {"elements": 500, "mesh": "fixed"}}, "vary": {"footing.width": [2.0]}})
    assert a.points[1].sha256 == b.points[0].sha256
    assert c.points[0].sha256 != b.points[0].sha256


@pytest.mark.parametrize("vary, extra, words", [
    ({"footing.widht": [1.0]}, {}, ["vary.footing.widht", "did you mean 'width'"]),
    ({"layers.2.thickness": [1.0]}, {}, ["vary.layers.2.thickness", "0 to 1", "counted from 0"]),
    ({"layers.0.friction_angle": [30.0]}, {}, ["vary.layers.0.friction_angle", "tresca"]),
    ({"footing.width": [-1.0, 1.0]}, {}, ["vary.footing.width", "-1.0", ">= 0.01"]),
    ({"footing.width": [1.0, 1.0]}, {}, ["vary.footing.width", "twice"]),
    ({"footing.width": {"start": 1, "stop": 2}}, {}, ["vary.footing.width.num", "missing"]),
    ({"footing.width": [1.0, 2.0], "ground.surcharge": [0.0]}, {"combine": "zip"},
     ["vary.ground.surcharge", "1 values", "as many as vary.footing.width (2)"]),
    ({"footing.width": [1.0]}, {"combine": "both"}, ["combine", "'both'", "'cross', 'zip'"]),
    ({"footing.width": [1.0]}, {"chart": {"output": "bearing"}}, ["chart.output", "'pressure'"]),
    ({"footing.base": ["rough", "smooth"]}, {}, ["chart.x", "numbers"]),
    ({"footing.width": [1.0]}, {"chart": {"divide_by": "ground.surcharge"}}, ["chart.divide_by", "> 0"]),
    ({"layers.1.undrained_strength": [0.0]}, {}, ["every point's case is bad", "layers[2]"]),
])
def test_bad_sweep_is_one_line_naming_the_key(vary, extra, words):
    one_line_error(lambda: sweep_of(vary, **extra), *words)


def test_a_circles_load_chart_is_its_whole_load_in_kN_and_a_design_load_is_checked_in_kN():
    circle = {**BASE, "footing": {"width": 2.0, "shape": "circular"}}
    sweep = parse_sweep({"base": circle, "vary": {"footing.design_load": [2.0e6, 3.0e6]},  # 2e6 kN: a strip refuses it
                         "chart": {"output": "load"}}, name="t")
    assert sweep.chart.load_unit == "kN" and solver.sweep._output_label(sweep.chart) == "collapse load Q (kN)"
    record = {"case": sweep.points[0].case_dict, "lower_kPa": 100.0}  # invented: checks the arithmetic only
    assert solver.sweep._chart_value(record, "lower", sweep.chart) == pytest.approx(100.0 * math.pi)  # pi 2^2 / 4
    one_line_error(lambda: sweep_of({"footing.design_load": [2.0e6]}), "vary.footing.design_load", "kN/m")
    one_line_error(lambda: parse_sweep({"base": BASE, "vary": {"footing.shape": ["strip", "circular"],
                                                               "footing.width": [1.0, 2.0]},
                                        "chart": {"output": "load", "x": "footing.width"}}, name="t"),
                   "chart.output", "'pressure' when footing.shape is varied")


def test_bad_base_and_misplaced_files(tmp_path):
    one_line_error(lambda: parse_sweep({"base": {**BASE, "footing": {"width": 0}}, "vary": {}}),
                   "base.footing.width", ">= 0.01")
    one_line_error(lambda: parse_sweep({"vary": {"footing.width": [1.0]}}), "base: missing")
    case = tmp_path / "site.toml"
    case.write_text('[footing]\nwidth = 2.0\n[[layers]]\nname = "clay"\nmodel = "tresca"\n'
                    'undrained_strength = 30.0\nunit_weight = 0.0\n')
    one_line_error(lambda: load_sweep(case), "a case file, not a sweep file")
    (tmp_path / "s-sweep.toml").write_text('base = "site.toml"\n[vary]\n"footing.width" = [1.0, 2.0]\n')
    sweep = load_sweep(tmp_path / "s-sweep.toml")  # the base path is relative to the sweep file
    assert sweep.name == "s-sweep" and sweep.points[1].case_dict["layers"][0]["undrained_strength"] == 30.0
    (tmp_path / "bad-sweep.toml").write_text('base = "nope.toml"\n[vary]\n"footing.width" = [1.0]\n')
    one_line_error(lambda: load_sweep(tmp_path / "bad-sweep.toml"), "nope.toml", "no such case file")


def test_a_bad_combination_is_kept_as_a_failed_point():
    sweep = sweep_of({"layers.1.undrained_strength": [0.0, 20.0], "layers.1.strength_gradient": [0.0, 2.0]})
    errors = [p.error for p in sweep.points]
    assert errors[0] is not None and "layers[2]" in errors[0] and errors[1:] == [None] * 3


def test_solve_point_records_solver_trouble(monkeypatch):
    def broken(case, **options):
        raise RuntimeError("factorisation failed\non two lines")

    monkeypatch.setattr("solver.analysis.analyse", broken)
    record = solve_point(sweep_of({"footing.width": [1.0]}).points[0].case_dict)
    assert record["status"] == FAILED and record["lower_kPa"] is None
    assert record["reason"] == "RuntimeError: factorisation failed on two lines"


def test_example_sweep_file_is_valid():
    sweep = load_sweep(ROOT / "examples" / "crust-sweep.toml")
    assert len(sweep.points) == 18 and all(p.error is None for p in sweep.points)
    assert sweep.chart.divide_by.key == "layers.1.undrained_strength"


def test_doctests():
    assert doctest.testmod(solver.sweep).failed == 0


def test_cli_bad_sweep_is_exit_2_and_writes_nothing(tmp_path):
    (tmp_path / "bad-sweep.toml").write_text('base = "x.toml"\n[vary]\n"footing.width" = [1.0]\n')
    done = subprocess.run([sys.executable, "-m", "solver.cli", "sweep", "bad-sweep.toml"], cwd=tmp_path,
                          capture_output=True, text=True, timeout=120)
    assert done.returncode == 2 and done.stdout == "" and "Traceback" not in done.stderr
    assert done.stderr.count("\n") == 1 and "x.toml" in done.stderr
    assert not (tmp_path / "out").exists()


# -- a real sweep on worker processes ---------------------------------------------

@pytest.fixture(scope="module")
def client():
    from distributed import Client

    cluster = solver.sweep.local_cluster(2)
    with Client(cluster, set_as_default=False) as client:
        yield client
    cluster.close()


def read_csv(path):
    with open(path, newline="") as handle:
        return list(csv.DictReader(handle))


def test_local_cluster_listens_on_loopback_only(client):
    info = client.scheduler_info()
    assert info["address"].startswith("tcp://127.0.0.1:")
    assert len(info["workers"]) == 2
    assert all(address.startswith("tcp://127.0.0.1:") for address in info["workers"])
    assert all(w["nanny"].startswith("tcp://127.0.0.1:") for w in info["workers"].values())
    # Every socket listening in this process (the scheduler runs here) and in the worker
    # processes is on loopback; and no dashboard is served.
    import psutil

    here = psutil.Process()
    listening = [c.laddr for proc in [here, *here.children(recursive=True)]
                 for c in proc.net_connections(kind="inet") if c.status == psutil.CONN_LISTEN]
    assert len(listening) >= 5  # scheduler, its HTTP server, 2 workers, 2 nannies
    assert {address.ip for address in listening} == {"127.0.0.1"}
    # The scheduler's small HTTP server answers health checks but serves no dashboard page
    # (with a dashboard on, /status answers 200 even without bokeh installed).
    port = info["services"]["dashboard"]
    with urllib.request.urlopen(f"http://127.0.0.1:{port}/health", timeout=10) as answer:
        assert answer.status == 200
    with pytest.raises(urllib.error.HTTPError) as refused:
        urllib.request.urlopen(f"http://127.0.0.1:{port}/status", timeout=10)
    assert refused.value.code == 404


def test_four_point_sweep_matches_the_cases_run_one_by_one(client, tmp_path):
    sweep = sweep_of({"layers.0.thickness": [0.25, 0.75], "footing.width": [1.0, 2.0]})
    outcome = run_sweep(sweep, tmp_path, client=client, progress=False)
    assert outcome.ran == 4 and outcome.reused == 0 and outcome.workers == 2
    rows = read_csv(tmp_path / "sweep.csv")
    assert list(rows[0]) == ["point", "layers.0.thickness", "footing.width", "lower_kPa", "upper_kPa",
                             "gap_percent", "status", "wall_s", "reason", "case_sha256"]
    assert len(rows) == 4
    for point, row in zip(sweep.points, rows):
        assert float(row["layers.0.thickness"]) == point.values["layers.0.thickness"]
        result = analyse(parse_case(point.case_dict))  # the same case, here, on its own
        assert row["status"] == CERTIFIED
        assert float(row["lower_kPa"]) == result.lower.pressure_kPa  # identical, not close
        assert float(row["upper_kPa"]) == result.upper.pressure_kPa
        assert float(row["gap_percent"]) == result.gap_percent
        stored = json.loads((tmp_path / "points" / f"{point.sha256}.json").read_text())
        assert stored["case"] == point.case_dict and stored["result"]["lower"]["pressure_kPa"] == result.lower.pressure_kPa
        assert "qualified" in stored["caution"]
    # the bracket must move the right way: a thicker stiff crust carries more
    assert float(rows[2]["lower_kPa"]) > float(rows[0]["lower_kPa"])
    assert (tmp_path / "chart.png").read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"

    # Resumable: nothing is solved again; a lost point is solved again alone.
    before = (tmp_path / "sweep.csv").read_text()
    again = run_sweep(sweep, tmp_path, client=client, progress=False)
    assert (again.ran, again.reused) == (0, 4) and (tmp_path / "sweep.csv").read_text() == before
    (tmp_path / "points" / f"{sweep.points[1].sha256}.json").unlink()
    (tmp_path / "points" / f"{sweep.points[2].sha256}.json").write_text("{ cut short")
    third = run_sweep(sweep, tmp_path, client=client, progress=False)
    assert (third.ran, third.reused) == (2, 2)
    rows_now = read_csv(tmp_path / "sweep.csv")
    assert [(r["lower_kPa"], r["upper_kPa"]) for r in rows_now] == [(r["lower_kPa"], r["upper_kPa"]) for r in rows]


def test_cli_sweep_records_a_failed_point_and_goes_on(tmp_path):
    base = "\n".join([
        "[base.footing]", "width = 1.0",
        "[[base.layers]]", 'name = "stiff clay"', "thickness = 0.5", 'model = "tresca"',
        "undrained_strength = 40.0", "unit_weight = 0.0",
        "[[base.layers]]", 'name = "soft clay"', 'model = "tresca"', "undrained_strength = 20.0",
        "unit_weight = 0.0",
        "[base.analysis]", "elements = 400", "mesh = \"fixed\""])
    (tmp_path / "clay-sweep.toml").write_text(
        'title = "Test sweep 粘土"\n[vary]\n"layers.1.undrained_strength" = [0.0, 20.0]\n'
        '[chart]\ndivide_by = "layers.0.undrained_strength"\nformats = ["png", "svg"]\n' + base + "\n")
    done = subprocess.run([sys.executable, "-m", "solver.cli", "sweep", "clay-sweep.toml", "--workers", "1",
                           "--no-progress"], cwd=tmp_path, capture_output=True, text=True, timeout=300)
    assert done.returncode == 1, done.stderr  # one point has no result
    out = tmp_path / "out" / "clay-sweep"
    rows = read_csv(out / "sweep.csv")
    assert [r["status"] for r in rows] == [FAILED, CERTIFIED]
    assert "bad combination" in rows[0]["reason"] and "undrained_strength" in rows[0]["reason"]
    assert rows[0]["lower_kPa"] == "" and float(rows[1]["lower_kPa"]) > 0
    assert len(list((out / "points").glob("*.json"))) == 1
    svg = (out / "chart.svg").read_text()
    assert "undrained strength of &#39;soft clay&#39; (kPa)" in svg or "undrained strength of 'soft clay' (kPa)" in svg
    assert "collapse pressure q / undrained strength of" in svg and "(-)" in svg
    assert "point 0" in done.stdout and "Caution" in done.stdout
    assert done.stderr == ""  # no library warning (the font lacks the title's glyphs), no log line


def test_more_keys_than_two_give_one_chart_per_combination(tmp_path):
    sweep = sweep_of({"layers.0.thickness": [0.25, 0.5], "footing.width": [1.0, 2.0],
                      "layers.1.undrained_strength": [10.0, 20.0, 30.0]})
    # Invented numbers: this checks the drawing and file names only, not any result.
    records = [{"values": p.values, "case": p.case_dict, "lower_kPa": 100.0 + p.index,
                "upper_kPa": 110.0 + p.index} for p in sweep.points]
    files = solver.sweep.write_charts(sweep, records, tmp_path)
    assert sorted(f.name for f in files) == [f"chart-{i}.png" for i in (1, 2, 3)]


def test_chart_bands_differ_without_colour():
    # Grey print: each band has its own marker and hatch, not only its own colour.
    from matplotlib.collections import PolyCollection

    sweep = sweep_of({"layers.0.thickness": [0.25, 0.5, 1.0], "footing.width": [1.0, 2.0, 3.0]})
    # Invented numbers: this checks the drawing only, not any result.
    records = [{"values": p.values, "case": p.case_dict, "lower_kPa": 100.0 + p.index,
                "upper_kPa": 110.0 + p.index} for p in sweep.points]
    figure = solver.sweep.chart_figure(sweep, records, sweep.parameter)
    axes = figure.axes[0]
    markers = {line.get_marker() for line in axes.lines if len(line.get_xdata())}
    hatches = {c.get_hatch() for c in axes.collections if isinstance(c, PolyCollection)}
    assert len(markers) == 3 and len(hatches - {None}) >= 2
    legend = axes.get_legend()
    assert [t.get_text() for t in legend.get_texts()][:3] == ["footing width = 1 m", "footing width = 2 m",
                                                              "footing width = 3 m"]


def test_a_point_over_the_time_limit_is_stopped_and_the_sweep_goes_on(tmp_path):
    """One point (400k triangles) would take far longer than the whole test's timeout; with
    point_time_limit_s = 4 it is stopped, recorded as failed, and the next point (a fresh
    point process on the same single worker) is solved."""
    base = "\n".join([
        "[base.footing]", "width = 1.0",
        "[[base.layers]]", 'name = "clay"', 'model = "tresca"', "undrained_strength = 20.0", "unit_weight = 0.0",
        "[base.analysis]", "elements = 400", "mesh = \"fixed\""])
    (tmp_path / "limit.toml").write_text(
        'point_time_limit_s = 4\n[vary]\n"analysis.elements" = [400000, 400]\n' + base + "\n")
    done = subprocess.run([sys.executable, "-m", "solver.cli", "sweep", "limit.toml", "--workers", "1",
                           "--no-progress"], cwd=tmp_path, capture_output=True, text=True, timeout=240)
    assert done.returncode == 1, done.stderr
    rows = read_csv(tmp_path / "out" / "limit" / "sweep.csv")
    assert [r["status"] for r in rows] == [FAILED, CERTIFIED]
    assert rows[0]["reason"].startswith("time limit: stopped after 4 s") and rows[0]["lower_kPa"] == ""
    assert 4.0 <= float(rows[0]["wall_s"]) < 30.0
    assert "point 0" in done.stdout and "time limit" in done.stdout


@pytest.mark.parametrize("value", [0, -1, "1h", 1e9, True])
def test_point_time_limit_is_checked(value):
    one_line_error(lambda: parse_sweep({"base": BASE, "vary": {"footing.width": [1.0]}, "point_time_limit_s": value}),
                   "point_time_limit_s: ", "is not allowed; must be a number > 0 and <= 604800 (s)")
    assert parse_sweep({"base": BASE, "vary": {"footing.width": [1.0]}}).point_time_limit_s == 3600.0


def test_a_circles_width_is_charted_as_its_diameter():
    from solver.sweep import parse_sweep

    layers = [{"name": "clay", "model": "tresca", "unit_weight": 0, "undrained_strength": 20}]
    labels = {}
    for name, base, vary in (("strip", {"width": 1.0}, {"footing.width": [1.0, 2.0]}),
                             ("circle", {"width": 1.0, "shape": "circular"}, {"footing.width": [1.0, 2.0]}),
                             ("both", {"width": 1.0}, {"footing.width": [1.0, 2.0],
                                                       "footing.shape": ["strip", "circular"]})):
        sweep = parse_sweep({"base": {"footing": base, "layers": layers}, "vary": vary})
        labels[name] = sweep.parameters[0].label
    assert labels == {"strip": "footing width", "circle": "footing diameter", "both": "footing width or diameter"}
