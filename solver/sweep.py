"""Parameter sweeps: one base case, some of its keys varied, every point a task
on dask.distributed, the results gathered into ``sweep.csv`` and a chart.

A sweep file (TOML) names the base case (``base = "site.toml"``, a path relative
to the sweep file, or an inline ``[base]`` table holding a case's tables) and a
``[vary]`` table of case-file keys written as dotted paths: ``"footing.width"``,
``"ground.surcharge"``, ``"layers.0.thickness"`` (layers here are counted from 0,
top to bottom, as the position in the file's list; the case check's own messages
count them from 1, ``layers[1]``). Each key takes a list of values or a range
``{start = .., stop = .., num = ..}`` (``num`` values, both ends included).
``combine = "cross"`` (default: every combination, the first key varying
slowest) or ``"zip"`` (the lists side by side, all the same length).

Each point's result is stored as ``OUT/points/<sha256 of its case>.json``, written
atomically as soon as it arrives, so a sweep that is stopped and started again
runs only the points still missing (and those that failed). The chart and
``sweep.csv`` are written at the end, from the stored points.

Security: dask sends pickled code to its workers, and a worker runs whatever it
is sent. The local cluster started here listens on 127.0.0.1 only, with no
dashboard; ``scheduler=`` connects to a cluster the user started, which should be
one the user controls on a network the user trusts.
"""
from __future__ import annotations

import contextlib
import copy
import csv
import hashlib
import io
import json
import math
import os
import pathlib
import signal
import sys
import threading
import time
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from . import __version__
from .case import (LAYER_KEYS, MODEL_KEYS, TABLES, CaseError, Key, _did_you_mean, footing_schema,
                   _not_allowed, _show, case_to_dict, load_case, parse_case, read_toml_file, shown)
from .model import Case
from .result import CAUTION, json_safe, load_unit, write_atomic

MAX_POINTS = 10_000  # a design chart is tens to hundreds of points; more is a typo in a range
MAX_CHARTS = 50  # one chart per combination of the keys beyond x and lines
SWEEP_KEYS = ("title", "base", "combine", "vary", "chart", "point_time_limit_s")
# A point that runs longer is stopped and recorded as failed ("time limit"), so that one
# point that hangs cannot hold a worker for ever. An hour: far above a point's usual
# seconds to minutes (an 80k-triangle bracket took 21 minutes, README), well below for ever.
POINT_TIME_LIMIT = Key(float, "s", gt=0, le=7 * 86400, default=3600.0)
POINT_START_S = 300.0  # a point's process must be ready (its imports done) within this
CHART_KEYS = ("output", "divide_by", "x", "lines", "formats", "title")
OUTPUTS = {"pressure": ("collapse pressure q", "kPa"), "load": ("collapse load Q", "kN/m")}
FORMATS = ("png", "svg")
# Case tables whose keys a sweep may vary (every table of the case schema); layers are
# handled apart (an index first).
VARY_TABLES = {table: schema for table, (_, schema) in TABLES.items()}
RANGE_KEYS = ("start", "stop", "num")
# Worker processes run one point per thread; a multi-threaded BLAS (or Rust thread pool,
# which Clarabel's faer solver uses) in each of them would only fight over the same cores.
WORKER_ENV = {"OMP_NUM_THREADS": "1", "OPENBLAS_NUM_THREADS": "1", "MKL_NUM_THREADS": "1",
              "RAYON_NUM_THREADS": "1"}
# Point statuses: every bound asked for certified / a bound withheld (the result says
# why) / no result (a bad combination of values, a case the engine refuses, an error).
CERTIFIED, WITHHELD, FAILED = "certified", "withheld", "failed"


@dataclass(frozen=True)
class Parameter:
    """One varied key: its dotted path, its values, and words and unit for labels."""

    key: str  # as in the sweep file, e.g. "layers.0.thickness"
    values: tuple
    label: str  # e.g. "thickness of 'sand crust'"
    unit: str  # e.g. "m"; "" for text and dimensionless keys

    @property
    def numeric(self) -> bool:
        return all(isinstance(v, (int, float)) for v in self.values)


@dataclass(frozen=True)
class Point:
    """One combination of values, with its case (or why it has none)."""

    index: int
    values: dict[str, Any]  # key -> value, in the order of [vary]
    case_dict: dict | None  # the full case, defaults written (case_to_dict)
    error: str | None  # the case check's line, for a bad combination
    sha256: str  # of the canonical case; of the raw values for a bad combination


@dataclass(frozen=True)
class ChartSpec:
    output: str  # a key of OUTPUTS
    divide_by: Parameter | None  # a case key whose value (per point) divides the output
    x: str  # key of the parameter on the x axis
    lines: str | None  # key of the parameter with one band per value, or None
    formats: tuple[str, ...]
    title: str
    load_unit: str = "kN/m"  # output "load": a strip's per m run (kN/m), a circle's whole load (kN)


@dataclass(frozen=True)
class Sweep:
    name: str  # the sweep file's stem; names the default output folder
    title: str
    base: dict  # the base case, canonical (case_to_dict)
    parameters: tuple[Parameter, ...]
    combine: str  # "cross" | "zip"
    points: tuple[Point, ...]
    chart: ChartSpec
    point_time_limit_s: float = POINT_TIME_LIMIT.default  # s, see POINT_TIME_LIMIT

    @property
    def parameter(self) -> dict[str, Parameter]:
        return {p.key: p for p in self.parameters}


@dataclass
class SweepOutcome:
    """What a run of the sweep did; ``records`` is one stored record per point."""

    records: list[dict]
    ran: int  # points solved in this run
    reused: int  # points taken from OUT/points, solved in an earlier run
    wall_s: float  # the whole run, cluster start-up included
    startup_s: float  # starting or connecting to the cluster
    workers: int  # worker threads that solved points (0 when nothing had to run)
    files: list[pathlib.Path] = field(default_factory=list)

    def count(self, status: str) -> int:
        return sum(r["status"] == status for r in self.records)


