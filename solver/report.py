"""The report: out/<case>/report.html, one self-contained, printable file.

It is built from the files a run leaves (result.json, case.toml, fields.vtu),
never from the solver's memory, so ``bearbound report out/<case>`` rebuilds
it without solving. Pictures are embedded as PNG data; the page loads nothing
from the network (its Content-Security-Policy forbids it) and runs no script.

Every string that comes from the case file or from result.json (title, layer
names, notes, statuses) is HTML-escaped: a case file is data, and a report
must never run what someone typed into it.
"""
from __future__ import annotations

import base64
import html
import json
import math
from dataclasses import dataclass, field, replace
from pathlib import Path

from .case import CaseError, shown
from .export import (CASE_COPY, FIELDS_FILE, BoundFields, bound_fields, read_fields_vtu, read_regular_bytes,
                     save_case_copy, save_site_copy, write_bytes_atomic, write_fields_vtu, write_summary_csv)
from .model import Case
from .result import (CAUTION, WallClock, caveats, design_load_of, figure, refinement_line, wall_time_line,
                     write_result)

REPORT_FILE = "report.html"


class ReportError(ValueError):
    """A finished run's folder that cannot be reported: one line naming the file and why."""


@dataclass
class Run:
    """A finished run as read back from its folder."""

    out_dir: Path
    data: dict  # result.json
    case: Case
    fields: dict[str, BoundFields] = field(default_factory=dict)
    missing: list[str] = field(default_factory=list)  # files the report had to do without


def _load_case_copy(case_path: Path, out_dir: Path):
    """The copied case, with a drawn site's file taken from the run folder's copy
    (its own path may be relative to where the case file was)."""
    import hashlib
    import tomllib

    from .case import parse_case
    from .export import SITE_COPY

    raw = read_regular_bytes(case_path)
    data = tomllib.loads(raw.decode("utf-8-sig"))
    site = sorted(out_dir.glob(SITE_COPY + ".*"))
    if isinstance(data.get("geometry"), dict) and site:
        data["geometry"]["file"] = site[0].name
    return parse_case(data, name=case_path.stem, source_sha256=hashlib.sha256(raw).hexdigest(),
                      base_dir=out_dir)


def load_run(out_dir: Path) -> Run:
    """Read result.json, case.toml and (when present) fields.vtu from a run's folder.

    Raises ReportError when result.json or case.toml is missing or unreadable, or when
    case.toml does not hash to the case recorded in result.json.
    """
    out_dir = Path(out_dir)
    if not out_dir.is_dir():
        raise ReportError(f"{shown(out_dir, 200)}: no such folder; give the output folder of a finished run "
                          "(out/<case>)")
    result_path = out_dir / "result.json"
    try:
        data = json.loads(read_regular_bytes(result_path).decode("utf-8"))
    except FileNotFoundError:
        raise ReportError(f"{shown(result_path, 200)}: missing; run `bearbound run <case file>` first") from None
    except (OSError, UnicodeDecodeError, json.JSONDecodeError) as exc:
        raise ReportError(f"{shown(result_path, 200)}: not a readable result "
                          f"({shown(' '.join(str(exc).split()), 200)})") from None
    if not isinstance(data, dict) or not isinstance(data.get("case"), dict):
        raise ReportError(f"{shown(result_path, 200)}: not a bearbound result (no 'case' table)")
    case_path = out_dir / CASE_COPY
    if not case_path.is_file():
        raise ReportError(f"{shown(case_path, 200)}: missing; the report restates the inputs from this copy of "
                          "the case file")
    try:
        case = _load_case_copy(case_path, out_dir)
    except CaseError as error:
        raise ReportError(f"{shown(case_path, 200)}: {error}") from None
    except (OSError, UnicodeDecodeError, ValueError) as exc:  # unreadable, not UTF-8, not TOML (edited by hand)
        raise ReportError(f"{shown(case_path, 200)}: not a readable case file "
                          f"({shown(' '.join(str(exc).split()), 200)})") from None
    if case.source_sha256 != data["case"].get("sha256"):
        raise ReportError(f"{shown(case_path, 200)}: its SHA-256 differs from the case recorded in result.json; "
                          "the report would restate other inputs than those solved")
    case = replace(case, name=str(data["case"].get("name", case.name)))
    run = Run(out_dir=out_dir, data=data, case=case)
    fields_path = out_dir / FIELDS_FILE
    if fields_path.is_file():  # a regular file only: meshio would wait for ever on a FIFO
        try:
            run.fields = read_fields_vtu(fields_path)
        except Exception as exc:  # a damaged export loses the pictures, not the report
            run.missing.append(f"{FIELDS_FILE} could not be read ({type(exc).__name__}); no field pictures")
    else:
        run.missing.append(f"{FIELDS_FILE} is missing; no field pictures")
    return run


def write_run_files(result, case: Case, case_path: Path, out_dir: Path, *, pictures: bool = True,
                    report: bool = True, progress=None, clock: WallClock | None = None) -> list[Path]:
    """After result.json: the case copy, fields.vtu, the pictures and the report (read back
    from those files), then summary.csv. Returns the paths written, result.json first.

    ``progress``: a :class:`solver.progress.Progress` told of each picture and of the
    report. ``clock``: the command's :class:`~solver.result.WallClock`; the pictures and
    the report are timed on it, and result.json is written again with the whole split
    (``wall_time_s``) before summary.csv and the report, which state it too."""
    from . import pictures as drawing

    out_dir = Path(out_dir)
    written = [out_dir / "result.json", save_case_copy(case_path, case.source_sha256, out_dir)]
    site = save_site_copy(getattr(case, "geometry", None), out_dir)
    written += [site] if site else []
    vtu = write_fields_vtu(bound_fields(result.lower), bound_fields(result.upper), out_dir)
    written += [vtu] if vtu else []
    timed = clock is not None
    clock = clock or WallClock()
    run = images = None
    if pictures or report:
        run = load_run(out_dir)
        with clock.part("pictures"):
            figures = drawing.draw_all(run.case, run.data, run.fields, progress)
            if pictures:
                written += drawing.write_pictures(figures, out_dir, progress)
        if report:
            if progress is not None:
                progress.stage("writing the report")
            with clock.part("report"):
                images = _embedded(figures)
                build_html(run, images)  # timed as the report is; built again below with the times in it
    if timed:
        result.wall_time_s = clock.split()
        write_result(result, out_dir)
    data = json.loads((out_dir / "result.json").read_text(encoding="utf-8"))
    written.append(write_summary_csv(data, out_dir))
    if report:
        run.data = data
        path = out_dir / REPORT_FILE
        write_bytes_atomic(path, build_html(run, images).encode("utf-8"))
        written.append(path)
    return written


def rebuild_report(out_dir: Path) -> Path:
    """``bearbound report``: the report again from a finished run's files, without solving."""
    from . import pictures as drawing

    run = load_run(out_dir)
    return write_report(run, drawing.draw_all(run.case, run.data, run.fields))


