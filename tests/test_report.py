"""The run's outputs as a user meets them: report.html (escaped, self-contained, rebuilt
without solving), fields.vtu, summary.csv, the case copy, the command-line flags, and the
report in a real headless browser where one is installed."""
import csv
import datetime
import json
import shutil
import subprocess
import sys
import time
from dataclasses import replace
from html.parser import HTMLParser

import numpy as np
import pytest

from solver.analysis import analyse
from solver.case import parse_case
from solver.export import bound_fields, read_fields_vtu, write_fields_vtu
from solver.report import esc

# A case file is data: every string below must reach the report as text, never as markup,
# and the spreadsheet cell must not become a formula.
HOSTILE_CASE = """
title = "=HYPERLINK(\\"http://example.invalid\\") <script>document.title='PWNED'</script> & <b>rail</b>"
[footing]
width = 1.5
embedment = 0.5
design_load = 180.0
required_factor_of_safety_on_load = 2.0
required_factor_of_safety_on_strength = 1.3
[ground]
surcharge = 2.0
[[layers]]
name = "<img src=x onerror=alert(1)> gravel"
thickness = 2.0
model = "mohr-coulomb"
cohesion = 2.0
friction_angle = 33.0
unit_weight = 19.5
[[layers]]
name = "clay $\\\\alpha$ </td></table>"
model = "tresca"
undrained_strength = 45.0
strength_gradient = 2.0
unit_weight = 18.0
[factors]
friction = 1.25
cohesion = 1.25
undrained_strength = 1.4
load = 1.35
[analysis]
elements = 600
mesh = "fixed"
"""

PLAIN_CASE = """
title = "Test strip on uniform clay"
[report]
project = "Quay <wall> 7"
checked_by = "A. Checker"
[footing]
width = 2.0
[[layers]]
name = "clay"
model = "tresca"
undrained_strength = 30.0
unit_weight = 0.0
[analysis]
elements = 600
mesh = "fixed"
"""


def bearbound(*args, cwd):
    return subprocess.run([sys.executable, "-m", "solver.cli", *args], cwd=cwd, capture_output=True,
                          text=True, timeout=300)


@pytest.fixture(scope="module")
def hostile_run(tmp_path_factory):
    folder = tmp_path_factory.mktemp("hostile")
    case = folder / "rail.toml"
    case.write_text(HOSTILE_CASE)
    before = case.read_bytes()
    start = time.perf_counter()
    done = bearbound("run", str(case), cwd=folder)
    (folder / "elapsed_s.txt").write_text(f"{time.perf_counter() - start}")  # the command, seen from outside
    assert done.returncode == 0, done.stderr
    return folder, folder / "out" / "rail", before, done


class Attributes(HTMLParser):
    """Tags, and every src/href attribute, of a page."""

    def __init__(self):
        super().__init__()
        self.tags, self.links, self.names = [], [], []

    def handle_starttag(self, tag, attrs):
        self.tags.append(tag)
        self.names += [name for name, _ in attrs]
        self.links += [value for name, value in attrs if name in ("src", "href")]


def test_run_writes_every_output_and_never_touches_the_case_file(hostile_run):
    folder, out, before, done = hostile_run
    names = {p.name for p in out.iterdir()}
    assert names == {"result.json", "case.toml", "fields.vtu", "summary.csv", "report.html",
                     "model.png", "model.svg", "mechanism.png", "mechanism.svg", "stress.png", "stress.svg",
                     "contact.png", "contact.svg"}
    assert (folder / "rail.toml").read_bytes() == before
    assert (out / "case.toml").read_bytes() == before  # a byte-for-byte copy
    assert not [p for p in out.iterdir() if p.name.startswith(".")]  # no temporary file left behind
    assert "factor of safety" in done.stdout and "on strength" in done.stdout and "VERDICT" in done.stdout
    assert "load factor" not in done.stdout  # one word for one thing: the partial factor is "on the action"


def test_factor_of_safety_in_result_json(hostile_run):
    _, out, _, _ = hostile_run
    fos = json.loads((out / "result.json").read_text())["factor_of_safety"]
    data = json.loads((out / "result.json").read_text())
    assert fos["on_load"]["lower"] == pytest.approx(data["lower"]["load_kN_per_m"] / 180.0)
    assert fos["on_load"]["upper"] == pytest.approx(data["upper"]["load_kN_per_m"] / 180.0)
    strength = fos["on_strength"]
    assert 1.0 < strength["lower"] <= strength["upper"] < fos["on_load"]["upper"]
    assert fos["checks"][0]["check"] == "design load carried" and fos["checks"][0]["outcome"] == "met"
    assert isinstance(strength["solves"], int) and strength["solves"] >= 2
    partial = fos["partial_factors"]
    assert partial["action_kN_per_m"] == pytest.approx(180.0 * 1.35)
    assert partial["covered"] in (True, False, None) and partial["verdict"]


