"""Result: the bracket and everything needed to trust it, as plain data, and
its atomic writing to out/<case>/result.json.

Reports use the trade's convention: pressures and loads compression positive.
"""
from __future__ import annotations

import contextlib
import json
import math
import os
import tempfile
import time
from collections.abc import Iterator
from dataclasses import dataclass, field, fields as dataclass_fields
from pathlib import Path

from . import __version__

def figure(value: float, decimals: int = 1, thousands: bool = False) -> str:
    """A number as people read it: ``decimals`` fixed decimals while it is under a billion
    in size, else four significant digits (a fixed format would print 309 digits for 1e308).

    >>> figure(1234.5678, 2), figure(1e308), figure(-2.5e12, 1), figure(12345.0, 0, thousands=True)
    ('1234.57', '1.000e+308', '-2.500e+12', '12,345')
    """
    if math.isfinite(value) and abs(value) < 1e9:
        return f"{value:,.{decimals}f}" if thousands else f"{value:.{decimals}f}"
    return f"{value:.3e}" if math.isfinite(value) else str(value)


# A footing's loads: a strip's per m run (kN/m, keys ending in _kN_per_m), a circle's the whole
# footing's (kN, keys ending in _kN). The same key never holds the other unit.
LOAD_UNITS = {"strip": ("kN/m", "kN_per_m"), "circular": ("kN", "kN")}


def load_unit(shape: str) -> tuple[str, str]:
    """The unit of a footing's loads and the suffix of the keys holding them.

    >>> load_unit("strip"), load_unit("circular")
    (('kN/m', 'kN_per_m'), ('kN', 'kN'))
    """
    return LOAD_UNITS[shape]


def design_load_of(fos: dict) -> tuple[float | None, str, str]:
    """The design load in result.json's ``factor_of_safety``, its unit and its keys' suffix
    (``design_load_kN_per_m`` for a strip, ``design_load_kN`` for a circle).

    >>> design_load_of({"design_load_kN": 2000.0})
    (2000.0, 'kN', 'kN')
    >>> design_load_of({"design_load_kN_per_m": None})
    (None, 'kN/m', 'kN_per_m')
    """
    for unit, suffix in LOAD_UNITS.values():
        if f"design_load_{suffix}" in fos:
            return fos[f"design_load_{suffix}"], unit, suffix
    return None, *LOAD_UNITS["strip"]


# The soil counts as moving faster than this fraction of the footing's velocity along the load: the
# mechanism's stated extent (result.json) and its frame and arrows in the pictures use the same value.
MOVING_SPEED_FRACTION = 0.05

CAUTION = ("Results are for checking by a qualified geotechnical engineer. The analysis assumes "
           "perfect plasticity with associated flow, plane strain (strip) or axial symmetry (circle) and "
           "the soil model given; "
           "local codes and licensed practice govern.")


@dataclass
class BoundResult:
    kind: str  # "lower" | "upper"
    pressure_kPa: float | None  # collapse load / B; None unless solved and certified
    load_kN_per_m: float | None
    status: str  # solver status, or why the bound is withheld
    certificate: dict
    elements: int
    variables: int
    equalities: int
    cones: int
    iterations: int
    timing: dict  # mesh_s, assemble_s, solve_s, certify_s
    method: str
    extra: dict = field(default_factory=dict)
    # not written to result.json: the mesh and the solution fields, for pictures and exports
    mesh: object = field(default=None, repr=False)
    fields: dict = field(default_factory=dict, repr=False)
    load_kN: float | None = None  # a circular footing's collapse load (its load_kN_per_m is None)


