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
from .result import CAUTION, figure, refinement_line

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
                    report: bool = True) -> list[Path]:
    """After result.json: the case copy, fields.vtu, summary.csv, then (read back from those
    files) the pictures and the report. Returns the paths written."""
    from . import pictures as drawing

    out_dir = Path(out_dir)
    written = [save_case_copy(case_path, case.source_sha256, out_dir)]
    site = save_site_copy(getattr(case, "geometry", None), out_dir)
    written += [site] if site else []
    vtu = write_fields_vtu(bound_fields(result.lower), bound_fields(result.upper), out_dir)
    written += [vtu] if vtu else []
    data = json.loads((out_dir / "result.json").read_text(encoding="utf-8"))
    written.append(write_summary_csv(data, out_dir))
    if not (pictures or report):
        return written
    run = load_run(out_dir)
    figures = drawing.draw_all(run.case, run.data, run.fields)
    if pictures:
        written += drawing.write_pictures(figures, out_dir)
    if report:
        written.append(write_report(run, figures))
    return written


def rebuild_report(out_dir: Path) -> Path:
    """``bearbound report``: the report again from a finished run's files, without solving."""
    from . import pictures as drawing

    run = load_run(out_dir)
    return write_report(run, drawing.draw_all(run.case, run.data, run.fields))