def test_report_escapes_case_text_and_loads_nothing(hostile_run):
    _, out, _, _ = hostile_run
    page = (out / "report.html").read_text(encoding="utf-8")
    parser = Attributes()
    parser.feed(page)
    assert "script" not in parser.tags and "img" in parser.tags and "b" not in parser.tags
    assert not [name for name in parser.names if name.startswith("on")]  # no event handler anywhere
    assert "<script" not in page.lower()
    assert "&lt;script&gt;document.title=&#x27;PWNED&#x27;&lt;/script&gt;" in page
    assert "&lt;img src=x onerror=alert(1)&gt; gravel" in page
    assert "clay $\\alpha$ &lt;/td&gt;&lt;/table&gt;" in page
    assert parser.links and all(link.startswith("data:image/png;base64,") for link in parser.links)
    assert "Content-Security-Policy" in page and "default-src 'none'" in page
    assert "qualified geotechnical engineer" in page and "licensed practice govern" in page
    assert "associated flow" in page and "plane strain" in page
    data = json.loads((out / "result.json").read_text())
    assert data["case"]["sha256"] in page and data["software"]["version"] in page
    assert "@media print" in page
    assert "from memory" not in page  # a value only recalled is not in a filed report


def test_report_flags_unconservative_hand_methods(hostile_run):
    _, out, _, _ = hostile_run
    data = json.loads((out / "result.json").read_text())
    page = (out / "report.html").read_text(encoding="utf-8")
    above = [h["method"] for h in data["hand_methods"] if h["where"].startswith("ABOVE")]
    assert above, "the scenario was chosen to have an unconservative hand method"
    assert page.count('<tr class="flag">') == len(above)
    assert page.count("&#9650; ABOVE THE UPPER BOUND") == len(above)


def test_summary_csv_is_one_row_and_never_a_formula(hostile_run):
    _, out, _, _ = hostile_run
    rows = list(csv.DictReader((out / "summary.csv").open(newline="")))
    assert len(rows) == 1
    row = rows[0]
    data = json.loads((out / "result.json").read_text())
    assert float(row["lower_pressure_kPa"]) == data["lower"]["pressure_kPa"]
    assert float(row["factor_of_safety_on_strength_upper"]) == data["factor_of_safety"]["on_strength"]["upper"]
    # each column holds what its name says: the resultant along the load's line, and its vertical part
    assert float(row["lower_resultant_load_kN_per_m"]) == data["lower"]["load_kN_per_m"]
    assert float(row["lower_vertical_load_kN_per_m"]) == pytest.approx(data["lower"]["extra"]["vertical_kN_per_m"])
    assert row["design_load_carried"] == "met"
    assert float(row["required_factor_of_safety_on_load"]) == 2.0
    assert row["required_factor_of_safety_on_load_met"] in ("met", "not met", "undecided")
    assert row["required_factor_of_safety_on_strength_met"] in ("met", "not met", "undecided")
    assert row["title"].startswith("'=")  # quoted so that a spreadsheet shows it as text


def test_report_command_rebuilds_the_same_report_without_solving(hostile_run):
    folder, out, _, _ = hostile_run
    original = (out / "report.html").read_bytes()
    (out / "report.html").unlink()
    done = bearbound("report", str(out), cwd=folder)
    assert done.returncode == 0, done.stderr
    assert (out / "report.html").read_bytes() == original
    assert "strength reduction" not in done.stderr  # nothing was solved


def test_report_command_refuses_a_missing_or_altered_run(hostile_run, tmp_path):
    folder, out, _, _ = hostile_run
    done = bearbound("report", str(tmp_path / "nowhere"), cwd=tmp_path)
    assert done.returncode == 2 and "\n" not in done.stderr.strip() and "Traceback" not in done.stderr
    altered = tmp_path / "altered"
    shutil.copytree(out, altered)
    (altered / "case.toml").write_text(HOSTILE_CASE.replace("width = 1.5", "width = 1.6"))
    done = bearbound("report", str(altered), cwd=tmp_path)
    assert done.returncode == 2 and "SHA-256" in done.stderr and "Traceback" not in done.stderr