def write_report(run: Run, figures: dict) -> Path:
    """Write out_dir/report.html (atomically) with the figures embedded as PNG."""
    path = run.out_dir / REPORT_FILE
    write_bytes_atomic(path, build_html(run, _embedded(figures)).encode("utf-8"))
    return path


def _embedded(figures: dict) -> dict[str, bytes]:
    """The figures as PNG bytes, for embedding in the page."""
    from .pictures import figure_bytes

    return {name: figure_bytes(fig, "png") for name, fig in figures.items()}


# -- HTML ---------------------------------------------------------------------------

def esc(value) -> str:
    """HTML-escaped text (quotes too, so it is safe in attributes); control and format
    characters (escape codes, text-direction overrides) written as escapes, line breaks kept.

    >>> esc('<script>alert("x")</script>')
    '&lt;script&gt;alert(&quot;x&quot;)&lt;/script&gt;'
    >>> print(esc("a\\u202eb"))
    a\u202eb
    """
    text = "" if value is None else str(value)
    if not text.isprintable():
        text = "\n".join(shown(line, len(line) * 10 + 3) for line in text.split("\n"))
    return html.escape(text, quote=True)


def num(value, digits: int = 1, unit: str = "") -> str:
    """A number for the report (escaped), or a dash when there is none."""
    if value is None or (isinstance(value, float) and not math.isfinite(value)):
        return "&mdash;"
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        return esc(value)
    text = figure(value, digits, thousands=True) if isinstance(value, float) else f"{value:,d}"
    return esc(text) + ("&#8201;" + esc(unit) if unit else "")


def _percent(fraction) -> str:
    return "?" if fraction is None else f"{100 * fraction:g} %"


def sci(value) -> str:
    return "&mdash;" if value is None else esc(f"{value:.3g}")


STYLE = """
:root { color-scheme: light; }
body { font-family: "DejaVu Sans", "Liberation Sans", Arial, sans-serif; font-size: 10.5pt; color: #111;
       max-width: 190mm; margin: 12mm auto; padding: 0 6mm; line-height: 1.38; }
h1 { font-size: 17pt; margin: 0 0 2mm 0; }
h2 { font-size: 12.5pt; margin: 7mm 0 2mm 0; border-bottom: 1.5px solid #444; padding-bottom: 1mm; }
h3 { font-size: 11pt; margin: 4mm 0 1.5mm 0; }
.sub { color: #333; margin: 0 0 1.5mm 0; }
.meta { font-size: 9.5pt; margin: 0 0 3mm 0; }
.meta span { margin-right: 5mm; white-space: nowrap; }
table { border-collapse: collapse; margin: 1.5mm 0 3mm 0; width: 100%; }
thead { display: table-header-group; }
tr, figure, img, .verdict, li { page-break-inside: avoid; break-inside: avoid; }
th, td { border: 1px solid #999; padding: 1mm 1.8mm; text-align: left; vertical-align: top; }
th { background: #e8e8e8; font-weight: 600; }
td.n { text-align: right; white-space: nowrap; font-variant-numeric: tabular-nums; }
table.meta td:first-child, table.kv td:first-child { width: 38%; background: #f4f4f4; }
.caution { border: 2.5px solid #111; padding: 2.5mm 3.5mm; margin: 3mm 0; background: #f2f2f2;
           page-break-inside: avoid; break-inside: avoid; }
.caution strong { letter-spacing: 0.02em; }
.result { display: flex; gap: 4mm; border: 2px solid #111; padding: 3mm 3.5mm; margin: 2mm 0 3mm 0;
          page-break-inside: avoid; break-inside: avoid; }
.result > div { flex: 1 1 0; min-width: 0; }
.result .figures { flex: 1.1 1 0; }
.result .caveats { border-left: 1.5px solid #444; padding-left: 3.5mm; }
.result ul { margin: 1mm 0 0 0; }
.result .big { font-size: 15pt; font-weight: 700; }
tr.flag td { font-weight: 700; background: #dcdcdc; border-top: 2px solid #111; border-bottom: 2px solid #111; }
.flagmark { font-weight: 700; }
.small { font-size: 8.5pt; color: #333; }
.pass { font-weight: 700; }
.fail { font-weight: 700; text-decoration: underline; }
.verdict { font-weight: 700; border-left: 4px solid #111; padding-left: 2.5mm; }
.keep { page-break-inside: avoid; break-inside: avoid; }
figure { margin: 3mm 0 5mm 0; }
figure img { width: 100%; height: auto; border: 1px solid #ccc; }
figcaption { font-size: 9pt; color: #222; margin-top: 1mm; }
code, .hash { font-family: "DejaVu Sans Mono", "Liberation Mono", monospace; font-size: 8.5pt; word-break: break-all; }
ul { margin: 1mm 0 3mm 0; padding-left: 6mm; }
footer { margin-top: 2mm; font-size: 8pt; color: #333; border-top: 1px solid #999; padding-top: 1.5mm; }
/* Printed: A4, numbered pages where the browser supports page-margin boxes (README, "The report
   on paper"); no forced page breaks, so that no page is left half empty: figures, table rows,
   short tables and the result box are kept whole, long tables break between rows, and a heading
   stays with what follows it. */
@page { size: A4; margin: 14mm 12mm 16mm 12mm;
        @bottom-right { content: "page " counter(page) " of " counter(pages); font: 8pt "DejaVu Sans", Arial, sans-serif; color: #333; }
        @bottom-left { content: "bearbound report"; font: 8pt "DejaVu Sans", Arial, sans-serif; color: #333; } }
@media print {
  body { margin: 0; padding: 0; max-width: none; font-size: 9.5pt; }
  h2, h3 { page-break-after: avoid; break-after: avoid; }
  figure img { max-height: 118mm; width: auto; max-width: 100%; }  /* two field pictures to a page */
  figure.model img { max-height: 225mm; }
  th, tr.flag td, .caution, .result { -webkit-print-color-adjust: exact; print-color-adjust: exact; }
}
"""

CSP = "default-src 'none'; img-src data:; style-src 'unsafe-inline'; base-uri 'none'; form-action 'none'"


def build_html(run: Run, images: dict[str, bytes]) -> str:
    """The report page as one string (see the module docstring)."""
    d, case = run.data, run.case
    # result.json of an earlier version has no caveats: they are worked out from what it holds
    limits = d["caveats"] if "caveats" in d else caveats(case, d)
    parts = [
        "<!DOCTYPE html>", '<html lang="en">', "<head>", '<meta charset="utf-8">',
        f'<meta http-equiv="Content-Security-Policy" content="{CSP}">',
        '<meta name="viewport" content="width=device-width, initial-scale=1">',
        f"<title>{esc(d.get('title'))} &ndash; bearbound report</title>",
        f"<style>{STYLE}</style>", "</head>", "<body>",
        f"<h1>{esc(d.get('title'))}</h1>",
        f'<p class="sub">{esc(subtitle(limits, d.get("footing_shape", "strip")))}</p>',
        _meta_line(d, case),
        _result_box(d, case, limits),
        _caution(),
        _warnings(d),
        _identity(d, case),
        _bracket(d, case),
        _safety(d, case),
        _hand(d),
        _pictures(run, images),
        _inputs(case, d),
        _certificates(d),
        _statistics(d, run),
        _notes(run),
        _caution(final=True, footer=f"bearbound {esc(d.get('software', {}).get('version'))}; case file SHA-256 "
                 f'<span class="hash">{esc(d["case"].get("sha256"))}</span>. Pressures and loads are compression '
                 "positive; pressure = vertical component of the collapse load / B."),
        "</body>", "</html>",
    ]
    return "\n".join(parts) + "\n"


