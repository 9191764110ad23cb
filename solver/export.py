"""Exports beside result.json: fields.vtu (ParaView), summary.csv (spreadsheets) and a
byte-for-byte copy of the case file (case.toml), so that a finished run can be
reported again without solving (:mod:`solver.report`).

fields.vtu holds both bounds over one concatenated point array, as two cell
blocks: linear triangles of the lower bound (each triangle with its own three
points, so the stress may jump across every edge as the stress field does) and
6-node triangles of the upper bound, and, when the upper bound lets the
velocity jump across edges, a third block of lines, one per jump (its two
ends), carrying ``ub_jump_dissipation_kN_per_m``. The cell array ``bound`` is 0
on the lower-bound block, 1 on the upper-bound block and 2 on the jump lines
(ParaView: Threshold on it); an array that belongs to one block is NaN on the
others' points and cells.
Stresses are written compression positive, as the trade reads them.

A circular footing's fields are written as solved, on the half section r >= 0 through
its axis and not mirrored: x is the radius r, y the height z, ``lb_sigma_x_kPa``,
``lb_sigma_y_kPa``, ``lb_tau_xy_kPa`` are sigma_r, sigma_z, tau_rz, ``lb_sigma_1_kPa``
and ``lb_sigma_3_kPa`` the principal stresses in the r-z plane, ``lb_sigma_theta_kPa``
the hoop stress (NaN for a strip) and ``ub_velocity`` (u_r, u_z, 0).

Every file is written to a temporary file in the same folder and renamed.
"""
from __future__ import annotations

import csv
import io
import os
import tempfile
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from .case import CaseError, open_regular, shown

LOWER_BLOCK, UPPER_BLOCK, JUMP_BLOCK = 0, 1, 2
FIELDS_FILE, SUMMARY_FILE, CASE_COPY = "fields.vtu", "summary.csv", "case.toml"
PICTURE_NAMES = ("model", "mechanism", "stress", "contact")
OUTPUT_NAMES = ("result.json", FIELDS_FILE, SUMMARY_FILE, "report.html", "preview.png") + tuple(
    f"{name}.{ext}" for name in PICTURE_NAMES for ext in ("png", "svg"))  # the case file must be none of these
SITE_COPY = "site"  # a drawn site's file is copied as site.geo / site.msh
PREVIEW_FILE = "preview.png"  # `bearbound preview`, into the run's folder; a run replaces it with the rest
RUN_FILES = OUTPUT_NAMES + (CASE_COPY, f"{SITE_COPY}.geo", f"{SITE_COPY}.msh")  # every file a run writes
FOLDER_FILES = RUN_FILES + (PREVIEW_FILE,)  # every file bearbound leaves in a run's folder


@dataclass
class BoundFields:
    """One bound's mesh and fields as pictures and exports use them (compression positive).

    ``points`` (n, 2) m; ``triangles`` (n_el, 3) or (n_el, 6) indices into ``points``;
    ``layer`` (n_el,) index into ``Case.layers_below_base()``. Lower bound:
    ``stress_kPa`` (n_el, 3 nodes, 3) as (sigma_x, sigma_y, tau_xy) compression
    positive, ``utilisation`` (n_el, 3). Upper bound: ``velocity`` (n, 2) per unit
    footing velocity, ``dissipation`` (n_el,) kN/m^3 per unit footing velocity; with
    velocity jumps also ``jump_ends`` (n_jump, 2, 2) m and ``jump_dissipation`` (n_jump,)
    kN/m per unit footing velocity (each jump's whole dissipation).
    """

    kind: str
    points: np.ndarray
    triangles: np.ndarray
    layer: np.ndarray
    arrays: dict = field(default_factory=dict)

    @property
    def n_elements(self) -> int:
        return len(self.triangles)


def bound_fields(bound) -> BoundFields | None:
    """BoundFields from a solved BoundResult (None when it has no solution fields)."""
    if bound is None or bound.mesh is None or not bound.fields:
        return None
    mesh = bound.mesh
    if bound.kind == "lower":
        arrays = {"stress_kPa": -np.asarray(bound.fields["stress"]),
                  "utilisation": np.asarray(bound.fields["utilisation"])}
        if "hoop_kPa" in bound.fields:  # a circular footing's hoop stress
            arrays["hoop_kPa"] = -np.asarray(bound.fields["hoop_kPa"])
        return BoundFields("lower", mesh.points, mesh.triangles, mesh.layer, arrays)
    arrays = {"velocity": np.asarray(bound.fields["velocity"]),
              "dissipation": np.asarray(bound.fields["dissipation_density"])}
    if "jump_dissipation" in bound.fields:
        arrays["jump_ends"] = np.asarray(bound.fields["jump_ends"])
        arrays["jump_dissipation"] = np.asarray(bound.fields["jump_dissipation"])
    return BoundFields("upper", mesh.points, mesh.triangles, mesh.layer, arrays)