@dataclass
class Result:
    title: str
    case_name: str
    case_sha256: str
    footing_width_m: float
    lower: BoundResult | None
    upper: BoundResult | None
    timing: dict
    domain: dict
    backend: str
    pore_pressure_at_base_kPa: float = 0.0  # pressures are effective; total adds this
    adapt_history: list[dict] | None = None  # adaptive refinement: one row per step
    # how the mesh was chosen: {"mesh": "fixed", "elements"} or {"mesh": "adaptive", "target_gap_percent",
    # "time_limit_s", "max_steps", "steps", "reached", "stopped", "why"} (solver.adapt.refine_until)
    refinement: dict | None = None
    notes: list[str] = field(default_factory=list)
    input_warnings: list[str] = field(default_factory=list)  # values allowed but unusual (solver.plausible)
    hand_methods: list[dict] = field(default_factory=list)  # on the strength the bounds use, compared
    # with a dilation angle: the same methods on c', phi' as given, information only (not compared)
    hand_methods_as_given: list[dict] = field(default_factory=list)
    # load and strength-reduction factors and the partial-factor check (solver.safety), when the
    # case gives a design load or partial factors; written to result.json only then
    factor_of_safety: dict | None = None
    run_date: str | None = None  # when the run was made: ISO 8601, local time with its UTC offset
    # what changes how far the numbers can be trusted (:func:`caveats`), shown beside the bracket
    caveats: list[str] = field(default_factory=list)
    # the whole command's wall time split (s): bounds, strength_search, pictures, report, other,
    # total (solver.cli); None when the Result was made without the command (the Python API)
    wall_time_s: dict | None = None
    footing_shape: str = "strip"  # "strip" | "circular" (footing_width_m is then the diameter)

    @property
    def bearing_area(self) -> float:
        """m^2 per m run (strip) or m^2 (circle): collapse pressure = collapse load / this."""
        return self.footing_width_m if self.footing_shape == "strip" else math.pi * self.footing_width_m ** 2 / 4

    @property
    def load_unit(self) -> str:
        return load_unit(self.footing_shape)[0]

    @property
    def gap_percent(self) -> float | None:
        """(upper - lower) / lower in percent, when both bounds are certified."""
        lo = self.lower.pressure_kPa if self.lower else None
        up = self.upper.pressure_kPa if self.upper else None
        if lo is None or up is None or lo <= 0:
            return None
        return 100.0 * (up - lo) / lo

    def to_dict(self) -> dict:
        data = {
            "title": self.title,
            "run_date": self.run_date,
            "case": {"name": self.case_name, "sha256": self.case_sha256},
            "software": {"name": "bearbound", "version": __version__},
            "footing_width_m": self.footing_width_m,
            "footing_shape": self.footing_shape,
            "lower": _bound_dict(self.lower),
            "upper": _bound_dict(self.upper),
            "gap_percent": json_safe(self.gap_percent),
            "timing": {k: round(v, 4) for k, v in self.timing.items()},
            "domain": self.domain,
            "backend": self.backend,
            "pore_pressure_at_base_kPa": self.pore_pressure_at_base_kPa,
            "caveats": self.caveats,
            "notes": self.notes,
            "input_warnings": self.input_warnings,
            "caution": CAUTION,
        }
        if self.hand_methods:
            data["hand_methods"] = self.hand_methods
        if self.hand_methods_as_given:
            data["hand_methods_as_given"] = self.hand_methods_as_given
        if self.refinement is not None:
            data["refinement"] = self.refinement
        if self.adapt_history is not None:
            data["adapt_history"] = self.adapt_history
        if self.factor_of_safety is not None:
            data["factor_of_safety"] = self.factor_of_safety
        if self.wall_time_s is not None:
            data["wall_time_s"] = {k: round(v, 3) for k, v in self.wall_time_s.items()}
        return json_safe(data)


class WallClock:
    """The whole command's wall time (s), split into the parts a user waits for: the bounds
    (meshing, solving and certifying, every adaptive step), the strength search (the factor
    of safety on strength and the partial-factor check), the pictures (drawn, and written as
    PNG and SVG), the report (its page with the pictures embedded) and the rest ("other":
    start-up, reading the case, fields.vtu, summary.csv, the output folder).

    >>> clock = WallClock()
    >>> with clock.part("pictures"):
    ...     pass
    >>> split = clock.split()
    >>> list(split), split["total"] >= split["pictures"] >= 0
    (['bounds', 'strength_search', 'pictures', 'report', 'other', 'total'], True)
    """

    PARTS = ("bounds", "strength_search", "pictures", "report")

    def __init__(self, started: float | None = None) -> None:
        self.started = time.perf_counter() if started is None else started  # a perf_counter() reading
        self.parts = dict.fromkeys(self.PARTS, 0.0)

    @contextlib.contextmanager
    def part(self, name: str) -> Iterator[None]:
        start = time.perf_counter()
        try:
            yield
        finally:
            self.parts[name] += time.perf_counter() - start

    def split(self) -> dict[str, float]:
        """Every part, "other" and "total" (s), as of now."""
        total = time.perf_counter() - self.started
        return {**self.parts, "other": max(total - sum(self.parts.values()), 0.0), "total": total}


WALL_PARTS = {"bounds": "bounds", "strength_search": "strength search", "pictures": "pictures",
              "report": "report", "other": "other"}


def wall_time_line(split: dict) -> str:
    """The whole command's wall time in one line, its parts in words (a part that did not run,
    such as the strength search of a case without a design load, is left out).

    >>> wall_time_line({"bounds": 4.3, "strength_search": 14.8, "pictures": 2.0, "report": 0.4, "other": 0.9,
    ...                 "total": 22.4})
    '22.4 s: bounds 4.3 s, strength search 14.8 s, pictures 2.0 s, report 0.4 s, other 0.9 s'
    >>> wall_time_line({"bounds": 4.3, "strength_search": 0.0, "pictures": 0.0, "report": 0.0, "other": 0.2,
    ...                 "total": 4.5})
    '4.5 s: bounds 4.3 s, other 0.2 s'
    """
    parts = ", ".join(f"{words} {split[key]:.1f} s" for key, words in WALL_PARTS.items()
                      if split.get(key) or key in ("bounds", "other"))
    return f"{split['total']:.1f} s: {parts}"