def subtitle(limits: list[str], shape: str = "strip") -> str:
    """What the page brackets; "rigorous" only when nothing limits the bounds (:func:`caveats`).

    >>> subtitle([])
    'Strip footing: collapse load bracketed by finite-element limit analysis (rigorous lower and upper bounds)'
    >>> subtitle(["the upper bound is withheld"], "circular")
    'Circular footing: collapse load bracketed by finite-element limit analysis (lower and upper bounds, with 1 caveat beside the bracket)'
    """
    head = f"{shape.capitalize()} footing: collapse load bracketed by finite-element limit analysis"
    if not limits:
        return head + " (rigorous lower and upper bounds)"
    return head + f" (lower and upper bounds, with {len(limits)} caveat{'s' * (len(limits) > 1)} beside the bracket)"


def run_date_text(stamp: str | None) -> str:
    """The run's date and time as people read it, with its offset from UTC.

    >>> run_date_text("2025-03-04T09:05:00+01:00"), run_date_text(None)
    ('2025-03-04 09:05 (UTC+01:00)', 'not recorded (a result of an earlier version)')
    """
    import datetime

    if not stamp:
        return "not recorded (a result of an earlier version)"
    try:
        when = datetime.datetime.fromisoformat(stamp)
    except (TypeError, ValueError):
        return str(stamp)
    offset = when.strftime("%z")
    zone = f" (UTC{offset[:3]}:{offset[3:]})" if offset else ""
    return when.strftime("%Y-%m-%d %H:%M") + zone


def _given(value: str | None) -> str:
    return esc(value) if value else '<span class="small">not given</span>'


def _meta_line(d: dict, case: Case) -> str:
    """Project, checker and run date under the title: what a filed copy is looked up by."""
    info = case.report
    return ('<p class="meta">'
            f"<span><strong>Project:</strong> {_given(info and info.project)}</span>"
            f"<span><strong>Checked by:</strong> {_given(info and info.checked_by)}</span>"
            f"<span><strong>Run:</strong> {esc(run_date_text(d.get('run_date')))}</span></p>")


def _result_box(d: dict, case: Case, limits: list[str]) -> str:
    """The bracket and the verdicts beside what limits trust in them, at the top of the page."""
    lower, upper = d.get("lower") or {}, d.get("upper") or {}
    lo, up = lower.get("pressure_kPa"), upper.get("pressure_kPa")
    area, unit, size = _footing_measure(d)
    if lo is not None and up is not None:
        head = (f'Collapse pressure <span class="big">{num(lo)} to {num(up)} kPa</span><br>'
                f"gap {num(d.get('gap_percent'), 2)} %; collapse load {num(lo * area)} to {num(up * area)} {unit} "
                f"(vertical, {size})")
    else:
        sides = [f"{kind} bound {num(b.get('pressure_kPa'))} kPa" for kind, b in (("lower", lower), ("upper", upper))
                 if b.get("pressure_kPa") is not None]
        head = "<strong>No complete bracket.</strong> " + (esc("; ".join(sides)) if sides else "No bound certified.")
    fos = d.get("factor_of_safety") or {}
    checks = fos.get("checks") or []
    design = _design_load_text(d, case)
    verdicts = (f"<br>Design load {design}" if design else "") + \
        "".join(f'<p class="verdict">{esc(c.get("verdict"))}</p>' for c in checks)
    if limits:
        right = (f"<strong>Read before using these numbers ({len(limits)}):</strong><ul>"
                 + "".join(f"<li>{esc(c)}</li>" for c in limits) + "</ul>")
    else:
        right = ("<strong>No caveats:</strong> both bounds certified on the soil as given (associated flow), "
                 f"the gap within the {esc(f'{100 * case.analysis.target_gap:g}')} % target, both fields clear of "
                 "the model's edges, no water above the footing base.")
    return (f'<div class="result"><div class="figures">{head}{verdicts}</div>'
            f'<div class="caveats">{right}</div></div>')


def _caution(final: bool = False, footer: str = "") -> str:
    """The caution box; the last one says more and carries the page's footer (``footer``, HTML),
    so that the two print together."""
    extra = ("" if not final else
             " The inputs (strengths, unit weights, layer thicknesses) govern the answer more than the method "
             "does; the bounds bracket the collapse load of the idealised problem, not of the ground.")
    foot = f"<footer>{footer}</footer>" if footer else ""
    return f'<div class="caution"><strong>Caution.</strong> {esc(CAUTION)}{esc(extra)}{foot}</div>'


def _warnings(d: dict) -> str:
    """The plausibility warnings (solver.plausible): values allowed but unusual, near the top."""
    warnings = d.get("input_warnings") or []
    if not warnings:
        return ""
    return ('<div class="caution"><strong>Check these inputs.</strong> They are allowed, and the run used them '
            "as given, but they are unusual for soils and footings:<ul>"
            + "".join(f"<li>{esc(w)}</li>" for w in warnings) + "</ul></div>")


def _identity(d: dict, case: Case) -> str:
    info = case.report
    rows = [("Project", _given(info and info.project)), ("Checked by", _given(info and info.checked_by)),
            ("Run made", esc(run_date_text(d.get("run_date")))),
            ("Case", esc(d["case"].get("name"))),
            ("Case file SHA-256", f'<span class="hash">{esc(d["case"].get("sha256"))}</span>'),
            ("Software", f"bearbound {esc(d.get('software', {}).get('version'))}"),
            ("Conic solver back end", esc(d.get("backend")))]
    if d.get("wall_time_s"):
        rows.append(("Wall time of the whole run", esc(wall_time_line(d["wall_time_s"]))))
    return _kv("Run", rows, heading_level=2)


KEEP_ROWS = 10  # a table of at most this many rows is printed whole, on one page


def _kv(title: str | None, rows: list[tuple[str, str]], heading_level: int = 3, cls: str = "kv") -> str:
    head = f"<h{heading_level}>{esc(title)}</h{heading_level}>" if title else ""
    body = "".join(f"<tr><td>{k}</td><td>{v}</td></tr>" for k, v in rows)
    keep = ' class="keep"' if len(rows) <= KEEP_ROWS else ""  # a long one may break between rows
    return f'<div{keep}>{head}<table class="{cls}">{body}</table></div>'


def _footing_measure(d: dict) -> tuple[float, str, str]:
    """What a pressure is multiplied by to give the load (m per m run, or m^2), the load's unit
    and the footing's size in words, for a strip or a circle."""
    B = d.get("footing_width_m")
    if d.get("footing_shape", "strip") == "strip":
        return B, "kN/m", f"B = {num(B, 2)} m"
    return math.pi * B ** 2 / 4, "kN", f"diameter {num(B, 2)} m"