# -- reading the sweep file ---------------------------------------------------

def load_sweep(path: str | pathlib.Path) -> Sweep:
    """Read and check a sweep file (TOML, UTF-8, at most 1 MB); see the module docstring.

    Raises
    ------
    CaseError
        One line naming the key, the value and what is allowed; also when the base
        case is bad, or when every point's case is bad.
    """
    path = pathlib.Path(path)
    data = _read_toml(path)
    if isinstance(data, dict) and "base" not in data and ("footing" in data or "layers" in data):
        raise CaseError(f"{shown(path, 200)}: a case file, not a sweep file; a sweep file names its case with "
                        "base = \"case.toml\" (or an inline [base] table) and holds a [vary] table")
    return parse_sweep(data, name=path.stem, folder=path.parent)


def _read_toml(path: pathlib.Path) -> dict:
    """The same guards as :func:`solver.case.load_case`, for a sweep file."""
    data, _ = read_toml_file(path, "sweep file")
    if data is None:
        raise CaseError(f"{shown(path, 200)}: the file is empty; a sweep file needs a base case and a [vary] table")
    return data


def parse_sweep(data: dict, *, name: str = "sweep", folder: str | pathlib.Path = ".") -> Sweep:
    """Check a sweep (as read from TOML) and build every point's case.

    A point whose case is bad is kept, with the case check's line as its error;
    if every point is bad, that is an error of the sweep file.

    Examples
    --------
    >>> sweep = parse_sweep({"base": {"footing": {"width": 1.0}, "layers": [
    ...     {"name": "clay", "model": "tresca", "unit_weight": 0, "undrained_strength": 20}]},
    ...     "vary": {"footing.width": [1.0, 2.0], "layers.0.undrained_strength": {"start": 10, "stop": 30, "num": 3}}})
    >>> len(sweep.points), sweep.points[1].values
    (6, {'footing.width': 1.0, 'layers.0.undrained_strength': 20.0})
    >>> parse_sweep({"base": {"footing": {"width": 1.0}, "layers": []}, "vary": {}})
    Traceback (most recent call last):
    ...
    solver.case.CaseError: base.layers: [] is not allowed; must be an array of tables [[layers]], at least one (top to bottom)
    """
    if not isinstance(data, dict):
        raise _not_allowed("sweep", data, "a table of keys")
    for key in data:
        if key not in SWEEP_KEYS:
            raise CaseError(f"{shown(key, 80)}: unknown key; {_did_you_mean(str(key), list(SWEEP_KEYS))}")
    base_case = _read_base(data.get("base"), name, pathlib.Path(folder))
    base = case_to_dict(base_case)
    title = data.get("title", base_case.title)
    if not isinstance(title, str) or not title.strip() or not title.isprintable() or len(title) > 200:
        raise _not_allowed("title", title, "a non-empty one-line string of at most 200 characters")

    limit = data.get("point_time_limit_s", POINT_TIME_LIMIT.default)
    try:
        limit = POINT_TIME_LIMIT.read(limit)
    except ValueError:
        raise _not_allowed("point_time_limit_s", limit, POINT_TIME_LIMIT.allowed
                           + "; a point running longer is stopped and recorded as failed") from None
    combine = data.get("combine", "cross")
    if combine not in ("cross", "zip"):
        raise _not_allowed("combine", combine, "one of 'cross', 'zip'")
    raw_vary = data.get("vary")
    if raw_vary is None:
        raise CaseError("vary: missing; required table [vary] of case keys and their values, "
                        "e.g. \"footing.width\" = [1.0, 2.0]")
    if not isinstance(raw_vary, dict) or not raw_vary:
        raise _not_allowed("vary", raw_vary, "a table [vary] with at least one case key")
    flat = _flatten(raw_vary, "")
    varied = set(flat)
    parameters = tuple(_read_parameter(key, spec, base, varied) for key, spec in flat.items())

    if combine == "zip":
        counts = {p.key: len(p.values) for p in parameters}
        if len(set(counts.values())) > 1:
            first = parameters[0]
            odd = next(p for p in parameters if len(p.values) != len(first.values))
            raise CaseError(f"vary.{odd.key}: {len(odd.values)} values is not allowed with combine = 'zip'; "
                            f"must be as many as vary.{first.key} ({len(first.values)})")
        rows = list(zip(*(p.values for p in parameters)))
    else:
        total = math.prod(len(p.values) for p in parameters)
        if total > MAX_POINTS:
            raise CaseError(f"vary: {total} points is not allowed; must be at most {MAX_POINTS} "
                            "(split the sweep, or check the ranges)")
        rows = list(_product([p.values for p in parameters]))
    if len(rows) > MAX_POINTS:
        raise CaseError(f"vary: {len(rows)} points is not allowed; must be at most {MAX_POINTS}")

    points = tuple(_make_point(i, dict(zip((p.key for p in parameters), row)), base, name)
                   for i, row in enumerate(rows))
    if all(p.error for p in points):
        first = points[0]
        raise CaseError(f"vary: every point's case is bad; point 0 ({_values_text(first.values)}): {first.error}")
    chart = _read_chart(data.get("chart", {}), parameters, combine, base, varied, title, points)
    return Sweep(name=name, title=title, base=base, parameters=parameters, combine=combine,
                 points=points, chart=chart, point_time_limit_s=limit)


def _read_base(raw: Any, name: str, folder: pathlib.Path) -> Case:
    if raw is None:
        raise CaseError("base: missing; required, a case file path (base = \"site.toml\", relative "
                        "to the sweep file) or an inline [base] table of case tables")
    if isinstance(raw, str):
        path = pathlib.Path(raw)
        path = path if path.is_absolute() else folder / path
        try:
            return load_case(path)
        except CaseError as error:
            text = str(error)
            raise CaseError(text if text.startswith(shown(path, 200)) else f"base ({shown(path, 200)}): {text}") from None
    if isinstance(raw, dict):
        try:
            return parse_case(raw, name=name)
        except CaseError as error:
            raise CaseError(f"base.{error}") from None
    raise _not_allowed("base", raw, "a case file path (a string) or an inline [base] table")