def test_flags_skip_pictures_and_report_and_reruns_give_the_same_numbers(tmp_path):
    case = tmp_path / "clay.toml"
    case.write_text(PLAIN_CASE)
    first = bearbound("run", str(case), "--no-pictures", "--no-report", "--no-progress", "--out", "a", cwd=tmp_path)
    second = bearbound("run", str(case), "--no-pictures", "--out", "b", cwd=tmp_path)
    assert first.returncode == second.returncode == 0, first.stderr + second.stderr
    assert first.stderr == "" and "bearbound: bracket:" in second.stderr  # --no-progress prints nothing
    assert {p.name for p in (tmp_path / "a").iterdir()} == {"result.json", "case.toml", "fields.vtu",
                                                            "summary.csv"}
    assert {p.name for p in (tmp_path / "b").iterdir()} == {"result.json", "case.toml", "fields.vtu",
                                                            "summary.csv", "report.html"}
    a, b = (json.loads((tmp_path / d / "result.json").read_text()) for d in ("a", "b"))
    for side in ("lower", "upper"):
        assert a[side]["pressure_kPa"] == b[side]["pressure_kPa"]
    assert "factor_of_safety" not in a  # no design load, no factors
    # a weightless soil is allowed (verification uses it) but unusual: warned, never blocking
    assert any("layers[1].unit_weight = 0" in w for w in a["input_warnings"])
    assert "WARNING: layers[1].unit_weight = 0" in first.stdout
    page = (tmp_path / "b" / "report.html").read_text(encoding="utf-8")
    assert "Check these inputs" in page and "layers[1].unit_weight = 0" in page
    # [report] project and checker head the report, escaped like every text from the case file
    heading = page[page.index("<h1>"):page.index('<div class="result">')]
    assert "<strong>Project:</strong> Quay &lt;wall&gt; 7" in heading
    assert "<strong>Checked by:</strong> A. Checker" in heading
    assert (tmp_path / "a" / "fields.vtu").read_bytes() == (tmp_path / "b" / "fields.vtu").read_bytes()


def test_an_output_name_that_is_the_case_file_is_refused_before_solving(tmp_path):
    out = tmp_path / "site"
    out.mkdir()
    case = out / "summary.csv"  # a case file that happens to bear an output's name
    case.write_text(PLAIN_CASE)
    done = bearbound("run", str(case), "--out", str(out), cwd=tmp_path)
    assert done.returncode == 2 and "overwrite the case file" in done.stderr
    assert case.read_text() == PLAIN_CASE and {p.name for p in out.iterdir()} == {"summary.csv"}


def test_fields_vtu_round_trip_holds_both_bounds(tmp_path):
    import meshio

    case = parse_case({"footing": {"width": 2.0}, "layers": [
        {"name": "clay", "model": "tresca", "undrained_strength": 30.0, "unit_weight": 18.0}],
        "analysis": {"elements": 600, "mesh": "fixed"}})
    result = analyse(case)
    live = {"lower": bound_fields(result.lower), "upper": bound_fields(result.upper)}
    path = write_fields_vtu(live["lower"], live["upper"], tmp_path)
    mesh = meshio.read(path)
    assert [block.type for block in mesh.cells] == ["triangle", "triangle6"]
    assert not mesh.cell_sets  # no gmsh:bounding_entities or any other cell set
    bound_ids = [np.unique(a).tolist() for a in mesh.cell_data["bound"]]
    assert bound_ids == [[0], [1]]
    back = read_fields_vtu(path)
    for kind, fields in live.items():
        for name, values in fields.arrays.items():
            assert np.array_equal(back[kind].arrays[name], values), (kind, name)
        assert np.array_equal(back[kind].points[back[kind].triangles], fields.points[fields.triangles])
    # compression positive: under the footing the vertical stress is compressive
    sy = back["lower"].arrays["stress_kPa"][..., 1]
    assert np.median(sy) > 0
    lb = mesh.point_data["lb_sigma_1_kPa"]
    assert np.isnan(lb[len(live["lower"].triangles) * 3:]).all()  # lower-bound arrays are NaN on upper points


def chromium() -> str | None:
    return shutil.which("chromium") or shutil.which("chromium-browser")