def _design_load_text(d: dict, case: Case) -> str:
    """The design load as the report states it (HTML), '' when none: a strip's in kN/m, a
    circle's as the whole load in kN and as the pressure over pi B^2/4, so that neither is
    read in the other's unit."""
    fos = d.get("factor_of_safety") or {}
    design, unit, _ = design_load_of(fos)
    if design is None:
        return ""
    pressure = fos.get("design_pressure_kPa")
    if pressure is None:  # result.json of an earlier version: a strip's, vertical component / B
        pressure = design * math.cos(math.radians(case.footing.load_inclination)) / d["footing_width_m"]
    if unit == "kN/m":
        slant = (f", along the load's line of action ({num(case.footing.load_inclination, 1, 'degrees')} from "
                 "vertical)" if case.footing.load_inclination else "")
        return (f"<strong>{num(design)} kN/m</strong> per m run of the strip{slant}: "
                f"{num(pressure)} kPa vertical pressure over B = {num(d['footing_width_m'], 2, 'm')}")
    area, _, size = _footing_measure(d)
    return (f"<strong>{num(design)} kN</strong>, the whole vertical load on the circular footing ({size}): "
            f"<strong>{num(pressure)} kPa</strong> over its area &pi; B&sup2;/4 = {num(area, 2, 'm²')}")


def _bracket(d: dict, case: Case) -> str:
    lower, upper = d.get("lower") or {}, d.get("upper") or {}
    area, unit, size = _footing_measure(d)
    strip = unit == "kN/m"
    lo, up = lower.get("pressure_kPa"), upper.get("pressure_kPa")
    out = ["<h2>The bracket</h2>"]
    f = case.footing
    inclined = f.load_inclination != 0 or f.eccentricity != 0
    if lo is not None and up is not None:
        text = (f'<p>Collapse pressure under the footing: <strong>'
                f"{num(lo)} to {num(up)} kPa</strong> (gap {num(d.get('gap_percent'), 2)} %)<br>"
                f"{'Vertical collapse load' if inclined else 'Collapse load'}: {num(lo * area)} to {num(up * area)} "
                f"{unit}{' of footing' if unit == 'kN/m' else ''}, {size}")
        if inclined:
            ex_lo, ex_up = lower.get("extra") or {}, upper.get("extra") or {}
            text += (f"<br>The load along its line of action ({num(f.load_inclination, 1, 'degrees')} from "
                     f"vertical, through the base at e = {num(f.eccentricity, 3, 'm')}): "
                     f"{num(lower.get('load_kN_per_m'))} to {num(upper.get('load_kN_per_m'))} kN/m; at collapse "
                     f"H = {num(ex_lo.get('horizontal_kN_per_m'))} to {num(ex_up.get('horizontal_kN_per_m'))} kN/m, "
                     f"M about the footing's centre = {num(ex_lo.get('moment_kNm_per_m'))} to "
                     f"{num(ex_up.get('moment_kNm_per_m'))} kNm/m")
        out.append(text + "</p>")
    else:
        out.append("<p><strong>No complete bracket:</strong> a bound was not asked for or is withheld "
                   "(see the table).</p>")
    rows = []
    for kind, b in (("lower", lower), ("upper", upper)):
        if not b:
            rows.append(f"<tr><td>{kind} bound</td><td colspan='7'>not asked for</td></tr>")
            continue
        standing = ('<span class="pass">certified</span>' if b.get("pressure_kPa") is not None
                    else f'<span class="fail">withheld</span>: '
                         f'{esc(str(b.get("status")).removeprefix("withheld: "))}')
        extra = b.get("extra") or {}
        # a strip's load has components per m run; a circle's is one central vertical force (kN)
        parts = (f"<td class='n'>{num(extra.get('vertical_kN_per_m'))}</td>"
                 f"<td class='n'>{num(extra.get('horizontal_kN_per_m'))}</td>"
                 f"<td class='n'>{num(extra.get('moment_kNm_per_m'))}</td>") if strip else ""
        rows.append(f"<tr><td>{kind} bound</td><td class='n'>{num(b.get('pressure_kPa'))}</td>"
                    f"<td class='n'>{num(b.get('load_kN_per_m') if strip else b.get('load_kN'))}</td>"
                    f"{parts}<td>{standing}</td></tr>")
    parts = "<th>V (kN/m)</th><th>H (kN/m)</th><th>M (kNm/m)</th>" if strip else ""
    out.append(f'<table class="keep"><thead><tr><th>bound</th><th>pressure (kPa)</th><th>load ({unit})</th>'
               f"{parts}<th>standing</th></tr></thead>" + "".join(rows) + "</table>")
    methods = "; ".join(f"{kind} bound: {esc(b.get('method'))}" for kind, b in (("lower", lower), ("upper", upper))
                        if b.get("method"))
    if strip:
        meaning = ("Pressure: the vertical component of the collapse load over B. Load: the collapse load along "
                   "its line of action; V and H its vertical and horizontal components, M its moment about the "
                   "footing's centre (V times the eccentricity), all at collapse.")
    else:
        meaning = ("Pressure: the collapse load over the footing's area, &pi; B&sup2;/4 (B the diameter). Load: "
                   "the whole vertical collapse load on the circular footing, central.")
    out.append(f'<p class="small">{meaning} Methods: {methods}.</p>')
    if case.ground.water_table is not None:
        u = d.get("pore_pressure_at_base_kPa")
        text = f"Pore pressure at the footing base: <strong>{num(u, 1, 'kPa')}</strong>"
        if u and lo is not None and up is not None:
            text += (f". The pressures above are effective; the total contact pressure adds it: "
                     f"{num(lo + u)} to {num(up + u)} kPa")
        elif not u:
            text += " (the water table is at or below the base)"
        out.append(f"<p>{text}.</p>")
    out.append('<p class="small">A bound is reported only when its certificate (the residuals of the '
               "solution, recomputed after the solve) passes. The true collapse load of the idealised "
               f"problem (rigid-perfectly plastic soil, associated flow, {'plane strain' if unit == 'kN/m' else 'axial symmetry'}) lies between the "
               "bounds; the gap is its own error estimate.</p>")
    return "\n".join(out)


