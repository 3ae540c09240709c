"""Rendering: results -> self-contained HTML dossier -> PDF (WeasyPrint).

The dossier is rendered from the results.json content (so every number shown
is the number recorded, and carries a ``data-src`` attribute naming its
path in results.json) plus the figures drawn from the engine's plot series.
Templates live in ``report_templates/`` (installed as
``validator.report_templates``) with autoescaping on; they format and never
compute.
"""

from __future__ import annotations

import re
from importlib import resources
from pathlib import Path
from typing import TYPE_CHECKING

from . import numbers, summary
from .pdf import PART, SPLIT, write_pdf, write_pdf_in_parts
from .plots import PALETTE, Drawn, analyte_figures, figures_for_all, style
from .text import SIG, SIG_P, fmt, fmt_p, level_label, met, verdict_label

if TYPE_CHECKING:
    import jinja2

__all__ = ["render_dossier", "render_html", "write_pdf", "templates_dir"]

# from this many analytes the PDF is laid out in parts, its figures as PNG (docs/performance.md:
# a 20-analyte dossier in one piece took 26 s and 740 MB in WeasyPrint, its layout grows with the
# whole document's size, and a 300-analyte one did not finish)
PARTS_FROM = 12


def templates_dir() -> Path:
    """The bundled templates: the installed package data, else the source tree."""
    try:
        installed = resources.files("validator.report_templates")
        if installed.joinpath("dossier.html.j2").is_file():
            return Path(str(installed))
    except ModuleNotFoundError:
        pass
    return Path(__file__).resolve().parents[2] / "report_templates"


def _fragments() -> dict:
    """Template fragments given by absolute path (a characteristic outside the package), by path."""
    from .. import registry

    return {e.fragment: Path(e.fragment).read_text(encoding="utf-8") for e in registry.REGISTRY
            if e.fragment and Path(e.fragment).is_absolute()}


def _environment() -> jinja2.Environment:
    # imported here, not with the package: the characteristics' presentation modules import
    # report.text, and a run that writes only results.json need not load the template engine
    import jinja2

    fragments = _fragments()
    loader = jinja2.FileSystemLoader(str(templates_dir()))
    if fragments:
        loader = jinja2.ChoiceLoader([loader, jinja2.FunctionLoader(fragments.get)])
    env = jinja2.Environment(loader=loader,
                             autoescape=True, undefined=jinja2.StrictUndefined,
                             trim_blocks=True, lstrip_blocks=True)
    env.filters["fmt"] = fmt
    env.filters["fmt_p"] = fmt_p
    env.filters["level"] = level_label
    env.filters["reportable"] = lambda v, src, rule=None: numbers.by_rule(v, rule or numbers.rule_for_path(src))
    env.filters["matched"] = numbers.matched
    env.filters["weighting"] = numbers.weighting_label
    env.filters["sup"] = numbers.superscripts_in
    env.filters["basis"] = numbers.basis_label
    env.filters["characteristic"] = numbers.characteristic_label
    env.globals["interval"] = numbers.interval
    env.globals["interval_at"] = numbers.interval_at
    env.filters["uncertainty"] = numbers.uncertainty
    env.filters["column"] = numbers.column
    env.filters["suspect"] = numbers.suspect_label
    env.filters["step"] = numbers.step_label
    env.filters["setting"] = numbers.setting_value
    env.filters["notation"] = lambda text: jinja2.utils.markupsafe.Markup(numbers.free_text_html(text))
    env.globals["rounding_rules"] = numbers.RULES
    env.globals["verdict"] = verdict_label
    env.globals["met"] = met
    return env


def _plot_data(index: int, a, units: tuple[str, str]) -> dict:
    """The series of one analyte's calibration and precision figures; ``units``: its (concentration,
    response) units."""
    fit, bands, rv = a.calibration.fit, a.bands, a.residual_views
    back = a.calibration.back_calculated
    judged = [b for b in back if b.passed is not None]
    return {
        "key": str(index), "xunit": units[0], "yunit": units[1],
        "level": level_label(1 - fit.alpha),
        "x": fit.x.tolist(), "y": fit.y.tolist(), "residuals": fit.residuals.tolist(),
        "grid": bands.x.tolist(), "fit": bands.fit.tolist(),
        "conf_low": bands.confidence_low.tolist(), "conf_high": bands.confidence_high.tolist(),
        "pred_low": bands.prediction_low.tolist(), "pred_high": bands.prediction_high.tolist(),
        "outliers_x": [o.concentration for o in a.calibration.outliers],
        "outliers_y": [o.response for o in a.calibration.outliers],
        "rel_x": list(rv.relative_x), "rel_residuals": list(rv.relative_pct),
        "qq_theoretical": list(rv.qq_theoretical), "qq_ordered": list(rv.qq_ordered),
        "qq_line": None if rv.qq_line is None else (rv.qq_line.intercept, rv.qq_line.slope),
        "bc_x": [b.nominal for b in judged], "bc_dev": [b.deviation_pct for b in judged],
        "bc_tol": [b.tolerance_pct for b in judged], "bc_pass": [b.passed for b in judged],
        "precision": [{"level": lv.level, "series": _series_pct(a.data.of("precision"), lv)} for lv in a.precision],
    }