@pytest.mark.skipif(chromium() is None, reason="chromium not installed: the report is not checked in a "
                                               "headless browser here (apt-get install chromium to run it)")
def test_report_renders_in_a_headless_browser_and_runs_nothing(hostile_run, tmp_path):
    from matplotlib.image import imread

    _, out, _, _ = hostile_run
    url = (out / "report.html").resolve().as_uri()
    common = [chromium(), "--headless", "--no-sandbox", "--disable-gpu", "--no-first-run",
              "--disable-background-networking", "--disable-component-update", "--disable-sync",
              f"--user-data-dir={tmp_path / 'profile'}"]
    shot = tmp_path / "report.png"
    done = subprocess.run(common + ["--window-size=1100,3000", f"--screenshot={shot}", url],
                          capture_output=True, text=True, timeout=120)
    assert shot.exists(), done.stderr[-2000:]
    image = imread(shot)
    assert image.shape[0] >= 3000 and image.shape[1] >= 1100
    assert image.std() > 0.1  # text, tables and pictures, not a blank page
    dom = subprocess.run(common + ["--dump-dom", url], capture_output=True, text=True, timeout=120).stdout
    title = dom[dom.index("<title>") + len("<title>"):dom.index("</title>")]
    assert title.startswith("=HYPERLINK")  # had the typed script run, the title would be 'PWNED'
    assert "&lt;script&gt;document.title" in dom  # it is shown as text
    parser = Attributes()
    parser.feed(dom)
    assert "script" not in parser.tags and not [n for n in parser.names if n.startswith("on")]


# A slope case (invented) with every input the report must restate: load inclination and
# eccentricity, design load, slope angle, setback and height, water table, saturated unit
# weight, dilation angle and partial factors. Solved once, coarse, without the CLI.
SLOPE_CASE = {
    "title": "Test strip beside a cutting",
    "footing": {"width": 1.0, "load_inclination": 10.0, "eccentricity": 0.1, "design_load": 90.0},
    "ground": {"slope_angle": 30.0, "crest_setback": 1.0, "slope_height": 2.0, "water_table": 0.5},
    "layers": [
        {"name": "sandy fill", "thickness": 1.0, "model": "mohr-coulomb", "cohesion": 8.0,
         "friction_angle": 28.0, "dilation_angle": 14.0, "unit_weight": 18.0, "saturated_unit_weight": 19.5},
        {"name": "stiff clay", "model": "tresca", "undrained_strength": 40.0, "unit_weight": 18.0},
    ],
    "factors": {"friction": 1.25, "cohesion": 1.3, "undrained_strength": 1.4, "load": 1.35},
    "analysis": {"elements": 500, "mesh": "fixed"},
}


def test_report_restates_slope_water_and_load_inputs_and_the_new_results(tmp_path):
    from solver.report import Run, build_html

    case = parse_case(SLOPE_CASE, name="cutting")
    data = analyse(case).to_dict()
    page = build_html(Run(out_dir=tmp_path, data=data, case=case), images={})
    inputs = page[page.index("Inputs (restated"):page.index("Certificates")]
    thin = "&#8201;"  # the thin space between a number and its unit
    for row in (f"load inclination</td><td>10.0{thin}degrees from vertical, positive toward the slope (+x)",
                f"eccentricity e of the load at the base</td><td>0.100{thin}m",
                f"design load (along the load's line of action)</td><td>90.0{thin}kN/m",
                f"slope angle</td><td>30.0{thin}degrees (1 vertical : 1.73 horizontal)",
                f"crest setback from the footing's edge</td><td>1.000{thin}m",
                f"slope height, crest to toe</td><td>2.000{thin}m",
                f"crest and toe (x from the footing centre)</td><td>1.500{thin}m and 4.964{thin}m",
                f"water table</td><td>0.50{thin}m below the ground surface beside the footing",
                f"pore pressure at the footing base</td><td>0.0{thin}kPa",
                f"14.00{thin}degrees (Davis reduction)", f"18.00{thin}kN/m³; saturated 19.50{thin}kN/m³",
                f"18.00{thin}kN/m³; saturated = unit weight", "<td>tresca</td>",
                "cohesion</td><td>1.30 (divides c&prime;)", "load</td><td>1.35 (the partial factor on the action: multiplies the design load)"):
        assert row in inputs, row
    # the results at collapse: V, H and M from each certified bound, and the pore pressure at the base
    bracket = page[page.index("The bracket"):page.index("Factor of safety")]
    for kind in ("lower", "upper"):
        extra = data[kind]["extra"]
        assert data[kind]["pressure_kPa"] is not None, data[kind]["status"]
        assert extra["horizontal_kN_per_m"] > 0 and extra["moment_kNm_per_m"] > 0
        for key in ("vertical_kN_per_m", "horizontal_kN_per_m", "moment_kNm_per_m"):
            assert f"<td class='n'>{extra[key]:,.1f}</td>" in bracket, (kind, key)
    assert "<th>H (kN/m)</th><th>M (kNm/m)</th>" in bracket
    assert "M about the footing's centre" in bracket
    assert f"Pore pressure at the footing base: <strong>0.0{thin}kPa</strong> (the water table is at or " \
           "below the base)" in bracket