def _flatten(table: dict, prefix: str) -> dict[str, Any]:
    """Dotted keys of [vary]: TOML reads unquoted ``layers.0.thickness`` as nested tables."""
    flat = {}
    for key, value in table.items():
        path = f"{prefix}{key}"
        if isinstance(value, dict) and not any(k in value for k in RANGE_KEYS):
            if not value:
                raise _not_allowed(shown(f"vary.{path}", 80), value, "a list of values or {start, stop, num}")
            flat.update(_flatten(value, path + "."))
        else:
            flat[path] = value
    return flat


def _product(lists: list[tuple]) -> list[tuple]:
    """Every combination, the first list varying slowest (rows of a design chart)."""
    rows: list[tuple] = [()]
    for values in lists:
        rows = [row + (v,) for row in rows for v in values]
    return rows


def _resolve_key(key: str, base: dict, varied: set[str], where: str) -> tuple[Key, str, str]:
    """The schema of a dotted case key, and words and unit for its label.

    ``where`` is how the key is named in messages (``vary.layers.0.thickness``).
    """
    parts = key.split(".")
    tables = list(VARY_TABLES) + ["layers"]
    if parts[0] not in tables:
        raise CaseError(f"{where}: unknown case key; must start with one of {', '.join(tables)} "
                        f"({_did_you_mean(parts[0], tables)})")
    if parts[0] == "layers":
        layers = base["layers"]
        if len(parts) != 3:
            raise CaseError(f"{where}: not a layer key; must be layers.<index>.<key>, the index counted "
                            f"from 0 (0 to {len(layers) - 1}), e.g. layers.0.thickness")
        index, name = parts[1], parts[2]
        if not index.isdigit() or int(index) >= len(layers):
            raise CaseError(f"{where}: layer index {_show(index)} is not allowed; must be 0 to {len(layers) - 1} "
                            f"(counted from 0, top to bottom; the base case has {len(layers)} layers)")
        layer = layers[int(index)]
        models = list(MODEL_KEYS) if f"layers.{index}.model" in varied else [layer["model"]]
        schema = dict(LAYER_KEYS)
        for model in models:
            schema |= MODEL_KEYS[model]
        if name not in schema or name == "name":
            allowed = [k for k in schema if k != "name"]
            raise CaseError(f"{where}: unknown key of a {'/'.join(models)} layer; {_did_you_mean(name, allowed)}")
        return schema[name], f"{name.replace('_', ' ')} of '{layer['name']}'", schema[name].unit
    if len(parts) != 2:
        raise CaseError(f"{where}: not a case key; must be <table>.<key>, e.g. footing.width")
    schema = VARY_TABLES[parts[0]]
    if parts[0] == "footing" and "footing.shape" not in varied:  # a circle's design load is in kN
        schema = footing_schema(base.get("footing") or {})
    if parts[1] not in schema:
        raise CaseError(f"{where}: unknown key of [{parts[0]}]; {_did_you_mean(parts[1], list(schema))}")
    spec = schema[parts[1]]
    return spec, f"{parts[0]} {parts[1].replace('_', ' ')}", spec.unit


def _read_parameter(key: str, spec: Any, base: dict, varied: set[str]) -> Parameter:
    where = shown(f"vary.{key}", 80)
    schema, label, unit = _resolve_key(key, base, varied, where)
    if isinstance(spec, dict):
        values = _read_range(spec, where)
    elif isinstance(spec, list) and spec:
        values = tuple(spec)
        for value in values:
            if isinstance(value, bool) or not isinstance(value, (int, float, str)):
                raise _not_allowed(where, value, f"a list of values for {key} ({schema.allowed})")
        seen = set()
        for value in values:
            if value in seen:
                raise _not_allowed(where, value, "given once; it appears twice in the list")
            seen.add(value)
    else:
        raise _not_allowed(where, spec, "a non-empty list of values or a range {start = .., stop = .., num = ..}")
    # Each value must suit the key on its own; combinations are checked per point.
    for value in values:
        try:
            schema.read(value)
        except ValueError:
            raise _not_allowed(where, value, f"{schema.allowed} for every value") from None
    if key == "footing.width" and "footing.shape" in varied:  # width = diameter for a circle
        label = "footing width or diameter"
    elif key == "footing.width" and (base.get("footing") or {}).get("shape") == "circular":
        label = "footing diameter"
    return Parameter(key=key, values=values, label=label, unit=unit if schema.kind is not str else "")


def _read_range(spec: dict, where: str) -> tuple[float, ...]:
    for key in spec:
        if key not in RANGE_KEYS:
            raise CaseError(f"{shown(f'{where}.{key}', 80)}: unknown key of a range; {_did_you_mean(str(key), list(RANGE_KEYS))}")
    for key in RANGE_KEYS:
        if key not in spec:
            raise CaseError(f"{where}.{key}: missing; a range needs start, stop and num")
    for key in ("start", "stop"):
        value = spec[key]
        if isinstance(value, bool) or not isinstance(value, (int, float)) or not math.isfinite(value):
            raise _not_allowed(f"{where}.{key}", value, "a number")
    num = spec["num"]
    if isinstance(num, bool) or not isinstance(num, int) or not 1 <= num <= MAX_POINTS:
        raise _not_allowed(f"{where}.num", num, f"a whole number from 1 to {MAX_POINTS} (values, both ends included)")
    if num > 1 and spec["start"] == spec["stop"]:
        raise _not_allowed(f"{where}.stop", spec["stop"], f"different from start with num = {num}")
    # 12 significant digits: 0.1 steps give 0.3, not 0.30000000000000004, in the CSV and labels
    return tuple(float(f"{v:.12g}") for v in np.linspace(spec["start"], spec["stop"], num))