def principal_stresses(stress: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Major and minor principal stresses and the angle of the major one from x (radians).

    Works on (..., 3) arrays of (sigma_x, sigma_y, tau_xy), whatever the sign convention:
    "major" is the algebraically largest.

    >>> s1, s3, angle = principal_stresses(np.array([100.0, 40.0, 0.0]))
    >>> float(s1), float(s3), float(angle)
    (100.0, 40.0, 0.0)
    """
    sx, sy, txy = stress[..., 0], stress[..., 1], stress[..., 2]
    centre, radius = (sx + sy) / 2, np.hypot((sx - sy) / 2, txy)
    return centre + radius, centre - radius, 0.5 * np.arctan2(2 * txy, sx - sy)


# -- atomic writing -------------------------------------------------------------

def _umask() -> int:
    mask = os.umask(0)
    os.umask(mask)
    return mask


def _publish(tmp: str, path: Path) -> None:
    """Give the temporary file the usual permissions (mkstemp makes it private), then rename."""
    os.chmod(tmp, 0o666 & ~_umask())
    os.replace(tmp, path)


def write_bytes_atomic(path: Path, data: bytes) -> None:
    """Write to a temporary file in the same folder, then rename over the target."""
    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(dir=path.parent, prefix=f".{path.name}.", suffix=".tmp")
    try:
        with os.fdopen(fd, "wb") as handle:
            handle.write(data)
        _publish(tmp, path)
    except BaseException:
        Path(tmp).unlink(missing_ok=True)
        raise


def outputs_overwriting(case_path: Path, out_dir: Path) -> Path | None:
    """The output in ``out_dir`` that is the case file itself, if any (then nothing may be written)."""
    case_path = Path(case_path)
    for name in OUTPUT_NAMES:
        target = Path(out_dir) / name
        if target.exists() and case_path.exists() and os.path.samefile(target, case_path):
            return target
        if target.resolve() == case_path.resolve():
            return target
    return None


def read_regular_bytes(path: Path) -> bytes:
    """A file's bytes, refusing a FIFO, device or socket put in its place (it would block)."""
    with open_regular(path) as stream:
        return stream.read()


def save_case_copy(case_path: Path, sha256: str, out_dir: Path) -> Path:
    """Copy the case file's bytes to out_dir/case.toml, after checking they still hash to
    ``sha256`` (the file read for the run). The case file itself is never written: when
    it already is out_dir/case.toml nothing is done."""
    import hashlib

    target = Path(out_dir) / CASE_COPY
    source = Path(case_path)
    if target.exists() and os.path.samefile(target, source):
        return target
    data = read_regular_bytes(source)
    if hashlib.sha256(data).hexdigest() != sha256:
        raise CaseError(f"{shown(source, 200)}: the case file changed during the run; run the case again")
    write_bytes_atomic(target, data)
    return target


def save_site_copy(geometry, out_dir: Path) -> Path | None:
    """Copy a drawn site's file into the run folder (site.geo or site.msh), checked
    against the hash it had when the case was read, so the report can be rebuilt."""
    import hashlib

    if geometry is None:
        return None
    source = Path(geometry.file)
    data = read_regular_bytes(source)
    if hashlib.sha256(data).hexdigest() != geometry.sha256:
        raise CaseError(f"{shown(source, 200)}: the site file changed during the run; run the case again")
    target = Path(out_dir) / (SITE_COPY + source.suffix.lower())
    write_bytes_atomic(target, data)
    return target


# -- fields.vtu -------------------------------------------------------------------

def _nan(shape) -> np.ndarray:
    return np.full(shape, np.nan)


def fields_mesh(lower: BoundFields | None, upper: BoundFields | None):
    """The meshio.Mesh written to fields.vtu (see the module docstring)."""
    import meshio

    parts, cells = [], []
    offset = 0
    point_data = {name: [] for name in ("lb_sigma_x_kPa", "lb_sigma_y_kPa", "lb_tau_xy_kPa",
                                        "lb_sigma_1_kPa", "lb_sigma_3_kPa", "lb_utilisation",
                                        "lb_sigma_theta_kPa", "ub_velocity", "ub_speed")}
    cell_data = {name: [] for name in ("bound", "layer", "lb_utilisation_max", "ub_dissipation_kN_per_m3",
                                       "ub_jump_dissipation_kN_per_m")}
    if lower is not None:
        n = lower.n_elements
        pts = lower.points[lower.triangles].reshape(-1, 2)  # each triangle its own points
        stress = lower.arrays["stress_kPa"].reshape(-1, 3)
        s1, s3, _ = principal_stresses(stress)
        parts.append(pts)
        cells.append(("triangle", np.arange(3 * n).reshape(n, 3) + offset))
        values = {"lb_sigma_x_kPa": stress[:, 0], "lb_sigma_y_kPa": stress[:, 1], "lb_tau_xy_kPa": stress[:, 2],
                  "lb_sigma_1_kPa": s1, "lb_sigma_3_kPa": s3,
                  "lb_utilisation": lower.arrays["utilisation"].reshape(-1),
                  "lb_sigma_theta_kPa": lower.arrays["hoop_kPa"].reshape(-1) if "hoop_kPa" in lower.arrays
                  else _nan(3 * n),  # a circle's hoop stress; none for a strip
                  "ub_velocity": _nan((3 * n, 3)), "ub_speed": _nan(3 * n)}
        for name in point_data:
            point_data[name].append(values[name])
        cell_data["bound"].append(np.full(n, LOWER_BLOCK))
        cell_data["layer"].append(np.asarray(lower.layer))
        cell_data["lb_utilisation_max"].append(lower.arrays["utilisation"].max(axis=1))
        cell_data["ub_dissipation_kN_per_m3"].append(_nan(n))
        cell_data["ub_jump_dissipation_kN_per_m"].append(_nan(n))
        offset += len(pts)
    if upper is not None:
        n, m = upper.n_elements, len(upper.points)
        velocity = upper.arrays["velocity"]
        parts.append(upper.points)
        cells.append(("triangle6", np.asarray(upper.triangles) + offset))
        values = {name: _nan(m) for name in point_data}
        values["ub_velocity"] = np.column_stack([velocity, np.zeros(m)])
        values["ub_speed"] = np.hypot(velocity[:, 0], velocity[:, 1])
        for name in point_data:
            point_data[name].append(values[name])
        cell_data["bound"].append(np.full(n, UPPER_BLOCK))
        cell_data["layer"].append(np.asarray(upper.layer))
        cell_data["lb_utilisation_max"].append(_nan(n))
        cell_data["ub_dissipation_kN_per_m3"].append(np.asarray(upper.arrays["dissipation"]))
        cell_data["ub_jump_dissipation_kN_per_m"].append(_nan(n))
        offset += m
        if "jump_ends" in upper.arrays:  # one line per velocity jump, two points of its own
            ends = np.asarray(upper.arrays["jump_ends"]).reshape(-1, 2)
            j = len(ends) // 2
            parts.append(ends)
            cells.append(("line", np.arange(2 * j).reshape(j, 2) + offset))
            for name in point_data:
                point_data[name].append(_nan((2 * j, 3) if name == "ub_velocity" else 2 * j))
            cell_data["bound"].append(np.full(j, JUMP_BLOCK))
            cell_data["layer"].append(np.full(j, -1))
            cell_data["lb_utilisation_max"].append(_nan(j))
            cell_data["ub_dissipation_kN_per_m3"].append(_nan(j))
            cell_data["ub_jump_dissipation_kN_per_m"].append(np.asarray(upper.arrays["jump_dissipation"]))
    if not parts:
        return None
    points = np.vstack(parts)
    points = np.column_stack([points, np.zeros(len(points))])
    return meshio.Mesh(points, cells, point_data={k: np.concatenate(v) for k, v in point_data.items()},
                       cell_data={k: [np.asarray(a) for a in v] for k, v in cell_data.items()})


def write_fields_vtu(lower: BoundFields | None, upper: BoundFields | None, out_dir: Path) -> Path | None:
    """Write out_dir/fields.vtu (None, and nothing written, when neither bound has fields)."""
    import meshio

    mesh = fields_mesh(lower, upper)
    if mesh is None:
        return None
    path = Path(out_dir) / FIELDS_FILE
    path.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(dir=path.parent, prefix=f".{path.name}.", suffix=".vtu")
    os.close(fd)
    try:
        meshio.write(tmp, mesh, file_format="vtu")
        _publish(tmp, path)
    except BaseException:
        Path(tmp).unlink(missing_ok=True)
        raise
    return path


def read_fields_vtu(path: Path) -> dict[str, BoundFields]:
    """Read fields.vtu back into BoundFields by bound ("lower", "upper"), those present."""
    import meshio

    mesh = meshio.read(path)
    out = {}
    jumps = None
    for index, block in enumerate(mesh.cells):
        if block.type == "line" and "ub_jump_dissipation_kN_per_m" in mesh.cell_data:
            jumps = (mesh.points[block.data][..., :2], np.asarray(mesh.cell_data["ub_jump_dissipation_kN_per_m"][index]))
            continue
        kind = "lower" if block.type == "triangle" else "upper" if block.type == "triangle6" else None
        if kind is None:
            continue  # nothing else is written; a cell set from elsewhere is not ours
        used = np.unique(block.data)
        first, last = int(used.min()), int(used.max()) + 1
        points = mesh.points[first:last, :2]
        triangles = block.data - first
        layer = np.asarray(mesh.cell_data["layer"][index]).astype(int)
        rows = slice(first, last)
        if kind == "lower":
            pd = mesh.point_data
            stress = np.column_stack([pd["lb_sigma_x_kPa"][rows], pd["lb_sigma_y_kPa"][rows],
                                      pd["lb_tau_xy_kPa"][rows]])
            arrays = {"stress_kPa": stress[triangles], "utilisation": pd["lb_utilisation"][rows][triangles]}
        else:
            arrays = {"velocity": mesh.point_data["ub_velocity"][rows, :2],
                      "dissipation": np.asarray(mesh.cell_data["ub_dissipation_kN_per_m3"][index])}
        out[kind] = BoundFields(kind, points, triangles, layer, arrays)
    if jumps is not None and "upper" in out:
        out["upper"].arrays["jump_ends"], out["upper"].arrays["jump_dissipation"] = jumps
    return out


# -- summary.csv ------------------------------------------------------------------

SUMMARY_COLUMNS = (
    "case", "title", "footing_shape", "footing_width_m",
    "lower_pressure_kPa", "upper_pressure_kPa", "gap_percent",
    "lower_vertical_load_kN_per_m", "upper_vertical_load_kN_per_m",
    "lower_resultant_load_kN_per_m", "upper_resultant_load_kN_per_m",
    "lower_load_kN", "upper_load_kN",
    "lower_status", "upper_status",
    "design_load_kN_per_m", "design_load_kN", "design_pressure_kPa", "design_load_carried",
    "factor_of_safety_on_load_lower", "factor_of_safety_on_load_upper",
    "factor_of_safety_on_strength_lower", "factor_of_safety_on_strength_upper",
    "factor_of_safety_on_strength_solves", "factor_of_safety_on_strength_note",
    "required_factor_of_safety_on_load", "required_factor_of_safety_on_load_met",
    "required_factor_of_safety_on_strength", "required_factor_of_safety_on_strength_met",
    "design_action_kN_per_m", "design_resistance_lower_kN_per_m", "design_resistance_upper_kN_per_m",
    "design_action_kN", "design_resistance_lower_kN", "design_resistance_upper_kN",
    "design_resistance_covers_action", "caveats", "input_warnings",
    "lower_elements", "upper_elements", "wall_time_s", "bounds_wall_time_s", "run_date", "software_version",
    "case_sha256",
)


def summary_row(data: dict) -> dict:
    """The one row of summary.csv from the result.json dict.

    Each column holds what its name says: ``*_pressure_kPa`` the vertical component of
    the collapse load over B (a circle: over pi B^2/4), ``*_vertical_load_kN_per_m`` that
    component, ``*_resultant_load_kN_per_m`` the collapse load along the load's line of
    action (what the design load is compared with); ``*_met`` columns hold met / not met /
    undecided. A column's unit is in its name and it never holds the other shape's: a
    strip fills the ``*_kN_per_m`` columns (per m run), a circle the ``*_kN`` ones (the
    whole footing); the others stay empty.
    """
    lower, upper = data.get("lower") or {}, data.get("upper") or {}
    fos = data.get("factor_of_safety") or {}
    load, strength = fos.get("on_load") or {}, fos.get("on_strength") or {}
    partial = fos.get("partial_factors") or {}
    B, shape = data["footing_width_m"], data.get("footing_shape", "strip")
    # result.json's load keys name their unit (a circle's end in _kN), so each lands in its own columns
    resistance = partial.get("design_resistance_kN_per_m") or {}
    resistance_kN = partial.get("design_resistance_kN") or {}

    def vertical_per_m(bound: dict) -> float | None:  # a strip's only: B times a circle's pressure is no load
        return None if bound.get("pressure_kPa") is None or shape != "strip" else bound["pressure_kPa"] * B

    checks = {check["check"]: check for check in fos.get("checks") or []}
    required = {kind: checks.get(f"required factor of safety on {kind}") or {} for kind in ("load", "strength")}
    reasons = strength.get("reason") or {}
    note = "; ".join(f"{kind}: {(strength.get('search') or {}).get(kind)}, {reasons[kind]}"
                     for kind in ("lower", "upper") if reasons.get(kind))
    return {
        "case": data["case"]["name"], "title": data["title"], "footing_shape": shape, "footing_width_m": B,
        "lower_pressure_kPa": lower.get("pressure_kPa"), "upper_pressure_kPa": upper.get("pressure_kPa"),
        "gap_percent": data.get("gap_percent"),
        "lower_vertical_load_kN_per_m": vertical_per_m(lower), "upper_vertical_load_kN_per_m": vertical_per_m(upper),
        "lower_resultant_load_kN_per_m": lower.get("load_kN_per_m"),
        "upper_resultant_load_kN_per_m": upper.get("load_kN_per_m"),
        "lower_load_kN": lower.get("load_kN"), "upper_load_kN": upper.get("load_kN"),
        "lower_status": lower.get("status", "not asked for"), "upper_status": upper.get("status", "not asked for"),
        "design_load_kN_per_m": fos.get("design_load_kN_per_m"), "design_load_kN": fos.get("design_load_kN"),
        "design_pressure_kPa": fos.get("design_pressure_kPa"),
        "design_load_carried": (checks.get("design load carried") or {}).get("outcome"),
        "factor_of_safety_on_load_lower": load.get("lower"), "factor_of_safety_on_load_upper": load.get("upper"),
        "factor_of_safety_on_strength_lower": strength.get("lower"),
        "factor_of_safety_on_strength_upper": strength.get("upper"),
        "factor_of_safety_on_strength_solves": strength.get("solves"),
        "factor_of_safety_on_strength_note": note or None,
        "required_factor_of_safety_on_load": required["load"].get("required"),
        "required_factor_of_safety_on_load_met": required["load"].get("outcome"),
        "required_factor_of_safety_on_strength": required["strength"].get("required"),
        "required_factor_of_safety_on_strength_met": required["strength"].get("outcome"),
        "design_action_kN_per_m": partial.get("action_kN_per_m"), "design_action_kN": partial.get("action_kN"),
        "design_resistance_lower_kN_per_m": resistance.get("lower"),
        "design_resistance_upper_kN_per_m": resistance.get("upper"),
        "design_resistance_lower_kN": resistance_kN.get("lower"), "design_resistance_upper_kN": resistance_kN.get("upper"),
        "design_resistance_covers_action": {True: "yes", False: "no"}.get(partial.get("covered"),
                                                                           "" if not partial else "undecided"),
        "caveats": "; ".join(data.get("caveats") or []) or None,
        "input_warnings": "; ".join(data.get("input_warnings") or []) or None,
        "lower_elements": lower.get("elements"), "upper_elements": upper.get("elements"),
        # the whole command (the bounds alone for a result made without it, through the Python API)
        "wall_time_s": (data.get("wall_time_s") or {}).get("total", data["timing"].get("total_s")),
        "bounds_wall_time_s": data["timing"].get("total_s"), "run_date": data.get("run_date"),
        "software_version": data["software"]["version"], "case_sha256": data["case"]["sha256"],
    }


def _cell(value) -> str:
    """A CSV cell; text that a spreadsheet would run as a formula gets a leading quote."""
    if value is None:
        return ""
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, float):
        return repr(value)
    text = str(value)
    return "'" + text if text[:1] in ("=", "+", "-", "@", "\t", "\r") else text


def write_summary_csv(data: dict, out_dir: Path) -> Path:
    """Write out_dir/summary.csv: a header and one row (see SUMMARY_COLUMNS)."""
    row = summary_row(data)
    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\n")
    writer.writerow(SUMMARY_COLUMNS)
    writer.writerow([_cell(row[name]) for name in SUMMARY_COLUMNS])
    path = Path(out_dir) / SUMMARY_FILE
    write_bytes_atomic(path, buffer.getvalue().encode("utf-8"))
    return path