def _safety(d: dict, case: Case) -> str:
    fos = d.get("factor_of_safety")
    if not fos and case.footing.design_load is None and case.factors is None:
        return ("<h2>Factor of safety</h2><p>No <code>[footing] design_load</code> and no "
                "<code>[factors]</code> in the case file: no factor of safety is computed.</p>")
    if not fos:
        return "<h2>Factor of safety</h2><p>result.json holds no factor of safety for this run.</p>"
    out = ["<h2>Factor of safety</h2>"]
    design, unit, suffix = design_load_of(fos)
    if design is not None:
        # result.json of an earlier version named them "load" and "strength"
        load = fos.get("on_load", fos.get("load")) or {}
        strength = fos.get("on_strength", fos.get("strength")) or {}
        out.append(f"<p>Design load: {_design_load_text(d, case)}. Every load on this page is in "
                   f"{esc(unit)}{' (per m run)' if unit == 'kN/m' else ' (the whole footing)'}.</p>")
        search = strength.get("search") or {}

        def value(kind: str) -> str:
            found = strength.get(kind)
            if found is None:
                return "not found" if search.get(kind) == "not found" else "&mdash;"
            beyond = strength.get(f"{kind}_beyond_range")
            mark = " (search incomplete)" if search.get(kind) == "incomplete" else ""
            return ((beyond and esc(beyond).replace("&gt;=", "&ge; ").replace("&lt;=", "&le; ")) or "") + \
                num(found, 3) + mark

        out.append('<table class="keep"><thead><tr><th>factor of safety</th><th>lower</th><th>upper</th>'
                   "<th>meaning</th></tr></thead>"
                   f"<tr><td>on load</td><td class='n'>{num(load.get('lower'), 3)}</td>"
                   f"<td class='n'>{num(load.get('upper'), 3)}</td><td>collapse load / design load, "
                   "from the bracket</td></tr>"
                   f"<tr><td>on strength (strength-reduction factor)</td><td class='n'>{value('lower')}</td>"
                   f"<td class='n'>{value('upper')}</td><td>the factor by which c&prime; (or su) and "
                   "tan&nbsp;&phi;&prime; of every layer must be divided for the design load to cause "
                   f"collapse; searched to a relative tolerance of {esc(_percent(strength.get('tolerance')))} "
                   f"({num(strength.get('solves', 0))} extra solves)</td></tr></table>")
        out.append('<p class="small">The factor of safety on strength: its lower value is an F at which the '
                   "certified lower bound still carries the design load (so the true F is at least that); its "
                   "upper value is an F at which the certified upper bound falls to the design load or below (so "
                   "the true F is at most that). Both are F values actually solved; a bound withheld at some F "
                   "is never used, and a value the search did not prove is given as &ldquo;not found&rdquo; "
                   "with the reason.</p>")
        notes = strength.get("notes") or []
        if notes:
            out.append("<ul>" + "".join(f"<li>{esc(n)}</li>" for n in notes) + "</ul>")
        for check in fos.get("checks") or []:
            out.append(f'<p class="verdict">{esc(check.get("verdict"))}</p>')
        evaluations = strength.get("evaluations") or {}
        if evaluations:
            rows = "".join(f"<tr><td>{esc(kind)}</td><td class='n'>{num(e.get('F'), 4)}</td>"
                           f"<td class='n'>{num(e.get(f'load_{suffix}'))}</td><td>{esc(e.get('status'))}</td></tr>"
                           for kind, items in evaluations.items() for e in items)
            out.append("<h3>Strength-reduction solves</h3><table><thead><tr><th>bound</th><th>F</th>"
                       f"<th>collapse load ({esc(unit)})</th><th>status</th></tr></thead>" + rows + "</table>")
    partial = fos.get("partial_factors")
    if partial:
        f = partial["factors"]
        res = partial.get(f"design_resistance_{suffix}", {})
        col = partial.get(f"design_strength_collapse_{suffix}", {})
        out.append("<h3>Partial factors (the user's design approach)</h3>")
        out.append(_kv(None, [
            ("on tan &phi;&prime; (friction)", num(f.get("friction"), 2)),
            ("on c&prime; (cohesion)", num(f.get("cohesion"), 2)),
            ("on su (undrained_strength)", num(f.get("undrained_strength"), 2)),
            ("partial factor on the action (load)", num(f.get("load"), 2)),
            ("on the resistance (resistance)", num(f.get("resistance"), 2)),
            ("design action E<sub>d</sub> = partial factor on the action &times; design load",
             num(partial.get(f"action_{suffix}"), 1, unit)),
            ("collapse load with design strengths", f"{num(col.get('lower'))} to {num(col.get('upper'))} {esc(unit)}"),
            ("design resistance R<sub>d</sub> = that / resistance factor",
             f"{num(res.get('lower'))} to {num(res.get('upper'))} {esc(unit)}"),
        ]))
        out.append(f'<p class="verdict">{esc(partial.get("verdict"))}</p>')
        out.append('<p class="small">Factor names as in EN 1997-1; the values are the user\'s and no design '
                   "approach is assumed by this program.</p>")
    return "\n".join(out)


def _hand(d: dict) -> str:
    """Methods that give a number in a table (unconservative ones flagged), the others grouped by
    why they do not apply, and the sources as a numbered list. With a dilation angle, a second
    table gives the methods on c', phi' as given, for information only (never flagged)."""
    rows = d.get("hand_methods") or []
    if not rows:
        return ""
    sources: list[str] = []

    def ref(source) -> str:
        if not source:
            return ""
        if source not in sources:
            sources.append(source)
        return f" <span class='small'>[{sources.index(source) + 1}]</span>"

    def table(rows: list[dict], compared: bool) -> tuple[list[str], dict]:
        body, not_applicable = [], {}
        for r in rows:
            if r.get("pressure_kPa") is None:
                not_applicable.setdefault(str(r.get("note")), []).append(esc(r.get("method")) + ref(r.get("source")))
                continue
            where = str(r.get("where", ""))
            flagged = compared and "ABOVE THE UPPER BOUND" in where
            tail = f'<span class="flagmark">&#9650; {esc(where)}</span>' if flagged else esc(where)
            factors = ", ".join(f"{esc(k)} {esc(f'{v + 0.0:.3g}')}" for k, v in (r.get("factors") or {}).items()
                                if isinstance(v, (int, float)) and not isinstance(v, bool))
            note = f"<div class='small'>{esc(r.get('note'))}</div>" if r.get("note") else ""
            row_class = ' class="flag"' if flagged else ""
            body.append(f"<tr{row_class}><td>{esc(r.get('method'))}{ref(r.get('source'))}</td>"
                        f"<td class='n'>{num(r.get('pressure_kPa'))}</td><td>{tail}{note}</td>"
                        f"<td class='small'>{factors}</td></tr>")
        return body, not_applicable

    head = "<thead><tr><th>method</th><th>pressure (kPa)</th><th>where it falls</th><th>factors</th></tr></thead>"
    body, not_applicable = table(rows, compared=True)
    over = "B" if d.get("footing_shape", "strip") == "strip" else "the area &pi; B&sup2;/4"
    out = ["<h2>Hand methods beside the bracket</h2>",
           "<p>Classical closed-form estimates of the same quantity as the bracket (the vertical component of "
           f"the collapse load over {over}), under "
           "the case's load and ground, each where its method applies. A row "
           "marked &#9650; lies above the upper bound: that method is <strong>unconservative</strong> for this "
           "case.</p>"]
    if d.get("hand_methods_as_given"):
        out.append("<p>A layer has a dilation angle, so the bounds use the Davis (1968) reduced strength "
                   "c*, &phi;*; the estimates in this table use the same c*, &phi;*, so that they compare with "
                   "the bracket like with like. The same methods on c&prime;, &phi;&prime; as given follow "
                   "below, for information only.</p>")
    if body:
        out.append("<table>" + head + "".join(body) + "</table>")
    if not_applicable:
        out.append("<h3>No value for this case (each says why)</h3><ul>" + "".join(
            f"<li>{', '.join(methods)}: {esc(note)}</li>" for note, methods in not_applicable.items()) + "</ul>")
    given, _ = table([r for r in d.get("hand_methods_as_given") or [] if r.get("pressure_kPa") is not None],
                     compared=False)
    if given:
        out.append("<h3>On c&prime;, &phi;&prime; as given (information only)</h3><p class='small'>The methods "
                   "whose value changes with the full strength. Not compared with the bracket and never flagged: "
                   "the bounds use the Davis-reduced strength, these estimates the full one.</p><table>" + head
                   + "".join(given) + "</table>")
    out.append("<h3>Sources of the hand methods</h3><ol class='small'>"
               + "".join(f"<li>{esc(source)}</li>" for source in sources) + "</ol>")
    return "\n".join(out)