def _set_key(case: dict, key: str, value: Any) -> None:
    parts = key.split(".")
    if parts[0] == "layers":
        case["layers"][int(parts[1])][parts[2]] = value
    else:
        case.setdefault(parts[0], {})[parts[1]] = value


def _get_key(case: dict, key: str) -> Any:
    parts = key.split(".")
    table = case["layers"][int(parts[1])] if parts[0] == "layers" else case.get(parts[0], {})
    return table.get(parts[-1])


def case_sha256(case_dict: dict) -> str:
    """SHA-256 of a case's canonical JSON (keys sorted, floats as repr): equal cases, equal hash.

    >>> case_sha256({"a": 1.0, "b": [2]}) == case_sha256({"b": [2], "a": 1.0})
    True
    """
    text = json.dumps(case_dict, sort_keys=True, separators=(",", ":"), allow_nan=False)
    return hashlib.sha256(text.encode("utf-8")).hexdigest()


def _make_point(index: int, values: dict[str, Any], base: dict, name: str) -> Point:
    raw = copy.deepcopy(base)
    for key, value in values.items():
        _set_key(raw, key, value)
    # A layer whose model is varied keeps only the strength keys of its new model.
    for i, layer in enumerate(raw["layers"]):
        if f"layers.{i}.model" in values:
            own = set(LAYER_KEYS) | set(MODEL_KEYS[layer["model"]])
            given = {k.split(".")[2] for k in values if k.startswith(f"layers.{i}.")}
            raw["layers"][i] = {k: v for k, v in layer.items() if k in own or k in given}
    try:
        case = parse_case(raw, name=name)
    except CaseError as error:
        return Point(index, values, None, str(error), case_sha256({"bad point": raw}))
    canonical = case_to_dict(case)
    return Point(index, values, canonical, None, case_sha256(canonical))


def _values_text(values: dict[str, Any]) -> str:
    return ", ".join(f"{shown(k, 80)} = {_show(v)}" for k, v in values.items())


def _read_chart(raw: Any, parameters: tuple[Parameter, ...], combine: str, base: dict,
                varied: set[str], title: str, points: tuple[Point, ...]) -> ChartSpec:
    if not isinstance(raw, dict):
        raise _not_allowed("chart", raw, "a table [chart]")
    for key in raw:
        if key not in CHART_KEYS:
            raise CaseError(f"{shown(f'chart.{key}', 80)}: unknown key; {_did_you_mean(str(key), list(CHART_KEYS))}")
    output = raw.get("output", "pressure")
    if output not in OUTPUTS:
        raise _not_allowed("chart.output", output, "one of " + ", ".join(repr(o) for o in OUTPUTS))
    if output == "load" and "footing.shape" in varied:
        raise _not_allowed("chart.output", output, "'pressure' when footing.shape is varied: a strip's load is per "
                           "m run (kN/m), a circle's the whole footing's (kN), and one axis cannot hold both")
    keys = [p.key for p in parameters]
    x = raw.get("x", keys[0])
    if x not in keys:
        raise _not_allowed("chart.x", x, "one of the varied keys: " + ", ".join(keys))
    if not next(p for p in parameters if p.key == x).numeric:
        raise _not_allowed("chart.x", x, "a key with numbers (the x axis); name a numeric key of [vary]")
    others = [k for k in keys if k != x]
    lines = raw.get("lines", (others[0] if others and combine == "cross" else None))
    if lines is not None and (lines not in others):
        raise _not_allowed("chart.lines", lines, "one of the varied keys other than chart.x: "
                           + (", ".join(others) or "(none: vary a second key)"))
    divide_by = None
    if "divide_by" in raw:
        key = raw["divide_by"]
        if not isinstance(key, str):
            raise _not_allowed("chart.divide_by", key, "a case key as a string, e.g. \"layers.1.undrained_strength\"")
        schema, label, unit = _resolve_key(key, base, varied, "chart.divide_by")
        if schema.kind is str:
            raise _not_allowed("chart.divide_by", key, "a case key holding a number")
        for point in points:
            if point.case_dict is None:
                continue
            value = _get_key(point.case_dict, key)
            if value is None or value <= 0:
                raise _not_allowed("chart.divide_by", key, f"a key > 0 at every point; it is {_show(value)} "
                                   f"at point {point.index} ({_values_text(point.values)})")
        divide_by = Parameter(key=key, values=(), label=label, unit=unit)
    formats = raw.get("formats", ["png"])
    if not isinstance(formats, list) or not formats or any(f not in FORMATS for f in formats):
        raise _not_allowed("chart.formats", formats, "a list of 'png' and/or 'svg'")
    chart_title = raw.get("title", title)
    if not isinstance(chart_title, str) or not chart_title.strip() or not chart_title.isprintable():
        raise _not_allowed("chart.title", chart_title, "a non-empty one-line string")
    return ChartSpec(output=output, divide_by=divide_by, x=x, lines=lines,
                     formats=tuple(dict.fromkeys(formats)), title=chart_title,
                     load_unit=load_unit(base["footing"].get("shape", "strip"))[0])


# -- solving: one point on a worker --------------------------------------------

