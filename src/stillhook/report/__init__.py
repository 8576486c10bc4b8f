"""The report: study data, figure data, figures, the HTML page, the report folder, the demo.

Every name below is loaded from its module on first use (see :mod:`stillhook.lazy`).
"""

from stillhook.lazy import lazy_exports

_EXPORTS = {
    "find_compiler": "stillhook.report.demo",
    "run_selftest": "stillhook.report.demo",
    "DemoResult": "stillhook.report.demo",
    "run_demo": "stillhook.report.demo",
    "COMPILERS": "stillhook.report.demo",
    "SELFTEST_TIMEOUT_S": "stillhook.report.demo",
    "sensitivity_data": "stillhook.report.figure_data",
    "time_response_data": "stillhook.report.figure_data",
    "frequency_map_data": "stillhook.report.figure_data",
    "residual_map_data": "stillhook.report.figure_data",
    "MAX_SERIES_POINTS": "stillhook.report.figure_data",
    "DESIGN_COLORS": "stillhook.report.figure_data",
    "sensitivity_figure": "stillhook.report.figures",
    "time_response_figure": "stillhook.report.figures",
    "frequency_map_figure": "stillhook.report.figures",
    "residual_map_figure": "stillhook.report.figures",
    "render": "stillhook.report.figures",
    "figure_bytes": "stillhook.report.figures",
    "figure_files": "stillhook.report.figures",
    "render_formats": "stillhook.report.figures",
    "submit_figures": "stillhook.report.figures",
    "FORMATS": "stillhook.report.figures",
    "RC": "stillhook.report.figures",
    "PNG_DPI": "stillhook.report.figures",
    "report_files": "stillhook.report.folder",
    "write_report": "stillhook.report.folder",
    "esc": "stillhook.report.html",
    "num": "stillhook.report.html",
    "mm": "stillhook.report.html",
    "table": "stillhook.report.html",
    "kv_table": "stillhook.report.html",
    "figure": "stillhook.report.html",
    "cautions_box": "stillhook.report.html",
    "problem": "stillhook.report.html",
    "CSS": "stillhook.report.html",
    "render_html": "stillhook.report.page",
    "section_summary": "stillhook.report.sections",
    "design_tables": "stillhook.report.sections",
    "section_comparison": "stillhook.report.sections",
    "section_sweep": "stillhook.report.sections",
    "section_firmware": "stillhook.report.sections",
    "section_rig": "stillhook.report.sections",
    "section_modes": "stillhook.report.sections",
    "section_design": "stillhook.report.sections",
    "Study": "stillhook.report.study",
    "build_study": "stillhook.report.study",
    "check_grid": "stillhook.report.study",
    "figure_data": "stillhook.report.study",
    "firmware_summary": "stillhook.report.study",
    "report_json": "stillhook.report.study",
    "REPORT_GRID": "stillhook.report.study",
    "COMPARE_RTOL": "stillhook.report.study",
}

__all__ = sorted(_EXPORTS)
__getattr__, __dir__ = lazy_exports(__name__, _EXPORTS)