FIGURE_CAPTIONS = {
    "mechanism": "Upper bound: the collapse mechanism (shear strain rate, velocities, extent).",
    "stress": "Lower bound: the stress field (yield utilisation, principal stress directions in the plastic zone).",
    "contact": ("Lower bound: the normal and shear stresses along the footing base, from its stress field (one "
                "admissible distribution at collapse, not the working contact pressure)."),
}
# a circular footing's pictures show the half section r >= 0 through its axis (solver.pictures)
CIRCLE_FIGURE_CAPTIONS = {
    "mechanism": ("Upper bound: the collapse mechanism in the half section r \u2265 0 through the circle's axis of "
                  "symmetry (shear strain rate in the r-z plane, velocities, extent out to a radius)."),
    "stress": ("Lower bound: the stress field in the half section r \u2265 0 through the circle's axis of symmetry "
               "(yield utilisation with the hoop stress, principal stress directions in the r-z plane in the "
               "plastic zone)."),
    "contact": ("Lower bound: the normal and shear stresses along the footing base in the half section "
                "r \u2265 0, from the axis (r = 0) to the edge (r = B/2), from its stress field (one admissible "
                "distribution at collapse, not the working contact pressure; its mean over the circle's area is "
                "the lower-bound pressure)."),
}


def model_caption(case: Case, mesh: str | None) -> str:
    """The model picture's caption, naming only what this model has; ``mesh``: the bound whose
    mesh is drawn ("lower" or "upper"), None when none is.

    >>> from solver.case import parse_case
    >>> clay = parse_case({"footing": {"width": 2.0}, "layers": [
    ...     {"name": "clay", "model": "tresca", "undrained_strength": 30, "unit_weight": 18}]})
    >>> model_caption(clay, "lower")
    'The model: level ground, the layer with its parameters, the footing with its load, and the mesh of the lower bound.'
    """
    g, f = case.ground, case.footing
    if case.geometry is not None:
        parts = ["the site as drawn (its outline and layers, each with its parameters)"]
    else:
        parts = ["the ground profile with the slope's crest and toe" if g.slope_angle > 0 else "level ground",
                 "the layers with their parameters" if len(case.layers) > 1 else "the layer with its parameters"]
    if f.embedment > 0:
        parts.append("the soil above the footing base (carried as a surcharge)")
    if g.surcharge > 0:
        parts.append("the surcharge")
    if g.water_table is not None:
        parts.append("the water table")
    load = [w for w, on in (("inclined", f.load_inclination != 0), ("eccentric", f.eccentricity != 0)) if on]
    parts.append("the footing with its " + (" and ".join(load) + " " if load else "") + "load")
    if mesh is not None:
        parts.append(f"the mesh of the {mesh} bound")
    if f.shape == "circular":
        return ("The model, in the half section r \u2265 0 through the circular footing's axis of symmetry (drawn "
                "at r = 0): " + ", ".join(parts[:-1]) + ", and " + parts[-1] + ".")
    return "The model: " + ", ".join(parts[:-1]) + ", and " + parts[-1] + "."


def _pictures(run: Run, images: dict[str, bytes]) -> str:
    if not images:
        return ""
    figures = CIRCLE_FIGURE_CAPTIONS if run.case.footing.shape == "circular" else FIGURE_CAPTIONS
    captions = {**figures, "model": model_caption(
        run.case, next((k for k in ("lower", "upper") if k in run.fields), None))}
    out = ['<h2>Pictures</h2>']
    for name in ("model", "mechanism", "stress", "contact"):
        if name not in images:
            continue
        data = base64.b64encode(images[name]).decode("ascii")
        files = [f"{name}.{ext}" for ext in ("png", "svg") if (run.out_dir / f"{name}.{ext}").is_file()]
        also = f" Also in {' and '.join(files)}." if files else ""
        out.append(f'<figure class="{name}"><img alt="{esc(captions[name])}" src="data:image/png;base64,{data}">'
                   f"<figcaption>{esc(captions[name])}{esc(also)}</figcaption></figure>")
    return "\n".join(out)