def refinement_line(refinement: dict, gap_percent: float | None) -> str:
    """One line: how the mesh was chosen and, when adaptive, whether the target gap was met and why not."""
    if refinement.get("mesh") != "adaptive":
        return "one fixed mesh per bound (adaptive refinement off: --fixed-mesh or [analysis] mesh = \"fixed\")"
    target, steps = refinement["target_gap_percent"], refinement["steps"]
    if refinement["reached"]:
        return f"adaptive, target gap {target:g} % reached in {steps} step{'s' * (steps > 1)}"
    gap = "no gap" if gap_percent is None else f"gap {gap_percent:.2f} %"
    return (f"adaptive, target gap {target:g} % NOT reached ({gap} after {steps} step{'s' * (steps > 1)}); "
            f"stopped by {refinement['why']}")


def caveats(case, data: dict) -> list[str]:
    """What changes how far the bracket can be trusted, one plain sentence each, from a
    result's data (result.json's dict) and its case: the Davis reduction, a field at the
    model's edge, water above the footing base, a bound withheld or not asked for, the
    target gap missed. Empty when the bounds are rigorous bounds of the case as given,
    both certified and as close as asked. The report puts these beside the bracket and
    never calls the bounds rigorous while any holds."""
    out = []
    for kind in ("lower", "upper"):
        bound = data.get(kind)
        if bound is None:
            other = "upper" if kind == "lower" else "lower"
            if data.get(other) is not None:
                out.append(f"the {kind} bound was not asked for ([analysis] bounds = \"{other}\"): "
                           f"one side only, no bracket")
        elif bound.get("pressure_kPa") is None:
            out.append(f"the {kind} bound is withheld ({bound.get('status')}): no bracket")
    reduced = [layer for layer in case.layers if layer.dilation_angle is not None and not layer.is_tresca]
    if reduced:
        names = ", ".join(f"'{layer.name}' (psi = {layer.dilation_angle:g} degrees)" for layer in reduced)
        out.append(f"Davis reduction: the bounds use a reduced strength c*, phi* for {names}; they are not "
                   "rigorous bounds for the soil as given (non-associated flow), but the accepted approximation")
    for kind, what, side in (("lower", "stress field is at yield", "low"), ("upper", "mechanism moves", "high")):
        bound = data.get(kind) or {}
        edges = (bound.get("extra") or {}).get("field_at_edge") or []
        if bound.get("pressure_kPa") is not None and edges:
            out.append(f"the {kind} bound's {what} at the {' and '.join(edges)} edge of its model: the model's "
                       f"edge, not the soil, may limit it, so it may be {side}")
    pore = data.get("pore_pressure_at_base_kPa") or 0.0
    if pore > 0:
        lo, up = ((data.get(kind) or {}).get("pressure_kPa") for kind in ("lower", "upper"))
        total = f" (total: {lo + pore:.1f} to {up + pore:.1f} kPa)" if lo is not None and up is not None else ""
        out.append(f"the water table is above the footing base: the pressures are effective; the total contact "
                   f"pressure adds the pore pressure at the base, {pore:.1f} kPa{total}")
    refinement, gap = data.get("refinement") or {}, data.get("gap_percent")
    if refinement.get("mesh") == "adaptive" and not refinement.get("reached") and gap is not None:
        steps = refinement["steps"]
        out.append(f"the target gap of {refinement['target_gap_percent']:g} % was not reached: gap {gap:.2f} % "
                   f"after {steps} step{'s' * (steps > 1)}, stopped by {refinement['why']}")
    elif refinement.get("mesh") == "fixed" and gap is not None and gap > 100 * case.analysis.target_gap:
        out.append(f"the gap, {gap:.2f} %, is wider than the target {100 * case.analysis.target_gap:g} % "
                   "([analysis] target_gap): one fixed mesh per bound was solved; the adaptive run (without "
                   "--fixed-mesh) or more elements narrow it")
    return out


def _bound_dict(bound: BoundResult | None) -> dict | None:
    if bound is None:
        return None
    data = {f.name: getattr(bound, f.name) for f in dataclass_fields(bound) if f.name not in ("kind", "mesh", "fields")}
    data["timing"] = {k: round(v, 4) for k, v in bound.timing.items()}
    return data


def json_safe(value):
    """JSON has no NaN or inf: write them as null."""
    if isinstance(value, float):
        return value if math.isfinite(value) else None
    if isinstance(value, dict):
        return {k: json_safe(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [json_safe(v) for v in value]
    return value


def write_atomic(path: Path, text: str) -> None:
    """Write to a temporary file in the same folder, then rename over the target."""
    path.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(dir=path.parent, prefix=f".{path.name}.", suffix=".tmp")
    try:
        with os.fdopen(fd, "w", encoding="utf-8") as handle:
            handle.write(text)
        os.chmod(tmp, 0o644)  # mkstemp makes 0600; outputs are ordinary readable files
        os.replace(tmp, path)
    except BaseException:
        Path(tmp).unlink(missing_ok=True)
        raise


def write_result(result: Result, out_dir: Path) -> Path:
    """Write result.json into out_dir (created if needed); returns its path."""
    path = Path(out_dir) / "result.json"
    write_atomic(path, json.dumps(result.to_dict(), indent=2) + "\n")
    return path