def solve_point(case_dict: dict, name: str = "point") -> dict:
    """Check and solve one point's case; runs on a dask worker (or anywhere).

    Never raises for a bad case or solver trouble: returns a record whose
    ``status`` is certified, withheld or failed, with the reason.
    """
    start = time.perf_counter()
    record: dict[str, Any] = {"status": FAILED, "reason": "", "lower_kPa": None, "upper_kPa": None,
                              "gap_percent": None, "result": None}
    try:
        case = parse_case(case_dict, name=name)
        from .analysis import analyse  # late: checking a sweep file needs no gmsh or solver

        result = analyse(case, parallel=False)  # the sweep's workers are its parallelism: one core each
    except CaseError as error:  # a case the engine refuses (a key it does not solve yet)
        record["reason"] = shown(error, 500)
    except Exception as error:  # solver or mesh trouble: recorded, the sweep goes on
        record["reason"] = shown(f"{type(error).__name__}: {' '.join(str(error).split())}", 500)
    else:
        asked = [b for b in (result.lower, result.upper) if b is not None]
        withheld = [f"{b.kind} bound {b.status}" for b in asked if b.pressure_kPa is None]
        record.update(status=WITHHELD if withheld else CERTIFIED, reason="; ".join(withheld),
                      lower_kPa=result.lower.pressure_kPa if result.lower else None,
                      upper_kPa=result.upper.pressure_kPa if result.upper else None,
                      gap_percent=result.gap_percent, result=result.to_dict())
    record["wall_s"] = time.perf_counter() - start
    return record


def _failed(reason: str, wall_s: float | None) -> dict:
    return {"status": FAILED, "reason": reason, "lower_kPa": None, "upper_kPa": None, "gap_percent": None,
            "result": None, "wall_s": wall_s}


# -- a point under a time limit ---------------------------------------------------
#
# A thread cannot be stopped from outside, and a hung gmsh or solver call would hold the
# worker (and gmsh's lock) for ever. So each worker thread hands its points to a process
# of its own, kept from point to point (its imports are paid once), and kills it when a
# point outruns the limit; the next point starts a fresh one. One JSON line each way.

_POINT_PROCESS = threading.local()
_ALL_POINT_PROCESSES: list = []  # of this worker process, closed and reaped when it exits


def _close_point_processes() -> None:
    """At the worker's exit: close each point process's input (it then ends) and wait for it,
    so that its CPU time is counted as the worker's (rusage of waited-for children)."""
    for process in _ALL_POINT_PROCESSES:
        with contextlib.suppress(OSError):
            process.stdin.close()
        try:
            process.wait(timeout=10)
        except Exception:  # still busy: stop it
            _stop_point_process(process)


def solve_point_limited(case_dict: dict, name: str, time_limit_s: float) -> dict:
    """:func:`solve_point` in this thread's point process, stopped after ``time_limit_s``
    (recorded as failed, reason "time limit ..."). Never raises for a point's trouble."""
    start = time.perf_counter()
    process = getattr(_POINT_PROCESS, "process", None)
    if process is None or process.poll() is not None:
        process = _POINT_PROCESS.process = _start_point_process()
        if isinstance(process, str):  # could not start: the reason
            _POINT_PROCESS.process = None
            return _failed(process, time.perf_counter() - start)
    request = json.dumps({"case": case_dict, "name": name}, allow_nan=False) + "\n"
    try:
        process.stdin.write(request.encode("utf-8"))
        process.stdin.flush()
        line = _read_line(process, time_limit_s)
    except OSError:  # the process died under us (a broken pipe)
        line = b""
    if not line:  # None: the time ran out; b"": the process ended
        _stop_point_process(process)
        _POINT_PROCESS.process = None
        wall = time.perf_counter() - start
        if line is None:
            return _failed(f"time limit: stopped after {time_limit_s:g} s (point_time_limit_s in the sweep file)",
                           wall)
        return _failed(f"the point's process ended unexpectedly (exit status {process.returncode})", wall)
    return json.loads(line)


def _start_point_process():
    import subprocess

    command = [sys.executable, "-c", "from solver.sweep import serve_points; serve_points()"]
    try:
        process = subprocess.Popen(command, stdin=subprocess.PIPE, stdout=subprocess.PIPE,
                                   stderr=subprocess.DEVNULL, cwd=os.getcwd())
    except OSError as error:
        return f"could not start a process for the point ({error.strerror or error})"
    if _read_line(process, POINT_START_S) != b"ready\n":
        _stop_point_process(process)
        return f"the point's process did not start within {POINT_START_S:g} s"
    if not _ALL_POINT_PROCESSES:
        import atexit

        atexit.register(_close_point_processes)
    _ALL_POINT_PROCESSES[:] = [p for p in _ALL_POINT_PROCESSES if p.poll() is None] + [process]
    return process


def _read_line(process, timeout_s: float) -> bytes | None:
    """One line from the process's stdout: b"" when it closed it, None when the time ran out."""
    import select

    fd = process.stdout.fileno()
    buffer = getattr(process, "_bearbound_buffer", b"")
    deadline = time.monotonic() + timeout_s
    while b"\n" not in buffer:
        left = deadline - time.monotonic()
        if left <= 0:
            return None
        ready, _, _ = select.select([fd], [], [], min(left, 1.0))
        if ready:
            chunk = os.read(fd, 1 << 16)
            if not chunk:
                process.wait()
                return b""
            buffer += chunk
    line, _, rest = buffer.partition(b"\n")
    process._bearbound_buffer = rest
    return line + b"\n"


def _stop_point_process(process) -> None:
    if process.poll() is None:
        process.kill()
    process.wait()
    for stream in (process.stdin, process.stdout):
        with contextlib.suppress(OSError):
            stream.close()


def serve_points() -> None:
    """The point process: read a point per line on stdin, write its record per line on
    stdout, until stdin closes or the parent (the worker) is gone."""
    import warnings

    out = os.fdopen(os.dup(1), "wb")
    os.dup2(2, 1)  # anything a library prints goes to stderr, never into the records
    warnings.simplefilter("ignore")  # a point's library warnings reach no terminal (stderr is closed)
    parent = os.getppid()

    def orphaned() -> None:
        while os.getppid() == parent:
            time.sleep(1.0)
        os._exit(1)

    threading.Thread(target=orphaned, daemon=True).start()
    from . import analysis  # noqa: F401  the heavy imports, before saying ready

    out.write(b"ready\n")
    out.flush()
    for line in sys.stdin.buffer:
        request = json.loads(line)
        record = solve_point(request["case"], request["name"])
        out.write(json.dumps(json_safe(record), allow_nan=False).encode("utf-8") + b"\n")
        out.flush()