def _calibration_rows(engine_analyte, entry: dict) -> list[int] | None:
    """The calibration file's row (line number) of each back-calculated calibrator, in results.json order
    (None when the loaded data do not line up with results.json, so that no row is ever guessed)."""
    rows = getattr(getattr(getattr(engine_analyte, "data", None), "calibration", None), "rows", None)
    if rows is None or len(rows) != len(entry["calibration"]["back_calculated"]):
        return None
    return list(rows)


def _calibrator_sources(engine_analyte, entry: dict, rows: list[int] | None) -> dict | None:
    """Where each back-calculated calibrator was read, in results.json order, for appendix A.

    ``{"points": [{"file", "sheet", "run", "row"}, ...], "files": [(file, sheet), ...] in first-seen
    order, "runs": [...], "from_runs": bool, "response_recorded": bool}``; ``None`` when a calibrator's
    file cannot be told for certain (no file is ever guessed). A calibrator of the [[runs]] is found
    among the runs' calibrator injections (the runs result, not written to results.json: the
    calibration section lists them) by run and file row; one of a calibration file, among that file's
    rows in ``data_rows``. ``response_recorded``: the response is the file's value, not a ratio to an
    internal standard computed from two areas, so appendix A prints it as recorded.
    """
    from .. import registry

    if rows is None:
        return None
    runs_entry = next((e for e in registry.REGISTRY if e.name == "runs"), None)
    runs = None if runs_entry is None else engine_analyte.result_of(runs_entry)
    points = []
    if runs is not None:
        series = getattr(engine_analyte.data.calibration, "series", None)
        if series is None or len(series) != len(rows):
            return None
        by_key: dict = {}
        for i in runs.calibrators:
            by_key.setdefault((i.run, i.row), []).append(i)
        found = [by_key.get((run, row), []) for run, row in zip(series, rows)]
        if any(len(f) != 1 for f in found):
            return None
        points = [{"file": i.file, "sheet": i.sheet, "run": i.run, "row": i.row} for (i,) in found]
        recorded = all(i.internal_standard_response is None for (i,) in found)
    else:
        groups = [g for g in entry.get("data_rows", ()) if g["role"] == "calibration"]
        for row in rows:
            holding = [g for g in groups if any(r["row"] == row for r in g["rows"] if "excluded" not in r)]
            if len(holding) != 1:
                return None
            points.append({"file": holding[0]["file"], "sheet": holding[0].get("sheet"), "run": None, "row": row})
        recorded = True
    return {"points": points, "files": list(dict.fromkeys((p["file"], p["sheet"]) for p in points)),
            "runs": list(dict.fromkeys(p["run"] for p in points if p["run"] is not None)),
            "from_runs": runs is not None, "response_recorded": recorded}


def _series_pct(data, lv):
    """Precision results of one level as % of the level mean, grouped by series (for plotting)."""
    mask = data.level == lv.level
    values = data.found[mask] + data.offset
    series = [s for s, m in zip(data.series, mask) if m]
    out = []
    for name in dict.fromkeys(series):
        vals = [100 * v / lv.mean for v, s in zip(values, series) if s == name]
        out.append((name, vals))
    return out


def _readings(results: dict, alpha: float) -> list:
    """Per analyte: (name, its results.json entry, Reading) of every registry entry with sentences or
    figures that the analyte has."""
    from .. import registry

    study = results["study"]
    out = []
    for i, a in enumerate(results["analytes"]):
        unit, response_unit = summary.units_of(a, study)
        reading = registry.Reading(alpha=alpha, unit=unit, response_unit=response_unit,
                                   key=str(i), not_applicable=tuple((n["item"], n["reason"])
                                                                    for n in a.get("not_applicable", ())),
                                   analyte=a)
        out.append([(e.name, entry, reading) for e in registry.REGISTRY
                    if (e.sentences or e.figures) and (entry := _written(a, e.written_at))])
    return out