def test_fields_vtu_keeps_the_velocity_jumps(tmp_path):
    """With velocity jumps the lines and their dissipation go into fields.vtu and come
    back (so `bearbound report` redraws the same mechanism picture)."""
    import meshio

    case = parse_case({"footing": {"width": 2.0}, "layers": [
        {"name": "clay", "model": "tresca", "undrained_strength": 30.0, "unit_weight": 18.0}],
        "analysis": {"elements": 400, "mesh": "fixed", "velocity_jumps": "all", "bounds": "upper"}})
    live = bound_fields(analyse(case).upper)
    assert len(live.arrays["jump_dissipation"]) > 0
    path = write_fields_vtu(None, live, tmp_path)
    mesh = meshio.read(path)
    assert [block.type for block in mesh.cells] == ["triangle6", "line"]
    assert [np.unique(a).tolist() for a in mesh.cell_data["bound"]] == [[1], [2]]
    back = read_fields_vtu(path)["upper"]
    for name in ("jump_ends", "jump_dissipation", "velocity", "dissipation"):
        assert np.array_equal(back.arrays[name], live.arrays[name]), name


def test_report_says_not_found_with_the_reason_and_prints_the_verdicts():
    # the case: the lower-bound search proved nothing beyond the main run's F = 1
    from solver.report import _safety

    case = parse_case({"footing": {"width": 1.5, "design_load": 200.0, "required_factor_of_safety_on_strength": 1.5},
                       "layers": [{"name": "clay", "model": "tresca", "undrained_strength": 60.0,
                                   "unit_weight": 19.0}]})
    reason = ("the lower bound was withheld at F = 2.142 (solver trouble or a failed certificate on this mesh, "
              "not a property of the ground); no F but the main run's F = 1 was proven, so no value is given")
    fos = {"design_load_kN_per_m": 200.0, "on_load": {"lower": 2.07, "upper": 2.13},
           "on_strength": {"lower": None, "upper": 2.134, "search": {"lower": "not found", "upper": "found"},
                           "reason": {"lower": reason, "upper": None}, "solves": 5, "tolerance": 0.01,
                           "notes": [reason], "evaluations": {}},
           "checks": [{"check": "design load carried", "outcome": "met", "verdict": "the design load 200.0 kN/m is carried"},
                      {"check": "required factor of safety on strength", "required": 1.5, "outcome": "undecided",
                       "verdict": "required factor of safety on strength 1.5: undecided by the bracket [none, 2.134]"}]}
    page = _safety({"factor_of_safety": fos, "footing_width_m": 1.5}, case)
    assert "<td class='n'>not found</td>" in page and "1.000" not in page
    assert "withheld at F = 2.142" in page
    assert page.count('class="verdict"') == 2 and "undecided by the bracket" in page


# -- what the report puts first ---------------------------------------------------------

def test_result_box_opens_the_report_with_the_bracket_and_every_caveat(hostile_run):
    _, out, _, _ = hostile_run
    data = json.loads((out / "result.json").read_text())
    page = (out / "report.html").read_text(encoding="utf-8")
    box = page[page.index('<div class="result">'):page.index('<div class="caution">')]
    assert page.index('<div class="result">') < page.index("<h2>")  # before every section
    assert f"{data['lower']['pressure_kPa']:.1f} to {data['upper']['pressure_kPa']:.1f}" in box
    assert 'class="verdict"' in box and "is carried" in box  # the design load's verdict beside it
    # 600 triangles on one fixed mesh: the gap is wider than the 1 % target, and the report says so
    assert data["gap_percent"] > 1 and any("wider than the target 1 %" in c for c in data["caveats"])
    for caveat in data["caveats"]:
        assert esc(caveat) in box
    subtitle = page[page.index('<p class="sub">'):page.index("</p>", page.index('<p class="sub">'))]
    assert "rigorous" not in subtitle and "caveat" in subtitle