# -- running the sweep ----------------------------------------------------------

def local_cluster(workers: int | None = None):
    """A LocalCluster of worker processes, one thread each, on loopback only, no dashboard.

    ``workers`` defaults to the number of cores.
    """
    import logging

    import dask
    from distributed import LocalCluster

    workers = workers or os.cpu_count() or 1
    # worker-saturation 1.0: a worker holds only the point it is solving, so points are
    # handed out as workers free up (points take seconds each; no queue to balance).
    with dask.config.set({"distributed.scheduler.worker-saturation": 1.0}), _workers_ignore_ctrl_c():
        return LocalCluster(n_workers=workers, threads_per_worker=1, processes=True,
                            host="127.0.0.1", dashboard_address=None, worker_dashboard_address=None,
                            # The scheduler keeps a small HTTP server (health, metrics) even with
                            # no dashboard; bind it to loopback on a free port, not the default 8787.
                            scheduler_kwargs={"dashboard": False, "dashboard_address": "127.0.0.1:0"},
                            env=dict(WORKER_ENV), silence_logs=logging.ERROR)


@contextlib.contextmanager
def _workers_ignore_ctrl_c():
    """Start worker processes with SIGINT ignored (inherited through spawn): Ctrl-C in the
    terminal reaches the whole process group, and the workers would each print a
    traceback; this process catches it and shuts them down instead."""
    if threading.current_thread() is not threading.main_thread():
        yield
        return
    previous = signal.signal(signal.SIGINT, signal.SIG_IGN)
    try:
        yield
    finally:
        signal.signal(signal.SIGINT, previous)


def _connect(scheduler: str):
    from distributed import Client

    if not isinstance(scheduler, str) or "://" not in scheduler or not scheduler.isprintable():
        raise _not_allowed("--scheduler", scheduler, "a scheduler address such as tcp://127.0.0.1:8786")
    try:
        return Client(scheduler, timeout="10s", set_as_default=False)
    except (OSError, TimeoutError, ValueError) as error:
        reason = " ".join(str(error).split())[:200]
        raise CaseError(f"--scheduler: cannot connect to {scheduler} ({reason}); must be the address of "
                        "a running dask scheduler that you control") from None


def points_folder(out_dir: pathlib.Path) -> pathlib.Path:
    return pathlib.Path(out_dir) / "points"