def _written(analyte: dict, path: str):
    """The value at a dotted ``path`` of an analyte's results.json entry (``None`` when absent)."""
    value = analyte
    for part in path.split("."):
        value = value.get(part) if isinstance(value, dict) else None
    return value


def _analyte_figures(d: dict) -> dict:
    """One analyte's figures: the calibration's and those the characteristics draw from their entries.

    Run in the worker processes (so a module-level function; a characteristic is found by name).
    """
    from .. import registry

    drawers = {e.name: e.figures for e in registry.REGISTRY if e.figures}
    figures = analyte_figures(d)
    with style():
        for name, entry, reading in d["characteristics"]:
            if name in drawers:
                figures[name] = dict(drawers[name](entry, reading))
    return figures


def render_html(result, results: dict, *, paper: str = "a4", progress=None) -> str:
    """The dossier as one self-contained HTML document (``progress(stage, done, total)``: see
    validator.progress)."""
    return _render(result, results, paper=paper, progress=progress)


def _render(result, results: dict, *, paper: str = "a4", progress=None, parts: bool = False,
            figure_outputs=("svg",)):
    """The dossier's HTML; with ``parts``, marked for :func:`pdf.write_pdf_in_parts` and its figures
    left as placeholders: ``(html, figures)``, see :func:`_fill`."""
    from .. import registry

    study = results["study"]
    alpha = result.loaded.config.criteria.alpha
    readings = _readings(results, alpha)
    units = [summary.units_of(a, study) for a in results["analytes"]]
    figures = figures_for_all([{**_plot_data(i, a, units[i]), "characteristics": readings[i]}
                               for i, a in enumerate(result.analytes)], _analyte_figures,
                              on_done=None if progress is None else lambda k, n: progress("drawing figures", k, n),
                              outputs=figure_outputs)
    drawn = []
    if parts:
        figures = [_placeholders(f, drawn) for f in figures]
    if progress is not None:
        progress("writing the HTML dossier")
    sentences = {e.name: e.sentences for e in registry.REGISTRY if e.sentences}
    # the fragments in registry order, by where the dossier includes them (Characteristic.placement)
    placed = {p: [e for e in registry.REGISTRY if e.fragment and e.placement == p]
              for p in ("analyte", "characteristics", "study-before", "study-after")}
    shown = tuple(e.name for e in placed["characteristics"])
    titles = {e.name: e.title for e in registry.REGISTRY}
    analytes = []
    for i, a in enumerate(results["analytes"]):
        text = {name: dict(sentences[name](entry, reading)) for name, entry, reading in readings[i]
                if name in sentences}
        # "unit", "response_unit": the analyte's own units (else the study's), shown beside its numbers
        analytes.append({"index": i, "data": a, "figures": figures[i], "text": text,
                         "unit": units[i][0], "response_unit": units[i][1],
                         "verdicts": summary.characteristic_verdicts(a), "heading": summary.studied_heading(a, shown, titles),
                         "remarks": summary.remarks(a, units[i][0], results.get("guideline")), "flagged_points": summary.flagged_points(a["calibration"]),
                         "file_rows": _calibration_rows(result.analytes[i], a),
                         "calibrators": _calibrator_sources(result.analytes[i], a,
                                                            _calibration_rows(result.analytes[i], a)),
                         # precision results flagged by an outlier test, and their (file, sheet, row) marks
                         "flagged_results": summary.flagged_results(a), "flagged_sources": summary.flagged_sources(a)})
    criteria = summary.ordered_criteria(results)
    matrix = summary.matrix(results)
    flagged = [{"index": a["index"], "analyte": a["data"]["name"], "point": point,
                "row": a["file_rows"][int(point) - 1] if a["file_rows"] and point.isdigit() else None,
                "file": (a["calibrators"]["points"][int(point) - 1]["file"]
                         if a["calibrators"] and point.isdigit() else None)}
               for a in analytes for point in a["flagged_points"]]
    flagged_precision = sum(len(a["flagged_results"]) for a in analytes)
    # the summary lists the flagged data itself while the list is short; a longer one (a study of many
    # analytes) is counted there and listed in its own section ahead of the appendices (issue #14: the
    # verdict, matrix and open criteria on the first two pages)
    flagged_in_summary = len(flagged) + flagged_precision <= SUMMARY_FLAGGED_ITEMS
    all_remarks = summary.grouped_remarks([(a["index"], a["data"]["name"], a["remarks"]) for a in analytes])
    # the characteristics shown in each analyte's characteristics section, in registry order
    sections = [{"name": e.name, "title": e.title, "fragment": e.fragment} for e in placed["characteristics"]]
    # characteristics assessed for any analyte (the formulas page shows the sector ones only then)
    sector_used = sorted({name for a in results["analytes"] for name in a["characteristics_assessed"]})
    css = (templates_dir() / "dossier.css").read_text(encoding="utf-8")
    page = {"a4": "A4", "letter": "letter"}[paper]
    html = _environment().get_template("dossier.html.j2").render(
        part_marker=PART if parts else "", split_marker=SPLIT if parts else "", r=results, study=study, analytes=analytes, alpha=alpha,
        sections=sections, placed=placed,
        criteria_open=[c for c in criteria if c["pass"] is not True],
        # the note on criteria not evaluated only when one is among them
        any_not_evaluated=any(c["pass"] is None for c in criteria),
        criteria_met=[c for c in criteria if c["pass"] is True],
        matrix=matrix, show_uncertainty=any(m.uncertainty_max for m in matrix),
        show_others=any(m.others for m in matrix), guideline_note=summary.guideline_note(results),
        # the concentration unit of the matrix's header, None when the analytes' units differ (then each row's)
        matrix_unit=summary.common_unit(results), own_units=summary.units_by_analyte(results),
        conclusion=summary.conclusion(results), remarks=all_remarks,
        flagged_total=len(flagged), flagged_list=flagged, flagged_in_summary=flagged_in_summary,
        flagged_calibrator_analytes=len({f["index"] for f in flagged}), flagged_precision_total=flagged_precision,
        doc=result.loaded.config.study,
        css=css, page_size=page, palette=PALETTE, sig=SIG, sig_p=SIG_P, sector_used=sector_used,
        study_text=result.loaded.study.text,
        config=result.loaded.config)
    return (html, drawn) if parts else html