def test_subtitle_says_rigorous_only_without_caveats(hostile_run):
    from solver.report import build_html, load_run

    _, out, _, _ = hostile_run
    run = load_run(out)
    run.data = {**run.data, "caveats": []}
    page = build_html(run, images={})
    assert "(rigorous lower and upper bounds)" in page and "No caveats" in page


def test_caveats_name_everything_that_limits_trust():
    from solver.result import caveats

    sand = {"name": "sand", "model": "mohr-coulomb", "friction_angle": 32.0, "unit_weight": 19.0, "thickness": 2.0}
    clay = {"name": "clay", "model": "tresca", "undrained_strength": 40.0, "unit_weight": 18.0}
    plain = parse_case({"footing": {"width": 2.0}, "layers": [sand, clay]})
    good = {"lower": {"pressure_kPa": 300.0, "extra": {"field_at_edge": []}},
            "upper": {"pressure_kPa": 302.0, "extra": {"field_at_edge": []}}, "gap_percent": 0.67,
            "pore_pressure_at_base_kPa": 0.0, "refinement": {"mesh": "fixed", "elements": 600}}
    assert caveats(plain, good) == []
    davis = parse_case({"footing": {"width": 2.0}, "layers": [{**sand, "dilation_angle": 5.0}, clay]})
    assert ["Davis" in c and "not rigorous bounds for the soil as given" in c for c in caveats(davis, good)] == [True]
    at_edge = {**good, "upper": {"pressure_kPa": 302.0, "extra": {"field_at_edge": ["right", "base"]}}}
    assert caveats(plain, at_edge) == ["the upper bound's mechanism moves at the right and base edge of its model: "
                                       "the model's edge, not the soil, may limit it, so it may be high"]
    wet = {**good, "pore_pressure_at_base_kPa": 9.81}
    assert caveats(plain, wet) == ["the water table is above the footing base: the pressures are effective; the "
                                   "total contact pressure adds the pore pressure at the base, 9.8 kPa (total: "
                                   "309.8 to 311.8 kPa)"]
    withheld = {**good, "upper": {"pressure_kPa": None, "status": "withheld: certificate failed"}, "gap_percent": None}
    assert caveats(plain, withheld) == ["the upper bound is withheld (withheld: certificate failed): no bracket"]
    one_side = {**good, "upper": None, "gap_percent": None}
    assert "not asked for" in caveats(plain, one_side)[0]
    missed = {**good, "gap_percent": 1.4, "refinement": {"mesh": "adaptive", "target_gap_percent": 1.0, "steps": 3,
                                                         "reached": False, "why": "the time limit"}}
    assert caveats(plain, missed) == ["the target gap of 1 % was not reached: gap 1.40 % after 3 steps, stopped by "
                                      "the time limit"]
    wide = {**good, "gap_percent": 3.2}
    assert "wider than the target 1 %" in caveats(plain, wide)[0]


def test_run_date_project_and_checker_in_the_report(hostile_run):
    from solver.report import build_html, load_run, run_date_text
    from solver.model import ReportInfo

    _, out, _, _ = hostile_run
    data = json.loads((out / "result.json").read_text())
    made = datetime.datetime.fromisoformat(data["run_date"])
    assert made.tzinfo is not None and abs((datetime.datetime.now(made.tzinfo) - made).total_seconds()) < 3600
    page = (out / "report.html").read_text(encoding="utf-8")
    assert esc(run_date_text(data["run_date"])) in page
    assert "<strong>Project:</strong> <span class=\"small\">not given</span>" in page  # the case gives none
    run = load_run(out)
    run.case = replace(run.case, report=ReportInfo(project="Berth 4 <crane rail>", checked_by="J. Doe"))
    page = build_html(run, images={})
    assert "Berth 4 &lt;crane rail&gt;" in page and "Checked by</td><td>J. Doe" in page


