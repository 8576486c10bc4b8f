"""The report folder: ``report.html``, ``report.json`` and the figures, written all at once."""

from __future__ import annotations

from stillhook.outputs import check_out_dir, to_json, write_files
from stillhook.report.figures import figure_files
from stillhook.report.page import render_html
from stillhook.report.study import Study, build_study, report_json

__all__ = ["report_files", "write_report"]


def report_files(study: Study, figures: dict[str, bytes] | None = None) -> dict[str, str | bytes]:
    """``{relative name: text or bytes}``: figures/* (PNG and SVG), report.json and report.html.

    ``figures`` are the study's figure files when the caller has drawn them already
    (:func:`stillhook.report.figures.submit_figures`); by default they are drawn here.
    """
    figs = figure_files(study.figures) if figures is None else figures
    files: dict[str, str | bytes] = {f"figures/{k}": v for k, v in figs.items()}
    files["report.json"] = to_json(report_json(study))
    files["report.html"] = render_html(study, {n: figs[f"{n}.png"] for n in sorted(study.figures)})
    return files


def write_report(project, out_dir, *, force: bool = False, **options):
    """Build the study and write the report folder (all files at once). Returns (study, written paths).

    The folder is checked before any work (:func:`stillhook.outputs.check_out_dir`; ``force`` replaces a folder
    stillhook wrote before).
    """
    check_out_dir(out_dir, force=force)
    study = build_study(project, **options)
    return study, write_files(out_dir, report_files(study), force=force)