#: at most this many flagged calibrators and precision results are listed in the summary itself
SUMMARY_FLAGGED_ITEMS = 6

_FIGURE = "<!--validator:figure:{}-->"


def _placeholders(figures, drawn: list):
    """``figures`` (a dict of figures, or of dicts of figures) with each figure replaced by a
    placeholder comment; the figures are appended to ``drawn`` in placeholder order."""
    if isinstance(figures, dict):
        return {k: _placeholders(v, drawn) for k, v in figures.items()}
    if not figures and not getattr(figures, "png", b""):
        return figures
    drawn.append(figures)
    return _FIGURE.format(len(drawn) - 1)


def _fill(html: str, drawn: list, print_version: bool) -> str:
    """The HTML with its figure placeholders replaced: inline SVG (the screen), or the print
    version (PNG where drawn); the part markers are taken out of the screen version."""
    def figure(m):
        if m[1] is None:
            return m[0] if print_version else ""
        f = drawn[int(m[1])]
        return f.print_tag() if print_version and isinstance(f, Drawn) else str(f)
    return re.sub(r"<!--validator:figure:(\d+)-->|" + re.escape(PART) + "|" + re.escape(SPLIT), figure, html)


def render_dossier(result, results: dict, folder: Path, *, formats=("html", "pdf"), paper="a4",
                   progress=None) -> None:
    """dossier.html and/or dossier.pdf into ``folder``.

    From :data:`PARTS_FROM` analytes the PDF is laid out in parts (:func:`pdf.write_pdf_in_parts`)
    with its figures as PNG (drawn from the same figure as the HTML's SVG); below, in one piece
    with the HTML's inline SVG.
    """
    in_parts = "pdf" in formats and len(results["analytes"]) >= PARTS_FROM
    if not in_parts:
        html = render_html(result, results, paper=paper, progress=progress)
        if "html" in formats:
            (folder / "dossier.html").write_text(html, encoding="utf-8")
        if "pdf" in formats:
            if progress is not None:
                progress("laying out the PDF (the longest step)")
            write_pdf(html, folder / "dossier.pdf")
        return
    outputs = ("svg", "png") if "html" in formats else ("png",)
    marked, drawn = _render(result, results, paper=paper, progress=progress, parts=True, figure_outputs=outputs)
    if "html" in formats:
        (folder / "dossier.html").write_text(_fill(marked, drawn, print_version=False), encoding="utf-8")
    printed = _fill(marked, drawn, print_version=True)
    del marked, drawn                 # the layout workers are forked from this process: keep it small
    if progress is not None:
        progress("laying out the PDF in parts (the longest step)")
    write_pdf_in_parts(printed, folder / "dossier.pdf", progress=progress)