def test_certificates_read_as_words_with_their_limits(hostile_run):
    _, out, _, _ = hostile_run
    page = (out / "report.html").read_text(encoding="utf-8")
    data = json.loads((out / "result.json").read_text())
    section = page[page.index("<h2>Certificates</h2>"):page.index("<h2>Mesh and solver statistics</h2>")]
    cert = data["lower"]["certificate"]
    assert cert["limits"]["equilibrium_kPa"] == cert["tolerance_kPa"]
    words = (f"{cert['equilibrium_kPa']:.3g} kPa, allowed {cert['tolerance_kPa']:.3g} kPa (1e-6 &times; the stress "
             f"scale, {cert['stress_scale_kPa']:.3g} kPa): passes")
    assert "equilibrium with self-weight in every triangle" in section and words in section
    assert "flow rule where it is a cone" in section
    assert "what the solver's own stopping test allows" in section
    assert section.count(": passes") == len(cert["limits"]) + len(data["upper"]["certificate"]["limits"])
    for raw in ("equilibrium_kPa", "tolerance_kPa", "flow_rule", "load_mismatch", "{'"):
        assert raw not in section, raw


def test_model_caption_names_only_what_the_model_has():
    from solver.report import model_caption

    dry = parse_case({"footing": {"width": 1.0}, "layers": [
        {"name": "clay", "model": "tresca", "undrained_strength": 30.0, "unit_weight": 18.0}]})
    assert model_caption(dry, "lower") == ("The model: level ground, the layer with its parameters, the footing "
                                           "with its load, and the mesh of the lower bound.")
    wet = parse_case(SLOPE_CASE)
    caption = model_caption(wet, None)
    assert caption == ("The model: the ground profile with the slope's crest and toe, the layers with their "
                       "parameters, the water table, and the footing with its inclined and eccentric load.")


def test_printed_report_numbers_its_pages_and_forces_no_page_break(hostile_run):
    _, out, _, _ = hostile_run
    page = (out / "report.html").read_text(encoding="utf-8")
    assert '@bottom-right { content: "page " counter(page) " of " counter(pages)' in page
    assert "page-break-before: always" not in page and "break-before: page" not in page
    assert page.count("<thead>") >= 3  # long tables repeat their header on each page they run over


# -- the whole command, as the terminal shows it ------------------------------------------

def test_whole_wall_time_is_split_the_same_in_result_json_terminal_and_report(hostile_run):
    from solver.result import wall_time_line

    folder, out, _, done = hostile_run
    split = json.loads((out / "result.json").read_text())["wall_time_s"]
    assert list(split) == ["bounds", "strength_search", "pictures", "report", "other", "total"]
    assert all(split[k] > 0 for k in split)  # this run searched, drew and wrote a report
    assert sum(split[k] for k in split if k != "total") == pytest.approx(split["total"], abs=0.01)
    # the whole command: more than the bounds and the search, less than the time seen from outside
    elapsed = float((folder / "elapsed_s.txt").read_text())
    assert split["bounds"] + split["strength_search"] < split["total"] <= elapsed
    assert elapsed - split["total"] < 5.0  # only the interpreter's start is outside the clock
    line = wall_time_line(split)
    assert f"wall time   {line}" in done.stdout
    assert esc(line) in (out / "report.html").read_text(encoding="utf-8")
    row = next(csv.DictReader((out / "summary.csv").open(encoding="utf-8")))
    assert float(row["wall_time_s"]) == split["total"] and float(row["bounds_wall_time_s"]) < split["total"]


def test_terminal_shows_the_bracket_first_then_the_search_and_lists_every_file(hostile_run):
    folder, out, _, done = hostile_run
    lines = done.stderr.splitlines()
    assert "\r" not in done.stderr + done.stdout  # not a terminal: lines only, no status line redrawn
    assert all(line.startswith("bearbound: ") for line in lines)
    bracket = next(i for i, line in enumerate(lines) if line.startswith("bearbound: bracket: lower "))
    search = [i for i, line in enumerate(lines) if "strength reduction" in line]
    assert search and bracket < min(search)  # the bracket is printed as soon as it is known
    assert lines.index("bearbound: drawing the pictures") > max(search)
    listed = done.stdout[done.stdout.index("files written:"):].splitlines()[1:-1]
    paths = [folder / line.strip() for line in listed]
    assert sorted(p.name for p in paths) == sorted(p.name for p in out.iterdir())  # every file, each once
    assert all(p.is_file() for p in paths) and paths[0].name == "report.html"