def write_report(run: Run, figures: dict) -> Path:
    """Write out_dir/report.html (atomically) with the figures embedded as PNG."""
    from .pictures import figure_bytes

    images = {name: figure_bytes(fig, "png") for name, fig in figures.items()}
    path = run.out_dir / REPORT_FILE
    write_bytes_atomic(path, build_html(run, images).encode("utf-8"))
    return path


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
.sub { color: #333; margin: 0 0 3mm 0; }
table { border-collapse: collapse; margin: 1.5mm 0 3mm 0; width: 100%; page-break-inside: avoid; }
th, td { border: 1px solid #999; padding: 1mm 1.8mm; text-align: left; vertical-align: top; }
th { background: #e8e8e8; font-weight: 600; }
td.n { text-align: right; white-space: nowrap; font-variant-numeric: tabular-nums; }
table.meta td:first-child, table.kv td:first-child { width: 38%; background: #f4f4f4; }
.caution { border: 2.5px solid #111; padding: 2.5mm 3.5mm; margin: 3mm 0; background: #f2f2f2; }
.caution strong { letter-spacing: 0.02em; }
.bracket { font-size: 13pt; border: 1.5px solid #444; padding: 2.5mm 3.5mm; margin: 2mm 0 3mm 0; }
.bracket .big { font-size: 15pt; font-weight: 700; }
tr.flag td { font-weight: 700; background: #dcdcdc; border-top: 2px solid #111; border-bottom: 2px solid #111; }
.flagmark { font-weight: 700; }
.small { font-size: 8.5pt; color: #333; }
.pass { font-weight: 700; }
.fail { font-weight: 700; text-decoration: underline; }
.verdict { font-weight: 700; border-left: 4px solid #111; padding-left: 2.5mm; }
.keep { page-break-inside: avoid; break-inside: avoid; }
figure { margin: 3mm 0 5mm 0; page-break-inside: avoid; break-inside: avoid; }
figure img { width: 100%; height: auto; border: 1px solid #ccc; }
figcaption { font-size: 9pt; color: #222; margin-top: 1mm; }
code, .hash { font-family: "DejaVu Sans Mono", "Liberation Mono", monospace; font-size: 8.5pt; word-break: break-all; }
ul { margin: 1mm 0 3mm 0; padding-left: 6mm; }
footer { margin-top: 8mm; font-size: 8.5pt; color: #333; border-top: 1px solid #999; padding-top: 2mm; }
@page { size: A4; margin: 14mm 12mm; }
@media print {
  body { margin: 0; padding: 0; max-width: none; font-size: 9.5pt; }
  h2 { page-break-after: avoid; break-after: avoid; }
  .pagebreak { page-break-before: always; break-before: page; }
  th, tr.flag td, .caution { -webkit-print-color-adjust: exact; print-color-adjust: exact; }
}
"""

CSP = "default-src 'none'; img-src data:; style-src 'unsafe-inline'; base-uri 'none'; form-action 'none'"


def build_html(run: Run, images: dict[str, bytes]) -> str:
    """The report page as one string (see the module docstring)."""
    d, case = run.data, run.case
    parts = [
        "<!DOCTYPE html>", '<html lang="en">', "<head>", '<meta charset="utf-8">',
        f'<meta http-equiv="Content-Security-Policy" content="{CSP}">',
        '<meta name="viewport" content="width=device-width, initial-scale=1">',
        f"<title>{esc(d.get('title'))} &ndash; bearbound report</title>",
        f"<style>{STYLE}</style>", "</head>", "<body>",
        f"<h1>{esc(d.get('title'))}</h1>",
        '<p class="sub">Strip footing: collapse load bracketed by finite-element limit analysis '
        "(rigorous lower and upper bounds)</p>",
        _caution(),
        _warnings(d),
        _identity(d),
        _bracket(d, case),
        _safety(d, case),
        _hand(d),
        _pictures(run, images),
        _inputs(case, d),
        _certificates(d),
        _statistics(d, run),
        _notes(run),
        _caution(final=True),
        f"<footer>bearbound {esc(d.get('software', {}).get('version'))}; case file SHA-256 "
        f'<span class="hash">{esc(d["case"].get("sha256"))}</span>. Pressures and loads are compression '
        "positive; pressure = vertical component of the collapse load / B.</footer>",
        "</body>", "</html>",
    ]
    return "\n".join(parts) + "\n"


def _caution(final: bool = False) -> str:
    extra = ("" if not final else
             " The inputs (strengths, unit weights, layer thicknesses) govern the answer more than the method "
             "does; the bounds bracket the collapse load of the idealised problem, not of the ground.")
    return f'<div class="caution"><strong>Caution.</strong> {esc(CAUTION)}{esc(extra)}</div>'


def _warnings(d: dict) -> str:
    """The plausibility warnings (solver.plausible): values allowed but unusual, near the top."""
    warnings = d.get("input_warnings") or []
    if not warnings:
        return ""
    return ('<div class="caution"><strong>Check these inputs.</strong> They are allowed, and the run used them '
            "as given, but they are unusual for soils and footings:<ul>"
            + "".join(f"<li>{esc(w)}</li>" for w in warnings) + "</ul></div>")


def _identity(d: dict) -> str:
    rows = [("Case", esc(d["case"].get("name"))),
            ("Case file SHA-256", f'<span class="hash">{esc(d["case"].get("sha256"))}</span>'),
            ("Software", f"bearbound {esc(d.get('software', {}).get('version'))}"),
            ("Conic solver back end", esc(d.get("backend")))]
    return _kv("Run", rows, heading_level=2)


def _kv(title: str | None, rows: list[tuple[str, str]], heading_level: int = 3, cls: str = "kv") -> str:
    head = f"<h{heading_level}>{esc(title)}</h{heading_level}>" if title else ""
    body = "".join(f"<tr><td>{k}</td><td>{v}</td></tr>" for k, v in rows)
    return f'<div class="keep">{head}<table class="{cls}">{body}</table></div>'


def _bracket(d: dict, case: Case) -> str:
    lower, upper = d.get("lower") or {}, d.get("upper") or {}
    B = d.get("footing_width_m")
    lo, up = lower.get("pressure_kPa"), upper.get("pressure_kPa")
    out = ["<h2>The bracket</h2>"]
    f = case.footing
    inclined = f.load_inclination != 0 or f.eccentricity != 0
    if lo is not None and up is not None:
        text = (f'<div class="bracket">Collapse pressure under the footing: <span class="big">'
                f"{num(lo)} to {num(up)} kPa</span> (gap {num(d.get('gap_percent'), 2)} %)<br>"
                f"{'Vertical collapse load' if inclined else 'Collapse load'}: {num(lo * B)} to {num(up * B)} kN/m "
                f"of footing, B = {num(B, 2)} m")
        if inclined:
            ex_lo, ex_up = lower.get("extra") or {}, upper.get("extra") or {}
            text += (f"<br>The load along its line of action ({num(f.load_inclination, 1, 'degrees')} from "
                     f"vertical, through the base at e = {num(f.eccentricity, 3, 'm')}): "
                     f"{num(lower.get('load_kN_per_m'))} to {num(upper.get('load_kN_per_m'))} kN/m; at collapse "
                     f"H = {num(ex_lo.get('horizontal_kN_per_m'))} to {num(ex_up.get('horizontal_kN_per_m'))} kN/m, "
                     f"M about the footing's centre = {num(ex_lo.get('moment_kNm_per_m'))} to "
                     f"{num(ex_up.get('moment_kNm_per_m'))} kNm/m")
        out.append(text + "</div>")
    else:
        out.append('<div class="bracket">No complete bracket: a bound was not asked for or is withheld '
                   "(see the table).</div>")
    rows = []
    for kind, b in (("lower", lower), ("upper", upper)):
        if not b:
            rows.append(f"<tr><td>{kind} bound</td><td colspan='7'>not asked for</td></tr>")
            continue
        standing = ('<span class="pass">certified</span>' if b.get("pressure_kPa") is not None
                    else f'<span class="fail">withheld</span>: '
                         f'{esc(str(b.get("status")).removeprefix("withheld: "))}')
        extra = b.get("extra") or {}
        rows.append(f"<tr><td>{kind} bound</td><td class='n'>{num(b.get('pressure_kPa'))}</td>"
                    f"<td class='n'>{num(b.get('load_kN_per_m'))}</td>"
                    f"<td class='n'>{num(extra.get('vertical_kN_per_m'))}</td>"
                    f"<td class='n'>{num(extra.get('horizontal_kN_per_m'))}</td>"
                    f"<td class='n'>{num(extra.get('moment_kNm_per_m'))}</td><td>{standing}</td>"
                    f"<td class='small'>{esc(b.get('method'))}</td></tr>")
    out.append("<table><tr><th>bound</th><th>pressure (kPa)</th><th>load (kN/m)</th><th>V (kN/m)</th>"
               "<th>H (kN/m)</th><th>M (kNm/m)</th><th>standing</th><th>method</th></tr>"
               + "".join(rows) + "</table>")
    out.append('<p class="small">Pressure: the vertical component of the collapse load over B. Load: the '
               "collapse load along its line of action; V and H its vertical and horizontal components, M its "
               "moment about the footing's centre (V times the eccentricity), all at collapse.</p>")
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
               "problem (rigid-perfectly plastic soil, associated flow, plane strain) lies between the "
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
    design = fos.get("design_load_kN_per_m")
    if design is not None:
        # result.json of an earlier version named them "load" and "strength"
        load = fos.get("on_load", fos.get("load")) or {}
        strength = fos.get("on_strength", fos.get("strength")) or {}
        vertical = design * math.cos(math.radians(case.footing.load_inclination))
        slant = (f", along the load's line of action ({num(case.footing.load_inclination, 1, 'degrees')} from "
                 f"vertical); its vertical component is {num(vertical)} kN/m"
                 if case.footing.load_inclination else "")
        out.append(f"<p>Design load: <strong>{num(design)} kN/m</strong>{slant} "
                   f"({num(vertical / d['footing_width_m'])} kPa vertical pressure under the footing).</p>")
        search = strength.get("search") or {}

        def value(kind: str) -> str:
            found = strength.get(kind)
            if found is None:
                return "not found" if search.get(kind) == "not found" else "&mdash;"
            beyond = strength.get(f"{kind}_beyond_range")
            mark = " (search incomplete)" if search.get(kind) == "incomplete" else ""
            return ((beyond and esc(beyond).replace("&gt;=", "&ge; ").replace("&lt;=", "&le; ")) or "") + \
                num(found, 3) + mark

        out.append("<table><tr><th>factor of safety</th><th>lower</th><th>upper</th><th>meaning</th></tr>"
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
                           f"<td class='n'>{num(e.get('load_kN_per_m'))}</td><td>{esc(e.get('status'))}</td></tr>"
                           for kind, items in evaluations.items() for e in items)
            out.append("<h3>Strength-reduction solves</h3><table><tr><th>bound</th><th>F</th>"
                       "<th>collapse load (kN/m)</th><th>status</th></tr>" + rows + "</table>")
    partial = fos.get("partial_factors")
    if partial:
        f = partial["factors"]
        res, col = partial.get("design_resistance_kN_per_m", {}), partial.get("design_strength_collapse_kN_per_m", {})
        out.append("<h3>Partial factors (the user's design approach)</h3>")
        out.append(_kv(None, [
            ("on tan &phi;&prime; (friction)", num(f.get("friction"), 2)),
            ("on c&prime; (cohesion)", num(f.get("cohesion"), 2)),
            ("on su (undrained_strength)", num(f.get("undrained_strength"), 2)),
            ("partial factor on the action (load)", num(f.get("load"), 2)),
            ("on the resistance (resistance)", num(f.get("resistance"), 2)),
            ("design action E<sub>d</sub> = partial factor on the action &times; design load", num(partial.get("action_kN_per_m"), 1, "kN/m")),
            ("collapse load with design strengths", f"{num(col.get('lower'))} to {num(col.get('upper'))} kN/m"),
            ("design resistance R<sub>d</sub> = that / resistance factor",
             f"{num(res.get('lower'))} to {num(res.get('upper'))} kN/m"),
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

    head = "<tr><th>method</th><th>pressure (kPa)</th><th>where it falls</th><th>factors</th></tr>"
    body, not_applicable = table(rows, compared=True)
    out = ["<h2>Hand methods beside the bracket</h2>",
           "<p>Classical closed-form estimates of the same quantity as the bracket (the vertical component of "
           "the collapse load over B), under the case's load and ground, each where its method applies. A row "
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
    "model": ("The model: ground profile (with the crest and toe of a slope), layers with their parameters, "
              "water table, footing with its load, and mesh."),
    "mechanism": "Upper bound: the collapse mechanism (shear strain rate, velocities, extent).",
    "stress": "Lower bound: the stress field (yield utilisation, principal stress directions in the plastic zone).",
    "contact": ("Lower bound: the normal and shear stresses along the footing base, from its stress field (one "
                "admissible distribution at collapse, not the working contact pressure)."),
}


def _pictures(run: Run, images: dict[str, bytes]) -> str:
    if not images:
        return ""
    out = ['<h2 class="pagebreak">Pictures</h2>']
    for name in ("model", "mechanism", "stress", "contact"):
        if name not in images:
            continue
        data = base64.b64encode(images[name]).decode("ascii")
        out.append(f'<figure><img alt="{esc(FIGURE_CAPTIONS[name])}" src="data:image/png;base64,{data}">'
                   f"<figcaption>{esc(FIGURE_CAPTIONS[name])} The same picture is in "
                   f"{esc(name)}.png and {esc(name)}.svg when the run wrote pictures.</figcaption></figure>")
    return "\n".join(out)


def _inputs(case: Case, d: dict) -> str:
    f, g, a = case.footing, case.ground, case.analysis
    dom = d.get("domain") or {}
    out = ['<h2 class="pagebreak">Inputs (restated from the case file)</h2>']
    side = "toward the slope (+x)" if g.slope_angle > 0 else "toward +x"
    out.append(_kv("Footing", [
        ("width B", num(f.width, 3, "m")), ("base", esc(f.base)), ("embedment Df", num(f.embedment, 3, "m")),
        ("load inclination", num(f.load_inclination, 1, "degrees from vertical") + f", positive {esc(side)}"),
        ("eccentricity e of the load at the base", num(f.eccentricity, 3, "m") + ", from the footing's centre, "
                                                                               "positive toward +x"),
        ("design load (along the load's line of action)",
         num(f.design_load, 1, "kN/m") if f.design_load is not None else "not given"),
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
    out.append("<h3>Layers (top to bottom)</h3><table><tr><th>#</th><th>name</th><th>top below ground</th>"
               "<th>thickness</th><th>model</th><th>strength</th><th>dilation angle &psi;&prime;</th>"
               "<th>unit weight; saturated (below the water table)</th></tr>" + "".join(rows) + "</table>")
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


def _certificates(d: dict) -> str:
    out = ['<h2 class="pagebreak">Certificates</h2>',
           '<p class="small">Residuals recomputed from each solution after the solve; a bound is used only '
           "when all of them are within tolerance.</p>"]
    for kind in ("lower", "upper"):
        b = d.get(kind)
        if not b:
            continue
        cert = b.get("certificate") or {}
        passed = cert.get("passed")
        rows = [(esc(k), sci(v) if isinstance(v, (int, float)) and not isinstance(v, bool) else esc(v))
                for k, v in cert.items() if k != "passed"]
        rows.insert(0, ("passed", '<span class="pass">yes</span>' if passed else '<span class="fail">no</span>'))
        out.append(_kv(f"{kind.capitalize()} bound", rows))
    return "\n".join(out)


def _statistics(d: dict, run: Run) -> str:
    header = "<tr><th></th><th>lower bound</th><th>upper bound</th></tr>"
    keys = [("elements", "triangles"), ("variables", "variables"), ("equalities", "equality rows"),
            ("cones", "second-order cones (3-D)"), ("iterations", "interior-point iterations")]
    lower, upper = d.get("lower") or {}, d.get("upper") or {}
    rows = [f"<tr><td>{esc(label)}</td><td class='n'>{num(lower.get(k))}</td><td class='n'>{num(upper.get(k))}</td></tr>"
            for k, label in keys]
    for key in ("mesh_s", "assemble_s", "solve_s", "certify_s"):
        rows.append(f"<tr><td>{esc(key.replace('_s', ''))} time (s)</td>"
                    f"<td class='n'>{num((lower.get('timing') or {}).get(key), 2)}</td>"
                    f"<td class='n'>{num((upper.get('timing') or {}).get(key), 2)}</td></tr>")
    out = ["<h2>Mesh and solver statistics</h2>", "<table>" + header + "".join(rows) + "</table>"]
    dom = d.get("domain") or {}
    extra = upper.get("extra") or {}
    timing = d.get("timing") or {}
    kv = [("mesh", esc(refinement_line(d["refinement"], d.get("gap_percent"))) if d.get("refinement") else "not recorded"),
          ("wall time of the run (both bounds)", num(timing.get("total_s"), 2, "s")),
          ("time with a solve running (the two bounds solve at once on two cores)",
           num(timing.get("solve_wall_s"), 2, "s")),
          ("half domain by symmetry", "yes" if dom.get("half_domain_by_symmetry") else "no"),
          ("meshed width", num(dom.get("width_m"), 2, "m")), ("meshed depth", num(dom.get("depth_m"), 2, "m"))]
    if extra:
        B = d.get("footing_width_m") or 1.0
        from .pictures import MOVING_SPEED, moving_extent

        extent = moving_extent(run.fields.get("upper"), bool(dom.get("half_domain_by_symmetry")))
        if extent is not None:  # measured on the velocity field: right for an asymmetric mechanism too
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