def _stored(out_dir: pathlib.Path, point: Point) -> dict | None:
    """The stored record of a point solved earlier (certified or withheld), if its case matches."""
    path = points_folder(out_dir) / f"{point.sha256}.json"
    try:
        record = json.loads(path.read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return None
    if not isinstance(record, dict) or record.get("case") != point.case_dict \
            or record.get("status") not in (CERTIFIED, WITHHELD):
        return None  # missing, foreign, or failed last time: solve again
    return record


def _store(out_dir: pathlib.Path, point: Point, record: dict) -> dict:
    full = {"sha256": point.sha256, "values": point.values, "case": point.case_dict, **record,
            "software": {"name": "bearbound", "version": __version__}, "caution": CAUTION}
    write_atomic(points_folder(out_dir) / f"{point.sha256}.json",
                 json.dumps(json_safe(full), indent=1) + "\n")
    return full


def run_sweep(sweep: Sweep, out_dir: str | pathlib.Path, *, scheduler: str | None = None,
              workers: int | None = None, client=None, progress: bool = True) -> SweepOutcome:
    """Solve every point not already stored under ``out_dir``, then write sweep.csv and the chart.

    Parameters
    ----------
    sweep : Sweep
    out_dir : path
        Output folder: ``points/`` (one JSON per point), ``sweep.csv``, ``chart.png``/``.svg``.
    scheduler : str, optional
        Address of a running dask scheduler; default: a local cluster on loopback.
    workers : int, optional
        Worker processes of the local cluster (default: one per core).
    client : distributed.Client, optional
        Use this client (and its cluster) instead; it is left open.
    progress : bool
        Show a progress bar on stderr.
    """
    start = time.perf_counter()
    out_dir = pathlib.Path(out_dir)
    records: dict[str, dict] = {}
    to_run: dict[str, Point] = {}
    for point in sweep.points:
        if point.error is not None or point.sha256 in records or point.sha256 in to_run:
            continue
        stored = _stored(out_dir, point)
        if stored is not None:
            records[point.sha256] = stored
        else:
            to_run[point.sha256] = point
    reused = len(records)
    startup_s, threads = 0.0, 0
    # matplotlib takes a fraction of a second to import; load it while the points run
    preload = threading.Thread(target=_import_matplotlib, daemon=True)
    preload.start()
    if to_run:
        points_folder(out_dir).mkdir(parents=True, exist_ok=True)
        own_client = client is None
        cluster = None
        t0 = time.perf_counter()
        if own_client:
            if scheduler is not None:
                client = _connect(scheduler)
            else:
                from distributed import Client

                cluster = local_cluster(min(workers or os.cpu_count() or 1, len(to_run)))
                client = Client(cluster, set_as_default=False)
        startup_s = time.perf_counter() - t0
        try:
            threads = sum(w["nthreads"] for w in client.scheduler_info()["workers"].values())
            _solve_all(client, to_run, out_dir, records, threads, progress, sweep.name, sweep.point_time_limit_s)
        finally:
            if own_client:
                client.close()
                if cluster is not None:
                    cluster.close()
    ordered = []
    for point in sweep.points:
        if point.error is not None:
            ordered.append({"sha256": point.sha256, "values": point.values, "case": None, "status": FAILED,
                            "reason": f"bad combination: {point.error}", "lower_kPa": None,
                            "upper_kPa": None, "gap_percent": None, "wall_s": 0.0, "result": None})
        else:
            ordered.append({**records[point.sha256], "values": point.values})
    out_dir.mkdir(parents=True, exist_ok=True)
    preload.join()
    files = [write_csv(sweep, ordered, out_dir / "sweep.csv")]
    files += write_charts(sweep, ordered, out_dir)
    return SweepOutcome(records=ordered, ran=len(to_run), reused=reused,
                        wall_s=time.perf_counter() - start, startup_s=startup_s, workers=threads, files=files)


def _import_matplotlib() -> None:
    import matplotlib.figure  # noqa: F401
    import matplotlib.lines  # noqa: F401


def _solve_all(client, to_run: dict[str, Point], out_dir: pathlib.Path, records: dict[str, dict],
               threads: int, progress: bool, name: str, time_limit_s: float) -> None:
    """Submit one task per point; store each record the moment it arrives."""
    from distributed import as_completed
    from tqdm import tqdm

    futures = {client.submit(solve_point_limited, point.case_dict, f"{name}-{point.index}", time_limit_s,
                             key=f"bearbound-point-{sha}", pure=False, retries=0): sha
               for sha, point in to_run.items()}
    done = failed = 0
    bar = tqdm(total=len(futures), desc="points", unit="pt", file=sys.stderr, disable=not progress,
               dynamic_ncols=True)
    bar.set_postfix_str(f"done 0, failed 0, running {min(threads, len(futures))}")
    try:
        for future in as_completed(futures, loop=client.loop):
            sha = futures[future]
            if future.status == "finished":
                record = future.result()
            else:  # the worker died or the task could not run: recorded, not fatal
                error = future.exception()
                record = _failed(shown(f"{type(error).__name__}: {' '.join(str(error).split())}", 500), None)
            records[sha] = _store(out_dir, to_run[sha], record)
            done += record["status"] != FAILED
            failed += record["status"] == FAILED
            remaining = len(futures) - done - failed
            bar.set_postfix_str(f"done {done}, failed {failed}, running {min(threads, remaining)}",
                                refresh=False)
            bar.update(1)
    except BaseException:
        for future in futures:
            future.cancel()
        raise
    finally:
        bar.close()


# -- outputs ---------------------------------------------------------------------

def csv_columns(sweep: Sweep) -> list[str]:
    return (["point"] + [p.key for p in sweep.parameters]
            + ["lower_kPa", "upper_kPa", "gap_percent", "status", "wall_s", "reason", "case_sha256"])


def write_csv(sweep: Sweep, records: list[dict], path: pathlib.Path) -> pathlib.Path:
    """sweep.csv: one row per point; numbers in full precision (Python's repr), empty when none."""
    def cell(value):
        return "" if value is None else repr(value) if isinstance(value, float) else value

    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\n")
    writer.writerow(csv_columns(sweep))
    for index, record in enumerate(records):
        writer.writerow([index] + [cell(record["values"][p.key]) for p in sweep.parameters]
                        + [cell(record["lower_kPa"]), cell(record["upper_kPa"]), cell(record["gap_percent"]),
                           record["status"], "" if record["wall_s"] is None else f"{record['wall_s']:.3f}",
                           record["reason"], record["sha256"]])
    write_atomic(path, buffer.getvalue())
    return path


def _axis_label(label: str, unit: str) -> str:
    return f"{label} ({unit})" if unit else label


def _output_label(chart: ChartSpec) -> str:
    words, unit = OUTPUTS[chart.output]
    unit = chart.load_unit if chart.output == "load" else unit
    if chart.divide_by is None:
        return _axis_label(words, unit)
    other = chart.divide_by.unit
    ratio = "-" if other == unit else f"{unit} per {other}" if other else unit
    return _axis_label(f"{words} / {chart.divide_by.label}", ratio)


def _value_text(value: Any, unit: str) -> str:
    text = f"{value:g}" if isinstance(value, float) else str(value)
    return f"{text} {unit}" if unit else text


def write_charts(sweep: Sweep, records: list[dict], out_dir: pathlib.Path) -> list[pathlib.Path]:
    """The chosen output against chart.x, one lower-upper band per value of chart.lines.

    With more varied keys than those two, one chart per combination of the rest
    (``chart-1.png``, ...; at most MAX_CHARTS). Failed points leave a gap.
    """
    chart = sweep.chart
    params = sweep.parameter
    rest = [p for p in sweep.parameters if p.key not in (chart.x, chart.lines)]
    groups: dict[tuple, list[dict]] = {}
    for record in records:
        groups.setdefault(tuple(record["values"][p.key] for p in rest), []).append(record)
    if len(groups) > MAX_CHARTS:
        return []
    files = []
    for number, (fixed, group) in enumerate(groups.items(), 1):
        subtitle = ", ".join(f"{p.label} = {_value_text(v, p.unit)}" for p, v in zip(rest, fixed))
        stem = "chart" if len(groups) == 1 else f"chart-{number}"
        files += _draw_chart(sweep, group, params, out_dir, stem, subtitle)
    return files


# Each band differs in print without colour too: its own marker and its own hatch on the fill.
BAND_MARKERS = ("o", "s", "^", "D", "v", "P", "X", "*", "<", ">")
BAND_HATCHES = ("", "////", "\\\\", "...", "xx", "||", "--", "++", "oo", "**")


def _draw_chart(sweep: Sweep, records: list[dict], params: dict[str, Parameter], out_dir: pathlib.Path,
                stem: str, subtitle: str) -> list[pathlib.Path]:
    from matplotlib import rc_context

    from .pictures import missing_glyphs_quiet

    chart = sweep.chart
    figure = chart_figure(sweep, records, params, subtitle)
    files = []
    for fmt in chart.formats:
        path = out_dir / f"{stem}.{fmt}"
        tmp = out_dir / f".{stem}.{fmt}.tmp"
        try:
            with rc_context({"svg.fonttype": "none", "svg.hashsalt": "bearbound"}), missing_glyphs_quiet():
                figure.savefig(tmp, format=fmt, dpi=150)  # SVG text stays text
            os.replace(tmp, path)
        finally:
            tmp.unlink(missing_ok=True)
        files.append(path)
    return files


def chart_figure(sweep: Sweep, records: list[dict], params: dict[str, Parameter], subtitle: str = ""):
    """The chart of one group of points: a lower-upper band per value of chart.lines, each with its
    own colour, marker and hatch (so that the bands differ in grey print), the upper bound solid
    and the lower bound dashed, crosses on the x axis where a point has no result."""
    from matplotlib.figure import Figure
    from matplotlib.lines import Line2D
    from matplotlib.patches import Patch

    chart = sweep.chart
    x_param = params[chart.x]
    line_param = params[chart.lines] if chart.lines else None
    line_values = line_param.values if line_param else (None,)
    figure = Figure(figsize=(7.0, 4.8), layout="constrained")
    axes = figure.add_subplot()
    colours = [f"C{i % 10}" for i in range(len(line_values))]
    no_result = False
    bands: list[tuple] = []
    for index, (value, colour) in enumerate(zip(line_values, colours)):
        marker = BAND_MARKERS[index % len(BAND_MARKERS)]
        hatch = BAND_HATCHES[index % len(BAND_HATCHES)]
        rows = [r for r in records if line_param is None or r["values"][chart.lines] == value]
        rows.sort(key=lambda r: r["values"][chart.x])
        x = np.array([r["values"][chart.x] for r in rows], dtype=float)
        lower, upper = (np.array([_chart_value(r, side, chart) for r in rows], dtype=float)
                        for side in ("lower", "upper"))
        label = "" if line_param is None else f"{line_param.label} = {_value_text(value, line_param.unit)}"
        band = np.isfinite(lower) & np.isfinite(upper)
        axes.fill_between(x, lower, upper, where=band, facecolor=colour, alpha=0.25, linewidth=0,
                          interpolate=False)
        if hatch:  # the hatch opaque, over the translucent fill
            axes.fill_between(x, lower, upper, where=band, facecolor="none", edgecolor=colour, hatch=hatch,
                              linewidth=0, interpolate=False)
        axes.plot(x, upper, "-", marker=marker, markersize=4, color=colour)
        if label:  # the band's entry: its fill and hatch, and its marker
            bands.append(((Patch(facecolor=colour, alpha=0.25, edgecolor="none"),
                           Patch(facecolor="none", edgecolor=colour, hatch=hatch, linewidth=0),
                           Line2D([], [], color=colour, marker=marker, markersize=4)), label))
        axes.plot(x, lower, "--", marker=marker, markersize=4, color=colour, markerfacecolor="white")
        failed = ~(np.isfinite(lower) | np.isfinite(upper))
        if failed.any():  # drawn on the x axis, so that a missing point is seen, not guessed
            axes.plot(x[failed], np.zeros(failed.sum()), "x", color=colour, markersize=7, clip_on=False)
            no_result = True
    # One entry per band, then what the line styles and crosses mean.
    styles = [Line2D([], [], color="k", linestyle="-", marker="o", label="upper bound (filled markers)"),
              Line2D([], [], color="k", linestyle="--", marker="o", markerfacecolor="white",
                     label="lower bound (open markers)")]
    if no_result:
        styles.append(Line2D([], [], color="k", marker="x", linestyle="none", label="no result (see sweep.csv)"))
    axes.legend(handles=[h for h, _ in bands] + styles, labels=[t for _, t in bands] + [h.get_label() for h in styles],
                fontsize=7.5, loc="best")
    axes.set_xlabel(_axis_label(x_param.label, x_param.unit))
    axes.set_ylabel(_output_label(chart))
    axes.set_title(chart.title + (f"\n{subtitle}" if subtitle else ""), fontsize=10)
    axes.grid(True, alpha=0.3)
    axes.set_ylim(bottom=0)
    figure.text(0.01, 0.005, "Shaded: the bracket between the lower and upper bound. " + CAUTION,
                fontsize=5.5, wrap=True, va="bottom")
    figure.get_layout_engine().set(rect=(0, 0.05, 1, 0.95))
    return figure


def _chart_value(record: dict, side: str, chart: ChartSpec) -> float:
    pressure = record[f"{side}_kPa"]
    if pressure is None:
        return math.nan
    value = pressure
    if chart.output == "load":  # over B (kN/m), or a circle's area pi B^2/4 (kN)
        footing = record["case"]["footing"]
        width = footing["width"]
        value = pressure * (width if footing.get("shape", "strip") == "strip" else math.pi * width ** 2 / 4)
    if chart.divide_by is not None:
        value /= _get_key(record["case"], chart.divide_by.key)
    return value


def format_outcome(sweep: Sweep, outcome: SweepOutcome, max_listed: int = 10) -> str:
    """A few lines for the terminal: counts, the points without a certified bracket, files."""
    records = outcome.records
    lines = [f"{sweep.title}",
             f"  {len(records)} points: {outcome.count(CERTIFIED)} certified, {outcome.count(WITHHELD)} "
             f"withheld, {outcome.count(FAILED)} failed; solved now {outcome.ran}, "
             f"kept from an earlier run {outcome.reused}",
             f"  wall time {outcome.wall_s:.1f} s ({outcome.workers} worker threads; "
             f"cluster start {outcome.startup_s:.1f} s)"]
    unsure = [(i, r) for i, r in enumerate(records) if r["status"] != CERTIFIED]
    for index, record in unsure[:max_listed]:
        lines.append(f"  point {index} ({_values_text(record['values'])}): {record['status']}: {record['reason']}")
    if len(unsure) > max_listed:
        lines.append(f"  ... and {len(unsure) - max_listed} more (see sweep.csv)")
    lines += [f"  written: {path}" for path in outcome.files]
    lines.append(f"  Caution: {CAUTION}")
    return "\n".join(lines)