def test_a_circular_footing_is_reported_in_kN_over_its_area(tmp_path):
    from solver.report import Run, build_html

    case = parse_case({"footing": {"width": 4.0, "shape": "circular"}, "layers": [
        {"name": "clay", "model": "tresca", "undrained_strength": 30.0, "unit_weight": 18.0}],
        "analysis": {"elements": 300, "mesh": "fixed"}}, name="tank")
    data = analyse(case).to_dict()
    page = build_html(Run(out_dir=tmp_path, data=data, case=case), images={})
    assert "Circular footing: collapse load bracketed" in page and "Strip footing" not in page
    area = np.pi * 4.0 ** 2 / 4
    for kind in ("lower", "upper"):
        assert data[kind]["load_kN"] == pytest.approx(data[kind]["pressure_kPa"] * area)
    box = page[page.index('<div class="result">'):page.index('<div class="caution">')]
    bracket = page[page.index("<h2>The bracket</h2>"):page.index("<h2>Factor of safety</h2>")]
    loads = f"{data['lower']['load_kN']:,.1f} to {data['upper']['load_kN']:,.1f} kN"
    assert loads in box and loads in bracket and "kN/m" not in box
    assert f"<td class='n'>{data['lower']['load_kN']:,.1f}</td>" in bracket and "<th>load (kN)</th>" in bracket
    # no per-metre columns, no x-direction wording and no "over B" for a circle
    assert "kN/m" not in bracket and "V and H" not in bracket and "&pi; B&sup2;/4 (B the diameter)" in bracket
    hand = page[page.index("<h2>Hand methods beside the bracket</h2>"):]
    assert "collapse load over the area &pi; B&sup2;/4)" in hand[:600]
    inputs = page[page.index("<h2>Inputs"):]
    assert "toward +x" not in inputs[:inputs.index("</table>")] and "central and vertical" in inputs


def test_a_circles_design_load_is_stated_in_kN_and_as_kPa_over_its_area_everywhere(tmp_path):
    """A tank's design load is its whole load in kN: the report, the terminal and summary.csv give
    it with that unit and with its pressure over pi B^2/4, and never put a kN figure under kN/m."""
    from solver.cli import format_summary
    from solver.export import summary_row
    from solver.report import Run, build_html
    from solver.safety import factor_of_safety

    case = parse_case({"footing": {"width": 4.0, "shape": "circular", "design_load": 1500.0,
                                   "required_factor_of_safety_on_load": 2.0},
                       "factors": {"undrained_strength": 1.4, "load": 1.35},
                       "layers": [{"name": "clay", "model": "tresca", "undrained_strength": 30.0,
                                   "unit_weight": 18.0}],
                       "analysis": {"elements": 300, "mesh": "fixed"}}, name="tank")
    result = analyse(case)
    result.factor_of_safety = factor_of_safety(case, result)
    data = result.to_dict()
    pressure = 1500.0 / (np.pi * 4.0 ** 2 / 4)
    page = build_html(Run(out_dir=tmp_path, data=data, case=case), images={})
    box = page[page.index('<div class="result">'):page.index('<div class="caution">')]
    safety = page[page.index("<h2>Factor of safety</h2>"):page.index("<h2>", page.index("<h2>Factor of safety</h2>") + 5)]
    for part in (box, safety):
        assert "<strong>1,500.0 kN</strong>, the whole vertical load on the circular footing" in part
        assert f"<strong>{pressure:,.1f} kPa</strong> over its area &pi; B&sup2;/4 = 12.57" in part
        assert "kN/m" not in part
    assert "<th>collapse load (kN)</th>" in safety and "2,025.0&#8201;kN" in safety  # the action, 1.35 x 1500 kN
    assert "design load (the whole vertical load on the circular footing)" in page
    summary = format_summary(result)
    assert f"design load 1500.0 kN (the whole vertical load on the circular footing: {pressure:.1f} kPa" in summary
    assert "VERDICT: the design load 1500.0 kN (the whole vertical load" in summary
    row = summary_row(data)
    assert row["footing_shape"] == "circular" and row["design_load_kN"] == 1500.0
    assert row["design_pressure_kPa"] == pytest.approx(pressure)
    assert row["lower_load_kN"] == data["lower"]["load_kN"] and row["design_action_kN"] == pytest.approx(2025.0)
    assert row["design_resistance_lower_kN"] is not None
    for column in ("design_load_kN_per_m", "lower_vertical_load_kN_per_m", "lower_resultant_load_kN_per_m",
                   "design_action_kN_per_m", "design_resistance_lower_kN_per_m"):
        assert row[column] is None, column  # a kN/m column never holds a circle's kN