def _inputs(case: Case, d: dict) -> str:
    f, g, a = case.footing, case.ground, case.analysis
    dom = d.get("domain") or {}
    out = ['<h2>Inputs (restated from the case file)</h2>']
    side = "toward the slope (+x)" if g.slope_angle > 0 else "toward +x"
    shape = [] if f.shape == "strip" else [("shape", "circular (axisymmetric): B is its diameter, its loads "
                                                     "are the whole footing's, in kN")]
    out.append(_kv("Footing", shape + [
        ("diameter B" if f.shape == "circular" else "width B", num(f.width, 3, "m")), ("base", esc(f.base)),
        ("embedment Df", num(f.embedment, 3, "m")),
        *([("load inclination", num(f.load_inclination, 1, "degrees from vertical") + f", positive {esc(side)}"),
           ("eccentricity e of the load at the base", num(f.eccentricity, 3, "m") + ", from the footing's centre, "
                                                                                  "positive toward +x")]
          if f.shape == "strip" else [("load", "central and vertical (the only load a circle takes here)")]),
        ("design load (along the load's line of action)" if f.shape == "strip" else
         "design load (the whole vertical load on the circular footing)",
         "not given" if f.design_load is None else num(f.design_load, 1, "kN/m") if f.shape == "strip" else
         num(f.design_load, 1, "kN") + f" ({num(f.design_load / f.bearing_area, 1, 'kPa')} over &pi; B&sup2;/4)"),
        ("required factor of safety on load", num(f.required_factor_of_safety_on_load, 2)
         if f.required_factor_of_safety_on_load is not None else "not given"),
        ("required factor of safety on strength", num(f.required_factor_of_safety_on_strength, 2)
         if f.required_factor_of_safety_on_strength is not None else "not given")]))
    ground = [("surcharge on the ground surface", num(g.surcharge, 2, "kPa")
               + (" (on the level ground at footing level only)" if g.slope_angle > 0 else "")),
              ("vertical stress at the base level beside the footing", num(case.overburden_kPa(), 2, "kPa"))]
    if g.slope_angle > 0:
        run = 1 / math.tan(math.radians(g.slope_angle))
        ground += [("slope angle", num(g.slope_angle, 1, "degrees") + f" (1 vertical : {esc(f'{run:.2f}')} "
                                                                      "horizontal), falling toward +x"),
                   ("crest setback from the footing's edge", num(g.crest_setback, 3, "m")),
                   ("slope height, crest to toe", num(g.slope_height, 3, "m")),
                   ("crest and toe (x from the footing centre)",
                    f"{num(dom.get('slope_crest_x_m'), 3, 'm')} and {num(dom.get('slope_toe_x_m'), 3, 'm')}")]
    else:
        ground.append(("slope angle", "0 (level ground)"))
    ground.append(("water table", num(g.water_table, 2, "m") + " below the ground surface beside the footing"
                   if g.water_table is not None else "not given (below the model)"))
    if g.water_table is not None:
        ground.append(("pore pressure at the footing base", num(d.get("pore_pressure_at_base_kPa"), 1, "kPa")))
    out.append(_kv("Ground", ground))
    rows = []
    for i, (layer, top) in enumerate(zip(case.layers, case.layer_tops()), 1):
        thickness = num(layer.thickness, 3, "m") if layer.thickness is not None else "to the model base"
        if layer.is_tresca:
            strength = (f"su = {num(layer.undrained_strength, 2, 'kPa')} at its top, rising "
                        f"{num(layer.strength_gradient, 2, 'kPa/m')}")
            dilation = "&mdash;"
        else:
            strength = (f"c&prime; = {num(layer.cohesion, 2, 'kPa')}, "
                        f"&phi;&prime; = {num(layer.friction_angle, 2, 'degrees')}")
            dilation = (num(layer.dilation_angle, 2, "degrees") + " (Davis reduction)"
                        if layer.dilation_angle is not None else "= &phi;&prime; (associated flow)")
        saturated = (num(layer.saturated_unit_weight, 2, "kN/m³") if layer.saturated_unit_weight is not None
                     else "= unit weight")
        rows.append(f"<tr><td class='n'>{i}</td><td>{esc(layer.name)}</td><td class='n'>{num(top, 3, 'm')}</td>"
                    f"<td>{thickness}</td><td>{esc(layer.model)}</td><td>{strength}</td>"
                    f"<td>{dilation}</td><td>{num(layer.unit_weight, 2, 'kN/m³')}; saturated {saturated}</td></tr>")
    out.append("<h3>Layers (top to bottom)</h3><table><thead><tr><th>#</th><th>name</th><th>top below ground</th>"
               "<th>thickness</th><th>model</th><th>strength</th><th>dilation angle &psi;&prime;</th>"
               "<th>unit weight; saturated (below the water table)</th></tr></thead>" + "".join(rows) + "</table>")
    out.append(_kv("Analysis", [("bounds", esc(a.bounds)), ("target elements per bound", num(a.elements)),
                                ("back end", esc(a.backend))]))
    if case.factors is not None:
        fa = case.factors
        meaning = {"friction": "divides tan &phi;&prime;", "cohesion": "divides c&prime;",
                   "undrained_strength": "divides su", "load": "the partial factor on the action: multiplies the design load",
                   "resistance": "divides the bearing resistance"}
        out.append(_kv("Partial factors (dimensionless)",
                       [(esc(k), f"{num(getattr(fa, k), 2)} ({meaning[k]})") for k in meaning]))
    return "\n".join(out)


# What each residual of a certificate (solver.certify) measures, and its unit.
RESIDUALS = {
    "equilibrium_kPa": ("equilibrium with self-weight in every triangle (out-of-balance stress gradient times the "
                        "triangle's size)", "kPa"),
    "traction_jump_kPa": ("normal and shear traction continuous across every edge", "kPa"),
    "boundary_traction_kPa": ("tractions on the ground surface (the surcharge), the symmetry line and a smooth "
                              "base", "kPa"),
    "yield_violation_kPa": ("stress outside the yield surface at any stress point", "kPa"),
    "program_equality_kPa": ("the largest residual of any equality row of the conic program", "kPa"),
    "program_cone_violation_kPa": ("the largest breach of any cone of the conic program", "kPa"),
    "load_mismatch_kPa": ("load recomputed from the stresses against the solver's", "kPa"),
    "velocity_boundary": ("velocities on the fixed boundary and under the rigid footing, relative to the largest "
                          "velocity", ""),
    "incompressibility": ("Tresca flow rule: no change of volume (a strip's triangle corners; every control point "
                          "of a circle), relative to the largest velocity", ""),
    "flow_rule": ("flow rule where it is a cone (a strip's Mohr-Coulomb corners; every control point of a "
                  "circle): the largest breach, strain rate times the triangle's size, the footing moving at 1", ""),
    "load_mismatch": ("load recomputed from the velocities (dissipation less the work of weight and surcharge) "
                      "against the solver's, relative", ""),
    "energy_balance": ("energy of the mechanism of the ground alone, relative to the terms it sums (negative: "
                       "it releases energy)", ""),
}
# Figures a certificate carries beside its residuals, in words (the tolerances are told with each residual).
CERTIFICATE_FIGURES = {
    "stress_scale_kPa": ("stress scale: the largest of the collapse pressure, each layer's strength a footing "
                         "width below its top, the overburden and gamma B", "kPa"),
    "load_kN_per_m": ("collapse load this bound certifies", "kN/m"),
    "load_kN": ("collapse load this bound certifies", "kN"),
    "energy_of_the_mechanism": ("energy the mechanism of the ground alone releases (per unit velocity)", "kN/m"),
    **{f"{key}_{unit_key}": (words, unit) for key, words in (
        ("objective", "the solver's objective"), ("recomputed", "the load recomputed from the velocities"),
        ("dissipation", "plastic dissipation"), ("gravity_work", "work done against the soil's weight"),
        ("surcharge_work", "work done against the surcharge")) for unit_key, unit in (("kN_per_m", "kN/m"), ("kN", "kN"))},
    "work_rate_before": ("the load's work rate as solved, before the velocities were divided by it", ""),
}
TOLERANCE_KEYS = ("tolerance_kPa", "restored_tolerance", "flow_tolerance", "load_tolerance", "limits", "passed")


def _allowed(cert: dict, limit: float, unit: str) -> str:
    """A residual's limit and how it was set, from the certificate's own tolerances."""
    unit = f" {unit}" if unit else ""
    if limit < 0:
        return f"at most {sci(limit)}{unit} (negative beyond the solver's tolerance)"
    if limit == cert.get("tolerance_kPa") and cert.get("stress_scale_kPa"):
        return f"{sci(limit)}{unit} (1e-6 &times; the stress scale, {sci(cert['stress_scale_kPa'])} kPa)"
    if limit == cert.get("restored_tolerance"):
        return f"{sci(limit)}{unit} (round-off, after the velocities were restored)"
    if limit == cert.get("flow_tolerance"):
        return f"{sci(limit)}{unit} (what the solver's own stopping test allows on this program)"
    if limit == cert.get("load_tolerance"):
        return f"{sci(limit)}{unit} ({esc(f'{100 * limit:g} %')})"
    return f"{sci(limit)}{unit}"


def certificate_rows(cert: dict) -> list[tuple[str, str]]:
    """A certificate as rows in words: each residual with its value, what is allowed and whether it
    passes; then the figures it carries; then anything else, as recorded."""
    limits = cert.get("limits") or {}
    rows = [("certificate", '<span class="pass">passes</span>' if cert.get("passed")
             else f'<span class="fail">FAILS</span>: {esc(cert.get("reason", ""))}')]
    for key, value in cert.items():
        if key in RESIDUALS and isinstance(value, (int, float)):
            words, unit = RESIDUALS[key]
            shown_value = f"{sci(value)}{' ' + unit if unit else ''}"
            if key in limits:
                verdict = "passes" if value <= limits[key] else '<span class="fail">FAILS</span>'
                text = f"{shown_value}, allowed {_allowed(cert, limits[key], unit)}: {verdict}"
            else:  # result.json of an earlier version: the limits were not recorded per residual
                text = f"{shown_value} (its limit is not recorded in this result.json)"
            rows.append((esc(words), text))
    for key, (words, unit) in CERTIFICATE_FIGURES.items():
        if isinstance(cert.get(key), (int, float)) and not isinstance(cert.get(key), bool):
            rows.append((esc(words), num(cert[key], 2, unit) if unit else sci(cert[key])))
    restored = cert.get("restored")
    if isinstance(restored, dict):
        rows.append(("velocities restored before certifying (Tresca incompressibility projected to round-off)",
                     f"breach {sci(restored.get('incompressibility_before'))} before, "
                     f"{sci(restored.get('incompressibility_after'))} after; largest velocity change "
                     f"{sci(restored.get('largest_velocity_change'))}; frictional points held "
                     f"{num(restored.get('frictional_corners_held'))}"))
    done = set(RESIDUALS) | set(CERTIFICATE_FIGURES) | set(TOLERANCE_KEYS) | {"restored", "reason"}
    for key, value in cert.items():
        if key not in done:  # what the solve recorded besides (a second solve, a mesh without fans)
            text = sci(value) if isinstance(value, (int, float)) and not isinstance(value, bool) else esc(value)
            rows.append((esc(key.replace("_", " ")), text))
    return rows


def _certificates(d: dict) -> str:
    out = ["<h2>Certificates</h2>",
           '<p class="small">Residuals recomputed from each solution after the solve, each against its own '
           "limit; a bound is used only when every one passes.</p>"]
    for kind in ("lower", "upper"):
        b = d.get(kind)
        if b:
            out.append(_kv(f"{kind.capitalize()} bound", certificate_rows(b.get("certificate") or {})))
    return "\n".join(out)


def _statistics(d: dict, run: Run) -> str:
    header = "<thead><tr><th></th><th>lower bound</th><th>upper bound</th></tr></thead>"
    keys = [("elements", "triangles"), ("variables", "variables"), ("equalities", "equality rows"),
            ("cones", "second-order cones (3-D)"), ("iterations", "interior-point iterations")]
    lower, upper = d.get("lower") or {}, d.get("upper") or {}
    rows = [f"<tr><td>{esc(label)}</td><td class='n'>{num(lower.get(k))}</td><td class='n'>{num(upper.get(k))}</td></tr>"
            for k, label in keys]
    for key in ("mesh_s", "assemble_s", "solve_s", "certify_s"):
        rows.append(f"<tr><td>{esc(key.replace('_s', ''))} time (s)</td>"
                    f"<td class='n'>{num((lower.get('timing') or {}).get(key), 2)}</td>"
                    f"<td class='n'>{num((upper.get('timing') or {}).get(key), 2)}</td></tr>")
    out = ["<h2>Mesh and solver statistics</h2>", '<table class="keep">' + header + "".join(rows) + "</table>"]
    dom = d.get("domain") or {}
    extra = upper.get("extra") or {}
    timing = d.get("timing") or {}
    kv = [("mesh", esc(refinement_line(d["refinement"], d.get("gap_percent"))) if d.get("refinement") else "not recorded"),
          ("wall time of the bounds (meshing, solving, certifying)", num(timing.get("total_s"), 2, "s")),
          ("time with a solve running (the two bounds solve at once on two cores)",
           num(timing.get("solve_wall_s"), 2, "s")),
          ("half domain by symmetry", "yes" if dom.get("half_domain_by_symmetry") else "no"),
          ("meshed width", num(dom.get("width_m"), 2, "m")), ("meshed depth", num(dom.get("depth_m"), 2, "m"))]
    circle = run.case.footing.shape == "circular"
    if circle:  # solved and drawn in the half section r >= 0: its width is a radius
        kv[3:5] = [("meshed section", "the half section r &ge; 0 through the axis of symmetry (axisymmetric)"),
                   ("meshed radius (from the axis)", num(dom.get("width_m"), 2, "m"))]
    if extra:
        B = d.get("footing_width_m") or 1.0
        from .pictures import MOVING_SPEED, moving_extent

        extent = moving_extent(run.fields.get("upper"), bool(dom.get("half_domain_by_symmetry")))
        if extent is not None and circle:  # the picture frames it from the axis out to a radius
            reach = extent[1]
            width = (f"out to r = {num(reach, 2, 'm')} from the axis ({num(reach / B, 2)} B); "
                     f"{num(2 * reach, 2, 'm')} ({num(2 * reach / B, 2)} B) across the circle")
        elif extent is not None:  # measured on the velocity field: right for an asymmetric mechanism too
            x_lo, x_hi, _ = extent
            width = (f"{num(x_hi - x_lo, 2, 'm')} ({num((x_hi - x_lo) / B, 2)} B), x from {num(x_lo, 2, 'm')} "
                     f"to {num(x_hi, 2, 'm')}")
        else:
            reach = extra.get("mechanism_half_width_m", 0.0)
            width = f"reaches {num(reach, 2, 'm')} ({num(reach / B, 2)} B) from the footing's centre"
        fraction = extra.get("mechanism_speed_fraction")
        moving = (f" (the soil moving faster than {esc(f'{MOVING_SPEED:.0%}')} of the footing, as framed in the "
                  "mechanism picture)")
        depth = f"{num(extra.get('mechanism_depth_m'), 2, 'm')} ({num(extra.get('mechanism_depth_over_B'), 2)} B)"
        if fraction != MOVING_SPEED:  # result.json of an earlier version measured at another speed
            depth = f"{num(extent[2], 2, 'm')} ({num(extent[2] / B, 2)} B)" if extent is not None else "&mdash;"
        kv += [("upper-bound mechanism depth" + moving, depth),
               ("upper-bound mechanism width" + moving, width),
               ("mechanism clear of the far boundary", "yes" if extra.get("mechanism_clear_of_boundary") else "NO")]
    out.append(_kv(None, kv))
    return "\n".join(out)


def _notes(run: Run) -> str:
    notes = list(run.data.get("notes") or []) + run.missing
    if not notes:
        return ""
    return "<h2>Notes</h2><ul>" + "".join(f"<li>{esc(n)}</li>" for n in notes) + "</ul>"
